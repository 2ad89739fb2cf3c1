//! The symmetric factored form shared by SSOR and IC(0)/MIC(0):
//! `M = s⁻¹·(P + L)·P⁻¹·(P + Lᵀ)`, with `P` a positive diagonal ("pivots") and `L` the strictly
//! lower (west and south) couplings of the eliminated operator. `M` is symmetric positive
//! definite whenever every pivot is positive, whatever `L` is, which is what makes these
//! preconditioners safe for PCG.

use crate::operator::Stencil5;
use crate::{Coeffs5, Grid, Scalar};

/// Pivots and lower couplings of `M = s⁻¹·(P + L)·P⁻¹·(P + Lᵀ)`.
///
/// Built in two steps: [`lower_part`](LowerFactor::lower_part) stores the raw couplings of `L`
/// and the caller computes the pivots from them; [`finish`](LowerFactor::finish) then scales
/// the couplings by the pivots, `a_k = L[k, k−1]/p_{k−1}`, `b_k = L[k, k−nx]/p_{k−nx}`, so that
/// `M = s⁻¹·(I + L·P⁻¹)·P·(I + P⁻¹·Lᵀ)` is applied with one multiply-subtract per coupling and
/// the same two arrays serve both sweeps (`(P⁻¹Lᵀ)[k, k+1] = a_{k+1}`,
/// `(P⁻¹Lᵀ)[k, k+nx] = b_{k+nx}`).
#[derive(Clone, Debug)]
pub(crate) struct LowerFactor<T> {
    pub(crate) grid: Grid,
    /// `1 / p_k`.
    pub(crate) inv_pivot: Vec<T>,
    /// Before `finish`: `L[k, k−1]`, the eliminated west coupling. After: `a_k`.
    pub(crate) west: Vec<T>,
    /// Before `finish`: `L[k, k−nx]`, the eliminated south coupling. After: `b_k`.
    pub(crate) south: Vec<T>,
    /// `s`: `z` is multiplied by it at the end.
    pub(crate) scale: T,
}

impl<T: Scalar> LowerFactor<T> {
    /// The lower couplings of `op`'s eliminated rows, pivots still unset (zero), scale 1.
    pub(crate) fn lower_part<S: Stencil5<T> + ?Sized>(op: &S) -> LowerFactor<T> {
        let grid = op.grid();
        let n = grid.cells();
        let (mut west, mut south) = (Vec::with_capacity(n), Vec::with_capacity(n));
        for_each_eliminated(op, |_, c| {
            west.push(c.west);
            south.push(c.south);
        });
        LowerFactor {
            grid,
            inv_pivot: vec![T::zero(); n],
            west,
            south,
            scale: T::one(),
        }
    }

    /// Scale the couplings by the pivots (call once, after setting `inv_pivot`).
    pub(crate) fn finish(mut self) -> LowerFactor<T> {
        let nx = self.grid.nx();
        let n = self.grid.cells();
        for k in (0..n).rev() {
            if k % nx != 0 {
                self.west[k] = self.west[k] * self.inv_pivot[k - 1];
            }
            if k >= nx {
                self.south[k] = self.south[k] * self.inv_pivot[k - nx];
            }
        }
        self
    }

    /// `z = M⁻¹ r`: forward sweep `(I + L·P⁻¹)·u = r`, backward sweep
    /// `(I + P⁻¹·Lᵀ)·z = P⁻¹·u`, in place in `z`, then `z *= s`. Allocates nothing.
    pub(crate) fn solve(&self, r: &[T], z: &mut [T]) {
        let (nx, ny, n) = (self.grid.nx(), self.grid.ny(), self.grid.cells());
        if r.len() < n || z.len() < n {
            return;
        }
        let (a, b, d) = (&self.west[..n], &self.south[..n], &self.inv_pivot[..n]);
        let z = &mut z[..n];
        for j in 0..ny {
            let row = j * nx..(j + 1) * nx;
            let (before, rest) = z.split_at_mut(j * nx);
            let cur = &mut rest[..nx];
            let (rr, ar, br) = (&r[row.clone()], &a[row.clone()], &b[row]);
            let mut left = T::zero();
            if j == 0 {
                for i in 0..nx {
                    let u = rr[i] - ar[i] * left;
                    cur[i] = u;
                    left = u;
                }
            } else {
                let prev = &before[(j - 1) * nx..];
                for i in 0..nx {
                    let u = (rr[i] - br[i] * prev[i]) - ar[i] * left;
                    cur[i] = u;
                    left = u;
                }
            }
        }
        let s = self.scale;
        for j in (0..ny).rev() {
            let start = j * nx;
            let (upto, after) = z.split_at_mut(start + nx);
            let cur = &mut upto[start..];
            let dr = &d[start..start + nx];
            // a_{k+1} for the cells of this row (the last one has no east neighbour).
            let ar = &a[start + 1..(start + nx).min(n)];
            let mut right = T::zero();
            if j + 1 == ny {
                for i in (0..nx).rev() {
                    let east = if i + 1 < nx { ar[i] * right } else { T::zero() };
                    let v = cur[i] * dr[i] - east;
                    cur[i] = v;
                    right = v;
                }
            } else {
                let next = &after[..nx];
                let bn = &b[start + nx..start + 2 * nx];
                for i in (0..nx).rev() {
                    let east = if i + 1 < nx { ar[i] * right } else { T::zero() };
                    let v = (cur[i] * dr[i] - bn[i] * next[i]) - east;
                    cur[i] = v;
                    right = v;
                }
            }
        }
        if s != T::one() {
            z.iter_mut().for_each(|v| *v = *v * s);
        }
    }

    /// Bytes held.
    pub(crate) fn bytes(&self) -> usize {
        3 * self.grid.cells() * std::mem::size_of::<T>()
    }
}

/// Call `f(k, row)` for every cell in index order with the eliminated row of `op` (identity
/// rows at fixed cells, couplings towards fixed cells removed).
pub(crate) fn for_each_eliminated<T: Scalar, S: Stencil5<T> + ?Sized>(
    op: &S,
    mut f: impl FnMut(usize, Coeffs5<T>),
) {
    let grid = op.grid();
    let (nx, ny) = (grid.nx(), grid.ny());
    for j in 0..ny {
        for i in 0..nx {
            f(i + nx * j, op.eliminated_coeffs(i, j));
        }
    }
}

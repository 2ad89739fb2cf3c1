//! The symmetric factored form shared by SSOR and IC(0)/MIC(0):
//! `M = s⁻¹·(P + L)·P⁻¹·(P + Lᵀ)`, with `P` a positive diagonal ("pivots") and `L` the strictly
//! lower (west and south) couplings of the eliminated operator. `M` is symmetric positive
//! definite whenever every pivot is positive, whatever `L` is, which is what makes these
//! preconditioners safe for PCG.

use crate::stencil::Stencil5;
use crate::{Coeffs5, FixedCells, Grid, Scalar};

/// Pivots and lower couplings of `M = s⁻¹·(P + L)·P⁻¹·(P + Lᵀ)`.
#[derive(Clone, Debug)]
pub(crate) struct LowerFactor<T> {
    pub(crate) grid: Grid,
    /// `1 / p_k`.
    pub(crate) inv_pivot: Vec<T>,
    /// `L[k, k−1]`: the eliminated west coupling of cell `k`.
    pub(crate) west: Vec<T>,
    /// `L[k, k−nx]`: the eliminated south coupling of cell `k`.
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

    /// `z = M⁻¹ r`: forward sweep `(P + L)·y = r`, backward sweep `(P + Lᵀ)·z = P·y`, in place
    /// in `z`, then `z *= s`. Allocates nothing.
    pub(crate) fn solve(&self, r: &[T], z: &mut [T]) {
        let (nx, n) = (self.grid.nx(), self.grid.cells());
        if r.len() < n || z.len() < n {
            return;
        }
        let ny = self.grid.ny();
        let (w, s, d) = (&self.west, &self.south, &self.inv_pivot);
        for j in 0..ny {
            let row = j * nx;
            for i in 0..nx {
                let k = row + i;
                let mut acc = r[k];
                if i > 0 {
                    acc = acc - w[k] * z[k - 1];
                }
                if j > 0 {
                    acc = acc - s[k] * z[k - nx];
                }
                z[k] = acc * d[k];
            }
        }
        for j in (0..ny).rev() {
            let row = j * nx;
            for i in (0..nx).rev() {
                let k = row + i;
                let mut acc = T::zero();
                if i + 1 < nx {
                    acc = acc + w[k + 1] * z[k + 1];
                }
                if j + 1 < ny {
                    acc = acc + s[k + nx] * z[k + nx];
                }
                z[k] = z[k] - acc * d[k];
            }
        }
        if self.scale != T::one() {
            z[..n].iter_mut().for_each(|v| *v = *v * self.scale);
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
    let fixed = op.fixed_cells();
    for j in 0..ny {
        for i in 0..nx {
            let k = i + nx * j;
            f(k, eliminated_row(op, fixed, nx, ny, i, j));
        }
    }
}

/// Row `(i, j)` of the eliminated system: as [`Stencil5::eliminated_coeffs`], computed without
/// the index arithmetic of the general method (the hot loops of the smoothers call it).
#[inline]
pub(crate) fn eliminated_row<T: Scalar, S: Stencil5<T> + ?Sized>(
    op: &S,
    fixed: Option<&FixedCells>,
    nx: usize,
    ny: usize,
    i: usize,
    j: usize,
) -> Coeffs5<T> {
    let mut c = op.coeffs(i, j);
    let Some(fixed) = fixed else {
        return c;
    };
    let k = i + nx * j;
    if fixed.contains(k) {
        return Coeffs5::identity();
    }
    if i > 0 && fixed.contains(k - 1) {
        c.west = T::zero();
    }
    if i + 1 < nx && fixed.contains(k + 1) {
        c.east = T::zero();
    }
    if j > 0 && fixed.contains(k - nx) {
        c.south = T::zero();
    }
    if j + 1 < ny && fixed.contains(k + nx) {
        c.north = T::zero();
    }
    c
}

/// `v` in the scalar type (every `f64` literal used here is representable in `f32` and `f64`).
#[inline]
pub(crate) fn lit<T: Scalar>(v: f64) -> T {
    T::from(v).unwrap_or_else(T::zero)
}

//! The red-black Gauss–Seidel smoother fused with the grid transfers, in one pass over the rows
//! of a level per smoothing phase.
//!
//! Cells of one colour do not couple to each other in a 5-point stencil, so a half-sweep may
//! update its cells in place, in any order, from the current values of the other colour: the
//! result is the same as computing every update from the values before the half-sweep. That
//! lets all the half-sweeps of one smoothing phase travel down the grid together, as a
//! wavefront: at row step `t`, sweep `s` does its first colour on row `t − 2s` and its second
//! colour on row `t − 2s − 1`. Each update then reads rows that the previous half-sweep has
//! finished and the next has not touched yet (the neighbours of row `t − 2s` are final for
//! sweep `s − 1`, whose second colour is on row `t − 2s + 1`; sweep `s + 1` is two rows
//! behind). The residual and its restriction trail the last sweep by one row, and the
//! prolongation of the coarse correction runs one row ahead of the first sweep.
//!
//! So a pre-smoothing phase with its residual and restriction reads the operator, `b`,
//! `1/center` and `x` once and writes `x` once, instead of once per half-sweep; the rows in
//! flight (about `2ν + 2` of them) stay in cache. Every cell update is the same expression as a
//! half-sweep computed from a whole product — `x + (b − A·x)/center` with the row product in
//! the operator's fixed summation order — so the results are the same bits as smoothing one
//! half-sweep at a time, and the pass is serial, which keeps them independent of the thread
//! count.

use std::ops::Range;

use super::level::active_cells;
use super::transfer::Transfer;
use crate::operator::{cell_product, Stencil5};
use crate::{Coeffs5, Scalar};

/// The rows of one level being smoothed: operator, `1/center` (zero at inactive cells, so they
/// keep their zero) and right-hand side.
pub(crate) struct Rows<'a, T, R: ?Sized> {
    pub(crate) op: &'a R,
    pub(crate) inv: &'a [f32],
    pub(crate) b: &'a [T],
    /// The operator's rows when the level stores them (coarse levels): the smoother then
    /// computes the product at the cells of the colour only.
    pub(crate) stored: Option<&'a [Coeffs5<T>]>,
}

impl<T: Scalar, R: Stencil5<T> + ?Sized> Rows<'_, T, R> {
    /// The Gauss–Seidel update of the cells of `colour` (`(i + j) % 2 == colour`) on row `j`,
    /// in place; `buf` (one row) is overwritten with the row's product.
    #[inline]
    fn relax(&self, x: &mut [T], buf: &mut [T], j: usize, colour: usize) {
        let nx = buf.len();
        if let Some(rows) = self.stored {
            let stored = StoredRows {
                rows,
                inv: self.inv,
                b: self.b,
            };
            stored.relax(x, nx, j, colour, 0..nx);
            return;
        }
        self.op.apply_rows(j..j + 1, x, buf);
        let base = j * nx;
        let (x_row, b_row, d_row) = (
            &mut x[base..][..nx],
            &self.b[base..][..nx],
            &self.inv[base..][..nx],
        );
        let first = (j + colour) % 2;
        for i in (first..nx).step_by(2) {
            x_row[i] = x_row[i] + (b_row[i] - buf[i]) * widen(d_row[i]);
        }
    }

    /// `ν` red-black sweeps from `x = 0` (red then black), then `coarse_b = Pᵀ·(b − A·x)` with
    /// the inactive cells left out, in one pass. `buf` holds one row of the level.
    pub(crate) fn pre_smooth_restrict(
        &self,
        x: &mut [T],
        buf: &mut [T],
        sweeps: usize,
        transfer: &Transfer<'_>,
        coarse_b: &mut [T],
    ) {
        let grid = self.op.grid();
        let (nx, ny) = (grid.nx(), grid.ny());
        let buf = &mut buf[..nx];
        let active = active_cells(self.op);
        coarse_b.iter_mut().for_each(|v| *v = T::zero());
        let at = |t: usize, back: usize| t.checked_sub(back).filter(|&j| j < ny);
        for t in 0..ny + 2 * sweeps {
            for s in 0..sweeps {
                if let Some(j) = at(t, 2 * s) {
                    if s == 0 {
                        relax_from_zero(self.inv, self.b, x, nx, j, 0..nx);
                    } else {
                        self.relax(x, buf, j, 0);
                    }
                }
                if let Some(j) = at(t, 2 * s + 1) {
                    self.relax(x, buf, j, 1);
                }
            }
            // The residual of row j needs rows j − 1 … j + 1 final: the last sweep's second
            // colour is on row t − 2ν + 1.
            if let Some(j) = at(t, 2 * sweeps) {
                self.op.apply_rows(j..j + 1, x, buf);
                let b_row = &self.b[j * nx..][..nx];
                for (ri, &bi) in buf.iter_mut().zip(b_row) {
                    *ri = bi - *ri;
                }
                transfer.restrict_row(j, 0..nx, buf, &active, coarse_b);
            }
        }
    }

    /// `x += P·coarse_x` (inactive cells left out), then `ν` red-black sweeps (black then
    /// red, the mirror image of the pre-smoothing), in one pass. `buf` holds one row.
    pub(crate) fn prolong_smooth(
        &self,
        x: &mut [T],
        buf: &mut [T],
        sweeps: usize,
        transfer: &Transfer<'_>,
        coarse_x: &[T],
    ) {
        let grid = self.op.grid();
        let (nx, ny) = (grid.nx(), grid.ny());
        let buf = &mut buf[..nx];
        let active = active_cells(self.op);
        let prolong = |x: &mut [T], j: usize| {
            transfer.prolong_row(j, 0..nx, &mut x[j * nx..][..nx], &active, coarse_x);
        };
        prolong(x, 0);
        let at = |t: usize, back: usize| t.checked_sub(back).filter(|&j| j < ny);
        for t in 0..ny + 2 * sweeps {
            // The first sweep reads row t + 1 at this step.
            if t + 1 < ny {
                prolong(x, t + 1);
            }
            for s in 0..sweeps {
                if let Some(j) = at(t, 2 * s) {
                    self.relax(x, buf, j, 1);
                }
                if let Some(j) = at(t, 2 * s + 1) {
                    self.relax(x, buf, j, 0);
                }
            }
        }
    }
}

/// A level's stored rows, `1/center` and right-hand side, for the smoother's product at the
/// cells of one colour only.
pub(crate) struct StoredRows<'a, T> {
    pub(crate) rows: &'a [Coeffs5<T>],
    pub(crate) inv: &'a [f32],
    pub(crate) b: &'a [T],
}

impl<T: Scalar> StoredRows<'_, T> {
    /// [`Rows::relax`] on stored rows, for the cells of `colour` in the columns `cols` of row
    /// `j` (`nx` wide): the product at those cells only, by the crate's one-cell product
    /// (same bits as the whole-row product). Distributed levels pass their own columns; the
    /// serial cycle all.
    pub(crate) fn relax(
        &self,
        x: &mut [T],
        nx: usize,
        j: usize,
        colour: usize,
        cols: Range<usize>,
    ) {
        let base = j * nx;
        let (below, rest) = x.split_at_mut(base);
        let (row, above) = rest.split_at_mut(nx);
        let south = (j > 0).then(|| &below[base - nx..]);
        let north = (above.len() >= nx).then(|| &above[..nx]);
        let (coeffs, b, inv) = (
            &self.rows[base..][..nx],
            &self.b[base..][..nx],
            &self.inv[base..][..nx],
        );
        let first = cols.start + (cols.start + j + colour) % 2;
        for i in (first..cols.end).step_by(2) {
            let s = cell_product(&|i| coeffs[i], i, south, row, north);
            row[i] = row[i] + (b[i] - s) * widen(inv[i]);
        }
    }
}

/// The first half-sweep from `x = 0` on the columns `cols` of row `j`: the cells of colour 0
/// take `b/center`, the others zero.
pub(crate) fn relax_from_zero<T: Scalar>(
    inv: &[f32],
    b: &[T],
    x: &mut [T],
    nx: usize,
    j: usize,
    cols: Range<usize>,
) {
    let base = j * nx;
    let (x_row, b_row, d_row) = (&mut x[base..][..nx], &b[base..][..nx], &inv[base..][..nx]);
    let first = cols.start + (cols.start + j) % 2;
    for i in (first..cols.end).step_by(2) {
        x_row[i] = b_row[i] * widen(d_row[i]);
    }
    let other = cols.start + (cols.start + j + 1) % 2;
    for i in (other..cols.end).step_by(2) {
        x_row[i] = T::zero();
    }
}

/// `v` in the level's scalar type.
#[inline(always)]
fn widen<T: Scalar>(v: f32) -> T {
    T::from(v).unwrap_or_else(T::zero)
}

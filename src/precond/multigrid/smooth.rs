//! The red-black smoother (Gauss–Seidel, or SOR through inverse centers scaled by ω) fused with
//! the grid transfers, in one pass over the rows of a level per smoothing phase.
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
//! half-sweep at a time.
//!
//! A level runs these passes in bands of rows side by side, one per thread (`bands.rs`).

use std::ops::Range;

use super::colour::ByColour;
use super::transfer::{widen, Transfer};
use crate::operator::{cell_product, FixedCells, Stencil5};
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
    /// The fine level stored by colour (`colour.rs`): then `x` holds its rows by colour, and
    /// the operator, `1/center` and right-hand side come from there.
    pub(crate) by_colour: Option<ByColour<'a, T>>,
}

/// Which smoothing phase a pass runs.
#[derive(Clone, Copy, PartialEq)]
pub(super) enum Phase {
    /// From `x = 0`, red then black, the residual restricted behind the last sweep.
    Pre,
    /// The prolongation ahead of the first sweep, black then red.
    Post,
}

impl Phase {
    /// The colour half-sweep `h` (1 to `2ν`) updates.
    fn colour(self, h: usize) -> usize {
        match self {
            Phase::Pre => (h - 1) % 2,
            Phase::Post => h % 2,
        }
    }
}

impl<T: Scalar, R: Stencil5<T> + ?Sized + Sync> Rows<'_, T, R> {
    /// Half-sweep `h` of `phase` on row `j`, `x` holding the rows from `first` on; `buf` (one
    /// row) is overwritten.
    #[inline]
    pub(super) fn half_sweep(
        &self,
        phase: Phase,
        x: &mut [T],
        first: usize,
        buf: &mut [T],
        j: usize,
        h: usize,
    ) {
        let nx = buf.len();
        if let Some(by_colour) = self.by_colour {
            if phase == Phase::Pre && h == 1 {
                by_colour.relax_from_zero(x, first, j);
            } else {
                by_colour.half_sweep(x, first, j, phase.colour(h));
            }
            return;
        }
        if phase == Phase::Pre && h == 1 {
            relax_from_zero_in(self.inv, self.b, x, first, nx, j, 0..nx);
            return;
        }
        let colour = phase.colour(h);
        if let Some(rows) = self.stored {
            let stored = StoredRows {
                rows,
                inv: self.inv,
                b: self.b,
            };
            stored.relax_in(x, first, nx, j, colour, 0..nx);
            return;
        }
        self.op.apply_rows_from(j..j + 1, first, x, buf);
        let base = j * nx;
        let x_row = &mut x[(j - first) * nx..][..nx];
        let (b_row, d_row) = (&self.b[base..][..nx], &self.inv[base..][..nx]);
        let start = (j + colour) % 2;
        for i in (start..nx).step_by(2) {
            x_row[i] = x_row[i] + (b_row[i] - buf[i]) * widen(d_row[i]);
        }
    }

    /// The residual `b − A·x` of row `j` into `out` (natural order), `x` holding the rows from
    /// `first` on; `buf` (a row) may be overwritten.
    pub(super) fn residual_row(
        &self,
        x: &[T],
        first: usize,
        j: usize,
        buf: &mut [T],
        out: &mut [T],
    ) {
        if let Some(by_colour) = self.by_colour {
            by_colour.residual_row(x, first, j, buf, out);
            return;
        }
        let nx = out.len();
        self.op.apply_rows_from(j..j + 1, first, x, out);
        for (ri, &bi) in out.iter_mut().zip(&self.b[j * nx..][..nx]) {
            *ri = bi - *ri;
        }
    }

    /// `x += P·coarse_x` on row `j` (`x` holding the rows from `first` on, `nx` wide), the
    /// cells of `inactive` left out.
    pub(super) fn prolong_row(
        &self,
        (transfer, inactive, coarse_x): (&Transfer<'_>, Option<&FixedCells>, &[T]),
        x: &mut [T],
        first: usize,
        nx: usize,
        j: usize,
    ) {
        if let Some(by_colour) = self.by_colour {
            by_colour.prolong_row((transfer, inactive, coarse_x), x, first, j);
            return;
        }
        let row = &mut x[(j - first) * nx..][..nx];
        transfer.prolong_row(j, 0..nx, row, inactive, coarse_x);
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
    /// A Gauss–Seidel half-sweep on stored rows, for the cells of `colour` in the columns
    /// `cols` of row `j` (`nx` wide): the product at those cells only, by the crate's one-cell
    /// product (same bits as the whole-row product). Distributed levels pass their own columns;
    /// the serial cycle all.
    pub(crate) fn relax(
        &self,
        x: &mut [T],
        nx: usize,
        j: usize,
        colour: usize,
        cols: Range<usize>,
    ) {
        self.relax_in(x, 0, nx, j, colour, cols);
    }

    /// [`relax`](Self::relax) with `x` holding the rows from `first` on.
    fn relax_in(
        &self,
        x: &mut [T],
        first: usize,
        nx: usize,
        j: usize,
        colour: usize,
        cols: Range<usize>,
    ) {
        let base = j * nx;
        let at = (j - first) * nx;
        let (below, rest) = x.split_at_mut(at);
        let (row, above) = rest.split_at_mut(nx);
        let south = (j > 0).then(|| &below[at - nx..]);
        let north = (above.len() >= nx).then(|| &above[..nx]);
        let (coeffs, b, inv) = (
            &self.rows[base..][..nx],
            &self.b[base..][..nx],
            &self.inv[base..][..nx],
        );
        let first = cols.start + (cols.start + j + colour) % 2;
        let relax = |row: &mut [T], i: usize, s: T| row[i] = row[i] + (b[i] - s) * widen(inv[i]);
        // Interior cells of interior rows without the tests for missing neighbours: the
        // product in `cell_product`'s order, so the same bits.
        let (Some(xs), Some(xn)) = (south, north) else {
            for i in (first..cols.end).step_by(2) {
                let s = cell_product(&|i| coeffs[i], i, south, row, north);
                relax(row, i, s);
            }
            return;
        };
        let (xs, xn) = (&xs[..nx], &xn[..nx]);
        for i in (first..cols.end).step_by(2) {
            if i == 0 || i + 1 == nx {
                let s = cell_product(&|i| coeffs[i], i, south, row, north);
                relax(row, i, s);
                continue;
            }
            let c = coeffs[i];
            let s = c.center * row[i]
                + c.west * row[i - 1]
                + c.east * row[i + 1]
                + c.south * xs[i]
                + c.north * xn[i];
            relax(row, i, s);
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
    relax_from_zero_in(inv, b, x, 0, nx, j, cols);
}

/// [`relax_from_zero`] with `x` holding the rows from `first` on.
fn relax_from_zero_in<T: Scalar>(
    inv: &[f32],
    b: &[T],
    x: &mut [T],
    first: usize,
    nx: usize,
    j: usize,
    cols: Range<usize>,
) {
    let base = j * nx;
    let x_row = &mut x[(j - first) * nx..][..nx];
    let (b_row, d_row) = (&b[base..][..nx], &inv[base..][..nx]);
    let first = cols.start + (cols.start + j) % 2;
    for i in (first..cols.end).step_by(2) {
        x_row[i] = b_row[i] * widen(d_row[i]);
    }
    let other = cols.start + (cols.start + j + 1) % 2;
    for i in (other..cols.end).step_by(2) {
        x_row[i] = T::zero();
    }
}

#[cfg(test)]
mod tests {
    use super::StoredRows;
    use crate::operator::cell_product;
    use crate::testing::Numbers;
    use crate::Coeffs5;

    /// The stored-row half-sweep (its interior path without the tests for missing neighbours
    /// and the general one at edges) gives, cell by cell, the bits of the one-cell product
    /// every product of the crate uses, on every row, both colours and whole or partial
    /// column ranges.
    #[test]
    fn stored_row_half_sweeps_match_the_one_cell_product() {
        let mut numbers = Numbers(23);
        let mut next = || numbers.next() as f32 - 0.5;
        for (nx, ny) in [(1usize, 1usize), (2, 3), (5, 4), (9, 7)] {
            let cells = nx * ny;
            let rows: Vec<Coeffs5<f32>> = (0..cells)
                .map(|_| Coeffs5 {
                    center: 4.0 + next(),
                    west: next(),
                    east: next(),
                    south: next(),
                    north: next(),
                })
                .collect();
            let inv: Vec<f32> = rows.iter().map(|c| 1.0 / c.center).collect();
            let b: Vec<f32> = (0..cells).map(|_| next()).collect();
            let start: Vec<f32> = (0..cells).map(|_| next()).collect();
            let stored = StoredRows {
                rows: &rows,
                inv: &inv,
                b: &b,
            };
            for colour in 0..2 {
                let partial = if nx > 2 { 1..nx - 1 } else { 0..nx };
                for cols in [0..nx, partial] {
                    let mut x = start.clone();
                    let mut expected = start.clone();
                    for j in 0..ny {
                        stored.relax(&mut x, nx, j, colour, cols.clone());
                        let (below, rest) = expected.split_at_mut(j * nx);
                        let (row, above) = rest.split_at_mut(nx);
                        let south = (j > 0).then(|| &below[(j - 1) * nx..]);
                        let north = (j + 1 < ny).then(|| &above[..nx]);
                        let coeffs = |i: usize| rows[i + nx * j];
                        for i in cols.clone().filter(|i| (i + j + colour) % 2 == 0) {
                            let s = cell_product(&coeffs, i, south, row, north);
                            let k = i + nx * j;
                            row[i] += (b[k] - s) * inv[k];
                        }
                    }
                    let bits = |v: &[f32]| v.iter().map(|v| v.to_bits()).collect::<Vec<_>>();
                    assert_eq!(bits(&x), bits(&expected), "{nx} x {ny}, colour {colour}");
                }
            }
        }
    }
}

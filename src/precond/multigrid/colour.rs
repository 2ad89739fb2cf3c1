//! The levels of an `f32` cycle stored by colour: every row as its even columns, then its
//! odd columns (operator, `1/center`, and the right-hand side of each cycle; the correction
//! `x` in the same order during the cycle). The fine level, and each smoothed coarse level of
//! an even width: a coarse level's rows are reordered from its stored rows at set-up, its
//! right-hand side as the cycle arrives, and its correction goes back to the natural order
//! after its post-smoothing, for the level above to prolong from.
//!
//! The cells of one colour in row `j` are the columns of parity `(j + colour) % 2`, one half of
//! the stored row. Their west and east neighbours are in the other half of the same row,
//! their south and north neighbours in the same half of the rows beside it, at the same
//! index. So a half-sweep is one contiguous loop over its own cells, reading its own five
//! coefficients and values, where the natural order computes the whole row's product and
//! uses every other entry (`benches/examples/colour_layout.rs` measures both). With an even
//! `nx` a stored row keeps its length, so the bands, cuts and row windows of `bands.rs` apply
//! unchanged.
//!
//! Every cell gets the expression of the natural order, `x + (b − A·x)/center` with the
//! product summed center, west, east, south, north (couplings to missing neighbours left
//! out): the same bits (unit test below; `mg_profile` checksums).

use std::ops::Range;

use super::level::narrow_one;
use super::transfer::{widen, Transfer};
use crate::blocks::join;
use crate::operator::{row_neighbourhood, FixedCells, Stencil5};
use crate::stencil::{in_pieces, Piece};
use crate::{Coeffs5, Grid, Scalar};

/// A level by colour (see the module notes): `1/center`, the right-hand side, and the
/// operator's arrays, unless the fine operator stores them by colour itself
/// ([`Banded5ByColour`](crate::Banded5ByColour)), in which case the cycle reads them there.
#[derive(Clone)]
pub(crate) struct ColourLevel<T> {
    nx: usize,
    ny: usize,
    /// Center, west, east, south, north coefficients, unless the fine operator's are by colour.
    own: Option<[Vec<T>; 5]>,
    /// `1/center` (scaled by ω), 0 at fixed cells.
    inv: Vec<f32>,
    /// The right-hand side of the current cycle.
    b: Vec<T>,
}

impl<T> std::fmt::Debug for ColourLevel<T> {
    /// The layout only: the values are the level's operator's and `1/center`'s.
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let whose = if self.own.is_some() {
            "copy"
        } else {
            "operator's"
        };
        write!(f, "ColourLevel({} x {}, {whose} arrays)", self.nx, self.ny)
    }
}

/// What one cycle reads of a level by colour.
#[derive(Clone, Copy)]
pub(crate) struct ByColour<'a, T> {
    nx: usize,
    ny: usize,
    /// Center, west, east, south, north coefficients.
    bands: &'a [Vec<T>; 5],
    /// `1/center` (scaled by ω), 0 at fixed cells.
    inv: &'a [f32],
    /// The right-hand side of the current cycle.
    b: &'a [T],
}

/// Row `row` as its even columns, then its odd columns, into `out`.
#[inline]
pub(crate) fn split_row<U: Copy>(row: &[U], out: &mut [U]) {
    let h = row.len() / 2;
    let (evens, odds) = out.split_at_mut(h);
    for ((pair, e), o) in row.chunks_exact(2).zip(evens).zip(odds) {
        (*e, *o) = (pair[0], pair[1]);
    }
}

/// The inverse of [`split_row`].
#[inline]
pub(crate) fn join_row<U: Copy>(split: &[U], out: &mut [U]) {
    let h = split.len() / 2;
    let (evens, odds) = split.split_at(h);
    for ((pair, &e), &o) in out.chunks_exact_mut(2).zip(evens).zip(odds) {
        (pair[0], pair[1]) = (e, o);
    }
}

/// `f(rows, piece)` on (at most) `pieces` pieces of whole rows of `v` (`nx` wide), side by
/// side when `parallel`; `scratch` is cut into one row per piece.
fn in_row_pieces<U: Send, S: Send>(
    v: &mut [U],
    scratch: &mut [S],
    nx: usize,
    rows: Range<usize>,
    pieces: usize,
    parallel: bool,
    f: &(impl Fn(Range<usize>, &mut [U], &mut [S]) + Sync),
) {
    if pieces <= 1 || rows.len() < 2 || scratch.len() < 2 * nx {
        f(rows, v, &mut scratch[..nx]);
        return;
    }
    let mid = rows.start + rows.len() / 2;
    let (low, high) = v.split_at_mut((mid - rows.start) * nx);
    let (s_low, s_high) = scratch.split_at_mut(nx);
    let half = pieces / 2;
    join(
        parallel,
        || in_row_pieces(low, s_low, nx, rows.start..mid, half, parallel, f),
        || in_row_pieces(high, s_high, nx, mid..rows.end, pieces - half, parallel, f),
    );
}

/// The five arrays of an `nx × ny` operator with coefficients `coeffs(i, j)`, each row
/// reordered by colour (`nx` even), in up to `pieces` pieces of rows side by side.
fn reordered<T: Scalar>(
    nx: usize,
    ny: usize,
    pieces: usize,
    coeffs: &(impl Fn(usize, usize) -> Coeffs5<T> + Sync),
) -> [Vec<T>; 5] {
    let h = nx / 2;
    let mut bands: [Vec<T>; 5] = std::array::from_fn(|_| vec![T::zero(); nx * ny]);
    let fill = |rows: Range<usize>, piece: Piece<'_, T>| {
        let [cb, wb, eb, sb, nb] = piece;
        for (r, j) in rows.enumerate() {
            for i in 0..nx {
                let c = coeffs(i, j);
                let k = r * nx + (i % 2) * h + i / 2;
                (cb[k], wb[k], eb[k], sb[k], nb[k]) = (c.center, c.west, c.east, c.south, c.north);
            }
        }
    };
    let [c, w, e, s, n] = &mut bands;
    in_pieces([c, w, e, s, n], nx, 0..ny, pieces, &fill);
    bands
}

impl<T: Scalar> ColourLevel<T> {
    /// The fine level of `op` by colour, `1/center` scaled by `omega` (0 at fixed cells), in
    /// up to `pieces` pieces of rows side by side when `parallel`; `None` for an odd `nx`.
    /// The operator's arrays are copied unless `op` stores them by colour itself.
    pub(crate) fn new<S: Stencil5<T> + ?Sized>(
        op: &S,
        omega: f32,
        pieces: usize,
        parallel: bool,
    ) -> Option<ColourLevel<T>> {
        let grid = op.grid();
        let (nx, ny) = (grid.nx(), grid.ny());
        if nx % 2 == 1 {
            return None;
        }
        let n = nx * ny;
        let own = match op.bands_by_colour() {
            Some(_) => None,
            None => Some(reordered(nx, ny, pieces, &|i, j| op.coeffs(i, j))),
        };
        let mut level = ColourLevel {
            nx,
            ny,
            own,
            inv: vec![0.0f32; n],
            b: vec![T::zero(); n],
        };
        let center = &level.own.as_ref().or(op.bands_by_colour())?[0];
        // `1/center` is the natural order's expression, the same bits.
        let invert = |rows: Range<usize>, inv: &mut [f32], _: &mut [T]| {
            for (d, &c) in inv.iter_mut().zip(&center[rows.start * nx..rows.end * nx]) {
                *d = narrow_one(T::one() / c) * omega;
            }
        };
        let mut scratch = vec![T::zero(); pieces.max(1) * nx];
        in_row_pieces(
            &mut level.inv,
            &mut scratch,
            nx,
            0..ny,
            pieces,
            parallel,
            &invert,
        );
        for &k in op.fixed().map_or(&[][..], |f| f.cells()) {
            let (i, j) = (k % nx, k / nx);
            if j < ny {
                level.inv[j * nx + (i % 2) * (nx / 2) + i / 2] = 0.0;
            }
        }
        Some(level)
    }

    /// A coarse level by colour: its stored `rows` (`grid`) and its `1/center`, each row
    /// reordered (the same values), in up to `pieces` pieces of rows side by side; `None` for
    /// an odd `nx`.
    pub(crate) fn from_rows(
        grid: Grid,
        rows: &[Coeffs5<T>],
        inverse_centers: &[f32],
        pieces: usize,
    ) -> Option<ColourLevel<T>> {
        let (nx, ny) = (grid.nx(), grid.ny());
        let n = nx * ny;
        if nx % 2 == 1 || rows.len() != n || inverse_centers.len() != n {
            return None;
        }
        let bands = reordered(nx, ny, pieces, &|i, j| rows[i + nx * j]);
        let mut inv = vec![0.0f32; n];
        let split = |range: Range<usize>, inv: &mut [f32], _: &mut [f32]| {
            let src = &inverse_centers[range.start * nx..range.end * nx];
            for (row, out) in src.chunks_exact(nx).zip(inv.chunks_exact_mut(nx)) {
                split_row(row, out);
            }
        };
        let mut scratch = vec![0.0f32; pieces.max(1) * nx];
        in_row_pieces(
            &mut inv,
            &mut scratch,
            nx,
            0..ny,
            pieces,
            pieces > 1,
            &split,
        );
        Some(ColourLevel {
            nx,
            ny,
            own: Some(bands),
            inv,
            b: vec![T::zero(); n],
        })
    }

    /// Bytes held.
    pub(crate) fn bytes(&self) -> usize {
        let n = self.nx * self.ny;
        let arrays = if self.own.is_some() { 6 } else { 1 };
        n * (arrays * std::mem::size_of::<T>() + std::mem::size_of::<f32>())
    }

    /// `1/center` in the natural order.
    #[cfg(test)]
    pub(crate) fn natural_inverse(&self) -> Vec<f32> {
        let mut out = vec![0.0f32; self.inv.len()];
        for (split, row) in self
            .inv
            .chunks_exact(self.nx)
            .zip(out.chunks_exact_mut(self.nx))
        {
            join_row(split, row);
        }
        out
    }

    /// Whether a cycle on `fine` finds the operator's arrays (its own copy, or `fine`'s).
    pub(crate) fn finds_arrays(&self, fine: &dyn Stencil5<T>) -> bool {
        self.own.is_some() || fine.bands_by_colour().is_some()
    }

    /// What a cycle on `fine` reads, `None` if it finds no arrays by colour.
    pub(crate) fn view<'a>(&'a self, fine: &'a dyn Stencil5<T>) -> Option<ByColour<'a, T>> {
        let bands = self.own.as_ref().or(fine.bands_by_colour())?;
        Some(ByColour {
            nx: self.nx,
            ny: self.ny,
            bands,
            inv: &self.inv,
            b: &self.b,
        })
    }

    /// The cycle's right-hand side `r` (natural order), stored by colour, in up to `pieces`
    /// pieces of rows side by side when `parallel` (`scratch` as for
    /// [`to_natural`](ByColour::to_natural), unused).
    pub(crate) fn set_rhs(&mut self, r: &[T], scratch: &mut [T], pieces: usize, parallel: bool) {
        let nx = self.nx;
        let split = |rows: Range<usize>, b: &mut [T], _: &mut [T]| {
            let r = &r[rows.start * nx..rows.end * nx];
            for (row, out) in r.chunks_exact(nx).zip(b.chunks_exact_mut(nx)) {
                split_row(row, out);
            }
        };
        in_row_pieces(
            &mut self.b,
            scratch,
            nx,
            0..self.ny,
            pieces,
            parallel,
            &split,
        );
    }
}

impl<'a, T: Scalar> ByColour<'a, T> {
    /// `z`, stored by colour, back into the natural order, rows in place (`scratch` at least
    /// a row; a row per piece for `pieces` pieces side by side when `parallel`).
    pub(crate) fn to_natural(self, z: &mut [T], scratch: &mut [T], pieces: usize, parallel: bool) {
        let nx = self.nx;
        let join_rows = |_: Range<usize>, z: &mut [T], tmp: &mut [T]| {
            for row in z.chunks_exact_mut(nx) {
                tmp.copy_from_slice(row);
                join_row(tmp, row);
            }
        };
        in_row_pieces(z, scratch, nx, 0..self.ny, pieces, parallel, &join_rows);
    }

    /// `(A·x)` at column `i` of row `j`, `row` that row of `x` and `south`, `north` the rows
    /// beside it (all by colour), in the crate's summation order.
    #[inline]
    fn cell(&self, j: usize, i: usize, south: Option<&[T]>, row: &[T], north: Option<&[T]>) -> T {
        let (nx, h) = (self.nx, self.nx / 2);
        let (q, m) = (i % 2, i / 2);
        let own = q * h + m;
        let k = j * nx + own;
        let [c, w, e, s, n] = self.bands;
        let other = (1 - q) * h;
        let mut sum = c[k] * row[own];
        if i > 0 {
            sum = sum + w[k] * row[other + (i - 1) / 2];
        }
        if i + 1 < nx {
            sum = sum + e[k] * row[other + i.div_ceil(2)];
        }
        if let Some(xs) = south {
            sum = sum + s[k] * xs[own];
        }
        if let Some(xn) = north {
            sum = sum + n[k] * xn[own];
        }
        sum
    }

    /// Row `j` of `x` (rows from `first` on) and the rows beside it.
    #[allow(clippy::type_complexity)]
    fn neighbourhood<'x>(
        &self,
        x: &'x mut [T],
        first: usize,
        j: usize,
    ) -> (Option<&'x [T]>, &'x mut [T], Option<&'x [T]>) {
        let nx = self.nx;
        let at = (j - first) * nx;
        let (below, rest) = x.split_at_mut(at);
        let (row, above) = rest.split_at_mut(nx);
        let south = (j > 0).then(|| &below[at - nx..]);
        let north = (j + 1 < self.ny).then(|| &above[..nx]);
        (south, row, north)
    }

    /// The interior cells of the half of parity `p` (both neighbours along the row exist):
    /// their indices in the half. Own index `m` has its west neighbour at `m + p − 1` in the
    /// other half, its east one at `m + p`.
    fn interior(&self, p: usize) -> Range<usize> {
        let h = self.nx / 2;
        if p == 0 {
            1.min(h)..h
        } else {
            0..h.saturating_sub(1)
        }
    }

    /// The first half-sweep from `x = 0` on row `j`: the cells of colour 0 take `b/center`,
    /// the others zero.
    pub(crate) fn relax_from_zero(&self, x: &mut [T], first: usize, j: usize) {
        let (nx, h) = (self.nx, self.nx / 2);
        let row = &mut x[(j - first) * nx..][..nx];
        let p = j % 2;
        let base = j * nx + p * h;
        let (b, inv) = (&self.b[base..][..h], &self.inv[base..][..h]);
        let (evens, odds) = row.split_at_mut(h);
        let (own, other) = if p == 0 { (evens, odds) } else { (odds, evens) };
        for ((x, &b), &d) in own.iter_mut().zip(b).zip(inv) {
            *x = b * widen(d);
        }
        other.fill(T::zero());
    }

    /// A Gauss–Seidel half-sweep of `colour` on row `j` of `x` (rows from `first` on).
    pub(crate) fn half_sweep(&self, x: &mut [T], first: usize, j: usize, colour: usize) {
        let (nx, h) = (self.nx, self.nx / 2);
        let p = (j + colour) % 2;
        let (south, row, north) = self.neighbourhood(x, first, j);
        let base = j * nx + p * h;
        let (b, inv) = (&self.b[base..][..h], &self.inv[base..][..h]);
        let relax = |row: &mut [T], m: usize, sum: T| {
            let own = p * h + m;
            row[own] = row[own] + (b[m] - sum) * widen(inv[m]);
        };
        let (Some(xs), Some(xn)) = (south, north) else {
            for m in 0..h {
                let sum = self.cell(j, 2 * m + p, south, &*row, north);
                relax(row, m, sum);
            }
            return;
        };
        let cells = self.interior(p);
        // The edge cell of the half (column 0 or nx − 1) by the general form.
        let edge = if p == 0 { 0 } else { h - 1 };
        let sum = self.cell(j, 2 * edge + p, south, &*row, north);
        relax(row, edge, sum);
        let len = cells.len();
        if len == 0 {
            return;
        }
        let [c, w, e, s, n] = self
            .bands
            .each_ref()
            .map(|v| &v[base + cells.start..][..len]);
        let (b, inv) = (&b[cells.clone()], &inv[cells.clone()]);
        let (xs, xn) = (
            &xs[p * h + cells.start..][..len],
            &xn[p * h + cells.start..][..len],
        );
        let (evens, odds) = row.split_at_mut(h);
        let (own, other) = if p == 0 {
            (&mut evens[cells.clone()], &*odds)
        } else {
            (&mut odds[cells.clone()], &*evens)
        };
        let start = cells.start + p - 1;
        let (xw, xe) = (&other[start..][..len], &other[start + 1..][..len]);
        for k in 0..len {
            let sum = c[k] * own[k] + w[k] * xw[k] + e[k] * xe[k] + s[k] * xs[k] + n[k] * xn[k];
            own[k] = own[k] + (b[k] - sum) * widen(inv[k]);
        }
    }

    /// The residual `b − A·x` of row `j` of `x` (rows from `first` on) into `out`, in the
    /// natural order; `buf` (a row) is overwritten.
    pub(crate) fn residual_row(
        &self,
        x: &[T],
        first: usize,
        j: usize,
        buf: &mut [T],
        out: &mut [T],
    ) {
        let (nx, h) = (self.nx, self.nx / 2);
        let (south, row, north) = row_neighbourhood(x, first, nx, self.ny, j);
        let buf = &mut buf[..nx];
        match (south, north) {
            (Some(xs), Some(xn)) => {
                for p in 0..2 {
                    let edge = if p == 0 { 0 } else { h - 1 };
                    buf[p * h + edge] = self.cell(j, 2 * edge + p, south, row, north);
                    let cells = self.interior(p);
                    let len = cells.len();
                    if len == 0 {
                        continue;
                    }
                    let own_at = p * h + cells.start;
                    let [c, w, e, s, n] =
                        self.bands.each_ref().map(|v| &v[j * nx + own_at..][..len]);
                    let own = &row[own_at..][..len];
                    let (xs, xn) = (&xs[own_at..][..len], &xn[own_at..][..len]);
                    let other = &row[(1 - p) * h..][..h];
                    let start = cells.start + p - 1;
                    let (xw, xe) = (&other[start..][..len], &other[start + 1..][..len]);
                    let y = &mut buf[own_at..][..len];
                    for k in 0..len {
                        y[k] = c[k] * own[k]
                            + w[k] * xw[k]
                            + e[k] * xe[k]
                            + s[k] * xs[k]
                            + n[k] * xn[k];
                    }
                }
            }
            _ => {
                for i in 0..nx {
                    buf[(i % 2) * h + i / 2] = self.cell(j, i, south, row, north);
                }
            }
        }
        let b = &self.b[j * nx..][..nx];
        let (y_even, y_odd) = buf.split_at(h);
        let (b_even, b_odd) = b.split_at(h);
        let cells = y_even.iter().zip(y_odd).zip(b_even.iter().zip(b_odd));
        for (pair, ((&ye, &yo), (&be, &bo))) in out.chunks_exact_mut(2).zip(cells) {
            (pair[0], pair[1]) = (be - ye, bo - yo);
        }
    }

    /// `x += P·coarse_x` on row `j` of `x` (rows from `first` on), in place by colour.
    pub(crate) fn prolong_row(
        &self,
        (transfer, inactive, coarse_x): (&Transfer<'_>, Option<&FixedCells>, &[T]),
        x: &mut [T],
        first: usize,
        j: usize,
    ) {
        let nx = self.nx;
        let row = &mut x[(j - first) * nx..][..nx];
        transfer.prolong_row_by_colour(j, row, inactive, coarse_x);
    }
}

#[cfg(test)]
mod tests {
    use super::{join_row, narrow_one, split_row, ColourLevel};
    use crate::operator::Stencil5;
    use crate::precond::multigrid::smooth::Rows;
    use crate::precond::multigrid::{Multigrid, MultigridSettings};
    use crate::space::{Serial, Space, Threaded};
    use crate::testing::{diffusion, Numbers};
    use crate::{Banded5, Coeffs5, Grid};

    /// A diffusion operator in `f32`, conductances over three decades, a little storage,
    /// scattered fixed cells and half of the first row fixed.
    fn operator(nx: usize, ny: usize, seed: u64) -> Banded5<f32> {
        let mut g = Numbers(seed);
        let mut cond = || 10f64.powf(3.0 * g.next() - 1.5);
        let storage = |k: usize| 1e-3 * (1 + k % 5) as f64;
        let fixed: Vec<usize> = (0..nx * ny)
            .filter(|k| k % 41 == 7 || *k < nx / 2)
            .collect();
        diffusion(nx, ny, &mut cond, &storage, &fixed)
            .cast::<f32>()
            .unwrap()
    }

    fn bits(v: &[f32]) -> Vec<u32> {
        v.iter().map(|v| v.to_bits()).collect()
    }

    #[test]
    fn rows_split_and_join() {
        let row: Vec<u32> = (0..8).collect();
        let mut split = vec![0; 8];
        split_row(&row, &mut split);
        assert_eq!(split, [0, 2, 4, 6, 1, 3, 5, 7]);
        let mut back = vec![0; 8];
        join_row(&split, &mut back);
        assert_eq!(back, row);
    }

    /// Both smoothing passes of the fine level by colour (with the restriction, and with the
    /// prolongation) give the bits of the natural order, on narrow and wide grids, 1 to 3
    /// sweeps, in 1 to 6 bands of rows, serial and side by side. The reference is the
    /// natural order's code; the claim behind it is the red-black ordering argument (cells of
    /// one colour do not couple in a 5-point stencil, so the order in which a half-sweep
    /// visits them does not change its values: common practice).
    #[test]
    fn passes_by_colour_have_the_bits_of_the_natural_order() {
        for (nx, ny, sweeps, seed) in [
            (2, 9, 1, 1u64),
            (4, 70, 2, 2),
            (38, 201, 3, 3),
            (64, 130, 1, 4),
        ] {
            let op = operator(nx, ny, seed);
            let settings = MultigridSettings {
                smoothing_sweeps: sweeps,
                coarsest_cells: 4,
                ..Default::default()
            };
            let mg = Multigrid::new(&op, settings).unwrap();
            assert!(mg.by_colour());
            let natural = mg.clone().without_colour_layout();
            let mut by_colour = mg.by_colour.clone().unwrap();
            let mut g = Numbers(seed + 20);
            let n = nx * ny;
            let b: Vec<f32> = (0..n).map(|_| g.next() as f32 - 0.5).collect();
            let level = &natural.levels[0];
            let coarse_x: Vec<f32> = (0..level.x.len()).map(|_| g.next() as f32 - 0.5).collect();
            let mut scratch = vec![0.0f32; 6 * super::super::bands::band_scratch_rows(sweeps) * nx];
            by_colour.set_rhs(&b, &mut scratch, 1, false);
            let transfer = level.transfer();
            let plain = Rows {
                op: &op,
                inv: &natural.fine_inverse_centers,
                b: &b,
                stored: None,
                by_colour: None,
            };
            let view = by_colour.view(&op).unwrap();
            let coloured = Rows {
                by_colour: Some(view),
                ..Rows {
                    op: &op,
                    inv: &[],
                    b: &b,
                    stored: None,
                    by_colour: None,
                }
            };
            let run = |rows: &Rows<'_, f32, Banded5<f32>>, bands: usize, parallel: bool| {
                let mut scratch =
                    vec![0.0f32; 6 * super::super::bands::band_scratch_rows(sweeps) * nx];
                let mut x = vec![f32::NAN; n];
                let mut restricted = vec![f32::NAN; level.b.len()];
                rows.pre_smooth_restrict(
                    &mut x,
                    &mut scratch,
                    sweeps,
                    bands,
                    parallel,
                    &transfer,
                    &mut restricted,
                );
                let pre = x.clone();
                rows.prolong_smooth(
                    &mut x,
                    &mut scratch,
                    sweeps,
                    bands,
                    parallel,
                    &transfer,
                    &coarse_x,
                );
                (pre, restricted, x)
            };
            let (pre, restricted, post) = run(&plain, 1, false);
            for bands in 1..=6 {
                for parallel in [false, true] {
                    let (mut p, r, mut x) = run(&coloured, bands, parallel);
                    for v in [&mut p, &mut x] {
                        view.to_natural(v, &mut scratch, 1, false);
                    }
                    let case =
                        format!("{nx} x {ny}, {sweeps} sweeps, {bands} bands, parallel {parallel}");
                    assert!(bits(&p) == bits(&pre), "pre-smoothing, {case}");
                    assert!(bits(&r) == bits(&restricted), "restriction, {case}");
                    assert!(bits(&x) == bits(&post), "post-smoothing, {case}");
                }
            }
        }
    }

    /// Whole V-cycles by colour, serial and on the threads of the pool, give the bits of the
    /// natural order (the passes' own test above covers 1 to 6 bands); an odd width keeps
    /// the natural order.
    #[test]
    fn cycles_by_colour_have_the_bits_of_the_natural_order() {
        // Coarse widths 128, 64, 32 (all by colour), and 260 → 130 → 65 (an odd level
        // between levels by colour, which keeps the natural order), 6 to 2 bands of rows.
        for (nx, ny, coloured) in [(256, 150, 3), (260, 1100, 1)] {
            let op = operator(nx, ny, 9);
            let n = nx * ny;
            let mut g = Numbers(5);
            let r: Vec<f32> = (0..n).map(|_| g.next() as f32 - 0.5).collect();
            let mut mg = Multigrid::new(&op, MultigridSettings::default()).unwrap();
            assert!(mg.by_colour());
            assert_eq!(mg.coarse_by_colour.iter().flatten().count(), coloured);
            let mut natural = mg.clone().without_colour_layout();
            let mut reference = None;
            for space in [&Serial as &dyn Space, &Threaded] {
                let (mut z, mut z_natural) = (vec![0.0f32; n], vec![0.0f32; n]);
                mg.cycle(&op, space, &r, &mut z);
                natural.cycle(&op, space, &r, &mut z_natural);
                assert!(bits(&z) == bits(&z_natural), "{nx} x {ny}");
                let z = bits(&z);
                assert!(reference.get_or_insert_with(|| z.clone()) == &z);
            }
        }
        let (op, n) = (operator(256, 150, 9), 256 * 150);
        // `1/center` by colour is the natural order's (0 at fixed cells, scaled by ω).
        let mg = Multigrid::new(&op, MultigridSettings::default()).unwrap();
        let omega = crate::precond::multigrid::SYMMETRIC_OMEGA as f32;
        let expected: Vec<f32> = (0..n)
            .map(|k| {
                let fixed = op.fixed().is_some_and(|f| f.contains(k));
                let center = op.coeffs(k % 256, k / 256).center;
                if fixed {
                    0.0
                } else {
                    narrow_one(1.0 / center) * omega
                }
            })
            .collect();
        assert!(bits(&mg.by_colour.unwrap().natural_inverse()) == bits(&expected));
        let odd = operator(255, 40, 3);
        assert!(!Multigrid::new(&odd, MultigridSettings::default())
            .unwrap()
            .by_colour());
    }

    #[test]
    fn only_f32_hierarchies_are_stored_by_colour() {
        let grid = Grid::new(64, 64).unwrap();
        let op: Banded5<f64> =
            Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j)).unwrap();
        assert!(!Multigrid::new(&op, MultigridSettings::default())
            .unwrap()
            .by_colour());
        let single = op.cast::<f32>().unwrap();
        let mg = Multigrid::new(&single, MultigridSettings::default()).unwrap();
        assert!(mg.by_colour());
        let natural = MultigridSettings {
            fine_level_by_colour: false,
            ..Default::default()
        };
        assert!(!Multigrid::new(&single, natural).unwrap().by_colour());
        let odd = Grid::new(63, 64).unwrap();
        let odd = Banded5::from_fn(odd, |i, j| Coeffs5::laplacian(odd, i, j)).unwrap();
        let odd = odd.cast::<f32>().unwrap();
        assert!(ColourLevel::<f32>::new(&odd, 1.0, 1, false).is_none());
    }
}

//! The arithmetic of the paths between coarse centres that `Level::below` (level.rs) builds a
//! coarse level from — conductance of a coupling, series conductance and interpolation weight
//! of a path, the own share of a weight — and its fast paths: pass 0 on the cells of a row
//! clear of inactive cells, passes 1 and 2 on the cells two rows and three columns away from
//! every inactive cell and edge.
//!
//! A fast path does, cell by cell, the arithmetic of the generic code in level.rs for a cell
//! whose neighbours all exist and are active: every half-cell conductance is there, no
//! neighbour is missing, and the neighbouring aggregates are the ones the geometry names. It
//! leaves out the lookups and the branches on the edges, and adds into each coarse coupling in
//! the generic code's order, so the bits are the same (the set-up fingerprints of
//! `benches/examples/setup_profile.rs` check it).

use super::aggregate::split;
use crate::operator::Stencil5;
use crate::scalar::lit;
use crate::{Coeffs5, Scalar};
use std::ops::Range;

/// The share of a cell's own aggregate among the aggregates it interpolates from:
/// `own / (own + nb)` with the shares of [`split`].
///
/// For `w` in `[0, 1]` this is `1 − w` exactly, without the division: `own + nb` rounds to
/// exactly 1 there. (For `w ≥ 1/2`, `1 − w` is exact (Sterbenz's lemma) and so is the sum;
/// for `w < 1/2` the rounded `1 − w` lies in `[1/2, 1]` with an error of at most a quarter of
/// an ulp of 1, so the sum `1 + e` rounds to 1 — a tie at `1 − ulp/4` goes to the even 1.
/// Checked for every `f32` in `[0, 1]` when it went in, and by a unit test on a sample.)
/// Other values (negative weights at edges, NaN) take the division.
#[inline]
pub(super) fn own_share<T: Scalar>(w: T) -> T {
    if w >= T::zero() && w <= T::one() {
        return T::one() - w;
    }
    own_share_by_division(w)
}

/// [`own_share`] by its definition.
#[inline]
pub(super) fn own_share_by_division<T: Scalar>(w: T) -> T {
    let (own, nb) = split(w);
    ratio(own, own + nb)
}

/// Conductance of a coupling (zero for a non-negative one: only diffusion couplings count).
#[inline]
pub(super) fn conductance<T: Scalar>(coupling: T) -> T {
    if coupling < T::zero() {
        -coupling
    } else {
        T::zero()
    }
}

/// The path from one coarse centre to the next along a line of fine cells: half-cell
/// conductance `g1` (None: the fine cell is the coarse centre), face conductance `gf`, half-cell
/// conductance `g2` on the far side. Returns the share `w` of the far centre in the
/// linear (flux-continuous) profile at the near fine cell, and the series conductance `G` of
/// the whole path.
#[inline]
pub(super) fn series<T: Scalar>(g1: Option<T>, gf: T, g2: Option<T>) -> (T, T) {
    let zero = T::zero();
    match (g1, g2) {
        (None, None) => (zero, gf),
        (None, Some(b)) => (zero, ratio(gf * b, gf + b)),
        (Some(a), None) => (ratio(gf, gf + a), ratio(a * gf, a + gf)),
        (Some(a), Some(b)) => {
            let den = gf * b + a * b + a * gf;
            (ratio(gf * b, den), ratio(a * gf * b, den))
        }
    }
}

/// `num / den`, zero when `den` is not positive.
#[inline]
pub(super) fn ratio<T: Scalar>(num: T, den: T) -> T {
    if den > T::zero() {
        num / den
    } else {
        T::zero()
    }
}

/// What the fast paths read of a fine level: its conductances towards east and north, per
/// fine cell of the rows from `first` on, and the sides of the fine and coarse grids.
pub(super) struct FineConductances<'a, T> {
    east: &'a [T],
    north: &'a [T],
    nx: usize,
    ncx: usize,
    first: usize,
}

impl<'a, T: Scalar> FineConductances<'a, T> {
    /// The conductances towards east and north of the rows from `first` on of a fine grid
    /// `nx` cells wide over a coarse grid `ncx` cells wide.
    pub(super) fn new(east: &'a [T], north: &'a [T], nx: usize, ncx: usize, first: usize) -> Self {
        FineConductances {
            east,
            north,
            nx,
            ncx,
            first,
        }
    }

    /// The half-cell conductance from cell `k` (column `i`, row `j`; `k` counted from the
    /// window's first row) to its aggregate's centre along x and along y.
    #[inline]
    fn own_halves(&self, i: usize, j: usize, k: usize) -> (T, T) {
        let two = lit::<T>(2.0);
        let x = if i % 2 == 1 { k - 1 } else { k };
        let y = if j % 2 == 1 { k - self.nx } else { k };
        (two * self.east[x], two * self.north[y])
    }

    /// The north conductances of cells `cols` along the paths in y of row `j`: on the cell's
    /// own half-cell, on the face and on the far half-cell (`series`' order; the half-cells
    /// are to be doubled).
    fn paths_y(&self, j: usize, cols: Range<usize>) -> [&[T]; 3] {
        let at = |r: usize| &self.north[(r - self.first) * self.nx..][cols.clone()];
        if j % 2 == 1 {
            [at(j - 1), at(j), at(j + 1)]
        } else {
            [at(j), at(j - 1), at(j - 2)]
        }
    }

    /// The east conductances of row `j` from the column before `cols` to its last: the paths
    /// in x of the pairs of cells `cols` (which starts at an odd column and holds whole pairs)
    /// are entries `2m`, `2m + 1`, `2m + 2` (half-cell, face, half-cell) for pair `m`.
    fn paths_x(&self, j: usize, cols: Range<usize>) -> &[T] {
        debug_assert!(cols.start % 2 == 1 && cols.len() % 2 == 0);
        &self.east[self.nx * (j - self.first)..][cols.start - 1..cols.end]
    }

    /// Pass 1 of level.rs (interpolation weights) on cells `cols` of row `j` (see
    /// [`paths_x`](Self::paths_x) for `cols`), as branch-free loops the compiler can
    /// vectorise.
    pub(super) fn weights(&self, j: usize, cols: Range<usize>, wx: &mut [T], wy: &mut [T]) {
        if cols.is_empty() {
            return;
        }
        let two: T = lit(2.0);
        let weight = |a: T, gf: T, b: T| series(Some(a), gf, Some(b)).0;
        let row = self.nx * (j - self.first);
        let [own, face, far] = self.paths_y(j, cols.clone());
        let wy = &mut wy[row..][cols.clone()];
        for (w, ((&a, &gf), &b)) in wy.iter_mut().zip(own.iter().zip(face).zip(far)) {
            *w = weight(two * a, gf, two * b);
        }
        // The odd cell of a pair is near the path's start, the even one near its end.
        let east = self.paths_x(j, cols.clone());
        let wx = &mut wx[row..][cols];
        let pairs = wx.len() / 2;
        assert!(east.len() > 2 * pairs);
        for m in 0..pairs {
            let (a, gf, b) = (two * east[2 * m], east[2 * m + 1], two * east[2 * m + 2]);
            wx[2 * m] = weight(a, gf, b);
            wx[2 * m + 1] = weight(b, gf, a);
        }
    }

    /// Pass 2 of level.rs (coarse couplings, and the row-sum excess through `spread`, given
    /// the cell, its half-cell conductances along x and y and the excess) on cells `cols` of
    /// row `j` (see [`paths_x`](Self::paths_x)), adding into the coarse `rows` (the coarse
    /// rows from `rows_first` on) in the same order. The series conductances come first, into
    /// `scratch` (at least 7/2 × `cols` long), in loops the compiler can vectorise.
    pub(super) fn couplings(
        &self,
        j: usize,
        cols: Range<usize>,
        (wx, wy, excess): (&[T], &[T], &[T]),
        (rows, rows_first, scratch): (&mut [Coeffs5<T>], usize, &mut [T]),
        mut spread: impl FnMut(&mut [Coeffs5<T>], usize, T, T, T),
    ) {
        if cols.is_empty() {
            return;
        }
        let (nx, ncx) = (self.nx, self.ncx);
        let (two, half): (T, T) = (lit(2.0), lit(0.5));
        let conductance = |a: T, gf: T, b: T| series(Some(two * a), gf, Some(two * b)).1;
        let (tx, scratch) = scratch.split_at_mut(cols.len() / 2);
        let east = self.paths_x(j, cols.clone());
        assert!(east.len() > 2 * tx.len());
        for (m, t) in tx.iter_mut().enumerate() {
            *t = conductance(east[2 * m], east[2 * m + 1], east[2 * m + 2]);
        }
        let ty = &mut scratch[..cols.len()];
        if j % 2 == 1 {
            let [own, face, far] = self.paths_y(j, cols.clone());
            for (t, ((&a, &gf), &b)) in ty.iter_mut().zip(own.iter().zip(face).zip(far)) {
                *t = conductance(a, gf, b);
            }
        }
        let cj = j / 2;
        // The neighbouring coarse row of this fine row (it is inside the grid: the row is
        // two rows away from either end).
        let qj = if j % 2 == 1 { cj + 1 } else { cj - 1 };
        let row = nx * (j - self.first);
        let base = ncx * rows_first;
        // Each coupling of a coarse cell gets the contributions of this row's cells in their
        // order, as in the generic code: the x paths add to the east and west couplings, the
        // y paths to the north and south ones, the excess to the centers.
        for (m, &t) in tx.iter().enumerate() {
            let i = cols.start + 2 * m;
            let (k, ci) = (row + i, i / 2);
            let kc = ci + ncx * cj - base;
            let own = half * (own_share(wy[k]) + own_share(wy[k + 1]));
            let a = ci + ncx * qj - base;
            for (l, r, share) in [(kc, kc + 1, own), (a, a + 1, T::one() - own)] {
                rows[l].east = rows[l].east - t * share;
                rows[r].west = rows[r].west - t * share;
            }
        }
        if j % 2 == 1 {
            // Along y every cell adds to its own coarse cell's north coupling (and the south
            // one of the cell above), and to its neighbouring aggregate's: coarse cell `ci`
            // gets those of cells 2ci − 1, 2ci, 2ci + 1, 2ci + 2 in turn, summed here in that
            // order without going through memory.
            let (ty, rest) = scratch.split_at_mut(cols.len());
            let (own_part, rest) = rest.split_at_mut(cols.len());
            let nb_part = &mut rest[..cols.len()];
            let (wx_row, wx_above) = (&wx[row..][cols.clone()], &wx[row + nx..][cols.clone()]);
            for ((t, (o, n)), (&w, &w_above)) in ty
                .iter()
                .zip(own_part.iter_mut().zip(nb_part.iter_mut()))
                .zip(wx_row.iter().zip(wx_above))
            {
                let own = half * (own_share(w) + own_share(w_above));
                (*o, *n) = (*t * own, *t * (T::one() - own));
            }
            let (own_part, nb_part) = (&*own_part, &*nb_part);
            let (below, above) = rows[ncx * cj - base..].split_at_mut(ncx);
            for ci in (cols.start - 1) / 2..=(cols.end - 1) / 2 {
                let (mut north, mut south) = (below[ci].north, above[ci].south);
                let cells = [
                    (2 * ci - 1, nb_part),
                    (2 * ci, own_part),
                    (2 * ci + 1, own_part),
                    (2 * ci + 2, nb_part),
                ];
                for (i, part) in cells {
                    if cols.contains(&i) {
                        let s = part[i - cols.start];
                        (north, south) = (north - s, south - s);
                    }
                }
                (below[ci].north, above[ci].south) = (north, south);
            }
        }
        for i in cols.clone() {
            let k = row + i;
            let e = excess[k];
            if e > T::zero() {
                let (gx, gy) = self.own_halves(i, j, k);
                spread(rows, i, gx, gy, e);
            }
        }
    }
}

/// Pass 0 of level.rs (conductances, row-sum excess and the symmetry test) on cells `cols`
/// of row `j` of `fine`, all of them active and `cols` not starting at the first column: the
/// eliminated rows are gathered into `scratch` (five times `cols` long) first, the rest are
/// loops without branches. `east_before` is the east coupling of the cell before `cols` and
/// `north_below` the north couplings of the row below (both updated with this row's);
/// `east`, `north` and `excess` are the row's cells. Returns false if a pair of couplings
/// `differ`s (and then writes nothing but the scratch).
#[allow(clippy::type_complexity)]
pub(super) fn conductances_row<T: Scalar, R: Stencil5<T> + ?Sized>(
    fine: &R,
    j: usize,
    cols: Range<usize>,
    differ: impl Fn(T, T) -> bool,
    (east_before, north_below): (&mut T, &mut [T]),
    (east, north, excess): (&mut [T], &mut [T], &mut [T]),
    scratch: &mut [T],
) -> bool {
    let len = cols.len();
    debug_assert!(cols.start > 0 && len > 0);
    let (cc, rest) = scratch.split_at_mut(len);
    let (cw, rest) = rest.split_at_mut(len);
    let (ce, rest) = rest.split_at_mut(len);
    let (cs, rest) = rest.split_at_mut(len);
    let cn = &mut rest[..len];
    for (m, i) in cols.clone().enumerate() {
        let c = fine.eliminated_coeffs(i, j);
        (cc[m], cw[m], ce[m], cs[m], cn[m]) = (c.center, c.west, c.east, c.south, c.north);
    }
    let mut found = differ(*east_before, cw[0]);
    for (&before, &west) in ce.iter().zip(&cw[1..]) {
        found |= differ(before, west);
    }
    let north_below = &mut north_below[cols.clone()];
    if j > 0 {
        for (&below, &south) in north_below.iter().zip(cs.iter()) {
            found |= differ(below, south);
        }
    }
    if found {
        return false;
    }
    *east_before = ce[len - 1];
    north_below.copy_from_slice(cn);
    for (g, &c) in east[cols.clone()].iter_mut().zip(ce.iter()) {
        *g = conductance(c);
    }
    for (g, &c) in north[cols.clone()].iter_mut().zip(cn.iter()) {
        *g = conductance(c);
    }
    let excess = &mut excess[cols];
    for (m, e) in excess.iter_mut().enumerate() {
        let sum = cc[m] + cw[m] + ce[m] + cs[m] + cn[m];
        *e = if sum > T::zero() { sum } else { T::zero() };
    }
    true
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `own_share` without the division gives the bits of its definition: on a sample of
    /// every `f32` in `[0, 1]` (bit patterns in steps of 257, and the ends), on `f64` values
    /// near 0, 1/2 and 1, and on negative weights and NaN.
    #[test]
    fn own_share_keeps_the_bits_of_its_division() {
        let one = 1.0f32.to_bits();
        for bits in (0..=one).step_by(257).chain([0, 1, one - 1, one]) {
            let w = f32::from_bits(bits);
            assert_eq!(
                own_share(w).to_bits(),
                own_share_by_division(w).to_bits(),
                "{w}"
            );
        }
        for base in [0.0f64, 0.5, 1.0] {
            for step in -2000i64..=2000 {
                let w = f64::from_bits((base.to_bits() as i64 + step).max(0) as u64);
                if w <= 1.0 {
                    assert_eq!(own_share(w).to_bits(), own_share_by_division(w).to_bits());
                }
            }
        }
        for w in [-0.0f64, -0.25, -1.0, f64::NAN, 1.5] {
            assert_eq!(
                own_share(w).to_bits(),
                own_share_by_division(w).to_bits(),
                "{w}"
            );
        }
    }
}

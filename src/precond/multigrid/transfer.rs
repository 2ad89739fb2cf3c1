//! The grid transfers between a level and the next finer one: prolongation `P` from the stored
//! interpolation weights (see `level.rs` for how they are built) and restriction `R = Pᵀ`, one
//! fine row at a time.

use std::ops::Range;

use super::aggregate::{split, Axis};
use crate::operator::FixedCells;
use crate::Scalar;

/// The interpolation between a level and the next finer one, borrowed apart from the level's
/// vectors (`P` from its weights; restriction is `Pᵀ`).
pub(crate) struct Transfer<'a> {
    ax: Axis,
    ay: Axis,
    wx: &'a [f32],
    wy: &'a [f32],
    ncx: usize,
}

impl<'a> Transfer<'a> {
    /// The transfers of a level with axes `ax`, `ay`, fine-cell weights `wx`, `wy` and `ncx`
    /// coarse cells per row.
    pub(crate) fn new(
        ax: Axis,
        ay: Axis,
        wx: &'a [f32],
        wy: &'a [f32],
        ncx: usize,
    ) -> Transfer<'a> {
        Transfer {
            ax,
            ay,
            wx,
            wy,
            ncx,
        }
    }

    /// Prolongation weights of fine cell `(i, j)` (`k = i + nx·j`): coarse indices and weights
    /// of the four coarse cells it interpolates from.
    #[inline]
    pub(crate) fn stencil<T: Scalar>(&self, i: usize, j: usize, k: usize) -> [(usize, T); 4] {
        let (pj, qj) = (self.ay.parent(j), self.ay.neighbour(j));
        self.cell(i, pj * self.ncx, qj * self.ncx, self.wx[k], self.wy[k])
    }

    /// The stencil of fine cell `i` of a row whose coarse rows start at `p` (own) and `q`
    /// (neighbour), from its two stored weights.
    #[inline(always)]
    fn cell<T: Scalar>(&self, i: usize, p: usize, q: usize, wx: f32, wy: f32) -> [(usize, T); 4] {
        let (pi, qi) = (self.ax.parent(i), self.ax.neighbour(i));
        let ((ux, wx), (uy, wy)) = (split::<T>(widen(wx)), split::<T>(widen(wy)));
        [
            (p + pi, ux * uy),
            (p + qi, wx * uy),
            (q + pi, ux * wy),
            (q + qi, wx * wy),
        ]
    }

    /// `coarse_b += Pᵀ·r` for the cells `cols` of the fine row `j` (`r` that whole row's
    /// residual), cells where `!active(k)` left out; cells in order, each cell's four targets
    /// in the order of [`stencil`](Self::stencil). Distributed levels pass their own columns
    /// and a one-cell margin; the serial cycle all.
    #[inline]
    pub(crate) fn restrict_row<T: Scalar>(
        &self,
        j: usize,
        cols: Range<usize>,
        r: &[T],
        active: impl Fn(usize) -> bool,
        coarse_b: &mut [T],
    ) {
        let nx = r.len();
        let base = j * nx;
        let (p, q) = (
            self.ay.parent(j) * self.ncx,
            self.ay.neighbour(j) * self.ncx,
        );
        let (wx, wy) = (&self.wx[base..][..nx], &self.wy[base..][..nx]);
        let cells = r[cols.clone()]
            .iter()
            .zip(&wx[cols.clone()])
            .zip(&wy[cols.clone()]);
        for (i, ((&r, &wx), &wy)) in cols.zip(cells) {
            if !active(base + i) {
                continue;
            }
            for (kc, w) in self.cell::<T>(i, p, q, wx, wy) {
                coarse_b[kc] = coarse_b[kc] + w * r;
            }
        }
    }

    /// Cells per row of the coarse grid.
    pub(crate) fn coarse_width(&self) -> usize {
        self.ncx
    }

    /// The fine rows whose residuals restrict onto coarse row `cj` (a level of `ny` fine rows),
    /// in order: `2·cj − 1` to `2·cj + 2`, within the grid.
    pub(crate) fn fine_rows_of(&self, cj: usize, ny: usize) -> Range<usize> {
        (2 * cj).saturating_sub(1)..(2 * cj + 3).min(ny)
    }

    /// Row `cj` of `Pᵀ·r` into `out` (one coarse row), fine cells where `!active(k)` left out,
    /// `residual(j)` the residual of fine row `j` for every row of
    /// [`fine_rows_of`](Self::fine_rows_of); `inactive` the fine level's inactive cells, if it
    /// has any (the same cells as `!active`); `terms` is scratch of two fine rows. Each coarse
    /// cell adds its terms in the order [`restrict_row`](Self::restrict_row) called row after
    /// row adds them (fine rows in order, cells in order, a cell's four targets in the order
    /// of [`stencil`](Self::stencil)) and from the same products, so the result is the same
    /// bits; but a coarse row needs only its own fine rows, so bands of coarse rows can be
    /// restricted apart.
    pub(crate) fn restrict_gather<'r, T: Scalar + 'r>(
        &self,
        cj: usize,
        ny: usize,
        residual: impl Fn(usize) -> &'r [T],
        inactive: Option<&FixedCells>,
        terms: &mut [T],
        out: &mut [T],
    ) {
        let active = |k: usize| !inactive.is_some_and(|f| f.contains(k));
        out.iter_mut().for_each(|v| *v = T::zero());
        for j in self.fine_rows_of(cj, ny) {
            let (yp, yq) = (self.ay.parent(j) == cj, self.ay.neighbour(j) == cj);
            if !(yp || yq) {
                continue;
            }
            let r = residual(j);
            let nx = r.len();
            let base = j * nx;
            let (wx, wy) = (&self.wx[base..][..nx], &self.wy[base..][..nx]);
            if yp != yq {
                // One row share: each cell's term towards its own aggregate (`own`) and
                // towards its neighbour aggregate (`nb`), the products `restrict_row` forms;
                // zero at an inactive cell (adding zero to a sum that started at +0 leaves it
                // as skipping the cell does: the sum is never −0).
                let (own, nb) = terms.split_at_mut(nx);
                let (own, nb) = (&mut own[..nx], &mut nb[..nx]);
                if inactive.is_some() {
                    own.fill(T::zero());
                    nb.fill(T::zero());
                }
                for_active_runs(inactive, base, 0..nx, |run| {
                    let cells = own[run.clone()]
                        .iter_mut()
                        .zip(nb[run.clone()].iter_mut())
                        .zip(wx[run.clone()].iter().zip(&wy[run.clone()]))
                        .zip(&r[run]);
                    for (((own, nb), (&wx, &wy)), &ri) in cells {
                        let ((ux, wxs), (uy, wys)) = (split::<T>(widen(wx)), split::<T>(widen(wy)));
                        let share_y = if yp { uy } else { wys };
                        (*own, *nb) = (ux * share_y * ri, wxs * share_y * ri);
                    }
                });
                // A regular coarse cell `ci` (1 ≤ ci, 2·ci + 3 < nx) takes, in cell order, the
                // neighbour term of cell 2ci − 1, the own terms of 2ci and 2ci + 1 and the
                // neighbour term of 2ci + 2.
                let regular = (nx.saturating_sub(2) / 2).max(1).min(out.len());
                // Pairs of cells, so the loop needs no bounds checks: coarse cell ci takes
                // nb[2ci − 1] (first of pair ci − 1 of nb[1..]), own[2ci], own[2ci + 1] (pair
                // ci − 1 of own[2..]) and nb[2ci + 2] (first of pair ci − 1 of nb[4..]).
                let (own, nb) = (&*own, &*nb);
                let terms = nb[1.min(nx)..]
                    .chunks_exact(2)
                    .zip(own[2.min(nx)..].chunks_exact(2))
                    .zip(nb[4.min(nx)..].chunks_exact(2));
                let regular_cells = out.iter_mut().take(regular).skip(1);
                for (acc, ((before, pair), after)) in regular_cells.zip(terms) {
                    *acc = *acc + before[0] + pair[0] + pair[1] + after[0];
                }
                self.gather_ends(yp, yq, base, r, wx, wy, active, regular, out);
            } else {
                self.gather_ends(yp, yq, base, r, wx, wy, active, 1, out);
            }
        }
    }

    /// The general form of [`restrict_gather`](Self::restrict_gather)'s terms of one fine row
    /// (starting at cell `base`), for the coarse cells 0 and `from..`.
    #[allow(clippy::too_many_arguments)]
    fn gather_ends<T: Scalar>(
        &self,
        yp: bool,
        yq: bool,
        base: usize,
        r: &[T],
        wx: &[f32],
        wy: &[f32],
        active: impl Fn(usize) -> bool,
        from: usize,
        out: &mut [T],
    ) {
        let nx = r.len();
        let ends = (0..out.len()).filter(|&ci| ci == 0 || ci >= from);
        for ci in ends {
            let mut sum = out[ci];
            for i in (2 * ci).saturating_sub(1)..(2 * ci + 3).min(nx) {
                let (xp, xq) = (self.ax.parent(i) == ci, self.ax.neighbour(i) == ci);
                if !(xp || xq) || !active(base + i) {
                    continue;
                }
                let ((ux, wxs), (uy, wys)) = (split::<T>(widen(wx[i])), split::<T>(widen(wy[i])));
                let ri = r[i];
                if yp && xp {
                    sum = sum + ux * uy * ri;
                }
                if yp && xq {
                    sum = sum + wxs * uy * ri;
                }
                if yq && xp {
                    sum = sum + ux * wys * ri;
                }
                if yq && xq {
                    sum = sum + wxs * wys * ri;
                }
            }
            out[ci] = sum;
        }
    }

    /// `x += P·coarse_x` on the cells `cols` of the fine row `j` (`x` that whole row), the
    /// cells of `inactive` (the fine level's inactive cells, if it has any) left out.
    #[inline]
    pub(crate) fn prolong_row<T: Scalar>(
        &self,
        j: usize,
        cols: Range<usize>,
        x: &mut [T],
        inactive: Option<&FixedCells>,
        coarse_x: &[T],
    ) {
        let nx = x.len();
        let base = j * nx;
        let (p, q) = (
            self.ay.parent(j) * self.ncx,
            self.ay.neighbour(j) * self.ncx,
        );
        let (wx, wy) = (&self.wx[base..][..nx], &self.wy[base..][..nx]);
        // Cells 2 ≤ i < nx − 1 interpolate from their own aggregate and the one before (even
        // i) or after (odd i): the neighbour without `Axis::neighbour`'s tests. The same
        // products and sums as the general form below.
        let start = cols.start.max(2).min(cols.end);
        let regular = start..cols.end.min(nx.saturating_sub(1)).max(start);
        let (own, nb) = (&coarse_x[p..], &coarse_x[q..]);
        // Cell i: own[pi]·ux·uy + own[qi]·wx·uy + nb[pi]·ux·wy + nb[qi]·wx·wy, with
        // pi = i/2 and qi = pi ∓ 1 for even and odd i (`interpolate`).
        let single = |x: &mut [T], i: usize| {
            let pi = i / 2;
            let qi = if i % 2 == 1 { pi + 1 } else { pi - 1 };
            x[i] = x[i] + interpolate(wx[i], wy[i], own[pi], own[qi], nb[pi], nb[qi]);
        };
        for_active_runs(inactive, base, regular.clone(), |run| {
            // An odd first cell alone, then pairs of cells (2m, 2m + 1) sharing pi = m, with
            // the coarse values m − 1, m, m + 1 from three offset slices: a loop without
            // bounds checks or branches, which the compiler vectorises.
            let mut start = run.start;
            if start % 2 == 1 {
                single(x, start);
                start += 1;
            }
            let end = start + (run.end.max(start) - start) / 2 * 2;
            let (m0, m1) = (start / 2, end / 2);
            let pairs = x[start..end]
                .chunks_exact_mut(2)
                .zip(wx[start..end].chunks_exact(2))
                .zip(wy[start..end].chunks_exact(2));
            let (own3, nb3) = (neighbours(own, m0..m1), neighbours(nb, m0..m1));
            for (((v, wx), wy), (((&o0, &o1), &o2), ((&n0, &n1), &n2))) in pairs.zip(own3.zip(nb3))
            {
                v[0] = v[0] + interpolate(wx[0], wy[0], o1, o0, n1, n0);
                v[1] = v[1] + interpolate(wx[1], wy[1], o1, o2, n1, n2);
            }
            if end < run.end {
                single(x, end);
            }
        });
        let ends = if regular.is_empty() {
            cols.clone().chain(0..0)
        } else {
            (cols.start..regular.start).chain(regular.end..cols.end)
        };
        for i in ends {
            if inactive.is_some_and(|f| f.contains(base + i)) {
                continue;
            }
            x[i] = x[i] + self.general_term(i, (p, q), (wx[i], wy[i]), coarse_x);
        }
    }

    /// [`prolong_row`](Self::prolong_row) on row `j` stored by colour (`row`: its even
    /// columns, then its odd ones; an even width): each cell gets the same products and sums,
    /// one colour's cells in a loop over contiguous entries, so no pass puts the row in the
    /// natural order and back.
    pub(crate) fn prolong_row_by_colour<T: Scalar>(
        &self,
        j: usize,
        row: &mut [T],
        inactive: Option<&FixedCells>,
        coarse_x: &[T],
    ) {
        let (nx, h) = (row.len(), row.len() / 2);
        debug_assert!(nx % 2 == 0, "a row by colour has an even width");
        let base = j * nx;
        let (p, q) = (
            self.ay.parent(j) * self.ncx,
            self.ay.neighbour(j) * self.ncx,
        );
        let (wx, wy) = (&self.wx[base..][..nx], &self.wy[base..][..nx]);
        let (own, nb) = (&coarse_x[p..], &coarse_x[q..]);
        let (evens, odds) = row.split_at_mut(h);
        // As in `prolong_row`: cells 2 ≤ i < nx − 1 by the regular form, even i = 2m from
        // the aggregates m and m − 1, odd i = 2m + 1 from m and m + 1.
        let regular = 2..nx.saturating_sub(1).max(2);
        let even = |evens: &mut [T], m: usize| {
            let (i, v) = (2 * m, &mut evens[m]);
            *v = *v + interpolate(wx[i], wy[i], own[m], own[m - 1], nb[m], nb[m - 1]);
        };
        let odd = |odds: &mut [T], m: usize| {
            let (i, v) = (2 * m + 1, &mut odds[m]);
            *v = *v + interpolate(wx[i], wy[i], own[m], own[m + 1], nb[m], nb[m + 1]);
        };
        for_active_runs(inactive, base, regular.clone(), |run| {
            // The run's even cells are 2m for m in `e`, its odd ones 2m + 1 for m in `o`; the
            // pairs (2m, 2m + 1) with m in both go through one loop over contiguous entries
            // (a pair's weights read once), the one or two cells left at each end alone.
            let e = run.start.div_ceil(2)..run.end.div_ceil(2);
            let o = run.start / 2..run.end / 2;
            let both = e.start.max(o.start)..e.end.min(o.end).max(e.start.max(o.start));
            for m in (e.start..both.start).chain(both.end..e.end) {
                even(evens, m);
            }
            for m in (o.start..both.start).chain(both.end..o.end) {
                odd(odds, m);
            }
            let (m0, m1) = (both.start, both.end);
            if m0 == m1 {
                return;
            }
            let cells = evens[m0..m1]
                .iter_mut()
                .zip(&mut odds[m0..m1])
                .zip(wx[2 * m0..2 * m1].chunks_exact(2))
                .zip(wy[2 * m0..2 * m1].chunks_exact(2));
            let (own3, nb3) = (neighbours(own, m0..m1), neighbours(nb, m0..m1));
            for ((((ve, vo), wx), wy), (((&o0, &o1), &o2), ((&n0, &n1), &n2))) in
                cells.zip(own3.zip(nb3))
            {
                *ve = *ve + interpolate(wx[0], wy[0], o1, o0, n1, n0);
                *vo = *vo + interpolate(wx[1], wy[1], o1, o2, n1, n2);
            }
        });
        let ends = if regular.is_empty() {
            (0..nx).chain(0..0)
        } else {
            (0..regular.start).chain(regular.end..nx)
        };
        for i in ends {
            if inactive.is_some_and(|f| f.contains(base + i)) {
                continue;
            }
            let v = if i % 2 == 0 {
                &mut evens[i / 2]
            } else {
                &mut odds[i / 2]
            };
            *v = *v + self.general_term(i, (p, q), (wx[i], wy[i]), coarse_x);
        }
    }

    /// The prolongation's term at cell `i` of a row whose aggregates start at coarse cells
    /// `p` and `q`, by the general form (any column, any aggregate).
    fn general_term<T: Scalar>(
        &self,
        i: usize,
        (p, q): (usize, usize),
        (wx, wy): (f32, f32),
        coarse_x: &[T],
    ) -> T {
        let mut e = T::zero();
        for (kc, w) in self.cell::<T>(i, p, q, wx, wy) {
            e = e + w * coarse_x[kc];
        }
        e
    }
}

/// The regular form of the prolongation's term at a cell with weights `wx`, `wy`, from its
/// own aggregate `p` and the neighbouring one `q` in x, on its own coarse row (`own_…`) and the
/// neighbouring one (`nb_…`): `own_p·ux·uy + own_q·wx·uy + nb_p·ux·wy + nb_q·wx·wy` after a
/// zero, in that order (one function, so both row layouts have the same bits).
#[inline(always)]
fn interpolate<T: Scalar>(wx: f32, wy: f32, own_p: T, own_q: T, nb_p: T, nb_q: T) -> T {
    let ((ux, wx), (uy, wy)) = (split::<T>(widen(wx)), split::<T>(widen(wy)));
    T::zero() + ux * uy * own_p + wx * uy * own_q + ux * wy * nb_p + wx * wy * nb_q
}

/// `(c[m − 1], c[m], c[m + 1])` for `m` in `range` (which starts at 1 or later), from three
/// offset slices.
#[inline(always)]
fn neighbours<T>(c: &[T], range: Range<usize>) -> impl Iterator<Item = ((&T, &T), &T)> {
    let (m0, m1) = (range.start, range.end);
    let (before, at, after) = (&c[m0 - 1..m1 - 1], &c[m0..m1], &c[m0 + 1..m1 + 1]);
    before.iter().zip(at).zip(after)
}

/// Calls `f` with each run of cells in `cols` (indices within a row whose first cell is
/// `base`) that holds no cell of `inactive`, in order: all of `cols` at once without inactive
/// cells, so the loops over a run need no test per cell.
#[inline]
pub(crate) fn for_active_runs(
    inactive: Option<&FixedCells>,
    base: usize,
    cols: Range<usize>,
    mut f: impl FnMut(Range<usize>),
) {
    let Some(set) = inactive else {
        if !cols.is_empty() {
            f(cols);
        }
        return;
    };
    let mut start = cols.start;
    for &k in set.in_range(base + cols.start..base + cols.end) {
        if start < k - base {
            f(start..k - base);
        }
        start = k - base + 1;
    }
    if start < cols.end {
        f(start..cols.end);
    }
}

/// A stored `f32` value (a weight, an inverse center) in the level's scalar type (exact:
/// `f32` widens to `f64` exactly).
#[inline(always)]
pub(super) fn widen<T: Scalar>(w: f32) -> T {
    T::from(w).unwrap_or_else(T::zero)
}

#[cfg(test)]
#[path = "transfer_tests.rs"]
mod tests;

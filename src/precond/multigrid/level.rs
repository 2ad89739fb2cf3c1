//! One level of the hierarchy: the 5-point operator of a coarse grid, built from the next finer
//! level's coefficients, and the grid transfers between the two.
//!
//! Cells are aggregated 2 × 2 (1-wide aggregates at the far end of an odd side); the centre of
//! an aggregate is the coarse cell centre. Everything is built from conductances
//! `g = −coupling` (non-negative couplings count as zero conductance) along straight lines of
//! fine cells, the way a hydrogeologist upscales a layered column:
//!
//! * **Interpolation** (prolongation `P`). Along one axis, a fine cell lies between its own
//!   aggregate's centre and the next aggregate's centre. The path between the two centres is
//!   the half-cell inside the own aggregate (conductance `2·g_int`, with `g_int` the coupling
//!   between the two siblings), the face (`g_f`) and the half-cell on the far side. The fine
//!   cell takes the share `w = r₁/(r₁ + r_f + r₂)` of the far centre (`r = 1/g`), the value of
//!   a flux-continuous linear profile. In a homogeneous medium `w = 1/4`, which is bilinear
//!   interpolation between cell centres; across a barrier `w → 0`; a cell cut off from its
//!   sibling follows the neighbour. In 2-D the weights of the two axes multiply. `P`
//!   reproduces constants. Restriction is the transpose, `R = Pᵀ`.
//! * **Coarse couplings.** The series conductance of that same path, for every fine line
//!   crossing a coarse face, summed over the lines (parallel) — after sharing each line's
//!   conductance between the coarse lines that interpolate it, in the proportions of the
//!   interpolation in the cross direction (a lumped Galerkin product), so that a fine line that
//!   follows the neighbouring coarse line gives its conductance to that line. For a homogeneous
//!   medium this is the rediscretised operator on the coarse grid.
//! * **Coarse centers**: the sum of the coarse conductances plus each fine cell's row-sum
//!   excess (storage terms, couplings to fixed cells or to the zero values outside the grid),
//!   reached from the coarse centre through the mean half-cell resistance and shared like the
//!   interpolation.
//!
//! The coarse operator is again symmetric, 5-point and an M-matrix. (A non-symmetric operator
//! reaches this code through its symmetric part; `skew.rs` adds the rest.) Inactive cells (fixed
//! cells, coarse cells with no unknown under them) are left out of `P` and `R` and are identity
//! rows, so the V-cycle stays symmetric.

use super::aggregate::Axis;
use super::galerkin::galerkin_lumped;
use super::paths::{conductance, conductances_row, own_share, ratio, series, FineConductances};
use super::stiffen::stiffen;
use super::transfer::Transfer;
use super::CoarseOperator;
use std::ops::Range;

use crate::error::Location;
use crate::operator::FixedCells;
use crate::operator::{row_neighbourhood, row_product, Stencil5};
use crate::scalar::{lit, to_f64};
use crate::{Coeffs5, Error, Grid, Scalar};

/// Whether cell `k` of `op` is an unknown (false for fixed cells and identity rows), with the
/// fixed set looked up once.
pub(crate) fn active_cells<T: Scalar, R: Stencil5<T> + ?Sized>(
    op: &R,
) -> impl Fn(usize) -> bool + '_ {
    let fixed = op.fixed();
    move |k| !fixed.is_some_and(|f| f.contains(k))
}

/// A coarse 5-point operator: one row per cell, its cells without an unknown (identity rows)
/// as fixed cells.
#[derive(Clone, Debug)]
pub(crate) struct LevelOperator<T> {
    pub(crate) grid: Grid,
    pub(crate) rows: Vec<Coeffs5<T>>,
    pub(crate) inactive: FixedCells,
}

impl<T: Scalar> Stencil5<T> for LevelOperator<T> {
    fn grid(&self) -> Grid {
        self.grid
    }
    #[inline]
    fn coeffs(&self, i: usize, j: usize) -> Coeffs5<T> {
        self.rows[i + self.grid.nx() * j]
    }
    fn fixed(&self) -> Option<&FixedCells> {
        Some(&self.inactive)
    }
    /// The rows are built eliminated: identity rows at inactive cells, no couplings to them.
    #[inline]
    fn eliminated_coeffs(&self, i: usize, j: usize) -> Coeffs5<T> {
        self.coeffs(i, j)
    }
    fn apply_rows(&self, rows: Range<usize>, x: &[T], y: &mut [T]) {
        self.apply_rows_from(rows, 0, x, y);
    }
    fn apply_rows_from(&self, rows: Range<usize>, first: usize, x: &[T], y: &mut [T]) {
        let (nx, ny) = (self.grid.nx(), self.grid.ny());
        for (j, y_row) in rows.zip(y.chunks_exact_mut(nx)) {
            // The row's coefficients cut to exactly `nx` entries: no checks in the loop.
            let coeffs = &self.rows[j * nx..][..nx];
            let (south, row, north) = row_neighbourhood(x, first, nx, ny, j);
            row_product(|i| coeffs[i], south, row, north, y_row);
        }
    }
}

/// A coarse level: operator, transfers from the next finer grid, and its vectors.
#[derive(Clone, Debug)]
pub(crate) struct Level<T> {
    pub(crate) op: LevelOperator<T>,
    pub(super) ax: Axis,
    pub(super) ay: Axis,
    /// Per fine cell: weight of the neighbouring aggregate in the east-west direction (kept
    /// in `f32`, which is ample for a weight in [0, 1] and halves the storage in `f64`).
    pub(super) wx: Vec<f32>,
    /// Per fine cell: weight of the neighbouring aggregate in the south-north direction.
    pub(super) wy: Vec<f32>,
    /// Correction being computed on this level.
    pub(crate) x: Vec<T>,
    /// Restricted residual (right-hand side of this level).
    pub(crate) b: Vec<T>,
    /// `1/center` at active cells, 0 at inactive ones (the smoother's scaling; `f32` like the
    /// interpolation weights: the smoother only needs it to a relative 1e-7, and the same
    /// rounded value before and after the coarse correction keeps the cycle symmetric).
    pub(crate) inverse_centers: Vec<f32>,
}

impl<T: Scalar> Level<T> {
    /// The level below `fine` (see the module notes).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::PivotBreakdown`](crate::ErrorKind::PivotBreakdown) naming the first fine cell of an aggregate whose coarse center
    /// comes out non-positive or not finite.
    pub(crate) fn below<R: Stencil5<T> + ?Sized>(
        fine: &R,
        rule: CoarseOperator,
    ) -> Result<Level<T>, Error> {
        // No pair of couplings differs by more than an infinite tolerance (a zero pair gives
        // `0 > NaN`, false), so the level is always built.
        match Self::below_if_symmetric(fine, rule, f64::INFINITY)? {
            Some(level) => Ok(level),
            None => Err(Error::asymmetric(Location::on(fine.grid(), 0), 0, 0.0, 0.0)),
        }
    }

    /// [`below`](Self::below), or `None` as soon as the first pass over the rows finds two
    /// free neighbours whose eliminated couplings differ by more than `rel_tol` relative (the
    /// test of [`check_symmetry`](crate::check_symmetry), which then reports an error; here the
    /// pass that reads every row anyway makes the check, instead of a pass of its own).
    ///
    /// # Errors
    ///
    /// As [`below`](Self::below).
    pub(crate) fn below_if_symmetric<R: Stencil5<T> + ?Sized>(
        fine: &R,
        rule: CoarseOperator,
        rel_tol: f64,
    ) -> Result<Option<Level<T>>, Error> {
        let g = fine.grid();
        let (nx, ny, n) = (g.nx(), g.ny(), g.cells());
        let (ncx, ncy) = (nx.div_ceil(2), ny.div_ceil(2));
        let grid = Grid::new(ncx, ncy)?;
        let nc = grid.cells();
        let (ax, ay) = (Axis { n: nx }, Axis { n: ny });
        let two: T = lit(2.0);
        let half: T = lit(0.5);
        let active_fine = active_cells(fine);
        // Per fine cell: conductances towards east and north, and the row-sum excess.
        let mut east = vec![T::zero(); n];
        let mut north = vec![T::zero(); n];
        let mut excess = vec![T::zero(); n];
        // Half-cell conductance from a fine cell to its aggregate's centre along x (None: the
        // aggregate is one active cell wide there, so the cell is the centre).
        let half_x = |east: &[T], i: usize, j: usize| -> Option<T> {
            let k = i + nx * j;
            let sib = if i % 2 == 0 { i + 1 } else { i - 1 };
            if sib >= nx || !active_fine(sib + nx * j) {
                return None;
            }
            Some(two * east[k.min(sib + nx * j)])
        };
        let half_y = |north: &[T], i: usize, j: usize| -> Option<T> {
            let k = i + nx * j;
            let sib = if j % 2 == 0 { j + 1 } else { j - 1 };
            if sib >= ny || !active_fine(i + nx * sib) {
                return None;
            }
            Some(two * north[k.min(i + nx * sib)])
        };
        let zero = Coeffs5 {
            center: T::zero(),
            ..Coeffs5::identity()
        };
        // The coarse rows, zeroed a coarse row at a time as pass 2 comes to them (while the
        // fresh memory is in cache, rather than in a pass of its own).
        let mut rows: Vec<Coeffs5<T>> = Vec::with_capacity(nc);
        let mut active = vec![false; nc];
        let mut wx = vec![T::zero(); n];
        let mut wy = vec![T::zero(); n];
        let on = |active: &[bool], kc: usize, fb: usize| if active[kc] { kc } else { fb };
        // Three passes over the fine rows, fused into one sweep down the grid: pass 0 on row
        // `s`, pass 1 on row `s − LAG1`, pass 2 on row `s − LAG2`, so that each pass finds the
        // rows it reads already done (pass 1 on row j reads pass 0 up to row j + 1; pass 2 on
        // row j reads pass 1 up to row j + 1 and the coarse cells' activity up to fine row
        // j + 3) while they are still in cache. Each pass writes only its own cells, and pass
        // 2 adds into the coarse rows in row order, as three separate sweeps would.
        const LAG1: usize = 2;
        const LAG2: usize = 4;
        // The symmetry check of pass 0: each free cell's eliminated west and south couplings
        // against the east coupling of the cell before it and the north coupling of the cell
        // below it (zero for a fixed cell, whose eliminated row is an identity row).
        // (Equal couplings never differ; `&` rather than `&&`, so that a loop of tests has no
        // branches.)
        let differ = |a: T, b: T| {
            let (wide_a, wide_b) = (to_f64(a), to_f64(b));
            (a != b) & ((wide_a - wide_b).abs() > rel_tol * wide_a.abs().max(wide_b.abs()))
        };
        // Rows whose cells are all active but perhaps the first and the last; a cell two rows
        // and three columns from every inactive cell and from the edges takes the fast paths
        // of `paths.rs` in passes 1 and 2.
        let mut clear = vec![true; ny];
        for &k in fine.fixed().map_or(&[][..], |f| f.cells()) {
            let (i, j) = (k % nx, k / nx);
            if j < ny && i != 0 && i + 1 != nx {
                clear[j] = false;
            }
        }
        let mut scratch = vec![T::zero(); 5 * nx];
        let fast_cols = |clear: &[bool], j: usize| {
            if nx >= 8 && j >= 2 && j + 2 < ny && clear[j - 2..=j + 2].iter().all(|&c| c) {
                // Whole pairs of cells, from an odd column.
                3..3 + 2 * ((nx - 6) / 2)
            } else {
                0..0
            }
        };
        let mut north_below = vec![T::zero(); nx];
        for s in 0..ny + LAG2 {
            // Pass 0: conductances, excess, and which aggregates carry an unknown. Cells 1 to
            // nx − 2 of a clear row take the fast path.
            if s < ny {
                let j = s;
                let fast = if clear[j] && nx >= 3 { 1..nx - 1 } else { 0..0 };
                let mut east_before = T::zero();
                for span in [0..fast.start, fast.clone(), fast.end..nx] {
                    if span == fast && !fast.is_empty() {
                        let found = (&mut east[..], &mut north[..], &mut excess[..]);
                        let near = (&mut east_before, &mut north_below[..]);
                        if !conductances_row(
                            fine,
                            j,
                            fast.clone(),
                            differ,
                            near,
                            found,
                            &mut scratch,
                        ) {
                            return Ok(None);
                        }
                        let coarse_row = ncx * ay.parent(j);
                        active[coarse_row + ax.parent(fast.start)
                            ..=coarse_row + ax.parent(fast.end - 1)]
                            .fill(true);
                        continue;
                    }
                    for i in span {
                        let k = i + nx * j;
                        if !active_fine(k) {
                            (east_before, north_below[i]) = (T::zero(), T::zero());
                            continue;
                        }
                        active[ax.parent(i) + ncx * ay.parent(j)] = true;
                        let c = fine.eliminated_coeffs(i, j);
                        if (i > 0 && differ(east_before, c.west))
                            || (j > 0 && differ(north_below[i], c.south))
                        {
                            return Ok(None);
                        }
                        (east_before, north_below[i]) = (c.east, c.north);
                        east[k] = conductance(c.east);
                        north[k] = conductance(c.north);
                        let sum = c.center + c.west + c.east + c.south + c.north;
                        excess[k] = if sum > T::zero() { sum } else { T::zero() };
                    }
                }
            }
            // Pass 1: interpolation weights towards the neighbouring aggregates.
            if (LAG1..ny + LAG1).contains(&s) {
                let j = s - LAG1;
                let fast = fast_cols(&clear, j);
                FineConductances::new(&east, &north, nx, ncx).weights(
                    j,
                    fast.clone(),
                    &mut wx,
                    &mut wy,
                );
                for i in (0..fast.start).chain(fast.end..nx) {
                    let k = i + nx * j;
                    if !active_fine(k) {
                        continue;
                    }
                    let (ci, cj) = (ax.parent(i), ay.parent(j));
                    // Missing or fixed neighbours of this cell: its row-sum excess is shared
                    // among them as the conductance to a zero-valued ghost beyond each.
                    let missing = [
                        i == 0 || !active_fine(k - 1),
                        i + 1 == nx || !active_fine(k + 1),
                        j == 0 || !active_fine(k - nx),
                        j + 1 == ny || !active_fine(k + nx),
                    ];
                    let m = missing.iter().filter(|&&b| b).count();
                    let ghost = if m > 0 {
                        excess[k] / T::from(m).unwrap_or_else(T::one)
                    } else {
                        T::zero()
                    };
                    if 2 * ci + 1 < nx {
                        // Paired in x: interpolate towards the outward side.
                        let (out_missing, face, far) = if i % 2 == 1 {
                            (
                                missing[1],
                                if i + 1 < nx { east[k] } else { T::zero() },
                                i + 1,
                            )
                        } else {
                            (
                                missing[0],
                                if i > 0 { east[k - 1] } else { T::zero() },
                                i.wrapping_sub(1),
                            )
                        };
                        wx[k] = if out_missing {
                            -series(half_x(&east, i, j), ghost, None).0
                        } else if ax.neighbour(i) != ci {
                            series(half_x(&east, i, j), face, half_x(&east, far, j)).0
                        } else {
                            T::zero()
                        };
                    }
                    if 2 * cj + 1 < ny {
                        let (out_missing, face, far) = if j % 2 == 1 {
                            (
                                missing[3],
                                if j + 1 < ny { north[k] } else { T::zero() },
                                j + 1,
                            )
                        } else {
                            (
                                missing[2],
                                if j > 0 { north[k - nx] } else { T::zero() },
                                j.wrapping_sub(1),
                            )
                        };
                        wy[k] = if out_missing {
                            -series(half_y(&north, i, j), ghost, None).0
                        } else if ay.neighbour(j) != cj {
                            series(half_y(&north, i, j), face, half_y(&north, i, far)).0
                        } else {
                            T::zero()
                        };
                    }
                }
            }
            // Pass 2: coarse couplings and centers. Each fine line's series conductance across
            // a coarse face goes to the coarse lines that interpolate that fine line, in the
            // proportions of the interpolation (a lumped Galerkin product in the cross
            // direction), so the coarse operator sees the energy of the interpolated
            // corrections.
            if s >= LAG2 {
                let j = s - LAG2;
                let cj = ay.parent(j);
                // Pass 2 on row j adds into coarse rows up to cj + 1.
                rows.resize(((cj + 2) * ncx).min(nc), zero);
                // Row-sum excess `e` (storage, fixed neighbours) of cell `i`, reached from the
                // coarse centre through the mean half-cell resistance, spread like the
                // interpolation.
                let spread = |rows: &mut [Coeffs5<T>], i: usize, gx, gy, e: T| {
                    let (k, ci) = (i + nx * j, ax.parent(i));
                    let kc = ci + ncx * cj;
                    let resist = |g: Option<T>| g.map_or(T::zero(), |g| ratio(T::one(), g));
                    let r = resist(gx).min(resist(gy));
                    let contribution = ratio(e, T::one() + e * r);
                    let (pi, qi, pj, qj) = (ci, ax.neighbour(i), cj, ay.neighbour(j));
                    let (wxk, wyk) = (T::one() - own_share(wx[k]), T::one() - own_share(wy[k]));
                    let (ux, uy) = (T::one() - wxk, T::one() - wyk);
                    for (target, w) in [
                        (pi + ncx * pj, ux * uy),
                        (qi + ncx * pj, wxk * uy),
                        (pi + ncx * qj, ux * wyk),
                        (qi + ncx * qj, wxk * wyk),
                    ] {
                        let t = on(&active, target, kc);
                        rows[t].center = rows[t].center + w * contribution;
                    }
                };
                let cell = |rows: &mut [Coeffs5<T>], i: usize| {
                    let k = i + nx * j;
                    if !active_fine(k) {
                        return;
                    }
                    let ci = ax.parent(i);
                    let kc = ci + ncx * cj;
                    let (gx, gy) = (half_x(&east, i, j), half_y(&north, i, j));
                    if i + 1 < nx && ax.parent(i + 1) != ci {
                        let t = series(gx, east[k], half_x(&east, i + 1, j)).1;
                        let own = half * (own_share(wy[k]) + own_share(wy[k + 1]));
                        let qj = ay.neighbour(j);
                        let (a, b) = (
                            on(&active, ci + ncx * qj, kc),
                            on(&active, ci + 1 + ncx * qj, kc + 1),
                        );
                        let (a, b) = if a == kc || b == kc + 1 {
                            (kc, kc + 1)
                        } else {
                            (a, b)
                        };
                        for (l, r, share) in [(kc, kc + 1, own), (a, b, T::one() - own)] {
                            rows[l].east = rows[l].east - t * share;
                            rows[r].west = rows[r].west - t * share;
                        }
                    }
                    if j + 1 < ny && ay.parent(j + 1) != cj {
                        let t = series(gy, north[k], half_y(&north, i, j + 1)).1;
                        let own = half * (own_share(wx[k]) + own_share(wx[k + nx]));
                        let qi = ax.neighbour(i);
                        let up = kc + ncx;
                        let (a, b) = (
                            on(&active, qi + ncx * cj, kc),
                            on(&active, qi + ncx * (cj + 1), up),
                        );
                        let (a, b) = if a == kc || b == up { (kc, up) } else { (a, b) };
                        for (l, r, share) in [(kc, up, own), (a, b, T::one() - own)] {
                            rows[l].north = rows[l].north - t * share;
                            rows[r].south = rows[r].south - t * share;
                        }
                    }
                    if excess[k] > T::zero() {
                        spread(rows, i, gx, gy, excess[k]);
                    }
                };
                // In row order: the first cells, the fast interior, the last cells.
                let fast = fast_cols(&clear, j);
                (0..fast.start).for_each(|i| cell(&mut rows, i));
                let fine_rows = (&wx[..], &wy[..], &excess[..]);
                FineConductances::new(&east, &north, nx, ncx).couplings(
                    j,
                    fast.clone(),
                    fine_rows,
                    (&mut rows, &mut scratch),
                    |rows, i, gx, gy, e| spread(rows, i, Some(gx), Some(gy), e),
                );
                (fast.end..nx).for_each(|i| cell(&mut rows, i));
            }
        }
        rows.resize(nc, zero);
        let galerkin = rule == CoarseOperator::LumpedGalerkin;
        if galerkin {
            rows = galerkin_lumped(fine, &ax, &ay, |k| (wx[k], wy[k]), grid, &active);
        }
        for (kc, (row, on)) in rows.iter_mut().zip(active.iter_mut()).enumerate() {
            if !*on {
                *row = Coeffs5::identity();
                continue;
            }
            let couplings = row.west + row.east + row.south + row.north;
            if !galerkin {
                row.center = row.center - couplings;
            }
            if row.center == T::zero() && couplings == T::zero() {
                // Every fine cell of the aggregate follows a neighbouring aggregate (their
                // internal couplings are zero) and nothing interpolates from this one: it
                // carries no unknown.
                *row = Coeffs5::identity();
                *on = false;
                continue;
            }
            if !(row.center.is_finite() && row.center > T::zero()) {
                let (ci, cj) = grid.coords(kc);
                return Err(Error::pivot(
                    Location::on(g, g.index(2 * ci, 2 * cj)),
                    to_f64(row.center),
                ));
            }
        }
        let inverse_centers = inverse_centers(&rows, |k| active[k]);
        let inactive = FixedCells::new(grid, (0..nc).filter(|&k| !active[k]))?;
        let mut level = Level {
            op: LevelOperator {
                grid,
                rows,
                inactive,
            },
            inverse_centers,
            ax,
            ay,
            wx: narrow(wx),
            wy: narrow(wy),
            x: vec![T::zero(); nc],
            b: vec![T::zero(); nc],
        };
        if rule == CoarseOperator::LargerConductance {
            stiffen(&mut level, fine, false);
        }
        Ok(Some(level))
    }

    /// The transfers between this level and the next finer one.
    pub(crate) fn transfer(&self) -> Transfer<'_> {
        Transfer::new(self.ax, self.ay, &self.wx, &self.wy, self.op.grid.nx())
    }

    /// The transfers, and this level's right-hand side to restrict into.
    pub(crate) fn transfer_and_rhs(&mut self) -> (Transfer<'_>, &mut [T]) {
        let transfer = Transfer::new(self.ax, self.ay, &self.wx, &self.wy, self.op.grid.nx());
        (transfer, &mut self.b)
    }

    /// Prolongation weights of fine cell `(i, j)`: coarse indices and weights of the four
    /// coarse cells it interpolates from.
    #[inline]
    pub(super) fn stencil(&self, i: usize, j: usize, k: usize) -> [(usize, T); 4] {
        self.transfer().stencil(i, j, k)
    }

    /// Bytes held: five coefficients, two vectors, the inverse center and the mask per coarse
    /// cell, and two interpolation weights per fine cell.
    pub(crate) fn bytes(&self) -> usize {
        let t = std::mem::size_of::<T>();
        let n = self.op.grid.cells();
        let mask = n.div_ceil(64) * 8 + self.op.inactive.len() * std::mem::size_of::<usize>();
        n * (7 * t + 4) + mask + (self.wx.len() + self.wy.len()) * std::mem::size_of::<f32>()
    }
}

/// `1/center` of each row where `active(k)`, 0 elsewhere, in `f32`.
pub(crate) fn inverse_centers<T: Scalar>(
    rows: &[Coeffs5<T>],
    active: impl Fn(usize) -> bool,
) -> Vec<f32> {
    rows.iter()
        .enumerate()
        .map(|(k, c)| {
            if active(k) {
                narrow_one(T::one() / c.center)
            } else {
                0.0
            }
        })
        .collect()
}

/// `v` in `f32`, element by element ([`narrow_one`]); an `f32` vector is returned as it is.
fn narrow<T: Scalar>(mut v: Vec<T>) -> Vec<f32> {
    match (&mut v as &mut dyn std::any::Any).downcast_mut::<Vec<f32>>() {
        Some(same) => std::mem::take(same),
        None => v.iter().map(|&w| narrow_one(w)).collect(),
    }
}

/// `v` in `f32` (0 if it cannot be represented).
#[inline]
pub(crate) fn narrow_one<T: Scalar>(v: T) -> f32 {
    v.to_f32().unwrap_or(0.0)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{check_symmetry, Banded5};

    /// The Laplacian on 9 × 7 cells with the couplings of cell (4, 3) towards east and north
    /// scaled by `1 + east` and `1 + north`, and the first column fixed.
    fn perturbed(east: f64, north: f64) -> Banded5<f64> {
        let grid = Grid::new(9, 7).unwrap();
        let op = Banded5::from_fn(grid, |i, j| {
            let mut c = Coeffs5::laplacian(grid, i, j);
            if (i, j) == (4, 3) {
                c.east *= 1.0 + east;
                c.north *= 1.0 + north;
            }
            if (i, j) == (1, 2) {
                // A coupling towards a fixed cell: eliminated, so it never counts.
                c.west *= 3.0;
            }
            c
        })
        .unwrap();
        let fixed = FixedCells::new(grid, (0..7).map(|j| grid.index(0, j))).unwrap();
        op.with_fixed(fixed).unwrap()
    }

    /// `below_if_symmetric` builds the level exactly when `check_symmetry` accepts the
    /// operator at the same tolerance (the definition it replaces), and then the level of
    /// `below`.
    #[test]
    fn below_if_symmetric_agrees_with_check_symmetry() {
        let tol = 1e-10;
        for (east, north, symmetric) in [
            (0.0, 0.0, true),
            (1e-12, 0.0, true),
            (0.0, -1e-12, true),
            (1e-8, 0.0, false),
            (0.0, 1e-8, false),
            (0.5, 0.5, false),
        ] {
            let op = perturbed(east, north);
            assert_eq!(check_symmetry(&op, tol).is_ok(), symmetric);
            let built = Level::below_if_symmetric(&op, CoarseOperator::Upscaled, tol).unwrap();
            assert_eq!(built.is_some(), symmetric, "east {east}, north {north}");
            if let Some(level) = built {
                let plain = Level::below(&op, CoarseOperator::Upscaled).unwrap();
                assert_eq!(level.op.rows, plain.op.rows);
                assert_eq!((level.wx, level.wy), (plain.wx, plain.wy));
            }
        }
    }
}

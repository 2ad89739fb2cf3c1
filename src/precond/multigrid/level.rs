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
use super::setup_bands::{in_pieces, sweep_in_bands, Swept};
use super::stiffen::{stiffen, CoarseLevel};
use super::sweep::Sweep;
use super::transfer::Transfer;
use super::CoarseOperator;
use std::ops::Range;

use crate::blocks::threads_for;
use crate::error::Location;
use crate::operator::FixedCells;
use crate::operator::{row_neighbourhood, row_product, Stencil5};
use crate::scalar::to_f64;
use crate::space::Threaded;
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
        // Bands of rows side by side on the pool's threads for a large level (the same bits
        // in any number of bands); at most as many as the smoother's, since every cut adds
        // a serial step of 13 fine rows.
        let bands = threads_for(&Threaded, fine.grid().cells()).min(super::MAX_BANDS);
        Self::below_in_bands(fine, rule, rel_tol, bands, bands > 1)
    }

    /// [`below_if_symmetric`](Self::below_if_symmetric) with its sweep down the fine rows in
    /// (at most) `bands` bands of rows (setup_bands.rs), side by side when `parallel`.
    ///
    /// # Errors
    ///
    /// As [`below`](Self::below).
    pub(super) fn below_in_bands<R: Stencil5<T> + ?Sized>(
        fine: &R,
        rule: CoarseOperator,
        rel_tol: f64,
        bands: usize,
        parallel: bool,
    ) -> Result<Option<Level<T>>, Error> {
        let g = fine.grid();
        let (nx, ny) = (g.nx(), g.ny());
        let (ncx, ncy) = (nx.div_ceil(2), ny.div_ceil(2));
        let grid = Grid::new(ncx, ncy)?;
        let nc = grid.cells();
        let (ax, ay) = (Axis { n: nx }, Axis { n: ny });
        let sweep = Sweep::new(fine, rel_tol);
        let Some(Swept {
            mut active,
            mut rows,
            wx,
            wy,
        }) = sweep_in_bands(&sweep, bands, parallel)
        else {
            return Ok(None);
        };
        let galerkin = rule == CoarseOperator::LumpedGalerkin;
        if galerkin {
            rows = galerkin_lumped(fine, &ax, &ay, |k| (wx[k], wy[k]), grid, &active);
        }
        // Per coarse cell: the center, the cells without an unknown, the inverse center; in
        // pieces side by side like the sweep's bands, the first pivot at fault reported.
        let finish = |first: usize, rows: &mut [Coeffs5<T>], on: &mut [bool], inv: &mut [f32]| {
            let cells = rows.iter_mut().zip(on.iter_mut()).zip(inv.iter_mut());
            for (m, ((row, on), inv)) in cells.enumerate() {
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
                    return Some(first + m);
                }
                *inv = narrow_one(T::one() / row.center);
            }
            None
        };
        let mut inverse_centers = vec![0.0f32; nc];
        let pieces = (&mut rows[..], &mut active[..], &mut inverse_centers[..]);
        if let Some(kc) = in_pieces(pieces, bands, parallel, &finish) {
            let (ci, cj) = grid.coords(kc);
            return Err(Error::pivot(
                Location::on(g, g.index(2 * ci, 2 * cj)),
                to_f64(rows[kc].center),
            ));
        }
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
            level.stiffen_from(fine, false);
        }
        Ok(Some(level))
    }

    /// Raise the couplings of this level, built by the upscaled rule from `fine`, to the lumped
    /// Galerkin conductance where that is larger (`stiffen.rs`; `always`: also when the fine
    /// couplings are all equal).
    pub(super) fn stiffen_from<R: Stencil5<T> + ?Sized>(&mut self, fine: &R, always: bool) {
        let coarse = CoarseLevel {
            grid: self.op.grid,
            inactive: &self.op.inactive,
            axes: (&self.ax, &self.ay),
            weights: (&self.wx, &self.wy),
        };
        if stiffen(fine, coarse, &mut self.op.rows, always) {
            let inactive = &self.op.inactive;
            self.inverse_centers = inverse_centers(&self.op.rows, |k| !inactive.contains(k));
        }
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

/// Scale a level's inverse centers by the smoother's relaxation factor `omega`
/// ([`MultigridSettings::smoothing_omega`](super::MultigridSettings::smoothing_omega)): the
/// red-black half-sweeps then move each cell `ω` times its Gauss–Seidel correction. `ω = 1`
/// leaves them as they are.
pub(crate) fn over_relax(inverse_centers: &mut [f32], omega: f64) {
    if omega != 1.0 {
        let w = omega as f32;
        inverse_centers.iter_mut().for_each(|v| *v *= w);
    }
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

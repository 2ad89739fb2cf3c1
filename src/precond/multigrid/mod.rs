//! Geometric multigrid for the 5-point operator: a symmetric V-cycle whose coarse operators are
//! built from the fine operator's own coefficients, usable as a PCG preconditioner
//! ([`Multigrid`] implements [`Preconditioner`]) and as a standalone solver (it implements
//! [`IterativeSolver`]).
//!
//! * **Coarsening**: 2 × 2 aggregation of cells on every level, until a level has at most
//!   [`MultigridSettings::coarsest_cells`] cells (or cannot shrink further). Every level keeps a
//!   5-point stencil, built from the finer level's conductances by series (along a line of
//!   cells) and parallel (across a coarse face) combination, so it follows the user's jumping
//!   coefficients instead of assuming a model problem. In a homogeneous medium it is the
//!   rediscretised operator. [`CoarseOperator::LumpedGalerkin`] builds it instead from the
//!   Galerkin product `Pᵀ·A·P`, lumped back onto 5 points. The default,
//!   [`CoarseOperator::LargerConductance`], takes per coarse face the larger of the two
//!   conductances, so the coarse operator does not under-estimate the energy of corrections
//!   across layer boundaries.
//! * **Transfers**: operator-dependent interpolation between coarse cell centres (`P`): each
//!   fine cell takes the value of a flux-continuous linear profile between its own and the
//!   neighbouring aggregate's centre (bilinear interpolation in a homogeneous medium, none
//!   across a barrier); restriction is its transpose (`R = Pᵀ`); fixed cells are left out.
//! * **Smoother**: red-black SOR, `ν` sweeps red-then-black before the coarse correction and
//!   `ν` sweeps black-then-red after it (the mirror image), so the V-cycle is a symmetric
//!   operator. Each cell moves ω times its Gauss–Seidel correction
//!   ([`MultigridSettings::smoothing_omega`]: by default 1.3 for a symmetric operator,
//!   Gauss–Seidel's 1 for a non-symmetric one).
//! * **Coarsest level**: solved exactly by a banded Cholesky factorisation.
//!
//! **Non-symmetric operators** (upwinded advection–diffusion, any operator whose eliminated
//! couplings differ by more than a relative 10⁻¹⁰): [`Multigrid::new`] detects them and builds each
//! coarse level from the fine operator's symmetric part `½(A + Aᵀ)` (interpolation and coarse
//! operator by the chosen [`CoarseOperator`] rule) plus the Galerkin product `Pᵀ·K·P` of its
//! skew part `K = ½(A − Aᵀ)` (restriction `R = Pᵀ`), lumped onto the 5-point pattern with its
//! row and column sums kept, and with artificial diffusion added on a coarse edge only where
//! the coupling would otherwise turn positive (the hybrid scheme's rule), so coarse operators
//! of an M-matrix stay M-matrices. The coarsest level is solved by a banded LU factorisation.
//! The symmetric construction is untouched (same bits as before). The cycle is the same
//! (red-black sweeps, by default with ω = 1: Gauss–Seidel), but it is no longer a symmetric
//! operator, so it is a preconditioner for non-symmetric Krylov drivers, not for PCG; the
//! standalone solver runs
//! the plain cycle (`α = 1`: without symmetry there is no energy norm to minimise) and needs
//! only positive centers. Measured counts by cell Péclet number are in the
//! [preconditioner notes](super): grid-independent (7–8 V(3,3) cycles) up to Péclet 1,
//! growing with the grid from Péclet 10 on.
//!
//! With `A` symmetric positive definite, every coarse operator is SPD and each red-black SOR
//! sweep with 0 < ω < 2 is a contraction in the energy norm, so the V-cycle `B` is symmetric
//! positive definite (its error operator `I − B·A` has every eigenvalue below 1) and PCG may
//! use it.
//!
//! **Measured** (`cargo run --release -p quintet-bench --example iterations`,
//! `tests/multigrid.rs`): on the
//! Dirichlet Poisson problem one V(3,3) cycle reduces the residual by a factor of about 0.08
//! (0.09 with Gauss–Seidel sweeps, ω = 1), whatever the grid size, and MG-PCG needs 6
//! iterations to 10⁻⁸ at every size from 64² to 2048² (5 at 1024²; with the `f32` V-cycle 7 at
//! 4096²). On a layered field with blocks (conductivity contrast 10⁴) MG-PCG needs 8–9
//! iterations at every size from 64² to 2048² with the default
//! [`CoarseOperator::LargerConductance`], the plain standalone cycle 10–11 at 64² and 256².
//! Measured with Gauss–Seidel sweeps (ω = 1): with [`CoarseOperator::Upscaled`] 13–20 (14–24
//! with the `f32` V-cycle), growing with n, and 9–11 with [`CoarseOperator::LumpedGalerkin`]
//! (which needs 6–9 on Poisson). With the upscaled operators the *plain* standalone
//! cycle diverges on that field: the coarse operators of the lower levels under-estimate the
//! energy of some interpolated corrections across layer boundaries, so the cycle over-corrects
//! them (eigenvalues of `B·A` above 2). PCG only needs `B` SPD and is unaffected; the
//! standalone solver scales each correction by the energy-minimising step
//! ([`MultigridSettings::energy_step`], on by default), which makes every cycle reduce the
//! error (slowly, there: about 160 cycles at 128²); with lumped Galerkin operators the plain
//! cycle converges (about 12 cycles at 256²). On heterogeneous fields PCG is the use.
//! **Strong anisotropy** is this cycle's weak case: the point smoother hardly smooths along
//! the weakly coupled direction, and the 2 × 2 aggregation coarsens that direction too. On a
//! 513 × 257 section with `kx/ky = 1000` on square cells MG-PCG needed 75 iterations to 10⁻¹⁰
//! (PCG + Jacobi 850; `tests/model_steady.rs`). What matters is the ratio of the couplings
//! (`kx·Δy/Δx` against `ky·Δx/Δy`), not `kx/ky` alone: cells longer along the strong
//! direction reduce it.
//! Results support, and do not replace, engineering judgement: check the report.

mod aggregate;
mod bands;
mod colour;
mod direct;
mod galerkin;
mod galerkin_rows;
mod level;
mod paths;
mod setup_bands;
mod skew;
mod smooth;
mod stiffen;
#[cfg(test)]
mod stiffen_tests;
mod sweep;
mod transfer;

use bands::scratch_rows;
use colour::ColourLevel;
use direct::{CoarsestSolve, MAX_DIRECT_CELLS};
pub(crate) use level::{active_cells, inverse_centers, over_relax, Level, LevelOperator};
use smooth::Rows;
pub(crate) use smooth::{relax_from_zero, StoredRows};

use super::{check_built_for, Preconditioner};
use crate::blocks::threads_for;
use crate::iterate::{IterativeSolver, NameCache, Requires, SolveOptions, Task, Workspace};
use crate::operator::Stencil5;
use crate::relax::correction_solve;
use crate::space::{Space, Threaded};
use crate::stencil::check_symmetry;
use crate::{Error, Grid, LinearOperator, Progress, Report, Scalar};

/// Most bands of rows the smoother cuts a level into (one per thread).
const MAX_BANDS: usize = 16;

/// The smoother's default relaxation factor for a symmetric operator
/// ([`MultigridSettings::smoothing_omega`]).
const SYMMETRIC_OMEGA: f64 = 1.3;

/// Relative tolerance below which the fine operator counts as symmetric.
const SYMMETRY_TOLERANCE: f64 = 1e-10;

/// How the coarse-level operators are built from the finer level (both keep a 5-point
/// stencil).
///
/// ```
/// use quintet::CoarseOperator;
/// assert_eq!(CoarseOperator::default(), CoarseOperator::LargerConductance);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
#[non_exhaustive]
pub enum CoarseOperator {
    /// The [`Upscaled`](Self::Upscaled) operator with each coarse face raised to the
    /// [`LumpedGalerkin`](Self::LumpedGalerkin) conductance where that one is larger; centers from
    /// the upscaled row-sum excess. Where the coefficients are smooth it is the upscaled operator
    /// (bit for bit on Poisson); at layer boundaries and block edges it adds the energy the
    /// upscaling misses there. Measured from 64² to 2048²: 8–9 MG-PCG iterations on the
    /// contrast-10⁴ test field (9 with Gauss–Seidel sweeps; upscaled alone: 13–24, growing with n),
    /// 5–6 on Poisson, and a convergent plain standalone cycle. The set-up computes the Galerkin
    /// product on every level whose couplings are not all equal, which costs more than the
    /// upscaling alone (measured in the README's performance table). A non-symmetric operator's
    /// coarse levels use the upscaled rule for their symmetric part (on the advection test the
    /// stiffening cost up to two BiCGSTAB iterations).
    #[default]
    LargerConductance,
    /// Conductances upscaled along lines of cells: series along the line (half-cell, face,
    /// half-cell), parallel across a coarse face, shared between the coarse lines like the
    /// interpolation. In a homogeneous medium it is the rediscretised coarse operator, which
    /// gives the best V-cycle on smooth coefficients (about 0.1 per V(3,3) cycle on Poisson,
    /// independent of the grid). On high-contrast fields it can under-estimate the energy of
    /// some corrections, so the plain standalone cycle may diverge there (PCG is fine).
    Upscaled,
    /// The Galerkin product `Pᵀ·A·P` (25-point for this interpolation), lumped onto the 5-point
    /// stencil: the lumping reproduces the energy of linear functions, so the coarse operator
    /// follows the interpolation closely on any field. Measured from 64² to 2048² with Gauss–Seidel
    /// sweeps (ω = 1): 9–11 MG-PCG iterations on the contrast-10⁴ test field (upscaled: 13–24) and
    /// a convergent plain standalone cycle (about 0.2–0.3 per cycle); on Poisson 6–9 PCG iterations
    /// (instead of 6) and a slower cycle (0.13 → 0.25 per cycle from 128² to 512²). Its set-up
    /// costs more than the upscaling.
    LumpedGalerkin,
}

/// Settings of the multigrid hierarchy and cycle.
///
/// ```
/// use quintet::prelude::*;
/// let s = MultigridSettings { smoothing_sweeps: 1, ..Default::default() };
/// assert_eq!(s.coarsest_cells, MultigridSettings::default().coarsest_cells);
/// // Plain red-black Gauss–Seidel sweeps instead of the over-relaxed default.
/// let grid = Grid::new(64, 64)?;
/// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let gauss_seidel = MultigridSettings { smoothing_omega: Some(1.0), ..Default::default() };
/// let mut x = vec![0.0; grid.cells()];
/// let report = Pcg::new(Multigrid::new(&op, gauss_seidel)?).solve(&op, &[1.0; 4096], &mut x)?;
/// assert!(report.converged());
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct MultigridSettings {
    /// Red-black sweeps before the coarse correction, and (mirrored) after it.
    /// At least 1, at most 16. Default 3 (on the high-contrast test field, 2 sweeps cost a few
    /// more PCG iterations than 3; on Poisson both give a grid-independent count).
    pub smoothing_sweeps: usize,
    /// Relaxation factor ω of the red-black sweeps on every level: each cell moves `ω` times
    /// its Gauss–Seidel correction (1 is Gauss–Seidel, above 1 over-relaxation, as in SOR).
    /// `Some(ω)` with ω between 0 and 2, both excluded: in that range the mirrored sweeps
    /// keep the V-cycle symmetric and positive definite for an SPD operator. Default `None`:
    /// 1.3 for a symmetric operator, where over-relaxation damps the smooth end of the
    /// oscillatory modes that red-black Gauss–Seidel leaves to the coarse levels (chosen by
    /// measured MG-PCG iteration counts, README "Iteration counts by grid size"), and 1 for a
    /// non-symmetric one, where over-relaxing the sweeps along the flow overshoots (on upwind
    /// advection at cell Péclet 10 the V-cycle then stops helping BiCGSTAB).
    pub smoothing_omega: Option<f64>,
    /// Coarsening stops at a level with at most this many cells, which is then solved exactly.
    /// At least 1, at most 4096. Default 256.
    pub coarsest_cells: usize,
    /// Most levels, the fine one included. At least 1. Default 32.
    pub max_levels: usize,
    /// Standalone solver only: scale each V-cycle correction `z` by the step
    /// `α = (r·z)/(z·Az)` that minimises the energy norm of the error along it (one extra
    /// matrix–vector product per cycle). With it, every cycle reduces the error for any SPD
    /// operator; without it (`α = 1`, the plain cycle) the iteration diverges when the V-cycle
    /// over-corrects, as it does on high-contrast fields with [`CoarseOperator::Upscaled`] (see
    /// the module notes; with the default operators it converged there too). Default
    /// `true`. PCG ignores it, and so does the standalone solver on a non-symmetric operator
    /// (no energy norm: it runs the plain cycle).
    pub energy_step: bool,
    /// How coarse operators are built. Default [`CoarseOperator::LargerConductance`].
    pub coarse_operator: CoarseOperator,
    /// `f32` hierarchies on grids of even width: keep the fine level by colour, each row's
    /// even cells apart from its odd ones (see [`Multigrid`]), so that every half-sweep is one
    /// contiguous loop. The cycle gives the same bits either way; by colour it is faster. On
    /// an operator stored by colour itself ([`Banded5ByColour`](crate::Banded5ByColour)) the
    /// hierarchy reads the coefficients there and keeps only `1/center` and the right-hand
    /// side by colour (8 bytes per cell); on any other it keeps a reordered copy (24 more
    /// bytes per cell, a longer set-up; README, performance table). The smoothed coarse
    /// levels of an even width are then kept by colour too (28 bytes per coarse cell, about
    /// 9 per fine cell over all levels). Default `true`: set `false` where memory or a
    /// one-off solve's set-up matters more than the time per iteration. `f64` hierarchies
    /// keep the natural order.
    pub fine_level_by_colour: bool,
}

impl MultigridSettings {
    /// `Err(InvalidSetting)` for settings out of range.
    pub(crate) fn check(&self) -> Result<(), Error> {
        let bad = |name, value: usize, allowed| Err(Error::setting(name, value as f64, allowed));
        if !(1..=16).contains(&self.smoothing_sweeps) {
            return bad("smoothing_sweeps", self.smoothing_sweeps, "1 to 16 sweeps");
        }
        if let Some(omega) = self.smoothing_omega.filter(|w| !(*w > 0.0 && *w < 2.0)) {
            let allowed = "a factor between 0 and 2, both excluded";
            return Err(Error::setting("smoothing_omega", omega, allowed));
        }
        if !(1..=MAX_DIRECT_CELLS).contains(&self.coarsest_cells) {
            return bad("coarsest_cells", self.coarsest_cells, "1 to 4096 cells");
        }
        if self.max_levels == 0 {
            return bad("max_levels", 0, "at least 1 level");
        }
        Ok(())
    }

    /// The smoother's relaxation factor for an operator that is `symmetric` or not
    /// ([`smoothing_omega`](Self::smoothing_omega)).
    pub(crate) fn omega(&self, symmetric: bool) -> f64 {
        let default = if symmetric { SYMMETRIC_OMEGA } else { 1.0 };
        self.smoothing_omega.unwrap_or(default)
    }

    /// Whether a level on `grid`, below `coarse_levels_above` coarse levels (0 for the fine
    /// level), is the coarsest of the hierarchy (solved directly).
    pub(crate) fn is_coarsest(&self, grid: Grid, coarse_levels_above: usize) -> bool {
        let shrinks = grid.nx() > 1 || grid.ny() > 1;
        grid.cells() <= self.coarsest_cells
            || !shrinks
            || coarse_levels_above + 1 >= self.max_levels
    }
}

impl Default for MultigridSettings {
    fn default() -> MultigridSettings {
        MultigridSettings {
            smoothing_sweeps: 3,
            smoothing_omega: None,
            coarsest_cells: 256,
            max_levels: 32,
            energy_step: true,
            coarse_operator: CoarseOperator::LargerConductance,
            fine_level_by_colour: true,
        }
    }
}

/// A geometric multigrid V-cycle for a 5-point operator (see the [module notes](self)).
///
/// Built once from the operator (borrowed only while the hierarchy is built), then applied as
/// many times as needed with that operator — the one PCG solves, or the one passed to the
/// standalone solve — and applying it allocates nothing. It holds no reference to the
/// operator, so it can live beside the model or time stepper that owns the operator. One application is one V-cycle from a zero
/// initial guess, `z = B·r`. As a PCG preconditioner the iteration count to a fixed relative
/// residual does not grow with the grid size; as a standalone solver
/// ([`IterativeSolver::solve`]) each iteration is one V-cycle on the current residual, its
/// correction scaled by the energy-minimising step ([`MultigridSettings::energy_step`]).
///
/// Storage beyond the fine operator: the coarse operators (five coefficients per coarse cell,
/// a third of the fine cell count over all levels), two vectors per coarse cell, about
/// `4ν + 9` rows of the fine grid per thread (at most 16) as the smoother's scratch, and the
/// coarsest factor; under the 1.5 × five-array budget of the fine operator
/// ([`storage_bytes`](Multigrid::storage_bytes)). An `f32` hierarchy on a grid of even width
/// also keeps its fine level by colour: each row's even cells, then its odd ones (the five
/// coefficients and the cycle's right-hand side, 24 bytes per cell, the size of the `f32`
/// copy it was built from plus 4; and `1/center` in that order instead of the natural
/// one). Built on a [`Banded5ByColour`](crate::Banded5ByColour), it reads the five
/// coefficients from the operator it is applied with instead, which must then be stored by
/// colour too ([`check`](Preconditioner::check) says so otherwise). A half-sweep then reads
/// only its own colour's coefficients and values, in one contiguous loop, where the natural
/// order computes the whole row's product for every half-sweep; the results are the same
/// bits. With a reordered copy the smoothing uses the coefficients the hierarchy was built
/// from (as the coarse levels always do). The smoothed coarse levels of an even width are
/// kept by colour the same way, in reordered copies of their rows.
///
/// Each level is smoothed in two passes over its rows per cycle (all `ν` red-black sweeps
/// travel down the grid together, the residual's restriction trailing them, the
/// prolongation leading the post-smoothing). With a threaded [`Space`] (the default) a level
/// of at least [`PARALLEL_MIN_CELLS`](crate::space::PARALLEL_MIN_CELLS) cells is cut into
/// bands of rows, one per thread of the current pool (at most as many as when the hierarchy
/// was built), smoothed side by side; the result is the same bits for any thread count.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(256, 256)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let rhs = vec![1.0; grid.cells()];
/// let mut x = vec![0.0; grid.cells()];
/// let mg = Multigrid::new(&op, MultigridSettings::default())?;
/// let report = Pcg::new(mg).solve(&op, &rhs, &mut x)?;
/// assert_eq!(report.method, "PCG + multigrid V-cycle");
/// assert!(report.iterations <= 12);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Multigrid<T> {
    grid: Grid,
    settings: MultigridSettings,
    levels: Vec<Level<T>>,
    direct: CoarsestSolve<T>,
    /// Whether the fine operator's eliminated couplings were symmetric (to a relative 1e-10)
    /// when the hierarchy was built (otherwise the non-symmetric construction of `skew.rs`).
    symmetric: bool,
    /// The smoother's scratch on every level: per band of rows (one per thread of the pool the
    /// hierarchy was built in, at most [`MAX_BANDS`]) a row product and the residual rows of a
    /// restriction, [`smooth::scratch_rows`] rows of the fine grid.
    row_buffer: Vec<T>,
    /// `1/center` of the fine operator at free cells, 0 at fixed cells (`f32`, see
    /// `Level::inverse_centers`); empty when the fine level is stored by colour.
    fine_inverse_centers: Vec<f32>,
    /// The fine level stored by colour (`colour.rs`): for an `f32` hierarchy on a grid of an
    /// even width, with at least one coarse level.
    by_colour: Option<ColourLevel<T>>,
    /// The smoothed coarse levels by colour (`colour.rs`), one entry per level but the
    /// coarsest: for an `f32` hierarchy stored by colour, on the levels of an even width.
    coarse_by_colour: Vec<Option<ColourLevel<T>>>,
    /// Stopping rule for the standalone solver.
    pub options: SolveOptions,
    name: NameCache,
}

impl<T: Scalar> Multigrid<T> {
    /// Build the hierarchy for `op`.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for settings out of range; [`ErrorKind::NonPositiveCenter`](crate::ErrorKind::NonPositiveCenter) for a
    /// free cell whose center is not positive; [`ErrorKind::PivotBreakdown`](crate::ErrorKind::PivotBreakdown) if a coarse center
    /// comes out non-positive (the operator is not positive definite).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(100, 40)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mg = Multigrid::new(&op, MultigridSettings::default())?;
    /// assert_eq!(mg.level_grids()[1], Grid::new(50, 20)?);
    /// let bad = MultigridSettings { smoothing_sweeps: 0, ..Default::default() };
    /// assert_eq!(Multigrid::new(&op, bad).unwrap_err().kind(), ErrorKind::InvalidSetting);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new<S: Stencil5<T> + ?Sized>(
        op: &S,
        settings: MultigridSettings,
    ) -> Result<Multigrid<T>, Error> {
        settings.check()?;
        super::check_centers(op)?;
        let grid = op.grid();
        let fine = op;
        // Symmetric to a relative 1e-10 (the tolerance of `estimate_relaxation`): rounding-level
        // asymmetry of an assembled diffusion operator keeps the symmetric construction. The
        // first level's pass over the fine rows makes the check; without levels, a pass of
        // its own.
        let mut symmetric = None;
        let mut levels: Vec<Level<T>> = Vec::new();
        loop {
            let current = levels.last().map_or(grid, |l| l.op.grid);
            if settings.is_coarsest(current, levels.len()) {
                break;
            }
            let rule = settings.coarse_operator;
            let next = match (levels.last(), symmetric) {
                (None, _) => match Level::below_if_symmetric(fine, rule, SYMMETRY_TOLERANCE)? {
                    Some(level) => {
                        symmetric = Some(true);
                        level
                    }
                    None => {
                        symmetric = Some(false);
                        skew::below_nonsymmetric(fine, rule)?
                    }
                },
                (Some(l), Some(false)) => skew::below_nonsymmetric(&l.op, rule)?,
                (Some(l), _) => Level::below(&l.op, rule)?,
            };
            levels.push(next);
        }
        let symmetric = symmetric.unwrap_or_else(|| check_symmetry(op, SYMMETRY_TOLERANCE).is_ok());
        let direct = match levels.last() {
            None => CoarsestSolve::new(fine, symmetric)?,
            Some(l) => CoarsestSolve::new(&l.op, symmetric)?,
        };
        // Every level's smoother moves ω times the Gauss–Seidel correction (folded into its
        // inverse centers; ω = 1 changes nothing).
        let omega = settings.omega(symmetric);
        for level in &mut levels {
            level::over_relax(&mut level.inverse_centers, omega);
        }
        // The `f32` cycle is the one that runs near the memory's speed, where a contiguous
        // loop per colour pays for the copy of the fine operator; the `f64` one stays lean.
        let (nx, w) = (grid.nx(), omega as f32);
        let f32_cycle = std::mem::size_of::<T>() == std::mem::size_of::<f32>();
        let pieces = threads_for(&Threaded, grid.cells()).min(MAX_BANDS);
        let by_colour = (f32_cycle && settings.fine_level_by_colour && !levels.is_empty())
            .then(|| ColourLevel::new(op, w, pieces, pieces > 1))
            .flatten();
        // The coarse levels the cycle smooths (all but the coarsest), reordered the same way.
        let smoothed = levels.len().saturating_sub(1);
        let coarse_by_colour = if by_colour.is_some() {
            levels[..smoothed]
                .iter()
                .map(|l| {
                    let pieces = threads_for(&Threaded, l.x.len()).min(MAX_BANDS);
                    ColourLevel::from_rows(l.op.grid, &l.op.rows, &l.inverse_centers, pieces)
                })
                .collect()
        } else {
            Vec::new()
        };
        let mut fine_inverse_centers = Vec::new();
        if by_colour.is_none() {
            // Row by row (no division of the cell index), in cell order: the centers of a row
            // gathered first, so that the divisions run as a loop the compiler vectorises;
            // then 0 at the fixed cells. The product with ω is exact for ω = 1.
            fine_inverse_centers.reserve_exact(grid.cells());
            let mut centers = vec![T::zero(); nx];
            for j in 0..grid.ny() {
                for (i, center) in centers.iter_mut().enumerate() {
                    *center = op.coeffs(i, j).center;
                }
                let inverse = centers.iter().map(|&c| level::narrow_one(T::one() / c) * w);
                fine_inverse_centers.extend(inverse);
            }
            for &k in fine.fixed().map_or(&[][..], |f| f.cells()) {
                if let Some(inverse) = fine_inverse_centers.get_mut(k) {
                    *inverse = 0.0;
                }
            }
        }
        Ok(Multigrid {
            grid,
            settings,
            levels,
            direct,
            symmetric,
            row_buffer: vec![
                T::zero();
                scratch_rows(grid, settings.smoothing_sweeps, MAX_BANDS) * grid.nx()
            ],
            fine_inverse_centers,
            by_colour,
            coarse_by_colour,
            options: SolveOptions::default(),
            name: NameCache::default(),
        })
    }

    /// The same solver with `options` for standalone use.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(32, 32)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mg = Multigrid::new(&op, MultigridSettings::default())?.with_options(SolveOptions::default().tolerance(1e-10));
    /// assert_eq!(mg.options.tolerances.relative, 1e-10);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn with_options(mut self, options: SolveOptions) -> Multigrid<T> {
        self.options = options;
        self
    }

    /// The grids of all levels, finest first.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(64, 64)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mg = Multigrid::new(&op, MultigridSettings::default())?;
    /// let sides: Vec<usize> = mg.level_grids().iter().map(|g| g.nx()).collect();
    /// assert_eq!(sides, vec![64, 32, 16]); // 16 x 16 = 256 cells: solved directly
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn level_grids(&self) -> Vec<Grid> {
        std::iter::once(self.grid)
            .chain(self.levels.iter().map(|l| l.op.grid))
            .collect()
    }

    /// The settings the hierarchy was built with.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(8, 8)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mg = Multigrid::new(&op, MultigridSettings::default())?;
    /// assert_eq!(mg.settings(), MultigridSettings::default());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn settings(&self) -> MultigridSettings {
        self.settings
    }

    /// Bytes held by the hierarchy (coarse operators, level vectors, the smoother's scratch rows,
    /// the coarsest factor and an `f32` fine level by colour), not counting the fine operator
    /// itself.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(512, 512)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mg = Multigrid::new(&op, MultigridSettings::default())?;
    /// let five_arrays = 5 * grid.cells() * std::mem::size_of::<f64>();
    /// assert!((mg.storage_bytes() as f64) <= 1.5 * five_arrays as f64);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn storage_bytes(&self) -> usize {
        self.levels.iter().map(Level::bytes).sum::<usize>() // local: bytes held by the levels
            + self.row_buffer.len() * std::mem::size_of::<T>()
            + self.fine_inverse_centers.len() * std::mem::size_of::<f32>()
            + self.by_colour.as_ref().map_or(0, ColourLevel::bytes)
            + self.coarse_by_colour.iter().flatten().map(ColourLevel::bytes).sum::<usize>() // local: bytes
            + self.direct.bytes()
    }

    /// Pivots of the coarsest-level factor that were replaced because they came out at or
    /// below rounding level (a singular coarsest operator, e.g. a model with no fixed cell and
    /// no storage term). Zero for well-posed problems.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(40, 40)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(Multigrid::new(&op, MultigridSettings::default())?.replaced_pivots(), 0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn replaced_pivots(&self) -> usize {
        self.direct.replaced()
    }

    /// The same hierarchy with its fine level in the natural order.
    #[cfg(test)]
    pub(crate) fn without_colour_layout(mut self) -> Multigrid<T> {
        if let Some(by_colour) = self.by_colour.take() {
            self.fine_inverse_centers = by_colour.natural_inverse();
        }
        self.coarse_by_colour.clear();
        self
    }

    /// Whether the fine level is stored by colour.
    #[cfg(test)]
    pub(crate) fn by_colour(&self) -> bool {
        self.by_colour.is_some()
    }

    /// One V-cycle from a zero initial guess, `z = B·r`, with `fine` the fine-level operator.
    /// Each level is smoothed in two passes over its rows (see `smooth.rs`): pre-smoothing
    /// with the residual's restriction, and the prolongation with post-smoothing, each in
    /// bands of rows on as many threads as `space` allows; the result is the same bits for
    /// any thread count.
    pub(crate) fn cycle(
        &mut self,
        fine: &dyn Stencil5<T>,
        space: &dyn Space,
        r: &[T],
        z: &mut [T],
    ) {
        let n = self.grid.cells();
        if r.len() < n || z.len() < n || fine.grid() != self.grid {
            return;
        }
        let (r, z) = (&r[..n], &mut z[..n]);
        if self.levels.is_empty() {
            self.direct.solve(r, z);
            return;
        }
        let nu = self.settings.smoothing_sweeps;
        let bands = |cells: usize| threads_for(space, cells);
        if let Some(by_colour) = &mut self.by_colour {
            // `check` refuses an operator without the arrays a hierarchy built on one needs.
            if !by_colour.finds_arrays(fine) {
                return;
            }
            by_colour.set_rhs(r, &mut self.row_buffer, bands(n), bands(n) > 1);
        }
        let by_colour = self.by_colour.as_ref().and_then(|level| level.view(fine));
        let buf = &mut self.row_buffer;
        let top = Rows {
            op: fine,
            inv: &self.fine_inverse_centers,
            b: r,
            stored: None,
            by_colour,
        };
        {
            let (transfer, coarse_b) = self.levels[0].transfer_and_rhs();
            top.pre_smooth_restrict(z, buf, nu, bands(n), bands(n) > 1, &transfer, coarse_b);
        }
        // Down the hierarchy.
        let last = self.levels.len() - 1;
        for l in 0..last {
            let (upper, lower) = self.levels.split_at_mut(l + 1);
            let here = &mut upper[l];
            let (transfer, coarse_b) = lower[0].transfer_and_rhs();
            let k = here.x.len();
            let colour = match self.coarse_by_colour.get_mut(l) {
                Some(Some(level)) => {
                    level.set_rhs(&here.b, buf, bands(k), bands(k) > 1);
                    level.view(&here.op)
                }
                _ => None,
            };
            let rows = Rows {
                op: &here.op,
                inv: &here.inverse_centers,
                b: &here.b,
                stored: Some(&here.op.rows),
                by_colour: colour,
            };
            rows.pre_smooth_restrict(
                &mut here.x,
                buf,
                nu,
                bands(k),
                bands(k) > 1,
                &transfer,
                coarse_b,
            );
        }
        let coarsest = &mut self.levels[last];
        self.direct.solve(&coarsest.b, &mut coarsest.x);
        // Back up, smoothing in the mirrored order.
        for l in (0..last).rev() {
            let (upper, lower) = self.levels.split_at_mut(l + 1);
            let here = &mut upper[l];
            let below = &lower[0];
            let colour = self
                .coarse_by_colour
                .get(l)
                .and_then(|level| level.as_ref()?.view(&here.op));
            let rows = Rows {
                op: &here.op,
                inv: &here.inverse_centers,
                b: &here.b,
                stored: Some(&here.op.rows),
                by_colour: colour,
            };
            let k = here.x.len();
            rows.prolong_smooth(
                &mut here.x,
                buf,
                nu,
                bands(k),
                bands(k) > 1,
                &below.transfer(),
                &below.x,
            );
            // The level above prolongs from this correction in the natural order.
            if let Some(colour) = colour {
                colour.to_natural(&mut here.x, buf, bands(k), bands(k) > 1);
            }
        }
        let below = &self.levels[0];
        top.prolong_smooth(
            z,
            buf,
            nu,
            bands(n),
            bands(n) > 1,
            &below.transfer(),
            &below.x,
        );
        if let Some(by_colour) = by_colour {
            by_colour.to_natural(z, buf, bands(n), bands(n) > 1);
        }
    }
}

impl<T: Scalar> Preconditioner<T> for Multigrid<T> {
    /// One V-cycle on `op`'s rows (if `op` is not the stencil [`check`](Preconditioner::check)
    /// accepts, `z` is left as it is).
    fn apply(&mut self, op: &dyn LinearOperator<T>, space: &dyn Space, r: &[T], z: &mut [T]) {
        if let Some(fine) = op.as_stencil() {
            self.cycle(fine, space, r, z);
        }
    }

    /// `op` must be a [`Stencil5`] on the grid the hierarchy was built for.
    fn check(&self, op: &dyn LinearOperator<T>) -> Result<(), Error> {
        let Some(fine) = op.as_stencil() else {
            return Err(Error::needs_stencil("the multigrid V-cycle"));
        };
        check_built_for(self.grid, op)?;
        if self
            .by_colour
            .as_ref()
            .is_some_and(|l| !l.finds_arrays(fine))
        {
            return Err(Error::missing(
                "the operator stored by colour",
                "this hierarchy was built on a Banded5ByColour and reads its fine level there; \
                 apply it with that operator",
            ));
        }
        Ok(())
    }

    fn name(&self) -> &'static str {
        "multigrid V-cycle"
    }
}

impl<T: Scalar> IterativeSolver<T> for Multigrid<T> {
    /// Multigrid as a solver: each iteration is one V-cycle on the current residual,
    /// `x ← x + α·B·(b − A·x)`, with `α` the energy-minimising step or 1
    /// ([`MultigridSettings::energy_step`]). `op` must be the operator the hierarchy was built
    /// from (or one with the same grid and fixed cells, for example after changing
    /// coefficients in place).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::GridMismatch`](crate::ErrorKind::GridMismatch) if `op` lives on another
    /// grid, [`ErrorKind::NeedsStencil`](crate::ErrorKind::NeedsStencil) if it is not a
    /// [`Stencil5`]; otherwise as for every [`IterativeSolver`].
    fn solve_observed(
        &mut self,
        op: &dyn LinearOperator<T>,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        self.check(op)?;
        let fine = op
            .as_stencil()
            .ok_or_else(|| Error::needs_stencil("the multigrid V-cycle"))?;
        let nu = self.settings.smoothing_sweeps;
        // No energy norm without symmetry: a non-symmetric hierarchy runs the plain cycle.
        let (energy_step, requires) = if self.symmetric {
            (self.settings.energy_step, Requires::Spd)
        } else {
            (false, Requires::PositiveCenters)
        };
        let name = self.name.get("", || {
            if energy_step {
                format!("multigrid V({nu},{nu}) with energy-minimising steps")
            } else {
                format!("multigrid V({nu},{nu})")
            }
        });
        let options = self.options.clone();
        let task = Task {
            op,
            rhs,
            x,
            ws,
            options: &options,
            observer,
        };
        correction_solve(task, &name, energy_step, requires, |_, space, r, z| {
            self.cycle(fine, space, r, z)
        })
    }

    fn options(&self) -> &SolveOptions {
        &self.options
    }

    fn options_mut(&mut self) -> &mut SolveOptions {
        &mut self.options
    }
}

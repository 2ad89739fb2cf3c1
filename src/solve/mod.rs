//! The drivers: [`SteepestDescent`], [`Pcg`] (with [`Cg`] its unpreconditioned case) and
//! [`Sor`], behind one trait, [`IterativeSolver`], with one set of options ([`SolveOptions`])
//! and one [`Report`].
//!
//! Every driver solves in place from the caller's `x` (a warm start), leaves fixed cells
//! untouched, reuses a caller-owned [`Workspace`], and reports through the shared
//! [`crate::Monitor`].

mod cg;
mod refine;
mod relaxation;
mod report;
mod sor;
mod steepest;
mod workspace;

use std::fmt;
use std::sync::Arc;

pub use cg::{Cg, Pcg};
pub use refine::MixedRefinement;
pub use relaxation::{estimate_relaxation, RelaxationEstimate};
pub use report::Report;
pub use sor::{Sor, SweepOrder};
pub use steepest::SteepestDescent;
pub use workspace::Workspace;

use crate::kernels::Kernels;
use crate::stencil::{check_len, Stencil5};
use crate::stop::{Progress, StopReason, StopRule, Tolerances};
use crate::{to_f64, Error, Monitor, Scalar};

/// Settings shared by every driver.
///
/// By default the solve stops by [`Tolerances::default`]: relative residual `10⁻⁸`, at most
/// 10 000 iterations. [`stop_when`](SolveOptions::stop_when) replaces those tolerances with any
/// rule; put a [`Tolerances`] inside an [`AnyOf`](crate::stop::AnyOf) to keep them as well.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let opts = SolveOptions::default().tolerance(1e-10).max_iterations(500);
/// assert_eq!(opts.tolerances.relative, 1e-10);
/// assert_eq!(opts.tolerances.max_iterations, 500);
/// ```
#[derive(Clone)]
#[non_exhaustive]
pub struct SolveOptions {
    /// The default rule set, used unless [`SolveOptions::rule`] is set.
    pub tolerances: Tolerances,
    /// A rule that replaces [`SolveOptions::tolerances`] when set.
    pub rule: Option<Arc<dyn StopRule>>,
    /// Recompute the true residual `b − A·x` every this many iterations in drivers that update
    /// it recursively (CG, steepest descent), to stop round-off drift; 0 turns the periodic
    /// refresh off. The true residual is always recomputed before a solve is declared
    /// converged. Default 50.
    pub residual_refresh: usize,
}

impl Default for SolveOptions {
    fn default() -> SolveOptions {
        SolveOptions {
            tolerances: Tolerances::default(),
            rule: None,
            residual_refresh: 50,
        }
    }
}

impl SolveOptions {
    /// Set the relative tolerance on `‖r‖₂ / ‖b‖₂`.
    ///
    /// ```
    /// let opts = quintet::SolveOptions::default().tolerance(1e-6);
    /// assert_eq!(opts.tolerances.relative, 1e-6);
    /// ```
    pub fn tolerance(mut self, relative: f64) -> SolveOptions {
        self.tolerances.relative = relative;
        self
    }

    /// Set the absolute tolerance on `‖r‖₂`.
    ///
    /// ```
    /// let opts = quintet::SolveOptions::default().absolute_tolerance(1e-12);
    /// assert_eq!(opts.tolerances.absolute, 1e-12);
    /// ```
    pub fn absolute_tolerance(mut self, absolute: f64) -> SolveOptions {
        self.tolerances.absolute = absolute;
        self
    }

    /// Set the iteration limit.
    ///
    /// ```
    /// let opts = quintet::SolveOptions::default().max_iterations(42);
    /// assert_eq!(opts.tolerances.max_iterations, 42);
    /// ```
    pub fn max_iterations(mut self, limit: usize) -> SolveOptions {
        self.tolerances.max_iterations = limit;
        self
    }

    /// Stop by `rule` instead of the tolerances.
    ///
    /// ```
    /// use quintet::stop::{AnyOf, SolutionChange, IterationLimit};
    /// let opts = quintet::SolveOptions::default()
    ///     .stop_when(AnyOf::new().or(SolutionChange(1e-5)).or(IterationLimit(300)));
    /// assert!(opts.rule.is_some());
    /// ```
    pub fn stop_when(mut self, rule: impl StopRule + 'static) -> SolveOptions {
        self.rule = Some(Arc::new(rule));
        self
    }

    /// Set the true-residual refresh period (0 = only before declaring convergence).
    ///
    /// ```
    /// let opts = quintet::SolveOptions::default().residual_refresh(10);
    /// assert_eq!(opts.residual_refresh, 10);
    /// ```
    pub fn residual_refresh(mut self, every: usize) -> SolveOptions {
        self.residual_refresh = every;
        self
    }

    /// The rule in force.
    pub(crate) fn stop_rule(&self) -> &dyn StopRule {
        match &self.rule {
            Some(rule) => rule.as_ref(),
            None => &self.tolerances,
        }
    }
}

impl fmt::Debug for SolveOptions {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("SolveOptions")
            .field("tolerances", &self.tolerances)
            .field("rule", &self.rule.as_ref().map(|_| "custom"))
            .field("residual_refresh", &self.residual_refresh)
            .finish()
    }
}

/// A driver that solves `A·x = b` in place.
///
/// Implemented by [`SteepestDescent`], [`Pcg`] (and so [`Cg`]) and [`Sor`]. Only
/// [`solve_observed`](IterativeSolver::solve_observed) is required.
///
/// **Outcome.** `Ok(report)` means converged by the stopping rule, checked on the true
/// residual. Every other end is an `Err` that still leaves the last iterate in `x` and carries
/// the full [`Report`] ([`Error::report`]): [`Error::NotConverged`] (iteration limit,
/// stagnation, divergence, non-finite values, a non-converged custom stop),
/// [`Error::NotPositiveDefinite`] and [`Error::PreconditionerNotPositive`] (CG breakdowns).
/// Input errors (lengths, non-finite input, a non-positive center) are reported before any
/// iteration and leave `x` unchanged.
///
/// # Example
///
/// One generic function for any driver:
///
/// ```
/// use quintet::prelude::*;
///
/// fn run(solver: &mut impl IterativeSolver<f64>) -> Result<usize, Error> {
///     let grid = Grid::new(24, 24)?;
///     let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
///     let rhs = vec![1.0; grid.cells()];
///     let mut x = vec![0.0; grid.cells()];
///     Ok(solver.solve(&op, &rhs, &mut x)?.iterations)
/// }
///
/// let cg = run(&mut Cg::default())?;
/// let sor = run(&mut Sor::new(1.8)?)?;
/// assert!(cg < sor);
/// # Ok::<(), quintet::Error>(())
/// ```
pub trait IterativeSolver<T: Scalar> {
    /// Solve with `ws` as scratch, calling `observer` with the [`Progress`] before the first
    /// iteration and after every iteration (for logging or a progress bar).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(16, 16)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let (rhs, mut x) = (vec![1.0; grid.cells()], vec![0.0; grid.cells()]);
    /// let mut seen = 0;
    /// let report = Cg::default().solve_observed(&op, &rhs, &mut x, &mut Workspace::new(), &mut |p| {
    ///     seen = p.iteration; // called before the first iteration and after each one
    /// })?;
    /// assert_eq!(seen, report.iterations);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    ///
    /// # Errors
    ///
    /// See the trait documentation.
    fn solve_observed<S: Stencil5<T> + ?Sized>(
        &mut self,
        op: &S,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error>;

    /// Solve with `ws` as scratch.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(16, 16)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mut ws = Workspace::for_grid(grid); // reused by every solve below
    /// let mut x = vec![0.0; grid.cells()];
    /// for load in [1.0, 2.0] {
    ///     Cg::default().solve_with(&op, &vec![load; grid.cells()], &mut x, &mut ws)?;
    /// }
    /// # Ok::<(), quintet::Error>(())
    /// ```
    ///
    /// # Errors
    ///
    /// See the trait documentation.
    fn solve_with<S: Stencil5<T> + ?Sized>(
        &mut self,
        op: &S,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
    ) -> Result<Report, Error> {
        self.solve_observed(op, rhs, x, ws, &mut |_| {})
    }

    /// Solve with a fresh workspace (allocates; use
    /// [`solve_with`](IterativeSolver::solve_with) in loops).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(16, 16)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mut x = vec![0.0; grid.cells()];
    /// assert!(Sor::new(1.7)?.solve(&op, &vec![1.0; grid.cells()], &mut x)?.converged());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    ///
    /// # Errors
    ///
    /// See the trait documentation.
    fn solve<S: Stencil5<T> + ?Sized>(
        &mut self,
        op: &S,
        rhs: &[T],
        x: &mut [T],
    ) -> Result<Report, Error> {
        let mut ws = Workspace::new();
        self.solve_with(op, rhs, x, &mut ws)
    }
}

/// `Ok` for a converged report, `Err(NotConverged)` otherwise.
pub(crate) fn conclude(report: Report) -> Result<Report, Error> {
    if report.converged() {
        Ok(report)
    } else {
        Err(Error::NotConverged {
            report: Box::new(report),
        })
    }
}

/// Checks shared by every driver, then the right-hand-side norm and the initial residual.
///
/// Returns `(b·b, r·r)`, with `r = b − A·x` (zero at fixed cells) left in `r`. `b` here is the
/// right-hand side of the system on the free cells: `rhs` minus the contributions of the fixed
/// neighbours (computed through `scratch`).
pub(crate) fn begin<T: Scalar, S: Stencil5<T> + ?Sized>(
    op: &S,
    rhs: &[T],
    x: &[T],
    kernels: &mut Kernels<T>,
    r: &mut [T],
    scratch: &mut [T],
) -> Result<(T, T), Error> {
    let grid = op.grid();
    check_len("rhs", grid.cells(), rhs.len())?;
    check_len("x", grid.cells(), x.len())?;
    if let Some((k, value)) = op.first_nonpositive_center() {
        let (i, j) = grid.coords(k);
        return Err(Error::NonPositiveCenter {
            cell: k,
            i,
            j,
            value: to_f64(value),
        });
    }
    for (what, v) in [("rhs", rhs), ("initial guess", x)] {
        if let Some(k) = v.iter().position(|e| !e.is_finite()) {
            let (i, j) = grid.coords(k);
            return Err(Error::NonFinite {
                what,
                cell: k,
                i,
                j,
            });
        }
    }
    let bb = match op.fixed_cells() {
        Some(fixed) if !fixed.is_empty() => {
            scratch.fill(T::zero());
            for &k in fixed.cells() {
                scratch[k] = x[k];
            }
            kernels.residual_free(op, rhs, scratch, r)
        }
        _ => kernels.dot(rhs, rhs),
    };
    let rr = kernels.residual_free(op, rhs, x, r);
    Ok((bb, rr))
}

/// When a recursively updated residual is replaced by the true one, and what that tells.
///
/// Normally the two agree to a few digits and the replacement just removes drift (residual
/// replacement; van der Vorst & Ye, "Residual replacement strategies for Krylov subspace
/// iterative methods", SIAM J. Sci. Comput. 22, 2000). Once rounding limits the attainable
/// accuracy (about `ε·‖A‖·‖x‖`), the recursive residual keeps falling while the true one does
/// not; the two then differ by a large factor. Continuing the recursion from the replaced
/// residual would mix directions of two different residuals, so the driver restarts, and if
/// the true residual has not improved since the last check, the solve stops with
/// [`StopReason::RoundingFloor`].
pub(crate) struct Refresh {
    every: usize,
    since: usize,
    best_true: f64,
}

/// What [`Refresh::record`] found.
pub(crate) struct Recorded<T> {
    /// `r·r` of the residual now in `r`.
    pub(crate) rr: T,
    /// The monitor's verdict (on the true residual whenever one was computed).
    pub(crate) verdict: Option<StopReason>,
    /// The recursive residual was replaced by a true one far from it: restart the recursion.
    pub(crate) restart: bool,
}

/// True and recursive residual norms differing by more than this factor mean the recursion
/// has lost track (rounding floor or severe drift).
const DRIFT_FACTOR: f64 = 2.0;

impl Refresh {
    pub(crate) fn new(every: usize) -> Refresh {
        Refresh {
            every,
            since: 0,
            best_true: f64::INFINITY,
        }
    }

    /// Record an iteration whose residual `rr` came from a recursive update. The true residual
    /// is recomputed into `r` when the refresh period is due, and whenever the rule wants to
    /// stop (so the verdict rests on the true residual).
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn record<T: Scalar, S: Stencil5<T> + ?Sized>(
        &mut self,
        monitor: &mut Monitor<'_>,
        kernels: &mut Kernels<T>,
        op: &S,
        rhs: &[T],
        x: &[T],
        r: &mut [T],
        rr: T,
        change: T,
    ) -> Recorded<T> {
        self.since += 1;
        let due = self.every > 0 && self.since >= self.every;
        let verdict = monitor.record(rr, Some(change));
        if !due && verdict.is_none() {
            return Recorded {
                rr,
                verdict,
                restart: false,
            };
        }
        self.since = 0;
        let recursive = to_f64(rr).sqrt();
        let rr_true = kernels.residual_free(op, rhs, x, r);
        let true_norm = to_f64(rr_true).sqrt();
        let mut verdict = monitor.revise(rr_true);
        let restart =
            !(true_norm <= DRIFT_FACTOR * recursive && recursive <= DRIFT_FACTOR * true_norm);
        let converged = verdict.is_some_and(|v| v.converged());
        if restart && !converged && true_norm >= self.best_true {
            verdict = Some(StopReason::RoundingFloor);
        }
        self.best_true = self.best_true.min(true_norm);
        Recorded {
            rr: rr_true,
            verdict,
            restart,
        }
    }
}

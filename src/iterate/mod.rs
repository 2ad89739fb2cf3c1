//! The one iteration loop, and the solving interface every driver shares: [`IterativeSolver`],
//! [`SolveOptions`] and the caller-owned [`Workspace`].
//!
//! A method (CG, steepest descent, BiCGSTAB, GMRES, SOR, a residual-correction iteration,
//! refinement) supplies only its set-up and one step, and declares how many work vectors it needs. The loop owns
//! everything else: the input checks, the right-hand-side norm and the initial residual, the
//! [`Monitor`] and the stopping rule, the periodic and the final true-residual refresh,
//! breakdown and non-finite handling, the rounding-floor stop, and the conclusion into a
//! [`Report`] or an error that carries it.

mod refresh;
mod workspace;

use std::fmt;
use std::sync::Arc;

pub use workspace::Workspace;

use refresh::Refresh;

use crate::blocks::Blocks;
use crate::error::Error;
use crate::monitor::{Monitor, Summary};
use crate::operator::LinearOperator;
use crate::operator::{check_len, locate, require_determined_level, require_positive_diagonal};
use crate::report::{History, MethodName, Progress, Report, StopReason};
use crate::scalar::{to_f64, Scalar};
use crate::space::{first_flagged, Space};
use crate::stencil::check_symmetry;
use crate::stop::{StopRule, Tolerances};

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
/// assert_eq!(opts.tolerances.max_iterations, Some(500));
/// ```
#[derive(Clone)]
#[non_exhaustive]
pub struct SolveOptions {
    /// The default rule set, used unless [`SolveOptions::rule`] is set.
    pub tolerances: Tolerances,
    /// A rule that replaces [`SolveOptions::tolerances`] when set.
    pub rule: Option<Arc<dyn StopRule>>,
    /// Recompute the true residual `b − A·x` every this many iterations in methods that update
    /// it recursively (CG, steepest descent, BiCGSTAB, the energy-minimising correction step;
    /// GMRES starts each cycle from a true residual and needs none), to stop
    /// round-off drift; 0 turns the periodic refresh off. Methods that recompute the residual
    /// from `x` every iteration (SOR, stationary corrections, refinement) need no refresh. The
    /// true residual is always recomputed before a solve is declared converged. Default 50.
    pub residual_refresh: usize,
    /// Check the operator's symmetry to this relative tolerance before the first iteration
    /// (see [`SolveOptions::check_symmetry`]). Default `None` (off).
    pub symmetry_check: Option<f64>,
}

impl Default for SolveOptions {
    fn default() -> SolveOptions {
        SolveOptions {
            tolerances: Tolerances::default(),
            rule: None,
            residual_refresh: 50,
            symmetry_check: None,
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
    /// assert_eq!(opts.tolerances.max_iterations, Some(42));
    /// ```
    pub fn max_iterations(mut self, limit: usize) -> SolveOptions {
        self.tolerances.max_iterations = Some(limit);
        self
    }

    /// Check, before the first iteration, that the operator is symmetric to within `rel_tol`
    /// ([`check_symmetry`](crate::check_symmetry)), in the methods that need a symmetric
    /// positive definite operator (CG, PCG, steepest descent, multigrid, refinement). Costs one
    /// pass over the coefficients per solve; applies to operators that are a
    /// [`Stencil5`](crate::Stencil5). Default: off.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 1)?;
    /// let lopsided = Banded5::new(grid, vec![2.0; 3], vec![0.0, -1.0, -1.0], vec![-0.5, -1.0, 0.0], vec![0.0; 3], vec![0.0; 3])?;
    /// let mut cg = Cg::default().with_options(SolveOptions::default().check_symmetry(1e-12));
    /// let err = cg.solve(&lopsided, &[1.0; 3], &mut [0.0; 3]).unwrap_err();
    /// assert_eq!(err.kind(), ErrorKind::Asymmetric);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn check_symmetry(mut self, rel_tol: f64) -> SolveOptions {
        self.symmetry_check = Some(rel_tol);
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
            .field("symmetry_check", &self.symmetry_check)
            .finish()
    }
}

/// A driver that solves `A·x = b` in place.
///
/// Implemented by every driver: [`SteepestDescent`](crate::SteepestDescent),
/// [`Pcg`](crate::Pcg) (and so [`Cg`](crate::Cg)), [`BiCgStab`](crate::BiCgStab),
/// [`Gmres`](crate::Gmres), [`Sor`](crate::Sor),
/// [`MixedRefinement`](crate::MixedRefinement), and the standalone [`Sip`](crate::Sip) and
/// [`Multigrid`](crate::Multigrid) iterations. The trait is object-safe: a
/// `Box<dyn IterativeSolver<f64>>` holds any of them. The operator is any
/// [`LinearOperator`] (every [`Stencil5`](crate::Stencil5) is one); SOR walks the rows of a
/// stencil and refuses other operators with
/// [`ErrorKind::NeedsStencil`](crate::ErrorKind::NeedsStencil).
///
/// **Outcome.** `Ok(report)` means converged by the stopping rule, checked on the true
/// residual. Every other end is an `Err` that still leaves the last iterate in `x` and carries
/// the full [`Report`] ([`Error::report`]): [`ErrorKind::NotConverged`](crate::ErrorKind::NotConverged)
/// (iteration limit, stagnation, divergence, non-finite values, a non-converged custom stop),
/// [`ErrorKind::NotPositiveDefinite`](crate::ErrorKind::NotPositiveDefinite) and
/// [`ErrorKind::PreconditionerNotPositive`](crate::ErrorKind::PreconditionerNotPositive) (CG
/// breakdowns), [`ErrorKind::ShadowOrthogonal`](crate::ErrorKind::ShadowOrthogonal) and
/// [`ErrorKind::StabilisingStepZero`](crate::ErrorKind::StabilisingStepZero) (BiCGSTAB),
/// [`ErrorKind::HessenbergSingular`](crate::ErrorKind::HessenbergSingular) (GMRES). Input errors (lengths, non-finite input, a non-positive center, a
/// preconditioner built for another grid) are reported before any iteration and leave `x`
/// unchanged.
///
/// # Example
///
/// Any driver behind one type:
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(24, 24)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let rhs = vec![1.0; grid.cells()];
/// let mut drivers: Vec<Box<dyn IterativeSolver<f64>>> = vec![
///     Box::new(Cg::default()),
///     Box::new(Pcg::new(Jacobi::new(&op)?)),
///     Box::new(Sor::new(1.8)?),
/// ];
/// for driver in &mut drivers {
///     let mut x = vec![0.0; grid.cells()];
///     assert!(driver.solve(&op, &rhs, &mut x)?.converged());
/// }
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
    fn solve_observed(
        &mut self,
        op: &dyn LinearOperator<T>,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error>;

    /// The driver's options (stopping rule, residual refresh).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let cg: Box<dyn IterativeSolver<f64>> = Box::new(Cg::default());
    /// assert_eq!(cg.options().tolerances.relative, 1e-8);
    /// ```
    fn options(&self) -> &SolveOptions;

    /// Mutable access to the driver's options.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let mut sor: Box<dyn IterativeSolver<f64>> = Box::new(Sor::new(1.5)?);
    /// sor.options_mut().tolerances.max_iterations = Some(100);
    /// assert_eq!(sor.options().tolerances.max_iterations, Some(100));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn options_mut(&mut self) -> &mut SolveOptions;

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
    fn solve_with(
        &mut self,
        op: &dyn LinearOperator<T>,
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
    fn solve(
        &mut self,
        op: &dyn LinearOperator<T>,
        rhs: &[T],
        x: &mut [T],
    ) -> Result<Report, Error> {
        let mut ws = Workspace::new();
        self.solve_with(op, rhs, x, &mut ws)
    }
}

impl<T: Scalar, S: IterativeSolver<T> + ?Sized> IterativeSolver<T> for Box<S> {
    fn solve_observed(
        &mut self,
        op: &dyn LinearOperator<T>,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        (**self).solve_observed(op, rhs, x, ws, observer)
    }
    fn options(&self) -> &SolveOptions {
        (**self).options()
    }
    fn options_mut(&mut self) -> &mut SolveOptions {
        (**self).options_mut()
    }
}

// ---------------------------------------------------------------------------------------------
// The loop.

/// What a method's step works on: the operator, the right-hand side, the iterate, the
/// residual (owned by the loop: it refreshes it), the method's work vectors, and the blocks and
/// space every kernel runs in.
pub(crate) struct Context<'a, T> {
    pub(crate) op: &'a dyn LinearOperator<T>,
    pub(crate) rhs: &'a [T],
    pub(crate) x: &'a mut [T],
    pub(crate) r: &'a mut [T],
    pub(crate) work: &'a mut [Vec<T>],
    pub(crate) blocks: &'a mut Blocks<T>,
    pub(crate) space: &'a dyn Space,
}

/// How a step obtained the residual it hands back.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Residual {
    /// Updated recursively (`r −= α·A·p`): the loop refreshes it periodically and before
    /// declaring convergence.
    Updated,
    /// Recomputed from `x` (`r = b − A·x`): a true residual already.
    Recomputed,
    /// Only its norm is known, for an iterate the method has not formed in `x` yet (GMRES
    /// inside a cycle: `‖r‖₂` from the Givens-rotated right-hand side). `cx.r` still holds an
    /// older residual. No periodic refresh (nothing drifts: each cycle starts from a true
    /// residual); when the rule wants to stop, the loop has the method form its iterate
    /// ([`Method::form_iterate`]) and decides on the true residual of that iterate.
    Estimated,
}

/// The result of one step: `r·r` of the new residual (now in `r`, unless
/// [`Residual::Estimated`]), the largest change of the solution (`None` when the step did not
/// form its iterate), and how the residual was obtained.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Step<T> {
    pub(crate) rr: T,
    pub(crate) change: Option<T>,
    pub(crate) residual: Residual,
}

/// Why a step could not be completed.
#[derive(Clone, Debug)]
pub(crate) enum Breakdown<T> {
    /// `p·Ap ≤ 0` (or not finite) in the iteration being computed.
    Curvature(T),
    /// `r·z ≤ 0` (or not finite) for the residual of the last completed iteration.
    Preconditioner(T),
    /// Something the step called failed (an inner solve): the solve ends with that error.
    Failed(Error),
    /// BiCGSTAB, in the iteration being computed: the shadow residual `r̂` is orthogonal to
    /// the residual (`r̂·r = 0`, the product named `"r̂·r"`) or to the new direction's image
    /// (`r̂·A·p̂ = 0`, named `"r̂·A·p̂"`).
    Shadow(T, &'static str),
    /// BiCGSTAB, in the iteration being computed: the stabilising step's `ω = (t·s)/(t·t)` is
    /// zero (or `t = A·ŝ` is zero).
    Stabiliser(T),
    /// GMRES, in the iteration being computed: the rotated diagonal of the Hessenberg matrix
    /// is zero (the new Krylov vector vanished with the projected system singular).
    Hessenberg(T),
}

/// What a method needs of the operator.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Requires {
    /// Positive centers at free cells (the method divides by them): SOR, Stone's iteration.
    PositiveCenters,
    /// Nothing of symmetry, definiteness or the centers (Krylov methods for general
    /// non-symmetric systems: BiCGSTAB, GMRES), only a level fixed by something: a pure
    /// no-flow system (every row sums to zero, no fixed cell) is singular whatever the
    /// method, and is refused as for the SPD methods.
    DeterminedLevel,
    /// A symmetric positive definite system: positive centers, not a pure no-flow system, and
    /// (when [`SolveOptions::symmetry_check`] is set) symmetric couplings.
    Spd,
}

/// One iterative method: its set-up and its step. The loop ([`run`]) does the rest.
pub(crate) trait Method<T: Scalar> {
    /// Work vectors the method needs besides the residual (at least 1: the loop borrows the
    /// first as scratch for the right-hand-side norm).
    fn work_vectors(&self) -> usize;

    /// What the method needs of the operator (checked before the first iteration).
    fn requires(&self) -> Requires {
        Requires::Spd
    }

    /// Set-up before the first step, with the initial residual in `cx.r`.
    fn setup(&mut self, _cx: &mut Context<'_, T>) -> Result<(), Error> {
        Ok(())
    }

    /// One iteration. `rr` is `r·r` of the residual now in `cx.r`.
    fn step(&mut self, cx: &mut Context<'_, T>, rr: T) -> Result<Step<T>, Breakdown<T>>;

    /// One iteration of a method that may end it early when the rule is met half way
    /// (BiCGSTAB after its BiCG half step): `meets(rr)` tells whether the rule would count a
    /// residual with `r·rr = rr` as converged at this iteration. The loop always calls this;
    /// the default ignores `meets` and takes a whole [`Method::step`].
    fn step_or_finish(
        &mut self,
        cx: &mut Context<'_, T>,
        rr: T,
        meets: &mut dyn FnMut(T) -> bool,
    ) -> Result<Step<T>, Breakdown<T>> {
        let _ = meets;
        self.step(cx, rr)
    }

    /// Form in `cx.x` the iterate whose residual the last step reported, for a method that
    /// keeps it implicit (GMRES forms `x` only at the end of a cycle; forming it earlier ends
    /// the cycle). The loop calls it before computing a true residual from `x` and when a
    /// breakdown ends the solve, so `x` always holds the last iterate. Default: nothing (the
    /// iterate is always in `x`).
    fn form_iterate(&mut self, _cx: &mut Context<'_, T>) {}

    /// The loop replaced `r` by the true residual (a refresh): a method that keeps something
    /// derived from `r` between steps must not use it again.
    fn residual_replaced(&mut self) {}

    /// The loop replaced a recursively updated residual by a true one far from it: forget
    /// anything built from the old recursion (CG's previous direction).
    fn restart(&mut self) {}
}

/// How the loop ended, before the report is assembled.
enum Ending<T> {
    Stopped(StopReason),
    Broke(Breakdown<T>, usize),
}

/// One solve as a driver hands it to the loop: the system, the caller's scratch, the rule
/// and the observer.
pub(crate) struct Task<'a, T> {
    pub(crate) op: &'a dyn LinearOperator<T>,
    pub(crate) rhs: &'a [T],
    pub(crate) x: &'a mut [T],
    pub(crate) ws: &'a mut Workspace<T>,
    pub(crate) options: &'a SolveOptions,
    pub(crate) observer: &'a mut dyn FnMut(&Progress<'_>),
}

/// Run `method` on the task until its rule stops it; the one loop of the crate. `Ok` means
/// converged; a solve that stopped for another reason is an error carrying its report.
pub(crate) fn run<T: Scalar, M: Method<T> + ?Sized>(
    method: &mut M,
    name: &MethodName,
    task: Task<'_, T>,
) -> Result<Report, Error> {
    run_to_end(method, name, task).and_then(conclude)
}

/// As [`run`], with the report of a solve that stopped without converging returned as `Ok`
/// (for inner solves, whose non-convergence is expected and must not allocate an error).
pub(crate) fn run_to_end<T: Scalar, M: Method<T> + ?Sized>(
    method: &mut M,
    name: &MethodName,
    task: Task<'_, T>,
) -> Result<Report, Error> {
    let Task {
        op,
        rhs,
        x,
        ws,
        options,
        observer,
    } = task;
    let n = op.len();
    options.stop_rule().validate()?;
    check_len("rhs", n, rhs.len())?;
    check_len("x", n, x.len())?;
    match method.requires() {
        Requires::PositiveCenters => require_positive_diagonal(op)?,
        Requires::DeterminedLevel => require_determined_level(op)?,
        Requires::Spd => {
            require_positive_diagonal(op)?;
            require_determined_level(op)?;
            if let (Some(tol), Some(stencil)) = (options.symmetry_check, op.as_stencil()) {
                check_symmetry(stencil, tol)?;
            }
        }
    }
    ws.blocks_for(op);
    ws.size_vectors(n, 1 + method.work_vectors().max(1))?;
    let Workspace {
        space,
        blocks,
        vectors,
        history,
    } = ws;
    let space: &dyn Space = &**space;
    for (what, v) in [("rhs", rhs), ("initial guess", &*x)] {
        if let Some(k) = first_flagged(space, n, |k| !v[k].is_finite()) {
            return Err(Error::non_finite(what, locate(op, k)));
        }
    }
    let blocks = blocks.get_or_insert_with(|| Blocks::for_operator(op));
    let (r, work) = vectors.split_first_mut().expect("sized above");
    let mut cx = Context {
        op,
        rhs,
        x,
        r,
        work,
        blocks,
        space,
    };
    let (bb, rr) = initial_residual(&mut cx);
    if Arc::get_mut(history).is_none() {
        *history = Arc::new(Vec::new());
    }
    let buffer = Arc::get_mut(history).expect("a fresh or unshared history");
    let unknowns = space.global_len(n);
    let mut monitor = Monitor::start(options.stop_rule(), buffer, observer, unknowns, bb, rr);
    let (ending, summary) = match iterate(method, &mut cx, &mut monitor, options, rr) {
        Ok(ending) => (ending, monitor.close()),
        Err(e) => return Err(e),
    };
    let history = History(Arc::clone(history));
    finish(ending, summary, name, history)
}

/// The checks are done and the monitor is running: iterate until a verdict.
fn iterate<T: Scalar, M: Method<T> + ?Sized>(
    method: &mut M,
    cx: &mut Context<'_, T>,
    monitor: &mut Monitor<'_>,
    options: &SolveOptions,
    mut rr: T,
) -> Result<Ending<T>, Error> {
    if let Some(reason) = monitor.check() {
        return Ok(Ending::Stopped(reason));
    }
    method.setup(cx)?;
    let mut refresh = Refresh::new(options.residual_refresh);
    loop {
        let stepped = {
            let mut meets = |rr: T| monitor.would_converge(rr);
            method.step_or_finish(cx, rr, &mut meets)
        };
        let step = match stepped {
            Ok(step) => step,
            Err(breakdown) => {
                method.form_iterate(cx);
                let (value, iteration) = match breakdown {
                    Breakdown::Curvature(v)
                    | Breakdown::Shadow(v, _)
                    | Breakdown::Stabiliser(v)
                    | Breakdown::Hessenberg(v) => (v, monitor.iteration() + 1),
                    Breakdown::Preconditioner(v) => (v, monitor.iteration()),
                    Breakdown::Failed(e) => return Err(e),
                };
                if !value.is_finite() {
                    return Ok(Ending::Stopped(StopReason::NonFinite));
                }
                return Ok(Ending::Broke(breakdown, iteration));
            }
        };
        let verdict = match step.residual {
            Residual::Recomputed => {
                rr = step.rr;
                monitor.record(step.rr, step.change)
            }
            Residual::Updated | Residual::Estimated => {
                let periodic = step.residual == Residual::Updated;
                let recorded = refresh.record(method, monitor, cx, step, periodic);
                rr = recorded.rr;
                if recorded.restart && recorded.verdict.is_none() {
                    method.restart();
                }
                recorded.verdict
            }
        };
        if let Some(reason) = verdict {
            return Ok(Ending::Stopped(reason));
        }
    }
}

/// `(b·b, r·r)`: `b` is the right-hand side of the system on the free cells (`rhs` minus the
/// contributions of the fixed neighbours, computed through the first work vector), and
/// `r = b − A·x` (zero at fixed cells) is left in `cx.r`.
fn initial_residual<T: Scalar>(cx: &mut Context<'_, T>) -> (T, T) {
    let Context {
        op,
        rhs,
        x,
        r,
        work,
        blocks,
        space,
    } = cx;
    // An exact space may span processes, some with fixed cells and some without: all of them
    // take the first path then (with no fixed cell it gives `rhs·rhs`, the same bits).
    let bb = match op.fixed_cells() {
        Some(fixed) if !fixed.is_empty() || space.exact_sums() => {
            let scratch = &mut work[0];
            scratch.fill(T::zero());
            for &k in fixed.cells() {
                scratch[k] = x[k];
            }
            blocks.residual_free(*space, *op, rhs, scratch, r)
        }
        _ => blocks.dot(*space, rhs, rhs),
    };
    let rr = blocks.residual_free(*space, *op, rhs, x, r);
    (bb, rr)
}

/// The report, and the error that carries it unless the solve converged.
fn finish<T: Scalar>(
    ending: Ending<T>,
    summary: Summary,
    name: &MethodName,
    history: History,
) -> Result<Report, Error> {
    match ending {
        Ending::Stopped(reason) => Ok(summary.report(name.clone(), reason, history)),
        Ending::Broke(breakdown, iteration) => {
            let report = summary.report(name.clone(), StopReason::Breakdown, history);
            Err(match breakdown {
                Breakdown::Curvature(v) => {
                    Error::not_positive_definite(iteration, to_f64(v), report)
                }
                Breakdown::Preconditioner(v) => {
                    Error::preconditioner_not_positive(iteration, to_f64(v), report)
                }
                Breakdown::Shadow(v, product) => {
                    Error::shadow_orthogonal(iteration, product, to_f64(v), report)
                }
                Breakdown::Stabiliser(v) => Error::stabiliser_zero(iteration, to_f64(v), report),
                Breakdown::Hessenberg(v) => {
                    Error::hessenberg_singular(iteration, to_f64(v), report)
                }
                Breakdown::Failed(e) => e,
            })
        }
    }
}

/// `Ok` for a converged report, `Err(NotConverged)` otherwise.
pub(crate) fn conclude(report: Report) -> Result<Report, Error> {
    if report.converged() {
        Ok(report)
    } else {
        Err(Error::not_converged(report))
    }
}

/// A method name built once per driver and shared by its reports (no allocation per solve).
#[derive(Clone, Debug, Default)]
pub(crate) struct NameCache {
    key: Option<(String, MethodName)>,
}

impl NameCache {
    /// The name for `key`, built by `make` the first time (and again when `key` changes).
    pub(crate) fn get(&mut self, key: &str, make: impl FnOnce() -> String) -> MethodName {
        match &self.key {
            Some((k, name)) if k == key => name.clone(),
            _ => {
                let name = MethodName::from(make());
                self.key = Some((key.to_string(), name.clone()));
                name
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{Banded5, Coeffs5, Grid};

    /// A method whose recursive residual halves every step while its iterate runs away from
    /// the solution: the recursion has lost track of the true residual, as a numerically
    /// unstable iteration does.
    struct RunsAway;

    impl Method<f64> for RunsAway {
        fn work_vectors(&self) -> usize {
            1
        }
        fn requires(&self) -> Requires {
            Requires::PositiveCenters
        }
        fn step(
            &mut self,
            cx: &mut Context<'_, f64>,
            rr: f64,
        ) -> Result<Step<f64>, Breakdown<f64>> {
            for v in cx.r.iter_mut() {
                *v *= 0.5;
            }
            for v in cx.x.iter_mut() {
                *v = 10.0 * *v + 1.0;
            }
            Ok(Step {
                rr: 0.25 * rr,
                change: Some(1.0),
                residual: Residual::Updated,
            })
        }
    }

    /// A true residual that ends above the initial one is reported as grown, not as the
    /// rounding floor (which promises a residual that stopped falling near `ε·‖A‖·‖x‖`).
    #[test]
    fn a_runaway_true_residual_is_not_called_a_rounding_floor() {
        let grid = Grid::new(8, 8).unwrap();
        let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j)).unwrap();
        let rhs = vec![1.0; grid.cells()];
        let mut x = vec![0.0; grid.cells()];
        let mut ws = Workspace::new();
        let options = SolveOptions::default().residual_refresh(1);
        let task = Task {
            op: &op,
            rhs: &rhs,
            x: &mut x,
            ws: &mut ws,
            options: &options,
            observer: &mut |_| {},
        };
        let report = run_to_end(
            &mut RunsAway,
            &MethodName::from("runs away".to_string()),
            task,
        )
        .unwrap();
        assert_eq!(report.reason, StopReason::ResidualGrew, "{report}");
        assert!(report.residual_norm > report.initial_residual_norm);
    }
}

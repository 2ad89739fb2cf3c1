//! What a solve hands back and what stopping rules and observers see: [`Report`],
//! [`StopReason`] and [`Progress`]. The lowest layer of the solver core: the monitor, the
//! stopping rules and the error type all build on it.

use std::fmt;
use std::ops::Deref;
use std::sync::Arc;
use std::time::Duration;

/// The record of one solve: why it stopped, how far it got, and the residual history.
///
/// The solution itself is left in the caller's `x`. Residual norms are `‖b − A·x‖₂` over the
/// free cells, in `f64` whatever the scalar type; the final one is always a true residual,
/// recomputed from `x`, not a recursively updated one.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(32, 32)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let rhs = vec![1.0; grid.cells()];
/// let mut x = vec![0.0; grid.cells()];
/// let report = Cg::default().solve(&op, &rhs, &mut x)?;
/// assert!(report.converged());
/// assert!(report.relative_residual() <= 1e-8);
/// assert_eq!(report.history.len(), report.iterations + 1);
/// println!("{report}");
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, PartialEq)]
#[non_exhaustive]
pub struct Report {
    /// The driver (and preconditioner) that ran, e.g. `"PCG + Jacobi"`.
    pub method: MethodName,
    /// Why the solve stopped.
    pub reason: StopReason,
    /// Iterations done.
    pub iterations: usize,
    /// Final `‖r‖₂`, recomputed from `x`.
    pub residual_norm: f64,
    /// `‖r₀‖₂` of the initial guess.
    pub initial_residual_norm: f64,
    /// `‖b‖₂` of the system iterated on (free cells, fixed neighbours' contributions moved to
    /// the right-hand side).
    pub rhs_norm: f64,
    /// `‖r‖₂` after each iteration; `history[0]` is the initial residual.
    pub history: History,
    /// Wall-clock time of the iteration.
    pub elapsed: Duration,
}

impl Report {
    /// Whether the stop reason counts as convergence.
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// # let grid = Grid::new(4, 4)?;
    /// # let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// # let mut x = vec![0.0; 16];
    /// let report = Cg::default().solve(&op, &vec![1.0; 16], &mut x)?;
    /// assert!(report.converged());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn converged(&self) -> bool {
        self.reason.converged()
    }

    /// `‖r‖₂ / ‖b‖₂` at the end (relative to the initial residual when `‖b‖₂ = 0`).
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// # let grid = Grid::new(4, 4)?;
    /// # let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// # let mut x = vec![0.0; 16];
    /// let report = Cg::default().solve(&op, &vec![1.0; 16], &mut x)?;
    /// assert!(report.relative_residual() < 1e-8);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn relative_residual(&self) -> f64 {
        relative(
            self.residual_norm,
            self.rhs_norm,
            self.initial_residual_norm,
        )
    }

    /// `‖r‖₂ / ‖r₀‖₂` at the end.
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// # let grid = Grid::new(4, 4)?;
    /// # let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// # let mut x = vec![0.0; 16];
    /// let report = Cg::default().solve(&op, &vec![1.0; 16], &mut x)?;
    /// assert!(report.reduction() < 1e-8);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn reduction(&self) -> f64 {
        relative(self.residual_norm, self.initial_residual_norm, 0.0)
    }
}

impl fmt::Display for Report {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let verdict = if self.converged() {
            "converged"
        } else {
            "did not converge"
        };
        write!(
            f,
            "{}: {verdict} after {} iterations ({}); |r| = {:.3e}, |r|/|b| = {:.3e}, |r|/|r0| = {:.3e}, {:.3} s",
            self.method,
            self.iterations,
            self.reason,
            self.residual_norm,
            self.relative_residual(),
            self.reduction(),
            self.elapsed.as_secs_f64(),
        )
    }
}

/// Debug output with the history shortened to its ends.
impl fmt::Debug for Report {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("Report")
            .field("method", &self.method)
            .field("reason", &self.reason)
            .field("iterations", &self.iterations)
            .field("residual_norm", &self.residual_norm)
            .field("initial_residual_norm", &self.initial_residual_norm)
            .field("rhs_norm", &self.rhs_norm)
            .field("history", &self.history)
            .field("elapsed", &self.elapsed)
            .finish()
    }
}

/// The name of the method a [`Report`] comes from, e.g. `"PCG + multigrid V-cycle"`.
///
/// A driver builds its name once and every report shares it, so a report costs no allocation
/// for its name. Compares with and dereferences to `str`.
///
/// ```
/// use quintet::MethodName;
/// let name = MethodName::from("my iteration");
/// assert_eq!(name, "my iteration");
/// assert_eq!(name.len(), 12);
/// ```
#[derive(Clone, PartialEq, Eq, Hash)]
pub struct MethodName(Arc<str>);

impl MethodName {
    /// The name as a string slice.
    ///
    /// ```
    /// assert_eq!(quintet::MethodName::from("CG").as_str(), "CG");
    /// ```
    pub fn as_str(&self) -> &str {
        &self.0
    }
}

impl From<&str> for MethodName {
    fn from(s: &str) -> MethodName {
        MethodName(Arc::from(s))
    }
}

impl From<String> for MethodName {
    fn from(s: String) -> MethodName {
        MethodName(Arc::from(s))
    }
}

impl Deref for MethodName {
    type Target = str;
    fn deref(&self) -> &str {
        &self.0
    }
}

impl PartialEq<str> for MethodName {
    fn eq(&self, other: &str) -> bool {
        &*self.0 == other
    }
}

impl PartialEq<&str> for MethodName {
    fn eq(&self, other: &&str) -> bool {
        &*self.0 == *other
    }
}

impl fmt::Display for MethodName {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.pad(&self.0)
    }
}

impl fmt::Debug for MethodName {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        fmt::Debug::fmt(&*self.0, f)
    }
}

/// The residual history of a solve: `‖r‖₂` before the first iteration and after each one.
///
/// Shared with the [`Workspace`](crate::Workspace) that recorded it: the next solve with that
/// workspace records into the same buffer if this report has been dropped by then, and into a
/// new one if it is still alive, so a time loop that drops its reports allocates nothing for
/// them. Dereferences to `[f64]`.
///
/// ```
/// use quintet::prelude::*;
/// let grid = Grid::new(16, 16)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let mut x = vec![0.0; grid.cells()];
/// let report = Cg::default().solve(&op, &vec![1.0; grid.cells()], &mut x)?;
/// let history: &[f64] = &report.history;
/// assert_eq!(history.len(), report.iterations + 1);
/// assert!(history[history.len() - 1] < history[0]);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, PartialEq, Default)]
pub struct History(pub(crate) Arc<Vec<f64>>);

impl History {
    /// The norms as a slice.
    ///
    /// ```
    /// let h = quintet::History::from(vec![1.0, 0.5]);
    /// assert_eq!(h.as_slice(), &[1.0, 0.5]);
    /// ```
    pub fn as_slice(&self) -> &[f64] {
        &self.0
    }
}

impl From<Vec<f64>> for History {
    fn from(v: Vec<f64>) -> History {
        History(Arc::new(v))
    }
}

impl Deref for History {
    type Target = [f64];
    fn deref(&self) -> &[f64] {
        &self.0
    }
}

impl<'a> IntoIterator for &'a History {
    type Item = &'a f64;
    type IntoIter = std::slice::Iter<'a, f64>;
    fn into_iter(self) -> Self::IntoIter {
        self.0.iter()
    }
}

/// The first and last few entries, so that printing an error from a long solve stays
/// readable.
impl fmt::Debug for History {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        const ENDS: usize = 3;
        let h = &self.0[..];
        if h.len() <= 2 * ENDS + 1 {
            return f.debug_list().entries(h).finish();
        }
        write!(f, "[")?;
        for v in &h[..ENDS] {
            write!(f, "{v:e}, ")?;
        }
        write!(f, "... {} more ...", h.len() - 2 * ENDS)?;
        for v in &h[h.len() - ENDS..] {
            write!(f, ", {v:e}")?;
        }
        write!(f, "]")
    }
}

/// Why a solve stopped.
///
/// ```
/// use quintet::StopReason;
/// assert!(StopReason::RelativeResidualMet.converged());
/// assert!(!StopReason::IterationLimit.converged());
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum StopReason {
    /// `‖r‖₂` fell to the absolute tolerance.
    AbsoluteResidualMet,
    /// `‖r‖₂ / ‖b‖₂` fell to the relative tolerance.
    RelativeResidualMet,
    /// `‖r‖₂ / ‖r₀‖₂` (reduction from the initial residual) fell to the tolerance.
    ResidualReductionMet,
    /// The largest change of the solution in the last iteration fell to the tolerance.
    SolutionChangeMet,
    /// The residual is exactly zero.
    ExactSolution,
    /// The iteration limit was reached first.
    IterationLimit,
    /// The residual stopped decreasing over the stagnation window.
    Stagnated,
    /// The true residual stopped falling while the recursively updated one kept going: rounding
    /// limits the attainable accuracy (about `ε·‖A‖·‖x‖`) above the requested tolerance.
    RoundingFloor,
    /// The residual grew past the allowed factor of its initial value
    /// ([`Growth`](crate::stop::Growth)), or the true residual, recomputed, was above the
    /// initial one while the recursively updated residual kept falling (the iteration ran
    /// away).
    ResidualGrew,
    /// The residual (or a quantity of the iteration) became NaN or infinite.
    NonFinite,
    /// The iteration could not continue (CG: `p·Ap ≤ 0` or `r·z ≤ 0`; BiCGSTAB: `r̂·r = 0`,
    /// `r̂·A·p̂ = 0` or `ω = 0`; GMRES: a singular projected system).
    Breakdown,
    /// A user rule stopped the solve.
    Custom {
        /// Whether the rule counts this as convergence.
        converged: bool,
        /// A short label for reports.
        label: &'static str,
    },
}

impl StopReason {
    /// Whether this reason counts as convergence.
    ///
    /// ```
    /// use quintet::StopReason;
    /// assert!(StopReason::Custom { converged: true, label: "budget closed" }.converged());
    /// assert!(!StopReason::ResidualGrew.converged());
    /// ```
    pub fn converged(&self) -> bool {
        match self {
            StopReason::AbsoluteResidualMet
            | StopReason::RelativeResidualMet
            | StopReason::ResidualReductionMet
            | StopReason::SolutionChangeMet
            | StopReason::ExactSolution => true,
            StopReason::Custom { converged, .. } => *converged,
            _ => false,
        }
    }
}

impl fmt::Display for StopReason {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.pad(match self {
            StopReason::AbsoluteResidualMet => "residual below the absolute tolerance",
            StopReason::RelativeResidualMet => "residual below the tolerance relative to the rhs",
            StopReason::ResidualReductionMet => {
                "residual reduced by the requested factor from its initial value"
            }
            StopReason::SolutionChangeMet => "largest solution change below the tolerance",
            StopReason::ExactSolution => "residual exactly zero",
            StopReason::IterationLimit => "iteration limit reached",
            StopReason::Stagnated => "residual stagnated",
            StopReason::RoundingFloor => {
                "true residual stopped falling: rounding limits the accuracy above the tolerance"
            }
            StopReason::ResidualGrew => "residual grew past its allowed bound",
            StopReason::NonFinite => "non-finite value in the iteration",
            StopReason::Breakdown => "breakdown of the iteration",
            StopReason::Custom { label, .. } => label,
        })
    }
}

/// The state of a solve after an iteration, as stopping rules and observers see it.
///
/// ```
/// use std::time::Duration;
/// use quintet::Progress;
///
/// let history = [1.0, 0.1, 0.01];
/// let p = Progress {
///     iteration: 2,
///     residual_norm: 0.01,
///     initial_residual_norm: 1.0,
///     rhs_norm: 10.0,
///     solution_change: Some(0.5),
///     history: &history,
///     elapsed: Duration::ZERO,
///     unknowns: 3,
/// };
/// assert_eq!(p.relative_residual(), 0.001);
/// assert_eq!(p.reduction(), 0.01);
/// ```
#[derive(Clone, Copy, Debug)]
pub struct Progress<'a> {
    /// Iterations done (0 before the first).
    pub iteration: usize,
    /// `‖r‖₂` of the current iterate, free cells only.
    pub residual_norm: f64,
    /// `‖r₀‖₂` of the initial guess.
    pub initial_residual_norm: f64,
    /// `‖b‖₂` of the system the driver iterates on: the rhs of the free cells, with the known
    /// contributions of fixed neighbours moved to it.
    pub rhs_norm: f64,
    /// Largest `|x_new − x_old|` over the cells in the last iteration (`None` before the first,
    /// and inside a GMRES cycle, where the iterate is not formed yet).
    pub solution_change: Option<f64>,
    /// `‖r‖₂` after each iteration so far, `history[0]` the initial one.
    pub history: &'a [f64],
    /// Wall-clock time since the solve started.
    pub elapsed: Duration,
    /// Number of unknowns of the system (cells, fixed ones included).
    pub unknowns: usize,
}

impl Progress<'_> {
    /// `‖r‖₂ / ‖b‖₂`; relative to the initial residual when `‖b‖₂ = 0`, and 0 when both are 0.
    ///
    /// ```
    /// # use quintet::Progress;
    /// # let p = Progress { iteration: 0, residual_norm: 2.0, initial_residual_norm: 4.0,
    /// #     rhs_norm: 0.0, solution_change: None, history: &[], elapsed: Default::default(), unknowns: 100 };
    /// assert_eq!(p.relative_residual(), 0.5); // rhs is zero: relative to the initial residual
    /// ```
    pub fn relative_residual(&self) -> f64 {
        relative(
            self.residual_norm,
            self.rhs_norm,
            self.initial_residual_norm,
        )
    }

    /// `‖r‖₂ / ‖r₀‖₂` (0 when the initial residual is 0).
    ///
    /// ```
    /// # use quintet::Progress;
    /// # let p = Progress { iteration: 0, residual_norm: 2.0, initial_residual_norm: 4.0,
    /// #     rhs_norm: 1.0, solution_change: None, history: &[], elapsed: Default::default(), unknowns: 100 };
    /// assert_eq!(p.reduction(), 0.5);
    /// ```
    pub fn reduction(&self) -> f64 {
        relative(self.residual_norm, self.initial_residual_norm, 0.0)
    }
}

/// `value / scale`, falling back to `fallback` as the scale when `scale` is zero, and 0 when
/// both are zero.
pub(crate) fn relative(value: f64, scale: f64, fallback: f64) -> f64 {
    let s = if scale > 0.0 { scale } else { fallback };
    if s > 0.0 {
        value / s
    } else if value == 0.0 {
        0.0
    } else {
        f64::INFINITY
    }
}

//! Stopping rules: when an iteration has converged, and when it should give up.
//!
//! A rule looks at the [`Progress`] of a solve after each iteration and either lets it go on
//! (`None`) or names a [`StopReason`]. The drivers check the rule once before the first
//! iteration (a warm start may already be good enough) and after every iteration. A non-finite
//! residual always stops the solve, whatever the rule.
//!
//! [`Tolerances`] is the default: relative residual `‖r‖₂ ≤ 10⁻⁸·‖b‖₂`, at most 10 000
//! iterations, and divergence when `‖r‖₂` exceeds 10⁸ times its initial value. Build others
//! from the rules in this module and the [`AnyOf`] / [`AllOf`] combinators, or write a closure
//! ([`RuleFn`]).
//!
//! When a rule reports convergence on a residual the driver updated recursively, the driver
//! recomputes the true residual `b − A·x` and asks again, so a converged report always rests on
//! the true residual.

pub use crate::report::{Progress, StopReason};

/// A stopping rule.
///
/// # Example
///
/// ```
/// use quintet::{Progress, StopReason, StopRule};
///
/// /// Stop once the residual halves, for a quick smoothing pass.
/// struct Halved;
/// impl StopRule for Halved {
///     fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
///         (p.reduction() <= 0.5).then_some(StopReason::Custom { converged: true, label: "halved" })
///     }
/// }
/// ```
pub trait StopRule: Send + Sync {
    /// `Some(reason)` to stop now, `None` to go on.
    ///
    /// ```
    /// use quintet::{Progress, StopRule, stop::RelativeResidual};
    /// let p = Progress { iteration: 3, residual_norm: 1e-9, initial_residual_norm: 1.0,
    ///     rhs_norm: 1.0, solution_change: None, history: &[], elapsed: Default::default() };
    /// assert!(RelativeResidual(1e-8).check(&p).is_some());
    /// ```
    fn check(&self, progress: &Progress<'_>) -> Option<StopReason>;

    /// An upper bound on the iterations this rule allows, if it has one. Drivers use it only to
    /// size the residual history up front.
    ///
    /// ```
    /// use quintet::{StopRule, stop::IterationLimit};
    /// assert_eq!(IterationLimit(40).iteration_bound(), Some(40));
    /// ```
    fn iteration_bound(&self) -> Option<usize> {
        None
    }
}

/// Converged when `‖r‖₂ ≤ tolerance`.
///
/// ```
/// use quintet::{prelude::*, stop::AbsoluteResidual};
/// let opts = SolveOptions::default().stop_when(AbsoluteResidual(1e-6));
/// # let _ = opts;
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct AbsoluteResidual(pub f64);

impl StopRule for AbsoluteResidual {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        (p.residual_norm <= self.0).then_some(StopReason::AbsoluteResidualMet)
    }
}

/// Converged when `‖r‖₂ ≤ tolerance·‖b‖₂` (see [`Progress::relative_residual`] for `b = 0`).
///
/// ```
/// use quintet::{prelude::*, stop::RelativeResidual};
/// let opts = SolveOptions::default().stop_when(RelativeResidual(1e-10));
/// # let _ = opts;
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct RelativeResidual(pub f64);

impl StopRule for RelativeResidual {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        (p.relative_residual() <= self.0).then_some(StopReason::RelativeResidualMet)
    }
}

/// Converged when `‖r‖₂ ≤ factor·‖r₀‖₂`: the residual fell by the factor from its initial value.
/// Convenient for inner solves; misleading for a warm start that was already nearly right.
///
/// ```
/// use quintet::{prelude::*, stop::ResidualReduction};
/// let opts = SolveOptions::default().stop_when(ResidualReduction(1e-3));
/// # let _ = opts;
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ResidualReduction(pub f64);

impl StopRule for ResidualReduction {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        (p.reduction() <= self.0).then_some(StopReason::ResidualReductionMet)
    }
}

/// Converged when the largest change of any cell's value in the last iteration is at most the
/// tolerance, in the units of the solution (metres of head, kelvin). Groundwater modellers use
/// it beside a residual test; on its own it can stop a slowly converging iteration early, so
/// combine it with a residual rule through [`AllOf`].
///
/// ```
/// use quintet::{prelude::*, stop::{AllOf, RelativeResidual, SolutionChange}};
/// let rule = AllOf::new().and(SolutionChange(1e-4)).and(RelativeResidual(1e-6));
/// let opts = SolveOptions::default().stop_when(rule);
/// # let _ = opts;
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SolutionChange(pub f64);

impl StopRule for SolutionChange {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        p.solution_change
            .is_some_and(|c| c <= self.0)
            .then_some(StopReason::SolutionChangeMet)
    }
}

/// Gives up after this many iterations.
///
/// ```
/// use quintet::{Progress, StopRule, stop::IterationLimit};
/// let p = Progress { iteration: 5, residual_norm: 1.0, initial_residual_norm: 1.0,
///     rhs_norm: 1.0, solution_change: None, history: &[], elapsed: Default::default() };
/// assert!(IterationLimit(5).check(&p).is_some());
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct IterationLimit(pub usize);

impl StopRule for IterationLimit {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        (p.iteration >= self.0).then_some(StopReason::IterationLimit)
    }
    fn iteration_bound(&self) -> Option<usize> {
        Some(self.0)
    }
}

/// Gives up when the best residual of the last `window` iterations is not below
/// `(1 − min_reduction)` times the residual `window` iterations ago.
///
/// ```
/// use quintet::{Progress, StopRule, stop::Stagnation};
/// let h = [1.0, 0.9, 0.9, 0.9];
/// let p = Progress { iteration: 3, residual_norm: 0.9, initial_residual_norm: 1.0,
///     rhs_norm: 1.0, solution_change: None, history: &h, elapsed: Default::default() };
/// assert!(Stagnation { window: 2, min_reduction: 0.01 }.check(&p).is_some());
/// assert!(Stagnation { window: 3, min_reduction: 0.01 }.check(&p).is_none());
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Stagnation {
    /// Number of iterations looked back over (at least 1).
    pub window: usize,
    /// Relative drop the window must achieve, e.g. 0.01 for one percent.
    pub min_reduction: f64,
}

impl StopRule for Stagnation {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        let w = self.window.max(1);
        let h = p.history;
        if h.len() <= w {
            return None;
        }
        let then = h[h.len() - 1 - w];
        let best = h[h.len() - w..]
            .iter()
            .copied()
            .fold(f64::INFINITY, f64::min); // local: norms already global
        (best > (1.0 - self.min_reduction) * then).then_some(StopReason::Stagnated)
    }
}

/// Gives up when `‖r‖₂ > factor·‖r₀‖₂`.
///
/// ```
/// use quintet::{Progress, StopRule, stop::Divergence};
/// let p = Progress { iteration: 9, residual_norm: 1e9, initial_residual_norm: 1.0,
///     rhs_norm: 1.0, solution_change: None, history: &[], elapsed: Default::default() };
/// assert!(Divergence(1e8).check(&p).is_some());
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Divergence(pub f64);

impl StopRule for Divergence {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        (p.residual_norm > self.0 * p.initial_residual_norm).then_some(StopReason::Diverged)
    }
}

/// The default rule set: converged when `‖r‖₂ ≤ max(absolute, relative·‖b‖₂)`; gives up at
/// `max_iterations` or when `‖r‖₂ > divergence·‖r₀‖₂`.
///
/// ```
/// use quintet::Tolerances;
/// let t = Tolerances::default();
/// assert_eq!((t.relative, t.absolute, t.max_iterations), (1e-8, 0.0, 10_000));
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
#[non_exhaustive]
pub struct Tolerances {
    /// Relative tolerance on `‖r‖₂ / ‖b‖₂`. Default `1e-8`.
    pub relative: f64,
    /// Absolute tolerance on `‖r‖₂`, in rhs units. Default `0` (off).
    pub absolute: f64,
    /// Iteration limit. Default 10 000.
    pub max_iterations: usize,
    /// Divergence factor on `‖r‖₂ / ‖r₀‖₂`. Default `1e8`.
    pub divergence: f64,
}

impl Default for Tolerances {
    fn default() -> Tolerances {
        Tolerances {
            relative: 1e-8,
            absolute: 0.0,
            max_iterations: 10_000,
            divergence: 1e8,
        }
    }
}

impl StopRule for Tolerances {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        if p.residual_norm <= self.absolute {
            return Some(StopReason::AbsoluteResidualMet);
        }
        if p.relative_residual() <= self.relative {
            return Some(StopReason::RelativeResidualMet);
        }
        if p.iteration >= self.max_iterations {
            return Some(StopReason::IterationLimit);
        }
        Divergence(self.divergence).check(p)
    }
    fn iteration_bound(&self) -> Option<usize> {
        Some(self.max_iterations)
    }
}

/// Stops as soon as any member rule does, with the first member's reason (members are asked
/// in the order they were added).
///
/// ```
/// use quintet::stop::{AnyOf, IterationLimit, RelativeResidual, Stagnation};
/// let rule = AnyOf::new()
///     .or(RelativeResidual(1e-8))
///     .or(Stagnation { window: 50, min_reduction: 0.01 })
///     .or(IterationLimit(2000));
/// # let _ = rule;
/// ```
#[derive(Default)]
pub struct AnyOf(Vec<Box<dyn StopRule>>);

impl AnyOf {
    /// An empty combination (never stops on its own).
    ///
    /// ```
    /// let _ = quintet::stop::AnyOf::new();
    /// ```
    pub fn new() -> AnyOf {
        AnyOf(Vec::new())
    }

    /// Add a member rule.
    ///
    /// ```
    /// let _ = quintet::stop::AnyOf::new().or(quintet::stop::IterationLimit(10));
    /// ```
    pub fn or(mut self, rule: impl StopRule + 'static) -> AnyOf {
        self.0.push(Box::new(rule));
        self
    }
}

impl StopRule for AnyOf {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        self.0.iter().find_map(|r| r.check(p))
    }
    fn iteration_bound(&self) -> Option<usize> {
        self.0.iter().filter_map(|r| r.iteration_bound()).min()
    }
}

/// Stops only when every member rule does, with the first member's reason. An empty `AllOf`
/// never stops.
///
/// ```
/// use quintet::stop::{AllOf, RelativeResidual, SolutionChange};
/// let rule = AllOf::new().and(RelativeResidual(1e-6)).and(SolutionChange(1e-3));
/// # let _ = rule;
/// ```
#[derive(Default)]
pub struct AllOf(Vec<Box<dyn StopRule>>);

impl AllOf {
    /// An empty combination.
    ///
    /// ```
    /// let _ = quintet::stop::AllOf::new();
    /// ```
    pub fn new() -> AllOf {
        AllOf(Vec::new())
    }

    /// Add a member rule.
    ///
    /// ```
    /// let _ = quintet::stop::AllOf::new().and(quintet::stop::SolutionChange(0.01));
    /// ```
    pub fn and(mut self, rule: impl StopRule + 'static) -> AllOf {
        self.0.push(Box::new(rule));
        self
    }
}

impl StopRule for AllOf {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        let mut first = None;
        for rule in &self.0 {
            let reason = rule.check(p)?;
            first.get_or_insert(reason);
        }
        first
    }
    fn iteration_bound(&self) -> Option<usize> {
        self.0.iter().filter_map(|r| r.iteration_bound()).max()
    }
}

/// A stopping rule from a closure.
///
/// ```
/// use quintet::{prelude::*, stop::RuleFn};
/// // Stop after one second of wall-clock time, whatever the residual.
/// let rule = RuleFn(|p: &Progress<'_>| {
///     (p.elapsed.as_secs_f64() > 1.0).then_some(StopReason::Custom { converged: false, label: "time budget spent" })
/// });
/// let opts = SolveOptions::default().stop_when(rule);
/// # let _ = opts;
/// ```
#[derive(Clone, Copy, Debug)]
pub struct RuleFn<F>(pub F);

impl<F> StopRule for RuleFn<F>
where
    F: Fn(&Progress<'_>) -> Option<StopReason> + Send + Sync,
{
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        (self.0)(p)
    }
}

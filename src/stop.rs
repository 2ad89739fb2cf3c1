//! Stopping rules: when an iteration has converged, and when it should give up.
//!
//! A rule looks at the [`Progress`] of a solve after each iteration and either lets it go on
//! (`None`) or names a [`StopReason`]. The drivers check the rule once before the first
//! iteration (a warm start may already be good enough) and after every iteration. A non-finite
//! residual always stops the solve, whatever the rule.
//!
//! [`Tolerances`] is the default: converged at a relative residual `‖r‖₂ ≤ 10⁻⁸·‖b‖₂` (or an
//! absolute one, off by default), and an iteration cap that grows with the problem,
//! [`iteration_cap`]`(n)` for `n` unknowns, unless a fixed limit is set. Watching for a growing
//! residual is opt-in ([`Growth`], or [`Tolerances::growth`]). Build other rules from the ones
//! in this module and the [`AnyOf`] / [`AllOf`] combinators, or write a closure ([`RuleFn`]).
//! A rule with no iteration bound of its own ([`StopRule::iteration_bound`]) is backed by the
//! same cap, so no solve runs forever.
//!
//! Every rule checks its own settings before the first iteration
//! ([`StopRule::validate`]): a tolerance that is not positive, a NaN, a limit of zero iterations
//! are [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) at once, not a solve
//! that runs to its limit.
//!
//! When a rule reports convergence on a residual the driver updated recursively, the driver
//! recomputes the true residual `b − A·x` and asks again, so a converged report always rests on
//! the true residual.

pub use crate::report::{Progress, StopReason};

use crate::error::Error;

/// The iteration cap of the default rule set for a system of `unknowns` unknowns:
/// `max(2000, ⌈150·√unknowns⌉)`.
///
/// Unpreconditioned CG needs a number of iterations that grows like the square root of the
/// condition number, which for a diffusion operator on an `N × N` grid grows like `N`, and
/// like the square root of the coefficient contrast. On the crate's layered test aquifer of
/// contrast 10⁴ plain CG needs about 75 iterations per √(cells) to `‖r‖/‖b‖ ≤ 10⁻⁸` (measured
/// from 32² to 384², checked at 96² by `tests/stopping.rs`); the cap allows twice that
/// (19 200 at 128², 153 600 at 1024²), so it ends a solve that is going nowhere without cutting
/// short a slow one that is converging, and a preconditioned solve stops far below it.
/// Steepest descent and Gauss–Seidel need more (their counts grow like `N²`): give them a
/// fixed limit ([`SolveOptions::max_iterations`](crate::SolveOptions::max_iterations)).
///
/// ```
/// use quintet::stop::iteration_cap;
/// assert_eq!(iteration_cap(100), 2000);
/// assert_eq!(iteration_cap(128 * 128), 19_200);
/// ```
pub fn iteration_cap(unknowns: usize) -> usize {
    let root = (unknowns as f64).sqrt();
    ((150.0 * root).ceil() as usize).max(2000)
}

/// `Ok` if `value` is finite and positive, else `InvalidSetting` naming `name`.
fn positive(name: &'static str, value: f64) -> Result<(), Error> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(Error::setting(name, value, "a finite value > 0"))
    }
}

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
    ///     rhs_norm: 1.0, solution_change: None, history: &[], elapsed: Default::default(), unknowns: 100 };
    /// assert!(RelativeResidual(1e-8).check(&p).is_some());
    /// ```
    fn check(&self, progress: &Progress<'_>) -> Option<StopReason>;

    /// An upper bound on the iterations this rule allows on a system of `unknowns` unknowns,
    /// if it has one. Drivers use it to size the residual history up front; a rule without
    /// one is backed by [`iteration_cap`].
    ///
    /// ```
    /// use quintet::{StopRule, stop::IterationLimit};
    /// assert_eq!(IterationLimit(40).iteration_bound(1000), Some(40));
    /// ```
    fn iteration_bound(&self, unknowns: usize) -> Option<usize> {
        let _ = unknowns;
        None
    }

    /// Check the rule's own settings, once per solve before the first iteration. Default:
    /// accept.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for a setting the rule
    /// cannot work with.
    ///
    /// ```
    /// use quintet::{StopRule, stop::RelativeResidual};
    /// assert!(RelativeResidual(1e-8).validate().is_ok());
    /// assert!(RelativeResidual(0.0).validate().is_err());
    /// assert!(RelativeResidual(f64::NAN).validate().is_err());
    /// ```
    fn validate(&self) -> Result<(), Error> {
        Ok(())
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
    fn validate(&self) -> Result<(), Error> {
        positive("absolute residual tolerance", self.0)
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
    fn validate(&self) -> Result<(), Error> {
        positive("relative residual tolerance", self.0)
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
    fn validate(&self) -> Result<(), Error> {
        positive("residual reduction factor", self.0)
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
    fn validate(&self) -> Result<(), Error> {
        positive("solution change tolerance", self.0)
    }
}

/// Gives up after this many iterations.
///
/// ```
/// use quintet::{Progress, StopRule, stop::IterationLimit};
/// let p = Progress { iteration: 5, residual_norm: 1.0, initial_residual_norm: 1.0,
///     rhs_norm: 1.0, solution_change: None, history: &[], elapsed: Default::default(), unknowns: 100 };
/// assert!(IterationLimit(5).check(&p).is_some());
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct IterationLimit(pub usize);

impl StopRule for IterationLimit {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        (p.iteration >= self.0).then_some(StopReason::IterationLimit)
    }
    fn iteration_bound(&self, _unknowns: usize) -> Option<usize> {
        Some(self.0)
    }
    fn validate(&self) -> Result<(), Error> {
        match self.0 {
            0 => Err(Error::setting(
                "iteration limit",
                0.0,
                "at least 1 iteration",
            )),
            _ => Ok(()),
        }
    }
}

/// Gives up when the best residual of the last `window` iterations is not below
/// `(1 − min_reduction)` times the residual `window` iterations ago.
///
/// ```
/// use quintet::{Progress, StopRule, stop::Stagnation};
/// let h = [1.0, 0.9, 0.9, 0.9];
/// let p = Progress { iteration: 3, residual_norm: 0.9, initial_residual_norm: 1.0,
///     rhs_norm: 1.0, solution_change: None, history: &h, elapsed: Default::default(), unknowns: 100 };
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
    fn validate(&self) -> Result<(), Error> {
        if self.window == 0 {
            return Err(Error::setting(
                "stagnation window",
                0.0,
                "at least 1 iteration",
            ));
        }
        match self.min_reduction {
            r if (0.0..1.0).contains(&r) => Ok(()),
            r => Err(Error::setting(
                "stagnation min_reduction",
                r,
                "0 <= min_reduction < 1",
            )),
        }
    }
}

/// Gives up when the residual has grown: `‖r‖₂ > factor·‖r₀‖₂`. Opt-in (the default rule set
/// does not watch for growth unless [`Tolerances::growth`] is set): a Krylov residual may rise
/// for a while before it falls, and a factor too small would stop a good solve.
///
/// ```
/// use quintet::{Progress, StopReason, StopRule, stop::Growth};
/// let p = Progress { iteration: 9, residual_norm: 1e9, initial_residual_norm: 1.0,
///     rhs_norm: 1.0, solution_change: None, history: &[], elapsed: Default::default(), unknowns: 100 };
/// assert_eq!(Growth(1e8).check(&p), Some(StopReason::ResidualGrew));
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Growth(pub f64);

impl StopRule for Growth {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        (p.residual_norm > self.0 * p.initial_residual_norm).then_some(StopReason::ResidualGrew)
    }
    fn validate(&self) -> Result<(), Error> {
        if self.0 > 1.0 && !self.0.is_nan() {
            Ok(())
        } else {
            Err(Error::setting("growth factor", self.0, "a factor > 1"))
        }
    }
}

/// The default rule set: converged when `‖r‖₂ ≤ relative·‖b‖₂` or `‖r‖₂ ≤ absolute`; gives up
/// at the iteration limit — `max_iterations` if set, else [`iteration_cap`] of the problem's
/// size — and, only if `growth` is set, when `‖r‖₂ > growth·‖r₀‖₂`.
///
/// ```
/// use quintet::Tolerances;
/// let t = Tolerances::default();
/// assert_eq!((t.relative, t.absolute), (1e-8, 0.0));
/// assert_eq!((t.max_iterations, t.growth), (None, None));
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
#[non_exhaustive]
pub struct Tolerances {
    /// Relative tolerance on `‖r‖₂ / ‖b‖₂`, > 0. Default `1e-8`.
    pub relative: f64,
    /// Absolute tolerance on `‖r‖₂`, in rhs units, >= 0. Default `0` (off).
    pub absolute: f64,
    /// A fixed iteration limit (at least 1). Default `None`: [`iteration_cap`] of the number of
    /// unknowns.
    pub max_iterations: Option<usize>,
    /// Stop when `‖r‖₂` grows past this factor of `‖r₀‖₂` (> 1). Default `None` (off).
    pub growth: Option<f64>,
}

impl Default for Tolerances {
    fn default() -> Tolerances {
        Tolerances {
            relative: 1e-8,
            absolute: 0.0,
            max_iterations: None,
            growth: None,
        }
    }
}

impl Tolerances {
    /// The iteration limit on a system of `unknowns` unknowns.
    ///
    /// ```
    /// use quintet::Tolerances;
    /// assert_eq!(Tolerances::default().limit(10_000), 15_000);
    /// ```
    pub fn limit(&self, unknowns: usize) -> usize {
        self.max_iterations
            .unwrap_or_else(|| iteration_cap(unknowns))
    }
}

impl StopRule for Tolerances {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        if p.relative_residual() <= self.relative {
            return Some(StopReason::RelativeResidualMet);
        }
        if p.residual_norm <= self.absolute {
            return Some(StopReason::AbsoluteResidualMet);
        }
        if p.iteration >= self.limit(p.unknowns) {
            return Some(StopReason::IterationLimit);
        }
        self.growth.and_then(|g| Growth(g).check(p))
    }
    fn iteration_bound(&self, unknowns: usize) -> Option<usize> {
        Some(self.limit(unknowns))
    }
    fn validate(&self) -> Result<(), Error> {
        positive("relative tolerance", self.relative)?;
        if !(self.absolute >= 0.0 && self.absolute.is_finite()) {
            return Err(Error::setting(
                "absolute tolerance",
                self.absolute,
                "a finite value >= 0 (0 turns it off)",
            ));
        }
        if let Some(limit) = self.max_iterations {
            IterationLimit(limit).validate()?;
        }
        match self.growth {
            Some(g) => Growth(g).validate(),
            None => Ok(()),
        }
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
    fn iteration_bound(&self, unknowns: usize) -> Option<usize> {
        self.0
            .iter()
            .filter_map(|r| r.iteration_bound(unknowns))
            .min()
    }
    fn validate(&self) -> Result<(), Error> {
        self.0.iter().try_for_each(|r| r.validate())
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
    fn iteration_bound(&self, unknowns: usize) -> Option<usize> {
        if self.0.is_empty() {
            return None;
        }
        self.0
            .iter()
            .map(|r| r.iteration_bound(unknowns))
            .try_fold(0, |most, bound| bound.map(|b| most.max(b))) // local: member rules
    }
    fn validate(&self) -> Result<(), Error> {
        self.0.iter().try_for_each(|r| r.validate())
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

//! The one convergence monitor every driver shares.
//!
//! A driver hands the monitor `r·r` (which the fused kernels compute anyway) after each
//! iteration; the monitor takes `‖r‖₂ = √(r·r)` from it (never a second pass over `r`), keeps the
//! history, calls the caller's observer, and asks the stopping rule whether to stop.

use std::time::Instant;

use crate::report::{History, MethodName, Progress, Report, StopReason};
use crate::scalar::{to_f64, Scalar};
use crate::stop::{iteration_cap, StopRule};

/// Most history entries reserved up front (more are still recorded, with a reallocation).
const HISTORY_RESERVE_CAP: usize = 1 << 20;

/// Tracks a solve: iteration count, residual history, timing, observer and stopping rule.
///
/// Drivers in this crate use it internally; it is public so that a solver written outside the
/// crate can report in the same way.
///
/// # Example
///
/// A hand-written Richardson iteration `x ← x + τ·r`, monitored like the built-in drivers.
///
/// ```
/// use quintet::{Monitor, Tolerances};
///
/// let (a, b, tau) = (4.0_f64, 2.0_f64, 0.2_f64);
/// let mut x = 0.0;
/// let mut history = Vec::new();
/// let rule = Tolerances::default();
/// let mut observer = |_: &quintet::Progress<'_>| {};
/// let r0 = b - a * x;
/// let mut monitor = Monitor::start(&rule, &mut history, &mut observer, 1, b * b, r0 * r0);
/// let reason = loop {
///     let r = b - a * x;
///     x += tau * r;
///     let r_new = b - a * x;
///     if let Some(reason) = monitor.record(r_new * r_new, Some((tau * r).abs())) {
///         break reason;
///     }
/// };
/// let report = monitor.finish("Richardson", reason);
/// assert!(report.converged());
/// assert!((x - 0.5).abs() < 1e-8);
/// ```
pub struct Monitor<'a> {
    rule: &'a dyn StopRule,
    history: &'a mut Vec<f64>,
    observer: &'a mut dyn FnMut(&Progress<'_>),
    initial: f64,
    rhs_norm: f64,
    iteration: usize,
    change: Option<f64>,
    start: Instant,
    unknowns: usize,
    /// The iteration cap behind a rule that has no bound of its own.
    backstop: Option<usize>,
}

impl<'a> Monitor<'a> {
    /// Start monitoring: `rhs_sq = b·b` and `rr = r₀·r₀` of the initial guess. Clears
    /// `history`, reserves room for the rule's iteration bound, records the initial residual
    /// and calls the observer for iteration 0.
    ///
    /// ```
    /// # use quintet::{Monitor, Progress, Tolerances};
    /// # let rule = Tolerances::default();
    /// # let (mut history, mut observer) = (Vec::new(), |_: &Progress<'_>| {});
    /// let mut monitor = Monitor::start(&rule, &mut history, &mut observer, 1, 4.0, 1.0);
    /// assert_eq!(monitor.iteration(), 0);
    /// assert_eq!(monitor.residual_norm(), 1.0); // sqrt of r·r
    /// ```
    pub fn start<T: Scalar>(
        rule: &'a dyn StopRule,
        history: &'a mut Vec<f64>,
        observer: &'a mut dyn FnMut(&Progress<'_>),
        unknowns: usize,
        rhs_sq: T,
        rr: T,
    ) -> Monitor<'a> {
        history.clear();
        let bound = rule.iteration_bound(unknowns);
        let backstop = bound.is_none().then(|| iteration_cap(unknowns));
        let want = bound
            .or(backstop)
            .map_or(1024, |b| b.saturating_add(1))
            .min(HISTORY_RESERVE_CAP);
        history.reserve(want);
        let initial = sqrt_f64(rr);
        history.push(initial);
        let mut monitor = Monitor {
            rule,
            history,
            observer,
            initial,
            rhs_norm: sqrt_f64(rhs_sq),
            iteration: 0,
            change: None,
            start: Instant::now(),
            unknowns,
            backstop,
        };
        monitor.notify();
        monitor
    }

    /// Ask the rule about the current state (the initial one right after [`Monitor::start`]).
    /// A non-finite residual always stops.
    ///
    /// ```
    /// # use quintet::{Monitor, Progress, Tolerances};
    /// # let rule = Tolerances::default();
    /// # let (mut history, mut observer) = (Vec::new(), |_: &Progress<'_>| {});
    /// let done = Monitor::start(&rule, &mut history, &mut observer, 1, 1.0, 0.0);
    /// assert_eq!(done.check(), Some(quintet::StopReason::ExactSolution));
    /// ```
    pub fn check(&self) -> Option<StopReason> {
        let progress = self.progress();
        if !progress.residual_norm.is_finite() {
            return Some(StopReason::NonFinite);
        }
        if progress.residual_norm == 0.0 {
            return Some(StopReason::ExactSolution);
        }
        self.rule.check(&progress).or_else(|| {
            self.backstop
                .is_some_and(|cap| self.iteration >= cap)
                .then_some(StopReason::IterationLimit)
        })
    }

    /// Record one more iteration with its `r·r` and largest solution change, call the
    /// observer, and ask the rule.
    ///
    /// ```
    /// # use quintet::{Monitor, Progress, Tolerances};
    /// # let rule = Tolerances::default();
    /// # let (mut history, mut observer) = (Vec::new(), |_: &Progress<'_>| {});
    /// let mut monitor = Monitor::start(&rule, &mut history, &mut observer, 1, 1.0, 1.0);
    /// assert_eq!(monitor.record(1e-20, Some(0.5)), Some(quintet::StopReason::RelativeResidualMet));
    /// assert_eq!(monitor.iteration(), 1);
    /// ```
    pub fn record<T: Scalar>(&mut self, rr: T, change: Option<T>) -> Option<StopReason> {
        self.iteration += 1;
        self.change = change.map(to_f64);
        self.history.push(sqrt_f64(rr));
        self.notify();
        self.check()
    }

    /// `‖r₀‖₂`, the initial residual norm.
    pub(crate) fn initial_norm(&self) -> f64 {
        self.initial
    }

    /// Whether the rule would count the next iteration as converged if its residual had
    /// `r·r = rr` (no solution change known), without recording it or calling the observer:
    /// for a method that can finish half way through an iteration (BiCGSTAB).
    pub(crate) fn would_converge<T: Scalar>(&mut self, rr: T) -> bool {
        let change = self.change.take();
        self.iteration += 1;
        self.history.push(sqrt_f64(rr));
        let verdict = self.check();
        self.history.pop();
        self.iteration -= 1;
        self.change = change;
        verdict.is_some_and(|v| v.converged())
    }

    /// Replace the current iteration's residual with the true one (`rr = r·r` of `b − A·x`)
    /// and ask the rule again.
    ///
    /// ```
    /// # use quintet::{Monitor, Progress, Tolerances};
    /// # let rule = Tolerances::default();
    /// # let (mut history, mut observer) = (Vec::new(), |_: &Progress<'_>| {});
    /// let mut monitor = Monitor::start(&rule, &mut history, &mut observer, 1, 1.0, 1.0);
    /// monitor.record(1e-20, None); // a recursively updated residual said "converged"
    /// assert_eq!(monitor.revise(0.25), None); // the true residual says otherwise
    /// ```
    pub fn revise<T: Scalar>(&mut self, rr: T) -> Option<StopReason> {
        self.set_residual(rr);
        self.check()
    }

    /// Replace the current iteration's residual with the true one, without asking the rule.
    ///
    /// ```
    /// # use quintet::{Monitor, Progress, Tolerances};
    /// # let rule = Tolerances::default();
    /// # let (mut history, mut observer) = (Vec::new(), |_: &Progress<'_>| {});
    /// let mut monitor = Monitor::start(&rule, &mut history, &mut observer, 1, 1.0, 1.0);
    /// monitor.set_residual(0.25);
    /// assert_eq!(monitor.residual_norm(), 0.5);
    /// ```
    pub fn set_residual<T: Scalar>(&mut self, rr: T) {
        if let Some(last) = self.history.last_mut() {
            *last = sqrt_f64(rr);
        }
    }

    /// Iterations recorded so far.
    ///
    /// ```
    /// # use quintet::{Monitor, Progress, Tolerances};
    /// # let rule = Tolerances::default();
    /// # let (mut history, mut observer) = (Vec::new(), |_: &Progress<'_>| {});
    /// let mut monitor = Monitor::start(&rule, &mut history, &mut observer, 1, 1.0, 1.0);
    /// monitor.record(0.5, None);
    /// assert_eq!(monitor.iteration(), 1);
    /// ```
    pub fn iteration(&self) -> usize {
        self.iteration
    }

    /// The current `‖r‖₂`.
    ///
    /// ```
    /// # use quintet::{Monitor, Progress, Tolerances};
    /// # let rule = Tolerances::default();
    /// # let (mut history, mut observer) = (Vec::new(), |_: &Progress<'_>| {});
    /// let monitor = Monitor::start(&rule, &mut history, &mut observer, 1, 1.0, 9.0);
    /// assert_eq!(monitor.residual_norm(), 3.0);
    /// ```
    pub fn residual_norm(&self) -> f64 {
        self.history.last().copied().unwrap_or(f64::NAN)
    }

    /// Stop monitoring and build the report, with `reason` as the reason.
    ///
    /// ```
    /// # use quintet::{Monitor, Progress, Tolerances};
    /// # let rule = Tolerances::default();
    /// # let (mut history, mut observer) = (Vec::new(), |_: &Progress<'_>| {});
    /// let mut monitor = Monitor::start(&rule, &mut history, &mut observer, 1, 1.0, 1.0);
    /// let reason = monitor.record(1e-20, None).expect("converged");
    /// let report = monitor.finish("my iteration", reason);
    /// assert!(report.converged() && report.history.len() == 2);
    /// ```
    pub fn finish(self, method: impl Into<MethodName>, reason: StopReason) -> Report {
        let history = History::from(self.history.clone());
        self.close().report(method.into(), reason, history)
    }

    /// Stop monitoring: everything a report needs but the method, the reason and the history
    /// (which the caller owns).
    pub(crate) fn close(self) -> Summary {
        Summary {
            iterations: self.iteration,
            residual_norm: self.residual_norm(),
            initial_residual_norm: self.initial,
            rhs_norm: self.rhs_norm,
            elapsed: self.start.elapsed(),
        }
    }

    fn progress(&self) -> Progress<'_> {
        Progress {
            iteration: self.iteration,
            residual_norm: self.history.last().copied().unwrap_or(f64::NAN),
            initial_residual_norm: self.initial,
            rhs_norm: self.rhs_norm,
            solution_change: self.change,
            history: self.history,
            elapsed: self.start.elapsed(),
            unknowns: self.unknowns,
        }
    }

    fn notify(&mut self) {
        let now = Progress {
            iteration: self.iteration,
            residual_norm: self.history.last().copied().unwrap_or(f64::NAN),
            initial_residual_norm: self.initial,
            rhs_norm: self.rhs_norm,
            solution_change: self.change,
            history: self.history,
            elapsed: self.start.elapsed(),
            unknowns: self.unknowns,
        };
        (self.observer)(&now);
    }
}

/// The end state of a monitored solve.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Summary {
    pub(crate) iterations: usize,
    pub(crate) residual_norm: f64,
    pub(crate) initial_residual_norm: f64,
    pub(crate) rhs_norm: f64,
    pub(crate) elapsed: std::time::Duration,
}

impl Summary {
    pub(crate) fn report(self, method: MethodName, reason: StopReason, history: History) -> Report {
        Report {
            method,
            reason,
            iterations: self.iterations,
            residual_norm: self.residual_norm,
            initial_residual_norm: self.initial_residual_norm,
            rhs_norm: self.rhs_norm,
            history,
            elapsed: self.elapsed,
        }
    }
}

/// `√(r·r)` in `f64`.
fn sqrt_f64<T: Scalar>(rr: T) -> f64 {
    to_f64(rr).sqrt()
}

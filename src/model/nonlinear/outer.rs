//! The outer iteration of a nonlinear model: Picard or Newton, a linear driver inside.
//!
//! Both methods solve the same correction equation `M·δ = −F(x)`, `x ← x + λ·δ`, where `F` is
//! the nonlinear residual (the net outflow of every free cell's control volume) and `M` is
//! the matrix of the current iterate with lagged coefficients (Picard) or the Jacobian
//! `∂F/∂x` (Newton). Since the residual is always the true one, both converge to the same
//! solution; they differ in speed: linearly for Picard, quadratically near the solution for
//! Newton (Kelley 1995, *Iterative Methods for Linear and Nonlinear Equations*, SIAM,
//! ch. 4–5). Each linear solve starts from `δ = 0`, that is from the last outer iterate: a
//! warm start, whose initial residual is the nonlinear residual itself.

use crate::error::Error;
use crate::report::Report;
use crate::space::{total, Combine, Space};
use crate::{Banded5, ErrorKind};

/// Which linearisation the outer iteration uses.
///
/// ```
/// use quintet::model::OuterMethod;
/// assert_eq!(OuterMethod::default(), OuterMethod::Newton);
/// ```
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
pub enum OuterMethod {
    /// Coefficients (transmissivities, conductivities, radiation conductances) taken at the
    /// last iterate: symmetric matrices, linear convergence.
    Picard,
    /// The Jacobian of the residual, including the change of the coefficients with the
    /// solution: quadratic convergence near the solution, non-symmetric matrices.
    #[default]
    Newton,
}

impl OuterMethod {
    fn name(self) -> &'static str {
        match self {
            OuterMethod::Picard => "Picard",
            OuterMethod::Newton => "Newton",
        }
    }
}

/// Settings of the outer iteration.
///
/// It stops when **both** the largest change of the last outer iteration is at most
/// `change_tolerance` (in the unit of the solution: m of head, K) **and** the nonlinear
/// residual `‖F‖₂` is at most `residual_tolerance` times its value at the start (or at most
/// `absolute_residual`, in W or m³/s).
///
/// **Inner tolerance.** Each linear solve is asked for a relative residual
/// `η = clamp(forcing·‖F‖/‖F₀‖, inner_min, inner_max)`: loose while the outer iteration is
/// far from the solution, tightening in proportion to the nonlinear residual as it converges,
/// which keeps Newton quadratic (Dembo, Eisenstat & Steihaug 1982, "Inexact Newton methods",
/// *SIAM J. Numer. Anal.* 19(2), from memory: η = O(‖F‖) suffices).
///
/// **Step control.** A correction longer than `max_change` anywhere is scaled down to it;
/// if the step then raises the residual, it is halved up to `backtracking` times (the
/// halvings are not counted as outer iterations). The step length taken is in the record.
///
/// ```
/// use quintet::model::{OuterMethod, OuterSettings};
/// let settings = OuterSettings { method: OuterMethod::Picard, max_outer: 200, ..Default::default() };
/// assert_eq!(settings.change_tolerance, 1e-6);
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OuterSettings {
    /// Picard or Newton (default Newton).
    pub method: OuterMethod,
    /// Largest number of outer iterations (default 100).
    pub max_outer: usize,
    /// Largest change of the last outer iteration at convergence (default 1e-6).
    pub change_tolerance: f64,
    /// `‖F‖₂ / ‖F₀‖₂` at convergence (default 1e-8).
    pub residual_tolerance: f64,
    /// `‖F‖₂` at convergence in the model's flow unit, whatever the start (default 0: off).
    pub absolute_residual: f64,
    /// Factor of the inner tolerance rule (default 0.1).
    pub forcing: f64,
    /// Loosest inner relative tolerance (default 1e-2).
    pub inner_max: f64,
    /// Tightest inner relative tolerance (default 1e-11).
    pub inner_min: f64,
    /// Step halvings allowed per outer iteration when the residual grows (default 6).
    pub backtracking: usize,
    /// Largest change of any cell in one outer iteration (m or K, default ∞): a longer
    /// correction is scaled down to it before backtracking. Near drying cells the Newton
    /// correction can be far too long (the slopes of a nearly dry cell vanish); a limit of
    /// a fraction of the aquifer thickness keeps the iterates in range.
    pub max_change: f64,
}

impl Default for OuterSettings {
    fn default() -> OuterSettings {
        OuterSettings {
            method: OuterMethod::Newton,
            max_outer: 100,
            change_tolerance: 1e-6,
            residual_tolerance: 1e-8,
            absolute_residual: 0.0,
            forcing: 0.1,
            inner_max: 1e-2,
            inner_min: 1e-11,
            backtracking: 6,
            max_change: f64::INFINITY,
        }
    }
}

impl OuterSettings {
    /// Settings with `method` and the rest by default.
    ///
    /// ```
    /// use quintet::model::{OuterMethod, OuterSettings};
    /// assert_eq!(OuterSettings::new(OuterMethod::Picard).method, OuterMethod::Picard);
    /// ```
    pub fn new(method: OuterMethod) -> OuterSettings {
        OuterSettings {
            method,
            ..OuterSettings::default()
        }
    }

    fn validate(&self) -> Result<(), Error> {
        let positive = |name: &'static str, v: f64| {
            if v.is_finite() && v >= 0.0 {
                Ok(())
            } else {
                Err(Error::setting(name, v, "finite and >= 0"))
            }
        };
        positive("change_tolerance", self.change_tolerance)?;
        positive("residual_tolerance", self.residual_tolerance)?;
        positive("absolute_residual", self.absolute_residual)?;
        positive("forcing", self.forcing)?;
        if !(self.inner_min > 0.0 && self.inner_min <= self.inner_max && self.inner_max < 1.0) {
            return Err(Error::setting(
                "inner_min",
                self.inner_min,
                "0 < inner_min <= inner_max < 1",
            ));
        }
        if self.max_change.is_nan() || self.max_change <= 0.0 {
            return Err(Error::setting("max_change", self.max_change, "> 0"));
        }
        if self.max_outer == 0 {
            return Err(Error::setting("max_outer", 0.0, "at least 1"));
        }
        Ok(())
    }
}

/// One outer iteration, as the observer sees it.
///
/// ```
/// use quintet::model::OuterStep;
/// let step = OuterStep { outer: 3, inner_iterations: 12, inner_tolerance: 1e-4, change: 0.02, residual: 1e-7, step_length: 1.0 };
/// assert!(step.to_string().starts_with("outer   3:   12 inner iterations"));
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct OuterStep {
    /// The outer iteration, from 1.
    pub outer: usize,
    /// Iterations of its linear solve.
    pub inner_iterations: usize,
    /// The relative tolerance the linear solve was given.
    pub inner_tolerance: f64,
    /// Largest change of the solution in this outer iteration (m or K).
    pub change: f64,
    /// Nonlinear residual `‖F‖₂` after it (W or m³/s).
    pub residual: f64,
    /// The fraction of the correction taken (1 unless backtracking halved it).
    pub step_length: f64,
}

impl std::fmt::Display for OuterStep {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "outer {:>3}: {:>4} inner iterations (tolerance {:.0e}), change {:.3e}, residual {:.3e}{}",
            self.outer,
            self.inner_iterations,
            self.inner_tolerance,
            self.change,
            self.residual,
            if self.step_length < 1.0 {
                format!(", step {:.3}", self.step_length)
            } else {
                String::new()
            }
        )
    }
}

/// How an outer iteration ended, when it converged.
///
/// ```
/// use quintet::model::OuterReport;
/// fn summary(r: &OuterReport) -> String {
///     format!("{} outer, {} inner iterations", r.outer_iterations, r.inner_iterations)
/// }
/// ```
#[derive(Clone, Debug, PartialEq)]
#[non_exhaustive]
pub struct OuterReport {
    /// The method used.
    pub method: OuterMethod,
    /// Outer iterations done.
    pub outer_iterations: usize,
    /// Inner (linear) iterations, summed over the outer iterations.
    pub inner_iterations: usize,
    /// Largest change in the last outer iteration.
    pub change: f64,
    /// Nonlinear residual `‖F‖₂` at the end.
    pub residual: f64,
    /// Nonlinear residual at the start.
    pub initial_residual: f64,
}

/// What the outer iteration asks of a nonlinear system.
pub(crate) trait Equations {
    /// Compute `F(x)` into the system's residual vector (zero at fixed cells); returns this
    /// process's `Σ F²`.
    fn residual(&mut self, x: &[f64]) -> f64;
    /// Fill the system's matrix with the linearisation at `x`, and the right-hand side with
    /// `−F(x)` of the last [`Equations::residual`].
    fn linearise(&mut self, x: &[f64], method: OuterMethod) -> Result<(), Error>;
    /// The matrix, the right-hand side and the correction vector (zeroed).
    fn correction(&mut self) -> (&Banded5<f64>, &[f64], &mut [f64]);
    /// The correction of the last linear solve.
    fn delta(&self) -> &[f64];
    /// Whether cell `k` is fixed (prescribed or inactive).
    fn is_fixed(&self, k: usize) -> bool;
    /// The space reductions run in.
    fn space(&self) -> &std::sync::Arc<dyn Space>;
}

/// A linear solve of `op·δ = rhs` to relative tolerance `eta`, δ starting at zero.
pub(crate) type Inner<'a> =
    dyn FnMut(&Banded5<f64>, &[f64], &mut [f64], f64) -> Result<Report, Error> + 'a;

/// `√(Σ over processes)` of a local sum of squares.
fn norm(space: &dyn Space, local: f64) -> f64 {
    let mut s = [local];
    total(space, &mut s);
    s[0].sqrt()
}

/// Run the outer iteration from `x` (fixed values already written); `scratch` holds the
/// iterate before the step, for backtracking.
pub(crate) fn run_outer<E: Equations + ?Sized>(
    eq: &mut E,
    x: &mut [f64],
    scratch: &mut [f64],
    settings: &OuterSettings,
    inner: &mut Inner<'_>,
    observer: &mut dyn FnMut(&OuterStep),
) -> Result<OuterReport, Error> {
    settings.validate()?;
    let space = eq.space().clone();
    let mut residual = norm(&*space, eq.residual(x));
    let initial = residual;
    let target = (settings.residual_tolerance * initial).max(settings.absolute_residual);
    let mut report = OuterReport {
        method: settings.method,
        outer_iterations: 0,
        inner_iterations: 0,
        change: 0.0,
        residual,
        initial_residual: initial,
    };
    if residual == 0.0 {
        return Ok(report);
    }
    let mut last_inner: Option<Report> = None;
    let fail = |why: &'static str, outer, change, residual, inner: Option<Report>| {
        Error::outer_not_converged(
            settings.method.name(),
            outer,
            why,
            (change, settings.change_tolerance),
            (residual, target),
            inner,
        )
    };
    for outer in 1..=settings.max_outer {
        eq.linearise(x, settings.method)
            .map_err(|e| e.while_doing(format!("outer iteration {outer}")))?;
        let eta =
            (settings.forcing * residual / initial).clamp(settings.inner_min, settings.inner_max);
        // Drop the last inner report first: its history buffer is then free for the driver
        // to reuse, and the solve allocates nothing for it.
        drop(last_inner.take());
        let (op, rhs, delta) = eq.correction();
        let inner_report = match inner(op, rhs, delta, eta) {
            Ok(r) => r,
            // An inner solve that stopped short still improved on δ = 0 or left it: the
            // outer iteration judges the step by the true nonlinear residual.
            Err(e) if e.kind() == ErrorKind::NotConverged => match e.report() {
                Some(r) => r.clone(),
                None => return Err(e.while_doing(format!("outer iteration {outer}"))),
            },
            Err(e) => return Err(e.while_doing(format!("outer iteration {outer}"))),
        };
        report.inner_iterations += inner_report.iterations;
        // The step, halved while it raises the residual.
        scratch.copy_from_slice(x);
        let mut largest = 0.0f64;
        for (k, d) in eq.delta().iter().enumerate() {
            if !eq.is_fixed(k) {
                largest = largest.max(d.abs());
            }
        }
        let mut out = [0.0];
        space.combine_f64(&[largest], &[Combine::Max], &mut out);
        let largest = out[0];
        let mut length = if largest > settings.max_change {
            settings.max_change / largest
        } else {
            1.0
        };
        let mut new_residual;
        let mut halvings = 0;
        loop {
            for ((xk, x0), d) in x.iter_mut().zip(scratch.iter()).zip(eq.delta()) {
                *xk = x0 + length * d;
            }
            new_residual = norm(&*space, eq.residual(x));
            if new_residual <= residual || halvings >= settings.backtracking {
                break;
            }
            halvings += 1;
            length *= 0.5;
        }
        residual = new_residual;
        let change = length * largest;
        report.outer_iterations = outer;
        report.change = change;
        report.residual = residual;
        observer(&OuterStep {
            outer,
            inner_iterations: inner_report.iterations,
            inner_tolerance: eta,
            change,
            residual,
            step_length: length,
        });
        last_inner = Some(inner_report);
        if !residual.is_finite() {
            return Err(fail(
                "the residual is not finite",
                outer,
                change,
                residual,
                last_inner,
            ));
        }
        if change <= settings.change_tolerance && residual <= target {
            return Ok(report);
        }
    }
    Err(fail(
        "outer iteration limit reached",
        settings.max_outer,
        report.change,
        residual,
        last_inner,
    ))
}

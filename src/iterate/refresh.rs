//! When a recursively updated residual is replaced by the true one, and what that tells.
//!
//! Normally the two agree to a few digits and the replacement just removes drift (residual
//! replacement; van der Vorst & Ye, "Residual replacement strategies for Krylov subspace
//! iterative methods", SIAM J. Sci. Comput. 22, 2000). Once rounding limits the attainable
//! accuracy (about `ε·‖A‖·‖x‖`), the recursive residual keeps falling while the true one does
//! not; the two then differ by a large factor. Continuing the recursion from the replaced
//! residual would mix directions of two different residuals, so the method restarts, and if
//! the true residual has not improved since the last check, the solve stops with
//! [`StopReason::RoundingFloor`], or with [`StopReason::ResidualGrew`] when the true residual
//! is then above the initial one (the iteration ran away instead of levelling off).

use super::{Context, Method, Step};
use crate::monitor::Monitor;
use crate::report::StopReason;
use crate::scalar::{to_f64, Scalar};

/// True and recursive residual norms differing by more than this factor mean the recursion
/// has lost track (rounding floor or severe drift).
const DRIFT_FACTOR: f64 = 2.0;

/// The refresh schedule and the best true residual seen.
pub(super) struct Refresh {
    every: usize,
    since: usize,
    best_true: f64,
}

/// What [`Refresh::record`] found.
pub(super) struct Recorded<T> {
    /// `r·r` of the residual now in `r`.
    pub(super) rr: T,
    /// The monitor's verdict (on the true residual whenever one was computed).
    pub(super) verdict: Option<StopReason>,
    /// The recursive residual was replaced by a true one far from it: restart the recursion.
    pub(super) restart: bool,
}

impl Refresh {
    pub(super) fn new(every: usize) -> Refresh {
        Refresh {
            every,
            since: 0,
            best_true: f64::INFINITY,
        }
    }

    /// Record an iteration whose residual `step.rr` came from a recursive update (or, with
    /// `periodic` false, is an estimate for an iterate not formed yet). The true residual is
    /// recomputed into `cx.r` when the refresh period is due (`periodic` only), and whenever
    /// the rule wants to stop (so the verdict rests on the true residual); before that,
    /// `method` forms its iterate in `cx.x` ([`Method::form_iterate`]).
    pub(super) fn record<T: Scalar, M: Method<T> + ?Sized>(
        &mut self,
        method: &mut M,
        monitor: &mut Monitor<'_>,
        cx: &mut Context<'_, T>,
        step: Step<T>,
        periodic: bool,
    ) -> Recorded<T> {
        let rr = step.rr;
        self.since += 1;
        let due = periodic && self.every > 0 && self.since >= self.every;
        let verdict = monitor.record(rr, step.change);
        if !due && verdict.is_none() {
            return Recorded {
                rr,
                verdict,
                restart: false,
            };
        }
        self.since = 0;
        method.form_iterate(cx);
        let recursive = to_f64(rr).sqrt();
        let rr_true = cx.blocks.residual_free(cx.space, cx.op, cx.rhs, cx.x, cx.r);
        method.residual_replaced();
        let true_norm = to_f64(rr_true).sqrt();
        let mut verdict = monitor.revise(rr_true);
        let restart =
            !(true_norm <= DRIFT_FACTOR * recursive && recursive <= DRIFT_FACTOR * true_norm);
        let converged = verdict.is_some_and(|v| v.converged());
        if restart && !converged && true_norm >= self.best_true {
            // Stuck near what rounding allows, or run away above where the solve started.
            verdict = Some(if true_norm > monitor.initial_norm() {
                StopReason::ResidualGrew
            } else {
                StopReason::RoundingFloor
            });
        }
        self.best_true = self.best_true.min(true_norm);
        Recorded {
            rr: rr_true,
            verdict,
            restart,
        }
    }
}

//! Steepest descent with the exact line search.

use super::{begin, conclude, IterativeSolver, Refresh, Report, SolveOptions, Workspace};
use crate::stencil::Stencil5;
use crate::stop::{Progress, StopReason};
use crate::{is_positive, to_f64, Error, Monitor, Scalar};

/// Steepest descent for symmetric positive definite systems: `x ← x + α·r` with the exact
/// line search `α = (r·r)/(r·Ar)`.
///
/// Slow (its error falls by `(κ−1)/(κ+1)` per iteration in the energy norm), but the simplest
/// correct Krylov-type method and a useful baseline. Each iteration is one fused product
/// `q = A·r` (with `r·q` in the same pass) and one fused update of `x` and `r` (with the new
/// `r·r` in the same pass); that `r·r` gives both the next `α` and `‖r‖₂`.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(8, 8)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let mut x = vec![0.0; grid.cells()];
/// let report = SteepestDescent::default().solve(&op, &vec![1.0; grid.cells()], &mut x)?;
/// assert!(report.converged());
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug, Default)]
pub struct SteepestDescent {
    /// Stopping rule and residual refresh.
    pub options: SolveOptions,
}

impl SteepestDescent {
    /// Steepest descent with `options`.
    ///
    /// ```
    /// let sd = quintet::SteepestDescent::new(quintet::SolveOptions::default().max_iterations(50));
    /// assert_eq!(sd.options.tolerances.max_iterations, 50);
    /// ```
    pub fn new(options: SolveOptions) -> SteepestDescent {
        SteepestDescent { options }
    }
}

impl<T: Scalar> IterativeSolver<T> for SteepestDescent {
    fn solve_observed<S: Stencil5<T> + ?Sized>(
        &mut self,
        op: &S,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        let (kernels, [r, q, ..], history) = ws.parts(op.grid(), 2);
        let (bb, mut rr) = begin(op, rhs, x, kernels, r, q)?;
        let method = "steepest descent".to_string();
        let mut monitor = Monitor::start(self.options.stop_rule(), history, observer, bb, rr);
        if let Some(reason) = monitor.check() {
            return conclude(monitor.finish(method, reason));
        }
        let mut refresh = Refresh::new(self.options.residual_refresh);
        loop {
            let rq = kernels.apply_dot_free(op, r, q);
            if !is_positive(rq) {
                if !rq.is_finite() {
                    return conclude(monitor.finish(method, StopReason::NonFinite));
                }
                let iteration = monitor.iteration() + 1;
                let report = monitor.finish(method, StopReason::Breakdown);
                return Err(Error::NotPositiveDefinite {
                    iteration,
                    curvature: to_f64(rq),
                    report: Box::new(report),
                });
            }
            let alpha = rr / rq;
            let (rr_new, change) = kernels.descent_update(alpha, q, x, r);
            let recorded = refresh.record(&mut monitor, kernels, op, rhs, x, r, rr_new, change);
            rr = recorded.rr;
            if let Some(reason) = recorded.verdict {
                return conclude(monitor.finish(method, reason));
            }
        }
    }
}

//! The residual-correction loop shared by the standalone SIP and multigrid solvers:
//! `x ← x + α·M⁻¹(b − A·x)`, with residuals handed to the shared monitor and stop rules.
//!
//! With `energy_step` off, `α = 1` (the plain stationary iteration; the residual is recomputed
//! from `x` every step). With it on, `α = (r·z)/(z·Az)` minimises the energy norm of the error
//! along the correction `z` (preconditioned steepest descent): for an SPD `A` and an SPD `M`
//! every step reduces the error, whatever the spectrum of `M⁻¹A`; the residual is then
//! updated recursively and refreshed like the Krylov drivers' (`SolveOptions::residual_refresh`,
//! and always before convergence is declared).

use crate::kernels::{slice, zero_fixed};
use crate::solve::{begin, conclude, Refresh, Report, SolveOptions, Workspace};
use crate::stencil::Stencil5;
use crate::stop::{Progress, StopReason};
use crate::{is_positive, to_f64, Error, Monitor, Scalar};

/// Iterate `x ← x + α·step(b − A·x)` until `options`' rule stops. `step(r, z)` writes the
/// correction for residual `r` into `z`. Fixed cells never move (their correction is zeroed).
#[allow(clippy::too_many_arguments)]
pub(crate) fn correction_solve<T: Scalar, S: Stencil5<T> + ?Sized>(
    op: &S,
    rhs: &[T],
    x: &mut [T],
    ws: &mut Workspace<T>,
    observer: &mut dyn FnMut(&Progress<'_>),
    options: &SolveOptions,
    method: String,
    energy_step: bool,
    mut step: impl FnMut(&[T], &mut [T]),
) -> Result<Report, Error> {
    let (kernels, [r, z, q, ..], history) = ws.parts(op.grid(), 3);
    let (bb, rr) = begin(op, rhs, x, kernels, r, z)?;
    let fixed = op.fixed_cells();
    let all = 0..op.grid().cells();
    let mut monitor = Monitor::start(options.stop_rule(), history, observer, bb, rr);
    if let Some(reason) = monitor.check() {
        return conclude(monitor.finish(method, reason));
    }
    let mut refresh = Refresh::new(options.residual_refresh);
    loop {
        step(r, z);
        zero_fixed(fixed, &all, z);
        if energy_step {
            let rz = kernels.dot(r, z);
            let zq = kernels.apply_dot_free(op, z, q);
            if !(is_positive(rz) && is_positive(zq)) {
                let bad = if is_positive(rz) { zq } else { rz };
                if !bad.is_finite() {
                    return conclude(monitor.finish(method, StopReason::NonFinite));
                }
                let iteration = monitor.iteration() + 1;
                let report = Box::new(monitor.finish(method, StopReason::Breakdown));
                return Err(if is_positive(rz) {
                    Error::NotPositiveDefinite {
                        iteration,
                        curvature: to_f64(zq),
                        report,
                    }
                } else {
                    Error::PreconditionerNotPositive {
                        iteration,
                        value: to_f64(rz),
                        report,
                    }
                });
            }
            let (rr, change) = kernels.cg_update(rz / zq, z, q, x, r);
            let recorded = refresh.record(&mut monitor, kernels, op, rhs, x, r, rr, change);
            if let Some(reason) = recorded.verdict {
                return conclude(monitor.finish(method, reason));
            }
            continue;
        }
        let z: &[T] = z;
        let (_, change) = kernels.map_blocks(x, |_, cells, x| {
            let mut largest = T::zero();
            for (xi, &zi) in x.iter_mut().zip(slice(z, &cells)) {
                *xi = *xi + zi;
                largest = largest.max(zi.abs());
            }
            (T::zero(), largest)
        });
        let rr = kernels.residual_free(op, rhs, x, r);
        if let Some(reason) = monitor.record(rr, Some(change)) {
            return conclude(monitor.finish(method, reason));
        }
    }
}

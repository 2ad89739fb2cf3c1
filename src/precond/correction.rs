//! The residual-correction loop shared by the standalone SIP and multigrid solvers:
//! `x ← x + M⁻¹(b − A·x)`, with true residuals handed to the shared monitor and stop rules.

use crate::kernels::{slice, zero_fixed};
use crate::solve::{begin, conclude, Report, SolveOptions, Workspace};
use crate::stencil::Stencil5;
use crate::stop::Progress;
use crate::{Error, Monitor, Scalar};

/// Iterate `x ← x + step(b − A·x)` until `options`' rule stops. `step(r, z)` writes the
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
    mut step: impl FnMut(&[T], &mut [T]),
) -> Result<Report, Error> {
    let (kernels, [r, z, ..], history) = ws.parts(op.grid(), 2);
    let (bb, rr) = begin(op, rhs, x, kernels, r, z)?;
    let fixed = op.fixed_cells();
    let all = 0..op.grid().cells();
    let mut monitor = Monitor::start(options.stop_rule(), history, observer, bb, rr);
    if let Some(reason) = monitor.check() {
        return conclude(monitor.finish(method, reason));
    }
    loop {
        step(r, z);
        zero_fixed(fixed, &all, z);
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

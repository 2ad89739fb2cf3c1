//! Conjugate gradients, plain and preconditioned, as one driver.

use super::{begin, conclude, IterativeSolver, Refresh, Report, SolveOptions, Workspace};
use crate::kernels::{zero_fixed, Kernels};
use crate::precond::{Identity, Preconditioner};
use crate::stencil::Stencil5;
use crate::stop::{Progress, StopReason};
use crate::{is_positive, to_f64, Error, Monitor, Scalar};

/// Preconditioned conjugate gradients (Hestenes & Stiefel 1952) for symmetric positive definite
/// 5-point systems.
///
/// Each iteration costs one fused matrix–vector product (with `p·Ap` taken in the same pass),
/// one fused update of `x` and `r` (with `r·r` taken in the same pass), one preconditioner
/// application and the `r·z` product. `‖r‖₂` for the monitor comes from that `r·r`.
/// `p·Ap ≤ 0` stops the solve with [`Error::NotPositiveDefinite`] at the iteration it happens,
/// and `r·z ≤ 0` with [`Error::PreconditionerNotPositive`].
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(100, 100)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let rhs = vec![1e-3; grid.cells()];
/// let mut x = vec![0.0; grid.cells()];
/// let mut pcg = Pcg::new(Jacobi::new(&op)?);
/// let report = pcg.solve(&op, &rhs, &mut x)?;
/// assert_eq!(report.method, "PCG + Jacobi");
/// assert!(report.relative_residual() <= 1e-8);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Pcg<P> {
    /// The preconditioner `M⁻¹`.
    pub preconditioner: P,
    /// Stopping rule and residual refresh.
    pub options: SolveOptions,
}

/// Conjugate gradients without a preconditioner.
///
/// ```
/// use quintet::prelude::*;
/// let grid = Grid::new(16, 16)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let mut x = vec![0.0; grid.cells()];
/// let report = Cg::default().solve(&op, &vec![1.0; grid.cells()], &mut x)?;
/// assert_eq!(report.method, "CG");
/// # Ok::<(), quintet::Error>(())
/// ```
pub type Cg = Pcg<Identity>;

impl<P> Pcg<P> {
    /// PCG with `preconditioner` and default options.
    ///
    /// ```
    /// let pcg = quintet::Pcg::new(quintet::Identity);
    /// # let _ = pcg;
    /// ```
    pub fn new(preconditioner: P) -> Pcg<P> {
        Pcg {
            preconditioner,
            options: SolveOptions::default(),
        }
    }

    /// The same driver with `options`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let cg = Cg::default().with_options(SolveOptions::default().tolerance(1e-12));
    /// assert_eq!(cg.options.tolerances.relative, 1e-12);
    /// ```
    pub fn with_options(mut self, options: SolveOptions) -> Pcg<P> {
        self.options = options;
        self
    }
}

impl Default for Pcg<Identity> {
    fn default() -> Pcg<Identity> {
        Pcg::new(Identity)
    }
}

impl<T: Scalar, P: Preconditioner<T>> IterativeSolver<T> for Pcg<P> {
    fn solve_observed<S: Stencil5<T> + ?Sized>(
        &mut self,
        op: &S,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        let (kernels, [r, z, p, q], history) = ws.parts(op.grid(), 4);
        let (bb, mut rr) = begin(op, rhs, x, kernels, r, q)?;
        let pre = &mut self.preconditioner;
        let identity = pre.is_identity();
        let method = pcg_name(pre);
        let fixed = op.fixed_cells();
        let n = op.grid().cells();
        let all = 0..n;
        let mut monitor = Monitor::start(self.options.stop_rule(), history, observer, bb, rr);
        if let Some(reason) = monitor.check() {
            return conclude(monitor.finish(method, reason));
        }

        // z = M⁻¹ r, held at zero on fixed cells so they never move.
        let mut precondition = |r: &[T], z: &mut [T], kernels: &mut Kernels<T>| {
            pre.apply(r, z);
            zero_fixed(fixed, &all, z);
            kernels.dot(r, z)
        };
        let mut refresh = Refresh::new(self.options.residual_refresh);
        let mut rz_previous: Option<T> = None;

        loop {
            let rz = if identity {
                rr
            } else {
                precondition(r, z, kernels)
            };
            if !is_positive(rz) {
                let iteration = monitor.iteration();
                if !rz.is_finite() {
                    return conclude(monitor.finish(method, StopReason::NonFinite));
                }
                let report = monitor.finish(method, StopReason::Breakdown);
                return Err(Error::PreconditionerNotPositive {
                    iteration,
                    value: to_f64(rz),
                    report: Box::new(report),
                });
            }
            let direction = if identity { &*r } else { &*z };
            match rz_previous {
                None => p.copy_from_slice(direction),
                Some(previous) => kernels.direction_update(direction, rz / previous, p),
            }
            rz_previous = Some(rz);

            let pq = kernels.apply_dot_free(op, p, q);
            if !is_positive(pq) {
                if !pq.is_finite() {
                    return conclude(monitor.finish(method, StopReason::NonFinite));
                }
                let iteration = monitor.iteration() + 1;
                let report = monitor.finish(method, StopReason::Breakdown);
                return Err(Error::NotPositiveDefinite {
                    iteration,
                    curvature: to_f64(pq),
                    report: Box::new(report),
                });
            }
            let alpha = rz / pq;
            let (rr_new, change) = kernels.cg_update(alpha, p, q, x, r);
            let recorded = refresh.record(&mut monitor, kernels, op, rhs, x, r, rr_new, change);
            rr = recorded.rr;
            if let Some(reason) = recorded.verdict {
                return conclude(monitor.finish(method, reason));
            }
            if recorded.restart {
                rz_previous = None;
            }
        }
    }
}

/// The report name of PCG with `pre`: `"CG"` for the identity, `"PCG + <name>"` otherwise.
pub(crate) fn pcg_name<T: Scalar>(pre: &impl Preconditioner<T>) -> String {
    if pre.is_identity() {
        "CG".to_string()
    } else {
        format!("PCG + {}", pre.name())
    }
}

//! Conjugate gradients, plain and preconditioned, as one driver.

use crate::blocks::zero_fixed;
use crate::iterate::{conclude, run_to_end, Breakdown, Context, Method, Residual, Step, Task};
use crate::iterate::{IterativeSolver, NameCache, SolveOptions, Workspace};
use crate::precond::fused::{DirectionPass, UpdatePass};
use crate::precond::{Identity, Preconditioner};
use crate::scalar::is_positive;
use crate::{Error, ErrorKind, LinearOperator, Progress, Report, Scalar, StopReason};

/// Preconditioned conjugate gradients (Hestenes & Stiefel 1952) for symmetric positive definite
/// 5-point systems.
///
/// Each iteration costs one fused matrix–vector product (with `p·Ap` taken in the same pass),
/// one fused update of `x` and `r` (with `r·r` taken in the same pass), one preconditioner
/// application and the `r·z` product. `‖r‖₂` for the monitor comes from that `r·r`.
/// `p·Ap ≤ 0` stops the solve with
/// [`ErrorKind::NotPositiveDefinite`](crate::ErrorKind::NotPositiveDefinite) at the iteration it
/// happens, and `r·z ≤ 0` with
/// [`ErrorKind::PreconditionerNotPositive`](crate::ErrorKind::PreconditionerNotPositive). The
/// operator may be any [`LinearOperator`]; the preconditioner is checked against it before the
/// first iteration ([`Preconditioner::check`]).
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
    name: NameCache,
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
            name: NameCache::default(),
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

/// One PCG iteration: `z = M⁻¹r`, `p = z + β·p`, `q = A·p`, `x += α·p`, `r −= α·q`.
struct CgStep<'p, P: ?Sized, T> {
    pre: &'p mut P,
    identity: bool,
    rz_previous: Option<T>,
    /// The preconditioner holds `r` rounded by its fused update, unchanged since.
    rounded: bool,
}

impl<T: Scalar, P: Preconditioner<T> + ?Sized> CgStep<'_, P, T> {
    /// The rest of a PCG iteration once `p` (the second work vector) is the new direction and
    /// `rz = r·z`: `q = A·p` with `p·q` into the first work vector (`z`'s storage, dead by
    /// now), then `x += α·p`, `r −= α·q` with `r·r` (through the preconditioner if it fuses
    /// its own pass over `r` into that update).
    fn advance(&mut self, cx: &mut Context<'_, T>, rz: T) -> Result<Step<T>, Breakdown<T>> {
        let [q, p, ..] = cx.work else {
            unreachable!("two work vectors were declared")
        };
        let pq = cx.blocks.apply_dot_free(cx.space, cx.op, p, q);
        if !is_positive(pq) {
            return Err(Breakdown::Curvature(pq));
        }
        let alpha = rz / pq;
        let pass = UpdatePass {
            op: cx.op,
            space: cx.space,
            alpha,
            p,
            q,
            x: cx.x,
            r: cx.r,
        };
        let fused = if self.identity {
            None
        } else {
            self.pre.fused_update(pass)
        };
        self.rounded = fused.is_some();
        let (rr, change) = match fused {
            Some(update) => update,
            None => cx.blocks.cg_update(cx.space, alpha, p, q, cx.x, cx.r),
        };
        Ok(Step {
            rr,
            change: Some(change),
            residual: Residual::Updated,
        })
    }
}

impl<T: Scalar, P: Preconditioner<T> + ?Sized> Method<T> for CgStep<'_, P, T> {
    /// `z` and `p`: the product `q = A·p` goes into `z`'s storage, which is dead once `p` has
    /// taken its new direction (one vector less per cell than `z`, `p`, `q` apart).
    fn work_vectors(&self) -> usize {
        2
    }

    fn step(&mut self, cx: &mut Context<'_, T>, rr: T) -> Result<Step<T>, Breakdown<T>> {
        let [z, p, ..] = cx.work else {
            unreachable!("two work vectors were declared")
        };
        // A preconditioner that forms r·z and the direction from its own z (SinglePrecision:
        // z in f32) saves the passes below; the same bits.
        if !self.identity {
            let pass = DirectionPass {
                op: cx.op,
                space: cx.space,
                r: cx.r,
                rounded: self.rounded,
                previous: self.rz_previous,
                p,
            };
            self.rounded = false;
            if let Some(rz) = self.pre.fused_direction(pass) {
                if !is_positive(rz) {
                    return Err(Breakdown::Preconditioner(rz));
                }
                self.rz_previous = Some(rz);
                return self.advance(cx, rz);
            }
        }
        // z = M⁻¹ r, held at zero on fixed cells so they never move.
        let rz = if self.identity {
            rr
        } else {
            self.pre.apply(cx.op, cx.space, cx.r, z);
            zero_fixed(cx.op.fixed_cells(), &(0..cx.op.len()), z);
            cx.blocks.dot(cx.space, cx.r, z)
        };
        if !is_positive(rz) {
            return Err(Breakdown::Preconditioner(rz));
        }
        let direction: &[T] = if self.identity { cx.r } else { &z[..] };
        match self.rz_previous {
            None => p.copy_from_slice(direction),
            Some(previous) => cx
                .blocks
                .direction_update(cx.space, direction, rz / previous, p),
        }
        self.rz_previous = Some(rz);
        self.advance(cx, rz)
    }

    fn restart(&mut self) {
        self.rz_previous = None;
        self.rounded = false;
    }

    fn residual_replaced(&mut self) {
        self.rounded = false;
    }
}

impl<P> Pcg<P> {
    /// Solve to the end of the stopping rule: a report whatever the reason (`Err` only for bad
    /// input and breakdowns). For inner solves, whose non-convergence is expected.
    pub(crate) fn solve_to_end<T: Scalar>(
        &mut self,
        op: &dyn LinearOperator<T>,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
    ) -> Result<Report, Error>
    where
        P: Preconditioner<T>,
    {
        let options = self.options.clone();
        let observer = &mut |_: &Progress<'_>| {};
        let task = Task {
            op,
            rhs,
            x,
            ws,
            options: &options,
            observer,
        };
        self.iterate(task)
    }

    /// The PCG iteration on `task`, to the end of its rule.
    fn iterate<T: Scalar>(&mut self, task: Task<'_, T>) -> Result<Report, Error>
    where
        P: Preconditioner<T>,
    {
        self.preconditioner.check(task.op)?;
        let pre = &self.preconditioner;
        let name = self.name.get(pre.name(), || pcg_name(pre));
        let mut step = CgStep {
            identity: self.preconditioner.is_identity(),
            pre: &mut self.preconditioner,
            rz_previous: None,
            rounded: false,
        };
        run_to_end(&mut step, &name, task)
    }
}

impl<T: Scalar, P: Preconditioner<T>> IterativeSolver<T> for Pcg<P> {
    fn solve_observed(
        &mut self,
        op: &dyn LinearOperator<T>,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        let options = self.options.clone();
        let task = Task {
            op,
            rhs,
            x,
            ws,
            options: &options,
            observer,
        };
        self.iterate(task)
            .and_then(conclude)
            .map_err(suggest_symmetry_check)
    }

    fn options(&self) -> &SolveOptions {
        &self.options
    }

    fn options_mut(&mut self) -> &mut SolveOptions {
        &mut self.options
    }
}

/// What a CG failure that points at a non-SPD system suggests.
pub(crate) const SYMMETRY_HINT: &str = "CG needs a symmetric positive definite operator and preconditioner: check_symmetry(&op, 1e-12) names the first pair of cells whose couplings differ, and SolveOptions::check_symmetry makes the solve check it first";

/// What a PCG breakdown in the preconditioner suggests.
pub(crate) const PRECONDITIONER_HINT: &str = "PCG needs a preconditioner that is symmetric positive definite for this operator: Jacobi, SSOR, IC(0) and MIC(0) are by construction, the symmetrised SIP inverse is not on every operator; if the operator itself may be non-symmetric, check_symmetry(&op, 1e-12) names the first pair of cells whose couplings differ";

/// `e` with [`SYMMETRY_HINT`] if it is a failure a non-symmetric or indefinite system causes
/// (a breakdown, a residual that grew, stagnated or became non-finite), or with
/// [`PRECONDITIONER_HINT`] if the preconditioner broke down.
pub(crate) fn suggest_symmetry_check(e: Error) -> Error {
    let telling = match e.kind() {
        ErrorKind::PreconditionerNotPositive => return e.with_hint(PRECONDITIONER_HINT),
        ErrorKind::NotPositiveDefinite => true,
        ErrorKind::NotConverged => e.report().is_some_and(|r| {
            matches!(
                r.reason,
                StopReason::Stagnated | StopReason::ResidualGrew | StopReason::NonFinite
            )
        }),
        _ => false,
    };
    if telling {
        e.with_hint(SYMMETRY_HINT)
    } else {
        e
    }
}

/// The report name of PCG with `pre`: `"CG"` for the identity, `"PCG + <name>"` otherwise.
pub(crate) fn pcg_name<T: Scalar>(pre: &(impl Preconditioner<T> + ?Sized)) -> String {
    if pre.is_identity() {
        "CG".to_string()
    } else {
        format!("PCG + {}", pre.name())
    }
}

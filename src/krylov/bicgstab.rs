//! BiCGSTAB for general (non-symmetric) systems, right-preconditioned.

use crate::blocks::zero_fixed;
use crate::iterate::{run, Breakdown, Context, Method, Requires, Residual, Step, Task};
use crate::iterate::{IterativeSolver, NameCache, SolveOptions, Workspace};
use crate::precond::{Identity, Preconditioner};
use crate::{Error, ErrorKind, LinearOperator, Progress, Report, Scalar, StopReason};

/// BiCGSTAB (van der Vorst, "Bi-CGSTAB: a fast and smoothly converging variant of Bi-CG for
/// the solution of nonsymmetric linear systems", SIAM J. Sci. Stat. Comput. 13, 1992) for
/// non-symmetric 5-point systems: upwinded advection, one-sided couplings, any operator whose
/// couplings differ across a face.
///
/// **Which residual the rule sees.** The preconditioner is applied on the right
/// (`A·M⁻¹·u = b`, `x = M⁻¹·u`), so the residual the iteration updates, the monitor records
/// and the stop rule judges is the unpreconditioned `‖b − A·x‖₂` over the free cells, the
/// same quantity as for every other driver; convergence is confirmed on the true residual,
/// recomputed from `x`, before it is declared.
///
/// Each iteration costs two operator products (with `r̂·v`, and with `t·s` and `t·t`, in the
/// same passes), two preconditioner applications, the product `r̂·r`, the update of `s` (with
/// `s·s`) and one fused update of `x` and `r` (with `r·r` and the largest change): five
/// reductions and eight vectors of storage with the residual. The iteration asks nothing of symmetry, definiteness or the centers (a pure
/// no-flow system, singular whatever the method, is refused with
/// [`ErrorKind::Singular`](crate::ErrorKind::Singular)). When the residual `s` after the
/// first half of an iteration already meets the stop rule, the iteration ends there with
/// `x += α·p̂` (van der Vorst's early exit), which also avoids the `0/0` of a zero `s`.
///
/// **Lost bi-orthogonality.** In floating point the shadow product `r̂·r` can fall to
/// rounding level against `‖r̂‖·‖r‖` while the residual stagnates; the next recurrences then
/// rest on noise (a true-residual refresh at that point made the residual explode, measured
/// on upwind advection at 256²). When `|r̂·r| ≤ √ε·‖r̂‖·‖r‖` the iteration restarts with the
/// current residual as the new shadow residual (`r̂ = r`, `p = r`), which costs nothing extra.
///
/// **Breakdowns** end the solve with a typed error that keeps the iterate of the last
/// completed iteration in `x` and the history in [`Error::report`]:
/// [`ErrorKind::ShadowOrthogonal`](crate::ErrorKind::ShadowOrthogonal) when `r̂·r = 0` or
/// `r̂·A·p̂ = 0` exactly, [`ErrorKind::StabilisingStepZero`](crate::ErrorKind::StabilisingStepZero)
/// when `ω = 0`. A non-finite value stops with
/// [`StopReason::NonFinite`](crate::StopReason::NonFinite). [`Gmres`](crate::Gmres) cannot
/// break down these ways and is the usual second choice.
///
/// # Example
///
/// Diffusion with an upwinded flow towards the east (the couplings differ across each face):
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(40, 40)?;
/// let flow = 2.0; // cell Péclet number
/// let op = Banded5::from_fn(grid, |i, j| {
///     let mut c = Coeffs5::laplacian(grid, i, j);
///     c.center += flow;
///     if i > 0 {
///         c.west -= flow; // upwind: the west neighbour carries heat in
///     }
///     c
/// })?;
/// let rhs = vec![1.0; grid.cells()];
/// let mut x = vec![0.0; grid.cells()];
/// let report = BiCgStab::new(Jacobi::new(&op)?).solve(&op, &rhs, &mut x)?;
/// assert_eq!(report.method, "BiCGSTAB + Jacobi");
/// assert!(report.relative_residual() <= 1e-8);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct BiCgStab<P> {
    /// The preconditioner `M⁻¹`, applied on the right.
    pub preconditioner: P,
    /// Stopping rule and residual refresh.
    pub options: SolveOptions,
    name: NameCache,
}

impl<P> BiCgStab<P> {
    /// BiCGSTAB with `preconditioner` ([`Identity`] for none) and default options.
    ///
    /// ```
    /// let solver = quintet::BiCgStab::new(quintet::Identity);
    /// # let _ = solver;
    /// ```
    pub fn new(preconditioner: P) -> BiCgStab<P> {
        BiCgStab {
            preconditioner,
            options: SolveOptions::default(),
            name: NameCache::default(),
        }
    }

    /// The same driver with `options`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let solver = BiCgStab::default().with_options(SolveOptions::default().tolerance(1e-10));
    /// assert_eq!(solver.options.tolerances.relative, 1e-10);
    /// ```
    pub fn with_options(mut self, options: SolveOptions) -> BiCgStab<P> {
        self.options = options;
        self
    }
}

/// BiCGSTAB without a preconditioner.
///
/// ```
/// use quintet::prelude::*;
/// let grid = Grid::new(16, 16)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let mut x = vec![0.0; grid.cells()];
/// let report = BiCgStab::default().solve(&op, &vec![1.0; grid.cells()], &mut x)?;
/// assert_eq!(report.method, "BiCGSTAB");
/// # Ok::<(), quintet::Error>(())
/// ```
impl Default for BiCgStab<Identity> {
    fn default() -> BiCgStab<Identity> {
        BiCgStab::new(Identity)
    }
}

/// One BiCGSTAB iteration, right-preconditioned:
/// `ρ = r̂·r`, `p = r + β(p − ω·v)`, `p̂ = M⁻¹p`, `v = A·p̂`, `α = ρ/(r̂·v)`, `s = r − α·v`,
/// `ŝ = M⁻¹s`, `t = A·ŝ`, `ω = (t·s)/(t·t)`, `x += α·p̂ + ω·ŝ`, `r = s − ω·t`.
/// `s` is formed in place of `r`.
struct BiCgStabStep<'p, P: ?Sized, T> {
    pre: &'p mut P,
    identity: bool,
    /// Start the recursion afresh at the next step (`r̂ = r`, `p = r`): at the first step,
    /// after an early exit, and after the loop replaced a drifting residual.
    fresh: bool,
    /// `r̂·r̂` of the shadow residual in use.
    shadow_square: T,
    rho: T,
    alpha: T,
    omega: T,
}

/// Work vectors: `r̂`, `p`, `v`, `p̂`, `ŝ`, `t`.
const BICGSTAB_VECTORS: usize = 6;

impl<T: Scalar, P: Preconditioner<T> + ?Sized> Method<T> for BiCgStabStep<'_, P, T> {
    fn work_vectors(&self) -> usize {
        BICGSTAB_VECTORS
    }

    fn requires(&self) -> Requires {
        Requires::DeterminedLevel
    }

    fn step(&mut self, cx: &mut Context<'_, T>, rr: T) -> Result<Step<T>, Breakdown<T>> {
        self.step_or_finish(cx, rr, &mut |_| false)
    }

    fn step_or_finish(
        &mut self,
        cx: &mut Context<'_, T>,
        rr: T,
        meets: &mut dyn FnMut(T) -> bool,
    ) -> Result<Step<T>, Breakdown<T>> {
        let [shadow, p, v, p_hat, s_hat, t, ..] = cx.work else {
            unreachable!("six work vectors were declared")
        };
        let (space, op) = (cx.space, cx.op);
        let fixed = op.fixed_cells();
        let all = 0..op.len();
        let mut rho = if self.fresh {
            rr
        } else {
            cx.blocks.dot(space, shadow, cx.r)
        };
        if rho == T::zero() || !rho.is_finite() {
            return Err(Breakdown::Shadow(rho, "r̂·r"));
        }
        // A shadow residual numerically orthogonal to the residual (|r̂·r| below √ε·‖r̂‖·‖r‖,
        // where a rounding-level change of r, such as the loop's residual refresh, changes
        // r̂·r entirely) carries no direction any more: start afresh with r̂ = r.
        if !self.fresh && rho * rho <= T::epsilon() * self.shadow_square * rr {
            self.fresh = true;
            rho = rr;
        }
        if self.fresh {
            shadow.copy_from_slice(cx.r);
            self.shadow_square = rr;
        }
        if self.fresh {
            p.copy_from_slice(cx.r);
        } else {
            let beta = (rho / self.rho) * (self.alpha / self.omega);
            cx.blocks
                .bicg_direction(space, cx.r, beta, self.omega, v, p);
        }
        self.fresh = false;
        let p_hat: &[T] = if self.identity {
            &p[..]
        } else {
            self.pre.apply(op, space, p, p_hat);
            zero_fixed(fixed, &all, p_hat);
            &p_hat[..]
        };
        let shadow_v = cx.blocks.apply_free_dot(space, op, p_hat, v, shadow);
        if shadow_v == T::zero() || !shadow_v.is_finite() {
            return Err(Breakdown::Shadow(shadow_v, "r̂·A·p̂"));
        }
        let alpha = rho / shadow_v;
        // s = r − α·v, in place of r.
        let ss = cx.blocks.axpy_norm(space, -alpha, v, cx.r);
        if meets(ss) {
            let change = cx
                .blocks
                .add_two_largest(space, alpha, p_hat, T::zero(), p_hat, cx.x);
            self.fresh = true;
            return Ok(Step {
                rr: ss,
                change: Some(change),
                residual: Residual::Updated,
            });
        }
        if !self.identity {
            self.pre.apply(op, space, cx.r, s_hat);
            zero_fixed(fixed, &all, s_hat);
        }
        let s_hat: Option<&[T]> = (!self.identity).then_some(&s_hat[..]);
        let (ts, tt) = cx
            .blocks
            .apply_free_dot_norm(space, op, s_hat.unwrap_or(cx.r), t, cx.r);
        if !ts.is_finite() || !tt.is_finite() {
            return Err(Breakdown::Stabiliser(ts / tt));
        }
        let omega = if tt > T::zero() { ts / tt } else { T::zero() };
        if omega == T::zero() {
            return Err(Breakdown::Stabiliser(omega));
        }
        let (rr, change) = cx
            .blocks
            .bicgstab_update(space, alpha, p_hat, omega, s_hat, t, cx.x, cx.r);
        self.rho = rho;
        self.alpha = alpha;
        self.omega = omega;
        Ok(Step {
            rr,
            change: Some(change),
            residual: Residual::Updated,
        })
    }

    fn restart(&mut self) {
        self.fresh = true;
    }
}

impl<T: Scalar, P: Preconditioner<T>> IterativeSolver<T> for BiCgStab<P> {
    fn solve_observed(
        &mut self,
        op: &dyn LinearOperator<T>,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        self.preconditioner.check(op)?;
        let pre = &self.preconditioner;
        let name = self.name.get(pre.name(), || krylov_name("BiCGSTAB", pre));
        let task = Task {
            op,
            rhs,
            x,
            ws,
            options: &self.options,
            observer,
        };
        let mut step = BiCgStabStep {
            identity: self.preconditioner.is_identity(),
            pre: &mut self.preconditioner,
            fresh: true,
            shadow_square: T::one(),
            rho: T::one(),
            alpha: T::one(),
            omega: T::one(),
        };
        run(&mut step, &name, task).map_err(suggest_after_bicgstab)
    }

    fn options(&self) -> &SolveOptions {
        &self.options
    }

    fn options_mut(&mut self) -> &mut SolveOptions {
        &mut self.options
    }
}

/// What a BiCGSTAB breakdown, or a solve that went non-finite, suggests.
const BICGSTAB_HINT: &str = "Solving again from the iterate in x starts a fresh shadow residual, which often gets past the breakdown; GMRES (Gmres) cannot break down this way and its residual never grows; another preconditioner (Jacobi, SIP, ILU(0)) changes the iteration";

/// `e` with [`BICGSTAB_HINT`] if it is a breakdown or a non-finite stop.
fn suggest_after_bicgstab(e: Error) -> Error {
    let telling = match e.kind() {
        ErrorKind::ShadowOrthogonal | ErrorKind::StabilisingStepZero => true,
        ErrorKind::NotConverged => e
            .report()
            .is_some_and(|r| matches!(r.reason, StopReason::NonFinite | StopReason::Stagnated)),
        _ => false,
    };
    if telling {
        e.with_hint(BICGSTAB_HINT)
    } else {
        e
    }
}

/// The report name of a Krylov method `method` with `pre`: `method` alone for the identity,
/// `"<method> + <name>"` otherwise (as [`pcg_name`](super::pcg_name) does for PCG).
pub(crate) fn krylov_name<T: Scalar>(
    method: &str,
    pre: &(impl Preconditioner<T> + ?Sized),
) -> String {
    if pre.is_identity() {
        method.to_string()
    } else {
        format!("{method} + {}", pre.name())
    }
}

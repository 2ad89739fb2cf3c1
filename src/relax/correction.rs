//! The residual-correction iteration shared by the standalone SIP and multigrid solvers:
//! `x ← x + α·M⁻¹(b − A·x)`, as a method of the one loop.
//!
//! With `energy_step` off, `α = 1` (the plain stationary iteration; the residual is recomputed
//! from `x` every step). With it on, `α = (r·z)/(z·Az)` minimises the energy norm of the error
//! along the correction `z` (preconditioned steepest descent): for an SPD `A` and an SPD `M`
//! every step reduces the error, whatever the spectrum of `M⁻¹A`; the residual is then
//! updated recursively and refreshed like the Krylov drivers'
//! ([`SolveOptions::residual_refresh`](crate::SolveOptions::residual_refresh), and always before convergence is declared).

use crate::blocks::zero_fixed;
use crate::iterate::{run, Breakdown, Context, Method, Requires, Residual, Step, Task};
use crate::scalar::is_positive;
use crate::space::Space;
use crate::{Error, LinearOperator, MethodName, Report, Scalar};

/// One correction step; `correct(op, space, r, z)` writes `z = M⁻¹r`.
struct CorrectionStep<F> {
    energy_step: bool,
    requires: Requires,
    correct: F,
}

impl<T, F> Method<T> for CorrectionStep<F>
where
    T: Scalar,
    F: FnMut(&dyn LinearOperator<T>, &dyn Space, &[T], &mut [T]),
{
    fn work_vectors(&self) -> usize {
        2
    }

    fn requires(&self) -> Requires {
        self.requires
    }

    fn step(&mut self, cx: &mut Context<'_, T>, _rr: T) -> Result<Step<T>, Breakdown<T>> {
        let [z, q, ..] = cx.work else {
            unreachable!("two work vectors were declared")
        };
        (self.correct)(cx.op, cx.space, cx.r, z);
        zero_fixed(cx.op.fixed_cells(), &(0..cx.op.len()), z);
        if self.energy_step {
            let rz = cx.blocks.dot(cx.space, cx.r, z);
            let zq = cx.blocks.apply_dot_free(cx.space, cx.op, z, q);
            if !is_positive(rz) {
                return Err(Breakdown::Preconditioner(rz));
            }
            if !is_positive(zq) {
                return Err(Breakdown::Curvature(zq));
            }
            let (rr, change) = cx.blocks.cg_update(cx.space, rz / zq, z, q, cx.x, cx.r);
            return Ok(Step {
                rr,
                change: Some(change),
                residual: Residual::Updated,
            });
        }
        let change = cx.blocks.add_largest(cx.space, z, cx.x);
        let rr = cx.blocks.residual_free(cx.space, cx.op, cx.rhs, cx.x, cx.r);
        Ok(Step {
            rr,
            change: Some(change),
            residual: Residual::Recomputed,
        })
    }
}

/// Iterate `x ← x + α·correct(b − A·x)` until the task's rule stops. Fixed cells never move
/// (their correction is zeroed).
pub(crate) fn correction_solve<T: Scalar>(
    task: Task<'_, T>,
    name: &MethodName,
    energy_step: bool,
    requires: Requires,
    correct: impl FnMut(&dyn LinearOperator<T>, &dyn Space, &[T], &mut [T]),
) -> Result<Report, Error> {
    let mut step = CorrectionStep {
        energy_step,
        requires,
        correct,
    };
    run(&mut step, name, task)
}

//! Steepest descent with the exact line search.

use super::cg::suggest_symmetry_check;
use crate::iterate::{run, Breakdown, Context, Method, Residual, Step, Task};
use crate::iterate::{IterativeSolver, NameCache, SolveOptions, Workspace};
use crate::scalar::is_positive;
use crate::{Error, LinearOperator, Progress, Report, Scalar};

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
    name: NameCache,
}

impl SteepestDescent {
    /// Steepest descent with `options`.
    ///
    /// ```
    /// let sd = quintet::SteepestDescent::new(quintet::SolveOptions::default().max_iterations(50));
    /// assert_eq!(sd.options.tolerances.max_iterations, Some(50));
    /// ```
    pub fn new(options: SolveOptions) -> SteepestDescent {
        SteepestDescent {
            options,
            name: NameCache::default(),
        }
    }
}

/// One step: `q = A·r`, `α = r·r / r·q`, `x += α·r`, `r −= α·q`.
struct DescentStep;

impl<T: Scalar> Method<T> for DescentStep {
    fn work_vectors(&self) -> usize {
        1
    }

    fn step(&mut self, cx: &mut Context<'_, T>, rr: T) -> Result<Step<T>, Breakdown<T>> {
        let q = &mut cx.work[0];
        let rq = cx.blocks.apply_dot_free(cx.space, cx.op, cx.r, q);
        if !is_positive(rq) {
            return Err(Breakdown::Curvature(rq));
        }
        let (rr, change) = cx.blocks.descent_update(cx.space, rr / rq, q, cx.x, cx.r);
        Ok(Step {
            rr,
            change: Some(change),
            residual: Residual::Updated,
        })
    }
}

impl<T: Scalar> IterativeSolver<T> for SteepestDescent {
    fn solve_observed(
        &mut self,
        op: &dyn LinearOperator<T>,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        let name = self.name.get("", || "steepest descent".to_string());
        let task = Task {
            op,
            rhs,
            x,
            ws,
            options: &self.options,
            observer,
        };
        run(&mut DescentStep, &name, task).map_err(suggest_symmetry_check)
    }

    fn options(&self) -> &SolveOptions {
        &self.options
    }

    fn options_mut(&mut self) -> &mut SolveOptions {
        &mut self.options
    }
}

//! Mixed-precision iterative refinement: `f32` inner solves, `f64` residuals and updates.

use crate::blocks::slice;
use crate::iterate::{run, Breakdown, Context, Method, Residual, Step, Task};
use crate::iterate::{IterativeSolver, NameCache, SolveOptions, Workspace};
use crate::krylov::{pcg_name, Pcg};
use crate::operator::{check_shape, shape_of};
use crate::precond::Preconditioner;
use crate::stop::{AnyOf, IterationLimit, ResidualReduction, Stagnation};
use crate::{Error, LinearOperator, Progress, Report};

/// Iterative refinement with a single-precision inner solver: each outer step computes the
/// residual `r = b − A·x` in `f64`, solves `A·d ≈ r` with PCG on an `f32` copy of the operator
/// (half the bytes per iteration, and these kernels are paid in bytes), and updates `x += d`
/// in `f64`. The outer residual is always a true `f64` residual, so the solve reaches `f64`
/// accuracy (relative residual 10⁻¹² and below) although the inner work runs in `f32`
/// (Wilkinson 1963; Moler, "Iterative refinement in floating point", J. ACM 14, 1967).
///
/// Each inner solve starts from `d = 0` and stops by the inner solver's own options. The inner
/// solve cannot reduce its residual below the `f32` rounding floor, about `ε_f32·‖A‖·‖d‖/‖r‖`
/// (10⁻⁴ to 10⁻³ for a moderately conditioned grid problem), so give it a rule that also stops
/// on stagnation: [`MixedRefinement::with_preconditioner`] builds the inner PCG with one
/// ([`inner_rule`](MixedRefinement::inner_rule): a reduction of 10⁻⁴, or no 1 % progress
/// over 50 iterations, or 2000 iterations). An inner solve that stops short still contributes
/// its iterate; refinement only needs each one to cut the error by a good factor. The outer
/// stop rule is [`MixedRefinement::options`]; it defaults to a relative tolerance of 10⁻¹² and
/// at most 100 outer steps.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(96, 96)?;
/// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let single = op.cast::<f32>()?;
/// let jacobi = Jacobi::new(&single)?;
/// let mut solver = MixedRefinement::with_preconditioner(single, jacobi)?;
/// let rhs = vec![1.0; grid.cells()];
/// let mut x = vec![0.0; grid.cells()];
/// let report = solver.solve(&op, &rhs, &mut x)?;
/// assert!(report.relative_residual() <= 1e-12);
/// assert!(solver.inner_iterations() > report.iterations);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct MixedRefinement<S, P> {
    low: S,
    inner: Pcg<P>,
    /// Outer stopping rule (on `f64` true residuals).
    pub options: SolveOptions,
    workspace: Workspace<f32>,
    residual: Vec<f32>,
    correction: Vec<f32>,
    inner_iterations: usize,
    name: NameCache,
}

impl<S: LinearOperator<f32>, P: Preconditioner<f32>> MixedRefinement<S, P> {
    /// Refinement with `low`, the operator in `f32` (see
    /// [`Banded5::cast`](crate::Banded5::cast)), and `inner`, the `f32` PCG solver for the
    /// corrections.
    ///
    /// # Errors
    ///
    /// None at present; reserved for settings checks.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(8, 8)?;
    /// let single: Banded5<f32> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j).cast())?;
    /// let solver = MixedRefinement::new(single, Cg::default())?;
    /// assert_eq!(solver.options.tolerances.relative, 1e-12);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(low: S, inner: Pcg<P>) -> Result<MixedRefinement<S, P>, Error> {
        Ok(MixedRefinement {
            low,
            inner,
            options: SolveOptions::default().tolerance(1e-12).max_iterations(100),
            workspace: Workspace::new(),
            residual: Vec::new(),
            correction: Vec::new(),
            inner_iterations: 0,
            name: NameCache::default(),
        })
    }

    /// Refinement with `low` and an inner PCG with `preconditioner` that stops by
    /// [`MixedRefinement::inner_rule`].
    ///
    /// # Errors
    ///
    /// None at present; reserved for settings checks.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(8, 8)?;
    /// let single: Banded5<f32> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j).cast())?;
    /// let solver = MixedRefinement::with_preconditioner(single, Identity)?;
    /// # let _ = solver;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn with_preconditioner(low: S, preconditioner: P) -> Result<MixedRefinement<S, P>, Error> {
        let inner = Pcg::new(preconditioner)
            .with_options(SolveOptions::default().stop_when(MixedRefinement::<S, P>::inner_rule()));
        MixedRefinement::new(low, inner)
    }

    /// The inner stop rule [`MixedRefinement::with_preconditioner`] uses: residual reduced
    /// 10⁻⁴-fold, or less than 1 % progress over 50 iterations (the `f32` floor), or 2000
    /// iterations.
    ///
    /// ```
    /// use quintet::{prelude::*, MixedRefinement};
    /// let rule = MixedRefinement::<Banded5<f32>, Identity>::inner_rule();
    /// assert_eq!(rule.iteration_bound(100), Some(2000));
    /// ```
    pub fn inner_rule() -> AnyOf {
        AnyOf::new()
            .or(ResidualReduction(1e-4))
            .or(Stagnation {
                window: 50,
                min_reduction: 0.01,
            })
            .or(IterationLimit(2000))
    }

    /// Total inner (`f32`) iterations of the last solve.
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// # let grid = Grid::new(8, 8)?;
    /// # let single: Banded5<f32> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j).cast())?;
    /// let solver = MixedRefinement::new(single, Cg::default())?;
    /// assert_eq!(solver.inner_iterations(), 0); // nothing solved yet
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn inner_iterations(&self) -> usize {
        self.inner_iterations
    }
}

/// One refinement step: `d ≈ A⁻¹r` in `f32`, `x += d` in `f64`, then the true `f64` residual.
struct RefineStep<'a, S, P> {
    low: &'a S,
    inner: &'a mut Pcg<P>,
    workspace: &'a mut Workspace<f32>,
    residual: &'a mut [f32],
    correction: &'a mut [f32],
    inner_iterations: &'a mut usize,
}

impl<S: LinearOperator<f32>, P: Preconditioner<f32>> Method<f64> for RefineStep<'_, S, P> {
    fn work_vectors(&self) -> usize {
        1
    }

    fn step(&mut self, cx: &mut Context<'_, f64>, _rr: f64) -> Result<Step<f64>, Breakdown<f64>> {
        for (low, &high) in self.residual.iter_mut().zip(cx.r.iter()) {
            *low = high as f32;
        }
        self.correction.fill(0.0);
        let inner =
            self.inner
                .solve_to_end(self.low, self.residual, self.correction, self.workspace);
        match inner {
            // An inner solve that stops short still contributes its iterate.
            Ok(report) => *self.inner_iterations += report.iterations,
            Err(e) => return Err(Breakdown::Failed(e.while_doing("the f32 inner solve"))),
        }
        if let Some(fixed) = cx.op.fixed_cells() {
            for &k in fixed.cells() {
                self.correction[k] = 0.0;
            }
        }
        let d: &[f32] = self.correction;
        let (_, change) = cx.blocks.map(cx.space, cx.x, |cells, x| {
            let mut largest = 0.0f64;
            for (xk, &dk) in x.iter_mut().zip(slice(d, &cells)) {
                let d = f64::from(dk);
                *xk += d;
                largest = largest.max(d.abs());
            }
            (0.0, largest)
        });
        let rr = cx.blocks.residual_free(cx.space, cx.op, cx.rhs, cx.x, cx.r);
        Ok(Step {
            rr,
            change: Some(change),
            residual: Residual::Recomputed,
        })
    }
}

impl<S: LinearOperator<f32>, P: Preconditioner<f32>> IterativeSolver<f64>
    for MixedRefinement<S, P>
{
    /// # Errors
    ///
    /// [`ErrorKind::GridMismatch`](crate::ErrorKind::GridMismatch) if `op` does not have the shape of the `f32` operator, an
    /// error of the inner solve other than non-convergence, and otherwise as for every
    /// [`IterativeSolver`].
    fn solve_observed(
        &mut self,
        op: &dyn LinearOperator<f64>,
        rhs: &[f64],
        x: &mut [f64],
        ws: &mut Workspace<f64>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        check_shape("the f32 operator", shape_of(op), shape_of(&self.low))?;
        let n = op.len();
        self.residual.resize(n, 0.0);
        self.correction.resize(n, 0.0);
        self.inner_iterations = 0;
        self.workspace.space = ws.space.clone();
        let inner = &self.inner.preconditioner;
        let name = self.name.get(inner.name(), || {
            format!("mixed-precision refinement (f32 {})", pcg_name(inner))
        });
        let mut step = RefineStep {
            low: &self.low,
            inner: &mut self.inner,
            workspace: &mut self.workspace,
            residual: &mut self.residual,
            correction: &mut self.correction,
            inner_iterations: &mut self.inner_iterations,
        };
        run(
            &mut step,
            &name,
            Task {
                op,
                rhs,
                x,
                ws,
                options: &self.options,
                observer,
            },
        )
    }

    fn options(&self) -> &SolveOptions {
        &self.options
    }

    fn options_mut(&mut self) -> &mut SolveOptions {
        &mut self.options
    }
}

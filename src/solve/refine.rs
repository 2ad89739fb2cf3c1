//! Mixed-precision iterative refinement: `f32` inner solves, `f64` residuals and updates.

use super::cg::pcg_name;
use super::{begin, conclude, IterativeSolver, Pcg, Report, SolveOptions, Workspace};
use crate::precond::Preconditioner;
use crate::stencil::{check_grid, Stencil5};
use crate::stop::{AnyOf, IterationLimit, Progress, ResidualReduction, Stagnation};
use crate::{Error, Monitor};

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
}

impl<S: Stencil5<f32>, P: Preconditioner<f32>> MixedRefinement<S, P> {
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
    /// let single: Banded5<f32> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
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
    /// let single: Banded5<f32> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
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
    /// assert_eq!(rule.iteration_bound(), Some(2000));
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
    /// # let single: Banded5<f32> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let solver = MixedRefinement::new(single, Cg::default())?;
    /// assert_eq!(solver.inner_iterations(), 0); // nothing solved yet
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn inner_iterations(&self) -> usize {
        self.inner_iterations
    }
}

impl<S: Stencil5<f32>, P: Preconditioner<f32>> IterativeSolver<f64> for MixedRefinement<S, P> {
    fn solve_observed<A: Stencil5<f64> + ?Sized>(
        &mut self,
        op: &A,
        rhs: &[f64],
        x: &mut [f64],
        ws: &mut Workspace<f64>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        let grid = op.grid();
        check_grid(grid, self.low.grid())?;
        let (kernels, [r, scratch, ..], history) = ws.parts(grid, 2);
        let (bb, rr) = begin(op, rhs, x, kernels, r, scratch)?;
        let n = grid.cells();
        self.residual.resize(n, 0.0);
        self.correction.resize(n, 0.0);
        self.inner_iterations = 0;
        let method = format!(
            "mixed-precision refinement (f32 {})",
            pcg_name(&self.inner.preconditioner)
        );
        let fixed = op.fixed_cells();
        let mut monitor = Monitor::start(self.options.stop_rule(), history, observer, bb, rr);
        if let Some(reason) = monitor.check() {
            return conclude(monitor.finish(method, reason));
        }
        loop {
            for (low, &high) in self.residual.iter_mut().zip(r.iter()) {
                *low = high as f32;
            }
            self.correction.fill(0.0);
            let inner = self.inner.solve_with(
                &self.low,
                &self.residual,
                &mut self.correction,
                &mut self.workspace,
            );
            match inner {
                Ok(report) => self.inner_iterations += report.iterations,
                Err(Error::NotConverged { report }) => self.inner_iterations += report.iterations,
                Err(other) => return Err(other),
            }
            if let Some(fixed) = fixed {
                for &k in fixed.cells() {
                    self.correction[k] = 0.0;
                }
            }
            let mut change = 0.0f64;
            for (xk, &dk) in x.iter_mut().zip(&self.correction) {
                let d = f64::from(dk);
                *xk += d;
                change = change.max(d.abs());
            }
            let rr = kernels.residual_free(op, rhs, x, r);
            if let Some(reason) = monitor.record(rr, Some(change)) {
                return conclude(monitor.finish(method, reason));
            }
        }
    }
}

//! # quintet
//!
//! Matrix-free iterative solvers for 5-point stencil systems `A·φ = q` on structured 2-D grids:
//! steady and transient heat conduction, confined-aquifer heads, and any other diffusion-type
//! model you discretise yourself.
//!
//! ## Overview
//!
//! You describe the operator; quintet never assembles a sparse matrix.
//!
//! * [`Grid`]: `nx × ny` cells, cell `k = i + nx·j`, `i` east, `j` north.
//! * [`Stencil5`]: the operator trait (center, west, east, south, north coefficients of a
//!   cell). Implemented by [`Banded5`] (your five coefficient arrays) and [`ClosureStencil`]
//!   (a closure computing a cell's coefficients on the fly), or by your own type.
//! * [`FixedCells`]: fixed-value (Dirichlet) cells kept in the grid, as finite-difference codes
//!   do; their values stay as given and their residual is exactly zero.
//! * Drivers behind one trait, [`IterativeSolver`]: [`SteepestDescent`], [`Pcg`] / [`Cg`]
//!   and [`Sor`] (lexicographic or red-black; Gauss–Seidel at ω = 1).
//! * [`Preconditioner`]s for PCG: [`Identity`], [`Jacobi`], [`Ssor`], [`IncompleteCholesky`]
//!   (IC(0) and MIC(0)), Stone's [`Sip`] and the geometric [`Multigrid`] V-cycle; [`Sip`] and
//!   [`Multigrid`] also run as standalone solvers.
//! * One [`Monitor`], one set of stopping rules ([`stop`]), one [`Report`].
//!
//! ```
//! use quintet::prelude::*;
//!
//! // Steady conduction in a square plate: edges held at 0 (fixed cells), uniform heating.
//! let grid = Grid::new(128, 128)?;
//! let fixed = FixedCells::new(grid, grid.edge_cells())?;
//! let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?.with_fixed(fixed)?;
//! let rhs = vec![1.0; grid.cells()];
//! let mut x = vec![0.0; grid.cells()];
//!
//! let mut pcg = Pcg::new(Jacobi::new(&op)?);
//! let report = pcg.solve(&op, &rhs, &mut x)?;
//! assert!(report.converged() && report.relative_residual() <= 1e-8);
//! assert_eq!(x[0], 0.0); // fixed cells keep their value
//! # Ok::<(), quintet::Error>(())
//! ```
//!
//! ## Choosing a solver
//!
//! | your system | use | why |
//! |---|---|---|
//! | symmetric, positive centers, non-positive couplings (diffusion) | [`Pcg`] with [`Jacobi`] | robust default; Jacobi evens out jumping coefficients |
//! | diffusion, large grid (10⁵ cells and up), jumping coefficients | [`Pcg`] with [`Multigrid`] | iteration count independent of the grid size: 6 on Poisson, 13–20 at contrast 10⁴ (9–10 with [`CoarseOperator::LumpedGalerkin`]) |
//! | diffusion, moderate grid, little memory to spare | [`Pcg`] with [`IncompleteCholesky::mic0`] | iterations grow like `h^{-1/2}`; three arrays of storage |
//! | diffusion, classic workhorse | [`Pcg`] with [`IncompleteCholesky::ic0`] or [`Ssor`] | IC(0): a third of CG's iterations, growth still `h⁻¹`; SSOR with ω ≈ 2/(1 + πh): growth `h^{-1/2}` |
//! | not symmetric, positive centers, an ILU-type iteration | [`Sip`] standalone | Stone's method; as a PCG preconditioner only for mild contrasts (see its docs) |
//! | symmetric, small grid or a quick check | [`Cg`] | no setup at all |
//! | not symmetric, or you need a smoother | [`Sor`] with [`estimate_relaxation`] | needs positive centers only |
//! | teaching, baselines | [`SteepestDescent`] | simplest correct method; slow |
//!
//! CG's iteration count grows like `h⁻¹` (the square root of the condition number); SOR with
//! the optimal ω also like `h⁻¹`, at a lower cost per sweep but a larger constant; Gauss–Seidel
//! and steepest descent like `h⁻²`.
//!
//! ## Stopping rules
//!
//! By default a solve stops when `‖r‖₂ ≤ 10⁻⁸·‖b‖₂`, where `b` is the right-hand side of the
//! free cells (fixed neighbours' contributions moved to it), and gives up after 10 000
//! iterations or when the residual grows 10⁸-fold ([`Tolerances`]). Replace the rule with
//! [`SolveOptions::stop_when`]; build rules from [`stop`]'s built-ins (absolute, relative,
//! reduction from the initial residual, largest solution change, iteration limit, stagnation,
//! divergence) and their [`AnyOf`](stop::AnyOf) / [`AllOf`](stop::AllOf) combinators, or a
//! closure. Convergence is always confirmed on the true residual `b − A·x`, never only on a
//! recursively updated one; a solve that does not converge returns an error carrying its
//! [`Report`], with the last iterate left in `x`.
//!
//! ## Performance
//!
//! The kernels are memory-bound: a banded matrix–vector product moves about 56 bytes per cell
//! (`f64`), a CG iteration about 128. Products and updates are fused with the dot products the
//! iteration needs, and reductions run over fixed blocks summed in a fixed order, so results
//! are bit-identical for any number of threads.
//!
//! ## Feature flags
//!
//! * `parallel` (default): kernels run on rayon's thread pool for grids of at least
//!   [`kernels::PARALLEL_MIN_CELLS`] cells. Set the thread count with `RAYON_NUM_THREADS` or a
//!   rayon pool; results do not depend on it.
//!
//! ## Models
//!
//! [`model`] turns a conduction or confined groundwater model into a system for these drivers:
//! geometry (uniform or variable spacing, cell- or node-centred), per-cell conductivity
//! (isotropic or anisotropic, harmonic-mean face conductances), inactive cells, prescribed
//! values, fluxes, exchange boundaries, wells and distributed sources, in SI units. It checks
//! for singular (floating) problems, reports a flow budget with its percent discrepancy, and
//! steps transient models by backward Euler or Crank–Nicolson.
//!
//! ## Caution
//!
//! Results support, and do not replace, engineering judgement. Check every model against field
//! data and hand calculations, and design wells, structures and equipment to local codes and
//! licensed professional practice.

#![deny(missing_docs)]
#![forbid(unsafe_code)]

mod error;
mod grid;
pub mod kernels;
pub mod model;
mod monitor;
pub mod precond;
pub mod solve;
pub mod stencil;
pub mod stop;

pub use error::Error;
pub use grid::{Grid, Side};
pub use monitor::Monitor;
pub use precond::{
    CoarseOperator, FactorSettings, Identity, IncompleteCholesky, Jacobi, Multigrid,
    MultigridSettings, Preconditioner, Sip, SipSettings, Ssor, WeakPivot,
};
pub use solve::{
    estimate_relaxation, Cg, IterativeSolver, MixedRefinement, Pcg, RelaxationEstimate, Report,
    SolveOptions, Sor, SteepestDescent, SweepOrder, Workspace,
};
pub use stencil::{
    check_symmetry, Banded5, ClosureStencil, Coeffs5, FixedCells, Stencil5, Symmetric5,
};
pub use stop::{Progress, StopReason, StopRule, Tolerances};

/// The floating-point types quintet works in (`f64` and `f32`).
///
/// ```
/// fn takes<T: quintet::Scalar>(_: T) {}
/// takes(1.0_f32);
/// takes(1.0_f64);
/// ```
pub trait Scalar: num_traits::Float + Send + Sync + std::fmt::Debug + 'static {}

impl<T: num_traits::Float + Send + Sync + std::fmt::Debug + 'static> Scalar for T {}

/// Whether `v > 0` (false for NaN).
#[inline]
pub(crate) fn is_positive<T: Scalar>(v: T) -> bool {
    v > T::zero()
}

/// `v` as `f64` (NaN if it cannot be represented).
#[inline]
pub(crate) fn to_f64<T: Scalar>(v: T) -> f64 {
    v.to_f64().unwrap_or(f64::NAN)
}

/// Everything a typical caller needs, in one `use`.
///
/// ```
/// use quintet::prelude::*;
/// let grid = Grid::new(4, 4)?;
/// # let _ = grid;
/// # Ok::<(), quintet::Error>(())
/// ```
pub mod prelude {
    pub use crate::{
        check_symmetry, estimate_relaxation, Banded5, Cg, ClosureStencil, CoarseOperator, Coeffs5,
        Error, FactorSettings, FixedCells, Grid, Identity, IncompleteCholesky, IterativeSolver,
        Jacobi, MixedRefinement, Multigrid, MultigridSettings, Pcg, Preconditioner, Progress,
        Report, Side, Sip, SipSettings, SolveOptions, Sor, Ssor, SteepestDescent, Stencil5,
        StopReason, StopRule, SweepOrder, Symmetric5, Tolerances, WeakPivot, Workspace,
    };
}

/// The README's code blocks, compiled and run as doctests.
#[doc = include_str!("../README.md")]
#[cfg(doctest)]
pub struct ReadmeDoctests;

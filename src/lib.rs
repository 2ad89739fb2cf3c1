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
//! * Drivers behind one trait, [`IterativeSolver`]: [`SteepestDescent`], [`Pcg`] / [`Cg`],
//!   [`Sor`] (lexicographic or red-black; Gauss–Seidel at ω = 1) and [`MixedRefinement`]
//!   (`f32` inner solves, `f64` accuracy).
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
//! Three things decide: whether the operator is symmetric, how far the coefficients jump
//! between neighbouring cells, and how many cells there are. A model assembled by
//! [`model`] is always symmetric (harmonic-mean face conductances stored on both sides).
//!
//! | symmetric? | coefficient contrast | cells | use | why |
//! |---|---|---|---|---|
//! | yes | any | up to 10⁴ | [`Pcg`] + [`Jacobi`], or [`Cg`] | a few hundred iterations at most; nothing to set up or tune |
//! | yes | any | 10⁴–10⁶ | [`Pcg`] + [`IncompleteCholesky::mic0`] | about 55 iterations at 128² whether the coefficients jump or not; three arrays of storage; iterations grow like `h^{-1/2}` |
//! | yes | large (10² and up: clay in sand, copper beside an air gap) | 10⁵–10⁷ | [`Pcg`] + [`Multigrid`] | 6–7 iterations at 128², and a count that does not grow with the grid (6 on Poisson at every size to 2048², 13–20 on a contrast-10⁴ field, see [`Multigrid`]) |
//! | yes | small (up to about 10) | 10⁴–10⁷ | [`Pcg`] + [`Ssor`] (ω from the Jacobi radius that [`estimate_relaxation`] finds) or [`IncompleteCholesky::ic0`] | cheap setup; SSOR's count grows like `h^{-1/2}`, IC(0)'s like `h⁻¹` at a third of CG's |
//! | yes | any | any, memory very tight | [`Pcg`] + [`Jacobi`] | one extra array; the diagonal scaling absorbs much of the contrast (554 iterations against plain CG's 3 960 at contrast 10⁴) |
//! | yes | any | 10⁶ and up, bandwidth-bound | [`Pcg`] + [`SinglePrecision`]`<`[`Multigrid`]`>` | the V-cycle on an `f32` copy moves half the bytes; Krylov vectors and residuals stay `f64` (1.3–1.4× faster to 10⁻⁸ at 1000²–2000² than the `f64` V-cycle, measured) |
//! | yes | any | 10⁶ and up, to 10⁻¹² | [`MixedRefinement`] | `f32` inner solves move half the bytes, the `f64` outer residual keeps `f64` accuracy (1.4–1.6× faster than `f64`, measured at 1000²) |
//! | no (upwinded advection, one-sided couplings) | any | any | [`Sor`] with [`estimate_relaxation`], or [`Sip`] on its own | both need positive centers only; SOR converges for ω ≤ 1 on diagonally dominant rows (larger ω is usually faster: check the report); red-black SOR parallelises |
//! | yes | small only | any | [`Pcg`] + [`Sip`] | the symmetrised Stone factor; at contrast 10⁴ it is not positive definite and PCG stops with [`ErrorKind::PreconditionerNotPositive`] |
//! | either | — | — | [`Sor::gauss_seidel`] | a smoother, not a solver: iterations grow like `1/h²` |
//! | yes | — | small | [`SteepestDescent`] | teaching and baselines; iterations grow like `1/h²` |
//!
//! Measured with `cargo run --release --example solver_comparison` on 128 × 128 cells, to a
//! relative residual of 10⁻⁸ from the same start (`--problem poisson` / the default
//! `lenses`, an aquifer with clay blocks at contrast 10⁴): CG 237 / 3 960 iterations, PCG with
//! Jacobi 237 / 554, SSOR 49 / 128, IC(0) 99 / 165, MIC(0) 54 / 56, multigrid 6 / 7, SOR with
//! the estimated ω about 500 / 530, standalone SIP 1 643 / 1 525; Gauss–Seidel needs about
//! 30 000 / 28 000 and steepest descent 61 442 / more than 200 000.
//!
//! ## Stopping rules
//!
//! By default a solve stops when `‖r‖₂ ≤ 10⁻⁸·‖b‖₂`, where `b` is the right-hand side of the
//! free cells (fixed neighbours' contributions moved to it), and gives up after 10 000
//! iterations or when the residual grows 10⁸-fold ([`Tolerances`]). Replace the rule with
//! [`SolveOptions::stop_when`]; build rules from [`stop`]'s built-ins (absolute, relative,
//! reduction from the initial residual, largest solution change, iteration limit, stagnation,
//! divergence) and their [`AnyOf`](stop::AnyOf) / [`AllOf`](stop::AllOf) combinators, a
//! closure ([`RuleFn`](stop::RuleFn)), or your own type implementing [`StopRule`].
//! Convergence is always confirmed on the true residual `b − A·x`, never only on a
//! recursively updated one. Rounding limits how small the true residual can get (about
//! `ε·‖A‖·‖x‖`; at 1000² cells of the Poisson problem in `f64`, 1.5·10⁻¹¹ relative, measured): when
//! the true residual stops falling while the recursive one goes on, the drivers stop with
//! [`StopReason::RoundingFloor`] rather than iterate to the limit. A solve that does not
//! converge returns an error carrying its [`Report`], with the last iterate left in `x`. To
//! watch a solve as it runs (a log line, a
//! progress bar), pass an observer to
//! [`IterativeSolver::solve_observed`]: it sees the same [`Progress`] the rule does.
//!
//! ```
//! use quintet::prelude::*;
//! use quintet::stop::{AllOf, RelativeResidual, SolutionChange};
//!
//! let grid = Grid::new(64, 64)?;
//! let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
//! // Converged when the residual is small *and* no value moved by more than 1e-9 in the
//! // last iteration.
//! let rule = AllOf::new().and(RelativeResidual(1e-8)).and(SolutionChange(1e-9));
//! let mut pcg = Pcg::new(Jacobi::new(&op)?).with_options(SolveOptions::default().stop_when(rule));
//! let mut x = vec![0.0; grid.cells()];
//! let mut last = 0;
//! let report = pcg.solve_observed(&op, &vec![1.0; grid.cells()], &mut x, &mut Workspace::new(), &mut |p| {
//!     last = p.iteration;
//! })?;
//! assert!(report.converged() && last == report.iterations);
//! # Ok::<(), quintet::Error>(())
//! ```
//!
//! ## Performance
//!
//! The kernels are memory-bound: a banded matrix–vector product moves about 56 bytes per cell
//! (`f64`), a CG iteration about 128. Products and updates are fused with the dot products the
//! iteration needs, and reductions run over fixed blocks summed in a fixed order, so results
//! are bit-identical for any number of threads. The performance report
//! (`cargo run --release -p quintet-bench --example perf_report`) measures ratios inside one
//! run; on a shared 2-core AMD EPYC virtual machine (2026-12-01, README for the full table):
//!
//! | figure | measured |
//! |---|---|
//! | banded matrix–vector product, model bytes ÷ triad bandwidth | 0.71–0.88 |
//! | one CG iteration ÷ triad bandwidth | 1.01 |
//! | CG over a general-purpose CSR matrix ÷ ours, one thread | 1.93 (2.25 with [`Symmetric5`]) |
//! | sparse direct Cholesky (factor + solve) ÷ MG-PCG to 10⁻⁸, 1000² / 2000² | 8.7 / 11.7 |
//! | peak memory, sparse direct ÷ MG-PCG, 1500² | 6.1 |
//! | mixed precision ([`MixedRefinement`]) ÷ f64, to 10⁻¹², CG / MG-PCG | 1.56 / 1.37 |
//!
//! For speed on large grids put the multigrid V-cycle in `f32` inside the `f64` PCG
//! ([`SinglePrecision`]); for least memory use [`Symmetric5`] storage.
//!
//! ## Feature flags
//!
//! * `parallel` (default): kernels run on rayon's thread pool for grids of at least
//!   [`space::PARALLEL_MIN_CELLS`] cells. Set the thread count with `RAYON_NUM_THREADS` or a
//!   rayon pool; results do not depend on it. Build with `--no-default-features` for a
//!   serial library without rayon.
//!
//! The examples' plotting, progress-bar and option-parsing crates are dev-dependencies only:
//! the library itself depends on `num-traits`, `thiserror` and (with `parallel`) `rayon`.
//!
//! ## Models
//!
//! [`model`] turns a conduction or confined-groundwater model into a system for these
//! drivers: geometry (uniform or variable spacing, cell- or node-centred), per-cell
//! conductivity (isotropic, anisotropic or transmissivity), inactive cells, prescribed
//! values, edge fluxes, exchange with an outside value (convection, rivers), wells and
//! heaters, recharge and heat generation, all in SI units with nothing converted;
//! harmonic-mean face conductances (Patankar 1980); a flow budget after each solve; backward
//! Euler or Crank–Nicolson stepping; singular (floating) models detected.
//!
//! ## Examples
//!
//! Runnable with `cargo run --release --example NAME`; each prints a short summary and writes
//! pictures to `out/NAME/`:
//!
//! * `heat_spreader`: a plate with two heaters and a cooled edge; hottest cell, energy
//!   budget, temperature map with isotherms.
//! * `aquifer`: a confined aquifer with clay lenses, a lake, a river, recharge and two wells;
//!   water budget, drawdown at the wells, head and drawdown maps.
//! * `own_stencil`: your own closure operator with two drivers, a custom stopping rule and an
//!   observer.
//! * `cooling`: transient cooling with the model's time stepper and warm starts.
//! * `solver_comparison`: every driver on one problem, with a convergence plot.
//!
//! ## Caution
//!
//! Results support, and do not replace, engineering judgement. Check every model against field
//! data and hand calculations, and design wells, structures and equipment to local codes and
//! licensed professional practice.

#![deny(missing_docs)]
#![forbid(unsafe_code)]

mod blocks;
mod error;
mod format;
mod grid;
mod iterate;
#[cfg(feature = "bench-internals")]
pub mod kernels;
mod krylov;
mod memory;
pub mod model;
mod monitor;
mod operator;
pub mod precond;
mod refine;
mod relax;
mod report;
mod scalar;
pub mod space;
mod stencil;
pub mod stop;

pub use error::{Error, ErrorKind, Location};
pub use grid::{Grid, Side};
pub use iterate::{IterativeSolver, SolveOptions, Workspace};
pub use krylov::{Cg, Pcg, SteepestDescent};
pub use memory::MAX_CELLS;
pub use monitor::Monitor;
pub use operator::{Coeffs5, FixedCells, LinearOperator, Stencil5};
pub use precond::{
    CoarseOperator, FactorSettings, Identity, IncompleteCholesky, Jacobi, Multigrid,
    MultigridSettings, Preconditioner, SinglePrecision, Sip, SipSettings, Ssor, WeakPivot,
};
pub use refine::MixedRefinement;
pub use relax::{estimate_relaxation, RelaxationEstimate, Sor, SweepOrder};
pub use report::{History, MethodName, Progress, Report, StopReason};
pub use scalar::Scalar;
pub use stencil::{check_symmetry, Banded5, ClosureStencil, Symmetric5};
pub use stop::{StopRule, Tolerances};

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
        Error, ErrorKind, FactorSettings, FixedCells, Grid, Identity, IncompleteCholesky,
        IterativeSolver, Jacobi, LinearOperator, MixedRefinement, Multigrid, MultigridSettings,
        Pcg, Preconditioner, Progress, Report, Side, SinglePrecision, Sip, SipSettings,
        SolveOptions, Sor, Ssor, SteepestDescent, Stencil5, StopReason, StopRule, SweepOrder,
        Symmetric5, Tolerances, WeakPivot, Workspace,
    };
}

/// The README's code blocks, compiled and run as doctests.
#[doc = include_str!("../README.md")]
#[cfg(doctest)]
pub struct ReadmeDoctests;

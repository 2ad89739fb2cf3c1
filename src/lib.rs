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
//! * [`Stencil5`]: the 5-point operator (center, west, east, south, north coefficients of a
//!   cell). Implemented by [`Banded5`] (five coefficient arrays it owns), [`Banded5View`]
//!   (five arrays you keep, in either sign convention, read in place), [`Symmetric5`] (three
//!   arrays of a symmetric operator) and [`ClosureStencil`] (a closure computing a cell's
//!   coefficients on the fly), or by your own type.
//! * [`LinearOperator`]: the dimension-free view the Krylov drivers need (`y = A·x`, the
//!   fixed cells, the diagonal). Every `Stencil5` is one; implement it directly for an operator
//!   that is not a 5-point stencil.
//! * [`FixedCells`]: fixed-value (Dirichlet) cells kept in the grid, as finite-difference codes
//!   do; their values stay as given and their residual is exactly zero.
//! * Drivers behind one object-safe trait, [`IterativeSolver`]: [`SteepestDescent`], [`Pcg`] /
//!   [`Cg`], [`Sor`] (lexicographic or red-black; Gauss–Seidel at ω = 1),
//!   [`MixedRefinement`] (`f32` inner solves, `f64` accuracy), and the standalone [`Sip`] and
//!   [`Multigrid`] iterations.
//! * Drivers for non-symmetric systems (upwinded advection): [`BiCgStab`] (van der Vorst
//!   1992) and restarted [`Gmres`] (GMRES(m), Saad & Schultz 1986), right-preconditioned with
//!   any [`Preconditioner`], so their stop rule sees the true `‖b − A·x‖₂`.
//! * All of them run through one iteration loop, one [`Monitor`], one set of stopping rules
//!   ([`stop`]) and end in one [`Report`].
//! * [`Preconditioner`]s for PCG: [`Identity`], [`Jacobi`], [`Ssor`], [`IncompleteCholesky`]
//!   (IC(0) and MIC(0)), Stone's [`Sip`], the geometric [`Multigrid`] V-cycle, and
//!   [`SinglePrecision`] to run any of them in `f32`; for BiCGSTAB and GMRES also [`Ilu0`]
//!   (ILU(0)), the plain Stone factor (`SipSettings::symmetrised = false`) and the multigrid
//!   V-cycle built for a non-symmetric operator.
//! * [`space`]: where every global reduction happens and whether kernels use threads
//!   ([`Workspace::with_threads`], [`Workspace::with_space`]); results are the same bits for
//!   any thread count.
//! * [`Error`]: one error type with a [`kind`](Error::kind), the cell as index and `(i, j)`,
//!   and the [`Report`] of a solve that did not converge.
//! * [`model`]: conduction and confined-groundwater models assembled into such systems, with
//!   budgets and time stepping.
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
//! [`model`] is symmetric (harmonic-mean face conductances stored on both sides) unless a
//! flow field carries the heat (`Model::set_advection`), and picks its driver in one place
//! (`SteadySystem::default_solver`). The
//! iteration counts behind this table are measured in the README's solver and
//! iteration-count tables (`solver_comparison` and `iterations` examples).
//!
//! | symmetric? | coefficient contrast | cells | use | why |
//! |---|---|---|---|---|
//! | yes | any | up to 10⁴ | [`Pcg`] + [`Jacobi`], or [`Cg`] | a few hundred iterations at most; nothing to set up or tune |
//! | yes | any | 10⁴–10⁶ | [`Pcg`] + [`IncompleteCholesky::mic0`] | about the same count whether the coefficients jump or not; three arrays of storage; iterations grow like `h^{-1/2}` |
//! | yes | large (10² and up: clay in sand, copper beside an air gap) | 10⁵–10⁷ | [`Pcg`] + [`Multigrid`] (the model's default) | a handful of iterations, and a count that does not grow with the grid (see [`Multigrid`]) |
//! | yes | small (up to about 10) | 10⁴–10⁷ | [`Pcg`] + [`Ssor`] (ω from the Jacobi radius that [`estimate_relaxation`] finds) or [`IncompleteCholesky::ic0`] | cheap setup; SSOR's count grows like `h^{-1/2}`, IC(0)'s like `h⁻¹` at a third of CG's |
//! | yes | any | any, memory very tight | [`Pcg`] + [`Jacobi`] | one extra array; the diagonal scaling absorbs much of the contrast |
//! | yes | any | 10⁶ and up, bandwidth-bound | [`Pcg`] + [`SinglePrecision`] with a [`Multigrid`] on an `f32` copy | the V-cycle moves half the bytes; Krylov vectors and residuals stay `f64` |
//! | yes | any | 10⁶ and up, to 10⁻¹² | [`MixedRefinement`] | `f32` inner solves move half the bytes, the `f64` outer residual keeps `f64` accuracy |
//! | no (advection, upwind / exponential / power-law), cell Péclet up to about 1 | any | 10⁴–10⁶ | [`BiCgStab`] + [`Multigrid`] | 3–5 iterations from 64² to 512², flat with the grid, like multigrid on conduction |
//! | no, cell Péclet 10 and up | any | any | [`BiCgStab`] + [`Ilu0`], or + [`Sip`] with `symmetrised: false` | 5–35 iterations up to 512²; multigrid with its Gauss–Seidel smoother stops helping here: its count grows with the grid (BiCGSTAB + multigrid 7 → 28 at Pe 100, 64² → 512²) |
//! | no | any | up to 10⁵, or when unsure | [`BiCgStab`] + [`Ilu0`] (the model's default) | nothing to set; the factor has the operator's pattern; 10–166 iterations on the whole advection table |
//! | no, BiCGSTAB breaks down or stalls | any | any | [`Gmres`] + [`Sip`] or [`Ilu0`] | cannot break down on a non-singular system and its residual never grows within a cycle; restarts (m = 30) cost iterations (GMRES + ILU(0) 182 against BiCGSTAB's 35 at 512², Pe 10) |
//! | no, diagonally dominant rows | any | small | [`Sor`] (ω = 1), or [`Sip`] on its own | positive centers only; [`estimate_relaxation`] answers ω = 1 for a diagonally dominant non-symmetric operator and refuses one that is not, naming the row; larger ω was measured slower on upwind advection from cell Péclet 10 on |
//! | yes | small only | any | [`Pcg`] + [`Sip`] | the symmetrised Stone factor; at high contrast it is not positive definite and PCG stops with [`ErrorKind::PreconditionerNotPositive`] |
//! | either | — | — | [`Sor::gauss_seidel`] | a smoother, not a solver: iterations grow like `1/h²` |
//! | yes | — | small | [`SteepestDescent`] | teaching and baselines; iterations grow like `1/h²` |
//!
//! ## Stopping rules
//!
//! By default ([`Tolerances`]) a solve has converged when `‖r‖₂ ≤ 10⁻⁸·‖b‖₂`, where `b` is
//! the right-hand side of the free cells (fixed neighbours' contributions moved to it), and
//! gives up at an iteration cap that grows with the problem, [`stop::iteration_cap`] of the
//! number of unknowns, unless [`SolveOptions::max_iterations`] sets a fixed one. An absolute
//! tolerance and a watch for a growing residual ([`stop::Growth`]) are opt-in. Replace the
//! rule with [`SolveOptions::stop_when`]; build rules from [`stop`]'s built-ins (absolute,
//! relative, reduction from the initial residual, largest solution change, iteration limit,
//! stagnation, growth) and their [`AnyOf`](stop::AnyOf) / [`AllOf`](stop::AllOf) combinators,
//! a closure ([`RuleFn`](stop::RuleFn)), or your own type implementing [`StopRule`]. A rule
//! with no limit of its own is backed by the same cap, and a tolerance that is not positive
//! is refused before the first iteration.
//!
//! Convergence is always confirmed on the true residual `b − A·x`, never only on a
//! recursively updated one. Rounding limits how small the true residual can get (about
//! `ε·‖A‖·‖x‖`): when the true residual stops falling while the recursive one goes on, the
//! drivers stop with [`StopReason::RoundingFloor`] rather than iterate to the limit. A solve
//! that does not converge returns an error carrying its [`Report`], with the last iterate
//! left in `x`. To watch a solve as it runs (a log line, a progress bar), pass an observer to
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
//! ## Errors
//!
//! Every fallible function returns [`Error`]. Bad input is refused before any work with an
//! error that names the array, the setting or the cell (index and `(i, j)`); a solve that
//! stops without converging carries its [`Report`] and leaves its last iterate in `x`. Ask
//! [`Error::kind`] to branch on what happened ([`ErrorKind::is_model`] tells model errors from
//! solver errors) and [`Error::hint`] for what to check.
//!
//! ```
//! use quintet::prelude::*;
//!
//! let grid = Grid::new(20, 20)?;
//! let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
//! let mut x = vec![0.0; grid.cells()];
//! let mut cg = Cg::default().with_options(SolveOptions::default().max_iterations(5));
//! match cg.solve(&op, &vec![1.0; grid.cells()], &mut x) {
//!     Ok(report) => println!("{report}"),
//!     Err(e) if e.kind() == ErrorKind::NotConverged => {
//!         let report = e.report().expect("a solve error carries its report");
//!         assert_eq!(report.iterations, 5); // and x holds the fifth iterate
//!     }
//!     Err(e) => return Err(e),
//! }
//! # Ok::<(), quintet::Error>(())
//! ```
//!
//! ## Performance
//!
//! The kernels are memory-bound: a banded matrix–vector product moves about 56 bytes per cell
//! (`f64`), a CG iteration about 128. Products and updates are fused with the dot products the
//! iteration needs, and reductions run over fixed blocks combined in a fixed order, so results
//! are bit-identical for any number of threads. A warm solve allocates nothing. The README's
//! performance table gives the measured ratios (each kernel against a memory-bandwidth triad
//! run beside it, ours against general-purpose alternatives) and the command that reproduces
//! them. For speed on large grids put the multigrid V-cycle in `f32` inside the `f64` PCG
//! ([`SinglePrecision`], on the `f32` copy [`Banded5ByColour`] that the cycle reads in
//! place); for least memory use [`Symmetric5`] storage. The V-cycle smooths
//! each level in two passes over its rows (all red-black sweeps of a phase travel down the
//! grid together, fused with the grid transfers), in bands of rows side by side, one per
//! thread; every cell gets the same arithmetic whatever the bands, so its result too is the
//! same for any thread count. An `f32` cycle keeps its levels by colour (red and black cells
//! of a row apart), so that each half-sweep is one contiguous loop: the fine level in the
//! [`Banded5ByColour`] it was built on (or in a reordered copy of any other operator, 24 more
//! bytes per cell), the coarse levels in reordered copies of their rows.
//!
//! ## Feature flags
//!
//! * `parallel` (default): kernels run on rayon's thread pool for grids of at least
//!   [`space::PARALLEL_MIN_CELLS`] cells. Set the thread count with `RAYON_NUM_THREADS` or a
//!   rayon pool; results do not depend on it. Build with `--no-default-features` for a
//!   serial library without rayon.
//! * `npy` (off): `interop::read_npy`, `interop::read_npy_grid` and `interop::write_npy`
//!   read and write per-cell `f64`/`f32` fields as NumPy `.npy` files of shape `(ny, nx)` in
//!   C order (`a[j, i] == x[i + nx·j]`: row `j` north, column `i` east), through the `npyz`
//!   crate. Reading checks the shape against a [`Grid`] (or returns the grid it found), the
//!   element type and that every value is finite, each with a typed error
//!   ([`ErrorKind::GridMismatch`], [`ErrorKind::FileFormat`], [`ErrorKind::NonFinite`] naming
//!   the cell, [`ErrorKind::Io`] keeping the system's message).
//! * `ndarray` (off): `interop::as_array` and `interop::as_array_mut` view a grid-ordered
//!   slice as an `ndarray` array of shape `(ny, nx)` without copying (axis 0 = `j`, north;
//!   axis 1 = `i`, east; `view[[j, i]] == x[i + nx·j]`); `interop::from_array` turns an
//!   owned 2-D array into its grid and a grid-ordered `Vec`, without copying a
//!   standard-layout array.
//!
//! The examples' plotting, progress-bar and option-parsing crates are dev-dependencies only:
//! the library itself depends on `num-traits`, `thiserror` and (with `parallel`) `rayon`;
//! `npy` adds `npyz`, `ndarray` adds `ndarray`. The crate itself builds with Rust 1.86
//! (`rust-version` in `Cargo.toml`); with `npy` on, the newest releases of two crates in
//! `npyz`'s tree (`pest`, `psm`) ask for Rust 1.88, so on an older compiler let Cargo pick
//! versions that fit (`CARGO_RESOLVER_INCOMPATIBLE_RUST_VERSIONS=fallback cargo update`).
//!
//! ## Models
//!
//! [`model`] turns a conduction or confined-groundwater model into a system for these
//! drivers: geometry (uniform or variable spacing, cell- or node-centred), per-cell
//! conductivity (isotropic, anisotropic or transmissivity), inactive cells, prescribed
//! values, edge fluxes, exchange with an outside value (convection, rivers), wells and
//! heaters, recharge and heat generation, all in SI units with nothing converted;
//! harmonic-mean face conductances (Patankar 1980); a flow budget after each solve; backward
//! Euler or Crank–Nicolson stepping; singular (floating) models detected. Conductivity,
//! storage and exchange coefficients change in place after assembly, with the condition
//! handles kept (calibration runs, nonlinear outer iterations). Heat carried by a given flow
//! field (groundwater, a coolant) is assembled with the upwind, central, exponential or
//! power-law scheme (Patankar 1980, ch. 5), from the face flows of a groundwater solve or
//! your own; the budget books what the flow carries in and out.
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
//! * `iterations`: iteration counts of every driver by grid size, as CSV.
//! * `solver_comparison`: every driver on one problem, with a convergence plot.
//!
//! ## Caution
//!
//! Results support, and do not replace, engineering judgement. Check every model against field
//! data and hand calculations, and design wells, structures and equipment to local codes and
//! licensed professional practice.

#![deny(missing_docs)]
#![forbid(unsafe_code)]

mod balance;
mod blocks;
mod capacity;
pub mod distributed;
mod error;
mod format;
mod grid;
#[cfg(any(feature = "npy", feature = "ndarray"))]
pub mod interop;
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
#[cfg(test)]
mod testing;

pub use balance::SystemBudget;
pub use capacity::CapacityTerm;
pub use error::{Error, ErrorKind, Location};
pub use grid::{Grid, Side};
pub use iterate::{IterativeSolver, SolveOptions, Workspace};
pub use krylov::{BiCgStab, Cg, Gmres, Pcg, SteepestDescent};
pub use memory::MAX_CELLS;
pub use monitor::Monitor;
pub use operator::{Coeffs5, FixedCells, LinearOperator, Stencil5};
pub use precond::{
    CoarseOperator, FactorSettings, Identity, Ilu0, IncompleteCholesky, Jacobi, Multigrid,
    MultigridSettings, Preconditioner, SinglePrecision, Sip, SipSettings, Ssor, WeakPivot,
};
pub use refine::MixedRefinement;
pub use relax::{estimate_relaxation, RelaxationBasis, RelaxationEstimate, Sor, SweepOrder};
pub use report::{History, MethodName, Progress, Report, StopReason};
pub use scalar::Scalar;
pub use stencil::Banded5View;
pub use stencil::{check_symmetry, Banded5, Banded5ByColour, ClosureStencil, Symmetric5};
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
        check_symmetry, estimate_relaxation, Banded5, BiCgStab, Cg, ClosureStencil, CoarseOperator,
        Coeffs5, Error, ErrorKind, FactorSettings, FixedCells, Gmres, Grid, Identity, Ilu0,
        IncompleteCholesky, IterativeSolver, Jacobi, LinearOperator, MixedRefinement, Multigrid,
        MultigridSettings, Pcg, Preconditioner, Progress, RelaxationBasis, Report, Side,
        SinglePrecision, Sip, SipSettings, SolveOptions, Sor, Ssor, SteepestDescent, Stencil5,
        StopReason, StopRule, SweepOrder, Symmetric5, Tolerances, WeakPivot, Workspace,
    };
    pub use crate::{Banded5ByColour, Banded5View, CapacityTerm, SystemBudget};
}

/// The README's code blocks, compiled and run as doctests.
#[doc = include_str!("../README.md")]
#[cfg(doctest)]
pub struct ReadmeDoctests;

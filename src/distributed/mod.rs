//! Distributed solves: one grid split over processes, the same answer bit for bit.
//!
//! A [`Partition`] splits the grid over a px × py grid of [`Processes`] (one process without
//! MPI, or MPI's world with the `mpi` feature). Each process builds only its block of a
//! [`DistributedStencil`] (from a closure of the global `(i, j)` or from its slices of the
//! bands), keeps vectors of its own cells, and solves with the crate's drivers in the
//! partition's [`Workspace`](crate::Workspace): CG and PCG with [`DistributedJacobi`],
//! BiCGSTAB and GMRES run unchanged, through the one loop, the same monitor, stop rules and
//! report (tested bit for bit on 1–4 processes). [`DistributedMultigrid`] is the crate's
//! multigrid V-cycle with its finer levels split over the processes and its coarser levels
//! gathered: PCG with it needs the iteration count of the serial MG-PCG (a handful, whatever
//! the grid), with the same bits on any number of processes. A [`DistributedSystem`]
//! assembles each process's block of a steady [`Model`](crate::model::Model) and sums its
//! budget exactly over the processes (the same [`Budget`](crate::model::Budget) everywhere,
//! for any process count).
//!
//! - **Halo.** Before every product the operator exchanges one row or column of values with
//!   each neighbour (non-blocking sends and receives, `8·(2·nx_local + 2·ny_local)` bytes per
//!   process at most); the product of a row then adds its terms in the order every operator
//!   of the crate uses.
//! - **Reproducible reductions.** The partition's space sums exactly: the workspace cuts the
//!   vectors per entry, so every partial is one rounded product; the partials go into a
//!   fixed-point accumulator of 32-bit digits that holds any sum of `f64` values exactly; the
//!   accumulators of all processes are combined by one all-gather and merged as integers; the
//!   sum is rounded once. Integer sums do not depend on order, so the solution, iteration
//!   count and residual history are the same bits for any number of processes and threads,
//!   and equal to the solve on [`Processes::single`]. They differ from a solve of a
//!   [`Banded5`](crate::Banded5) in the ordinary space, whose block sums round along the way
//!   (both are within rounding of the exact values). CG and PCG make two collectives per
//!   iteration (the curvature `p·A·p`, then `r·r` with the largest change) plus one halo
//!   exchange.
//! - **Failures.** Checks that can fail on one process (a bad coefficient, a center that is
//!   not positive, a wrong length) agree through a collective first, so every process
//!   returns the same typed error naming the same cell of the whole grid, and none waits for
//!   another. A solve that stops without converging leaves each process's part of the last
//!   iterate in its `x` and the same report everywhere.
//!
//! # Example
//!
//! ```
//! use quintet::distributed::{DistributedJacobi, DistributedStencil, Partition, Processes};
//! use quintet::prelude::*;
//!
//! let grid = Grid::new(64, 48)?;
//! // Processes::mpi_world()? with the `mpi` feature, under `mpirun -n 4 …`.
//! let part = Partition::new(grid, Processes::single())?;
//! let op = DistributedStencil::from_fn(&part, |i, j| Coeffs5::laplacian(grid, i, j))?
//!     .with_fixed(|i, _| i == 0)?;
//! let rhs = part.local_from_fn(|i, j| if (i, j) == (40, 20) { 1.0 } else { 0.0 });
//! let mut x = vec![0.0; part.local_len()];
//! let report = Pcg::new(DistributedJacobi::new(&op)?)
//!     .solve_with(&op, &rhs, &mut x, &mut part.workspace(true))?;
//! let whole = part.gather(&x)?; // Some(field) on process 0
//! assert_eq!(whole.map(|w| w.len()), Some(grid.cells()));
//! println!("{} iterations", report.iterations);
//! # Ok::<(), quintet::Error>(())
//! ```

mod exact;
mod jacobi;
mod layout;
mod model;
#[cfg(feature = "mpi")]
mod mpi_world;
mod multigrid;
mod partition;
mod processes;
mod space;
mod stencil;
mod transport;

pub use jacobi::DistributedJacobi;
pub use model::DistributedSystem;
pub use multigrid::DistributedMultigrid;
pub use partition::Partition;
pub use processes::Processes;
pub use stencil::DistributedStencil;

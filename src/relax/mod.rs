//! Relaxation: [`Sor`] (Gauss–Seidel at ω = 1), the estimate of its best relaxation factor,
//! and the residual-correction iteration behind the standalone [`Sip`](crate::Sip) and
//! [`Multigrid`](crate::Multigrid) solvers. These walk the rows of a
//! [`Stencil5`](crate::Stencil5).

mod correction;
mod estimate;
mod sor;

pub(crate) use correction::correction_solve;
pub use estimate::{estimate_relaxation, RelaxationBasis, RelaxationEstimate};
pub use sor::{Sor, SweepOrder};

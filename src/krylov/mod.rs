//! Krylov drivers: [`SteepestDescent`] and [`Pcg`] (with [`Cg`] its unpreconditioned case).
//! They ask only for a [`LinearOperator`](crate::LinearOperator): `y = A·x`, the fixed cells
//! and, for the start-up check, the diagonal.

mod cg;
mod steepest;

pub use cg::{Cg, Pcg};
pub use steepest::SteepestDescent;

pub(crate) use cg::pcg_name;

//! Krylov drivers: [`SteepestDescent`] and [`Pcg`] (with [`Cg`] its unpreconditioned case) for
//! symmetric positive definite systems, [`BiCgStab`] and restarted [`Gmres`] for general
//! non-symmetric ones. They ask only for a [`LinearOperator`](crate::LinearOperator):
//! `y = A·x`, the fixed cells and, for the start-up checks, the diagonal.

mod bicgstab;
mod cg;
mod gmres;
mod steepest;

pub use bicgstab::BiCgStab;
pub use cg::{Cg, Pcg};
pub use gmres::Gmres;
pub use steepest::SteepestDescent;

pub(crate) use cg::pcg_name;

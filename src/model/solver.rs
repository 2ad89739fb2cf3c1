//! The one place where the model picks a driver for the systems it assembles
//! ([`SteadySystem::default_solver`](super::SteadySystem::default_solver),
//! [`Stepper::with_default_solver`](super::Stepper::with_default_solver)): PCG for symmetric
//! operators (conduction only, or a flow field that is zero between active cells), a method
//! for non-symmetric ones otherwise.

use crate::{Banded5, Error, IterativeSolver, Jacobi, Pcg, Sip, SipSettings};

/// The driver the model uses for `op` when the caller does not bring one.
///
/// * symmetric: PCG with a Jacobi preconditioner (the free-cell system is SPD);
/// * not symmetric (advection): Stone's strongly implicit procedure as a standalone iteration,
///   which needs positive centers and not symmetry, and converges on the M-matrices the
///   upwind, exponential and power-law schemes give (central at cell Péclet numbers above 2
///   gives positive couplings, outside what it is meant for).
pub(crate) fn default_solver(
    op: &Banded5<f64>,
    symmetric: bool,
) -> Result<Box<dyn IterativeSolver<f64>>, Error> {
    if symmetric {
        Ok(Box::new(Pcg::new(Jacobi::new(op)?)))
    } else {
        Ok(Box::new(Sip::new(op, SipSettings::default())?))
    }
}

//! The one place where the model picks a driver for the systems it assembles
//! ([`SteadySystem::default_solver`](super::SteadySystem::default_solver),
//! [`Stepper::with_default_solver`](super::Stepper::with_default_solver)): PCG for symmetric
//! operators (conduction only, or a flow field that is zero between active cells), BiCGSTAB
//! for non-symmetric ones.

use crate::{Banded5, BiCgStab, Error, Ilu0, IterativeSolver, Multigrid, MultigridSettings, Pcg};

/// The driver the model uses for `op` when the caller does not bring one.
///
/// * symmetric: PCG with the multigrid V-cycle at default settings, in `f64` (the free-cell
///   system is SPD, so the V-cycle is too): its iteration count does not grow with the grid
///   or with the conductivity contrast (`tests/model_steady.rs`; the README's iteration
///   tables), where Jacobi's grows with both; strong anisotropy raises it (75 iterations at
///   `kx/ky = 1000` on square cells, Jacobi 850: see the multigrid notes). `f64` rather than
///   the cheaper `f32` V-cycle, because outer iterations and tight budgets ask for residuals
///   far below `10⁻⁸`;
/// * not symmetric (advection): BiCGSTAB with ILU(0), which needs neither symmetry nor
///   definiteness; the factor exists on the M-matrices the upwind, exponential and power-law
///   schemes give (central at cell Péclet numbers above 2 gives positive couplings, and the
///   set-up may then stop with a pivot error naming the cell). The `groundwater_heat`
///   example prints its count and time beside standalone SIP's and the other methods'.
pub(crate) fn default_solver(
    op: &Banded5<f64>,
    symmetric: bool,
) -> Result<Box<dyn IterativeSolver<f64>>, Error> {
    if symmetric {
        let multigrid = Multigrid::new(op, MultigridSettings::default())?;
        Ok(Box::new(Pcg::new(multigrid)))
    } else {
        Ok(Box::new(BiCgStab::new(Ilu0::new(op)?)))
    }
}

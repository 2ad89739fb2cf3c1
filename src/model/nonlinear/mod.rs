//! Nonlinear models: conductances that depend on the solution, and the outer iteration that
//! solves them (see the [module docs](crate::model#nonlinear-models)).

mod aquifer;
mod budget;
mod equations;
mod outer;
mod system;
mod thermal;

pub use aquifer::{Aquifer, AquiferCheck, AquiferKind, FaceWeighting};
pub use outer::{OuterMethod, OuterReport, OuterSettings, OuterStep};
pub use system::NonlinearSystem;
pub use thermal::{ConductivityLaw, STEFAN_BOLTZMANN};

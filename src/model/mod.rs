//! Model assembly for heat conduction and confined groundwater flow: cell properties and
//! boundary conditions in, a symmetric 5-point operator and right-hand side out, with the
//! bookkeeping for a flow budget and a transient stepper.
//!
//! **Caution.** Results support, and do not replace, engineering judgement. A model is only as
//! good as its conceptualisation, parameters and boundary conditions: check it against field
//! data and hand calculations, look at the budget of every run, and design wells, structures
//! and equipment to local codes and licensed professional practice.
//!
//! # The pieces
//!
//! * [`Geometry`]: two [`Axis`] (cell widths or node spacings, uniform or per column/row,
//!   cell-centred or node-centred, see [`AxisLayout`]) and the layer thickness.
//! * [`Conductivity`]: per-cell conductivity, isotropic or anisotropic, per thickness or
//!   depth-integrated (transmissivity). Face conductances come from the two half-cells in
//!   series, the harmonic mean (Patankar 1980, *Numerical Heat Transfer and Fluid Flow*,
//!   §4.2). [`Storage`] for transient runs.
//! * [`Model`]: inactive cells and the conditions — prescribed values on cells or edges,
//!   prescribed edge fluxes (no condition = no flow / insulated), exchange with an outside
//!   value through a conductance on edges or cells (convection, rivers, drains), point
//!   sources (wells, heaters) and areal or volumetric sources (recharge, heat generation).
//! * [`SteadySystem`]: the assembled [`Banded5`](crate::Banded5) operator with its fixed cells
//!   and right-hand side, for any driver, and [`Budget`]s of its solutions.
//! * [`Stepper`]: backward Euler or Crank–Nicolson in time, levels changed through a
//!   [`Forcing`] closure.
//!
//! # Units
//!
//! quintet converts nothing: give every quantity in consistent SI units and the results come
//! out in the same system. The same equations serve both trades:
//!
//! | quantity | heat conduction | groundwater (confined) |
//! |---|---|---|
//! | solution φ | temperature, K or °C | hydraulic head, m |
//! | lengths, thickness | m | m |
//! | conductivity, per thickness | thermal conductivity, W/(m·K) | hydraulic conductivity, m/s |
//! | conductivity, depth-integrated | W/K | transmissivity, m²/s |
//! | prescribed edge flux, areal source | W/m² | m/s (recharge) |
//! | volumetric source | W/m³ | 1/s |
//! | point source | W | m³/s (pumping negative) |
//! | edge exchange coefficient (per face area) | convection coefficient h, W/(m²·K) | 1/s (bed conductivity / bed thickness) |
//! | cell exchange conductance | W/K | m²/s |
//! | storage per volume | ρ·c, J/(m³·K) | specific storage, 1/m |
//! | storage per area | J/(m²·K) | storativity, – |
//! | time | s | s |
//! | flows in the budget | W | m³/s |
//!
//! # The discrete equations
//!
//! Each cell's control volume balances: conduction to its neighbours through the face
//! conductances, plus exchange, equals its sources (Fourier's or Darcy's law between nodes).
//! The scheme conserves exactly, so after a converged solve the budget closes to the
//! algebraic error left by the stopping tolerance; it is second-order accurate in space for
//! smooth coefficients, and exact for the quadratic profile of a plane wall with uniform
//! generation on a node-centred axis.
//!
//! # Example
//!
//! ```
//! use quintet::model::{Conductivity, Geometry, Model};
//! use quintet::prelude::*;
//!
//! // A confined aquifer 2 km x 1 km in cells of 50 m, 15 m thick, K = 1e-4 m/s, a river on
//! // the west edge (stage 40 m), a fixed head of 38 m on the east edge, recharge, one well.
//! let geometry = Geometry::cell_centered(40, 20, 50.0, 50.0, 15.0)?;
//! let mut model = Model::new(geometry, Conductivity::isotropic(1e-4))?;
//! model.edge_exchange("river", Side::West, 1e-6, 40.0)?;
//! model.prescribe_edge("downstream", Side::East, 38.0)?;
//! model.areal_source("recharge", 4e-9)?;
//! let well = model.geometry().cell_at(1200.0, 500.0).expect("inside the model");
//! model.point_source("well", well, -5e-3)?;
//!
//! let system = model.assemble()?;
//! let mut heads = system.initial_solution(39.0);
//! let mut pcg = Pcg::new(Jacobi::new(system.operator())?)
//!     .with_options(SolveOptions::default().tolerance(1e-12));
//! system.solve(&mut pcg, &mut heads, &mut Workspace::new())?;
//! let budget = system.budget(&heads)?;
//! assert!(budget.warning(1e-6).is_none());
//! println!("{}", budget.table("m³/s"));
//! # Ok::<(), quintet::Error>(())
//! ```

mod advection;
mod assemble;
mod axis;
mod book;
mod budget;
mod builder;
mod field;
mod geometry;
mod medium;
mod solver;
mod spec;
mod steady;
mod transient;
mod update;

pub use advection::{AdvectionScheme, FaceFlows};
pub use axis::{Axis, AxisLayout};
pub use book::Forcing;
pub use budget::{Budget, BudgetLine, BudgetTable, BudgetWarning, FlowKind};
pub use field::{Field, Profile};
pub use geometry::Geometry;
pub use medium::{Conductivity, ConductivityBasis, Storage};
pub use spec::{ConditionId, Model, SingularPolicy};
pub use steady::SteadySystem;
pub use transient::{Stepper, TimeScheme, DEFAULT_DAMPED_STEPS};

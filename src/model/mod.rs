//! Model assembly for heat conduction and groundwater flow (confined, or unconfined as a
//! nonlinear model), and for heat carried by a given flow field: cell properties and boundary
//! conditions in, a 5-point operator (symmetric unless a flow field carries the heat) and
//! right-hand side out, with the bookkeeping for a flow budget and a transient stepper.
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
//! * [`FaceFlows`] and [`AdvectionScheme`]: a flow field that carries the heat
//!   ([`Model::set_advection`]), for example the face flows of a groundwater solve
//!   ([`SteadySystem::face_flows`]); see [Advection](#advection).
//! * [`SteadySystem`]: the assembled [`Banded5`](crate::Banded5) operator with its fixed cells
//!   and right-hand side, for any driver (or the one the model picks,
//!   [`SteadySystem::default_solver`]), and [`Budget`]s of its solutions.
//! * [`DistributedSystem`](crate::distributed::DistributedSystem): the steady system split
//!   over processes (each assembles its own block's rows; the budget is summed exactly, the
//!   same on every process).
//! * [`Stepper`]: backward Euler or Crank–Nicolson in time, levels changed through a
//!   [`Forcing`] closure.
//! * [`NonlinearSystem`]: unconfined and convertible aquifers, temperature-dependent
//!   conduction and radiation, solved by a Picard or Newton outer iteration; see
//!   [Nonlinear models](#nonlinear-models).
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
//! | face flow of a carrying fluid ([`FaceFlows`]) | W/K (m³/s × ρ_w·c_w) | – |
//! | inflow value ([`Model::inflow_value`]) | K or °C | – |
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
//! # Advection
//!
//! [`Model::set_advection`] lets a given flow field carry the heat: groundwater through an
//! aquifer (open-loop wells, a warm plume, a foundation in flowing groundwater), coolant past
//! a plate. The field is given as [`FaceFlows`], the flow through every face in W/K (volumetric
//! flow times the fluid's `ρ_w·c_w`); whole-face flows keep a groundwater solve's mass balance
//! exactly, and [`SteadySystem::face_flows`] takes them from one. A Darcy flux per face (m/s)
//! converts with [`FaceFlows::from_darcy_flux`], a uniform one with [`FaceFlows::uniform`]. The model does not compute
//! the flow itself: solve the groundwater model first.
//!
//! **Equations.** At a face with conductance `D` and flow `F` out of the cell, the cell's
//! neighbour coefficient is `a_nb = D·A(|P|) + max(−F, 0)`, `P = F/D` the face Péclet number,
//! and the total flux `J = F·φ_P + a_nb·(φ_P − φ_nb)` is the same from both sides, so the
//! scheme conserves (Patankar 1980, *Numerical Heat Transfer and Fluid Flow*, ch. 5). The
//! center is the sum of the neighbour coefficients plus the net outflow
//! `F_e − F_w + F_n − F_s`, and the fluid that appears or vanishes inside a cell (where the
//! field is not divergence-free: wells, recharge) does so at the cell's own value; together
//! the center is `Σ a_nb` plus the inflow through the cell's edge faces, and a divergence-free
//! field gives the usual `a_P = Σ a_nb`. With upwind, exponential or power-law weights the
//! neighbour coefficients are never negative and the center is at least their sum (an
//! M-matrix): without sources, every value lies between the inflow and prescribed values,
//! whatever the flow.
//!
//! **Schemes** ([`AdvectionScheme`], `A(|P|)` from Patankar's Table 5.2):
//! upwind (`1`: first order, never oscillates, smears fronts by a numerical diffusion of
//! `F·Δx/2`), central (`1 − |P|/2`: second order, but its neighbour coefficients turn
//! negative and the solution oscillates once the cell Péclet number exceeds 2, so use it only
//! on grids fine enough for that), exponential (`|P|/(e^|P| − 1)`: exact for 1-D steady flow
//! with uniform properties) and power-law (`max(0, (1 − 0.1|P|)⁵)`, within 0.015 of the
//! exponential's `A`, measured). Where the cell Péclet number `ρ_w·c_w·q·Δx/k` exceeds 2 in
//! places, take upwind, exponential or power-law, or refine the grid.
//!
//! **Boundaries.** Where the flow leaves through an edge face it carries the cell's own value.
//! Where it enters at a free cell it carries the edge's inflow value
//! ([`Model::inflow_value`], one per edge or per edge cell; without one the assembly stops
//! with [`ErrorKind::NoInflowValue`](crate::ErrorKind::NoInflowValue) naming the cell); at a
//! cell held at a prescribed value it carries that value. Edge faces always take the upwind
//! value; conduction through the edge is whatever the edge's conditions say (none: insulated),
//! independently of the flow. Faces next to inactive cells carry nothing. Heat brought by
//! injected water at another temperature: a [`Model::cell_exchange`] with conductance
//! `ρ_w·c_w·Q` and the injection temperature as outside value, on top of the water appearing at
//! the cell's value.
//!
//! **Budget** (kind [`FlowKind::Carried`]): each inflow value's line books what the entering
//! fluid brings, `F·value`; one more line, "carried by the flow field", books what the flow
//! takes away with the cells' own values (through edges, and where fluid leaves inside a
//! cell: a pumping well) and what appears with them (injection, recharge). A prescribed cell's
//! line now includes the heat the flow carries into and out of it. The budget closes to the
//! solver's residual as before.
//!
//! **Solving.** The operator is not symmetric: CG and PCG do not apply
//! ([`Stepper::with_jacobi`] refuses it). [`SteadySystem::default_solver`] and
//! [`Stepper::with_default_solver`] pick BiCGSTAB with ILU(0) for it; any driver for
//! non-symmetric systems can be passed instead (GMRES, or multigrid or SIP as the
//! preconditioner: see "Choosing a solver" in the crate docs).
//!
//! Results of a model with advection depend on the flow field as much as on the heat
//! parameters: check the flow model first, compare the carried and conducted lines of the
//! budget, and judge the results with the caution above.
//!
//! # Nonlinear models
//!
//! [`NonlinearSystem`] holds a model whose conductances depend on its solution:
//!
//! * **Unconfined and convertible aquifers** ([`NonlinearSystem::aquifer`] with an
//!   [`Aquifer`]): the model's conductivity is the hydraulic conductivity `K`, and a face
//!   conducts `K·b` with `b` the saturated thickness between the cell's bottom and, for a
//!   convertible aquifer, its top. Faces take the thickness of the cell with the higher head
//!   ([`FaceWeighting::Upstream`], the default: first order, lets dry cells rewet from a wet
//!   neighbour, symmetric Picard matrices) or the half-cells' `K·b` in series
//!   ([`FaceWeighting::Harmonic`]: second order on smooth water tables, but a face next to a
//!   nearly dry cell nearly closes). Time steps ([`NonlinearSystem::set_step`]) store water
//!   by specific yield below the top and elastically above it; the change of stored water is
//!   computed exactly, so step budgets close.
//! * **Temperature-dependent conduction** ([`NonlinearSystem::thermal`]): `k(T)` from a
//!   [`ConductivityLaw`] (linear or a table), half-cells in series at their own temperatures;
//!   radiation at an edge ([`NonlinearSystem::add_radiation`], σ = [`STEFAN_BOLTZMANN`]).
//!
//! **The outer iteration** ([`OuterSettings`]) solves `M·δ = −F(x)` with the true nonlinear
//! residual `F` on the right, `M` the lagged-coefficient matrix (Picard: symmetric, PCG with
//! the multigrid V-cycle by default) or the Jacobian (Newton: not symmetric, BiCGSTAB with
//! ILU(0) by default); any driver can be given ([`NonlinearSystem::solve_with`]). The inner
//! tolerance tightens with the nonlinear residual; a correction longer than
//! [`OuterSettings::max_change`] is scaled down, and one that raises the residual is halved.
//! It stops when both the last change and the residual meet their tolerances; otherwise
//! [`ErrorKind::OuterNotConverged`](crate::ErrorKind::OuterNotConverged) with the last
//! iterate in `x`. Each outer iteration is reported to an observer as an [`OuterStep`]
//! (outer count, inner iterations and tolerance, change, residual, step length).
//!
//! **Drying and rewetting.** A saturated thickness `h − bottom` that is cut off at zero
//! would make a cell's row vanish as it dries, and cells would flip between wet and dry from
//! one outer iteration to the next. quintet uses a smooth thickness instead (see
//! [`Aquifer`]): `b(h) = w·ln(1 + e^((h − bottom)/w))`, `w` the smoothing width (default
//! 5 cm), which equals `h − bottom` a few `w` above the bottom and falls off exponentially
//! below it, with a floor of `10⁻⁶·w`; its slope is continuous, so the Newton matrix stays
//! regular and no cell changes state abruptly. A cell whose head lies within `w` of its
//! bottom is reported dry ([`AquiferCheck`], [`NonlinearSystem::check`]). Pumping wells (point
//! sources with a negative rate) deliver less as their cell dries
//! ([`Aquifer::pumping_reduction`]); the budget shows the rate delivered.
//!
//! **Limits.** The model is two-dimensional under the Dupuit–Forchheimer assumption (no
//! vertical flow, no seepage faces: near a pumped well the computed water table lies below
//! the real one, and the head in a well cell is a cell average, not the level in the well).
//! Dry cells are a numerical device: their heads are poorly determined (their conductances
//! nearly vanish) and mean only "below the bottom"; most of the late outer iterations of a
//! drying model settle them. The smoothing misstates the thickness of cells within a few `w`
//! of their bottom. Heads below the top of a [`AquiferKind::Confined`] aquifer keep the full
//! transmissivity: [`Aquifer::check`] warns of it, on the heads of a linear model as well.
//! Radiation on a cell-centred axis acts at the cell's temperature, not the surface's.
//! As everywhere in this module: results support, and do not replace, engineering judgement;
//! design to local codes and licensed professional practice.
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
mod nonlinear;
mod solver;
mod spec;
mod steady;
mod transient;
mod update;

pub(crate) use assemble::{assemble_rows, Rows};
pub(crate) use book::Book;
pub(crate) use steady::settle;

pub use advection::{AdvectionScheme, FaceFlows};
pub use axis::{Axis, AxisLayout};
pub use book::Forcing;
pub use budget::{Budget, BudgetLine, BudgetTable, BudgetWarning, FlowKind};
pub use field::{Field, Profile};
pub use geometry::Geometry;
pub use medium::{Conductivity, ConductivityBasis, Storage};
pub use nonlinear::{
    Aquifer, AquiferCheck, AquiferKind, ConductivityLaw, FaceWeighting, NonlinearSystem,
    OuterMethod, OuterReport, OuterSettings, OuterStep, STEFAN_BOLTZMANN,
};
pub use spec::{ConditionId, Model, SingularPolicy};
pub use steady::SteadySystem;
pub use transient::{Stepper, TimeScheme, DEFAULT_DAMPED_STEPS};

//! [`SteadySystem`]: an assembled steady model, ready for any driver, with its budget; its
//! conductivity and exchange coefficients can change in place.

use super::advection::FaceFlows;
use super::assemble::{assemble, reassemble, Assembly, Region};
use super::book::{Book, Forcing};
use super::budget::Budget;
use super::field::Profile;
use super::medium::Conductivity;
use super::solver::default_solver;
use super::spec::{ConditionId, Model, SingularPolicy};
use super::update::{Change, Reassemble};
use crate::error::Location;
use crate::operator::check_len;
use crate::space::total;
use crate::Workspace;
use crate::{Banded5, Error, FixedCells, Grid, IterativeSolver, Progress, Report, Side, Stencil5};

/// Sources of a floating region must balance to this fraction of their total magnitude.
pub(crate) const BALANCE_TOLERANCE: f64 = 1e-6;

/// An assembled steady model: the operator `A` (a [`Banded5`] with its fixed cells; symmetric
/// unless a flow field carries the modelled quantity, see [`Model::set_advection`](super::Model::set_advection)),
/// the right-hand side `q` of `A·φ = q`, and the bookkeeping for the budget.
///
/// Row `k` of the operator is the balance of cell `k`'s control volume, in W or m³/s:
/// conduction to the neighbours through the face conductances, plus every exchange
/// conductance on the cell, equals the sources in the cell plus the exchanges' conductance ×
/// outside value (and, with a flow field, what the flow carries through the faces). Prescribed
/// cells and inactive cells are fixed cells of the operator. Without a flow field the free part
/// is symmetric positive definite whenever every connected region reaches a prescribed value
/// or an exchange, which [`Model::assemble`](super::Model::assemble) checks.
///
/// Use [`solve`](SteadySystem::solve) with any [`IterativeSolver`], or take
/// [`operator`](SteadySystem::operator) and [`rhs`](SteadySystem::rhs) to a driver directly
/// after [`prepare`](SteadySystem::prepare) has written the fixed values into `x`.
///
/// **Changes in place.** Condition levels and rates change through [`force`](SteadySystem::force);
/// the conductivity ([`set_conductivity`](SteadySystem::set_conductivity)) and exchange
/// coefficients ([`set_exchange`](SteadySystem::set_exchange)) are re-assembled into the same
/// operator storage. Condition handles stay valid, and preconditioners built from the operator
/// keep working with it (rebuild them when the coefficients changed much: their quality
/// depends on the coefficients they were built from).
///
/// # Example
///
/// ```
/// use quintet::model::{Conductivity, Geometry, Model};
/// use quintet::prelude::*;
///
/// // A 1 m x 0.5 m steel plate (k = 45 W/(m·K)), 10 mm thick, west edge at 80 °C,
/// // east edge cooled by air at 20 °C with h = 15 W/(m²·K).
/// let geometry = Geometry::cell_centered(40, 20, 0.025, 0.025, 0.01)?;
/// let mut model = Model::new(geometry, Conductivity::isotropic(45.0))?;
/// model.prescribe_edge("hot end", Side::West, 80.0)?;
/// model.edge_exchange("air", Side::East, 15.0, 20.0)?;
/// let system = model.assemble()?;
/// check_symmetry(system.operator(), 1e-15)?;
///
/// let mut t = system.initial_solution(20.0);
/// let mut pcg = Pcg::new(Jacobi::new(system.operator())?);
/// system.solve(&mut pcg, &mut t, &mut Workspace::new())?;
/// assert!(t.iter().all(|&v| v > 20.0 && v < 80.0));
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct SteadySystem {
    model: Model,
    operator: Banded5<f64>,
    rhs: Vec<f64>,
    book: Book,
    inactive: Vec<usize>,
    inactive_value: f64,
    regions: Vec<Region>,
    volumes: Vec<f64>,
    mean: f64,
    symmetric: bool,
}

impl SteadySystem {
    /// Assemble `model` (see [`Model::assemble`](super::Model::assemble)).
    pub(crate) fn new(model: &Model) -> Result<SteadySystem, Error> {
        let Assembly {
            grid,
            bands,
            mut fixed,
            book,
            inactive,
            inactive_value,
            floating,
            volumes,
            symmetric,
            ..
        } = assemble(model, false)?;
        let mean = settle(model.singular, grid, &floating, &mut fixed)?;
        let [center, west, east, south, north] = bands;
        let operator = Banded5::new(grid, center, west, east, south, north)?
            .with_fixed(FixedCells::new(grid, fixed)?)?;
        let mut system = SteadySystem {
            model: model.clone(),
            operator,
            rhs: vec![0.0; grid.cells()],
            book,
            inactive,
            inactive_value,
            regions: floating,
            volumes,
            mean,
            symmetric,
        };
        system.refresh_rhs()?;
        Ok(system)
    }
    /// Whether the operator is symmetric: always without a flow field
    /// ([`Model::set_advection`](super::Model::set_advection)), and with one only if no flow
    /// crosses a face between two active cells.
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 3, 1.0, 1.0, 1.0)?, Conductivity::isotropic(2.0))?;
    /// # model.prescribe_edge("wall", Side::West, 0.0)?;
    /// assert!(model.assemble()?.is_symmetric());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn is_symmetric(&self) -> bool {
        self.symmetric
    }

    /// The driver the model picks for this system, with default stopping options (change them
    /// through [`IterativeSolver::options_mut`]): PCG with the [`Multigrid`](crate::Multigrid)
    /// V-cycle when the operator [`is_symmetric`](SteadySystem::is_symmetric) (an iteration
    /// count that grows neither with the grid nor with the contrast),
    /// [`BiCgStab`](crate::BiCgStab) with [`Ilu0`](crate::Ilu0) when a flow field makes it
    /// non-symmetric (see "Choosing a solver" in the crate docs for when multigrid or SIP does
    /// better there). Any other driver works through [`solve`](SteadySystem::solve) as well.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::NonPositiveCenter`](crate::ErrorKind::NonPositiveCenter) if a free cell's
    /// center is not positive (the set-up of either preconditioner refuses it), and
    /// [`ErrorKind::PivotBreakdown`](crate::ErrorKind::PivotBreakdown) if the ILU(0) factor
    /// meets a pivot that is not positive (central differencing far above cell Péclet 2).
    ///
    /// ```
    /// use quintet::model::{AdvectionScheme, Conductivity, FaceFlows, Geometry, Model};
    /// use quintet::prelude::*;
    /// let geometry = Geometry::cell_centered(30, 10, 1.0, 1.0, 1.0)?;
    /// let mut model = Model::new(geometry.clone(), Conductivity::isotropic(1.0))?;
    /// model.set_advection(FaceFlows::uniform(&geometry, 3.0, 0.0, 1.0)?, AdvectionScheme::Upwind)?;
    /// model.inflow_value("inlet", Side::West, 1.0)?;
    /// model.prescribe_edge("outlet", Side::East, 0.0)?;
    /// let system = model.assemble()?;
    /// let mut solver = system.default_solver()?;
    /// solver.options_mut().tolerances.relative = 1e-10;
    /// let mut t = system.initial_solution(0.0);
    /// let report = system.solve(&mut solver, &mut t, &mut Workspace::new())?;
    /// assert!(report.converged());
    /// // No new extremum (an M-matrix): every value between the inflow's 1 and the outlet's 0.
    /// assert!(t.iter().all(|&v| (-1e-9..=1.0 + 1e-9).contains(&v)));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn default_solver(&self) -> Result<Box<dyn IterativeSolver<f64>>, Error> {
        default_solver(&self.operator, self.symmetric)
    }

    /// The operator, with prescribed and inactive cells as fixed cells: symmetric unless a
    /// flow field carries the modelled quantity across faces (see
    /// [`is_symmetric`](SteadySystem::is_symmetric)).
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side, Stencil5};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 3, 1.0, 1.0, 1.0)?, Conductivity::isotropic(2.0))?;
    /// # model.prescribe_edge("wall", Side::West, 0.0)?;
    /// let system = model.assemble()?;
    /// assert_eq!(system.operator().coeffs(1, 1).east, -2.0); // k·b·L/d = 2·1·1/1
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn operator(&self) -> &Banded5<f64> {
        &self.operator
    }

    /// The right-hand side (W or m³/s per cell; zero at fixed cells).
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_cells("end", [0], 0.0)?;
    /// model.point_source("heater", 2, 7.5)?;
    /// assert_eq!(model.assemble()?.rhs()[2], 7.5);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn rhs(&self) -> &[f64] {
        &self.rhs
    }

    /// The grid.
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 2, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_edge("wall", Side::West, 0.0)?;
    /// assert_eq!(model.assemble()?.grid().cells(), 6);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn grid(&self) -> Grid {
        self.operator.grid()
    }

    /// A solution vector to start from: prescribed values at prescribed cells, the inactive
    /// value at inactive cells, and `start` everywhere else.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.prescribe_cells("end", [0], 5.0)?;
    /// assert_eq!(model.assemble()?.initial_solution(1.0), vec![5.0, 1.0, 1.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn initial_solution(&self, start: f64) -> Vec<f64> {
        let mut x = vec![start; self.grid().cells()];
        self.write_fixed(&mut x);
        x
    }

    /// Write the prescribed and inactive values into `x` (the other cells keep their values, a
    /// warm start).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) unless `x` has one entry per cell.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.prescribe_cells("end", [2], 5.0)?;
    /// let system = model.assemble()?;
    /// let mut x = vec![0.0; 3];
    /// system.prepare(&mut x)?;
    /// assert_eq!(x, vec![0.0, 0.0, 5.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn prepare(&self, x: &mut [f64]) -> Result<(), Error> {
        check_len("x", self.grid().cells(), x.len())?;
        self.write_fixed(x);
        Ok(())
    }

    /// Prepare `x` and solve with `solver`, using `ws` as scratch. For a problem assembled
    /// with [`SingularPolicy::FixMean`], each floating region is then shifted to the mean.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch), and whatever the driver returns (the last iterate is then
    /// in `x`).
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side, Cg, Workspace};
    /// # let mut model = Model::new(Geometry::cell_centered(8, 8, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_edge("wall", Side::West, 0.0)?;
    /// # model.volumetric_source("q", 1.0)?;
    /// let system = model.assemble()?;
    /// let mut x = system.initial_solution(0.0);
    /// let report = system.solve(&mut Cg::default(), &mut x, &mut Workspace::new())?;
    /// assert!(report.converged());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn solve<S: IterativeSolver<f64> + ?Sized>(
        &self,
        solver: &mut S,
        x: &mut [f64],
        ws: &mut Workspace<f64>,
    ) -> Result<Report, Error> {
        self.solve_observed(solver, x, ws, &mut |_| {})
    }

    /// [`solve`](SteadySystem::solve), calling `observer` with the [`Progress`] of the solve
    /// before the first iteration and after each (a log line, a progress bar).
    ///
    /// # Errors
    ///
    /// As for [`solve`](SteadySystem::solve).
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side};
    /// use quintet::prelude::*;
    /// # let mut model = Model::new(Geometry::cell_centered(20, 20, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_edge("wall", Side::West, 0.0)?;
    /// # model.volumetric_source("q", 1.0)?;
    /// let system = model.assemble()?;
    /// let mut x = system.initial_solution(0.0);
    /// let mut pcg = Pcg::new(Multigrid::new(system.operator(), MultigridSettings::default())?);
    /// let mut lines = Vec::new();
    /// let report = system.solve_observed(&mut pcg, &mut x, &mut Workspace::new(), &mut |p| {
    ///     lines.push(format!("iteration {}: |r|/|b| = {:.1e}", p.iteration, p.relative_residual()));
    /// })?;
    /// assert_eq!(lines.len(), report.iterations + 1);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn solve_observed<S: IterativeSolver<f64> + ?Sized>(
        &self,
        solver: &mut S,
        x: &mut [f64],
        ws: &mut Workspace<f64>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        self.prepare(x)?;
        let report = solver.solve_observed(&self.operator, &self.rhs, x, ws, observer)?;
        self.shift_regions(x);
        Ok(report)
    }

    /// The flow budget of solution `x`: one line per condition, in W or m³/s.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) unless `x` has one entry per cell.
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side, Cg, SolveOptions, Workspace};
    /// # let mut model = Model::new(Geometry::cell_centered(8, 8, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.prescribe_edge("wall", Side::West, 0.0)?;
    /// model.volumetric_source("generation", 1.0)?;
    /// let system = model.assemble()?;
    /// let mut x = system.initial_solution(0.0);
    /// let mut cg = Cg::default().with_options(SolveOptions::default().tolerance(1e-12));
    /// system.solve(&mut cg, &mut x, &mut Workspace::new())?;
    /// let budget = system.budget(&x)?;
    /// assert_eq!(budget.total_in, 64.0);
    /// assert!(budget.imbalance_percent().abs() < 1e-8);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn budget(&self, x: &[f64]) -> Result<Budget, Error> {
        check_len("x", self.grid().cells(), x.len())?;
        Ok(self.book.steady_budget(&*self.model.space, x))
    }

    /// The flow through every face for solution `x` of a groundwater model (m³/s, by Darcy's
    /// law through the face conductances, and through the edges as the edge conditions pass
    /// it), times `heat_capacity`, the fluid's volumetric heat capacity `ρ_w·c_w`
    /// (J/(m³·K)): the [`FaceFlows`] that carry heat in a heat model on the same geometry
    /// ([`Model::set_advection`](super::Model::set_advection)). Faces next to inactive cells
    /// carry nothing; water entering or leaving inside a cell (wells, recharge, prescribed
    /// cells, cell exchanges) is not a face flow and shows in the heat model as fluid appearing
    /// or leaving there (see the module docs' Advection section). An edge node held at a
    /// prescribed value on a node-centred axis passes its flow through its edge face.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) and
    /// [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite) for a bad `x`;
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for a heat capacity
    /// that is not finite and `>= 0`, or a system that has a flow field itself.
    ///
    /// ```
    /// use quintet::model::{AdvectionScheme, Conductivity, Geometry, Model};
    /// use quintet::prelude::*;
    /// // Groundwater: 40 x 20 cells of 5 m, 10 m thick, K = 1e-4 m/s, heads 12 m west, 11 m east.
    /// let geometry = Geometry::cell_centered(40, 20, 5.0, 5.0, 10.0)?;
    /// let mut water = Model::new(geometry.clone(), Conductivity::isotropic(1e-4))?;
    /// water.prescribe_edge("upstream", Side::West, 12.0)?;
    /// water.prescribe_edge("downstream", Side::East, 11.0)?;
    /// let flow = water.assemble()?;
    /// let mut h = flow.initial_solution(11.5);
    /// let mut pcg = flow.default_solver()?;
    /// pcg.options_mut().tolerances.relative = 1e-12;
    /// flow.solve(&mut pcg, &mut h, &mut Workspace::new())?;
    /// let flows = flow.face_flows(&h, 4.18e6)?; // W/K
    /// // Darcy: q = K·Δh/L = 1e-4 · 1/200 m/s through 5 m x 10 m faces.
    /// assert!((flows.x_face(20, 3) / 4.18e6 - 1e-4 / 200.0 * 50.0).abs() < 1e-12);
    ///
    /// // Heat carried by that flow: rock at 2.5 W/(m·K), water entering at 14 °C.
    /// let mut heat = Model::new(geometry, Conductivity::isotropic(2.5))?;
    /// heat.set_advection(flows, AdvectionScheme::PowerLaw)?;
    /// heat.inflow_value("inflowing water", Side::West, 14.0)?;
    /// heat.prescribe_edge("far field", Side::East, 10.0)?;
    /// assert!(!heat.assemble()?.is_symmetric());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn face_flows(&self, x: &[f64], heat_capacity: f64) -> Result<FaceFlows, Error> {
        let grid = self.grid();
        check_len("x", grid.cells(), x.len())?;
        if let Some(k) = x.iter().position(|v| !v.is_finite()) {
            return Err(Error::non_finite("heads", Location::on(grid, k)));
        }
        if !(heat_capacity.is_finite() && heat_capacity >= 0.0) {
            return Err(Error::setting(
                "heat_capacity",
                heat_capacity,
                "finite and >= 0 (J/(m³·K))",
            ));
        }
        if self.model.advection.is_some() {
            return Err(Error::setting(
                "face flows",
                f64::NAN,
                "a system without a flow field of its own: face flows come from the Darcy operator of a groundwater model",
            ));
        }
        let (nx, ny) = (grid.nx(), grid.ny());
        let op = &self.operator;
        let mut xf = vec![0.0; (nx + 1) * ny];
        let mut yf = vec![0.0; nx * (ny + 1)];
        for k in 0..grid.cells() {
            let (i, j) = grid.coords(k);
            if i + 1 < nx {
                xf[i + 1 + (nx + 1) * j] = -op.east()[k] * (x[k] - x[k + 1]) * heat_capacity;
            }
            if j + 1 < ny {
                yf[i + nx * (j + 1)] = -op.north()[k] * (x[k] - x[k + nx]) * heat_capacity;
            }
        }
        for (k, side, inflow) in self.book.edge_inflows(x) {
            let (i, j) = grid.coords(k);
            let f = inflow * heat_capacity;
            match side {
                Side::West => xf[(nx + 1) * j] += f,
                Side::East => xf[nx + (nx + 1) * j] -= f,
                Side::South => yf[i] += f,
                Side::North => yf[i + nx * ny] -= f,
            }
        }
        FaceFlows::new(grid, xf, yf)
    }

    /// Change condition levels (outside values, prescribed values, rates) through a
    /// [`Forcing`] and rebuild the right-hand side; the operator is unchanged.
    ///
    /// # Errors
    ///
    /// Whatever `change` returns, and [`ErrorKind::UnbalancedSources`](crate::ErrorKind::UnbalancedSources) if a floating region's
    /// sources no longer balance (the levels are changed all the same).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_cells("end", [0], 0.0)?;
    /// let well = model.point_source("well", 2, -1.0)?;
    /// let mut system = model.assemble()?;
    /// system.force(|f| f.set(well, -2.0))?;
    /// assert_eq!(system.rhs()[2], -2.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn force(
        &mut self,
        change: impl FnOnce(&mut Forcing<'_>) -> Result<(), Error>,
    ) -> Result<(), Error> {
        let result = change(&mut Forcing {
            book: &mut self.book,
        });
        self.refresh_rhs()?;
        result
    }

    /// Number of floating regions whose mean is held by [`SingularPolicy::FixMean`].
    ///
    /// ```
    /// use quintet::model::{Conductivity, Geometry, Model, SingularPolicy};
    /// let mut model = Model::new(Geometry::cell_centered(3, 3, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.set_singular_policy(SingularPolicy::FixMean(0.0));
    /// assert_eq!(model.assemble()?.floating_regions(), 1);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn floating_regions(&self) -> usize {
        self.regions.len()
    }

    /// The budget bookkeeping (for the nonlinear systems built on this one).
    pub(crate) fn book(&self) -> &Book {
        &self.book
    }

    /// The model record the system was assembled from.
    pub(crate) fn model(&self) -> &Model {
        &self.model
    }

    fn write_fixed(&self, x: &mut [f64]) {
        self.book.write_fixed(x);
        for &k in &self.inactive {
            x[k] = self.inactive_value;
        }
    }

    /// Replace the conductivity and re-assemble the operator in place (face conductances,
    /// the half cells of edge conditions, the links of prescribed cells). Condition levels,
    /// handles and the operator's storage are kept.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) for a field of the wrong
    /// length, [`ErrorKind::InvalidProperty`](crate::ErrorKind::InvalidProperty) for a negative
    /// or non-finite value at an active cell, and the singular-problem errors of
    /// [`Model::assemble`](super::Model::assemble) if a region is cut loose; the system is then
    /// left as it was.
    ///
    /// ```
    /// use quintet::model::{Conductivity, Geometry, Model};
    /// use quintet::prelude::*;
    /// let mut model = Model::new(Geometry::cell_centered(10, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.prescribe_cells("ends", [0, 9], 0.0)?;
    /// let heater = model.point_source("heater", 5, 1.0)?;
    /// let mut system = model.assemble()?;
    /// let mut ws = Workspace::new();
    /// let mut t = system.initial_solution(0.0);
    /// system.solve(&mut Cg::default(), &mut t, &mut ws)?;
    /// let before = t[5];
    /// system.set_conductivity(Conductivity::isotropic(2.0))?; // twice as conductive
    /// system.solve(&mut Cg::default(), &mut t, &mut ws)?;
    /// assert!((t[5] - before / 2.0).abs() < 1e-9 * before);
    /// assert!(system.budget(&t)?.line(heater).is_some()); // the handle still works
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_conductivity(&mut self, conductivity: Conductivity) -> Result<(), Error> {
        self.change(Change::Conductivity(conductivity))
    }

    /// Replace the exchange coefficient of condition `id` (an edge exchange's coefficient per
    /// face area, or a cell exchange's conductance; one value, or one per cell of the
    /// condition) and re-assemble the operator in place. The outside value is a level: change
    /// it with [`force`](SteadySystem::force).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::UnknownCondition`](crate::ErrorKind::UnknownCondition) for a handle of
    /// another model, [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) if the
    /// condition is not an exchange, the profile errors of
    /// [`Model::edge_exchange`](super::Model::edge_exchange), and those of
    /// [`set_conductivity`](SteadySystem::set_conductivity); the system is then left as it was.
    ///
    /// ```
    /// use quintet::model::{Conductivity, Geometry, Model};
    /// use quintet::prelude::*;
    /// let mut model = Model::new(Geometry::cell_centered(6, 6, 10.0, 10.0, 5.0)?, Conductivity::isotropic(1e-4))?;
    /// let river = model.edge_exchange("river", Side::West, 1e-6, 12.0)?;
    /// model.point_source("well", 20, -1e-3)?;
    /// let mut system = model.assemble()?;
    /// system.set_exchange(river, 4e-6)?; // the river bed was cleaned
    /// let mut h = system.initial_solution(12.0);
    /// system.solve(&mut Cg::default().with_options(SolveOptions::default().tolerance(1e-12)), &mut h, &mut Workspace::new())?;
    /// let budget = system.budget(&h)?;
    /// assert!((budget.line(river).map_or(0.0, |l| l.inflow) - 1e-3).abs() < 1e-9);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_exchange(
        &mut self,
        id: ConditionId,
        coefficient: impl Into<Profile>,
    ) -> Result<(), Error> {
        self.change(Change::Exchange(id, coefficient.into()))
    }

    /// Replace the flow field (same scheme) and re-assemble the operator in place: a new
    /// groundwater solve, another pumping rate. Condition levels and handles are kept; the
    /// system may become symmetric or not ([`is_symmetric`](SteadySystem::is_symmetric)), so
    /// take the driver from [`default_solver`](SteadySystem::default_solver) again.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::GridMismatch`](crate::ErrorKind::GridMismatch) for flows of another grid,
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) if the model had no flow
    /// field when it was assembled, [`ErrorKind::NoInflowValue`](crate::ErrorKind::NoInflowValue)
    /// if the new flows enter where no inflow value is given; the system is then left as it was.
    ///
    /// ```
    /// use quintet::model::{AdvectionScheme, Conductivity, FaceFlows, Geometry, Model};
    /// use quintet::Side;
    /// let geometry = Geometry::cell_centered(10, 4, 1.0, 1.0, 1.0)?;
    /// let mut model = Model::new(geometry.clone(), Conductivity::isotropic(1.0))?;
    /// model.set_advection(FaceFlows::uniform(&geometry, 0.0, 0.0, 1.0)?, AdvectionScheme::Upwind)?;
    /// model.inflow_value("inlet", Side::West, 5.0)?;
    /// model.prescribe_edge("outlet", Side::East, 0.0)?;
    /// let mut system = model.assemble()?;
    /// assert!(system.is_symmetric());
    /// system.set_flows(FaceFlows::uniform(&geometry, 2.0, 0.0, 1.0)?)?; // the pumps started
    /// assert!(!system.is_symmetric());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_flows(&mut self, flows: FaceFlows) -> Result<(), Error> {
        self.change(Change::Flows(flows))
    }

    fn refresh_rhs(&mut self) -> Result<(), Error> {
        self.book.fill_rhs(&mut self.rhs);
        for region in &self.regions {
            let mut sums = [0.0, 0.0];
            for &k in &region.cells {
                sums[0] += self.rhs[k];
                sums[1] += self.rhs[k].abs();
            }
            total(&*self.model.space, &mut sums);
            let [net, all] = sums;
            if net.abs() > BALANCE_TOLERANCE * all {
                let cell = region.cells[0];
                return Err(Error::unbalanced(Location::on(self.grid(), cell), net, all));
            }
        }
        Ok(())
    }

    fn shift_regions(&self, x: &mut [f64]) {
        for region in &self.regions {
            let mut sums = [0.0, 0.0];
            for &k in &region.cells {
                sums[0] += self.volumes[k] * x[k];
                sums[1] += self.volumes[k];
            }
            total(&*self.model.space, &mut sums);
            let shift = self.mean - sums[0] / sums[1];
            for &k in &region.cells {
                x[k] += shift;
            }
        }
    }
}

/// The mean a singular problem is held at, with one cell of each floating region pinned as a
/// fixed cell ([`SingularPolicy::FixMean`]), or the error [`SingularPolicy::Reject`] asks for.
pub(crate) fn settle(
    policy: SingularPolicy,
    grid: Grid,
    floating: &[Region],
    fixed: &mut Vec<usize>,
) -> Result<f64, Error> {
    match (policy, floating.first()) {
        (_, None) => Ok(0.0),
        (SingularPolicy::Reject, Some(region)) => Err(Error::floating(
            Location::on(grid, region.cells[0]),
            region.cells.len(),
        )),
        (SingularPolicy::FixMean(mean), Some(_)) => {
            if !mean.is_finite() {
                return Err(Error::setting("fixed mean", mean, "a finite value"));
            }
            // Pin one cell per region; its equation holds once the sources balance.
            fixed.extend(floating.iter().map(|r| r.cells[0]));
            fixed.sort_unstable();
            Ok(mean)
        }
    }
}

impl Reassemble for SteadySystem {
    fn record(&mut self) -> &mut Model {
        &mut self.model
    }

    /// The model record again into the operator's storage and the book's weights.
    fn reassemble(&mut self) -> Result<(), Error> {
        let grid = self.grid();
        let mut capacity = Vec::new();
        let found = self.operator.refill(|bands| {
            reassemble(&self.model, false, bands, &mut self.book, &mut capacity)
        })??;
        let mut fixed = found.fixed;
        let mean = settle(self.model.singular, grid, &found.floating, &mut fixed)?;
        if self.operator.fixed().map(|f| f.cells()) != Some(&fixed[..]) {
            self.operator.set_fixed(FixedCells::new(grid, fixed)?)?;
        }
        self.regions = found.floating;
        self.mean = mean;
        self.symmetric = found.symmetric;
        self.refresh_rhs()
    }
}

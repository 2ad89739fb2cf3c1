//! Transient stepping: backward Euler and Crank–Nicolson on the assembled model, with one
//! operator, one solver workspace and no allocation per step.
//!
//! With storage capacities `S` (a diagonal), the conduction operator `A` and the source vector
//! `b(t)`, each step solves the θ-scheme
//!
//! ```text
//! (S/Δt + θ·A)·φⁿ⁺¹ = (S/Δt − (1 − θ)·A)·φⁿ + θ·b(tⁿ⁺¹) + (1 − θ)·b(tⁿ)
//! ```
//!
//! with θ = 1 (backward Euler, first order in time, no oscillation) or θ = ½ (Crank–Nicolson,
//! second order). The operator on the left is built once. A backward-Euler half step,
//! `(2S/Δt + A)·φ = 2S/Δt·φᵐ + b`, is the same operator as Crank–Nicolson's times two, so the
//! damped start below costs nothing extra.

mod state;
mod step;

use super::advection::FaceFlows;
use super::assemble::{assemble, reassemble, Region};
use super::book::{Book, Forcing};
use super::field::Profile;
use super::medium::{Conductivity, Storage};
use super::solver::default_solver;
use super::spec::{ConditionId, Model};
use super::update::{Change, Reassemble};
use crate::blocks::Blocks;
use crate::error::Location;
use crate::operator::check_len;
use crate::space::first_flagged;
use crate::{
    check_symmetry, Banded5, Error, FixedCells, Grid, IterativeSolver, Jacobi, Pcg, Progress,
    Report, Stencil5, Workspace,
};

/// Crank–Nicolson steps replaced by damped steps (two backward-Euler half steps each) unless
/// the caller says otherwise with [`Stepper::damped_start`].
///
/// ```
/// assert_eq!(quintet::model::DEFAULT_DAMPED_STEPS, 2);
/// ```
pub const DEFAULT_DAMPED_STEPS: usize = 2;

/// The time discretisation.
///
/// ```
/// use quintet::model::TimeScheme;
/// assert_eq!(TimeScheme::CrankNicolson.theta(), 0.5);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum TimeScheme {
    /// Fully implicit, first order in time, unconditionally stable and free of oscillation.
    BackwardEuler,
    /// The trapezoidal rule, second order in time, unconditionally stable; a sudden change
    /// excites slowly decaying oscillations of the fine-scale components unless the first
    /// steps are damped ([`Stepper::damped_start`]).
    CrankNicolson,
}

impl TimeScheme {
    /// The implicit weight θ: 1 for backward Euler, ½ for Crank–Nicolson.
    ///
    /// ```
    /// assert_eq!(quintet::model::TimeScheme::BackwardEuler.theta(), 1.0);
    /// ```
    pub fn theta(self) -> f64 {
        match self {
            TimeScheme::BackwardEuler => 1.0,
            TimeScheme::CrankNicolson => 0.5,
        }
    }
}

/// How the last step's boundary flows are weighted in its budget.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) enum LastStep {
    None,
    /// Flows at the end of the step only.
    Implicit,
    /// Half at the start of the step, half at the end.
    Trapezoid,
    /// Half at the middle (after the first half step), half at the end.
    HalfSteps,
}

/// Steps a transient model through time with any driver, reusing one operator and one
/// workspace; each step warm-starts from the previous solution and allocates nothing (the
/// driver's [`Report`] is the only allocation).
///
/// Conditions keep their levels from step to step unless a forcing closure changes them
/// ([`step_with`](Stepper::step_with)): the closure is called with each time at which the
/// scheme needs the levels (the end of the step, and the middle of a damped step) and sets
/// them through a [`Forcing`]. Prescribed cells take their prescribed values at the start.
///
/// # Example
///
/// ```
/// use quintet::model::{Axis, Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
/// use quintet::Side;
///
/// // A concrete slab 0.2 m thick (k = 1.4 W/(m·K), ρc = 2.0e6 J/(m³·K)) at 10 °C; at t = 0
/// // its west face is brought to 60 °C, its east face stays insulated. One square metre of
/// // face: 41 nodes across the slab, one cell of 1 m along it, 1 m deep.
/// let geometry = Geometry::new(Axis::uniform_nodes(41, 0.005)?, Axis::uniform_cells(1, 1.0)?, 1.0)?;
/// let mut model = Model::new(geometry, Conductivity::isotropic(1.4))?;
/// model.set_storage(Storage::per_volume(2.0e6))?;
/// model.prescribe_edge("heated face", Side::West, 60.0)?;
/// let initial = vec![10.0; 41];
/// let mut stepper = Stepper::with_jacobi(&model, TimeScheme::CrankNicolson, 600.0, 0.0, &initial)?;
/// for _ in 0..12 {
///     stepper.step()?; // two hours in ten-minute steps
/// }
/// let budget = stepper.budget().expect("a step was taken");
/// assert!(budget.imbalance_percent().abs() < 1e-4);
/// assert!(stepper.solution()[40] > 10.0 && stepper.solution()[40] < 60.0);
/// # Ok::<(), quintet::Error>(())
/// ```
pub struct Stepper<S> {
    model: Model,
    solver: S,
    ws: Workspace<f64>,
    blocks: Blocks<f64>,
    step_op: Banded5<f64>,
    a_center: Vec<f64>,
    capacity_dt: Vec<f64>,
    book: Book,
    inactive: Vec<usize>,
    inactive_value: f64,
    scheme: TimeScheme,
    dt: f64,
    time: f64,
    steps: usize,
    damped_steps: usize,
    last: LastStep,
    x: Vec<f64>,
    x_start: Vec<f64>,
    x_mid: Vec<f64>,
    levels_start: Vec<f64>,
    levels_mid: Vec<f64>,
    rhs: Vec<f64>,
    b_prev: Vec<f64>,
    b_new: Vec<f64>,
    symmetric: bool,
}

impl<S: IterativeSolver<f64>> Stepper<S> {
    /// Set up a run of `model` (which must have storage) with time step `dt` (s) from
    /// `start_time` (s) and the `initial` solution. `make_solver` builds the driver from the
    /// step operator, so a preconditioner can be set up from it once.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for a step that is not positive and finite, a start time that
    /// is not finite, or a model without storage; [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) and
    /// [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite) for a bad initial solution; the assembly errors of
    /// [`Model::assemble`] (a region is floating only if it also has no storage); whatever
    /// `make_solver` returns.
    ///
    /// ```
    /// use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// use quintet::{Cg, Side};
    /// let mut model = Model::new(Geometry::cell_centered(10, 10, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.set_storage(Storage::per_area(1e-3))?;
    /// let mut run = Stepper::new(&model, TimeScheme::BackwardEuler, 60.0, 0.0, &[0.0; 100], |_| Ok(Cg::default()))?;
    /// run.step()?;
    /// assert_eq!(run.time(), 60.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(
        model: &Model,
        scheme: TimeScheme,
        dt: f64,
        start_time: f64,
        initial: &[f64],
        make_solver: impl FnOnce(&Banded5<f64>) -> Result<S, Error>,
    ) -> Result<Stepper<S>, Error> {
        Stepper::set_up(model, scheme, dt, start_time, initial, |op, _| {
            make_solver(op)
        })
    }

    /// [`Stepper::new`], with `make_solver` told whether the step operator is symmetric.
    fn set_up(
        model: &Model,
        scheme: TimeScheme,
        dt: f64,
        start_time: f64,
        initial: &[f64],
        make_solver: impl FnOnce(&Banded5<f64>, bool) -> Result<S, Error>,
    ) -> Result<Stepper<S>, Error> {
        if !(dt.is_finite() && dt > 0.0) {
            return Err(Error::setting("time step", dt, "a finite value > 0 (s)"));
        }
        if !start_time.is_finite() {
            return Err(Error::setting(
                "start time",
                start_time,
                "a finite value (s)",
            ));
        }
        let grid = model.grid();
        let n = grid.cells();
        check_len("initial solution", n, initial.len())?;
        if let Some(k) = first_flagged(&*model.space, n, |k| !initial[k].is_finite()) {
            return Err(Error::non_finite("initial solution", Location::on(grid, k)));
        }
        let assembly = assemble(model, true)?;
        refuse_floating(grid, &assembly.floating)?;
        let symmetric = assembly.symmetric;
        let theta = scheme.theta();
        let mut capacity_dt = assembly.capacity;
        capacity_dt.iter_mut().for_each(|c| *c /= dt);
        let mut bands = assembly.bands;
        let mut a_center = Vec::new();
        to_step_operator(theta, &capacity_dt, bands.each_mut(), &mut a_center);
        let [center, west, east, south, north] = bands;
        let step_op = Banded5::new(grid, center, west, east, south, north)?
            .with_fixed(FixedCells::new(grid, assembly.fixed)?)?;
        let solver = make_solver(&step_op, symmetric)?;
        let mut stepper = Stepper {
            model: model.clone(),
            solver,
            ws: Workspace::for_grid(grid).with_space(model.space.clone()),
            blocks: Blocks::for_grid(grid),
            step_op,
            a_center,
            capacity_dt,
            levels_start: assembly.book.levels.clone(),
            levels_mid: assembly.book.levels.clone(),
            book: assembly.book,
            inactive: assembly.inactive,
            inactive_value: assembly.inactive_value,
            scheme,
            dt,
            time: start_time,
            steps: 0,
            damped_steps: match scheme {
                TimeScheme::BackwardEuler => 0,
                TimeScheme::CrankNicolson => DEFAULT_DAMPED_STEPS,
            },
            last: LastStep::None,
            x: initial.to_vec(),
            x_start: initial.to_vec(),
            x_mid: initial.to_vec(),
            rhs: vec![0.0; n],
            b_prev: vec![0.0; n],
            b_new: vec![0.0; n],
            symmetric,
        };
        stepper.write_fixed();
        stepper.book.fill_rhs(&mut stepper.b_prev);
        Ok(stepper)
    }

    /// Replace the first `steps` Crank–Nicolson steps by two backward-Euler half steps each
    /// (Rannacher 1984, from memory: "Finite element solution of diffusion problems with
    /// irregular data", Numer. Math. 43). This damps the oscillation a step change excites
    /// and keeps second order. Default [`DEFAULT_DAMPED_STEPS`]; 0 gives plain
    /// Crank–Nicolson. No effect on backward Euler.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// let run = Stepper::with_jacobi(&model, TimeScheme::CrankNicolson, 1.0, 0.0, &[0.0; 16])?
    ///     .damped_start(0);
    /// # let _ = run;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn damped_start(mut self, steps: usize) -> Stepper<S> {
        if self.scheme == TimeScheme::CrankNicolson {
            self.damped_steps = steps;
        }
        self
    }

    /// Take one step with the levels unchanged.
    ///
    /// # Errors
    ///
    /// Whatever the driver returns; the stepper is then back at the start of the step.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// # model.point_source("heater", 5, 1.0)?;
    /// let mut run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 0.5, 0.0, &[0.0; 16])?;
    /// let report = run.step()?;
    /// assert!(report.converged() && run.steps() == 1);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn step(&mut self) -> Result<Report, Error> {
        self.step_with(|_, _| Ok(()))
    }

    /// Take one step, with `forcing(t, levels)` setting the levels at each time `t` the scheme
    /// needs them.
    ///
    /// # Errors
    ///
    /// Whatever `forcing` or the driver returns; the stepper is then back at the start of the
    /// step (solution, levels and time).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 4, 10.0, 10.0, 5.0)?, Conductivity::isotropic(1e-4))?;
    /// # model.set_storage(Storage::per_area(1e-4))?;
    /// let well = model.point_source("well", 5, 0.0)?;
    /// let mut run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 3600.0, 0.0, &[0.0; 16])?;
    /// // The well starts pumping 2 L/s after one hour.
    /// for _ in 0..3 {
    ///     run.step_with(|t, f| f.set(well, if t > 3600.0 { -2e-3 } else { 0.0 }))?;
    /// }
    /// assert!(run.solution()[5] < 0.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn step_with(
        &mut self,
        forcing: impl FnMut(f64, &mut Forcing<'_>) -> Result<(), Error>,
    ) -> Result<Report, Error> {
        self.step_observed(forcing, &mut |_| {})
    }

    /// [`step_with`](Stepper::step_with), calling `observer` with the [`Progress`] of each
    /// solve of the step (one, or two for a damped Crank–Nicolson step) before its first
    /// iteration and after each: a progress bar or a log line inside a long step.
    ///
    /// # Errors
    ///
    /// As for [`step_with`](Stepper::step_with); the error's context names the step and its
    /// start time.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(16, 16, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// # model.point_source("heater", 100, 1.0)?;
    /// let mut run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 10.0, 0.0, &[0.0; 256])?;
    /// let mut iterations = 0;
    /// let report = run.step_observed(|_, _| Ok(()), &mut |p| iterations = p.iteration)?;
    /// assert_eq!(iterations, report.iterations);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn step_observed(
        &mut self,
        mut forcing: impl FnMut(f64, &mut Forcing<'_>) -> Result<(), Error>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        self.x_start.copy_from_slice(&self.x);
        self.levels_start.copy_from_slice(&self.book.levels);
        let result = self.advance(&mut forcing, observer);
        match result {
            Ok((report, last)) => {
                std::mem::swap(&mut self.b_prev, &mut self.b_new);
                self.time += self.dt;
                self.steps += 1;
                self.last = last;
                Ok(report)
            }
            Err(e) => {
                self.x.copy_from_slice(&self.x_start);
                self.book.levels.copy_from_slice(&self.levels_start);
                let (step, t) = (self.steps + 1, self.time);
                Err(e.while_doing(format!("time step {step} (from t = {t} s)")))
            }
        }
    }

    /// Change the levels now, at the current time, without stepping (for example to set the
    /// forcing at the start time before the first step). Prescribed cells take the new values.
    ///
    /// # Errors
    ///
    /// Whatever `change` returns; the levels are then left as they were.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// let end = model.prescribe_cells("end", [0], 0.0)?;
    /// let mut run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 1.0, 0.0, &[0.0; 4])?;
    /// run.force_now(|f| f.set(end, 5.0))?;
    /// assert_eq!(run.solution()[0], 5.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn force_now(
        &mut self,
        change: impl FnOnce(&mut Forcing<'_>) -> Result<(), Error>,
    ) -> Result<(), Error> {
        self.levels_start.copy_from_slice(&self.book.levels);
        if let Err(e) = change(&mut Forcing {
            book: &mut self.book,
        }) {
            self.book.levels.copy_from_slice(&self.levels_start);
            return Err(e);
        }
        self.write_fixed();
        self.book.fill_rhs(&mut self.b_prev);
        Ok(())
    }
}

/// Changes of the model in place: re-assembled into the same step operator, handles kept.
impl<S: IterativeSolver<f64>> Stepper<S> {
    /// Replace the conductivity from the next step on, re-assembling the step operator in
    /// place (see [`SteadySystem::set_conductivity`](super::SteadySystem::set_conductivity)).
    ///
    /// # Errors
    ///
    /// As for [`SteadySystem::set_conductivity`](super::SteadySystem::set_conductivity); the
    /// stepper is then left as it was.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// let mut run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 1.0, 0.0, &[0.0; 4])?;
    /// run.set_conductivity(Conductivity::isotropic(3.0))?;
    /// assert_eq!(run.operator().east()[0], -3.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_conductivity(&mut self, conductivity: Conductivity) -> Result<(), Error> {
        self.change(Change::Conductivity(conductivity))
    }

    /// Replace the storage from the next step on, re-assembling the step operator in place.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) and
    /// [`ErrorKind::InvalidProperty`](crate::ErrorKind::InvalidProperty) for a bad field; the
    /// stepper is then left as it was.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// let mut run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 2.0, 0.0, &[0.0; 4])?;
    /// run.set_storage(Storage::per_area(4.0))?;
    /// assert_eq!(run.operator().center()[0], 2.0 + 1.0); // S/Δt + conductance to the one neighbour
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_storage(&mut self, storage: Storage) -> Result<(), Error> {
        self.change(Change::Storage(storage))
    }

    /// Replace the exchange coefficient of condition `id` from the next step on (see
    /// [`SteadySystem::set_exchange`](super::SteadySystem::set_exchange)).
    ///
    /// # Errors
    ///
    /// As for [`SteadySystem::set_exchange`](super::SteadySystem::set_exchange); the stepper is
    /// then left as it was.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # use quintet::Side;
    /// # let mut model = Model::new(Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// let air = model.edge_exchange("air", Side::North, 10.0, 20.0)?;
    /// let mut run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 1.0, 0.0, &[0.0; 16])?;
    /// run.set_exchange(air, 30.0)?; // the fan came on
    /// run.step()?;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_exchange(
        &mut self,
        id: ConditionId,
        coefficient: impl Into<Profile>,
    ) -> Result<(), Error> {
        self.change(Change::Exchange(id, coefficient.into()))
    }

    /// Replace the flow field from the next step on (see
    /// [`SteadySystem::set_flows`](super::SteadySystem::set_flows)): a pumping schedule, a
    /// seasonal flow. The driver stays; its preconditioner was built from the first step
    /// operator (rebuild the stepper when the flows change much).
    ///
    /// # Errors
    ///
    /// As for [`SteadySystem::set_flows`](super::SteadySystem::set_flows), and
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) if the run was set up
    /// with a symmetric step operator (no flow between active cells) and the new flows would
    /// make it non-symmetric; the stepper is then left as it was.
    ///
    /// ```
    /// use quintet::model::{AdvectionScheme, Conductivity, FaceFlows, Geometry, Model, Stepper, Storage, TimeScheme};
    /// use quintet::Side;
    /// let geometry = Geometry::cell_centered(20, 1, 1.0, 1.0, 1.0)?;
    /// let mut model = Model::new(geometry.clone(), Conductivity::isotropic(0.5))?;
    /// model.set_storage(Storage::per_volume(1e3))?;
    /// model.set_advection(FaceFlows::uniform(&geometry, 0.1, 0.0, 1.0)?, AdvectionScheme::Upwind)?;
    /// model.inflow_value("inlet", Side::West, 1.0)?;
    /// let mut run = Stepper::with_default_solver(&model, TimeScheme::BackwardEuler, 60.0, 0.0, &[0.0; 20])?;
    /// run.step()?;
    /// run.set_flows(FaceFlows::uniform(&geometry, 0.3, 0.0, 1.0)?)?; // three times the rate
    /// run.step()?;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_flows(&mut self, flows: FaceFlows) -> Result<(), Error> {
        self.change(Change::Flows(flows))
    }
}

impl<S: IterativeSolver<f64>> Reassemble for Stepper<S> {
    fn record(&mut self) -> &mut Model {
        &mut self.model
    }

    /// The step operator `S/Δt + θ·A`, the center of `A` and `S/Δt` from the model record,
    /// into their storage.
    fn reassemble(&mut self) -> Result<(), Error> {
        let (theta, dt) = (self.scheme.theta(), self.dt);
        let grid = self.step_op.grid();
        let symmetric = self.symmetric;
        let (model, book) = (&self.model, &mut self.book);
        let (capacity_dt, a_center) = (&mut self.capacity_dt, &mut self.a_center);
        self.step_op.refill(|mut bands| {
            let found = reassemble(
                model,
                true,
                bands.each_mut().map(|b| &mut **b),
                book,
                capacity_dt,
            )?;
            refuse_floating(grid, &found.floating)?;
            if symmetric && !found.symmetric {
                return Err(Error::setting(
                    "face flows",
                    f64::NAN,
                    "flows between active cells in a run set up with a symmetric step operator (its driver may need symmetry): set up the run with a nonzero flow field",
                ));
            }
            capacity_dt.iter_mut().for_each(|c| *c /= dt);
            to_step_operator(theta, capacity_dt, bands, a_center);
            Ok(())
        })?
    }
}

/// `Err(FloatingRegion)` for the first region with nothing that sets its level (no storage
/// either, in a transient run).
fn refuse_floating(grid: Grid, floating: &[Region]) -> Result<(), Error> {
    match floating.first() {
        None => Ok(()),
        Some(region) => Err(Error::floating(
            Location::on(grid, region.cells[0]),
            region.cells.len(),
        )),
    }
}

/// Turn the conduction operator `A` in `bands` (center, west, east, south, north) into the
/// step operator `S/Δt + θ·A` in place, keeping the center of `A` in `a_center`.
fn to_step_operator(
    theta: f64,
    capacity_dt: &[f64],
    bands: [&mut Vec<f64>; 5],
    a_center: &mut Vec<f64>,
) {
    let [center, couplings @ ..] = bands;
    a_center.clear();
    a_center.extend_from_slice(center);
    for ((c, cap), a) in center.iter_mut().zip(capacity_dt).zip(a_center.iter()) {
        *c = cap + theta * a;
    }
    for band in couplings {
        band.iter_mut().for_each(|v| *v *= theta);
    }
}

impl Stepper<Pcg<Jacobi<f64>>> {
    /// [`Stepper::new`] with PCG and a Jacobi preconditioner built from the step operator
    /// (default stopping tolerances; change them with [`Stepper::solver_mut`]). PCG needs a
    /// symmetric operator: for a model with a flow field use
    /// [`with_default_solver`](Stepper::with_default_solver).
    ///
    /// # Errors
    ///
    /// As for [`Stepper::new`], and [`ErrorKind::Asymmetric`](crate::ErrorKind::Asymmetric)
    /// naming a cell if a flow field makes the step operator non-symmetric.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// let run = Stepper::with_jacobi(&model, TimeScheme::CrankNicolson, 1.0, 0.0, &[0.0; 4])?;
    /// # let _ = run;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn with_jacobi(
        model: &Model,
        scheme: TimeScheme,
        dt: f64,
        start_time: f64,
        initial: &[f64],
    ) -> Result<Stepper<Pcg<Jacobi<f64>>>, Error> {
        Stepper::new(model, scheme, dt, start_time, initial, |op| {
            check_symmetry(op, 0.0).map_err(|e| {
                e.with_hint("PCG needs a symmetric operator; a model with a flow field is not: use Stepper::with_default_solver or Stepper::new with a method for non-symmetric systems")
            })?;
            Ok(Pcg::new(Jacobi::new(op)?))
        })
    }
}

impl Stepper<Box<dyn IterativeSolver<f64>>> {
    /// [`Stepper::new`] with the driver the model picks for the step operator (see
    /// [`SteadySystem::default_solver`](super::SteadySystem::default_solver)): PCG with the
    /// multigrid V-cycle when it is symmetric, BiCGSTAB with ILU(0) when a flow field makes it
    /// non-symmetric. The preconditioner is built once, from the first step operator. Default
    /// stopping tolerances; change them with [`Stepper::solver_mut`].
    ///
    /// # Errors
    ///
    /// As for [`Stepper::new`].
    ///
    /// ```
    /// use quintet::model::{AdvectionScheme, Conductivity, FaceFlows, Geometry, Model, Stepper, Storage, TimeScheme};
    /// use quintet::Side;
    /// let geometry = Geometry::cell_centered(40, 1, 0.5, 1.0, 1.0)?;
    /// let mut model = Model::new(geometry.clone(), Conductivity::isotropic(2.0))?;
    /// model.set_storage(Storage::per_volume(2.0e6))?;
    /// model.set_advection(FaceFlows::uniform(&geometry, 1e-6, 0.0, 4.18e6)?, AdvectionScheme::Upwind)?;
    /// model.inflow_value("warm inflow", Side::West, 30.0)?;
    /// let mut run = Stepper::with_default_solver(&model, TimeScheme::BackwardEuler, 3600.0, 0.0, &[10.0; 40])?;
    /// run.step()?;
    /// assert!(run.solution()[0] > 10.0 && run.solution()[39] < 10.0 + 1e-6);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn with_default_solver(
        model: &Model,
        scheme: TimeScheme,
        dt: f64,
        start_time: f64,
        initial: &[f64],
    ) -> Result<Stepper<Box<dyn IterativeSolver<f64>>>, Error> {
        Stepper::set_up(model, scheme, dt, start_time, initial, default_solver)
    }
}

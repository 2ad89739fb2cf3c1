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

use super::assemble;
use super::book::{Book, Forcing};
use super::budget::{Budget, BudgetLine, FlowKind};
use super::builder::Model;
use crate::kernels::Kernels;
use crate::stencil::check_len;
use crate::{
    Banded5, Coeffs5, Error, FixedCells, Grid, IterativeSolver, Jacobi, Pcg, Report, Stencil5,
    Workspace,
};

/// Crank–Nicolson steps replaced by damped steps unless the caller says otherwise.
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

/// The conduction operator `A`, seen through the step operator `S/Δt + θ·A`: the couplings
/// divided by θ (exact for θ = ½ and 1) and the stored center of `A`.
struct Conduction<'a> {
    step: &'a Banded5<f64>,
    center: &'a [f64],
    inv_theta: f64,
}

impl Stencil5<f64> for Conduction<'_> {
    fn grid(&self) -> Grid {
        self.step.grid()
    }
    fn coeffs(&self, i: usize, j: usize) -> Coeffs5<f64> {
        let k = self.step.grid().index(i, j);
        let c = self.step.coeffs(i, j);
        Coeffs5 {
            center: self.center[k],
            west: c.west * self.inv_theta,
            east: c.east * self.inv_theta,
            south: c.south * self.inv_theta,
            north: c.north * self.inv_theta,
        }
    }
}

/// How the last step's boundary flows are weighted in its budget.
#[derive(Clone, Copy, Debug, PartialEq)]
enum LastStep {
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
/// use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
/// use quintet::Side;
///
/// // A concrete slab 0.2 m thick (k = 1.4 W/(m·K), ρc = 2.0e6 J/(m³·K)) at 10 °C; at t = 0
/// // its west face is brought to 60 °C, its east face stays insulated.
/// let geometry = Geometry::node_centered(41, 1, 0.005, 1.0, 1.0)?;
/// let mut model = Model::new(geometry, Conductivity::isotropic(1.4))?;
/// model.set_storage(Storage::per_volume(2.0e6))?;
/// model.prescribe_edge("heated face", Side::West, 60.0)?;
/// let initial = vec![10.0; 41];
/// let mut stepper = Stepper::with_jacobi(&model, TimeScheme::CrankNicolson, 600.0, 0.0, &initial)?;
/// for _ in 0..12 {
///     stepper.step()?; // two hours in ten-minute steps
/// }
/// let budget = stepper.budget().expect("a step was taken");
/// assert!(budget.discrepancy_percent().abs() < 1e-4);
/// assert!(stepper.solution()[40] > 10.0 && stepper.solution()[40] < 60.0);
/// # Ok::<(), quintet::Error>(())
/// ```
pub struct Stepper<S> {
    solver: S,
    ws: Workspace<f64>,
    kernels: Kernels<f64>,
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
}

impl<S: IterativeSolver<f64>> Stepper<S> {
    /// Set up a run of `model` (which must have storage) with time step `dt` (s) from
    /// `start_time` (s) and the `initial` solution. `make_solver` builds the driver from the
    /// step operator, so a preconditioner can be set up from it once.
    ///
    /// # Errors
    ///
    /// [`Error::InvalidSetting`] for a step that is not positive and finite, a start time that
    /// is not finite, or a model without storage; [`Error::LengthMismatch`] and
    /// [`Error::NonFinite`] for a bad initial solution; the assembly errors of
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
        if !(dt.is_finite() && dt > 0.0) {
            return Err(Error::InvalidSetting {
                name: "time step",
                value: dt,
                allowed: "a finite value > 0 (s)",
            });
        }
        if !start_time.is_finite() {
            return Err(Error::InvalidSetting {
                name: "start time",
                value: start_time,
                allowed: "a finite value (s)",
            });
        }
        let grid = model.grid();
        let n = grid.cells();
        check_len("initial solution", n, initial.len())?;
        if let Some(k) = initial.iter().position(|v| !v.is_finite()) {
            let (i, j) = grid.coords(k);
            return Err(Error::NonFinite {
                what: "initial solution",
                cell: k,
                i,
                j,
            });
        }
        let assembly = assemble::assemble(model, true)?;
        if let Some(region) = assembly.floating.first() {
            let cell = region.cells[0];
            let (i, j) = grid.coords(cell);
            return Err(Error::FloatingRegion {
                cell,
                i,
                j,
                cells: region.cells.len(),
            });
        }
        let theta = scheme.theta();
        let capacity_dt: Vec<f64> = assembly.capacity.iter().map(|c| c / dt).collect();
        let [center, west, east, south, north] = assembly.bands;
        let step_center = center
            .iter()
            .zip(&capacity_dt)
            .map(|(a, c)| c + theta * a)
            .collect();
        let scale = |band: Vec<f64>| band.into_iter().map(|v| theta * v).collect();
        let step_op = Banded5::new(
            grid,
            step_center,
            scale(west),
            scale(east),
            scale(south),
            scale(north),
        )?
        .with_fixed(FixedCells::new(grid, assembly.fixed)?)?;
        let solver = make_solver(&step_op)?;
        let mut stepper = Stepper {
            solver,
            ws: Workspace::for_grid(grid),
            kernels: Kernels::new(grid),
            step_op,
            a_center: center,
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
        mut forcing: impl FnMut(f64, &mut Forcing<'_>) -> Result<(), Error>,
    ) -> Result<Report, Error> {
        self.x_start.copy_from_slice(&self.x);
        self.levels_start.copy_from_slice(&self.book.levels);
        let result = self.advance(&mut forcing);
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
                Err(e)
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

    /// The budget of the last step: boundary and source flows averaged over the step as the
    /// scheme weights them, and storage release (entering) or uptake (leaving), W or m³/s.
    /// `None` before the first step.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// model.point_source("heater", 5, 1.0)?;
    /// let mut run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 1.0, 0.0, &[0.0; 16])?;
    /// assert!(run.budget().is_none());
    /// run.step()?;
    /// let budget = run.budget().expect("one step taken");
    /// assert!((budget.total_out - 1.0).abs() < 1e-6); // all the heat went into storage
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn budget(&self) -> Option<Budget> {
        let new = (&self.x[..], &self.book.levels[..]);
        let uptake = |k: usize| self.capacity_dt[k] * (self.x[k] - self.x_start[k]);
        let previous = match self.last {
            LastStep::None => return None,
            LastStep::Implicit => None,
            LastStep::Trapezoid => Some((&self.x_start[..], &self.levels_start[..], 0.5)),
            LastStep::HalfSteps => Some((&self.x_mid[..], &self.levels_mid[..], 0.5)),
        };
        let mut lines = self.book.lines(new, previous, Some(&uptake));
        let (mut inflow, mut outflow) = (0.0, 0.0);
        for ((c, x1), x0) in self.capacity_dt.iter().zip(&self.x).zip(&self.x_start) {
            let release = -c * (x1 - x0);
            if release >= 0.0 {
                inflow += release;
            } else {
                outflow -= release;
            }
        }
        lines.push(BudgetLine {
            label: "storage".to_string(),
            kind: FlowKind::Storage,
            inflow,
            outflow,
        });
        Some(Budget::from_lines(lines))
    }

    /// The current solution (at [`time`](Stepper::time)).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// let run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 1.0, 0.0, &[3.0; 4])?;
    /// assert_eq!(run.solution(), &[3.0; 4]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn solution(&self) -> &[f64] {
        &self.x
    }

    /// The current time (s).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// let run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 1.0, 100.0, &[0.0; 4])?;
    /// assert_eq!(run.time(), 100.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn time(&self) -> f64 {
        self.time
    }

    /// Steps taken.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// let run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 1.0, 0.0, &[0.0; 4])?;
    /// assert_eq!(run.steps(), 0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn steps(&self) -> usize {
        self.steps
    }

    /// The time step (s).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// let run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 2.5, 0.0, &[0.0; 4])?;
    /// assert_eq!(run.time_step(), 2.5);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn time_step(&self) -> f64 {
        self.dt
    }

    /// The step operator `S/Δt + θ·A`, with its fixed cells.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// let run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 2.0, 0.0, &[0.0; 4])?;
    /// assert_eq!(run.operator().center()[0], 0.5 + 1.0); // S/Δt + conductance to the one neighbour
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn operator(&self) -> &Banded5<f64> {
        &self.step_op
    }

    /// The driver, for example to change its options between steps.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
    /// # use quintet::SolveOptions;
    /// # let mut model = Model::new(Geometry::cell_centered(4, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.set_storage(Storage::per_area(1.0))?;
    /// let mut run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 1.0, 0.0, &[0.0; 4])?;
    /// run.solver_mut().options = SolveOptions::default().tolerance(1e-12);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn solver_mut(&mut self) -> &mut S {
        &mut self.solver
    }

    /// One step from `x_start`; returns the report of the last solve.
    fn advance(
        &mut self,
        forcing: &mut dyn FnMut(f64, &mut Forcing<'_>) -> Result<(), Error>,
    ) -> Result<(Report, LastStep), Error> {
        let (t0, dt) = (self.time, self.dt);
        match self.scheme {
            TimeScheme::BackwardEuler => {
                self.set_levels(forcing, t0 + dt)?;
                self.rhs.fill(0.0);
                self.add_storage_term(false);
                add_scaled(&mut self.rhs, 1.0, &self.b_new);
                Ok((self.solve()?, LastStep::Implicit))
            }
            TimeScheme::CrankNicolson if self.steps < self.damped_steps => {
                // Two backward-Euler half steps: (S/Δt + A/2)·φ = S/Δt·φᵐ + b/2.
                self.set_levels(forcing, t0 + 0.5 * dt)?;
                self.rhs.fill(0.0);
                self.add_storage_term(false);
                add_scaled(&mut self.rhs, 0.5, &self.b_new);
                self.solve()?;
                self.x_mid.copy_from_slice(&self.x);
                self.levels_mid.copy_from_slice(&self.book.levels);
                self.set_levels(forcing, t0 + dt)?;
                self.rhs.fill(0.0);
                self.add_storage_term(true);
                add_scaled(&mut self.rhs, 0.5, &self.b_new);
                Ok((self.solve()?, LastStep::HalfSteps))
            }
            TimeScheme::CrankNicolson => {
                // rhs = S/Δt·φⁿ − A·φⁿ/2 + (bⁿ + bⁿ⁺¹)/2, with A·φⁿ taken before the
                // prescribed cells move to their new values.
                let conduction = Conduction {
                    step: &self.step_op,
                    center: &self.a_center,
                    inv_theta: 2.0,
                };
                self.kernels.apply(&conduction, &self.x, &mut self.rhs);
                self.rhs.iter_mut().for_each(|v| *v *= -0.5);
                self.add_storage_term(false);
                add_scaled(&mut self.rhs, 0.5, &self.b_prev);
                self.set_levels(forcing, t0 + dt)?;
                add_scaled(&mut self.rhs, 0.5, &self.b_new);
                Ok((self.solve()?, LastStep::Trapezoid))
            }
        }
    }

    /// Levels at time `t` from the forcing; prescribed cells take them, `b_new` is rebuilt.
    fn set_levels(
        &mut self,
        forcing: &mut dyn FnMut(f64, &mut Forcing<'_>) -> Result<(), Error>,
        t: f64,
    ) -> Result<(), Error> {
        forcing(
            t,
            &mut Forcing {
                book: &mut self.book,
            },
        )?;
        self.write_fixed();
        self.book.fill_rhs(&mut self.b_new);
        Ok(())
    }

    /// `rhs += S/Δt · φ`, with φ the solution at the start of the step, or (`from_mid`) after
    /// the first half step.
    fn add_storage_term(&mut self, from_mid: bool) {
        let base = if from_mid { &self.x_mid } else { &self.x_start };
        for ((r, c), x) in self.rhs.iter_mut().zip(&self.capacity_dt).zip(base) {
            *r += c * x;
        }
    }

    fn solve(&mut self) -> Result<Report, Error> {
        self.solver
            .solve_with(&self.step_op, &self.rhs, &mut self.x, &mut self.ws)
    }

    fn write_fixed(&mut self) {
        self.book.write_fixed(&mut self.x);
        for &k in &self.inactive {
            self.x[k] = self.inactive_value;
        }
    }
}

impl Stepper<Pcg<Jacobi<f64>>> {
    /// [`Stepper::new`] with PCG and a Jacobi preconditioner built from the step operator
    /// (default stopping tolerances; change them with [`Stepper::solver_mut`]).
    ///
    /// # Errors
    ///
    /// As for [`Stepper::new`].
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
            Ok(Pcg::new(Jacobi::new(op)?))
        })
    }
}

/// `y += a·x`.
fn add_scaled(y: &mut [f64], a: f64, x: &[f64]) {
    for (yi, xi) in y.iter_mut().zip(x) {
        *yi += a * xi;
    }
}

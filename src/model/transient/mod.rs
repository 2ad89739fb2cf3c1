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

use super::assemble;
use super::book::{Book, Forcing};
use super::builder::Model;
use crate::kernels::Kernels;
use crate::stencil::check_len;
use crate::{Banded5, Error, FixedCells, IterativeSolver, Jacobi, Pcg, Report, Workspace};

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

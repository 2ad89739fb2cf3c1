//! What a stepper reports: the budget of the last step, the solution and its settings.

use super::{LastStep, Stepper};
use crate::model::budget::{Budget, BudgetLine, FlowKind};
use crate::space::total;
use crate::{Banded5, IterativeSolver, Stencil5};

impl<S: IterativeSolver<f64>> Stepper<S> {
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
        let space = &*self.ws.space;
        let mut lines = self.book.lines(space, new, previous, Some(&uptake));
        let mut flows = [0.0, 0.0];
        for ((c, x1), x0) in self.capacity_dt.iter().zip(&self.x).zip(&self.x_start) {
            let release = -c * (x1 - x0);
            if release >= 0.0 {
                flows[0] += release;
            } else {
                flows[1] -= release;
            }
        }
        total(space, &mut flows);
        lines.push(BudgetLine {
            label: "storage".to_string(),
            kind: FlowKind::Storage,
            inflow: flows[0],
            outflow: flows[1],
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
}

impl<S> std::fmt::Debug for Stepper<S> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Stepper")
            .field("scheme", &self.scheme)
            .field("time_step", &self.dt)
            .field("time", &self.time)
            .field("steps", &self.steps)
            .field("damped_steps", &self.damped_steps)
            .field("grid", &self.step_op.grid())
            .finish_non_exhaustive()
    }
}

//! Inside a step: the right-hand side of the θ-scheme, the damped start, and the solves.

use super::{LastStep, Stepper, TimeScheme};
use crate::model::book::Forcing;
use crate::{Banded5, Coeffs5, Error, Grid, IterativeSolver, Progress, Report, Stencil5};

/// The conduction operator `A`, seen through the step operator `S/Δt + θ·A`: the couplings
/// divided by θ (exact for θ = ½ and 1) and the stored center of `A`.
pub(super) struct Conduction<'a> {
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

impl<S: IterativeSolver<f64>> Stepper<S> {
    /// One step from `x_start`; returns the report of the last solve.
    pub(super) fn advance(
        &mut self,
        forcing: &mut dyn FnMut(f64, &mut Forcing<'_>) -> Result<(), Error>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<(Report, LastStep), Error> {
        let (t0, dt) = (self.time, self.dt);
        match self.scheme {
            TimeScheme::BackwardEuler => {
                self.set_levels(forcing, t0 + dt)?;
                self.rhs.fill(0.0);
                self.add_storage_term(false);
                add_scaled(&mut self.rhs, 1.0, &self.b_new);
                Ok((self.solve(observer)?, LastStep::Implicit))
            }
            TimeScheme::CrankNicolson if self.steps < self.damped_steps => {
                // Two backward-Euler half steps: (S/Δt + A/2)·φ = S/Δt·φᵐ + b/2.
                self.set_levels(forcing, t0 + 0.5 * dt)?;
                self.rhs.fill(0.0);
                self.add_storage_term(false);
                add_scaled(&mut self.rhs, 0.5, &self.b_new);
                self.solve(observer)?;
                self.x_mid.copy_from_slice(&self.x);
                self.levels_mid.copy_from_slice(&self.book.levels);
                self.set_levels(forcing, t0 + dt)?;
                self.rhs.fill(0.0);
                self.add_storage_term(true);
                add_scaled(&mut self.rhs, 0.5, &self.b_new);
                Ok((self.solve(observer)?, LastStep::HalfSteps))
            }
            TimeScheme::CrankNicolson => {
                // rhs = S/Δt·φⁿ − A·φⁿ/2 + (bⁿ + bⁿ⁺¹)/2, with A·φⁿ taken before the
                // prescribed cells move to their new values.
                let conduction = Conduction {
                    step: &self.step_op,
                    center: &self.a_center,
                    inv_theta: 2.0,
                };
                self.blocks
                    .apply(&*self.ws.space, &conduction, &self.x, &mut self.rhs);
                self.rhs.iter_mut().for_each(|v| *v *= -0.5);
                self.add_storage_term(false);
                add_scaled(&mut self.rhs, 0.5, &self.b_prev);
                self.set_levels(forcing, t0 + dt)?;
                add_scaled(&mut self.rhs, 0.5, &self.b_new);
                Ok((self.solve(observer)?, LastStep::Trapezoid))
            }
        }
    }

    /// Levels at time `t` from the forcing; prescribed cells take them, `b_new` is rebuilt.
    pub(super) fn set_levels(
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
    pub(super) fn add_storage_term(&mut self, from_mid: bool) {
        let base = if from_mid { &self.x_mid } else { &self.x_start };
        for ((r, c), x) in self.rhs.iter_mut().zip(&self.capacity_dt).zip(base) {
            *r += c * x;
        }
    }

    pub(super) fn solve(
        &mut self,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        self.solver.solve_observed(
            &self.step_op,
            &self.rhs,
            &mut self.x,
            &mut self.ws,
            observer,
        )
    }

    pub(super) fn write_fixed(&mut self) {
        self.book.write_fixed(&mut self.x);
        for &k in &self.inactive {
            self.x[k] = self.inactive_value;
        }
    }
}

/// `y += a·x`.
fn add_scaled(y: &mut [f64], a: f64, x: &[f64]) {
    for (yi, xi) in y.iter_mut().zip(x) {
        *yi += a * xi;
    }
}

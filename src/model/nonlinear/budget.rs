//! The budget and the aquifer check of a [`NonlinearSystem`]'s solution.

use super::aquifer::AquiferCheck;
use super::system::{Law, NonlinearSystem};
use crate::model::book::{Action, Book};
use crate::model::budget::{Budget, BudgetLine, FlowKind};
use crate::operator::check_len;
use crate::space::total;
use crate::Error;

impl NonlinearSystem {
    /// The budget of solution `x`: one line per condition (in the model's order), then one
    /// per radiating edge, then storage during a time step; in W or m³/s. It closes to the
    /// nonlinear residual the outer iteration left.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch).
    ///
    /// ```
    /// # use quintet::model::{Aquifer, Axis, Conductivity, Geometry, Model, NonlinearSystem, OuterSettings};
    /// # use quintet::Side;
    /// # let mut model = Model::new(Geometry::new(Axis::uniform_nodes(21, 50.0)?, Axis::uniform_cells(1, 50.0)?, 10.0)?, Conductivity::isotropic(1e-4))?;
    /// # model.prescribe_edge("west lake", Side::West, 10.0)?;
    /// # model.prescribe_edge("east lake", Side::East, 6.0)?;
    /// let mut system = NonlinearSystem::aquifer(&model, Aquifer::unconfined(0.0))?;
    /// let mut h = system.initial_solution(8.0);
    /// system.solve(&mut h, &OuterSettings::default(), &mut |_| {})?;
    /// assert!(system.budget(&h)?.imbalance_percent().abs() < 1e-6);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn budget(&self, x: &[f64]) -> Result<Budget, Error> {
        let n = self.grid.cells();
        check_len("x", n, x.len())?;
        let fs: Vec<(f64, f64)> = (0..n).map(|k| self.cell_factor(k, x[k])).collect();
        let mut book: Book = self.base.book().clone();
        for t in 0..book.terms.len() {
            let term = &book.terms[t];
            let (action, kind, slots) = (term.action, term.kind, term.slots.clone());
            for s in slots {
                let k = book.cells[s];
                match action {
                    Action::Source => {
                        let level = book.levels[s];
                        book.weights[s] *= self.pumping_at(kind, level, fs[k]).0;
                    }
                    Action::Conductance => book.weights[s] = self.slot_weight(s, fs[k].0).0,
                    Action::Fixed => {
                        for l in book.link_ranges[s].clone() {
                            let nb = book.links[l].free;
                            book.links[l].conductance = self.face_between(k, nb, x, &fs);
                            book.links[l].carried = 0.0;
                        }
                    }
                    _ => {}
                }
            }
        }
        let space = &*self.base.model().space;
        let uptake = |k: usize| self.storage_rate(k, x[k]);
        let stepping = self.step.is_some();
        let mut lines = book.lines(
            space,
            (x, &book.levels),
            None,
            stepping.then_some(&uptake as &dyn Fn(usize) -> f64),
        );
        let mut sums = Vec::with_capacity(2 * self.radiation.len() + 2);
        for edge in &self.radiation {
            let (mut inflow, mut outflow) = (0.0, 0.0);
            for &(k, esa) in &edge.cells {
                let q = esa
                    * ((edge.surroundings + edge.offset).powi(4) - (x[k] + edge.offset).powi(4));
                if q >= 0.0 {
                    inflow += q;
                } else {
                    outflow -= q;
                }
            }
            sums.extend([inflow, outflow]);
        }
        if stepping {
            let (mut release, mut uptake_sum) = (0.0, 0.0);
            for k in (0..n).filter(|&k| self.active[k] && !self.fixed[k]) {
                let q = -self.storage_rate(k, x[k]);
                if q >= 0.0 {
                    release += q;
                } else {
                    uptake_sum -= q;
                }
            }
            sums.extend([release, uptake_sum]);
        }
        total(space, &mut sums);
        for (edge, pair) in self.radiation.iter().zip(sums.chunks_exact(2)) {
            lines.push(BudgetLine {
                label: edge.label.clone(),
                kind: FlowKind::Exchange,
                inflow: pair[0],
                outflow: pair[1],
            });
        }
        if stepping {
            let pair = &sums[sums.len() - 2..];
            lines.push(BudgetLine {
                label: "storage".to_string(),
                kind: FlowKind::Storage,
                inflow: pair[0],
                outflow: pair[1],
            });
        }
        Ok(Budget::from_lines(lines))
    }

    /// [`Aquifer::check`](super::Aquifer::check) of heads `x` (cells below the top, dry cells), over active cells.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch), and
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for a thermal system.
    ///
    /// ```
    /// # use quintet::model::{Aquifer, Conductivity, Geometry, Model, NonlinearSystem};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_cells("lake", [0], 5.0)?;
    /// let system = NonlinearSystem::aquifer(&model, Aquifer::unconfined(0.0))?;
    /// assert_eq!(system.check(&[5.0, 2.0, -0.5])?.dry, vec![2]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn check(&self, x: &[f64]) -> Result<AquiferCheck, Error> {
        let Law::Aquifer(aquifer) = &self.law else {
            return Err(Error::setting(
                "aquifer check",
                f64::NAN,
                "an aquifer system (NonlinearSystem::aquifer)",
            ));
        };
        let mut check = aquifer.check(self.grid, x)?;
        check.below_top.retain(|&k| self.active[k]);
        check.dry.retain(|&k| self.active[k]);
        check.first_dry = check
            .dry
            .first()
            .map(|&k| crate::Location::on(self.grid, k));
        Ok(check)
    }
}

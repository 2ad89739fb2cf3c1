//! The nonlinear equations of a [`NonlinearSystem`]: the residual `F`, and the Picard and
//! Newton matrices refilled in place, for the outer iteration.

use std::sync::Arc;

use super::aquifer::face;
use super::outer::{Equations, OuterMethod};
use super::system::{Law, NonlinearSystem};
use crate::model::book::Action;
use crate::space::Space;
use crate::{Banded5, Error, Side};

impl Equations for NonlinearSystem {
    fn residual(&mut self, x: &[f64]) -> f64 {
        let n = self.grid.cells();
        for (k, &v) in x.iter().enumerate() {
            let (m, s) = self.cell_factor(k, v);
            self.factor[k] = m;
            self.slope[k] = s;
        }
        let mut r = std::mem::take(&mut self.residual);
        r.fill(0.0);
        for (halves, side) in [(&self.east, Side::East), (&self.north, Side::North)] {
            for k in 0..n {
                if let Some(nb) = self.grid.neighbour(k, side) {
                    let fk = (self.factor[k], self.slope[k]);
                    let fnb = (self.factor[nb], self.slope[nb]);
                    let (c, _, _) = face(self.faces, halves[k], fk, fnb, x[k], x[nb]);
                    let q = c * (x[k] - x[nb]);
                    r[k] += q;
                    r[nb] -= q;
                }
            }
        }
        let book = self.base.book();
        for term in &book.terms {
            for s in term.slots.clone() {
                let k = book.cells[s];
                let level = book.levels[s];
                match term.action {
                    Action::Source => {
                        r[k] -= book.weights[s] * level * self.pumping(term.kind, level, k).0
                    }
                    Action::Conductance => {
                        r[k] += self.slot_weight(s, self.factor[k]).0 * (x[k] - level)
                    }
                    _ => {}
                }
            }
        }
        for edge in &self.radiation {
            for &(k, esa) in &edge.cells {
                r[k] += esa
                    * ((x[k] + edge.offset).powi(4) - (edge.surroundings + edge.offset).powi(4));
            }
        }
        let mut sum = 0.0;
        for k in 0..n {
            if self.fixed[k] {
                r[k] = 0.0;
                continue;
            }
            r[k] += self.storage_rate(k, x[k]);
            sum += r[k] * r[k];
        }
        self.residual = r;
        sum
    }

    fn linearise(&mut self, x: &[f64], method: OuterMethod) -> Result<(), Error> {
        let newton = method == OuterMethod::Newton;
        let n = self.grid.cells();
        // Extra diagonal terms first (slots, radiation, storage), into the rhs vector as
        // scratch; the rhs is written last.
        let mut extra = std::mem::take(&mut self.rhs);
        extra.fill(0.0);
        {
            let book = self.base.book();
            for term in book.terms.iter().filter(|t| t.action == Action::Source) {
                for s in term.slots.clone() {
                    let (k, level) = (book.cells[s], book.levels[s]);
                    extra[k] -= book.weights[s] * level * self.pumping(term.kind, level, k).1;
                }
            }
            for term in book
                .terms
                .iter()
                .filter(|t| t.action == Action::Conductance)
            {
                for s in term.slots.clone() {
                    let k = book.cells[s];
                    let (w, dw) = self.slot_weight(s, self.factor[k]);
                    extra[k] += w;
                    if newton {
                        extra[k] += dw * self.slope[k] * (x[k] - book.levels[s]);
                    }
                }
            }
            for edge in &self.radiation {
                for &(k, esa) in &edge.cells {
                    let (t, ts) = (x[k] + edge.offset, edge.surroundings + edge.offset);
                    extra[k] += if newton {
                        4.0 * esa * t.powi(3)
                    } else {
                        esa * (t * t + ts * ts) * (t + ts)
                    };
                }
            }
            if let (Some(dt), Law::Aquifer(a)) = (self.step, &self.law) {
                for k in 0..n {
                    extra[k] += self.area[k] * a.stored(k, x[k], self.elastic[k]).1 / dt;
                }
            }
        }
        let Self {
            operator,
            factor,
            slope,
            east,
            north,
            fixed,
            faces,
            grid,
            ..
        } = self;
        operator.refill(|[c, w, e, s, no]| {
            for band in [&mut *c, &mut *w, &mut *e, &mut *s, &mut *no] {
                band.fill(0.0);
            }
            for (halves, side) in [(&*east, Side::East), (&*north, Side::North)] {
                for k in 0..n {
                    let Some(nb) = grid.neighbour(k, side) else {
                        continue;
                    };
                    let (cf, ap, an) = face(
                        *faces,
                        halves[k],
                        (factor[k], slope[k]),
                        (factor[nb], slope[nb]),
                        x[k],
                        x[nb],
                    );
                    let d = x[k] - x[nb];
                    let (own, towards, back, theirs) = if newton {
                        (cf + ap * d, -cf + an * d, -cf - ap * d, cf - an * d)
                    } else {
                        (cf, -cf, -cf, cf)
                    };
                    c[k] += own;
                    c[nb] += theirs;
                    match side {
                        Side::East => {
                            e[k] = towards;
                            w[nb] = back;
                        }
                        _ => {
                            no[k] = towards;
                            s[nb] = back;
                        }
                    }
                }
            }
            for k in 0..n {
                if fixed[k] {
                    c[k] = 1.0;
                    w[k] = 0.0;
                    e[k] = 0.0;
                    s[k] = 0.0;
                    no[k] = 0.0;
                } else {
                    c[k] += extra[k];
                }
            }
        })?;
        for (b, r) in extra.iter_mut().zip(&self.residual) {
            *b = -r;
        }
        self.rhs = extra;
        Ok(())
    }

    fn correction(&mut self) -> (&Banded5<f64>, &[f64], &mut [f64]) {
        self.delta.fill(0.0);
        (&self.operator, &self.rhs, &mut self.delta)
    }

    fn delta(&self) -> &[f64] {
        &self.delta
    }

    fn is_fixed(&self, k: usize) -> bool {
        self.fixed[k]
    }

    fn space(&self) -> &Arc<dyn Space> {
        &self.base.model().space
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Aquifer, Conductivity, FaceWeighting, Geometry, Model, Storage};
    use crate::LinearOperator;

    /// The Newton matrix is the Jacobian of the residual: `J·v` against the central
    /// difference `(F(x + εv) − F(x − εv))/(2ε)` (common practice), with dry cells, a
    /// pumping well, edge half cells, and storage.
    #[test]
    fn newton_matrix_is_the_jacobian() {
        let geometry = Geometry::cell_centered(7, 6, 20.0, 20.0, 8.0).unwrap();
        let mut model = Model::new(geometry, Conductivity::isotropic(5e-5)).unwrap();
        model.prescribe_edge("lake", Side::West, 6.0).unwrap();
        model
            .edge_exchange("river", Side::North, 1e-6, 5.0)
            .unwrap();
        model.areal_source("recharge", 5e-9).unwrap();
        model.point_source("well", 25, -2.0e-3).unwrap();
        model.set_storage(Storage::per_area(1e-4)).unwrap();
        for faces in [FaceWeighting::Upstream, FaceWeighting::Harmonic] {
            let aquifer = Aquifer::convertible(8.0, 0.0)
                .smoothing_width(0.5)
                .specific_yield(0.2)
                .faces(faces);
            let mut system = NonlinearSystem::aquifer(&model, aquifer).unwrap();
            let n = system.grid.cells();
            let mut x = system.initial_solution(0.0);
            for (k, v) in x.iter_mut().enumerate() {
                if !system.fixed[k] {
                    *v = 4.0 + 5.0 * ((k as f64) * 0.7).sin(); // wet, dry and confined cells
                }
            }
            let old: Vec<f64> = x.iter().map(|v| v + 0.3).collect();
            system.set_step(Some((3600.0, &old))).unwrap();
            system.residual(&x);
            system.linearise(&x, OuterMethod::Newton).unwrap();
            let v: Vec<f64> = (0..n)
                .map(|k| {
                    if system.fixed[k] {
                        0.0
                    } else {
                        ((k * 7 % 5) as f64 - 2.0) * 0.5
                    }
                })
                .collect();
            let mut jv = vec![0.0; n];
            system.operator.apply_block(0..n, &v, &mut jv);
            let eps = 1e-6;
            let shifted = |s: f64, system: &mut NonlinearSystem| -> Vec<f64> {
                let xs: Vec<f64> = x.iter().zip(&v).map(|(a, b)| a + s * b).collect();
                system.residual(&xs);
                system.residual.clone()
            };
            let plus = shifted(eps, &mut system);
            let minus = shifted(-eps, &mut system);
            let mut worst: f64 = 0.0;
            let mut scale: f64 = 0.0;
            for k in (0..n).filter(|&k| !system.fixed[k]) {
                let fd = (plus[k] - minus[k]) / (2.0 * eps);
                worst = worst.max((fd - jv[k]).abs());
                scale = scale.max(fd.abs());
            }
            assert!(worst < 1e-5 * scale, "{faces:?}: {worst} against {scale}");
        }
    }
}

//! [`NonlinearSystem`]: a model whose conductances depend on the solution (an aquifer's
//! saturated thickness, a temperature-dependent conductivity, radiation), its residual, its
//! Picard and Newton matrices, and its budget.

use super::aquifer::{Aquifer, FaceWeighting};
use super::outer::{run_outer, OuterMethod, OuterReport, OuterSettings, OuterStep};
use super::thermal::{ConductivityLaw, STEFAN_BOLTZMANN};
use crate::model::assemble::resistance;
use crate::model::book::Action;
use crate::model::budget::FlowKind;
use crate::model::solver::default_solver;
use crate::model::{Conductivity, ConductivityBasis, Forcing, Model, SingularPolicy, SteadySystem};
use crate::operator::check_len;
use crate::{Banded5, Error, Grid, IterativeSolver, LinearOperator, Side, Workspace};

/// What sets the conductance factor of a cell.
#[derive(Clone, Debug)]
pub(super) enum Law {
    /// The saturated thickness (m) multiplies a conductance per metre of thickness.
    Aquifer(Aquifer),
    /// `k(T)/k_model`.
    Heat(ConductivityLaw),
}

/// An edge that radiates to surroundings at a given temperature.
#[derive(Clone, Debug)]
pub(super) struct RadiatingEdge {
    pub(super) label: String,
    /// `ε·σ·A` per cell.
    pub(super) cells: Vec<(usize, f64)>,
    pub(super) surroundings: f64,
    pub(super) offset: f64,
}

/// A model whose conductances depend on its solution, solved by an outer iteration (Picard
/// or Newton, see [`OuterSettings`]) with a linear driver inside:
///
/// * [`aquifer`](NonlinearSystem::aquifer): groundwater flow with transmissivity `K·b(h)`
///   from the saturated thickness of an [`Aquifer`] (unconfined, convertible, or confined
///   with the checks), storage by specific yield for time steps
///   ([`set_step`](NonlinearSystem::set_step));
/// * [`thermal`](NonlinearSystem::thermal): conduction with `k(T)` from a
///   [`ConductivityLaw`], and radiation at edges ([`add_radiation`](NonlinearSystem::add_radiation)).
///
/// Every condition of the [`Model`] keeps its meaning; an edge condition that acts through
/// half a cell (a prescribed value or an exchange on a cell-centred axis) sees that half
/// cell's conductance change with the solution as well. Cell exchanges (rivers, drains) keep
/// their conductance. Budgets close to the nonlinear residual left by the outer tolerances.
///
/// # Example
///
/// ```
/// use quintet::model::{
///     Aquifer, Axis, Conductivity, FaceWeighting, Geometry, Model, NonlinearSystem, OuterSettings,
/// };
/// use quintet::Side;
///
/// // A strip aquifer 1 km long between two lakes (10 m and 6 m above its base), K = 1e-4 m/s.
/// let geometry = Geometry::new(Axis::uniform_nodes(41, 25.0)?, Axis::uniform_cells(1, 25.0)?, 10.0)?;
/// let mut model = Model::new(geometry, Conductivity::isotropic(1e-4))?;
/// model.prescribe_edge("west lake", Side::West, 10.0)?;
/// model.prescribe_edge("east lake", Side::East, 6.0)?;
/// let aquifer = Aquifer::unconfined(0.0).faces(FaceWeighting::Harmonic);
/// let mut system = NonlinearSystem::aquifer(&model, aquifer)?;
/// let mut h = system.initial_solution(8.0);
/// let report = system.solve(&mut h, &OuterSettings::default(), &mut |step| println!("{step}"))?;
/// assert!(report.outer_iterations < 10);
/// // Dupuit: h² is linear between the lakes; midway h = √((10² + 6²)/2), here to the
/// // second-order discretisation error.
/// assert!((h[20] - 68f64.sqrt()).abs() < 1e-3);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct NonlinearSystem {
    pub(super) base: SteadySystem,
    pub(super) law: Law,
    pub(super) faces: FaceWeighting,
    pub(super) grid: Grid,
    /// Half-cell resistances at factor 1 of the east face of each cell (own, neighbour's);
    /// infinite where no conduction crosses.
    pub(super) east: Vec<[f64; 2]>,
    pub(super) north: Vec<[f64; 2]>,
    /// Per book slot: `(r, 1/film)` for conductance slots acting through an edge half cell
    /// (`r = 0` for slots whose weight does not depend on the solution).
    pub(super) slot_half: Vec<(f64, f64)>,
    pub(super) radiation: Vec<RadiatingEdge>,
    /// Plan area and elastic storage coefficient per cell.
    pub(super) area: Vec<f64>,
    pub(super) elastic: Vec<f64>,
    pub(super) fixed: Vec<bool>,
    pub(super) active: Vec<bool>,
    pub(super) operator: Banded5<f64>,
    pub(super) factor: Vec<f64>,
    pub(super) slope: Vec<f64>,
    pub(super) residual: Vec<f64>,
    pub(super) rhs: Vec<f64>,
    pub(super) delta: Vec<f64>,
    pub(super) scratch: Vec<f64>,
    pub(super) step: Option<f64>,
    pub(super) previous: Vec<f64>,
}

impl NonlinearSystem {
    /// Groundwater flow in `aquifer`: the model's conductivity is the hydraulic conductivity
    /// `K` (per thickness, m/s), and a face conducts `K·b` with `b` the saturated thickness by
    /// the aquifer's [`FaceWeighting`]. The geometry's thickness only serves the face areas
    /// of edge conditions and the volumes of volumetric sources: set it to the aquifer's full
    /// thickness.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for a conductivity
    /// given as transmissivity, a model with a flow field or a singular policy other than
    /// [`SingularPolicy::Reject`]; the aquifer's field errors
    /// ([`ErrorKind::InvalidProperty`](crate::ErrorKind::InvalidProperty) naming the cell);
    /// and every error of [`Model::assemble`].
    ///
    /// ```
    /// use quintet::model::{Aquifer, Conductivity, Geometry, Model, NonlinearSystem};
    /// let model = Model::new(Geometry::cell_centered(4, 4, 10.0, 10.0, 5.0)?, Conductivity::transmissivity(1e-3))?;
    /// assert!(NonlinearSystem::aquifer(&model, Aquifer::unconfined(0.0)).is_err());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn aquifer(model: &Model, aquifer: Aquifer) -> Result<NonlinearSystem, Error> {
        if model.conductivity.basis() != ConductivityBasis::PerThickness {
            return Err(Error::setting(
                "conductivity",
                f64::NAN,
                "a hydraulic conductivity per thickness (Conductivity::isotropic or anisotropic): the aquifer sets the thickness",
            ));
        }
        aquifer.validate(model.grid(), &model.active)?;
        let mut per_metre = model.clone();
        per_metre.conductivity = Conductivity::transmissivity_anisotropic(
            model.conductivity.x().clone(),
            model.conductivity.y().clone(),
        );
        let faces = aquifer.face_weighting();
        NonlinearSystem::build(&per_metre, Law::Aquifer(aquifer), faces)
    }

    /// Heat conduction with `k(T) = k_model·f(T)`, `f` from `law`; faces take the two
    /// half-cells in series, each at its own temperature.
    ///
    /// # Errors
    ///
    /// As for [`aquifer`](NonlinearSystem::aquifer), without the aquifer's.
    ///
    /// ```
    /// use quintet::model::{Axis, Conductivity, ConductivityLaw, Geometry, Model, NonlinearSystem, OuterSettings};
    /// use quintet::Side;
    /// let mut model = Model::new(Geometry::new(Axis::uniform_nodes(11, 0.01)?, Axis::uniform_cells(1, 0.01)?, 1.0)?, Conductivity::isotropic(20.0))?;
    /// model.prescribe_edge("hot", Side::West, 400.0)?;
    /// model.prescribe_edge("cold", Side::East, 300.0)?;
    /// let mut system = NonlinearSystem::thermal(&model, ConductivityLaw::linear(1e-3, 300.0)?)?;
    /// let mut t = system.initial_solution(350.0);
    /// system.solve(&mut t, &OuterSettings::default(), &mut |_| {})?;
    /// assert!(t[5] > 350.0); // k grows with T: the hot half needs less gradient
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn thermal(model: &Model, law: ConductivityLaw) -> Result<NonlinearSystem, Error> {
        NonlinearSystem::build(model, Law::Heat(law), FaceWeighting::Harmonic)
    }

    fn build(model: &Model, law: Law, faces: FaceWeighting) -> Result<NonlinearSystem, Error> {
        if model.advection.is_some() {
            return Err(Error::setting(
                "flow field",
                f64::NAN,
                "a model without a flow field (nonlinear models with advection are not supported)",
            ));
        }
        if model.singular != SingularPolicy::Reject {
            return Err(Error::setting(
                "singular policy",
                f64::NAN,
                "SingularPolicy::Reject: every region of a nonlinear model needs a prescribed value or an exchange",
            ));
        }
        let base = SteadySystem::new(model)?;
        let grid = model.grid();
        let n = grid.cells();
        let active = model.active.clone();
        let halves = |side: Side| -> Vec<[f64; 2]> {
            (0..n)
                .map(|k| match grid.neighbour(k, side) {
                    Some(nb) if active[k] && active[nb] => [
                        resistance(model, k, side),
                        resistance(model, nb, side.opposite()),
                    ],
                    _ => [f64::INFINITY; 2],
                })
                .collect()
        };
        let (east, north) = (halves(Side::East), halves(Side::North));
        let book = base.book();
        let mut slot_half = vec![(0.0, 0.0); book.cells.len()];
        for term in &book.terms {
            let (Action::Conductance, Some(side)) = (term.action, term.edge) else {
                continue;
            };
            for s in term.slots.clone() {
                let r = resistance(model, book.cells[s], side);
                let w0 = book.weights[s];
                if r > 0.0 && r.is_finite() && w0 > 0.0 {
                    slot_half[s] = (r, (1.0 / w0 - r).max(0.0));
                }
            }
        }
        let g = &model.geometry;
        let area: Vec<f64> = (0..n).map(|k| g.plan_area(k)).collect();
        let elastic = (0..n)
            .map(|k| match &model.storage {
                Some(st) if st.is_per_volume() => st.values().at(k) * g.thickness(k),
                Some(st) => st.values().at(k),
                None => 0.0,
            })
            .collect();
        let operator = base.operator().clone();
        let fixed = (0..n)
            .map(|k| operator.fixed_cells().is_some_and(|f| f.contains(k)))
            .collect();
        Ok(NonlinearSystem {
            base,
            law,
            faces,
            grid,
            east,
            north,
            slot_half,
            radiation: Vec::new(),
            area,
            elastic,
            fixed,
            active,
            operator,
            factor: vec![1.0; n],
            slope: vec![0.0; n],
            residual: vec![0.0; n],
            rhs: vec![0.0; n],
            delta: vec![0.0; n],
            scratch: vec![0.0; n],
            step: None,
            previous: vec![0.0; n],
        })
    }

    /// Let the free cells along `side` radiate to surroundings at temperature `surroundings`:
    /// net flow out `ε·σ·A·((T + offset)⁴ − (T_s + offset)⁴)` per cell, `A` the edge face
    /// area, σ = [`STEFAN_BOLTZMANN`]. Radiation needs absolute temperatures: with
    /// temperatures in kelvin `offset` is 0, in °C it is 273.15. On a node-centred axis the
    /// edge nodes sit on the surface; on a cell-centred one the cell's own temperature
    /// radiates (the half cell to the surface is neglected, a first-order error in the cell
    /// width). Cells held at a prescribed value do not radiate.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for an emissivity
    /// outside `[0, 1]` or a temperature or offset that is not finite, or an aquifer system.
    ///
    /// ```
    /// use quintet::model::{Conductivity, ConductivityLaw, Geometry, Model, NonlinearSystem};
    /// use quintet::Side;
    /// let mut model = Model::new(Geometry::node_centered(5, 5, 0.01, 0.01, 0.002)?, Conductivity::isotropic(200.0))?;
    /// model.prescribe_edge("heater", Side::West, 120.0)?;
    /// let mut fin = NonlinearSystem::thermal(&model, ConductivityLaw::linear(0.0, 0.0)?)?;
    /// fin.add_radiation("to the enclosure", Side::East, 0.85, 25.0, 273.15)?;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn add_radiation(
        &mut self,
        label: &str,
        side: Side,
        emissivity: f64,
        surroundings: f64,
        offset: f64,
    ) -> Result<(), Error> {
        if matches!(self.law, Law::Aquifer(_)) {
            return Err(Error::setting(
                "radiation",
                f64::NAN,
                "a thermal system (NonlinearSystem::thermal)",
            ));
        }
        if !(emissivity.is_finite() && (0.0..=1.0).contains(&emissivity)) {
            return Err(Error::setting("emissivity", emissivity, "between 0 and 1"));
        }
        if !surroundings.is_finite() {
            return Err(Error::setting(
                "surroundings temperature",
                surroundings,
                "finite",
            ));
        }
        if !offset.is_finite() {
            return Err(Error::setting("temperature offset", offset, "finite (K)"));
        }
        let g = self.base.model().geometry.clone();
        let cells = g
            .edge(side)
            .into_iter()
            .filter(|&k| self.active[k] && !self.fixed[k])
            .map(|k| (k, emissivity * STEFAN_BOLTZMANN * g.face_area(k, side)))
            .collect();
        self.radiation.push(RadiatingEdge {
            label: label.to_string(),
            cells,
            surroundings,
            offset,
        });
        Ok(())
    }

    /// A solution vector to start from: prescribed and inactive values where they hold,
    /// `start` elsewhere.
    ///
    /// ```
    /// # use quintet::model::{Aquifer, Conductivity, Geometry, Model, NonlinearSystem};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.prescribe_cells("lake", [0], 5.0)?;
    /// let system = NonlinearSystem::aquifer(&model, Aquifer::unconfined(0.0))?;
    /// assert_eq!(system.initial_solution(4.0), vec![5.0, 4.0, 4.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn initial_solution(&self, start: f64) -> Vec<f64> {
        self.base.initial_solution(start)
    }

    /// The grid.
    ///
    /// ```
    /// # use quintet::model::{Aquifer, Conductivity, Geometry, Model, NonlinearSystem};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 2, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_cells("lake", [0], 5.0)?;
    /// let system = NonlinearSystem::aquifer(&model, Aquifer::unconfined(0.0))?;
    /// assert_eq!(system.grid().cells(), 6);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn grid(&self) -> Grid {
        self.grid
    }

    /// Change condition levels through a [`Forcing`] (see [`SteadySystem::force`]).
    ///
    /// # Errors
    ///
    /// As for [`SteadySystem::force`].
    ///
    /// ```
    /// # use quintet::model::{Aquifer, Conductivity, Geometry, Model, NonlinearSystem};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_cells("lake", [0], 5.0)?;
    /// let well = model.point_source("well", 2, -1e-4)?;
    /// let mut system = NonlinearSystem::aquifer(&model, Aquifer::unconfined(0.0))?;
    /// system.force(|f| f.set(well, -2e-4))?;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn force(
        &mut self,
        change: impl FnOnce(&mut Forcing<'_>) -> Result<(), Error>,
    ) -> Result<(), Error> {
        self.base.force(change)
    }

    /// Solve a backward-Euler time step of length `dt` (s) from the heads `previous` with the
    /// next [`solve`](NonlinearSystem::solve) (stored water per plan area `S_y·b(h)` plus the
    /// elastic storage of the model's [`Storage`](crate::model::Storage) above the top of a
    /// convertible aquifer, or `S·h` for a confined one: the change of stored water is exact,
    /// so the budget closes); `None` goes back to steady solves. Aquifer systems only.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for a `dt` that is not
    /// finite and positive or a thermal system; length and finiteness errors for `previous`.
    ///
    /// ```
    /// # use quintet::model::{Aquifer, Conductivity, Geometry, Model, NonlinearSystem, OuterSettings};
    /// # let mut model = Model::new(Geometry::cell_centered(5, 1, 10.0, 10.0, 10.0)?, Conductivity::isotropic(1e-4))?;
    /// # model.prescribe_cells("lake", [0], 8.0)?;
    /// let mut system = NonlinearSystem::aquifer(&model, Aquifer::unconfined(0.0).specific_yield(0.2))?;
    /// let old = system.initial_solution(5.0);
    /// system.set_step(Some((3600.0, &old)))?;
    /// let mut h = old.clone();
    /// system.solve(&mut h, &OuterSettings::default(), &mut |_| {})?;
    /// assert!(h[1] > 5.0 && h[1] < 8.0); // the lake fills the aquifer
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_step(&mut self, step: Option<(f64, &[f64])>) -> Result<(), Error> {
        match step {
            None => self.step = None,
            Some((dt, previous)) => {
                if !matches!(self.law, Law::Aquifer(_)) {
                    return Err(Error::setting(
                        "time step",
                        dt,
                        "an aquifer system (thermal time steps are not supported yet)",
                    ));
                }
                if !(dt.is_finite() && dt > 0.0) {
                    return Err(Error::setting("time step", dt, "finite and > 0 (s)"));
                }
                check_len("previous", self.grid.cells(), previous.len())?;
                if let Some(k) = previous.iter().position(|v| !v.is_finite()) {
                    return Err(Error::non_finite(
                        "previous",
                        crate::Location::on(self.grid, k),
                    ));
                }
                self.previous.copy_from_slice(previous);
                self.step = Some(dt);
            }
        }
        Ok(())
    }

    /// Run the outer iteration from `x` with the model's driver for each linear solve,
    /// rebuilt from every new matrix (PCG with the multigrid V-cycle for Picard's symmetric
    /// matrices, BiCGSTAB with ILU(0) for Newton's), calling `observer` after every outer
    /// iteration.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::OuterNotConverged`](crate::ErrorKind::OuterNotConverged) when the
    /// tolerances are not met (the last iterate is in `x`), invalid settings, a length
    /// mismatch, and the errors of the linear solves (breakdowns, pivots) with the outer
    /// iteration in their context.
    ///
    /// ```
    /// # use quintet::model::{Aquifer, Axis, Conductivity, Geometry, Model, NonlinearSystem, OuterSettings, OuterMethod};
    /// # use quintet::Side;
    /// # let mut model = Model::new(Geometry::new(Axis::uniform_nodes(21, 50.0)?, Axis::uniform_cells(1, 50.0)?, 10.0)?, Conductivity::isotropic(1e-4))?;
    /// # model.prescribe_edge("west lake", Side::West, 10.0)?;
    /// # model.prescribe_edge("east lake", Side::East, 6.0)?;
    /// let mut system = NonlinearSystem::aquifer(&model, Aquifer::unconfined(0.0))?;
    /// let mut h = system.initial_solution(8.0);
    /// let mut log = Vec::new();
    /// let report = system.solve(&mut h, &OuterSettings::new(OuterMethod::Picard), &mut |s| log.push(*s))?;
    /// assert_eq!(log.len(), report.outer_iterations);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn solve(
        &mut self,
        x: &mut [f64],
        settings: &OuterSettings,
        observer: &mut dyn FnMut(&OuterStep),
    ) -> Result<OuterReport, Error> {
        let symmetric = settings.method == OuterMethod::Picard;
        let mut ws = Workspace::new();
        let mut inner = |op: &Banded5<f64>, rhs: &[f64], d: &mut [f64], eta: f64| {
            let mut solver = default_solver(op, symmetric)?;
            solver.options_mut().tolerances.relative = eta;
            solver.solve_with(op, rhs, d, &mut ws)
        };
        self.run(x, settings, &mut inner, observer)
    }

    /// [`solve`](NonlinearSystem::solve) with the caller's driver for every linear solve
    /// (its relative tolerance is set for each and restored after; its preconditioner stays
    /// as it was built, from whatever matrix: rebuild it between runs if the coefficients
    /// changed much). A Newton matrix is not symmetric: use a driver for non-symmetric
    /// systems ([`BiCgStab`](crate::BiCgStab), [`Gmres`](crate::Gmres)). After the first
    /// outer iteration nothing is allocated but what the driver allocates.
    ///
    /// # Errors
    ///
    /// As for [`solve`](NonlinearSystem::solve).
    ///
    /// ```
    /// # use quintet::model::{Aquifer, Axis, Conductivity, Geometry, Model, NonlinearSystem, OuterSettings, OuterMethod};
    /// # use quintet::Side;
    /// use quintet::{BiCgStab, Identity, Workspace};
    /// # let mut model = Model::new(Geometry::new(Axis::uniform_nodes(21, 50.0)?, Axis::uniform_cells(1, 50.0)?, 10.0)?, Conductivity::isotropic(1e-4))?;
    /// # model.prescribe_edge("west lake", Side::West, 10.0)?;
    /// # model.prescribe_edge("east lake", Side::East, 6.0)?;
    /// let mut system = NonlinearSystem::aquifer(&model, Aquifer::unconfined(0.0))?;
    /// let mut h = system.initial_solution(8.0);
    /// let mut driver = BiCgStab::new(Identity);
    /// system.solve_with(&mut driver, &mut Workspace::new(), &mut h, &OuterSettings::default(), &mut |_| {})?;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn solve_with(
        &mut self,
        solver: &mut dyn IterativeSolver<f64>,
        ws: &mut Workspace<f64>,
        x: &mut [f64],
        settings: &OuterSettings,
        observer: &mut dyn FnMut(&OuterStep),
    ) -> Result<OuterReport, Error> {
        let mut inner = |op: &Banded5<f64>, rhs: &[f64], d: &mut [f64], eta: f64| {
            let saved = solver.options().tolerances.relative;
            solver.options_mut().tolerances.relative = eta;
            let result = solver.solve_with(op, rhs, d, ws);
            solver.options_mut().tolerances.relative = saved;
            result
        };
        self.run(x, settings, &mut inner, observer)
    }

    fn run(
        &mut self,
        x: &mut [f64],
        settings: &OuterSettings,
        inner: &mut super::outer::Inner<'_>,
        observer: &mut dyn FnMut(&OuterStep),
    ) -> Result<OuterReport, Error> {
        self.base.prepare(x)?;
        if let Some(k) = x.iter().position(|v| !v.is_finite()) {
            return Err(Error::non_finite("x", crate::Location::on(self.grid, k)));
        }
        let mut scratch = std::mem::take(&mut self.scratch);
        let result = run_outer(self, x, &mut scratch, settings, inner, observer);
        self.scratch = scratch;
        result
    }

    /// The factor on a cell's base conductances, and its slope.
    pub(super) fn cell_factor(&self, k: usize, v: f64) -> (f64, f64) {
        match &self.law {
            Law::Aquifer(a) => a.thickness(k, v),
            Law::Heat(law) => law.factor_and_slope(v),
        }
    }

    /// The factor on source slot of `kind` with `level` at cell `k` (pumping from an aquifer
    /// is reduced as the cell dries, see [`Aquifer::pumping_reduction`]) and its slope with
    /// respect to the cell's value, from the current factors.
    pub(super) fn pumping(&self, kind: FlowKind, level: f64, k: usize) -> (f64, f64) {
        self.pumping_at(kind, level, (self.factor[k], self.slope[k]))
    }

    /// As [`NonlinearSystem::pumping`], with the cell's thickness and slope given.
    pub(super) fn pumping_at(&self, kind: FlowKind, level: f64, (b, db): (f64, f64)) -> (f64, f64) {
        match &self.law {
            Law::Aquifer(a) if kind == FlowKind::PointSource && level < 0.0 => {
                a.pumping_factor(b, db)
            }
            _ => (1.0, 0.0),
        }
    }

    /// Weight of conductance slot `s` at factor `m`, and its slope `dw/dm`.
    pub(super) fn slot_weight(&self, s: usize, m: f64) -> (f64, f64) {
        let (r, inv_film) = self.slot_half[s];
        if r == 0.0 {
            return (self.base.book().weights[s], 0.0);
        }
        let w = 1.0 / (inv_film + r / m);
        (w, w * w * r / (m * m))
    }

    /// Storage uptake of cell `k` during the step (m³/s), 0 when steady.
    pub(super) fn storage_rate(&self, k: usize, v: f64) -> f64 {
        match (self.step, &self.law) {
            (Some(dt), Law::Aquifer(a)) => {
                let now = a.stored(k, v, self.elastic[k]).0;
                let before = a.stored(k, self.previous[k], self.elastic[k]).0;
                self.area[k] * (now - before) / dt
            }
            _ => 0.0,
        }
    }

    /// The conductance between neighbours `k` and `nb` at `x` (factors `fs`).
    pub(super) fn face_between(&self, k: usize, nb: usize, x: &[f64], fs: &[(f64, f64)]) -> f64 {
        let (low, high, halves) = if nb == k + 1 {
            (k, nb, &self.east)
        } else if k == nb + 1 {
            (nb, k, &self.east)
        } else if nb > k {
            (k, nb, &self.north)
        } else {
            (nb, k, &self.north)
        };
        super::aquifer::face(self.faces, halves[low], fs[low], fs[high], x[low], x[high]).0
    }
}

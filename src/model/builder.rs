//! Building a [`Model`]: every method of the model record, from its geometry and medium to the
//! conditions and the assembly into a [`SteadySystem`].

use std::sync::atomic::Ordering;
use std::sync::Arc;

use super::advection::{Advection, AdvectionScheme, FaceFlows};
use super::field::{Field, Profile};
use super::geometry::Geometry;
use super::medium::{Conductivity, Storage};
use super::spec::{
    check_nonnegative, check_profile, Condition, ConditionId, Model, SingularPolicy,
};
use super::spec::{Spec, Target, NEXT_MODEL_TAG};
use super::steady::SteadySystem;
use crate::error::Location;
use crate::space::{Space, Threaded};
use crate::{memory, Error, Grid, Side};

impl Model {
    /// A model with every cell active, no conditions (every edge no-flow / insulated) and no
    /// storage.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) if a per-cell conductivity does not have one value per cell.
    ///
    /// ```
    /// use quintet::model::{Conductivity, Geometry, Model};
    /// let g = Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?;
    /// assert!(Model::new(g.clone(), Conductivity::isotropic(vec![1.0; 3])).is_err());
    /// assert!(Model::new(g, Conductivity::isotropic(1.0)).is_ok());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(geometry: Geometry, conductivity: Conductivity) -> Result<Model, Error> {
        conductivity.check_len(geometry.grid())?;
        Ok(Model {
            tag: NEXT_MODEL_TAG.fetch_add(1, Ordering::Relaxed),
            active: memory::filled("the active-cell mask", geometry.grid().cells(), true)?,
            geometry,
            conductivity,
            inactive_value: 0.0,
            storage: None,
            conditions: Vec::new(),
            singular: SingularPolicy::Reject,
            advection: None,
            space: Arc::new(Threaded),
        })
    }

    /// The geometry.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// let model = Model::new(Geometry::cell_centered(4, 2, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// assert_eq!(model.geometry().grid().cells(), 8);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn geometry(&self) -> &Geometry {
        &self.geometry
    }

    /// The grid of the geometry.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// let model = Model::new(Geometry::cell_centered(4, 2, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// assert_eq!(model.grid().nx(), 4);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn grid(&self) -> Grid {
        self.geometry.grid()
    }

    /// Remove cells from the model (outside the aquifer or the body). Inactive cells carry no
    /// flow, take no part in the budget, and hold the inactive value (default 0) in every
    /// solution: they become identity rows with no couplings, fixed at that value, so the
    /// operator stays symmetric.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::CellOutOfRange`](crate::ErrorKind::CellOutOfRange) for an index off the grid (no cell is changed then).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// let mut model = Model::new(Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.deactivate([0, 1, 4])?;
    /// assert!(!model.is_active(4) && model.is_active(5));
    /// assert!(model.deactivate([16]).is_err());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn deactivate(&mut self, cells: impl IntoIterator<Item = usize>) -> Result<(), Error> {
        let cells = self.checked_cells(cells)?;
        for k in cells {
            self.active[k] = false;
        }
        Ok(())
    }

    /// Whether cell `k` is active (`false` off the grid).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// let model = Model::new(Geometry::cell_centered(2, 2, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// assert!(model.is_active(3) && !model.is_active(4));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn is_active(&self, k: usize) -> bool {
        self.active.get(k).copied().unwrap_or(false)
    }

    /// The value inactive cells hold in every solution (default 0, in the unit of the
    /// solution). Choose one that cannot be mistaken for a result, such as an elevation below
    /// the aquifer base.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for a value that is not finite.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// let mut model = Model::new(Geometry::cell_centered(2, 2, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.set_inactive_value(-999.0)?;
    /// assert!(model.set_inactive_value(f64::NAN).is_err());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_inactive_value(&mut self, value: f64) -> Result<(), Error> {
        if !value.is_finite() {
            return Err(Error::setting("inactive value", value, "a finite value"));
        }
        self.inactive_value = value;
        Ok(())
    }

    /// Give the model storage, for transient runs (a steady assembly ignores it).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) for a per-cell field of the wrong length. Values are checked
    /// (finite, `>= 0`) at active cells when a run is set up.
    ///
    /// ```
    /// use quintet::model::{Conductivity, Geometry, Model, Storage};
    /// let mut model = Model::new(Geometry::cell_centered(2, 2, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.set_storage(Storage::per_volume(2.0e6))?; // J/(m³·K)
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_storage(&mut self, storage: Storage) -> Result<(), Error> {
        storage.values().check_len("storage", self.grid())?;
        self.storage = Some(storage);
        Ok(())
    }

    /// Choose what a steady assembly does with a singular problem (default:
    /// [`SingularPolicy::Reject`]).
    ///
    /// ```
    /// use quintet::model::{Conductivity, Geometry, Model, SingularPolicy};
    /// let mut model = Model::new(Geometry::cell_centered(2, 2, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.set_singular_policy(SingularPolicy::FixMean(20.0));
    /// assert!(model.assemble().is_ok()); // all edges insulated, mean held at 20
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_singular_policy(&mut self, policy: SingularPolicy) {
        self.singular = policy;
    }

    /// The label of a condition, if it belongs to this model.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(2, 2, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// let id = model.areal_source("rain", 1e-8)?;
    /// assert_eq!(model.label(id), Some("rain"));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn label(&self, id: ConditionId) -> Option<&str> {
        if id.model != self.tag {
            return None;
        }
        self.conditions.get(id.index).map(|c| c.label.as_str())
    }

    /// Assemble the steady system: face conductances (and, with a flow field, the carried
    /// flows), the operator with its fixed cells, the right-hand side and the budget
    /// bookkeeping.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidProperty`](crate::ErrorKind::InvalidProperty) naming the first active cell with a negative or non-finite
    /// conductivity or a thickness that is not positive; [`ErrorKind::InactiveCell`](crate::ErrorKind::InactiveCell) and
    /// [`ErrorKind::PrescribedCellConflict`](crate::ErrorKind::PrescribedCellConflict) for conditions placed by name on cells where they
    /// cannot act; [`ErrorKind::FloatingRegion`](crate::ErrorKind::FloatingRegion) or [`ErrorKind::UnbalancedSources`](crate::ErrorKind::UnbalancedSources) for a singular
    /// problem (see [`SingularPolicy`]); [`ErrorKind::NoInflowValue`](crate::ErrorKind::NoInflowValue)
    /// naming a free edge cell where the flow field enters without an inflow value.
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, ErrorKind};
    /// let mut model = Model::new(Geometry::cell_centered(3, 3, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// // No prescribed value and no exchange: the level is undetermined.
    /// assert_eq!(model.assemble().unwrap_err().kind(), ErrorKind::FloatingRegion);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn assemble(&self) -> Result<SteadySystem, Error> {
        SteadySystem::new(self)
    }

    /// Run the model's reductions (validation scans, budget sums) and the solves of its
    /// systems and steppers in `space` (default: [`Threaded`]).
    ///
    /// ```
    /// use std::sync::Arc;
    /// use quintet::model::{Conductivity, Geometry, Model};
    /// let mut model = Model::new(Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.set_space(Arc::new(quintet::space::Serial));
    /// assert!(!model.space().threaded());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_space(&mut self, space: Arc<dyn Space>) {
        self.space = space;
    }

    /// The space the model's reductions run in.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// let model = Model::new(Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// assert_eq!(model.space().threaded(), cfg!(feature = "parallel"));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn space(&self) -> &Arc<dyn Space> {
        &self.space
    }

    pub(crate) fn checked_cells(
        &self,
        cells: impl IntoIterator<Item = usize>,
    ) -> Result<Vec<usize>, Error> {
        let n = self.grid().cells();
        let cells: Vec<usize> = cells.into_iter().collect();
        match cells.iter().find(|&&k| k >= n) {
            Some(&cell) => Err(Error::cell_out_of_range(cell, n)),
            None => Ok(cells),
        }
    }

    /// Hold the listed cells at prescribed values (fixed head or temperature at the cells'
    /// nodes): one value for all, or one per listed cell. The cells must be active.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::CellOutOfRange`](crate::ErrorKind::CellOutOfRange), [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) for a profile that does not match
    /// the cells, [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite) for a non-finite value.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 3, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.prescribe_cells("spring", [4], 102.5)?;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn prescribe_cells(
        &mut self,
        label: impl Into<String>,
        cells: impl IntoIterator<Item = usize>,
        values: impl Into<Profile>,
    ) -> Result<ConditionId, Error> {
        let cells = self.checked_cells(cells)?;
        let values = values.into();
        check_profile(self.grid(), "prescribed value", None, &cells, &values)?;
        Ok(self.push(label, Target::Cells(cells), Spec::Value(values)))
    }

    /// Prescribe the value on the edge `side` (fixed head or temperature on the boundary line):
    /// one value, or one per cell along the edge. On a cell-centred axis the value acts on the
    /// outer faces of the edge cells, through half a cell of conduction; on a node-centred axis
    /// the edge nodes are held at it.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch), [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite).
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 3, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.prescribe_edge("cold wall", Side::North, vec![5.0, 6.0, 7.0])?;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn prescribe_edge(
        &mut self,
        label: impl Into<String>,
        side: Side,
        values: impl Into<Profile>,
    ) -> Result<ConditionId, Error> {
        let values = values.into();
        let edge = self.geometry.edge(side);
        check_profile(self.grid(), "prescribed value", Some(side), &edge, &values)?;
        Ok(self.push(label, Target::Edge(side), Spec::Value(values)))
    }

    /// Prescribe the flux through the edge `side`, per unit face area, positive into the
    /// model: W/m² for heat, m/s (m³/s per m²) for groundwater. An edge with no condition is
    /// already no-flow (insulated); this is for nonzero fluxes.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch), [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite).
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 3, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.edge_flux("solar gain", Side::South, 350.0)?; // W/m²
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn edge_flux(
        &mut self,
        label: impl Into<String>,
        side: Side,
        flux: impl Into<Profile>,
    ) -> Result<ConditionId, Error> {
        let flux = flux.into();
        let edge = self.geometry.edge(side);
        check_profile(self.grid(), "edge flux", Some(side), &edge, &flux)?;
        Ok(self.push(label, Target::Edge(side), Spec::Flux(flux)))
    }

    /// Exchange through the edge `side` with an outside value: the flow into the model is
    /// `h·A·(φ_outside − φ_face)`, with `A` the face area and `h` per unit area — a convection
    /// coefficient (W/(m²·K)) for heat, or a conductance per area (1/s, bed conductivity over
    /// bed thickness) for a river, lake or drain-like edge. On a cell-centred axis the half
    /// cell between node and face is added in series.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch), [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite), and [`ErrorKind::InvalidProperty`](crate::ErrorKind::InvalidProperty) for a
    /// negative coefficient.
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 3, 0.1, 0.1, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.edge_exchange("air", Side::East, 25.0, 20.0)?; // h = 25 W/(m²·K), 20 °C air
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn edge_exchange(
        &mut self,
        label: impl Into<String>,
        side: Side,
        coefficient: impl Into<Profile>,
        outside: impl Into<Profile>,
    ) -> Result<ConditionId, Error> {
        let (coefficient, external) = (coefficient.into(), outside.into());
        let cells = self.geometry.edge(side);
        let along = Some(side);
        check_profile(
            self.grid(),
            "exchange coefficient",
            along,
            &cells,
            &coefficient,
        )?;
        check_profile(self.grid(), "outside value", along, &cells, &external)?;
        check_nonnegative(self.grid(), "exchange coefficient", &cells, &coefficient)?;
        let spec = Spec::Exchange {
            coefficient,
            external,
        };
        Ok(self.push(label, Target::Edge(side), spec))
    }

    /// Exchange between the listed cells and an outside value: the flow into each cell is
    /// `C·(φ_outside − φ_cell)` with `C` a conductance per cell — W/K for heat (a cooling
    /// channel), m²/s for a river, drain or leaky layer in the cell. The cells must be active
    /// and not prescribed. The exchange is linear and works both ways: a drain that only
    /// removes water while the head is above its level, or a river that disconnects from a
    /// deep water table, is not modelled — check the signs of the budget line.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::CellOutOfRange`](crate::ErrorKind::CellOutOfRange), [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch), [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite),
    /// [`ErrorKind::InvalidProperty`](crate::ErrorKind::InvalidProperty) for a negative conductance.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 3, 50.0, 50.0, 10.0)?, Conductivity::isotropic(1e-4))?;
    /// // A stream through the middle row: conductance 0.02 m²/s, stage 31.2 m.
    /// model.cell_exchange("stream", [3, 4, 5], 0.02, 31.2)?;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn cell_exchange(
        &mut self,
        label: impl Into<String>,
        cells: impl IntoIterator<Item = usize>,
        conductance: impl Into<Profile>,
        outside: impl Into<Profile>,
    ) -> Result<ConditionId, Error> {
        let cells = self.checked_cells(cells)?;
        let (coefficient, external) = (conductance.into(), outside.into());
        check_profile(
            self.grid(),
            "exchange conductance",
            None,
            &cells,
            &coefficient,
        )?;
        check_profile(self.grid(), "outside value", None, &cells, &external)?;
        check_nonnegative(self.grid(), "exchange conductance", &cells, &coefficient)?;
        let spec = Spec::Exchange {
            coefficient,
            external,
        };
        Ok(self.push(label, Target::Cells(cells), spec))
    }

    /// A point source in cell `k`: W for heat (a heater; negative for a cooler), m³/s for
    /// groundwater (an injection well; negative for a pumping well). The cell must be active
    /// and not prescribed.
    ///
    /// The value computed in the source's own cell is a cell average and depends on the cell
    /// size (the exact solution is logarithmically singular at a point): it is not the head in
    /// a pumping well nor the temperature of a heater. Estimate those with a well-radius
    /// correction, or spread the source over its real footprint with an areal or volumetric
    /// source.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::CellOutOfRange`](crate::ErrorKind::CellOutOfRange), [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 3, 50.0, 50.0, 10.0)?, Conductivity::isotropic(1e-4))?;
    /// model.point_source("well 2", 4, -0.01)?; // pumping 10 L/s
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn point_source(
        &mut self,
        label: impl Into<String>,
        k: usize,
        rate: f64,
    ) -> Result<ConditionId, Error> {
        let cells = self.checked_cells([k])?;
        check_profile(
            self.grid(),
            "point source rate",
            None,
            &cells,
            &Profile::Uniform(rate),
        )?;
        Ok(self.push(label, Target::Cells(cells), Spec::PointSource(rate)))
    }

    /// A source spread over the plan area of every active cell, per unit plan area: recharge (m/s) for groundwater, W/m² for heat.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch), [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 3, 50.0, 50.0, 10.0)?, Conductivity::isotropic(1e-4))?;
    /// model.areal_source("recharge", 3.2e-9)?; // about 100 mm per year
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn areal_source(
        &mut self,
        label: impl Into<String>,
        rate: impl Into<Field>,
    ) -> Result<ConditionId, Error> {
        let rate = rate.into();
        self.check_field("areal source", &rate)?;
        Ok(self.push(label, Target::Everywhere, Spec::ArealSource(rate)))
    }

    /// A source spread over the volume of every active cell, per unit volume:
    /// heat generation (W/m³), or a volumetric water source (1/s).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch), [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 3, 0.01, 0.01, 0.01)?, Conductivity::isotropic(15.0))?;
    /// model.volumetric_source("resistive heating", 2.0e6)?; // W/m³
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn volumetric_source(
        &mut self,
        label: impl Into<String>,
        rate: impl Into<Field>,
    ) -> Result<ConditionId, Error> {
        let rate = rate.into();
        self.check_field("volumetric source", &rate)?;
        Ok(self.push(label, Target::Everywhere, Spec::VolumetricSource(rate)))
    }

    /// Let a given flow field carry the modelled quantity (heat carried by groundwater, coolant
    /// past a plate): `flows` through every face (W/K, see [`FaceFlows`]) and the `scheme`
    /// that weights the two cells beside a face. The operator is then not symmetric (unless
    /// every flow between active cells is zero): solve it with a method for non-symmetric
    /// systems, such as the one [`SteadySystem::default_solver`] picks. Where the flow enters
    /// through an edge at a free cell, give the value it carries in with
    /// [`inflow_value`](Model::inflow_value). See the module docs' Advection section for the
    /// boundary treatment and the budget lines.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::GridMismatch`](crate::ErrorKind::GridMismatch) if the flows belong to
    /// another grid.
    ///
    /// ```
    /// use quintet::model::{AdvectionScheme, Conductivity, FaceFlows, Geometry, Model};
    /// use quintet::Side;
    /// let geometry = Geometry::cell_centered(20, 10, 5.0, 5.0, 10.0)?;
    /// let mut model = Model::new(geometry.clone(), Conductivity::isotropic(2.5))?; // W/(m·K)
    /// // Groundwater at 1e-7 m/s towards the east, ρ_w·c_w = 4.18e6 J/(m³·K).
    /// model.set_advection(FaceFlows::uniform(&geometry, 1e-7, 0.0, 4.18e6)?, AdvectionScheme::PowerLaw)?;
    /// model.inflow_value("upstream water", Side::West, 12.0)?; // °C
    /// model.prescribe_edge("downstream", Side::East, 12.0)?;
    /// assert!(!model.assemble()?.is_symmetric());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_advection(
        &mut self,
        flows: FaceFlows,
        scheme: AdvectionScheme,
    ) -> Result<(), Error> {
        flows.check_grid(self.grid())?;
        self.advection = Some(Advection { flows, scheme });
        Ok(())
    }

    /// The flow field and scheme given with [`set_advection`](Model::set_advection), if any.
    ///
    /// ```
    /// # use quintet::model::{AdvectionScheme, Conductivity, FaceFlows, Geometry, Model};
    /// let geometry = Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?;
    /// let mut model = Model::new(geometry.clone(), Conductivity::isotropic(1.0))?;
    /// assert!(model.advection().is_none());
    /// model.set_advection(FaceFlows::uniform(&geometry, 1.0, 0.0, 1.0)?, AdvectionScheme::Central)?;
    /// assert_eq!(model.advection().map(|(_, s)| s), Some(AdvectionScheme::Central));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn advection(&self) -> Option<(&FaceFlows, AdvectionScheme)> {
        self.advection.as_ref().map(|a| (&a.flows, a.scheme))
    }

    /// The value (temperature, °C or K) the flow field carries into the model where it enters
    /// through the edge `side`: one value, or one per cell along the edge. The heat carried in
    /// is `F·value` per face (W, with `F` the face flow in W/K); where the flow leaves through
    /// the edge, it carries the cell's own value and this condition does nothing. The later of
    /// two inflow values on the same edge wins. The value is a level: change it during a run
    /// with a [`Forcing`](super::Forcing).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch), [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite).
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 3, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// let inlet = model.inflow_value("coolant inlet", Side::South, vec![18.0, 18.5, 19.0])?;
    /// assert_eq!(model.label(inlet), Some("coolant inlet"));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn inflow_value(
        &mut self,
        label: impl Into<String>,
        side: Side,
        values: impl Into<Profile>,
    ) -> Result<ConditionId, Error> {
        let values = values.into();
        let edge = self.geometry.edge(side);
        check_profile(self.grid(), "inflow value", Some(side), &edge, &values)?;
        Ok(self.push(label, Target::Edge(side), Spec::Inflow(values)))
    }

    pub(crate) fn push(
        &mut self,
        label: impl Into<String>,
        target: Target,
        spec: Spec,
    ) -> ConditionId {
        self.conditions.push(Condition {
            label: label.into(),
            target,
            spec,
        });
        ConditionId {
            model: self.tag,
            index: self.conditions.len() - 1,
        }
    }

    fn check_field(&self, what: &'static str, field: &Field) -> Result<(), Error> {
        field.check_len(what, self.grid())?;
        match (0..self.grid().cells()).find(|&k| !field.at(k).is_finite()) {
            Some(k) => Err(non_finite(what, self.grid(), k)),
            None => Ok(()),
        }
    }
}

fn non_finite(what: &'static str, grid: Grid, cell: usize) -> Error {
    Error::non_finite(what, Location::on(grid, cell))
}

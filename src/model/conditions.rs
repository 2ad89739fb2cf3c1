//! The conditions a [`Model`] can carry: prescribed values, fluxes, exchanges and sources, and
//! the methods that add them.

use super::builder::{ConditionId, Model};
use super::field::{Field, Profile};
use crate::{Error, Grid, Side};

/// Which cells a condition applies to.
#[derive(Clone, Debug, PartialEq)]
pub(crate) enum Target {
    Edge(Side),
    Cells(Vec<usize>),
    Everywhere,
}

/// What a condition prescribes.
#[derive(Clone, Debug, PartialEq)]
pub(crate) enum Spec {
    Value(Profile),
    Flux(Profile),
    Exchange {
        coefficient: Profile,
        external: Profile,
    },
    PointSource(f64),
    ArealSource(Field),
    VolumetricSource(Field),
}

/// One condition as the caller gave it.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct Condition {
    pub(crate) label: String,
    pub(crate) target: Target,
    pub(crate) spec: Spec,
}

impl Model {
    /// Hold the listed cells at prescribed values (fixed head or temperature at the cells'
    /// nodes): one value for all, or one per listed cell. The cells must be active.
    ///
    /// # Errors
    ///
    /// [`Error::CellOutOfRange`], [`Error::LengthMismatch`] for a profile that does not match
    /// the cells, [`Error::NonFinite`] for a non-finite value.
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
        self.check_profile("prescribed value", &cells, &values)?;
        Ok(self.push(label, Target::Cells(cells), Spec::Value(values)))
    }

    /// Prescribe the value on the edge `side` (fixed head or temperature on the boundary line):
    /// one value, or one per cell along the edge. On a cell-centred axis the value acts on the
    /// outer faces of the edge cells, through half a cell of conduction; on a node-centred axis
    /// the edge nodes are held at it.
    ///
    /// # Errors
    ///
    /// [`Error::LengthMismatch`], [`Error::NonFinite`].
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
        self.check_profile("prescribed value", &self.geometry.edge(side), &values)?;
        Ok(self.push(label, Target::Edge(side), Spec::Value(values)))
    }

    /// Prescribe the flux through the edge `side`, per unit face area, positive into the
    /// model: W/m² for heat, m/s (m³/s per m²) for groundwater. An edge with no condition is
    /// already no-flow (insulated); this is for nonzero fluxes.
    ///
    /// # Errors
    ///
    /// [`Error::LengthMismatch`], [`Error::NonFinite`].
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
        self.check_profile("edge flux", &self.geometry.edge(side), &flux)?;
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
    /// [`Error::LengthMismatch`], [`Error::NonFinite`], and [`Error::InvalidProperty`] for a
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
        self.check_profile("exchange coefficient", &cells, &coefficient)?;
        self.check_profile("outside value", &cells, &external)?;
        self.check_nonnegative("exchange coefficient", &cells, &coefficient)?;
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
    /// [`Error::CellOutOfRange`], [`Error::LengthMismatch`], [`Error::NonFinite`],
    /// [`Error::InvalidProperty`] for a negative conductance.
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
        self.check_profile("exchange conductance", &cells, &coefficient)?;
        self.check_profile("outside value", &cells, &external)?;
        self.check_nonnegative("exchange conductance", &cells, &coefficient)?;
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
    /// [`Error::CellOutOfRange`], [`Error::NonFinite`].
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
        self.check_profile("point source rate", &cells, &Profile::Uniform(rate))?;
        Ok(self.push(label, Target::Cells(cells), Spec::PointSource(rate)))
    }

    /// A source spread over the plan area of every active cell, per unit plan area: recharge (m/s) for groundwater, W/m² for heat.
    ///
    /// # Errors
    ///
    /// [`Error::LengthMismatch`], [`Error::NonFinite`].
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
    /// [`Error::LengthMismatch`], [`Error::NonFinite`].
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

    fn check_profile(
        &self,
        what: &'static str,
        cells: &[usize],
        values: &Profile,
    ) -> Result<(), Error> {
        values.check_len(what, cells.len())?;
        match (0..cells.len()).find(|&n| !values.at(n).is_finite()) {
            Some(n) => Err(non_finite(what, self.grid(), cells[n])),
            None => Ok(()),
        }
    }

    fn check_nonnegative(
        &self,
        what: &'static str,
        cells: &[usize],
        values: &Profile,
    ) -> Result<(), Error> {
        match (0..cells.len()).find(|&n| values.at(n) < 0.0) {
            Some(n) => {
                let (i, j) = self.grid().coords(cells[n]);
                Err(Error::InvalidProperty {
                    what,
                    cell: cells[n],
                    i,
                    j,
                    value: values.at(n),
                    allowed: "finite and >= 0",
                })
            }
            None => Ok(()),
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
    let (i, j) = grid.coords(cell);
    Error::NonFinite { what, cell, i, j }
}

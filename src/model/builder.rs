//! [`Model`]: geometry, medium and conditions, collected before assembly.

use std::sync::atomic::{AtomicU64, Ordering};

use super::assemble;
use super::conditions::Condition;
use super::geometry::Geometry;
use super::medium::{Conductivity, Storage};
use super::steady::SteadySystem;
use crate::{Error, Grid};

/// A handle to one condition of a [`Model`], returned when the condition is added. Use it to
/// change the condition's values between solves or during a transient run
/// ([`Forcing`](super::Forcing)) and to find its line in a [`Budget`](super::Budget).
///
/// ```
/// use quintet::model::{Conductivity, Geometry, Model};
/// let mut model = Model::new(Geometry::cell_centered(5, 5, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
/// let heater = model.point_source("heater", 12, 3.0)?;
/// assert_eq!(model.label(heater), Some("heater"));
/// # Ok::<(), quintet::Error>(())
/// ```
///
/// A handle remembers the model it came from (a clone of a model shares its handles); using
/// it with another model's system is [`Error::UnknownCondition`].
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct ConditionId {
    pub(crate) model: u64,
    pub(crate) index: usize,
}

/// Source of model tags, so that handles from one model are refused by another.
static NEXT_MODEL_TAG: AtomicU64 = AtomicU64::new(1);

impl ConditionId {
    /// The position of the condition in the order it was added (0 for the first).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(5, 5, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// let first = model.point_source("heater", 12, 3.0)?;
    /// assert_eq!(first.index(), 0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn index(self) -> usize {
        self.index
    }
}

/// What to do when some connected group of active cells has nothing that sets its level (no
/// prescribed value and no exchange reaching it): the steady equations are then singular,
/// with every constant shift of that group's values another solution.
///
/// ```
/// use quintet::model::SingularPolicy;
/// assert_eq!(SingularPolicy::default(), SingularPolicy::Reject);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Default)]
pub enum SingularPolicy {
    /// Refuse to assemble, with [`Error::FloatingRegion`] naming a cell of the group.
    #[default]
    Reject,
    /// Solve the compatible problem: the sources of each such group must balance (to one part
    /// in a million of their total magnitude, else [`Error::UnbalancedSources`]); the rest of
    /// the imbalance is removed from the right-hand side, and after the solve the group's
    /// volume-weighted mean is set to this value.
    FixMean(f64),
}

/// A conduction (heat) or confined-flow (groundwater) model on a structured grid: geometry,
/// conductivity, inactive cells, boundary conditions and sources, and optionally storage.
///
/// Build it up, then [`assemble`](Model::assemble) it into a [`SteadySystem`] for any driver,
/// or hand it to a [`Stepper`](super::Stepper) for a transient run. Conditions are applied in
/// the order added; where two prescribed values reach the same cell, the later one wins. Edge
/// conditions and distributed sources skip inactive cells; on a prescribed cell they cannot
/// change the solution, and the budget shows their flow passing straight out through the
/// prescribed value. A condition placed by name on an inactive or prescribed cell is an error.
/// Sources are positive into the model: a pumping well or a cooler is a negative source.
///
/// # Example
///
/// ```
/// use quintet::model::{Conductivity, Geometry, Model};
/// use quintet::prelude::*;
///
/// // A confined aquifer, 30 x 20 cells of 50 m, 10 m thick, K = 2e-4 m/s.
/// let geometry = Geometry::cell_centered(30, 20, 50.0, 50.0, 10.0)?;
/// let mut model = Model::new(geometry, Conductivity::isotropic(2e-4))?;
/// model.prescribe_edge("lake", Side::West, 15.0)?;          // head on the west edge, m
/// model.areal_source("recharge", 5e-9)?;                     // m/s over the plan area
/// let well = model.point_source("supply well", 315, -4e-3)?; // m³/s, pumping
///
/// let system = model.assemble()?;
/// let mut heads = system.initial_solution(15.0);
/// let mut pcg = Pcg::new(Jacobi::new(system.operator())?)
///     .with_options(SolveOptions::default().tolerance(1e-10));
/// system.solve(&mut pcg, &mut heads, &mut Workspace::new())?;
/// let budget = system.budget(&heads)?;
/// assert!(budget.discrepancy_percent().abs() < 1e-6);
/// assert_eq!(budget.line(well).map(|l| l.outflow), Some(4e-3));
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct Model {
    pub(crate) tag: u64,
    pub(crate) geometry: Geometry,
    pub(crate) conductivity: Conductivity,
    pub(crate) active: Vec<bool>,
    pub(crate) inactive_value: f64,
    pub(crate) storage: Option<Storage>,
    pub(crate) conditions: Vec<Condition>,
    pub(crate) singular: SingularPolicy,
}

impl Model {
    /// A model with every cell active, no conditions (every edge no-flow / insulated) and no
    /// storage.
    ///
    /// # Errors
    ///
    /// [`Error::LengthMismatch`] if a per-cell conductivity does not have one value per cell.
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
            active: vec![true; geometry.grid().cells()],
            geometry,
            conductivity,
            inactive_value: 0.0,
            storage: None,
            conditions: Vec::new(),
            singular: SingularPolicy::Reject,
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
    /// [`Error::CellOutOfRange`] for an index off the grid (no cell is changed then).
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
    /// [`Error::InvalidSetting`] for a value that is not finite.
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
            return Err(Error::InvalidSetting {
                name: "inactive value",
                value,
                allowed: "a finite value",
            });
        }
        self.inactive_value = value;
        Ok(())
    }

    /// Give the model storage, for transient runs (a steady assembly ignores it).
    ///
    /// # Errors
    ///
    /// [`Error::LengthMismatch`] for a per-cell field of the wrong length. Values are checked
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

    /// Assemble the steady system: face conductances, the symmetric operator with its fixed
    /// cells, the right-hand side and the budget bookkeeping.
    ///
    /// # Errors
    ///
    /// [`Error::InvalidProperty`] naming the first active cell with a negative or non-finite
    /// conductivity or a thickness that is not positive; [`Error::InactiveCell`] and
    /// [`Error::PrescribedCellConflict`] for conditions placed by name on cells where they
    /// cannot act; [`Error::FloatingRegion`] or [`Error::UnbalancedSources`] for a singular
    /// problem (see [`SingularPolicy`]).
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Error};
    /// let mut model = Model::new(Geometry::cell_centered(3, 3, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// // No prescribed value and no exchange: the level is undetermined.
    /// assert!(matches!(model.assemble(), Err(Error::FloatingRegion { cells: 9, .. })));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn assemble(&self) -> Result<SteadySystem, Error> {
        SteadySystem::from_assembly(assemble::assemble(self, false)?, self.singular)
    }

    pub(crate) fn checked_cells(
        &self,
        cells: impl IntoIterator<Item = usize>,
    ) -> Result<Vec<usize>, Error> {
        let n = self.grid().cells();
        let cells: Vec<usize> = cells.into_iter().collect();
        match cells.iter().find(|&&k| k >= n) {
            Some(&cell) => Err(Error::CellOutOfRange { cell, cells: n }),
            None => Ok(cells),
        }
    }
}

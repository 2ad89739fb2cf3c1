//! What a model is made of: the [`Model`] record (geometry, medium, inactive cells,
//! conditions), the condition records and the handles that name them. The methods that build a
//! model are in `builder.rs`; assembly, systems and steppers read these records.

use std::sync::atomic::AtomicU64;
use std::sync::Arc;

use super::advection::Advection;
use super::field::{Field, Profile};
use super::geometry::Geometry;
use super::medium::{Conductivity, Storage};
use crate::error::Location;
use crate::space::Space;
use crate::{Error, Grid, Side};

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
/// it with another model's system is [`ErrorKind::UnknownCondition`](crate::ErrorKind::UnknownCondition).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct ConditionId {
    pub(crate) model: u64,
    pub(crate) index: usize,
}

/// Source of model tags, so that handles from one model are refused by another.
pub(crate) static NEXT_MODEL_TAG: AtomicU64 = AtomicU64::new(1);

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
    /// Refuse to assemble, with [`ErrorKind::FloatingRegion`](crate::ErrorKind::FloatingRegion) naming a cell of the group.
    #[default]
    Reject,
    /// Solve the compatible problem: the sources of each such group must balance (to one part
    /// in a million of their total magnitude, else [`ErrorKind::UnbalancedSources`](crate::ErrorKind::UnbalancedSources)); the rest of
    /// the imbalance is removed from the right-hand side, and after the solve the group's
    /// volume-weighted mean is set to this value.
    FixMean(f64),
}

/// A conduction (heat) or confined-flow (groundwater) model on a structured grid: geometry,
/// conductivity, inactive cells, boundary conditions and sources, and optionally storage.
///
/// Build it up, then [`assemble`](Model::assemble) it into a [`SteadySystem`](super::SteadySystem) for any driver,
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
/// assert!(budget.imbalance_percent().abs() < 1e-6);
/// assert_eq!(budget.line(well).map(|l| l.outflow), Some(4e-3));
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Model {
    pub(crate) tag: u64,
    pub(crate) geometry: Geometry,
    pub(crate) conductivity: Conductivity,
    pub(crate) active: Vec<bool>,
    pub(crate) inactive_value: f64,
    pub(crate) storage: Option<Storage>,
    pub(crate) conditions: Vec<Condition>,
    pub(crate) singular: SingularPolicy,
    /// The flow field that carries the modelled quantity, if any.
    pub(crate) advection: Option<Advection>,
    /// Where every reduction over the model's cells runs (budget sums, validation scans).
    pub(crate) space: Arc<dyn Space>,
}

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
    /// The value the flow field carries in through an edge.
    Inflow(Profile),
}

/// One condition as the caller gave it.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct Condition {
    pub(crate) label: String,
    pub(crate) target: Target,
    pub(crate) spec: Spec,
}

impl Condition {
    /// The cells the condition's profile runs over (edge cells in edge order, or the listed
    /// cells; none for a distributed source).
    pub(crate) fn cells(&self, geometry: &Geometry) -> Vec<usize> {
        match &self.target {
            Target::Edge(side) => geometry.edge(*side),
            Target::Cells(cells) => cells.clone(),
            Target::Everywhere => Vec::new(),
        }
    }
}

/// `values` has one entry per cell of `cells` — the cells along the edge `along`, or the
/// listed cells — (or is uniform) and every entry is finite.
pub(crate) fn check_profile(
    grid: Grid,
    what: &'static str,
    along: Option<Side>,
    cells: &[usize],
    values: &Profile,
) -> Result<(), Error> {
    if let Profile::PerTarget(v) = values {
        if v.len() != cells.len() {
            let place = match along {
                Some(side) => format!("{what} along the {side} edge (one per edge cell)"),
                None => format!("{what} for the listed cells (one per cell)"),
            };
            return Err(Error::length(place, cells.len(), v.len()));
        }
    }
    match (0..cells.len()).find(|&n| !values.at(n).is_finite()) {
        Some(n) => Err(Error::non_finite(what, Location::on(grid, cells[n]))),
        None => Ok(()),
    }
}

/// Every entry of `values` (one per cell of `cells`) is `>= 0`.
pub(crate) fn check_nonnegative(
    grid: Grid,
    what: &'static str,
    cells: &[usize],
    values: &Profile,
) -> Result<(), Error> {
    match (0..cells.len()).find(|&n| values.at(n) < 0.0) {
        Some(n) => Err(Error::property(
            what,
            Location::on(grid, cells[n]),
            values.at(n),
            "finite and >= 0",
        )),
        None => Ok(()),
    }
}

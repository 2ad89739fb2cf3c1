//! The crate's one error type.
//!
//! Every fallible function returns [`Error`]. Kinds carry the context a modeller needs to find
//! the problem: the cell (index and `(i, j)`), the lengths, the iteration and residual. A solve
//! that stops without converging still hands back everything it computed: the last iterate is
//! left in the caller's `x`, and the error carries the full [`Report`].

use crate::grid::Side;
use crate::solve::Report;

/// Everything that can go wrong in quintet.
///
/// # Example
///
/// ```
/// use quintet::{Error, Grid};
///
/// let err = Grid::new(0, 5).unwrap_err();
/// assert!(matches!(err, Error::InvalidGrid { nx: 0, ny: 5 }));
/// assert!(err.report().is_none());
/// ```
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// The grid has no cells, or `nx · ny` overflows `usize`.
    #[error("a grid of {nx} x {ny} cells is not allowed: both sides must be at least 1")]
    InvalidGrid {
        /// Cells in the east direction.
        nx: usize,
        /// Cells in the north direction.
        ny: usize,
    },

    /// An array does not have the length the grid needs.
    #[error("{what} has {found} entries, but the grid has {expected} cells")]
    LengthMismatch {
        /// Which array (for example `"rhs"` or `"east coefficients"`).
        what: &'static str,
        /// Length the grid needs.
        expected: usize,
        /// Length that was passed.
        found: usize,
    },

    /// Two objects that must share a grid were built on different grids.
    #[error(
        "grid mismatch: expected {expected_nx} x {expected_ny}, found {found_nx} x {found_ny}"
    )]
    GridMismatch {
        /// Expected cells east.
        expected_nx: usize,
        /// Expected cells north.
        expected_ny: usize,
        /// Found cells east.
        found_nx: usize,
        /// Found cells north.
        found_ny: usize,
    },

    /// A cell index lies outside the grid.
    #[error("cell {cell} is outside the grid of {cells} cells")]
    CellOutOfRange {
        /// The offending index.
        cell: usize,
        /// Number of cells in the grid.
        cells: usize,
    },

    /// A coefficient, right-hand side or initial value is NaN or infinite.
    #[error("{what} at cell {cell} (i = {i}, j = {j}) is not finite")]
    NonFinite {
        /// Which quantity (for example `"center coefficient"`, `"rhs"`, `"initial guess"`).
        what: &'static str,
        /// Cell index `k = i + nx·j`.
        cell: usize,
        /// Column (east index).
        i: usize,
        /// Row (north index).
        j: usize,
    },

    /// A free cell's center (diagonal) coefficient is zero or negative, and the method divides
    /// by it or needs a positive definite operator.
    #[error("center coefficient at cell {cell} (i = {i}, j = {j}) is {value}; this method needs it positive")]
    NonPositiveCenter {
        /// Cell index.
        cell: usize,
        /// Column.
        i: usize,
        /// Row.
        j: usize,
        /// The center coefficient found.
        value: f64,
    },

    /// A cell on the grid edge has a nonzero coupling towards a neighbour that does not exist.
    #[error("cell {cell} (i = {i}, j = {j}) has {side} coupling {value}, but it has no {side} neighbour")]
    OffGridCoupling {
        /// Cell index.
        cell: usize,
        /// Column.
        i: usize,
        /// Row.
        j: usize,
        /// Which side points off the grid.
        side: Side,
        /// The coupling found (it must be zero).
        value: f64,
    },

    /// The operator is not symmetric: the first pair of cells whose mutual couplings differ.
    #[error("couplings between cells {cell} and {neighbour} differ: {forward} (from {cell}) vs {backward} (from {neighbour})")]
    Asymmetric {
        /// The first cell of the pair (the lower index).
        cell: usize,
        /// Its east or north neighbour.
        neighbour: usize,
        /// Coupling of `cell` towards `neighbour`.
        forward: f64,
        /// Coupling of `neighbour` towards `cell`.
        backward: f64,
    },

    /// A numerical setting lies outside its allowed range (for example ω ∉ (0, 2)).
    #[error("setting {name} = {value} is not allowed: {allowed}")]
    InvalidSetting {
        /// Name of the setting.
        name: &'static str,
        /// The value passed.
        value: f64,
        /// What is allowed.
        allowed: &'static str,
    },

    /// CG found a search direction with `p·Ap ≤ 0`: the operator (restricted to the free
    /// cells) is not symmetric positive definite. The last iterate is in `x`.
    #[error("p·Ap = {curvature:e} at iteration {iteration}: the operator is not symmetric positive definite")]
    NotPositiveDefinite {
        /// Iteration at which the breakdown happened.
        iteration: usize,
        /// The value of `p·Ap` found.
        curvature: f64,
        /// Everything recorded up to the breakdown.
        report: Box<Report>,
    },

    /// PCG found `r·z ≤ 0` for a nonzero residual: the preconditioner is not positive definite.
    #[error(
        "r·z = {value:e} at iteration {iteration}: the preconditioner is not positive definite"
    )]
    PreconditionerNotPositive {
        /// Iteration at which it happened.
        iteration: usize,
        /// The value of `r·z` found.
        value: f64,
        /// Everything recorded up to the breakdown.
        report: Box<Report>,
    },

    /// An incomplete factorisation met a pivot that is not positive.
    #[error("factorisation pivot at cell {cell} is {value}; it must be positive")]
    PivotBreakdown {
        /// Cell at which the pivot broke down.
        cell: usize,
        /// The pivot value found.
        value: f64,
    },

    /// A grid spacing (cell width or distance between nodes) is zero, negative or not finite.
    #[error("{what} {index} is {value}; spacings must be positive and finite")]
    InvalidSpacing {
        /// Which spacing (`"cell width"` or `"node spacing"`).
        what: &'static str,
        /// Its position along the axis (the column or row, or the gap after that node).
        index: usize,
        /// The value found.
        value: f64,
    },

    /// A per-cell property (conductivity, thickness, storage, exchange coefficient, ...) is
    /// outside its allowed range at an active cell.
    #[error("{what} at cell {cell} (i = {i}, j = {j}) is {value}; it must be {allowed}")]
    InvalidProperty {
        /// Which property.
        what: &'static str,
        /// Cell index `k = i + nx·j`.
        cell: usize,
        /// Column.
        i: usize,
        /// Row.
        j: usize,
        /// The value found.
        value: f64,
        /// What is allowed (for example `"finite and >= 0"`).
        allowed: &'static str,
    },

    /// A condition names a cell that is inactive (outside the modelled domain).
    #[error("{what} is placed on cell {cell} (i = {i}, j = {j}), which is inactive")]
    InactiveCell {
        /// Which condition (for example `"point source \"well 1\""`).
        what: String,
        /// Cell index.
        cell: usize,
        /// Column.
        i: usize,
        /// Row.
        j: usize,
    },

    /// A condition names a cell whose value is prescribed, where it could have no effect.
    #[error("{what} is placed on cell {cell} (i = {i}, j = {j}), whose value is prescribed; it would have no effect")]
    PrescribedCellConflict {
        /// Which condition.
        what: String,
        /// Cell index.
        cell: usize,
        /// Column.
        i: usize,
        /// Row.
        j: usize,
    },

    /// A condition handle does not belong to the model it was used with.
    #[error("condition handle {id} does not belong to this model (it has {count} conditions); handles work only with the model that issued them")]
    UnknownCondition {
        /// The handle's number.
        id: usize,
        /// Number of conditions in the model.
        count: usize,
    },

    /// A connected group of active cells has nothing that sets its level: no prescribed value,
    /// no exchange with an outside value and (for a transient model) no storage. The steady
    /// equations then fix its values only up to a constant.
    #[error("the {cells} connected active cells around cell {cell} (i = {i}, j = {j}) have no prescribed value, no exchange boundary and no storage, so their level is undetermined; add one of these, or ask for the compatible problem with a fixed mean")]
    FloatingRegion {
        /// A cell of the region (its lowest index).
        cell: usize,
        /// Column.
        i: usize,
        /// Row.
        j: usize,
        /// Number of cells in the region.
        cells: usize,
    },

    /// A region without anything that sets its level has sources that do not balance, so no
    /// steady state exists.
    #[error("the region around cell {cell} (i = {i}, j = {j}) has no prescribed value or exchange, and its sources do not balance: net inflow {net_inflow:e} against total source magnitude {total:e}; no steady state exists")]
    UnbalancedSources {
        /// A cell of the region (its lowest index).
        cell: usize,
        /// Column.
        i: usize,
        /// Row.
        j: usize,
        /// Sum of all sources and fluxes into the region.
        net_inflow: f64,
        /// Sum of their magnitudes.
        total: f64,
    },

    /// A flow budget does not close to within the caller's threshold.
    #[error("the flow budget is off by {discrepancy_percent:e} %, more than the {threshold_percent} % allowed")]
    BudgetOutOfBalance {
        /// `100·(in − out)/((in + out)/2)`.
        discrepancy_percent: f64,
        /// The threshold the caller set, in percent.
        threshold_percent: f64,
    },

    /// The solve stopped for a reason that is not convergence (iteration limit, stagnation,
    /// divergence, a non-finite residual, or a custom rule). The last iterate is in `x`.
    #[error("{report}")]
    NotConverged {
        /// Everything the solve recorded.
        report: Box<Report>,
    },
}

impl Error {
    /// The solve report carried by the error, if the error came out of an iteration.
    ///
    /// # Example
    ///
    /// ```
    /// use quintet::prelude::*;
    ///
    /// let grid = Grid::new(20, 20)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let rhs = vec![1.0; grid.cells()];
    /// let mut x = vec![0.0; grid.cells()];
    /// let mut cg = Cg::default();
    /// cg.options = SolveOptions::default().max_iterations(3);
    /// let err = cg.solve(&op, &rhs, &mut x).unwrap_err();
    /// let report = err.report().expect("an iteration error carries its report");
    /// assert_eq!(report.iterations, 3);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn report(&self) -> Option<&Report> {
        match self {
            Error::NotPositiveDefinite { report, .. }
            | Error::PreconditionerNotPositive { report, .. }
            | Error::NotConverged { report } => Some(report),
            _ => None,
        }
    }
}

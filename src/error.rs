//! The crate's one error type.
//!
//! Every fallible function returns [`Error`], an opaque value with a [`kind`](Error::kind)
//! (solver kinds and model kinds told apart by [`ErrorKind::is_model`]), the context a modeller
//! needs to find the problem — the cell as index and `(i, j)` ([`Error::location`]), the
//! offending value, the iteration — and a message that says all of it. A solve that stops
//! without converging still hands back everything it computed: the last iterate is left in the
//! caller's `x`, and the error carries the full [`Report`] ([`Error::report`]).

use std::borrow::Cow;
use std::fmt;

use crate::format::Sig4;
use crate::report::Report;

/// What went wrong, without the details (those are on the [`Error`]).
///
/// ```
/// use quintet::{ErrorKind, Grid};
/// let err = Grid::new(0, 5).unwrap_err();
/// assert_eq!(err.kind(), ErrorKind::InvalidGrid);
/// assert!(!err.kind().is_model());
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum ErrorKind {
    /// A grid with no cells, or a cell count that overflows.
    InvalidGrid,
    /// An array or grid too large for the memory the operating system grants (reported
    /// before anything is allocated), or above the crate's limit on cells.
    TooLarge,
    /// The system has nothing that fixes its level: no fixed cell and no row whose diagonal
    /// exceeds the sum of its couplings, so it is singular.
    Singular,
    /// An array does not have the length the operator or grid needs.
    LengthMismatch,
    /// Two objects that must share a grid (or a length) do not.
    GridMismatch,
    /// A cell index or `(i, j)` lies outside the grid.
    CellOutOfRange,
    /// A coefficient, right-hand side, initial value or property is NaN or infinite.
    NonFinite,
    /// A free cell's center (diagonal) is zero or negative where the method needs it positive.
    NonPositiveCenter,
    /// A cell on the grid edge couples to a neighbour that does not exist.
    OffGridCoupling,
    /// The operator is not symmetric where the method needs it to be.
    Asymmetric,
    /// A numerical setting lies outside its allowed range.
    InvalidSetting,
    /// The method needs the rows of a 5-point stencil and the operator is not one.
    NeedsStencil,
    /// CG found `p·Ap ≤ 0`: the operator is not symmetric positive definite.
    NotPositiveDefinite,
    /// PCG found `r·z ≤ 0`: the preconditioner is not positive definite.
    PreconditionerNotPositive,
    /// BiCGSTAB's shadow residual `r̂` became orthogonal to the residual (`r̂·r = 0`) or to
    /// the image of the new direction (`r̂·A·p̂ = 0`): the BiCG recursion cannot go on.
    ShadowOrthogonal,
    /// BiCGSTAB's stabilising step found `ω = 0` (`A·ŝ` orthogonal to `s`, or zero): the
    /// next direction cannot be formed.
    StabilisingStepZero,
    /// GMRES found the projected (Hessenberg) system singular: the new Krylov vector vanished
    /// without solving the system, so the operator (with the preconditioner) is singular on
    /// the directions searched.
    HessenbergSingular,
    /// An incomplete factorisation or a coarse level met a pivot that is not positive.
    PivotBreakdown,
    /// The solve stopped for a reason that is not convergence.
    NotConverged,
    /// A spacing (cell width, node distance) is not positive and finite.
    InvalidSpacing,
    /// A per-cell property of a model is outside its allowed range.
    InvalidProperty,
    /// A condition is placed on an inactive cell.
    InactiveCell,
    /// A condition is placed on a cell whose value is prescribed.
    PrescribedCellConflict,
    /// A condition handle from another model.
    UnknownCondition,
    /// A connected region of a model has nothing that sets its level.
    FloatingRegion,
    /// A floating region's sources do not balance, so no steady state exists.
    UnbalancedSources,
    /// A flow budget does not close to within the caller's threshold.
    BudgetImbalance,
    /// A file could not be opened, read or written; the message carries the operating
    /// system's, and the context names the file. Only the `npy` feature reads or writes files.
    Io,
    /// A file's contents are not what was asked for: not a `.npy` file, another element type,
    /// an array that is not 2-D, or fewer values than its header promises.
    FileFormat,
    /// A group of cells given to a budget names a cell of the wrong sort (a free cell in a
    /// group of fixed cells, or the reverse) or a cell that another group already holds.
    BudgetGroup,
    /// A model's flow field enters through an edge at a free cell, and no inflow value says
    /// what the entering fluid carries in there.
    NoInflowValue,
    /// A method that needs a diagonally dominant operator met a row whose center is smaller
    /// than the sum of its couplings' magnitudes, or a weakly dominant row from which no
    /// strictly dominant row can be reached.
    NotDiagonallyDominant,
    /// A nonlinear model's outer iteration (Picard or Newton,
    /// [`NonlinearSystem`](crate::model::NonlinearSystem)) stopped before both its change and
    /// its residual met their tolerances: outer limit reached, or the residual not finite. The
    /// last outer iterate is left in `x`, and the error carries the report of the last inner
    /// (linear) solve ([`Error::report`]), the outer iterations done ([`Error::iteration`])
    /// and the last nonlinear residual ([`Error::value`]).
    OuterNotConverged,
}

impl ErrorKind {
    /// Whether this kind comes from [`model`](crate::model) (geometry, properties, conditions,
    /// budgets) rather than from an operator, a setting or a solve.
    ///
    /// ```
    /// use quintet::ErrorKind;
    /// assert!(ErrorKind::FloatingRegion.is_model());
    /// assert!(!ErrorKind::NotConverged.is_model());
    /// ```
    pub fn is_model(self) -> bool {
        matches!(
            self,
            ErrorKind::InvalidSpacing
                | ErrorKind::InvalidProperty
                | ErrorKind::InactiveCell
                | ErrorKind::PrescribedCellConflict
                | ErrorKind::UnknownCondition
                | ErrorKind::FloatingRegion
                | ErrorKind::UnbalancedSources
                | ErrorKind::BudgetImbalance
                | ErrorKind::NoInflowValue
        )
    }

    /// Whether this kind ends an iteration that had started: the error then carries the
    /// [`Report`] and the last iterate is in `x`.
    ///
    /// ```
    /// use quintet::ErrorKind;
    /// assert!(ErrorKind::NotConverged.is_solve());
    /// assert!(!ErrorKind::LengthMismatch.is_solve());
    /// ```
    pub fn is_solve(self) -> bool {
        matches!(
            self,
            ErrorKind::NotPositiveDefinite
                | ErrorKind::PreconditionerNotPositive
                | ErrorKind::ShadowOrthogonal
                | ErrorKind::StabilisingStepZero
                | ErrorKind::HessenbergSingular
                | ErrorKind::NotConverged
                | ErrorKind::OuterNotConverged
        )
    }
}

/// Where on the grid an error happened: the cell index `k = i + nx·j` and, when the operator
/// lives on a grid, `(i, j)`.
///
/// ```
/// use quintet::{Grid, Location};
/// let at = Location::on(Grid::new(10, 10)?, 23);
/// assert_eq!((at.cell, at.coords), (23, Some((3, 2))));
/// assert_eq!(at.to_string(), "cell 23 (i = 3, j = 2)");
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct Location {
    /// The cell (entry) index.
    pub cell: usize,
    /// `(i, j)` of the cell, when the unknowns are the cells of a grid.
    pub coords: Option<(usize, usize)>,
}

impl Location {
    /// Entry `k` of a vector with no grid behind it.
    ///
    /// ```
    /// assert_eq!(quintet::Location::entry(7).to_string(), "cell 7");
    /// ```
    pub fn entry(k: usize) -> Location {
        Location {
            cell: k,
            coords: None,
        }
    }
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.coords {
            Some((i, j)) => write!(f, "cell {} (i = {i}, j = {j})", self.cell),
            None => write!(f, "cell {}", self.cell),
        }
    }
}

/// The shape two objects are compared by: a length and, for grid operators, the grid.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) struct Shape {
    pub(crate) cells: usize,
    /// `(nx, ny)` of the grid, if any.
    pub(crate) grid: Option<(usize, usize)>,
}

impl fmt::Display for Shape {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.grid {
            Some((nx, ny)) => write!(f, "{nx} x {ny} cells"),
            None => write!(f, "{} unknowns", self.cells),
        }
    }
}

/// The details behind an [`Error`].
#[derive(Clone, Debug, PartialEq, thiserror::Error)]
enum Detail {
    #[error("a grid of {nx} x {ny} cells is not allowed: both sides must be at least 1")]
    InvalidGrid { nx: usize, ny: usize },
    #[error(
        "a grid of {nx} x {ny} cells is more than the {} cells quintet allows (MAX_CELLS)",
        crate::MAX_CELLS
    )]
    GridTooLarge { nx: usize, ny: usize },
    #[error("{what} of {cells} cells need {bytes} bytes, more than the memory available")]
    TooLarge {
        what: &'static str,
        cells: usize,
        bytes: u128,
    },
    #[error("{what}: {reason}")]
    Singular {
        what: &'static str,
        reason: &'static str,
    },
    #[error("{what}: {found} entries given, {expected} needed")]
    LengthMismatch {
        what: Cow<'static, str>,
        expected: usize,
        found: usize,
    },
    #[error("{what} is not set: {how}")]
    Missing {
        what: &'static str,
        how: &'static str,
    },
    #[error("{what} was built for {found}, but the operator has {expected}")]
    GridMismatch {
        what: &'static str,
        expected: Shape,
        found: Shape,
    },
    #[error("cell {cell} is outside the grid of {cells} cells")]
    CellOutOfRange { cell: usize, cells: usize },
    #[error("cell (i = {i}, j = {j}) is outside the grid of {nx} x {ny} cells")]
    CoordsOutOfRange {
        i: usize,
        j: usize,
        nx: usize,
        ny: usize,
    },
    #[error("{what} at {at} is not finite")]
    NonFinite { what: &'static str, at: Location },
    #[error("center coefficient at {at} is {value}; this method needs it positive")]
    NonPositiveCenter { at: Location, value: f64 },
    #[error("{at} has {side} coupling {value}, but it has no {side} neighbour")]
    OffGridCoupling {
        at: Location,
        side: &'static str,
        value: f64,
    },
    #[error("couplings between {at} and cell {neighbour} differ: {forward} from the first, {backward} from the second")]
    Asymmetric {
        at: Location,
        neighbour: usize,
        forward: f64,
        backward: f64,
    },
    #[error("setting {name} = {value} is not allowed: {allowed}")]
    InvalidSetting {
        name: &'static str,
        value: f64,
        allowed: &'static str,
    },
    #[error("{method} walks the rows of a 5-point stencil, and this operator is not a Stencil5")]
    NeedsStencil { method: &'static str },
    #[error("p·Ap = {curvature:e} at iteration {iteration}: the operator is not symmetric positive definite")]
    NotPositiveDefinite {
        iteration: usize,
        curvature: f64,
        report: Box<Report>,
    },
    #[error(
        "r·z = {value:e} at iteration {iteration}: the preconditioner is not positive definite"
    )]
    PreconditionerNotPositive {
        iteration: usize,
        value: f64,
        report: Box<Report>,
    },
    #[error("BiCGSTAB broke down in iteration {iteration}: {product} = {value:e}, the shadow residual r̂ is orthogonal to {}; x holds the iterate of iteration {}", if product.contains('A') { "the image A·p̂ of the new direction" } else { "the residual" }, iteration.saturating_sub(1))]
    ShadowOrthogonal {
        iteration: usize,
        product: &'static str,
        value: f64,
        report: Box<Report>,
    },
    #[error("BiCGSTAB broke down in iteration {iteration}: the stabilising step found ω = {value:e} (A·ŝ is orthogonal to s or zero), so no next direction can be formed; x holds the iterate of iteration {}", iteration.saturating_sub(1))]
    StabilisingStepZero {
        iteration: usize,
        value: f64,
        report: Box<Report>,
    },
    #[error("GMRES broke down in iteration {iteration}: the new Krylov vector vanished and the rotated Hessenberg diagonal is {value:e}, so the operator with its preconditioner is singular on the directions searched and the system is not solved; x holds the best iterate of iteration {}", iteration.saturating_sub(1))]
    HessenbergSingular {
        iteration: usize,
        value: f64,
        report: Box<Report>,
    },
    #[error("factorisation pivot at {at} is {value}; it must be positive")]
    PivotBreakdown { at: Location, value: f64 },
    #[error("{report}")]
    NotConverged { report: Box<Report> },
    #[error("the {method} outer iteration stopped after {outer} outer iterations without converging ({why}): last change {} against {}, nonlinear residual {} against {}; x holds the last outer iterate", Sig4(*change), Sig4(*change_tolerance), Sig4(*residual), Sig4(*residual_target))]
    OuterNotConverged {
        method: &'static str,
        outer: usize,
        why: &'static str,
        change: f64,
        change_tolerance: f64,
        residual: f64,
        residual_target: f64,
        report: Option<Box<Report>>,
    },
    #[error("{what} {index} is {value}; spacings must be positive and finite")]
    InvalidSpacing {
        what: &'static str,
        index: usize,
        value: f64,
    },
    #[error("{what} at {at} is {value}; it must be {allowed}")]
    InvalidProperty {
        what: &'static str,
        at: Location,
        value: f64,
        allowed: &'static str,
    },
    #[error("{what} is placed on {at}, which is inactive")]
    InactiveCell { what: String, at: Location },
    #[error("{what} is placed on {at}, whose value is prescribed; it would have no effect")]
    PrescribedCellConflict { what: String, at: Location },
    #[error("condition handle {id} does not belong to this model (it has {count} conditions); handles work only with the model that issued them")]
    UnknownCondition { id: usize, count: usize },
    #[error("{}", floating_message(*cells, at))]
    FloatingRegion { at: Location, cells: usize },
    #[error("the region around {at} has no prescribed value or exchange, and its sources do not balance: net inflow {} against a total source magnitude of {} (W for heat, m³/s for groundwater); no steady state exists", Sig4(*net_inflow), Sig4(*total))]
    UnbalancedSources {
        at: Location,
        net_inflow: f64,
        total: f64,
    },
    #[error("the row of {at} {}", dominance_message(*center, *couplings))]
    NotDiagonallyDominant {
        at: Location,
        center: f64,
        couplings: f64,
    },
    #[error("budget group \"{group}\" names {at}, {reason}")]
    BudgetGroup {
        group: String,
        at: Location,
        reason: String,
    },
    #[error("the flow budget's imbalance is {imbalance_percent:e} %, more than the {threshold_percent} % allowed")]
    BudgetImbalance {
        imbalance_percent: f64,
        threshold_percent: f64,
    },
    #[error("the flow field enters the model through the {side} edge at {at} ({} W/K), but no inflow value says what it carries in there; give one with Model::inflow_value", Sig4(*flow))]
    NoInflowValue {
        side: crate::Side,
        at: Location,
        flow: f64,
    },
    #[cfg(feature = "npy")]
    #[error("file access failed: {message}")]
    Io { message: String },
    #[cfg(feature = "npy")]
    #[error("{reason}")]
    FileFormat { reason: String },
    #[cfg(feature = "npy")]
    #[error("the file holds an array of shape ({}, {}), but a grid of {} x {} cells needs shape (ny, nx) = ({}, {}){}",
        found.0, found.1, expected.0, expected.1, expected.1, expected.0,
        if *found == (expected.0 as u64, expected.1 as u64) { "; the file looks transposed" } else { "" })]
    FieldShape {
        /// `(nx, ny)` of the grid.
        expected: (usize, usize),
        /// The file's shape, axis 0 first.
        found: (u64, u64),
    },
}

/// Everything that can go wrong in quintet: an opaque value with a [`kind`](Error::kind), the
/// context of the failure, and a message that names the cell as index and `(i, j)`.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(3, 3)?;
/// let err = Banded5::from_fn(grid, |i, j| {
///     let mut c = Coeffs5::laplacian(grid, i, j);
///     if (i, j) == (1, 2) {
///         c.center = f64::NAN;
///     }
///     c
/// })
/// .unwrap_err();
/// assert_eq!(err.kind(), ErrorKind::NonFinite);
/// assert_eq!(err.location().map(|at| at.coords), Some(Some((1, 2))));
/// assert_eq!(err.to_string(), "center coefficient at cell 7 (i = 1, j = 2) is not finite");
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, PartialEq)]
pub struct Error {
    detail: Box<Detail>,
    context: Vec<String>,
    hint: Option<&'static str>,
}

impl Error {
    fn new(detail: Detail) -> Error {
        Error {
            detail: Box::new(detail),
            context: Vec::new(),
            hint: None,
        }
    }

    /// What kind of error this is.
    ///
    /// ```
    /// use quintet::{ErrorKind, Sor};
    /// assert_eq!(Sor::new(2.5).unwrap_err().kind(), ErrorKind::InvalidSetting);
    /// ```
    pub fn kind(&self) -> ErrorKind {
        match &*self.detail {
            Detail::InvalidGrid { .. } => ErrorKind::InvalidGrid,
            Detail::TooLarge { .. } | Detail::GridTooLarge { .. } => ErrorKind::TooLarge,
            Detail::Singular { .. } => ErrorKind::Singular,
            Detail::LengthMismatch { .. } => ErrorKind::LengthMismatch,
            Detail::GridMismatch { .. } => ErrorKind::GridMismatch,
            Detail::CellOutOfRange { .. } | Detail::CoordsOutOfRange { .. } => {
                ErrorKind::CellOutOfRange
            }
            Detail::NonFinite { .. } => ErrorKind::NonFinite,
            Detail::NonPositiveCenter { .. } => ErrorKind::NonPositiveCenter,
            Detail::OffGridCoupling { .. } => ErrorKind::OffGridCoupling,
            Detail::Asymmetric { .. } => ErrorKind::Asymmetric,
            Detail::InvalidSetting { .. } | Detail::Missing { .. } => ErrorKind::InvalidSetting,
            Detail::NeedsStencil { .. } => ErrorKind::NeedsStencil,
            Detail::NotPositiveDefinite { .. } => ErrorKind::NotPositiveDefinite,
            Detail::PreconditionerNotPositive { .. } => ErrorKind::PreconditionerNotPositive,
            Detail::ShadowOrthogonal { .. } => ErrorKind::ShadowOrthogonal,
            Detail::StabilisingStepZero { .. } => ErrorKind::StabilisingStepZero,
            Detail::HessenbergSingular { .. } => ErrorKind::HessenbergSingular,
            Detail::PivotBreakdown { .. } => ErrorKind::PivotBreakdown,
            Detail::NotConverged { .. } => ErrorKind::NotConverged,
            Detail::OuterNotConverged { .. } => ErrorKind::OuterNotConverged,
            Detail::InvalidSpacing { .. } => ErrorKind::InvalidSpacing,
            Detail::InvalidProperty { .. } => ErrorKind::InvalidProperty,
            Detail::InactiveCell { .. } => ErrorKind::InactiveCell,
            Detail::PrescribedCellConflict { .. } => ErrorKind::PrescribedCellConflict,
            Detail::UnknownCondition { .. } => ErrorKind::UnknownCondition,
            Detail::FloatingRegion { .. } => ErrorKind::FloatingRegion,
            Detail::UnbalancedSources { .. } => ErrorKind::UnbalancedSources,
            Detail::BudgetImbalance { .. } => ErrorKind::BudgetImbalance,
            #[cfg(feature = "npy")]
            Detail::Io { .. } => ErrorKind::Io,
            #[cfg(feature = "npy")]
            Detail::FileFormat { .. } => ErrorKind::FileFormat,
            #[cfg(feature = "npy")]
            Detail::FieldShape { .. } => ErrorKind::GridMismatch,
            Detail::BudgetGroup { .. } => ErrorKind::BudgetGroup,
            Detail::NoInflowValue { .. } => ErrorKind::NoInflowValue,
            Detail::NotDiagonallyDominant { .. } => ErrorKind::NotDiagonallyDominant,
        }
    }

    /// The solve report carried by the error, if the error came out of an iteration.
    ///
    /// ```
    /// use quintet::prelude::*;
    ///
    /// let grid = Grid::new(20, 20)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let rhs = vec![1.0; grid.cells()];
    /// let mut x = vec![0.0; grid.cells()];
    /// let mut cg = Cg::default().with_options(SolveOptions::default().max_iterations(3));
    /// let err = cg.solve(&op, &rhs, &mut x).unwrap_err();
    /// let report = err.report().expect("an iteration error carries its report");
    /// assert_eq!(report.iterations, 3);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn report(&self) -> Option<&Report> {
        match &*self.detail {
            Detail::NotPositiveDefinite { report, .. }
            | Detail::PreconditionerNotPositive { report, .. }
            | Detail::ShadowOrthogonal { report, .. }
            | Detail::StabilisingStepZero { report, .. }
            | Detail::HessenbergSingular { report, .. }
            | Detail::NotConverged { report } => Some(report),
            Detail::OuterNotConverged { report, .. } => report.as_deref(),
            _ => None,
        }
    }

    /// The cell the error is about, if it is about one.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 1)?;
    /// let op = Banded5::from_fn(grid, |i, _| Coeffs5 { center: if i == 2 { -1.0 } else { 2.0 }, ..Coeffs5::default() })?;
    /// let err = Jacobi::new(&op).unwrap_err();
    /// assert_eq!(err.location().map(|at| at.cell), Some(2));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn location(&self) -> Option<Location> {
        match &*self.detail {
            Detail::NonFinite { at, .. }
            | Detail::NonPositiveCenter { at, .. }
            | Detail::OffGridCoupling { at, .. }
            | Detail::Asymmetric { at, .. }
            | Detail::PivotBreakdown { at, .. }
            | Detail::InvalidProperty { at, .. }
            | Detail::InactiveCell { at, .. }
            | Detail::PrescribedCellConflict { at, .. }
            | Detail::FloatingRegion { at, .. }
            | Detail::UnbalancedSources { at, .. }
            | Detail::BudgetGroup { at, .. }
            | Detail::NoInflowValue { at, .. }
            | Detail::NotDiagonallyDominant { at, .. } => Some(*at),
            Detail::CellOutOfRange { cell, .. } => Some(Location::entry(*cell)),
            _ => None,
        }
    }

    /// The iteration at which a breakdown happened (`p·Ap ≤ 0`, a BiCGSTAB or GMRES breakdown
    /// in iteration `k`, or `r·z ≤ 0` for the residual after iteration `k`), or the iterations done by a solve that did not
    /// converge.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(10, 10)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mut x = vec![0.0; 100];
    /// let err = Cg::default().with_options(SolveOptions::default().max_iterations(2))
    ///     .solve(&op, &[1.0; 100], &mut x).unwrap_err();
    /// assert_eq!(err.iteration(), Some(2));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn iteration(&self) -> Option<usize> {
        match &*self.detail {
            Detail::NotPositiveDefinite { iteration, .. }
            | Detail::PreconditionerNotPositive { iteration, .. }
            | Detail::ShadowOrthogonal { iteration, .. }
            | Detail::StabilisingStepZero { iteration, .. }
            | Detail::HessenbergSingular { iteration, .. } => Some(*iteration),
            Detail::NotConverged { report } => Some(report.iterations),
            Detail::OuterNotConverged { outer, .. } => Some(*outer),
            _ => None,
        }
    }

    /// The offending number, where there is one: the coefficient, center, pivot or property
    /// found, the setting passed, `p·Ap`, `r·z`, `r̂·r`, `r̂·A·p̂`, `ω` or the rotated
    /// Hessenberg diagonal at a breakdown, the net inflow of unbalanced
    /// sources, the budget's imbalance in percent.
    ///
    /// ```
    /// assert_eq!(quintet::Sor::new(2.5).unwrap_err().value(), Some(2.5));
    /// ```
    pub fn value(&self) -> Option<f64> {
        match &*self.detail {
            Detail::NonPositiveCenter { value, .. }
            | Detail::OffGridCoupling { value, .. }
            | Detail::InvalidSetting { value, .. }
            | Detail::PreconditionerNotPositive { value, .. }
            | Detail::ShadowOrthogonal { value, .. }
            | Detail::StabilisingStepZero { value, .. }
            | Detail::HessenbergSingular { value, .. }
            | Detail::PivotBreakdown { value, .. }
            | Detail::NotDiagonallyDominant { center: value, .. }
            | Detail::InvalidSpacing { value, .. }
            | Detail::InvalidProperty { value, .. } => Some(*value),
            Detail::NotPositiveDefinite { curvature, .. } => Some(*curvature),
            Detail::Asymmetric { forward, .. } => Some(*forward),
            Detail::UnbalancedSources { net_inflow, .. } => Some(*net_inflow),
            Detail::NoInflowValue { flow, .. } => Some(*flow),
            Detail::OuterNotConverged { residual, .. } => Some(*residual),
            Detail::BudgetImbalance {
                imbalance_percent, ..
            } => Some(*imbalance_percent),
            _ => None,
        }
    }

    /// What the error is about, where the message names it: the array, the coefficient or
    /// property, the setting, the condition.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 3)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mut x = vec![0.0; 8];
    /// let err = Cg::default().solve(&op, &[1.0; 9], &mut x).unwrap_err();
    /// assert_eq!(err.subject(), Some("x"));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn subject(&self) -> Option<&str> {
        match &*self.detail {
            Detail::LengthMismatch { what, .. } => Some(what),
            Detail::Missing { what, .. }
            | Detail::GridMismatch { what, .. }
            | Detail::NonFinite { what, .. }
            | Detail::InvalidSpacing { what, .. }
            | Detail::InvalidProperty { what, .. } => Some(what),
            Detail::InvalidSetting { name, .. } => Some(name),
            Detail::NeedsStencil { method } => Some(method),
            Detail::TooLarge { what, .. } | Detail::Singular { what, .. } => Some(what),
            Detail::InactiveCell { what, .. } | Detail::PrescribedCellConflict { what, .. } => {
                Some(what)
            }
            Detail::BudgetGroup { group, .. } => Some(group),
            _ => None,
        }
    }

    /// What the caller was doing when the error happened, outermost last (for example
    /// `"time step 12 (t = 3600 s)"`); empty for most errors.
    ///
    /// ```
    /// let err = quintet::Grid::new(0, 1).unwrap_err();
    /// assert!(err.context().is_empty());
    /// ```
    pub fn context(&self) -> &[String] {
        &self.context
    }

    /// What to check or try, where the crate can tell (for example the symmetry check after a
    /// CG breakdown).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(2, 1)?;
    /// // Positive centers, but indefinite: eigenvalues −1 and 3.
    /// let op = Banded5::new(grid, vec![1.0, 1.0], vec![0.0, -2.0], vec![-2.0, 0.0], vec![0.0; 2], vec![0.0; 2])?;
    /// let err = Cg::default().solve(&op, &[1.0, 0.0], &mut [0.0; 2]).unwrap_err();
    /// assert!(err.hint().is_some_and(|h| h.contains("check_symmetry")));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn hint(&self) -> Option<&str> {
        self.hint
    }

    /// The same error with a hint of what to check.
    pub(crate) fn with_hint(mut self, hint: &'static str) -> Error {
        self.hint = Some(hint);
        self
    }

    /// The same error, with `what` added to its context.
    pub(crate) fn while_doing(mut self, what: impl Into<String>) -> Error {
        self.context.push(what.into());
        self
    }

    // ---- constructors (crate-private) ----

    pub(crate) fn invalid_grid(nx: usize, ny: usize) -> Error {
        Error::new(Detail::InvalidGrid { nx, ny })
    }

    pub(crate) fn too_large(what: &'static str, cells: usize, bytes: u128) -> Error {
        Error::new(Detail::TooLarge { what, cells, bytes })
    }

    pub(crate) fn grid_too_large(nx: usize, ny: usize) -> Error {
        Error::new(Detail::GridTooLarge { nx, ny })
    }

    pub(crate) fn singular(what: &'static str, reason: &'static str) -> Error {
        Error::new(Detail::Singular { what, reason })
    }

    pub(crate) fn length(
        what: impl Into<Cow<'static, str>>,
        expected: usize,
        found: usize,
    ) -> Error {
        Error::new(Detail::LengthMismatch {
            what: what.into(),
            expected,
            found,
        })
    }

    pub(crate) fn missing(what: &'static str, how: &'static str) -> Error {
        Error::new(Detail::Missing { what, how })
    }

    pub(crate) fn shape_mismatch(what: &'static str, expected: Shape, found: Shape) -> Error {
        Error::new(Detail::GridMismatch {
            what,
            expected,
            found,
        })
    }

    pub(crate) fn cell_out_of_range(cell: usize, cells: usize) -> Error {
        Error::new(Detail::CellOutOfRange { cell, cells })
    }

    pub(crate) fn coords_out_of_range(i: usize, j: usize, nx: usize, ny: usize) -> Error {
        Error::new(Detail::CoordsOutOfRange { i, j, nx, ny })
    }

    pub(crate) fn non_finite(what: &'static str, at: Location) -> Error {
        Error::new(Detail::NonFinite { what, at })
    }

    pub(crate) fn non_positive_center(at: Location, value: f64) -> Error {
        Error::new(Detail::NonPositiveCenter { at, value })
    }

    pub(crate) fn off_grid(at: Location, side: &'static str, value: f64) -> Error {
        Error::new(Detail::OffGridCoupling { at, side, value })
    }

    pub(crate) fn asymmetric(at: Location, neighbour: usize, forward: f64, backward: f64) -> Error {
        Error::new(Detail::Asymmetric {
            at,
            neighbour,
            forward,
            backward,
        })
    }

    pub(crate) fn setting(name: &'static str, value: f64, allowed: &'static str) -> Error {
        Error::new(Detail::InvalidSetting {
            name,
            value,
            allowed,
        })
    }

    pub(crate) fn needs_stencil(method: &'static str) -> Error {
        Error::new(Detail::NeedsStencil { method })
    }

    pub(crate) fn not_positive_definite(iteration: usize, curvature: f64, report: Report) -> Error {
        Error::new(Detail::NotPositiveDefinite {
            iteration,
            curvature,
            report: Box::new(report),
        })
    }

    pub(crate) fn preconditioner_not_positive(
        iteration: usize,
        value: f64,
        report: Report,
    ) -> Error {
        Error::new(Detail::PreconditionerNotPositive {
            iteration,
            value,
            report: Box::new(report),
        })
    }

    pub(crate) fn shadow_orthogonal(
        iteration: usize,
        product: &'static str,
        value: f64,
        report: Report,
    ) -> Error {
        Error::new(Detail::ShadowOrthogonal {
            iteration,
            product,
            value,
            report: Box::new(report),
        })
    }

    pub(crate) fn stabiliser_zero(iteration: usize, value: f64, report: Report) -> Error {
        Error::new(Detail::StabilisingStepZero {
            iteration,
            value,
            report: Box::new(report),
        })
    }

    pub(crate) fn hessenberg_singular(iteration: usize, value: f64, report: Report) -> Error {
        Error::new(Detail::HessenbergSingular {
            iteration,
            value,
            report: Box::new(report),
        })
    }

    pub(crate) fn pivot(at: Location, value: f64) -> Error {
        Error::new(Detail::PivotBreakdown { at, value })
    }

    pub(crate) fn not_converged(report: Report) -> Error {
        Error::new(Detail::NotConverged {
            report: Box::new(report),
        })
    }

    pub(crate) fn outer_not_converged(
        method: &'static str,
        outer: usize,
        why: &'static str,
        (change, change_tolerance): (f64, f64),
        (residual, residual_target): (f64, f64),
        report: Option<Report>,
    ) -> Error {
        Error::new(Detail::OuterNotConverged {
            method,
            outer,
            why,
            change,
            change_tolerance,
            residual,
            residual_target,
            report: report.map(Box::new),
        })
    }

    pub(crate) fn spacing(what: &'static str, index: usize, value: f64) -> Error {
        Error::new(Detail::InvalidSpacing { what, index, value })
    }

    pub(crate) fn property(
        what: &'static str,
        at: Location,
        value: f64,
        allowed: &'static str,
    ) -> Error {
        Error::new(Detail::InvalidProperty {
            what,
            at,
            value,
            allowed,
        })
    }

    pub(crate) fn inactive_cell(what: String, at: Location) -> Error {
        Error::new(Detail::InactiveCell { what, at })
    }

    pub(crate) fn prescribed_conflict(what: String, at: Location) -> Error {
        Error::new(Detail::PrescribedCellConflict { what, at })
    }

    pub(crate) fn unknown_condition(id: usize, count: usize) -> Error {
        Error::new(Detail::UnknownCondition { id, count })
    }

    pub(crate) fn floating(at: Location, cells: usize) -> Error {
        Error::new(Detail::FloatingRegion { at, cells })
    }

    pub(crate) fn unbalanced(at: Location, net_inflow: f64, total: f64) -> Error {
        Error::new(Detail::UnbalancedSources {
            at,
            net_inflow,
            total,
        })
    }

    pub(crate) fn budget_group(group: &str, at: Location, reason: String) -> Error {
        Error::new(Detail::BudgetGroup {
            group: group.to_string(),
            at,
            reason,
        })
    }

    pub(crate) fn no_inflow_value(side: crate::Side, at: Location, flow: f64) -> Error {
        Error::new(Detail::NoInflowValue { side, at, flow })
    }

    pub(crate) fn not_dominant(at: Location, center: f64, couplings: f64) -> Error {
        Error::new(Detail::NotDiagonallyDominant {
            at,
            center,
            couplings,
        })
    }

    pub(crate) fn budget_imbalance(imbalance_percent: f64, threshold_percent: f64) -> Error {
        Error::new(Detail::BudgetImbalance {
            imbalance_percent,
            threshold_percent,
        })
    }

    /// A failed file operation, keeping the operating system's message.
    #[cfg(feature = "npy")]
    pub(crate) fn io(err: &std::io::Error) -> Error {
        Error::new(Detail::Io {
            message: err.to_string(),
        })
    }

    /// A file whose contents are not what was asked for, saying why.
    #[cfg(feature = "npy")]
    pub(crate) fn file_format(reason: impl Into<String>) -> Error {
        Error::new(Detail::FileFormat {
            reason: reason.into(),
        })
    }

    /// A 2-D array in a file whose shape `found` (axis 0 first) is not `(ny, nx)` of `grid`.
    #[cfg(feature = "npy")]
    pub(crate) fn field_shape(grid: crate::Grid, found: (u64, u64)) -> Error {
        Error::new(Detail::FieldShape {
            expected: (grid.nx(), grid.ny()),
            found,
        })
    }
}

/// The message of a floating region: an isolated cell is most often a cell whose conductivity
/// is zero, which is better deactivated.
fn floating_message(cells: usize, at: &Location) -> String {
    if cells == 1 {
        format!("{at} is cut off from its neighbours (no conductance through any face) and has no prescribed value, exchange or storage, so its value is undetermined; if it is outside the conducting body, deactivate it (Model::deactivate), else give it a conductivity")
    } else {
        format!("the {cells} connected active cells around {at} have no prescribed value, no exchange boundary and no storage, so their level is undetermined; add one of these, or ask for the compatible problem with a fixed mean (SingularPolicy::FixMean)")
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.detail)?;
        for what in &self.context {
            write!(f, "; in {what}")?;
        }
        if let Some(hint) = self.hint {
            write!(f, ". {hint}")?;
        }
        Ok(())
    }
}

impl fmt::Debug for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("Error")
            .field("kind", &self.kind())
            .field("detail", &self.detail)
            .field("context", &self.context)
            .field("hint", &self.hint)
            .finish()
    }
}

impl std::error::Error for Error {}

/// The message of [`Detail::NotDiagonallyDominant`]: `couplings` is the sum of the coupling
/// magnitudes, or NaN for a weakly dominant row that reaches no strictly dominant one.
fn dominance_message(center: f64, couplings: f64) -> String {
    if couplings.is_nan() {
        format!(
            "is only weakly diagonally dominant (center {}) and no strictly dominant row can be reached from it through its couplings",
            Sig4(center)
        )
    } else {
        format!(
            "is not diagonally dominant: center {} against a sum of coupling magnitudes {}",
            Sig4(center),
            Sig4(couplings)
        )
    }
}

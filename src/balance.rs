//! [`SystemBudget`]: the flow budget of a system you assembled yourself, as the model gives it.

use crate::capacity::CapacityTerm;
use crate::error::Location;
use crate::model::{Budget, BudgetLine, FlowKind};
use crate::operator::{check_len, locate, row_sums_to_zero, Coeffs5};
use crate::scalar::to_f64;
use crate::stencil::check_grid;
use crate::{memory, Error, Scalar, Stencil5};

/// No group: the cell is booked on the catch-all line of its sort.
const NO_GROUP: u32 = u32::MAX;

/// One named group of cells.
#[derive(Clone, Debug)]
struct Group {
    label: String,
    kind: FlowKind,
}

/// The flow budget of a solution of a system you assembled yourself (a [`Banded5View`] of your
/// finite-volume arrays, a [`Banded5`], any [`Stencil5`]): the same [`Budget`] the model gives,
/// with its lines, totals, imbalance and table, from the operator, the solution, the
/// right-hand side and groups of cells you name.
///
/// Row `k` of a conservative finite-volume system is the balance of cell `k`:
/// `Σ a_nb·(φ_nb − φ_k) + b_k − s_k·φ_k = 0`, with `a_nb = −coupling` and `s_k = a_P − Σ a_nb`
/// the part of the center beyond the couplings (zero for pure conduction; an exchange or a
/// linearised source folded into the center otherwise). The budget books
///
/// * for each **fixed cell**, what holds it at its value: conduction into the model through
///   its links to free neighbours, `Σ a_nb·(φ_fixed − φ_free)`, with the free rows'
///   coefficients (the rows of fixed cells are not part of the solved system and are never
///   read, so conduction between two fixed cells held at different values is not booked);
/// * for each **free cell**, its source `b_k − s_k·φ_k` (`s_k` taken as zero when the row sums
///   to zero to rounding, 10⁻¹² relative);
/// * with [`storage`](SystemBudget::storage), each free cell's release from storage over the
///   step, `(C/Δt)·(φ_old − φ)`.
///
/// Each cell's net flow counts as entering or leaving on the line of its group:
/// [`fixed_group`](SystemBudget::fixed_group) and [`source_group`](SystemBudget::source_group)
/// lines in the order you named them, then a line for the fixed cells in no group (kind
/// [`FlowKind::PrescribedValue`]) and one for the free cells in no group (kind
/// [`FlowKind::CellSource`]) if there are any, then storage. The discrete equations conserve
/// exactly, so the imbalance measures the residual the stopping tolerance left (their sum
/// over the free cells) when the couplings are symmetric; a non-symmetric operator (upwinded
/// advection) adds its flux mismatch to it.
///
/// [`Banded5View`]: crate::Banded5View
/// [`Banded5`]: crate::Banded5
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
/// use quintet::model::FlowKind;
///
/// // A 30 x 20 plate, conductance 1 W/K between neighbours; the west column is a cold plate
/// // at 0 °C, the east column an inlet at 5 °C, and four cells hold a 2 W heater each.
/// let grid = Grid::new(30, 20)?;
/// let op = Banded5::from_fn(grid, |i, j| {
///     let mut c = Coeffs5::<f64>::laplacian(grid, i, j);
///     c.center = -(c.west + c.east + c.south + c.north); // no flow through the outer edges
///     c
/// })?;
/// let cold: Vec<usize> = (0..20).map(|j| grid.index(0, j)).collect();
/// let inlet: Vec<usize> = (0..20).map(|j| grid.index(29, j)).collect();
/// let heater = [grid.index(14, 9), grid.index(15, 9), grid.index(14, 10), grid.index(15, 10)];
/// let fixed = FixedCells::new(grid, cold.iter().chain(&inlet).copied())?;
/// let op = op.with_fixed(fixed)?;
/// let mut b = vec![0.0; grid.cells()];
/// heater.iter().for_each(|&k| b[k] = 2.0);
/// let mut t = vec![0.0; grid.cells()];
/// inlet.iter().for_each(|&k| t[k] = 5.0);
/// let mut pcg = Pcg::new(Jacobi::new(&op)?).with_options(SolveOptions::default().tolerance(1e-12));
/// pcg.solve(&op, &b, &mut t)?;
///
/// let budget = SystemBudget::new(&op, &t, &b)?
///     .fixed_group("cold plate", cold)?
///     .fixed_group("inlet", inlet)?
///     .source_group("heater", FlowKind::PointSource, heater)?
///     .budget();
/// assert_eq!(budget.lines[2].inflow, 8.0);
/// assert!(budget.lines[0].outflow > 0.0 && budget.lines[0].inflow == 0.0); // the cold plate takes heat
/// assert!(budget.imbalance_percent().abs() < 1e-6);
/// println!("{}", budget.table("W"));
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct SystemBudget<'a, T, S: ?Sized> {
    op: &'a S,
    x: &'a [T],
    rhs: &'a [T],
    groups: Vec<Group>,
    /// Group index per cell, or [`NO_GROUP`]; empty until the first group is named.
    group_of: Vec<u32>,
    storage: Option<(CapacityTerm<'a, T>, &'a [T])>,
}

impl<'a, T: Scalar, S: Stencil5<T> + ?Sized> SystemBudget<'a, T, S> {
    /// The budget of solution `x` of `op·x = rhs`, where `rhs` holds the sources `b` (the
    /// right-hand side of the steady system; for a time step, `b` without the storage term:
    /// see [`storage`](SystemBudget::storage)). Entries of `rhs` at fixed cells are not read.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) unless `x` and `rhs`
    /// have one entry per cell, [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite) naming
    /// the first cell whose solution (or, at a free cell, right-hand side) is not finite.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 1)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let err = SystemBudget::new(&op, &[0.0; 3], &[1.0, f64::NAN, 0.0]).unwrap_err();
    /// assert_eq!(err.kind(), ErrorKind::NonFinite);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(op: &'a S, x: &'a [T], rhs: &'a [T]) -> Result<SystemBudget<'a, T, S>, Error> {
        let n = op.grid().cells();
        check_len("x", n, x.len())?;
        check_len("rhs", n, rhs.len())?;
        if let Some(k) = x.iter().position(|v| !v.is_finite()) {
            return Err(Error::non_finite("solution", locate(op, k)));
        }
        let fixed = op.fixed();
        if let Some(k) =
            (0..n).find(|&k| !rhs[k].is_finite() && !fixed.is_some_and(|f| f.contains(k)))
        {
            return Err(Error::non_finite("right-hand side", locate(op, k)));
        }
        Ok(SystemBudget {
            op,
            x,
            rhs,
            groups: Vec::new(),
            group_of: Vec::new(),
            storage: None,
        })
    }

    /// Name a group of fixed cells (a cold plate, an inlet, a river): its line is the flow
    /// that holds them at their values, kind [`FlowKind::PrescribedValue`]. Cells may repeat
    /// within the group.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::CellOutOfRange`](crate::ErrorKind::CellOutOfRange),
    /// [`ErrorKind::BudgetGroup`](crate::ErrorKind::BudgetGroup) for a cell that is not a
    /// fixed cell of the operator or that another group already holds.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 1)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?
    ///     .with_fixed(FixedCells::new(grid, [0])?)?;
    /// let (t, b) = ([1.0, 0.5, 0.2], [0.0; 3]);
    /// let budget = SystemBudget::new(&op, &t, &b)?.fixed_group("wall", [0])?.budget();
    /// assert_eq!(budget.lines[0].label, "wall");
    /// let err = SystemBudget::new(&op, &t, &b)?.fixed_group("wall", [1]).unwrap_err();
    /// assert_eq!(err.kind(), ErrorKind::BudgetGroup);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn fixed_group(
        self,
        label: impl Into<String>,
        cells: impl IntoIterator<Item = usize>,
    ) -> Result<SystemBudget<'a, T, S>, Error> {
        self.group(label.into(), FlowKind::PrescribedValue, true, cells)
    }

    /// Name a group of free cells (heaters, a convective edge whose exchange you folded into
    /// `a_P` and `b`, a well): its line is the sum of their sources `b_k − s_k·φ_k`, with the
    /// `kind` you give it. Cells may repeat within the group.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::CellOutOfRange`](crate::ErrorKind::CellOutOfRange),
    /// [`ErrorKind::BudgetGroup`](crate::ErrorKind::BudgetGroup) for a fixed cell or a cell
    /// that another group already holds.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// use quintet::model::FlowKind;
    /// let grid = Grid::new(3, 1)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?
    ///     .with_fixed(FixedCells::new(grid, [0])?)?;
    /// let (t, b) = ([0.0, 0.5, 0.2], [0.0, 0.0, 0.3]);
    /// let budget = SystemBudget::new(&op, &t, &b)?
    ///     .source_group("heater", FlowKind::PointSource, [2])?
    ///     .budget();
    /// assert_eq!(budget.lines[0].kind, FlowKind::PointSource);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn source_group(
        self,
        label: impl Into<String>,
        kind: FlowKind,
        cells: impl IntoIterator<Item = usize>,
    ) -> Result<SystemBudget<'a, T, S>, Error> {
        self.group(label.into(), kind, false, cells)
    }

    /// Make this the budget of one backward-Euler step: `op` is the step operator (its
    /// center includes `C/Δt`, as [`CapacityTerm::add_to_center`] writes it), `rhs` the
    /// sources `b` alone, and `previous` the solution at the start of the step. Adds a
    /// storage line, kind [`FlowKind::Storage`]: release (entering) where a cell cooled,
    /// uptake (leaving) where it warmed, `(C/Δt)·(φ_old − φ)` per free cell.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::GridMismatch`](crate::ErrorKind::GridMismatch) if `capacity` was built for
    /// another grid, [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) and
    /// [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite) for a bad `previous`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// use quintet::model::FlowKind;
    /// // One cell of 10 J/K tied to a fixed cell at 0 °C by 1 W/K, from 10 °C, step 1 s.
    /// let grid = Grid::new(2, 1)?;
    /// let capacity = [0.0, 10.0];
    /// let term = CapacityTerm::new(grid, &capacity, 1.0)?;
    /// let mut center = [0.0; 2];
    /// term.add_to_center(&[1.0, 1.0], &mut center)?;
    /// let (a_w, a_e, zero) = ([0.0, 1.0], [1.0, 0.0], [0.0; 2]);
    /// let wall = FixedCells::new(grid, [0])?;
    /// let op = Banded5View::from_finite_volume(grid, &center, &a_w, &a_e, &zero, &zero)?.with_fixed(&wall)?;
    /// let (b, old) = ([0.0; 2], [0.0, 10.0]);
    /// let mut rhs = [0.0; 2];
    /// term.add_to_rhs(&b, &old, &mut rhs)?;
    /// let mut t = old;
    /// Cg::default().with_options(SolveOptions::default().tolerance(1e-14)).solve(&op, &rhs, &mut t)?;
    /// let budget = SystemBudget::new(&op, &t, &b)?.storage(&term, &old)?.budget();
    /// let storage = budget.lines.last().expect("a storage line");
    /// assert_eq!(storage.kind, FlowKind::Storage);
    /// assert!((storage.inflow - 100.0 / 11.0).abs() < 1e-9); // (C/Δt)·(10 − 100/11)
    /// assert!(budget.imbalance_percent().abs() < 1e-9);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn storage(
        mut self,
        capacity: &CapacityTerm<'a, T>,
        previous: &'a [T],
    ) -> Result<SystemBudget<'a, T, S>, Error> {
        let grid = self.op.grid();
        check_grid("the capacity term", grid, capacity.grid())?;
        check_len("previous", grid.cells(), previous.len())?;
        if let Some(k) = previous.iter().position(|v| !v.is_finite()) {
            return Err(Error::non_finite(
                "previous solution",
                Location::on(grid, k),
            ));
        }
        self.storage = Some((*capacity, previous));
        Ok(self)
    }

    /// The budget: the lines of the named groups in the order named, then the fixed cells
    /// and the free cells in no group (each line only if there are such cells), then storage;
    /// flows in the units of your right-hand side (W, m³/s).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// // A row of five cells, conductance 1 between neighbours, the two ends held at 0.
    /// let grid = Grid::new(5, 1)?;
    /// let op = Banded5::from_fn(grid, |i, j| {
    ///     let c = Coeffs5::<f64>::laplacian(grid, i, j);
    ///     Coeffs5 { center: -(c.west + c.east), south: 0.0, north: 0.0, ..c }
    /// })?
    /// .with_fixed(FixedCells::new(grid, [0, 4])?)?;
    /// let (t, b) = ([0.0, 1.5, 2.0, 1.5, 0.0], [0.0, 1.0, 1.0, 1.0, 0.0]);
    /// let budget = SystemBudget::new(&op, &t, &b)?.budget();
    /// let labels: Vec<&str> = budget.lines.iter().map(|l| l.label.as_str()).collect();
    /// assert_eq!(labels, ["fixed cells", "sources"]);
    /// assert_eq!((budget.total_in, budget.total_out), (3.0, 3.0));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn budget(&self) -> Budget {
        let op = self.op;
        let grid = op.grid();
        let fixed = op.fixed().filter(|f| !f.is_empty());
        let is_fixed = |k: usize| fixed.is_some_and(|f| f.contains(k));
        let named = self.groups.len();
        // Lines: the named groups, then "fixed cells in no group", then "free cells in no
        // group"; each flow is booked on the line of its cell.
        let (loose_fixed, loose_free) = (named, named + 1);
        let mut flows = vec![(0.0, 0.0); named + 2];
        let mut used = [false, false];
        let mut line_of = |k: usize, fixed: bool| -> usize {
            match self.group_of.get(k) {
                Some(&g) if g != NO_GROUP => g as usize,
                _ => {
                    used[usize::from(!fixed)] = true;
                    if fixed {
                        loose_fixed
                    } else {
                        loose_free
                    }
                }
            }
        };
        let book = |flows: &mut [(f64, f64)], line: usize, flow: f64| {
            if flow >= 0.0 {
                flows[line].0 += flow;
            } else {
                flows[line].1 -= flow;
            }
        };
        let x = |k: usize| to_f64(self.x[k]);
        if let Some(fixed) = fixed {
            for &f in fixed.cells() {
                let mut flow = 0.0;
                for side in crate::Side::ALL {
                    let Some(free) = grid.neighbour(f, side).filter(|&k| !is_fixed(k)) else {
                        continue;
                    };
                    let (i, j) = grid.coords(free);
                    // The free row's coupling towards the fixed cell is −a_nb.
                    let a_nb = -to_f64(op.coeffs(i, j).towards(side.opposite()));
                    flow += a_nb * (x(f) - x(free));
                }
                let line = line_of(f, true);
                book(&mut flows, line, flow);
            }
        }
        let mut storage = (0.0, 0.0);
        for k in (0..grid.cells()).filter(|&k| !is_fixed(k)) {
            let (i, j) = grid.coords(k);
            let mut c = op.coeffs(i, j);
            if let Some((term, previous)) = &self.storage {
                let rate = term.rate(k);
                c.center = c.center - rate;
                let release = to_f64(rate) * (to_f64(previous[k]) - x(k));
                if release >= 0.0 {
                    storage.0 += release;
                } else {
                    storage.1 -= release;
                }
            }
            let flow = to_f64(self.rhs[k]) - surplus(c) * x(k);
            let line = line_of(k, false);
            book(&mut flows, line, flow);
        }
        let mut lines: Vec<BudgetLine> = self
            .groups
            .iter()
            .zip(&flows)
            .map(|(g, &(inflow, outflow))| BudgetLine {
                label: g.label.clone(),
                kind: g.kind,
                inflow,
                outflow,
            })
            .collect();
        let some_named = |fixed: bool| {
            self.group_of
                .iter()
                .enumerate()
                .any(|(k, &g)| g != NO_GROUP && is_fixed(k) == fixed)
        };
        for (is_used, line, fixed, kind) in [
            (used[0], loose_fixed, true, FlowKind::PrescribedValue),
            (used[1], loose_free, false, FlowKind::CellSource),
        ] {
            if !is_used {
                continue;
            }
            let label = match (fixed, some_named(fixed)) {
                (true, false) => "fixed cells",
                (true, true) => "other fixed cells",
                (false, false) => "sources",
                (false, true) => "other sources",
            };
            lines.push(BudgetLine {
                label: label.to_string(),
                kind,
                inflow: flows[line].0,
                outflow: flows[line].1,
            });
        }
        if self.storage.is_some() {
            lines.push(BudgetLine {
                label: "storage".to_string(),
                kind: FlowKind::Storage,
                inflow: storage.0,
                outflow: storage.1,
            });
        }
        Budget::from_lines(lines)
    }

    fn group(
        mut self,
        label: String,
        kind: FlowKind,
        fixed: bool,
        cells: impl IntoIterator<Item = usize>,
    ) -> Result<SystemBudget<'a, T, S>, Error> {
        let n = self.op.grid().cells();
        let id = u32::try_from(self.groups.len())
            .ok()
            .filter(|&g| g != NO_GROUP)
            .ok_or_else(|| {
                Error::setting(
                    "budget groups",
                    self.groups.len() as f64,
                    "fewer than 2³² − 1",
                )
            })?;
        if self.group_of.is_empty() {
            self.group_of = memory::filled("the budget's group of each cell", n, NO_GROUP)?;
        }
        let op_fixed = self.op.fixed();
        for k in cells {
            if k >= n {
                return Err(Error::cell_out_of_range(k, n));
            }
            let at = locate(self.op, k);
            let is_fixed = op_fixed.is_some_and(|f| f.contains(k));
            if is_fixed != fixed {
                let reason = if fixed {
                    "which is not a fixed cell of the operator".to_string()
                } else {
                    "which is a fixed cell (a source group takes free cells)".to_string()
                };
                return Err(Error::budget_group(&label, at, reason));
            }
            match self.group_of[k] {
                NO_GROUP => self.group_of[k] = id,
                g if g == id => {}
                g => {
                    let other = &self.groups[g as usize].label;
                    return Err(Error::budget_group(
                        &label,
                        at,
                        format!("which group \"{other}\" already holds"),
                    ));
                }
            }
        }
        self.groups.push(Group { label, kind });
        Ok(self)
    }
}

/// `s = center + Σ couplings` (= `a_P − Σ a_nb`) of a row, or zero if the row sums to zero
/// to rounding.
fn surplus<T: Scalar>(c: Coeffs5<T>) -> f64 {
    if row_sums_to_zero(c) {
        0.0
    } else {
        to_f64(c.center) + to_f64(c.west) + to_f64(c.east) + to_f64(c.south) + to_f64(c.north)
    }
}

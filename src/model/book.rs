//! The bookkeeping behind the right-hand side and the budget: every condition, resolved into
//! per-cell slots `(cell, weight, level)`, and [`Forcing`], the caller's handle on the levels.
//!
//! A slot contributes to the model in one of three ways:
//!
//! * a **source** slot adds `weight·level` to the right-hand side (flux × face area, rate ×
//!   area or volume, a point rate);
//! * a **conductance** slot adds `weight` to the center and `weight·level` to the right-hand
//!   side, so its flow into the model is `weight·(level − φ_cell)`;
//! * a **fixed** slot holds its cell at `level`; its flow into the model is what keeps the
//!   cell there: the flow through its faces to its neighbours, `Σ a·(φ_fixed − φ_nb) + F·φ_fixed`
//!   over its links (conduction `a = C` and `F = 0` without a flow field), less the flows the
//!   other slots bring into the same cell (plus storage uptake in a time step);
//! * a **carried** slot (an inflow value) adds `weight` (the inflow in W/K) to the center and
//!   `weight·level` to the right-hand side; its flow into the model is `weight·level`, the heat
//!   the entering fluid brings;
//! * a **flow-field** slot books `weight·φ_cell`: what the flow field carries out of the cell
//!   with the cell's own value (through edges, or fluid leaving inside the cell; negative
//!   weights are fluid appearing in the cell), less the inflow the carried slots already
//!   counted in the center. It adds nothing to the right-hand side.

use std::ops::Range;

use super::budget::{Budget, BudgetLine, FlowKind};
use super::spec::ConditionId;
use crate::error::Location;
use crate::space::{total, Space};
use crate::{Error, Grid, Side};

/// How a term's slots act.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Action {
    Source,
    Conductance,
    Fixed,
    Carried,
    FlowField,
}

/// One condition after resolution.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct Term {
    pub(crate) label: String,
    pub(crate) kind: FlowKind,
    pub(crate) action: Action,
    pub(crate) slots: Range<usize>,
    /// The grid edge whose outer faces the term's slots act through, for edge conditions.
    pub(crate) edge: Option<Side>,
}

/// A fixed slot's coupling to one active neighbour.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct Link {
    pub(crate) free: usize,
    /// The fixed cell's neighbour coefficient towards `free` (the conductance without a flow
    /// field).
    pub(crate) conductance: f64,
    /// The flow field's flow out of the fixed cell through this face (W/K).
    pub(crate) carried: f64,
}

/// All terms, with their slots in flat arrays.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct Book {
    pub(crate) model: u64,
    pub(crate) grid: Grid,
    pub(crate) terms: Vec<Term>,
    pub(crate) cells: Vec<usize>,
    pub(crate) weights: Vec<f64>,
    pub(crate) levels: Vec<f64>,
    /// For every slot, the range of its links in `links` (empty unless fixed).
    pub(crate) link_ranges: Vec<Range<usize>>,
    pub(crate) links: Vec<Link>,
    /// While an assembly refreshes the weights in place: the next slot and link to overwrite.
    refill: Option<(usize, usize)>,
}

impl Book {
    pub(crate) fn new(model: u64, grid: Grid) -> Book {
        Book {
            model,
            grid,
            terms: Vec::new(),
            cells: Vec::new(),
            weights: Vec::new(),
            levels: Vec::new(),
            link_ranges: Vec::new(),
            links: Vec::new(),
            refill: None,
        }
    }

    /// Start refreshing the weights in place: the assembly that follows opens the same terms
    /// and pushes the same slots and links in the same order, and only their weights and
    /// conductances are overwritten (levels, and so forcing, are kept).
    pub(crate) fn rewind(&mut self) {
        self.refill = Some((0, 0));
    }

    /// End a refresh started by [`Book::rewind`].
    pub(crate) fn end_refill(&mut self) {
        self.refill = None;
    }

    /// Open a new term; slots pushed until the next call belong to it.
    pub(crate) fn open(&mut self, label: &str, kind: FlowKind, action: Action) {
        if self.refill.is_some() {
            return;
        }
        let at = self.cells.len();
        self.terms.push(Term {
            label: label.to_string(),
            kind,
            action,
            slots: at..at,
            edge: None,
        });
    }

    /// Mark the open term as acting through the outer faces of the edge `side`.
    pub(crate) fn mark_edge(&mut self, side: Side) {
        if self.refill.is_some() {
            return;
        }
        if let Some(term) = self.terms.last_mut() {
            term.edge = Some(side);
        }
    }

    /// Add a slot to the open term (or, refreshing, overwrite the next slot's weight).
    pub(crate) fn push(&mut self, cell: usize, weight: f64, level: f64) {
        if let Some((slot, link)) = &mut self.refill {
            debug_assert_eq!(self.cells.get(*slot), Some(&cell));
            if let Some(w) = self.weights.get_mut(*slot) {
                *w = weight;
            }
            *link = self.link_ranges.get(*slot).map_or(*link, |r| r.start);
            *slot += 1;
            return;
        }
        self.cells.push(cell);
        self.weights.push(weight);
        self.levels.push(level);
        let at = self.links.len();
        self.link_ranges.push(at..at);
        if let Some(term) = self.terms.last_mut() {
            term.slots.end = self.cells.len();
        }
    }

    /// Add a link to the last slot (or, refreshing, overwrite the next link's conductance).
    pub(crate) fn link(&mut self, free: usize, conductance: f64, carried: f64) {
        if let Some((_, link)) = &mut self.refill {
            if let Some(l) = self.links.get_mut(*link) {
                debug_assert_eq!(l.free, free);
                l.conductance = conductance;
                l.carried = carried;
            }
            *link += 1;
            return;
        }
        self.links.push(Link {
            free,
            conductance,
            carried,
        });
        if let Some(range) = self.link_ranges.last_mut() {
            range.end = self.links.len();
        }
    }

    /// `rhs = Σ weight·level` over source, conductance and carried slots (zero elsewhere).
    pub(crate) fn fill_rhs(&self, rhs: &mut [f64]) {
        rhs.fill(0.0);
        let adds = |a: Action| !matches!(a, Action::Fixed | Action::FlowField);
        for term in self.terms.iter().filter(|t| adds(t.action)) {
            for s in term.slots.clone() {
                rhs[self.cells[s]] += self.weights[s] * self.levels[s];
            }
        }
    }

    /// Write the levels of fixed slots into `x`.
    pub(crate) fn write_fixed(&self, x: &mut [f64]) {
        for term in self.terms.iter().filter(|t| t.action == Action::Fixed) {
            for s in term.slots.clone() {
                x[self.cells[s]] = self.levels[s];
            }
        }
    }

    /// Flow into the model through source or conductance slot `s`.
    fn slot_flow(&self, action: Action, s: usize, x: &[f64], levels: &[f64]) -> f64 {
        match action {
            Action::Source => self.weights[s] * levels[s],
            Action::Conductance => self.weights[s] * (levels[s] - x[self.cells[s]]),
            Action::Carried => self.weights[s] * levels[s],
            Action::FlowField => self.weights[s] * x[self.cells[s]],
            Action::Fixed => 0.0,
        }
    }

    /// Flow out of fixed slot `s` through its faces to its neighbours: conduction, and the
    /// flow field's part where it has one.
    fn conduction_out(&self, s: usize, x: &[f64]) -> f64 {
        let here = x[self.cells[s]];
        self.links[self.link_ranges[s].clone()]
            .iter()
            .map(|l| {
                let conducted = l.conductance * (here - x[l.free]);
                if l.carried == 0.0 {
                    conducted
                } else {
                    conducted + l.carried * here
                }
            })
            .sum() // local: one cell's links
    }

    /// The budget lines of all terms. Each slot's flow is weighted `theta` at the new state
    /// and `1 − theta` at the previous one (if any), then counted as inflow or outflow.
    ///
    /// A fixed cell belongs to the model like any other; the flow through its prescribed value
    /// is what holds it there: conduction out of it, minus what the other conditions bring
    /// into it, plus what it takes into storage (`storage_uptake`, per cell, if given).
    pub(crate) fn lines(
        &self,
        space: &dyn Space,
        new: (&[f64], &[f64]),
        previous: Option<(&[f64], &[f64], f64)>,
        storage_uptake: Option<&dyn Fn(usize) -> f64>,
    ) -> Vec<BudgetLine> {
        let mut lines = self.empty_lines();
        self.slot_flows(new, previous, storage_uptake, &mut |t, flow| {
            let line = &mut lines[t];
            if flow >= 0.0 {
                line.inflow += flow;
            } else {
                line.outflow -= flow;
            }
        });
        // This process's cells are summed; the space totals them over all processes.
        let mut sums: Vec<f64> = lines.iter().flat_map(|l| [l.inflow, l.outflow]).collect();
        total(space, &mut sums);
        for (line, pair) in lines.iter_mut().zip(sums.chunks_exact(2)) {
            line.inflow = pair[0];
            line.outflow = pair[1];
        }
        lines
    }

    /// One line per term, with no flow yet.
    pub(crate) fn empty_lines(&self) -> Vec<BudgetLine> {
        self.terms
            .iter()
            .map(|term| BudgetLine {
                label: term.label.clone(),
                kind: term.kind,
                inflow: 0.0,
                outflow: 0.0,
            })
            .collect()
    }

    /// The flow into the model through every slot, as `book_flow(term, flow)`: the terms that
    /// are not fixed first, then the fixed ones, each in slot order (see [`Book::lines`]).
    /// The values are read from `new.0` (and `previous`) at the slots' cells and links, so
    /// the vectors may be any numbering the book's cells use.
    pub(crate) fn slot_flows(
        &self,
        new: (&[f64], &[f64]),
        previous: Option<(&[f64], &[f64], f64)>,
        storage_uptake: Option<&dyn Fn(usize) -> f64>,
        book_flow: &mut dyn FnMut(usize, f64),
    ) {
        let weighted = |f: &dyn Fn(&[f64], &[f64]) -> f64| -> f64 {
            let now = f(new.0, new.1);
            match previous {
                None => now,
                Some((x, levels, theta)) => theta * now + (1.0 - theta) * f(x, levels),
            }
        };
        let mut into_fixed = vec![0.0; new.0.len()];
        for (t, term) in self.terms.iter().enumerate() {
            if term.action == Action::Fixed {
                continue;
            }
            for s in term.slots.clone() {
                let flow = weighted(&|x, levels| self.slot_flow(term.action, s, x, levels));
                into_fixed[self.cells[s]] += flow;
                book_flow(t, flow);
            }
        }
        for (t, term) in self.terms.iter().enumerate() {
            if term.action != Action::Fixed {
                continue;
            }
            for s in term.slots.clone() {
                let k = self.cells[s];
                let uptake = storage_uptake.map_or(0.0, |f| f(k));
                let flow = weighted(&|x, _| self.conduction_out(s, x)) - into_fixed[k] + uptake;
                book_flow(t, flow);
            }
        }
    }

    /// The flow into the model through the outer face of each edge cell that an edge condition
    /// acts on, `(cell, side, flow)`, for solution `x` (m³/s for groundwater): the slot's flow
    /// for edge fluxes, exchanges and prescribed values through half a cell, and for edge nodes
    /// held at a prescribed value the flow through that value.
    pub(crate) fn edge_inflows(&self, x: &[f64]) -> Vec<(usize, Side, f64)> {
        let mut into_fixed = vec![0.0; self.grid.cells()];
        let mut out = Vec::new();
        for term in self.terms.iter().filter(|t| t.action != Action::Fixed) {
            for s in term.slots.clone() {
                let flow = self.slot_flow(term.action, s, x, &self.levels);
                into_fixed[self.cells[s]] += flow;
                if let Some(side) = term.edge {
                    out.push((self.cells[s], side, flow));
                }
            }
        }
        for term in self.terms.iter().filter(|t| t.action == Action::Fixed) {
            let Some(side) = term.edge else { continue };
            for s in term.slots.clone() {
                let k = self.cells[s];
                out.push((k, side, self.conduction_out(s, x) - into_fixed[k]));
            }
        }
        out
    }

    /// The budget of a steady solution.
    pub(crate) fn steady_budget(&self, space: &dyn Space, x: &[f64]) -> Budget {
        Budget::from_lines(self.lines(space, (x, &self.levels), None, None))
    }
}

/// Write access to the levels of a model's conditions: the values a [`Stepper`](super::Stepper)
/// or a [`SteadySystem`](super::SteadySystem) uses for its next solve. The level of a condition
/// is what it was given as its value:
///
/// | condition | level |
/// |---|---|
/// | prescribed value (cells or edge) | the value (K, °C or m of head) |
/// | edge flux | the flux per unit face area (W/m² or m/s) |
/// | edge or cell exchange | the outside value (the coefficient is part of the operator and stays) |
/// | point source | the rate (W or m³/s) |
/// | areal / volumetric source | the rate per unit area / volume |
/// | inflow value | the value the flow field carries in (the face flows are part of the operator and stay) |
///
/// # Example
///
/// ```
/// use quintet::model::{Conductivity, Geometry, Model};
/// use quintet::Side;
///
/// let mut model = Model::new(Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
/// let wall = model.prescribe_edge("wall", Side::West, 10.0)?;
/// let heater = model.point_source("heater", 5, 2.0)?;
/// let mut system = model.assemble()?;
/// system.force(|f| {
///     f.set(heater, 4.0)?;
///     f.set_each(wall, |k| 10.0 + k as f64)
/// })?;
/// assert_eq!(system.rhs()[5], 4.0);
/// # Ok::<(), quintet::Error>(())
/// ```
pub struct Forcing<'a> {
    pub(crate) book: &'a mut Book,
}

impl Forcing<'_> {
    /// Set every level of condition `id` to `level`.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::UnknownCondition`](crate::ErrorKind::UnknownCondition) for a handle from another model, [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite) for a
    /// level that is not finite.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_cells("anchor", [0], 0.0)?;
    /// let q = model.volumetric_source("generation", 1.0)?;
    /// let mut system = model.assemble()?;
    /// system.force(|f| f.set(q, 3.0))?;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set(&mut self, id: ConditionId, level: f64) -> Result<(), Error> {
        self.set_each(id, |_| level)
    }

    /// Set each level of condition `id` to `level(cell)`, cell by cell (cells the condition
    /// skipped, inactive or prescribed by a later condition, are not visited). `level` is
    /// called twice per cell, once to check every value and once to store it, so it should
    /// depend on the cell only.
    ///
    /// # Errors
    ///
    /// As for [`Forcing::set`]; on error, no level is changed.
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// let tide = model.prescribe_edge("sea", Side::East, 0.0)?;
    /// let mut system = model.assemble()?;
    /// system.force(|f| f.set_each(tide, |k| 0.1 * (k / 4) as f64))?;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn set_each(&mut self, id: ConditionId, level: impl Fn(usize) -> f64) -> Result<(), Error> {
        let range = self.slots(id)?;
        let book = &mut *self.book;
        for s in range.clone() {
            let v = level(book.cells[s]);
            if !v.is_finite() {
                return Err(Error::non_finite(
                    "forcing level",
                    Location::on(book.grid, book.cells[s]),
                ));
            }
        }
        for s in range {
            book.levels[s] = level(book.cells[s]);
        }
        Ok(())
    }

    /// The cells condition `id` acts on, in slot order.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::UnknownCondition`](crate::ErrorKind::UnknownCondition).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_cells("anchor", [0], 0.0)?;
    /// let well = model.point_source("well", 6, -1.0)?;
    /// let mut system = model.assemble()?;
    /// system.force(|f| {
    ///     assert_eq!(f.cells(well)?, &[6]);
    ///     Ok(())
    /// })?;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn cells(&self, id: ConditionId) -> Result<&[usize], Error> {
        let range = self.slots(id)?;
        Ok(&self.book.cells[range])
    }

    /// The current levels of condition `id`, in slot order.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::UnknownCondition`](crate::ErrorKind::UnknownCondition).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(4, 4, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_cells("anchor", [0], 0.0)?;
    /// let well = model.point_source("well", 6, -1.0)?;
    /// let mut system = model.assemble()?;
    /// system.force(|f| {
    ///     assert_eq!(f.levels(well)?, &[-1.0]);
    ///     Ok(())
    /// })?;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn levels(&self, id: ConditionId) -> Result<&[f64], Error> {
        let range = self.slots(id)?;
        Ok(&self.book.levels[range])
    }

    fn slots(&self, id: ConditionId) -> Result<Range<usize>, Error> {
        let unknown = || Error::unknown_condition(id.index, self.book.terms.len());
        if id.model != self.book.model {
            return Err(unknown());
        }
        self.book
            .terms
            .get(id.index)
            .map(|t| t.slots.clone())
            .ok_or_else(unknown)
    }
}

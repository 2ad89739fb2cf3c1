//! Assembly: face conductances by half-cells in series (the harmonic mean), the operator's
//! five bands, the fixed cells, and every condition resolved into budget slots.
//!
//! The conductance between neighbouring nodes `P` and `N` is `1/(R_P + R_N)`, with each
//! half-cell resistance `R = d / (k·b·L)`: `d` the distance from the node to the shared face,
//! `k` the cell's conductivity across that face, `b` its thickness (1 for depth-integrated
//! values) and `L` the face length. On a uniform grid this is the harmonic mean of the two
//! conductivities over the node spacing (Patankar 1980, *Numerical Heat Transfer and Fluid
//! Flow*, §4.2).

use std::ops::Range;

use super::axis::AxisLayout;
use super::book::{Action, Book};
use super::budget::FlowKind;
use super::geometry::Geometry;
use super::medium::ConductivityBasis;
use super::spec::{Model, Spec, Target};
use crate::error::Location;
use crate::space::{first_flagged, Space};
use crate::{memory, Error, Grid, Side};

/// The cells whose rows an assembly builds: the whole grid, or one process's block of a
/// distributed system. Bands and capacity are numbered `i + nx_rows·j` from the block's
/// south-west corner (the global numbering for the whole grid); the book's slots keep global
/// cell numbers.
#[derive(Clone, Debug)]
pub(crate) struct Rows {
    nx: usize,
    i: Range<usize>,
    j: Range<usize>,
}

impl Rows {
    /// Every cell of `grid`.
    pub(crate) fn whole(grid: Grid) -> Rows {
        Rows::block(grid, 0..grid.nx(), 0..grid.ny())
    }

    /// The cells `i × j` of `grid`.
    pub(crate) fn block(grid: Grid, i: Range<usize>, j: Range<usize>) -> Rows {
        Rows {
            nx: grid.nx(),
            i,
            j,
        }
    }

    /// The number of rows.
    pub(crate) fn len(&self) -> usize {
        self.i.len() * self.j.len()
    }

    /// The row number of global cell `k`, if the block holds it.
    pub(crate) fn local(&self, k: usize) -> Option<usize> {
        let (i, j) = (k % self.nx, k / self.nx);
        (self.i.contains(&i) && self.j.contains(&j))
            .then(|| (i - self.i.start) + self.i.len() * (j - self.j.start))
    }

    /// The global cells of the block, in row order.
    pub(crate) fn cells(&self) -> impl Iterator<Item = usize> + '_ {
        self.j
            .clone()
            .flat_map(move |j| self.i.clone().map(move |i| i + self.nx * j))
    }
}

/// A connected group of free cells with nothing that sets its level.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct Region {
    /// Cells in increasing order.
    pub(crate) cells: Vec<usize>,
}

/// Everything a steady system or a stepper is built from.
#[derive(Clone, Debug)]
pub(crate) struct Assembly {
    pub(crate) grid: Grid,
    /// Center, west, east, south, north of the conduction operator (no storage).
    pub(crate) bands: [Vec<f64>; 5],
    /// Prescribed and inactive cells.
    pub(crate) fixed: Vec<usize>,
    pub(crate) book: Book,
    pub(crate) inactive: Vec<usize>,
    pub(crate) inactive_value: f64,
    /// Storage capacity per cell (J/K or m²; zero at inactive cells), for transient runs.
    pub(crate) capacity: Vec<f64>,
    pub(crate) floating: Vec<Region>,
    pub(crate) volumes: Vec<f64>,
    /// Whether the operator is symmetric (no flow crosses a face between active cells).
    pub(crate) symmetric: bool,
}

/// What an assembly found besides the coefficients: the fixed cells and the floating regions.
#[derive(Clone, Debug)]
pub(crate) struct Found {
    /// Prescribed and inactive cells, in increasing order.
    pub(crate) fixed: Vec<usize>,
    pub(crate) floating: Vec<Region>,
    /// Whether the operator is symmetric (no flow crosses a face between active cells).
    pub(crate) symmetric: bool,
}

/// Assemble `model`; with `transient`, storage is required and anchors regions.
pub(crate) fn assemble(model: &Model, transient: bool) -> Result<Assembly, Error> {
    let grid = model.geometry.grid();
    let n = grid.cells();
    let mut bands: [Vec<f64>; 5] = Default::default();
    let mut book = Book::new(model.tag, grid);
    let mut capacity = Vec::new();
    let rows = Rows::whole(grid);
    let space = &*model.space;
    let found = fill(
        model,
        transient,
        (&rows, space),
        bands.each_mut(),
        &mut book,
        &mut capacity,
    )?;
    Ok(Assembly {
        grid,
        bands,
        fixed: found.fixed,
        book,
        inactive: (0..n).filter(|&k| !model.active[k]).collect(),
        inactive_value: model.inactive_value,
        capacity,
        floating: found.floating,
        volumes: (0..n).map(|k| model.geometry.volume(k)).collect(),
        symmetric: found.symmetric,
    })
}

/// Assemble `model` again into the storage of an earlier assembly of the same model record
/// (same cells, conditions and inactive cells; conductivity, exchange coefficients or storage
/// changed): the bands and capacity are overwritten and the book's weights refreshed, its
/// slots, levels and handles kept.
pub(crate) fn reassemble(
    model: &Model,
    transient: bool,
    bands: [&mut Vec<f64>; 5],
    book: &mut Book,
    capacity: &mut Vec<f64>,
) -> Result<Found, Error> {
    book.rewind();
    let rows = Rows::whole(model.geometry.grid());
    let space = &*model.space;
    let found = fill(model, transient, (&rows, space), bands, book, capacity);
    book.end_refill();
    found
}

/// The steady assembly of the rows of one block of `model`'s grid (a process's part of a
/// distributed system): its bands, and a book holding the slots of its cells only. Checks of
/// the whole model run in `space` (on every process alike); the floating regions are those of
/// the whole grid.
pub(crate) fn assemble_rows(
    model: &Model,
    rows: &Rows,
    space: &dyn Space,
) -> Result<([Vec<f64>; 5], Book, Found), Error> {
    let mut bands: [Vec<f64>; 5] = Default::default();
    let mut book = Book::new(model.tag, model.geometry.grid());
    let mut capacity = Vec::new();
    let found = fill(
        model,
        false,
        (rows, space),
        bands.each_mut(),
        &mut book,
        &mut capacity,
    )?;
    Ok((bands, book, found))
}

/// The assembly proper: bands, capacity and book (created, or refreshed when the book is
/// rewound) of the cells in `rows`; checks of the whole model run in `space`.
fn fill(
    model: &Model,
    transient: bool,
    (rows, space): (&Rows, &dyn Space),
    bands: [&mut Vec<f64>; 5],
    book: &mut Book,
    capacity: &mut Vec<f64>,
) -> Result<Found, Error> {
    let g = &model.geometry;
    let grid = g.grid();
    let n = grid.cells();
    check_medium(model, space, transient)?;

    // Prescribed values held at nodes: the last condition to reach a cell owns it.
    let mut owner: Vec<Option<(usize, usize)>> = memory::filled("the assembly", n, None)?;
    for (c, cond) in model.conditions.iter().enumerate() {
        if !matches!(cond.spec, Spec::Value(_)) {
            continue;
        }
        match &cond.target {
            Target::Cells(cells) => {
                for (t, &k) in cells.iter().enumerate() {
                    if !model.active[k] {
                        return Err(inactive(
                            grid,
                            format!("prescribed value {:?}", cond.label),
                            k,
                        ));
                    }
                    owner[k] = Some((c, t));
                }
            }
            Target::Edge(side) if g.layout_across(*side) == AxisLayout::NodeCentered => {
                for (t, k) in g.edge(*side).into_iter().enumerate() {
                    if model.active[k] {
                        owner[k] = Some((c, t));
                    }
                }
            }
            _ => {}
        }
    }
    let fixed_mask: Vec<bool> = (0..n)
        .map(|k| owner[k].is_some() || !model.active[k])
        .collect();

    // The face conductance between `k` and its neighbour on `side` (computed where it is
    // needed, so that a block's rows need no array of the whole grid; the two half-cell
    // resistances add to the same bits from either side).
    let face = |k: usize, side: Side| -> f64 {
        match grid.neighbour(k, side) {
            Some(nb) if model.active[k] && model.active[nb] => {
                let r = resistance(model, k, side) + resistance(model, nb, side.opposite());
                if r > 0.0 {
                    1.0 / r
                } else {
                    0.0
                }
            }
            _ => 0.0,
        }
    };

    // The flow field's flow out of `k` through `side` (W/K): through faces between two active
    // cells and through the grid edge; none at or next to inactive cells.
    let advection = model.advection.as_ref();
    let carried = |k: usize, side: Side| -> f64 {
        match advection {
            Some(a) if model.active[k] => match grid.neighbour(k, side) {
                Some(nb) if !model.active[nb] => 0.0,
                _ => a.flows.out_through(k, side),
            },
            _ => 0.0,
        }
    };
    // The neighbour coefficient of `k` towards `side`: `D·A(|P|) + max(−F, 0)`, exactly the
    // conductance `D` where no flow crosses the face.
    let coefficient = |k: usize, side: Side| -> f64 {
        let d = face(k, side);
        match (advection, grid.neighbour(k, side)) {
            (Some(a), Some(_)) => a.scheme.coefficient(d, carried(k, side)),
            _ => d,
        }
    };

    // Center, then west, east, south, north; inactive cells are identity rows.
    let mut bands = bands;
    for (b, band) in bands.iter_mut().enumerate() {
        band.clear();
        band.extend(rows.cells().map(|k| match (model.active[k], b) {
            (false, 0) => 1.0,
            (false, _) => 0.0,
            (true, 0) => Side::ALL.into_iter().map(|side| coefficient(k, side)).sum(), // local: one cell's four faces
            (true, b) => -coefficient(k, Side::ALL[b - 1]),
        }));
    }
    // Symmetric unless some flow crosses a face between two active cells (found through the
    // model's space, so every process agrees).
    let symmetric = advection.is_none()
        || first_flagged(space, n, |k| {
            [Side::East, Side::North]
                .into_iter()
                .any(|side| grid.neighbour(k, side).is_some() && carried(k, side) != 0.0)
        })
        .is_none();

    // The edge each inflow value belongs to: the last one given on that edge.
    let mut inflow_owner: [Option<usize>; 4] = [None; 4];
    for (c, cond) in model.conditions.iter().enumerate() {
        if let (Spec::Inflow(_), Target::Edge(side)) = (&cond.spec, &cond.target) {
            inflow_owner[side_slot(*side)] = Some(c);
        }
    }
    // Inflow through the edges already in the center through a carried slot, per cell.
    let mut covered_in = memory::filled("the assembly", n, 0.0)?;

    // Conditions into slots.
    let mut anchored = vec![false; n];
    for (c, cond) in model.conditions.iter().enumerate() {
        let label = cond.label.as_str();
        let by_name = |what: &str, k: usize| -> Result<(), Error> {
            let what = format!("{what} {label:?}");
            if !model.active[k] {
                Err(inactive(grid, what, k))
            } else if fixed_mask[k] {
                Err(Error::prescribed_conflict(what, Location::on(grid, k)))
            } else {
                Ok(())
            }
        };
        match (&cond.spec, &cond.target) {
            (Spec::Value(values), Target::Edge(side))
                if g.layout_across(*side) == AxisLayout::CellCentered =>
            {
                book.open(label, FlowKind::PrescribedValue, Action::Conductance);
                for (t, k) in g.edge(*side).into_iter().enumerate() {
                    if model.active[k] {
                        let w = 1.0 / resistance(model, k, *side);
                        anchored[k] |= w > 0.0;
                        if let Some(l) = rows.local(k) {
                            book.push(k, w, values.at(t));
                            bands[0][l] += w;
                        }
                    }
                }
            }
            (Spec::Value(values), target) => {
                book.open(label, FlowKind::PrescribedValue, Action::Fixed);
                let cells = match target {
                    Target::Cells(cells) => cells.clone(),
                    Target::Edge(side) => g.edge(*side),
                    Target::Everywhere => Vec::new(),
                };
                for (t, k) in cells.into_iter().enumerate() {
                    if owner[k] != Some((c, t)) {
                        continue;
                    }
                    let held = rows.local(k).is_some();
                    if held {
                        book.push(k, 0.0, values.at(t));
                    }
                    // Every neighbour is linked, conducting or not, so that the slots keep
                    // their shape when the conductivity changes in place.
                    for side in Side::ALL {
                        if let Some(nb) = grid.neighbour(k, side) {
                            if held {
                                let cf = coefficient(k, side);
                                book.link(nb, cf, carried(k, side));
                            }
                            anchored[nb] |= coefficient(nb, side.opposite()) > 0.0;
                        }
                    }
                }
            }
            (Spec::Flux(flux), Target::Edge(side)) => {
                book.open(label, FlowKind::PrescribedFlux, Action::Source);
                for (t, k) in g.edge(*side).into_iter().enumerate() {
                    if model.active[k] && rows.local(k).is_some() {
                        book.push(k, g.face_area(k, *side), flux.at(t));
                    }
                }
            }
            (
                Spec::Exchange {
                    coefficient,
                    external,
                },
                target,
            ) => {
                book.open(label, FlowKind::Exchange, Action::Conductance);
                let slots: Vec<(usize, f64)> = match target {
                    Target::Edge(side) => g
                        .edge(*side)
                        .into_iter()
                        .enumerate()
                        .filter(|&(_, k)| model.active[k])
                        .map(|(t, k)| {
                            let film = coefficient.at(t) * g.face_area(k, *side);
                            let r = resistance(model, k, *side);
                            let w = if film > 0.0 {
                                1.0 / (1.0 / film + r)
                            } else {
                                0.0
                            };
                            (t, w)
                        })
                        .collect(),
                    Target::Cells(cells) => {
                        for &k in cells {
                            by_name("exchange", k)?;
                        }
                        (0..cells.len()).map(|t| (t, coefficient.at(t))).collect()
                    }
                    Target::Everywhere => Vec::new(),
                };
                let cells: Vec<usize> = match target {
                    Target::Edge(side) => g.edge(*side),
                    Target::Cells(cells) => cells.clone(),
                    Target::Everywhere => Vec::new(),
                };
                for (t, w) in slots {
                    let k = cells[t];
                    anchored[k] |= w > 0.0;
                    if let Some(l) = rows.local(k) {
                        book.push(k, w, external.at(t));
                        bands[0][l] += w;
                    }
                }
            }
            (Spec::PointSource(rate), Target::Cells(cells)) => {
                book.open(label, FlowKind::PointSource, Action::Source);
                for &k in cells {
                    by_name("point source", k)?;
                    if rows.local(k).is_some() {
                        book.push(k, 1.0, *rate);
                    }
                }
            }
            (Spec::ArealSource(rate), _) | (Spec::VolumetricSource(rate), _) => {
                let areal = matches!(cond.spec, Spec::ArealSource(_));
                let kind = if areal {
                    FlowKind::ArealSource
                } else {
                    FlowKind::VolumetricSource
                };
                book.open(label, kind, Action::Source);
                for k in rows.cells().filter(|&k| model.active[k]) {
                    let w = if areal { g.plan_area(k) } else { g.volume(k) };
                    book.push(k, w, rate.at(k));
                }
            }
            (Spec::Inflow(values), Target::Edge(side)) => {
                book.open(label, FlowKind::Carried, Action::Carried);
                let owns = inflow_owner[side_slot(*side)] == Some(c);
                for (t, k) in g.edge(*side).into_iter().enumerate() {
                    if model.active[k] {
                        let w = if owns {
                            (-carried(k, *side)).max(0.0)
                        } else {
                            0.0
                        };
                        anchored[k] |= w > 0.0;
                        covered_in[k] += w;
                        if let Some(l) = rows.local(k) {
                            book.push(k, w, values.at(t));
                            bands[0][l] += w;
                        }
                    }
                }
            }
            // The builder pairs fluxes with edges and point sources with cells only.
            (Spec::Flux(_), _) | (Spec::PointSource(_), _) => {
                book.open(label, FlowKind::PrescribedFlux, Action::Source);
            }
            (Spec::Inflow(_), _) => {
                book.open(label, FlowKind::Carried, Action::Carried);
            }
        }
        if let Target::Edge(side) = cond.target {
            book.mark_edge(side);
        }
    }

    if advection.is_some() {
        // Every inflow through an edge at a free cell needs the value it carries in; the first
        // such cell is found through the model's space, so every process names the same.
        let uncovered = |k: usize| -> Option<Side> {
            if !model.active[k] || fixed_mask[k] {
                return None;
            }
            Side::ALL.into_iter().find(|&side| {
                grid.neighbour(k, side).is_none()
                    && carried(k, side) < 0.0
                    && inflow_owner[side_slot(side)].is_none()
            })
        };
        if let Some(k) = first_flagged(space, n, |k| uncovered(k).is_some()) {
            if let Some(side) = uncovered(k) {
                let inflow = -carried(k, side);
                return Err(Error::no_inflow_value(side, Location::on(grid, k), inflow));
            }
        }
        // What the flow field carries with the cells' own values: net outflow through the
        // faces between active cells, less the edge inflow the carried slots counted.
        book.open(FLOW_FIELD_LINE, FlowKind::Carried, Action::FlowField);
        for k in rows.cells().filter(|&k| model.active[k]) {
            let net: f64 = Side::ALL
                .into_iter()
                .filter(|&side| grid.neighbour(k, side).is_some())
                .map(|side| carried(k, side))
                .sum(); // local: one cell's faces
            book.push(k, net - covered_in[k], 0.0);
        }
    }

    capacity.clear();
    capacity.resize(rows.len(), 0.0);
    if let (true, Some(storage)) = (transient, &model.storage) {
        for k in (0..n).filter(|&k| model.active[k]) {
            let size = if storage.is_per_volume() {
                g.volume(k)
            } else {
                g.plan_area(k)
            };
            let held = storage.values().at(k) * size;
            anchored[k] |= held > 0.0;
            if let Some(l) = rows.local(k) {
                capacity[l] = held;
            }
        }
    }

    let linked = |k: usize, side: Side| face(k, side).max(carried(k, side).abs());
    let floating = floating_regions(grid, &fixed_mask, &anchored, &linked);
    Ok(Found {
        fixed: rows.cells().filter(|&k| fixed_mask[k]).collect(),
        floating,
        symmetric,
    })
}

/// Resistance of the half-cell between the node of `k` and its face on `side`: `d/(k·b·L)`;
/// 0 when the node sits on the face, infinite when the cell does not conduct that way.
pub(crate) fn resistance(model: &Model, k: usize, side: Side) -> f64 {
    let g: &Geometry = &model.geometry;
    let d = g.to_face(k, side);
    if d == 0.0 {
        return 0.0;
    }
    let (i, j) = g.grid().coords(k);
    let (cond, length) = match side {
        Side::West | Side::East => (model.conductivity.x().at(k), g.y().width(j)),
        Side::South | Side::North => (model.conductivity.y().at(k), g.x().width(i)),
    };
    let depth = match model.conductivity.basis() {
        ConductivityBasis::PerThickness => g.thickness(k),
        ConductivityBasis::DepthIntegrated => 1.0,
    };
    let g_half = cond * depth * length;
    if g_half > 0.0 {
        d / g_half
    } else {
        f64::INFINITY
    }
}

/// Check thickness, conductivities and (for a transient run) storage at active cells; the
/// first bad cell is found through the model's space, so every process would name the same.
fn check_medium(model: &Model, space: &dyn Space, transient: bool) -> Result<(), Error> {
    let grid = model.grid();
    if transient && model.storage.is_none() {
        return Err(Error::missing(
            "the model's storage",
            "a transient run needs it; give it with Model::set_storage",
        ));
    }
    let storage = model.storage.as_ref().filter(|_| transient);
    // An isotropic field is one field: name it so.
    let x_name = if model.conductivity.is_isotropic() {
        "conductivity"
    } else {
        "x conductivity"
    };
    let bad = |k: usize| -> Option<Error> {
        let checks = [
            ("thickness", model.geometry.thickness(k), false),
            (x_name, model.conductivity.x().at(k), true),
            ("y conductivity", model.conductivity.y().at(k), true),
            ("storage", storage.map_or(0.0, |s| s.values().at(k)), true),
        ];
        checks.into_iter().find_map(|(what, value, zero_ok)| {
            let ok = value.is_finite() && (value > 0.0 || (zero_ok && value == 0.0));
            let allowed = if zero_ok {
                "finite and >= 0"
            } else {
                "finite and > 0"
            };
            (!ok).then(|| Error::property(what, Location::on(grid, k), value, allowed))
        })
    };
    let first = first_flagged(space, grid.cells(), |k| model.active[k] && bad(k).is_some());
    match first.and_then(bad) {
        Some(e) => Err(e),
        None => Ok(()),
    }
}

/// Connected groups of free cells (through faces that conduct) with no anchored cell.
fn floating_regions(
    grid: Grid,
    fixed: &[bool],
    anchored: &[bool],
    face: &impl Fn(usize, Side) -> f64,
) -> Vec<Region> {
    let n = grid.cells();
    let mut seen = vec![false; n];
    let mut regions = Vec::new();
    let mut stack = Vec::new();
    for start in 0..n {
        if fixed[start] || seen[start] {
            continue;
        }
        let (mut cells, mut anchor) = (Vec::new(), false);
        seen[start] = true;
        stack.push(start);
        while let Some(k) = stack.pop() {
            cells.push(k);
            anchor |= anchored[k];
            for side in Side::ALL {
                if let Some(nb) = grid.neighbour(k, side) {
                    if !fixed[nb] && !seen[nb] && face(k, side) > 0.0 {
                        seen[nb] = true;
                        stack.push(nb);
                    }
                }
            }
        }
        if !anchor {
            cells.sort_unstable();
            regions.push(Region { cells });
        }
    }
    regions
}

/// The label of the budget line of what the flow field carries with the cells' own values.
pub(crate) const FLOW_FIELD_LINE: &str = "carried by the flow field";

/// Index of `side` in [`Side::ALL`].
fn side_slot(side: Side) -> usize {
    match side {
        Side::West => 0,
        Side::East => 1,
        Side::South => 2,
        Side::North => 3,
    }
}

fn inactive(grid: Grid, what: String, k: usize) -> Error {
    Error::inactive_cell(what, Location::on(grid, k))
}

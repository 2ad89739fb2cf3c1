//! The multigrid V-cycle of a [`DistributedStencil`] (see [`DistributedMultigrid`]).

mod split;

use std::sync::Arc;

use split::{Margins, Split, Window, MARGIN};

use super::layout::Layout;
use super::space::ExactSpace;
use super::stencil::DistributedStencil;
use super::transport::Transport;
use crate::operator::{cell_product, check_len};
use crate::precond::multigrid::{
    active_cells, inverse_centers, over_relax, relax_from_zero, Level, LevelOperator, StoredRows,
};
use crate::precond::Preconditioner;
use crate::space::{first_flagged, Combine, Serial, Space};
use crate::{Coeffs5, Error, FixedCells, LinearOperator, Location, Multigrid, MultigridSettings};

/// Relative tolerance below which the fine operator counts as symmetric (as for
/// [`Multigrid`]).
const SYMMETRY_TOLERANCE: f64 = 1e-10;

/// A multigrid V-cycle for a [`DistributedStencil`], as a PCG preconditioner: the hierarchy of
/// [`Multigrid`] (2 × 2 aggregation, operator-dependent interpolation, red-black SOR sweeps;
/// same coarse operators, transfers and smoother), with the finer levels split over the
/// processes and the coarser ones gathered. The operator must be symmetric (PCG's use);
/// applying the cycle allocates nothing.
///
/// * **Split levels.** Every level keeps the fine split, halved: a coarse cell belongs to the
///   process that owns its aggregate's first fine cell. A process stores its block with a
///   margin of 8 cells (filled once by a neighbour exchange) and builds the next level's rows
///   for its own coarse cells with the serial code on that window; the margin is wide enough
///   that they are the whole grid's rows, bit for bit. Each half-sweep of the smoother, the
///   residual and the prolongation's coarse values exchange a one- or two-cell margin first.
/// * **Gathered levels.** A level stays split while every block keeps at least 8 cells along
///   both axes (and it is not the coarsest). The first level that does not is gathered onto
///   every process, which runs the serial V-cycle from there down: one all-gather of its
///   right-hand side per cycle, no other collective.
/// * **Same bits for any process count.** Every cell update is the serial cycle's expression
///   (one-cell products in the crate's summation order, restriction contributions in the whole
///   grid's row order), so the preconditioned residual, and with the partition's exact sums the
///   whole PCG solve, are the same bits on any number of processes and threads, and on one
///   process with [`Processes::single`](super::Processes::single). PCG needs the iteration
///   count of the serial MG-PCG.
///
/// ```
/// use quintet::distributed::{DistributedMultigrid, DistributedStencil, Partition, Processes};
/// use quintet::prelude::*;
///
/// let grid = Grid::new(96, 64)?;
/// // Processes::mpi_world()? with the `mpi` feature, under `mpirun -n 4 …`.
/// let part = Partition::new(grid, Processes::single())?;
/// let op = DistributedStencil::from_fn(&part, |i, j| Coeffs5::laplacian(grid, i, j))?
///     .with_fixed(|i, _| i == 0)?;
/// let rhs = part.local_from_fn(|_, _| 1.0);
/// let mut x = vec![0.0; part.local_len()];
/// let mg = DistributedMultigrid::new(&op, MultigridSettings::default())?;
/// let report = Pcg::new(mg).solve_with(&op, &rhs, &mut x, &mut part.workspace(true))?;
/// assert!(report.converged() && report.iterations <= 12);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Debug)]
pub struct DistributedMultigrid {
    layout: Arc<Layout>,
    settings: MultigridSettings,
    /// The distributed levels, finest first (none when the fine level is gathered).
    levels: Vec<SplitLevel>,
    coarse: GatheredLevel,
}

/// One distributed level: this process's window of its operator and vectors, and the level
/// below built on this window (its transfers, and the coarse values they read and write).
#[derive(Debug)]
struct SplitLevel {
    win: Window,
    op: LevelOperator<f64>,
    inv: Vec<f32>,
    x: Vec<f64>,
    b: Vec<f64>,
    r: Vec<f64>,
    margins: Margins,
    /// The next coarser level on this window's aggregates (only its transfers and vectors are
    /// used; its rows moved to the next level).
    below: Level<f64>,
}

/// The first gathered level: its split, its whole operator, and the serial V-cycle from it.
#[derive(Debug)]
struct GatheredLevel {
    split: Split,
    op: LevelOperator<f64>,
    mg: Multigrid<f64>,
    b: Vec<f64>,
    x: Vec<f64>,
    /// All-gather buffers: this process's block, and every block padded to the largest.
    send: Vec<i64>,
    recv: Vec<i64>,
}

impl DistributedMultigrid {
    /// Build the hierarchy for `op` (a collective call: every process calls it with its part).
    ///
    /// # Errors
    ///
    /// The same on every process:
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for settings out of
    /// range; [`ErrorKind::NonPositiveCenter`](crate::ErrorKind::NonPositiveCenter) or
    /// [`ErrorKind::Asymmetric`](crate::ErrorKind::Asymmetric) naming the first such cell
    /// of the whole grid; [`ErrorKind::PivotBreakdown`](crate::ErrorKind::PivotBreakdown) if a
    /// coarse center comes out non-positive or not finite (naming the first cell of that
    /// level's grid, as [`Multigrid::new`] does).
    ///
    /// ```
    /// use quintet::distributed::{DistributedMultigrid, DistributedStencil, Partition, Processes};
    /// use quintet::prelude::*;
    /// let grid = Grid::new(40, 40)?;
    /// let part = Partition::new(grid, Processes::single())?;
    /// let op = DistributedStencil::from_fn(&part, |i, j| {
    ///     let mut c = Coeffs5::laplacian(grid, i, j);
    ///     if (i, j) == (5, 7) { c.east *= 2.0; } // its east neighbour still has -1 west
    ///     c
    /// })?;
    /// let err = DistributedMultigrid::new(&op, MultigridSettings::default()).unwrap_err();
    /// assert_eq!(err.kind(), ErrorKind::Asymmetric);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(
        op: &DistributedStencil,
        settings: MultigridSettings,
    ) -> Result<DistributedMultigrid, Error> {
        settings.check()?;
        if let Some((k, value)) = op.first_nonpositive_diagonal() {
            return Err(Error::non_positive_center(op.cell_location(k), value));
        }
        let layout = Arc::clone(&op.partition().layout);
        let (cx, cy) = (layout.cx, layout.cy);
        // The splits of the distributed levels and of the first gathered one.
        let mut splits = vec![Split::of(&layout)];
        loop {
            let l = splits.len() - 1;
            let here = &splits[l];
            if settings.is_coarsest(here.grid, l) || here.smallest_side() < MARGIN {
                break;
            }
            let next = here.coarser()?;
            splits.push(next);
        }
        let gathered = splits.len() - 1;
        // The fine level's window: eliminated rows of the block and its margin.
        let fine_split = &splits[0];
        let margin = MARGIN.min(fine_split.smallest_side());
        let win = Window::around(fine_split, cx, cy, margin);
        let mut margins = Margins::new(fine_split, &layout);
        let rows = fine_rows(op, &win, &mut margins, &layout, margin)?;
        check_symmetric(op, &win, &rows)?;
        let mut fine = Some((win, margins, rows));
        let mut own_rows: Rows = (Vec::new(), Vec::new());
        let mut levels = Vec::with_capacity(gathered);
        for l in 0..gathered {
            let (win, margins, rows) = match fine.take() {
                Some(level) => level,
                None => {
                    let win = Window::around(&splits[l], cx, cy, MARGIN);
                    let mut margins = Margins::new(&splits[l], &layout);
                    let rows = spread_rows(&own_rows, &win, &mut margins, &layout);
                    (win, margins, rows)
                }
            };
            let level_nx = splits[l].grid.nx();
            let level =
                SplitLevel::build(win, rows.0, rows.1, margins, (settings, level_nx), &layout)?;
            own_rows = level.coarse_rows(&splits[l + 1], cx, cy);
            levels.push(level);
        }
        let owned: Vec<(Coeffs5<f64>, bool)> = match fine {
            // The fine level itself is gathered: its own rows from the window.
            Some((win, _, rows)) => win.owned().map(|k| (rows.0[k], rows.1[k])).collect(),
            None => own_rows.0.into_iter().zip(own_rows.1).collect(),
        };
        let coarse = GatheredLevel::build(
            splits[gathered].clone(),
            &owned,
            gathered,
            settings,
            &layout,
        )?;
        Ok(DistributedMultigrid {
            layout,
            settings,
            levels,
            coarse,
        })
    }

    /// How many levels, the fine one first, stay split over the processes (the rest are
    /// gathered onto every process). It depends on the block sizes, not on the result: the
    /// cycle gives the same bits either way.
    ///
    /// ```
    /// use quintet::distributed::{DistributedMultigrid, DistributedStencil, Partition, Processes};
    /// use quintet::prelude::*;
    /// let grid = Grid::new(128, 128)?;
    /// let part = Partition::new(grid, Processes::single())?;
    /// let op = DistributedStencil::from_fn(&part, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mg = DistributedMultigrid::new(&op, MultigridSettings::default())?;
    /// // 128², 64², 32² split (one process here); 16² = 256 cells is the coarsest: gathered.
    /// assert_eq!(mg.distributed_levels(), 3);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn distributed_levels(&self) -> usize {
        self.levels.len()
    }

    /// The settings the hierarchy was built with.
    ///
    /// ```
    /// use quintet::distributed::{DistributedMultigrid, DistributedStencil, Partition, Processes};
    /// use quintet::prelude::*;
    /// let grid = Grid::new(16, 16)?;
    /// let part = Partition::new(grid, Processes::single())?;
    /// let op = DistributedStencil::from_fn(&part, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mg = DistributedMultigrid::new(&op, MultigridSettings::default())?;
    /// assert_eq!(mg.settings(), MultigridSettings::default());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn settings(&self) -> MultigridSettings {
        self.settings
    }

    /// One V-cycle from zero, `z = B·r`, on this process's cells (a collective call).
    fn cycle(&mut self, r: &[f64], z: &mut [f64]) {
        let transport = &*self.layout.processes.transport;
        let nu = self.settings.smoothing_sweeps;
        let coarse = &mut self.coarse;
        let Some(first) = self.levels.first_mut() else {
            coarse.gather_rhs(transport, r);
            coarse.solve();
            let (own_i, own_j) = coarse.split.block(self.layout.cx, self.layout.cy);
            let nx = coarse.split.grid.nx();
            let cells = own_j.flat_map(|j| own_i.clone().map(move |i| i + nx * j));
            for (zk, k) in z.iter_mut().zip(cells) {
                *zk = coarse.x[k];
            }
            return;
        };
        for (bk, &rk) in first.win.owned().zip(r) {
            first.b[bk] = rk;
        }
        let m = self.levels.len();
        for l in 0..m {
            let (upper, lower) = self.levels.split_at_mut(l + 1);
            let here = &mut upper[l];
            here.pre_smooth(transport, nu);
            here.restrict(transport);
            match lower.first_mut() {
                Some(next) => {
                    for (kc, k) in here.coarse_cells(&next.win) {
                        next.b[k] = here.below.b[kc];
                    }
                }
                None => {
                    let owned = here.owned_coarse(&coarse.split, &self.layout);
                    coarse.gather_coarse_rhs(transport, &here.below.b, owned);
                }
            }
        }
        coarse.solve();
        for l in (0..m).rev() {
            let (upper, lower) = self.levels.split_at_mut(l + 1);
            let here = &mut upper[l];
            match lower.first_mut() {
                Some(next) => {
                    next.margins.fill(transport, &next.win, &mut next.x, 2);
                    here.take_coarse(&next.win, &next.x);
                }
                None => here.take_gathered(&coarse.split, &coarse.x),
            }
            here.prolong_smooth(transport, nu);
        }
        let first = &self.levels[0];
        for (zk, k) in z.iter_mut().zip(first.win.owned()) {
            *zk = first.x[k];
        }
    }
}

impl Preconditioner<f64> for DistributedMultigrid {
    fn apply(
        &mut self,
        _op: &dyn LinearOperator<f64>,
        _space: &dyn Space,
        r: &[f64],
        z: &mut [f64],
    ) {
        self.cycle(r, z);
    }

    fn check(&self, op: &dyn LinearOperator<f64>) -> Result<(), Error> {
        check_len(
            "the operator of a distributed multigrid preconditioner",
            self.layout.local_len(),
            op.len(),
        )
    }

    fn name(&self) -> &'static str {
        "distributed multigrid V-cycle"
    }
}

/// Rows of a window and whether each cell is an unknown.
type Rows = (Vec<Coeffs5<f64>>, Vec<bool>);

/// The eliminated rows of `op` on `win` (identity rows at fixed cells, couplings towards them
/// zero), the margin filled from the neighbours; cells of the window no exchange reaches (an
/// odd column or row at its far side) are identity rows without unknowns.
fn fine_rows(
    op: &DistributedStencil,
    win: &Window,
    margins: &mut Margins,
    layout: &Layout,
    margin: usize,
) -> Result<Rows, Error> {
    let transport = &*layout.processes.transport;
    let n = win.cells();
    let fixed = op.fixed_cells();
    let bands = op.bands();
    let mut values: [Vec<f64>; 6] = std::array::from_fn(|_| vec![0.0; n]);
    for (local, k) in win.owned().enumerate() {
        for (band, v) in bands.iter().zip(values.iter_mut()) {
            v[k] = band[local];
        }
        values[5][k] = if fixed.is_some_and(|f| f.contains(local)) {
            0.0
        } else {
            1.0
        };
    }
    for v in values.iter_mut() {
        margins.fill(transport, win, v, margin);
    }
    let nx = win.i.len();
    let ny = win.j.len();
    let free = |k: usize| values[5][k] == 1.0;
    let mut rows = vec![Coeffs5::identity(); n];
    let mut active = vec![false; n];
    for jl in 0..ny {
        for il in 0..nx {
            let k = il + nx * jl;
            if !free(k) {
                continue;
            }
            let at = |b: usize| values[b][k];
            let (west, east, south, north) = (
                if il > 0 && !free(k - 1) { 0.0 } else { at(1) },
                if il + 1 < nx && !free(k + 1) {
                    0.0
                } else {
                    at(2)
                },
                if jl > 0 && !free(k - nx) { 0.0 } else { at(3) },
                if jl + 1 < ny && !free(k + nx) {
                    0.0
                } else {
                    at(4)
                },
            );
            rows[k] = Coeffs5 {
                center: at(0),
                west,
                east,
                south,
                north,
            };
            active[k] = true;
        }
    }
    Ok((rows, active))
}

/// `Err(Asymmetric)` on every process, naming the first owned cell of the whole grid whose
/// eliminated coupling towards its east or north neighbour differs from the neighbour's back
/// (to a relative [`SYMMETRY_TOLERANCE`]).
fn check_symmetric(op: &DistributedStencil, win: &Window, rows: &Rows) -> Result<(), Error> {
    let nx = win.i.len();
    let owned: Vec<usize> = win.owned().collect();
    let (grid_nx, grid_ny) = (op.partition().grid().nx(), op.partition().grid().ny());
    // The first asymmetric pair of an owned cell: (offset of the neighbour, forward, back).
    let pair = |local: usize| -> Option<(usize, f64, f64)> {
        let k = owned[local];
        let (gi, gj) = (win.i.start + k % nx, win.j.start + k / nx);
        let here = rows.0[k];
        let east = (gi + 1 < grid_nx).then(|| (1, here.east, rows.0[k + 1].west));
        let north = (gj + 1 < grid_ny).then(|| (grid_nx, here.north, rows.0[k + nx].south));
        [east, north]
            .into_iter()
            .flatten()
            .find(|&(_, a, b)| (a - b).abs() > SYMMETRY_TOLERANCE * a.abs().max(b.abs()))
    };
    let space = op.partition().space(false);
    let Some(k) = first_flagged(&*space, owned.len(), |l| pair(l).is_some()) else {
        return Ok(());
    };
    let layout = &op.partition().layout;
    let mine = (0..owned.len()).find(|&l| layout.global(l) == k);
    let (step, a, b) = mine.and_then(pair).unwrap_or((0, 0.0, 0.0));
    let mut out = [0.0; 3];
    space.combine_f64(&[step as f64, a, b], &[Combine::Sum; 3], &mut out);
    Err(Error::asymmetric(
        op.cell_location(k),
        k + out[0] as usize,
        out[1],
        out[2],
    ))
}

/// A level's own rows (`rows`, in block order) spread onto its window, the margin filled from
/// the neighbours; cells no exchange reaches are identity rows without unknowns.
fn spread_rows(rows: &Rows, win: &Window, margins: &mut Margins, layout: &Layout) -> Rows {
    let transport = &*layout.processes.transport;
    let n = win.cells();
    let mut values: [Vec<f64>; 6] = std::array::from_fn(|_| vec![0.0; n]);
    for ((c, &on), k) in rows.0.iter().zip(&rows.1).zip(win.owned()) {
        let row = [
            c.center,
            c.west,
            c.east,
            c.south,
            c.north,
            f64::from(u8::from(on)),
        ];
        for (v, value) in values.iter_mut().zip(row) {
            v[k] = value;
        }
    }
    for v in values.iter_mut() {
        margins.fill(transport, win, v, MARGIN);
    }
    let mut out = (vec![Coeffs5::identity(); n], vec![false; n]);
    for (k, (row, on)) in out.0.iter_mut().zip(out.1.iter_mut()).enumerate() {
        if values[5][k] == 1.0 {
            *row = Coeffs5 {
                center: values[0][k],
                west: values[1][k],
                east: values[2][k],
                south: values[3][k],
                north: values[4][k],
            };
            *on = true;
        }
    }
    out
}

/// A window's rows as a level operator (cells without an unknown as its inactive cells).
fn level_operator(
    win: &Window,
    rows: Vec<Coeffs5<f64>>,
    active: &[bool],
) -> Result<LevelOperator<f64>, Error> {
    let grid = win.grid()?;
    let inactive = FixedCells::new(grid, (0..grid.cells()).filter(|&k| !active[k]))?;
    Ok(LevelOperator {
        grid,
        rows,
        inactive,
    })
}

impl SplitLevel {
    fn build(
        win: Window,
        rows: Vec<Coeffs5<f64>>,
        active: Vec<bool>,
        margins: Margins,
        (settings, nx): (MultigridSettings, usize),
        layout: &Arc<Layout>,
    ) -> Result<SplitLevel, Error> {
        let op = level_operator(&win, rows, &active)?;
        let below = Level::below(&op, settings.coarse_operator);
        // A coarse center that is not positive: every process reports the first such cell of
        // this level's grid (`nx` wide) that any process found, with its value (the serial
        // hierarchy names a cell of the level's grid too).
        let found = below.as_ref().err().map(|e| {
            let k = e.location().map_or(0, |at| at.cell);
            let (i, j) = (win.i.start + k % win.i.len(), win.j.start + k / win.i.len());
            (i + nx * j, e.value().unwrap_or(f64::NAN))
        });
        let space = ExactSpace::new(Arc::clone(layout), false);
        let mut cell = [0.0];
        let first = found.map_or(f64::INFINITY, |(k, _)| k as f64);
        space.combine_f64(&[first], &[Combine::Min], &mut cell);
        if cell[0].is_finite() {
            let mine = found.filter(|&(k, _)| k as f64 == cell[0]);
            let mut value = [0.0];
            space.combine_f64(
                &[mine.map_or(f64::INFINITY, |(_, v)| v)],
                &[Combine::Min],
                &mut value,
            );
            let k = cell[0] as usize;
            let at = Location {
                cell: k,
                coords: Some((k % nx, k / nx)),
            };
            return Err(Error::pivot(at, value[0]));
        }
        let below = below?;
        let mut inv = inverse_centers(&op.rows, |k| active[k]);
        over_relax(&mut inv, settings.omega(true));
        let n = win.cells();
        Ok(SplitLevel {
            win,
            op,
            inv,
            x: vec![0.0; n],
            b: vec![0.0; n],
            r: vec![0.0; n],
            margins,
            below,
        })
    }

    /// The coarse rows of this process's cells of the next level (`split`), in block order,
    /// taken from the level below (its rows are not needed afterwards).
    fn coarse_rows(&self, split: &Split, cx: usize, cy: usize) -> Rows {
        let (own_i, own_j) = split.block(cx, cy);
        let (ci0, cj0) = (self.win.i.start / 2, self.win.j.start / 2);
        let cnx = self.below.op.grid.nx();
        let mut rows = Vec::with_capacity(own_i.len() * own_j.len());
        let mut active = Vec::with_capacity(rows.capacity());
        for j in own_j {
            for i in own_i.clone() {
                let kc = (i - ci0) + cnx * (j - cj0);
                rows.push(self.below.op.rows[kc]);
                active.push(!self.below.op.inactive.contains(kc));
            }
        }
        (rows, active)
    }

    /// Pairs (entry of the level below, entry of `next`'s window) for `next`'s own cells.
    fn coarse_cells<'a>(&'a self, next: &'a Window) -> impl Iterator<Item = (usize, usize)> + 'a {
        let (ci0, cj0) = (self.win.i.start / 2, self.win.j.start / 2);
        let cnx = self.below.op.grid.nx();
        next.own_j.clone().flat_map(move |j| {
            next.own_i
                .clone()
                .map(move |i| ((i - ci0) + cnx * (j - cj0), next.at(i, j)))
        })
    }

    /// The entries of the level below that this process owns on the gathered level, in
    /// block order.
    fn owned_coarse<'a>(
        &'a self,
        split: &Split,
        layout: &Layout,
    ) -> impl Iterator<Item = usize> + 'a {
        let (own_i, own_j) = split.block(layout.cx, layout.cy);
        let (ci0, cj0) = (self.win.i.start / 2, self.win.j.start / 2);
        let cnx = self.below.op.grid.nx();
        own_j.flat_map(move |j| own_i.clone().map(move |i| (i - ci0) + cnx * (j - cj0)))
    }

    /// `ν` red-black sweeps from zero (red then black) on the owned cells, the one-cell margin
    /// exchanged before every half-sweep that reads it.
    fn pre_smooth(&mut self, transport: &dyn Transport, nu: usize) {
        let (cols, rows) = self.win.own_local();
        let nx = self.win.i.len();
        for j in rows.clone() {
            relax_from_zero(&self.inv, &self.b, &mut self.x, nx, j, cols.clone());
        }
        for s in 0..nu {
            if s > 0 {
                self.half_sweep(transport, 0);
            }
            self.half_sweep(transport, 1);
        }
    }

    /// `x += P·coarse` on the owned cells (the coarse values in `below.x`), then `ν` sweeps
    /// black then red.
    fn prolong_smooth(&mut self, transport: &dyn Transport, nu: usize) {
        let (cols, rows) = self.win.own_local();
        let nx = self.win.i.len();
        {
            let inactive = Some(&self.op.inactive);
            let transfer = self.below.transfer();
            for j in rows {
                let x_row = &mut self.x[j * nx..][..nx];
                transfer.prolong_row(j, cols.clone(), x_row, inactive, &self.below.x);
            }
        }
        for _ in 0..nu {
            self.half_sweep(transport, 1);
            self.half_sweep(transport, 0);
        }
    }

    /// One half-sweep of `colour` on the owned cells, after the one-cell margin exchange.
    fn half_sweep(&mut self, transport: &dyn Transport, colour: usize) {
        self.margins.fill(transport, &self.win, &mut self.x, 1);
        let (cols, rows) = self.win.own_local();
        let nx = self.win.i.len();
        let stored = StoredRows {
            rows: &self.op.rows,
            inv: &self.inv,
            b: &self.b,
        };
        for j in rows {
            stored.relax(&mut self.x, nx, j, colour, cols.clone());
        }
    }

    /// `r = b − A·x` on the owned cells, its two-cell margin from the neighbours, and
    /// `below.b = Pᵀ·r` for the coarse cells this process owns (their contributions added in
    /// the whole grid's row order, as the serial cycle adds them).
    fn restrict(&mut self, transport: &dyn Transport) {
        self.margins.fill(transport, &self.win, &mut self.x, 1);
        let (cols, rows) = self.win.own_local();
        let nx = self.win.i.len();
        let coeffs = |k: usize| self.op.rows[k];
        for j in rows {
            let base = j * nx;
            let south = (j > 0).then(|| &self.x[base - nx..base]);
            let north = (base + 2 * nx <= self.x.len()).then(|| &self.x[base + nx..base + 2 * nx]);
            let row = &self.x[base..base + nx];
            let c_row = |i: usize| coeffs(base + i);
            for i in cols.clone() {
                self.r[base + i] = self.b[base + i] - cell_product(&c_row, i, south, row, north);
            }
        }
        // A coarse cell C takes fine cells 2C − 1 … 2C + 2; the last owned one, when the block
        // ends at an odd cell e, reaches e + 1: two cells of margin.
        self.margins.fill(transport, &self.win, &mut self.r, 2);
        let (cols, rows) = self.win.own_local_with(2);
        let active = active_cells(&self.op);
        let below = &mut self.below;
        below.b.iter_mut().for_each(|v| *v = 0.0);
        let (transfer, coarse_b) = below.transfer_and_rhs();
        for j in rows {
            transfer.restrict_row(j, cols.clone(), &self.r[j * nx..][..nx], &active, coarse_b);
        }
    }

    /// The coarse values the prolongation reads (`below.x`) from the next level's window
    /// (its two-cell margin filled).
    fn take_coarse(&mut self, next: &Window, next_x: &[f64]) {
        let (ci0, cj0) = (self.win.i.start / 2, self.win.j.start / 2);
        let g = self.below.op.grid;
        for jc in 0..g.ny() {
            for ic in 0..g.nx() {
                let (i, j) = (ci0 + ic, cj0 + jc);
                if next.i.contains(&i) && next.j.contains(&j) {
                    self.below.x[ic + g.nx() * jc] = next_x[next.at(i, j)];
                }
            }
        }
    }

    /// The coarse values the prolongation reads from the gathered level's whole vector.
    fn take_gathered(&mut self, split: &Split, whole: &[f64]) {
        let (ci0, cj0) = (self.win.i.start / 2, self.win.j.start / 2);
        let g = self.below.op.grid;
        let nx = split.grid.nx();
        for jc in 0..g.ny() {
            for ic in 0..g.nx() {
                self.below.x[ic + g.nx() * jc] = whole[(ci0 + ic) + nx * (cj0 + jc)];
            }
        }
    }
}

impl GatheredLevel {
    /// Gather every process's own rows of the level on `split` (`owned`, block order) onto
    /// every process and build the serial hierarchy from it (`above` coarse levels above it).
    fn build(
        split: Split,
        owned: &[(Coeffs5<f64>, bool)],
        above: usize,
        settings: MultigridSettings,
        layout: &Layout,
    ) -> Result<GatheredLevel, Error> {
        let transport = &*layout.processes.transport;
        let size = transport.size();
        let most = split.largest_block();
        let grid = split.grid;
        // Six numbers per cell: the row's bits and the unknown flag.
        let mut send = vec![0i64; 6 * most];
        for (slot, (c, on)) in send.chunks_exact_mut(6).zip(owned) {
            let bits = [c.center, c.west, c.east, c.south, c.north].map(|v| v.to_bits() as i64);
            slot[..5].copy_from_slice(&bits);
            slot[5] = i64::from(*on);
        }
        let mut recv = vec![0i64; 6 * most * size];
        transport.all_gather(&send, &mut recv);
        let mut rows = vec![Coeffs5::identity(); grid.cells()];
        let mut active = vec![false; grid.cells()];
        let (px, _) = split.processes();
        for (rank, block) in recv.chunks_exact(6 * most).enumerate() {
            let (bi, bj) = split.block(rank % px, rank / px);
            let cells = bj.flat_map(|j| bi.clone().map(move |i| i + grid.nx() * j));
            for (slot, k) in block.chunks_exact(6).zip(cells) {
                let v = |t: usize| f64::from_bits(slot[t] as u64);
                rows[k] = Coeffs5 {
                    center: v(0),
                    west: v(1),
                    east: v(2),
                    south: v(3),
                    north: v(4),
                };
                active[k] = slot[5] != 0;
            }
        }
        let inactive = FixedCells::new(grid, (0..grid.cells()).filter(|&k| !active[k]))?;
        let op = LevelOperator {
            grid,
            rows,
            inactive,
        };
        // The split levels' relaxation factor (the operator is symmetric), whatever the
        // symmetry check of the gathered rows finds.
        let below = MultigridSettings {
            max_levels: settings.max_levels - above,
            smoothing_omega: Some(settings.omega(true)),
            ..settings
        };
        let mg = Multigrid::new(&op, below)?;
        Ok(GatheredLevel {
            split,
            op,
            mg,
            b: vec![0.0; grid.cells()],
            x: vec![0.0; grid.cells()],
            send: vec![0; most],
            recv: vec![0; most * size],
        })
    }

    /// The whole right-hand side from every process's own entries of the fine `r`.
    fn gather_rhs(&mut self, transport: &dyn Transport, r: &[f64]) {
        for (s, v) in self.send.iter_mut().zip(r) {
            *s = v.to_bits() as i64;
        }
        self.all_gather(transport);
    }

    /// The whole right-hand side from the entries `owned` of `values`.
    fn gather_coarse_rhs(
        &mut self,
        transport: &dyn Transport,
        values: &[f64],
        owned: impl Iterator<Item = usize>,
    ) {
        for (s, k) in self.send.iter_mut().zip(owned) {
            *s = values[k].to_bits() as i64;
        }
        self.all_gather(transport);
    }

    fn all_gather(&mut self, transport: &dyn Transport) {
        transport.all_gather(&self.send, &mut self.recv);
        let most = self.send.len();
        let (px, _) = self.split.processes();
        let nx = self.split.grid.nx();
        for (rank, block) in self.recv.chunks_exact(most).enumerate() {
            let (bi, bj) = self.split.block(rank % px, rank / px);
            let cells = bj.flat_map(|j| bi.clone().map(move |i| i + nx * j));
            for (&bits, k) in block.iter().zip(cells) {
                self.b[k] = f64::from_bits(bits as u64);
            }
        }
    }

    /// The serial V-cycle from this level down.
    fn solve(&mut self) {
        self.mg.cycle(&self.op, &Serial, &self.b, &mut self.x);
    }
}

#[cfg(test)]
mod tests;

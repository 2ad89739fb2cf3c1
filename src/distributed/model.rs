//! A model's steady system split over processes: each process assembles the rows of its own
//! block from the [`Model`] (the model's own assembly, restricted to the block), solves with
//! any driver through the distributed operator, and sums the budget exactly through the
//! partition, so every process gets the same budget for any number of processes.

use super::exact::ExactSum;
use super::partition::Partition;
use super::space::exact_totals;
use super::stencil::DistributedStencil;
use crate::model::{assemble_rows, settle, Book, Rows};
use crate::model::{Budget, Model, SingularPolicy};
use crate::operator::{check_shape, grid_shape};
use crate::space::Serial;
use crate::{Error, IterativeSolver, LinearOperator, Report, Workspace};

/// A steady [`Model`] assembled on a [`Partition`]: this process's rows of the operator (a
/// [`DistributedStencil`] with the prescribed and inactive cells as fixed cells), its part of
/// the right-hand side, and the bookkeeping of its cells for the budget.
///
/// Every process builds only its own block's rows, with the same assembly as
/// [`Model::assemble`] (so each row has the bits of the serial system's row). Solve with any
/// driver that needs only a [`LinearOperator`] in the partition's workspace
/// ([`Partition::workspace`]): CG and PCG with [`DistributedJacobi`](super::DistributedJacobi),
/// BiCGSTAB and GMRES. [`budget`](DistributedSystem::budget) books every cell's flows on the
/// process that owns it (the flows of a prescribed cell through a block's edge read the
/// neighbour's value from the operator's halo) and adds them up exactly over all processes:
/// every process gets the same [`Budget`], bit for bit, whatever the number of processes.
///
/// **Not distributed (yet):** a flow field ([`Model::set_advection`]) and floating regions
/// held by [`SingularPolicy::FixMean`] are refused with
/// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting); nonlinear models and time
/// steps have their own types, which run on one process.
///
/// **Memory.** The whole-grid [`Model`] lives on every process, and the assembly's checks of
/// the whole model (conductivities, conflicting conditions, floating regions) run on every
/// process alike, with a few whole-grid masks while it runs; only the operator, the
/// right-hand side and the bookkeeping are per block. A model record split by block is future
/// work.
///
/// As everywhere in [`crate::model`]: results support, and do not replace, engineering
/// judgement; design to local codes and licensed professional practice.
///
/// ```
/// use quintet::distributed::{DistributedJacobi, DistributedSystem, Partition, Processes};
/// use quintet::model::{Conductivity, Geometry, Model};
/// use quintet::prelude::*;
///
/// let geometry = Geometry::cell_centered(40, 20, 50.0, 50.0, 15.0)?;
/// let mut model = Model::new(geometry, Conductivity::isotropic(1e-4))?;
/// model.prescribe_edge("downstream", Side::East, 38.0)?;
/// model.areal_source("recharge", 4e-9)?;
/// model.point_source("well", 20 + 40 * 10, -5e-3)?;
///
/// // Processes::mpi_world()? with the `mpi` feature, under `mpirun -n 4 …`.
/// let part = Partition::new(model.geometry().grid(), Processes::single())?;
/// let system = DistributedSystem::new(&model, &part)?;
/// let mut heads = system.initial_solution(38.0);
/// let mut pcg = Pcg::new(DistributedJacobi::new(system.operator())?)
///     .with_options(SolveOptions::default().tolerance(1e-12));
/// system.solve(&mut pcg, &mut heads, &mut part.workspace(true))?;
/// let budget = system.budget(&heads)?; // the same on every process
/// assert!(budget.warning(1e-6).is_none());
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Debug)]
pub struct DistributedSystem {
    operator: DistributedStencil,
    rhs: Vec<f64>,
    /// This block's slots: cells numbered as the local vectors, links to cells of other
    /// blocks numbered `local_len + g` for `ghosts[g]`.
    book: Book,
    /// Global cells of other blocks that a prescribed cell of this block is linked to.
    ghosts: Vec<usize>,
    /// Local numbers of the inactive cells.
    inactive: Vec<usize>,
    inactive_value: f64,
}

impl DistributedSystem {
    /// Assemble this process's block of `model` on `part`. A collective call: every process
    /// of the partition calls it with the same model.
    ///
    /// # Errors
    ///
    /// The same on every process: whatever [`Model::assemble`] refuses (properties, conflicting
    /// conditions, floating regions under [`SingularPolicy::Reject`], …);
    /// [`ErrorKind::GridMismatch`](crate::ErrorKind::GridMismatch) when the partition is of
    /// another grid; [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for a
    /// model with a flow field or floating regions held by [`SingularPolicy::FixMean`], which
    /// are not distributed.
    ///
    /// ```
    /// use quintet::distributed::{DistributedSystem, Partition, Processes};
    /// use quintet::model::{AdvectionScheme, Conductivity, FaceFlows, Geometry, Model};
    /// use quintet::{ErrorKind, Side};
    /// let geometry = Geometry::cell_centered(8, 4, 1.0, 1.0, 1.0)?;
    /// let mut model = Model::new(geometry.clone(), Conductivity::isotropic(1.0))?;
    /// model.prescribe_edge("outlet", Side::East, 0.0)?;
    /// model.inflow_value("inlet", Side::West, 1.0)?;
    /// model.set_advection(FaceFlows::uniform(&geometry, 1.0, 0.0, 1.0)?, AdvectionScheme::Upwind)?;
    /// let part = Partition::new(geometry.grid(), Processes::single())?;
    /// let err = DistributedSystem::new(&model, &part).unwrap_err();
    /// assert_eq!(err.kind(), ErrorKind::InvalidSetting);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(model: &Model, part: &Partition) -> Result<DistributedSystem, Error> {
        let grid = model.geometry().grid();
        check_shape(
            "the partition of a distributed system",
            grid_shape(grid),
            grid_shape(part.grid()),
        )?;
        if model.advection.is_some() {
            return Err(Error::setting(
                "a flow field on a distributed system",
                0.0,
                "a model without advection (a flow field is not distributed yet)",
            ));
        }
        let (i, j) = part.owned();
        let rows = Rows::block(grid, i, j);
        // Checks of the whole model run on every process alike, with no collective: the
        // model is the same everywhere, so every process finds the same error.
        let (bands, mut book, found) = assemble_rows(model, &rows, &Serial)?;
        if !found.floating.is_empty() {
            let mut pinned = Vec::new();
            settle(model.singular, grid, &found.floating, &mut pinned)?;
            return Err(Error::setting(
                "SingularPolicy::FixMean on a distributed system",
                match model.singular {
                    SingularPolicy::FixMean(mean) => mean,
                    SingularPolicy::Reject => 0.0,
                },
                "a model whose every region reaches a prescribed value or an exchange \
                 (floating regions are not distributed yet)",
            ));
        }
        let [center, west, east, south, north] = &bands;
        let fixed = &found.fixed;
        let nx = grid.nx();
        let operator = DistributedStencil::from_bands(part, center, west, east, south, north)?
            .with_fixed(|i, j| fixed.binary_search(&(i + nx * j)).is_ok())?;
        let n = rows.len();
        // The book in local numbers; every slot is of a cell of the block.
        for cell in &mut book.cells {
            *cell = rows.local(*cell).unwrap_or(0);
        }
        let mut ghosts = Vec::new();
        for link in &mut book.links {
            link.free = match rows.local(link.free) {
                Some(l) => l,
                None => {
                    ghosts.push(link.free);
                    n + ghosts.len() - 1
                }
            };
        }
        let mut rhs = vec![0.0; n];
        book.fill_rhs(&mut rhs);
        let inactive = rows
            .cells()
            .enumerate()
            .filter(|&(_, k)| !model.active[k])
            .map(|(l, _)| l)
            .collect();
        Ok(DistributedSystem {
            operator,
            rhs,
            book,
            ghosts,
            inactive,
            inactive_value: model.inactive_value,
        })
    }

    /// This process's rows of the operator, with the prescribed and inactive cells as fixed
    /// cells (build preconditioners from it).
    ///
    /// ```
    /// # use quintet::distributed::{DistributedSystem, Partition, Processes};
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # use quintet::LinearOperator;
    /// # let mut model = Model::new(Geometry::cell_centered(3, 3, 1.0, 1.0, 1.0)?, Conductivity::isotropic(2.0))?;
    /// model.prescribe_cells("corner", [0], 1.0)?;
    /// let part = Partition::new(model.geometry().grid(), Processes::single())?;
    /// let system = DistributedSystem::new(&model, &part)?;
    /// assert_eq!(system.operator().fixed_cells().map(|f| f.len()), Some(1));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn operator(&self) -> &DistributedStencil {
        &self.operator
    }

    /// This process's part of the right-hand side (W or m³/s per cell, as
    /// [`SteadySystem::rhs`](crate::model::SteadySystem::rhs)).
    ///
    /// ```
    /// # use quintet::distributed::{DistributedSystem, Partition, Processes};
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_cells("end", [0], 0.0)?;
    /// model.point_source("heater", 2, 7.5)?;
    /// let part = Partition::new(model.geometry().grid(), Processes::single())?;
    /// assert_eq!(DistributedSystem::new(&model, &part)?.rhs()[2], 7.5);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn rhs(&self) -> &[f64] {
        &self.rhs
    }

    /// This process's part of a solution to start from: prescribed values at prescribed cells,
    /// the inactive value at inactive cells, `start` elsewhere.
    ///
    /// ```
    /// # use quintet::distributed::{DistributedSystem, Partition, Processes};
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.prescribe_cells("end", [0], 5.0)?;
    /// let part = Partition::new(model.geometry().grid(), Processes::single())?;
    /// let system = DistributedSystem::new(&model, &part)?;
    /// assert_eq!(system.initial_solution(1.0), vec![5.0, 1.0, 1.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn initial_solution(&self, start: f64) -> Vec<f64> {
        let mut x = vec![start; self.rhs.len()];
        self.write_fixed(&mut x);
        x
    }

    /// Write the prescribed and inactive values into this process's part `x`, then solve with
    /// `solver` in `ws` (a workspace of the partition, [`Partition::workspace`]). A collective
    /// call.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) unless `x` has
    /// [`Partition::local_len`] entries, and whatever the driver returns (the same on every
    /// process; the last iterate is then in `x`).
    ///
    /// ```
    /// # use quintet::distributed::{DistributedSystem, Partition, Processes};
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// use quintet::prelude::*;
    /// # let mut model = Model::new(Geometry::cell_centered(8, 8, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_edge("wall", Side::West, 0.0)?;
    /// # model.volumetric_source("q", 1.0)?;
    /// let part = Partition::new(model.geometry().grid(), Processes::single())?;
    /// let system = DistributedSystem::new(&model, &part)?;
    /// let mut x = system.initial_solution(0.0);
    /// let report = system.solve(&mut BiCgStab::default(), &mut x, &mut part.workspace(false))?;
    /// assert!(report.converged());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn solve<S: IterativeSolver<f64> + ?Sized>(
        &self,
        solver: &mut S,
        x: &mut [f64],
        ws: &mut Workspace<f64>,
    ) -> Result<Report, Error> {
        self.check_local("x", x.len())?;
        self.write_fixed(x);
        solver.solve_with(&self.operator, &self.rhs, x, ws)
    }

    /// The budget of solution `x` (this process's part): the same [`Budget`] on every process,
    /// bit for bit for any number of processes. A collective call.
    ///
    /// Each cell's flows are those of [`SteadySystem::budget`](crate::model::SteadySystem::budget),
    /// computed by the process that owns the cell (a prescribed cell next to another block
    /// reads its neighbour's value from the halo the operator exchanges); each line's
    /// inflows and outflows are then summed exactly over all processes and rounded once.
    /// Against the serial budget of a serial solve it differs only through the heads (each
    /// line's flows move by at most `|Δh|∞` times the conductances in its cells' centers,
    /// and `|Δh|∞ ≤ ‖A⁻¹‖∞·(‖r₁‖∞ + ‖r₂‖∞)` with the two solves' residuals, both within the
    /// stopping tolerance) and the rounding of the serial sums. Costs one halo exchange and
    /// one all-gather of `2 × lines` exact sums.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) (on every process) unless
    /// `x` has [`Partition::local_len`] entries on every process.
    ///
    /// ```
    /// # use quintet::distributed::{DistributedJacobi, DistributedSystem, Partition, Processes};
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// use quintet::prelude::*;
    /// # let mut model = Model::new(Geometry::cell_centered(6, 4, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.prescribe_edge("wall", Side::West, 0.0)?;
    /// let heater = model.point_source("heater", 5, 2.0)?;
    /// let part = Partition::new(model.geometry().grid(), Processes::single())?;
    /// let system = DistributedSystem::new(&model, &part)?;
    /// let mut x = system.initial_solution(0.0);
    /// let mut pcg = Pcg::new(DistributedJacobi::new(system.operator())?)
    ///     .with_options(SolveOptions::default().tolerance(1e-12));
    /// system.solve(&mut pcg, &mut x, &mut part.workspace(false))?;
    /// let budget = system.budget(&x)?;
    /// assert_eq!(budget.line(heater).map(|l| l.inflow), Some(2.0));
    /// assert!((budget.net()).abs() < 1e-9);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn budget(&self, x: &[f64]) -> Result<Budget, Error> {
        self.check_local("x", x.len())?;
        self.operator.exchange_halo(x);
        let mut extended = Vec::with_capacity(x.len() + self.ghosts.len());
        extended.extend_from_slice(x);
        extended.extend(
            self.ghosts
                .iter()
                .map(|&k| self.operator.halo_cell(k).unwrap_or(f64::NAN)),
        );
        let mut lines = self.book.empty_lines();
        let mut sums = vec![ExactSum::default(); 2 * lines.len()];
        self.book.slot_flows(
            (&extended, &self.book.levels),
            None,
            None,
            &mut |t, flow| {
                if flow >= 0.0 {
                    sums[2 * t].add(flow);
                } else {
                    sums[2 * t + 1].add(-flow);
                }
            },
        );
        let processes = self.operator.partition().processes();
        let totals = exact_totals(processes, &mut sums);
        for (line, pair) in lines.iter_mut().zip(totals.chunks_exact(2)) {
            line.inflow = pair[0];
            line.outflow = pair[1];
        }
        Ok(Budget::from_lines(lines))
    }

    /// `Err(LengthMismatch)` on every process if `len` is wrong on any (one collective).
    fn check_local(&self, what: &'static str, len: usize) -> Result<(), Error> {
        let n = self.rhs.len();
        match self.operator.partition().processes().any_failed(len != n) {
            None => Ok(()),
            Some(_) => Err(Error::length(what, n, len)
                .while_doing("using a distributed system (some process's part is wrong)")),
        }
    }

    fn write_fixed(&self, x: &mut [f64]) {
        self.book.write_fixed(x);
        for &k in &self.inactive {
            x[k] = self.inactive_value;
        }
    }
}

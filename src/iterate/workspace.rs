//! Caller-owned scratch memory, reused across solves, and the [`Space`] the solves run in.

use std::sync::Arc;

use crate::blocks::Blocks;
use crate::operator::LinearOperator;
use crate::space::{Serial, Space, Threaded};
use crate::{memory, Error, Grid, Scalar};

/// Work vectors the drivers for symmetric systems need at most, besides the residual
/// ([`Workspace::for_grid`] sizes for them; BiCGSTAB and GMRES grow the workspace at their
/// first solve).
const DRIVER_VECTORS: usize = 3;

/// Scratch vectors, reduction buffers and the residual history of a solve, and the
/// [`Space`] the solve runs in (threads or not, and the seam of every global reduction).
///
/// Create one and pass it to every solve of a time loop or a calibration sweep: after the
/// first solve on an operator, nothing is allocated again. Each method declares how many
/// vectors it needs and the workspace grows to the largest request. The residual history is
/// shared with the last [`Report`](crate::Report) (see [`History`](crate::History)): drop the
/// report before the next solve and its buffer is reused.
///
/// With the `parallel` feature, call threaded solves from inside a rayon pool
/// (`pool.install(|| …)`) if every allocation matters: from a thread outside the pool, rayon
/// passes each kernel's job through its global queue, which allocates a small block every 63
/// jobs.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(64, 64)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let mut cg = Cg::default();
/// let mut ws = Workspace::for_grid(grid);
/// let mut x = vec![0.0; grid.cells()];
/// for step in 1..=3 {
///     let rhs = vec![step as f64; grid.cells()];
///     let report = cg.solve_with(&op, &rhs, &mut x, &mut ws)?; // warm start from the last step
///     assert!(report.converged());
/// }
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Workspace<T> {
    pub(crate) space: Arc<dyn Space>,
    pub(crate) blocks: Option<Blocks<T>>,
    pub(crate) vectors: Vec<Vec<T>>,
    pub(crate) history: Arc<Vec<f64>>,
}

impl<T: Scalar> Workspace<T> {
    /// An empty workspace in the default [`Threaded`] space; it sizes itself on first use.
    ///
    /// ```
    /// let ws = quintet::Workspace::<f64>::new();
    /// # let _ = ws;
    /// ```
    pub fn new() -> Workspace<T> {
        Workspace {
            space: Arc::new(Threaded),
            blocks: None,
            vectors: Vec::new(),
            history: Arc::new(Vec::new()),
        }
    }

    /// The same workspace with threads allowed (`true`, the default: [`Threaded`]) or not
    /// ([`Serial`]), for the drivers and everything they call (products, preconditioners,
    /// smoothers). Results are the same bits either way; turn threads off when you run many
    /// independent solves in parallel yourself.
    ///
    /// ```
    /// let ws = quintet::Workspace::<f64>::new().with_threads(false);
    /// assert!(!ws.space().threaded());
    /// ```
    pub fn with_threads(self, allowed: bool) -> Workspace<T> {
        if allowed {
            self.with_space(Arc::new(Threaded))
        } else {
            self.with_space(Arc::new(Serial))
        }
    }

    /// The same workspace running its solves in `space`.
    ///
    /// ```
    /// use std::sync::Arc;
    /// let ws = quintet::Workspace::<f64>::new().with_space(Arc::new(quintet::space::Serial));
    /// # let _ = ws;
    /// ```
    pub fn with_space(mut self, space: Arc<dyn Space>) -> Workspace<T> {
        if space.exact_sums() != self.space.exact_sums() {
            self.blocks = None; // the blocks are cut for the other kind of sums
        }
        self.space = space;
        self
    }

    /// The space solves with this workspace run in.
    ///
    /// ```
    /// assert!(quintet::Workspace::<f32>::new().space().threaded() == cfg!(feature = "parallel"));
    /// ```
    pub fn space(&self) -> &Arc<dyn Space> {
        &self.space
    }

    /// A workspace already sized for the drivers for symmetric systems (CG, PCG, steepest
    /// descent, SOR, SIP, multigrid) on `grid`. [`BiCgStab`](crate::BiCgStab) needs 6 work
    /// vectors and [`Gmres`](crate::Gmres) `m + 3`: they grow it at their first solve, and
    /// later solves allocate nothing.
    ///
    /// ```
    /// let ws = quintet::Workspace::<f32>::for_grid(quintet::Grid::new(100, 100)?);
    /// # let _ = ws;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn for_grid(grid: Grid) -> Workspace<T> {
        let mut ws = Workspace::new();
        ws.blocks = Some(Blocks::for_grid(grid));
        // A grid too large for these vectors fails with a typed error at its first solve.
        let _ = ws.size_vectors(grid.cells(), DRIVER_VECTORS + 1);
        ws
    }

    /// Blocks cut for `op`, rebuilt if the last solve was on another shape.
    pub(crate) fn blocks_for(&mut self, op: &(impl LinearOperator<T> + ?Sized)) {
        // An exact space cuts an operator without a grid per entry, so that its sums do not
        // depend on the cut (`Space::exact_sums`); grid operators keep whole rows.
        let per_entry = self.space.exact_sums() && op.on_grid().is_none();
        if !self
            .blocks
            .as_ref()
            .is_some_and(|b| b.fits(op) && (!per_entry || b.is_per_entry()))
        {
            self.blocks = Some(if per_entry {
                Blocks::per_entry(op.len())
            } else {
                Blocks::for_operator(op)
            });
        }
    }

    /// At least `count` vectors of `len` entries each.
    ///
    /// # Errors
    ///
    /// `TooLarge` if the memory is not granted.
    pub(crate) fn size_vectors(&mut self, len: usize, count: usize) -> Result<(), Error> {
        if self.vectors.len() < count {
            self.vectors.resize_with(count, Vec::new);
        }
        for v in self.vectors.iter_mut().take(count) {
            if v.len() != len {
                memory::refill("the workspace's vectors", v, len, T::zero())?;
            }
        }
        Ok(())
    }
}

impl<T: Scalar> Default for Workspace<T> {
    fn default() -> Workspace<T> {
        Workspace::new()
    }
}

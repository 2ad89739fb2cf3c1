//! Caller-owned scratch memory, reused across solves.

use crate::kernels::Kernels;
use crate::{Grid, Scalar};

/// Vectors a driver needs at most.
pub(crate) const MAX_VECTORS: usize = 4;

/// Scratch vectors, reduction buffers and the residual history of a solve. Create one and pass
/// it to every solve of a time loop or a calibration sweep: after the first solve on a grid,
/// nothing is allocated again (except the copy of the history in each [`Report`](crate::Report)).
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
    kernels: Option<Kernels<T>>,
    vectors: [Vec<T>; MAX_VECTORS],
    history: Vec<f64>,
    threads_allowed: bool,
}

impl<T: Scalar> Workspace<T> {
    /// An empty workspace; it sizes itself on first use.
    ///
    /// ```
    /// let ws = quintet::Workspace::<f64>::new();
    /// # let _ = ws;
    /// ```
    pub fn new() -> Workspace<T> {
        Workspace {
            kernels: None,
            vectors: Default::default(),
            history: Vec::new(),
            threads_allowed: true,
        }
    }

    /// The same workspace, with the drivers' kernels allowed (`true`, the default) or not
    /// allowed to use rayon's thread pool. Results are the same bits either way; turn threads
    /// off when you run many independent solves in parallel yourself.
    ///
    /// ```
    /// let ws = quintet::Workspace::<f64>::new().with_threads(false);
    /// # let _ = ws;
    /// ```
    pub fn with_threads(mut self, allowed: bool) -> Workspace<T> {
        self.threads_allowed = allowed;
        self.kernels = self.kernels.map(|k| k.with_threads(allowed));
        self
    }

    /// A workspace already sized for any driver on `grid`.
    ///
    /// ```
    /// let ws = quintet::Workspace::<f32>::for_grid(quintet::Grid::new(100, 100)?);
    /// # let _ = ws;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn for_grid(grid: Grid) -> Workspace<T> {
        let mut ws = Workspace::new();
        ws.parts(grid, MAX_VECTORS);
        ws
    }

    /// Kernels, the first `count` scratch vectors (each one entry per cell) and the history
    /// buffer, resized for `grid` if needed.
    pub(crate) fn parts(
        &mut self,
        grid: Grid,
        count: usize,
    ) -> (&mut Kernels<T>, &mut [Vec<T>; MAX_VECTORS], &mut Vec<f64>) {
        if self.kernels.as_ref().map(Kernels::grid) != Some(grid) {
            self.kernels = Some(Kernels::new(grid).with_threads(self.threads_allowed));
        }
        let n = grid.cells();
        for v in self.vectors.iter_mut().take(count) {
            if v.len() != n {
                v.clear();
                v.resize(n, T::zero());
            }
        }
        let kernels = self.kernels.get_or_insert_with(|| Kernels::new(grid));
        (kernels, &mut self.vectors, &mut self.history)
    }
}

impl<T: Scalar> Default for Workspace<T> {
    fn default() -> Workspace<T> {
        Workspace::new()
    }
}

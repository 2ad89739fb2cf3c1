//! The fused vector kernels the drivers run on, exposed for the benchmarks and the performance
//! report only (feature `bench-internals`). Not a stable interface: use the drivers.

use crate::blocks::Blocks;
use crate::space::Threaded;
use crate::{Grid, LinearOperator, Scalar};

/// The block kernels of one grid, run in the default [`Threaded`] space.
///
/// ```
/// use quintet::{kernels::Kernels, Grid};
/// let grid = Grid::new(300, 200)?;
/// let mut kernels = Kernels::<f64>::new(grid);
/// let (a, b) = (vec![0.5; grid.cells()], vec![4.0; grid.cells()]);
/// assert_eq!(kernels.dot(&a, &b), 2.0 * grid.cells() as f64);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Kernels<T> {
    blocks: Blocks<T>,
}

impl<T: Scalar> Kernels<T> {
    /// Kernels for vectors on `grid`.
    pub fn new(grid: Grid) -> Kernels<T> {
        Kernels {
            blocks: Blocks::for_grid(grid),
        }
    }

    /// `a·b`.
    pub fn dot(&mut self, a: &[T], b: &[T]) -> T {
        self.blocks.dot(&Threaded, a, b)
    }

    /// `y = A·x`.
    pub fn apply(&mut self, op: &(impl LinearOperator<T> + ?Sized), x: &[T], y: &mut [T]) {
        self.blocks.apply(&Threaded, op, x, y)
    }

    /// `q = A·p` on the free cells, returning `p·q`.
    pub fn apply_dot_free(
        &mut self,
        op: &(impl LinearOperator<T> + ?Sized),
        p: &[T],
        q: &mut [T],
    ) -> T {
        self.blocks.apply_dot_free(&Threaded, op, p, q)
    }

    /// `x += α·p`, `r −= α·q`; returns `(r·r, |α|·max|p|)`.
    pub fn cg_update(&mut self, alpha: T, p: &[T], q: &[T], x: &mut [T], r: &mut [T]) -> (T, T) {
        self.blocks.cg_update(&Threaded, alpha, p, q, x, r)
    }

    /// `p = z + β·p`.
    pub fn direction_update(&mut self, z: &[T], beta: T, p: &mut [T]) {
        self.blocks.direction_update(&Threaded, z, beta, p)
    }
}

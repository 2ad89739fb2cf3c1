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
    ///
    /// ```
    /// let kernels = quintet::kernels::Kernels::<f32>::new(quintet::Grid::new(10, 10)?);
    /// # let _ = kernels;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(grid: Grid) -> Kernels<T> {
        Kernels {
            blocks: Blocks::for_grid(grid),
        }
    }

    /// `a·b`.
    ///
    /// ```
    /// let mut k = quintet::kernels::Kernels::<f64>::new(quintet::Grid::new(3, 1)?);
    /// assert_eq!(k.dot(&[1.0, 2.0, 3.0], &[1.0, 1.0, 2.0]), 9.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn dot(&mut self, a: &[T], b: &[T]) -> T {
        self.blocks.dot(&Threaded, a, b)
    }

    /// `y = A·x`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 1)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mut y = vec![0.0; 3];
    /// quintet::kernels::Kernels::new(grid).apply(&op, &[1.0, 1.0, 1.0], &mut y);
    /// assert_eq!(y, vec![3.0, 2.0, 3.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn apply(&mut self, op: &(impl LinearOperator<T> + ?Sized), x: &[T], y: &mut [T]) {
        self.blocks.apply(&Threaded, op, x, y)
    }

    /// `q = A·p` on the free cells, returning `p·q`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 1)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mut q = vec![0.0; 3];
    /// let pq = quintet::kernels::Kernels::new(grid).apply_dot_free(&op, &[1.0, 1.0, 1.0], &mut q);
    /// assert_eq!(pq, 8.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn apply_dot_free(
        &mut self,
        op: &(impl LinearOperator<T> + ?Sized),
        p: &[T],
        q: &mut [T],
    ) -> T {
        self.blocks.apply_dot_free(&Threaded, op, p, q)
    }

    /// `x += α·p`, `r −= α·q`; returns `(r·r, |α|·max|p|)`.
    ///
    /// ```
    /// let mut k = quintet::kernels::Kernels::<f64>::new(quintet::Grid::new(2, 1)?);
    /// let (mut x, mut r) = (vec![0.0, 0.0], vec![1.0, 2.0]);
    /// let (rr, change) = k.cg_update(0.5, &[2.0, 0.0], &[2.0, 4.0], &mut x, &mut r);
    /// assert_eq!((x, r, rr, change), (vec![1.0, 0.0], vec![0.0, 0.0], 0.0, 1.0));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn cg_update(&mut self, alpha: T, p: &[T], q: &[T], x: &mut [T], r: &mut [T]) -> (T, T) {
        self.blocks.cg_update(&Threaded, alpha, p, q, x, r)
    }

    /// `p = z + β·p`.
    ///
    /// ```
    /// let mut k = quintet::kernels::Kernels::<f64>::new(quintet::Grid::new(2, 1)?);
    /// let mut p = vec![1.0, 2.0];
    /// k.direction_update(&[1.0, 1.0], 0.5, &mut p);
    /// assert_eq!(p, vec![1.5, 2.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn direction_update(&mut self, z: &[T], beta: T, p: &mut [T]) {
        self.blocks.direction_update(&Threaded, z, beta, p)
    }
}

//! Vector kernels: dot products, fused matrix–vector products and fused solution/residual
//! updates, serial or parallel (feature `parallel`), with bit-identical results whatever the
//! thread count.
//!
//! **Blocks.** Every vector is cut into fixed blocks of whole grid rows (about
//! [`BLOCK_CELLS`] cells, at least [`BLOCK_MIN_ROWS`] rows each; the cut depends only on the
//! grid). A kernel runs one block
//! function per block (serially, or on rayon's pool for large grids) and writes one partial
//! result per block into a buffer owned by [`Kernels`]; the partials are then combined in block
//! order. Since neither the blocks nor the combining order depend on the threads, neither do
//! the bits of the result.
//!
//! **The reduction seam.** Every global reduction (sum of a dot product, maximum of a change)
//! ends in one private function, `Kernels::finish`, the one place a distributed backend would turn rank-local
//! partials into global values (an all-reduce). Neighbour access goes through
//! [`Stencil5::apply_rows`], behind which a halo exchange can hide.
//!
//! **Fixed cells.** The `*_free` kernels write zero at fixed cells of the output, so fixed cells
//! carry an exactly zero residual and search direction.

use std::ops::Range;

#[cfg(feature = "parallel")]
use rayon::prelude::*;

use crate::stencil::Stencil5;
use crate::{FixedCells, Grid, Scalar};

/// Target number of cells per reduction block.
///
/// ```
/// assert!(quintet::kernels::BLOCK_CELLS >= 1024);
/// ```
pub const BLOCK_CELLS: usize = 16384;

/// Fewest grid rows per block (unless the grid has fewer): a block's product reads one row of
/// `x` beyond each of its ends, so short blocks would read `x` more than once.
///
/// ```
/// assert!(quintet::kernels::BLOCK_MIN_ROWS >= 1);
/// ```
pub const BLOCK_MIN_ROWS: usize = 8;

/// Grids with fewer cells than this run their kernels serially (same bits either way).
///
/// ```
/// // Grids below this size run serially; the results are the same bits either way.
/// assert!(quintet::kernels::PARALLEL_MIN_CELLS > quintet::kernels::BLOCK_CELLS);
/// ```
pub const PARALLEL_MIN_CELLS: usize = 1 << 15;

/// Blocked, deterministic vector kernels for one grid; holds the per-block partial sums so no
/// kernel allocates.
///
/// # Example
///
/// ```
/// use quintet::{kernels::Kernels, Grid};
///
/// let grid = Grid::new(300, 200)?;
/// let mut kernels = Kernels::<f64>::new(grid);
/// let a = vec![0.5; grid.cells()];
/// let b = vec![4.0; grid.cells()];
/// assert_eq!(kernels.dot(&a, &b), 2.0 * grid.cells() as f64);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Kernels<T> {
    grid: Grid,
    rows_per_block: usize,
    block_cells: usize,
    partials: Vec<(T, T)>,
    threads_allowed: bool,
}

impl<T: Scalar> Kernels<T> {
    /// Kernels for vectors on `grid`.
    ///
    /// ```
    /// let kernels = quintet::kernels::Kernels::<f32>::new(quintet::Grid::new(10, 10)?);
    /// assert_eq!(kernels.blocks(), 1);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(grid: Grid) -> Kernels<T> {
        let rows_per_block = (BLOCK_CELLS / grid.nx()).max(BLOCK_MIN_ROWS).min(grid.ny());
        let block_cells = rows_per_block * grid.nx();
        let blocks = grid.ny().div_ceil(rows_per_block);
        Kernels {
            grid,
            rows_per_block,
            block_cells,
            partials: vec![(T::zero(), T::zero()); blocks],
            threads_allowed: true,
        }
    }

    /// The same kernels, allowed (`true`, the default) or not allowed to use rayon's pool.
    /// Results are the same bits either way; run serially when you parallelise over many
    /// independent solves yourself (calibration runs, ensembles).
    ///
    /// ```
    /// let grid = quintet::Grid::new(300, 300)?;
    /// let mut serial = quintet::kernels::Kernels::<f64>::new(grid).with_threads(false);
    /// let mut threaded = quintet::kernels::Kernels::<f64>::new(grid);
    /// let v: Vec<f64> = (0..grid.cells()).map(|k| (k as f64).sin()).collect();
    /// assert_eq!(serial.dot(&v, &v).to_bits(), threaded.dot(&v, &v).to_bits());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn with_threads(mut self, allowed: bool) -> Kernels<T> {
        self.threads_allowed = allowed;
        self
    }

    /// The grid these kernels are cut for.
    ///
    /// ```
    /// let grid = quintet::Grid::new(10, 10)?;
    /// assert_eq!(quintet::kernels::Kernels::<f64>::new(grid).grid(), grid);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn grid(&self) -> Grid {
        self.grid
    }

    /// Number of reduction blocks.
    ///
    /// ```
    /// let kernels = quintet::kernels::Kernels::<f64>::new(quintet::Grid::new(1000, 1000)?);
    /// assert_eq!(kernels.blocks(), 63); // 16 rows of 1000 cells per block
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn blocks(&self) -> usize {
        self.partials.len()
    }

    /// `a·b`. Both slices must have one entry per cell (shorter slices are read only as far as
    /// they go).
    ///
    /// ```
    /// let mut k = quintet::kernels::Kernels::<f64>::new(quintet::Grid::new(3, 1)?);
    /// assert_eq!(k.dot(&[1.0, 2.0, 3.0], &[1.0, 1.0, 2.0]), 9.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn dot(&mut self, a: &[T], b: &[T]) -> T {
        let (a, b) = (self.clip(a), self.clip(b));
        self.reduce(|cells| (block_dot(slice(a, &cells), slice(b, &cells)), T::zero()))
            .0
    }

    /// `y = A·x` with the coefficients as given (no fixed-cell treatment).
    ///
    /// # Panics
    ///
    /// If `x` or `y` does not have one entry per cell of this grid. [`Stencil5::apply`] is the
    /// checked entry point.
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
    pub fn apply<S: Stencil5<T> + ?Sized>(&mut self, op: &S, x: &[T], y: &mut [T]) {
        self.map_blocks(y, |rows, _, y| {
            op.apply_rows(rows, x, y);
            (T::zero(), T::zero())
        });
    }

    /// `q = A·p` on the free cells (zero at fixed cells), returning `p·q`: the curvature of CG,
    /// taken in the same pass over memory.
    ///
    /// # Panics
    ///
    /// If `p` or `q` does not have one entry per cell of this grid.
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
    pub fn apply_dot_free<S: Stencil5<T> + ?Sized>(&mut self, op: &S, p: &[T], q: &mut [T]) -> T {
        let fixed = op.fixed_cells();
        self.map_blocks(q, |rows, cells, q| {
            op.apply_rows(rows, p, q);
            zero_fixed(fixed, &cells, q);
            (block_dot(slice(p, &cells), q), T::zero())
        })
        .0
    }

    /// `r = b − A·x` on the free cells (zero at fixed cells), returning `r·r`.
    ///
    /// # Panics
    ///
    /// If a slice does not have one entry per cell of this grid.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(2, 1)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mut r = vec![0.0; 2];
    /// let rr = quintet::kernels::Kernels::new(grid).residual_free(&op, &[3.0, 3.0], &[1.0, 1.0], &mut r);
    /// assert_eq!((r.clone(), rr), (vec![0.0, 0.0], 0.0));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn residual_free<S: Stencil5<T> + ?Sized>(
        &mut self,
        op: &S,
        b: &[T],
        x: &[T],
        r: &mut [T],
    ) -> T {
        let fixed = op.fixed_cells();
        self.map_blocks(r, |rows, cells, r| {
            op.apply_rows(rows, x, r);
            for (ri, &bi) in r.iter_mut().zip(slice(b, &cells)) {
                *ri = bi - *ri;
            }
            zero_fixed(fixed, &cells, r);
            (block_dot(r, r), T::zero())
        })
        .0
    }

    /// The CG update in one pass: `x += α·p`, `r −= α·q`; returns the new `r·r` and the largest
    /// change of the solution, `|α|·max|p|`.
    ///
    /// ```
    /// let mut k = quintet::kernels::Kernels::<f64>::new(quintet::Grid::new(2, 1)?);
    /// let (mut x, mut r) = (vec![0.0, 0.0], vec![1.0, 2.0]);
    /// let (rr, change) = k.cg_update(0.5, &[2.0, 0.0], &[2.0, 4.0], &mut x, &mut r);
    /// assert_eq!((x, r), (vec![1.0, 0.0], vec![0.0, 0.0]));
    /// assert_eq!((rr, change), (0.0, 1.0));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn cg_update(&mut self, alpha: T, p: &[T], q: &[T], x: &mut [T], r: &mut [T]) -> (T, T) {
        let (rr, pmax) = self.map_blocks_2(x, r, |cells, x, r| {
            let (p, q) = (slice(p, &cells), slice(q, &cells));
            let mut pmax = T::zero();
            for (xi, &pi) in x.iter_mut().zip(p) {
                *xi = *xi + alpha * pi;
                pmax = pmax.max(pi.abs());
            }
            for (ri, &qi) in r.iter_mut().zip(q) {
                *ri = *ri - alpha * qi;
            }
            (block_dot(r, r), pmax)
        });
        (rr, alpha.abs() * pmax)
    }

    /// The steepest-descent update in one pass: `x += α·r`, `r −= α·q`; returns the new `r·r`
    /// and the largest change of the solution, `|α|·max|r_old|`.
    ///
    /// ```
    /// let mut k = quintet::kernels::Kernels::<f64>::new(quintet::Grid::new(2, 1)?);
    /// let (mut x, mut r) = (vec![0.0, 0.0], vec![1.0, 1.0]);
    /// let (rr, change) = k.descent_update(1.0, &[1.0, 1.0], &mut x, &mut r);
    /// assert_eq!((x, rr, change), (vec![1.0, 1.0], 0.0, 1.0));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn descent_update(&mut self, alpha: T, q: &[T], x: &mut [T], r: &mut [T]) -> (T, T) {
        let (rr, rmax) = self.map_blocks_2(x, r, |cells, x, r| {
            let mut rmax = T::zero();
            for ((xi, ri), &qi) in x.iter_mut().zip(r.iter_mut()).zip(slice(q, &cells)) {
                *xi = *xi + alpha * *ri;
                rmax = rmax.max(ri.abs());
                *ri = *ri - alpha * qi;
            }
            (block_dot(r, r), rmax)
        });
        (rr, alpha.abs() * rmax)
    }

    /// `p = z + β·p` (the CG direction update; no reduction).
    ///
    /// ```
    /// let mut k = quintet::kernels::Kernels::<f64>::new(quintet::Grid::new(2, 1)?);
    /// let mut p = vec![1.0, 2.0];
    /// k.direction_update(&[1.0, 1.0], 0.5, &mut p);
    /// assert_eq!(p, vec![1.5, 2.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn direction_update(&mut self, z: &[T], beta: T, p: &mut [T]) {
        self.map_blocks(p, |_, cells, p| {
            for (pi, &zi) in p.iter_mut().zip(slice(z, &cells)) {
                *pi = zi + beta * *pi;
            }
            (T::zero(), T::zero())
        });
    }

    /// Run `f(cells, out_block)` on every block of `out`, in parallel for large grids, and
    /// combine the partials. Exposed to the crate for preconditioners' elementwise work.
    pub(crate) fn map_blocks<F>(&mut self, out: &mut [T], f: F) -> (T, T)
    where
        F: Fn(Range<usize>, Range<usize>, &mut [T]) -> (T, T) + Sync,
    {
        let (rpb, bc, ny) = (self.rows_per_block, self.block_cells, self.grid.ny());
        let n = self.grid.cells();
        let body = |(b, (out, part)): (usize, (&mut [T], &mut (T, T)))| {
            let rows = b * rpb..((b + 1) * rpb).min(ny);
            let cells = b * bc..((b + 1) * bc).min(n);
            *part = f(rows, cells, out);
        };
        let len = n.min(out.len());
        let out = &mut out[..len];
        #[cfg(feature = "parallel")]
        if self.parallel() {
            out.par_chunks_mut(bc)
                .zip(self.partials.par_iter_mut())
                .enumerate()
                .for_each(body);
            return self.finish();
        }
        out.chunks_mut(bc)
            .zip(self.partials.iter_mut())
            .enumerate()
            .for_each(body);
        self.finish()
    }

    /// As [`Kernels::map_blocks`] with two outputs cut into the same blocks.
    fn map_blocks_2<F>(&mut self, out1: &mut [T], out2: &mut [T], f: F) -> (T, T)
    where
        F: Fn(Range<usize>, &mut [T], &mut [T]) -> (T, T) + Sync,
    {
        let (bc, n) = (self.block_cells, self.grid.cells());
        let body = |(b, ((o1, o2), part)): (usize, (Pair<'_, T>, &mut (T, T)))| {
            *part = f(b * bc..((b + 1) * bc).min(n), o1, o2);
        };
        let len = n.min(out1.len());
        let out1 = &mut out1[..len];
        let len = n.min(out2.len());
        let out2 = &mut out2[..len];
        #[cfg(feature = "parallel")]
        if self.parallel() {
            out1.par_chunks_mut(bc)
                .zip(out2.par_chunks_mut(bc))
                .zip(self.partials.par_iter_mut())
                .enumerate()
                .for_each(body);
            return self.finish();
        }
        out1.chunks_mut(bc)
            .zip(out2.chunks_mut(bc))
            .zip(self.partials.iter_mut())
            .enumerate()
            .for_each(body);
        self.finish()
    }

    /// As [`Kernels::map_blocks`] with no output.
    fn reduce<F>(&mut self, f: F) -> (T, T)
    where
        F: Fn(Range<usize>) -> (T, T) + Sync,
    {
        let (bc, n) = (self.block_cells, self.grid.cells());
        let body = |(b, part): (usize, &mut (T, T))| *part = f(b * bc..((b + 1) * bc).min(n));
        #[cfg(feature = "parallel")]
        if self.parallel() {
            self.partials.par_iter_mut().enumerate().for_each(body);
            return self.finish();
        }
        self.partials.iter_mut().enumerate().for_each(body);
        self.finish()
    }

    /// The reduction seam: block partials, combined in block order, become the global
    /// `(sum, max)`. A distributed backend all-reduces here.
    fn finish(&self) -> (T, T) {
        self.partials
            .iter()
            .fold((T::zero(), T::zero()), |(s, m), &(ps, pm)| {
                (s + ps, m.max(pm))
            })
    }

    #[cfg(feature = "parallel")]
    fn parallel(&self) -> bool {
        self.threads_allowed && self.grid.cells() >= PARALLEL_MIN_CELLS
    }

    fn clip<'a>(&self, v: &'a [T]) -> &'a [T] {
        &v[..self.grid.cells().min(v.len())]
    }
}

/// Two output blocks cut alike.
type Pair<'a, T> = (&'a mut [T], &'a mut [T]);

/// `v[cells]`, clipped to what `v` holds.
#[inline]
pub(crate) fn slice<'a, T>(v: &'a [T], cells: &Range<usize>) -> &'a [T] {
    let end = cells.end.min(v.len());
    &v[cells.start.min(end)..end]
}

/// Zero the entries of `out` (which covers `cells`) at fixed cells.
#[inline]
pub(crate) fn zero_fixed<T: Scalar>(
    fixed: Option<&FixedCells>,
    cells: &Range<usize>,
    out: &mut [T],
) {
    if let Some(fixed) = fixed {
        for &k in fixed.in_range(cells.clone()) {
            if let Some(v) = out.get_mut(k - cells.start) {
                *v = T::zero();
            }
        }
    }
}

/// Dot product of one block with four running sums, combined in a fixed order.
#[inline]
pub(crate) fn block_dot<T: Scalar>(a: &[T], b: &[T]) -> T {
    let n = a.len().min(b.len());
    let (a, b) = (&a[..n], &b[..n]);
    let mut acc = [T::zero(); 4];
    let (a4, b4) = (a.chunks_exact(4), b.chunks_exact(4));
    let (ra, rb) = (a4.remainder(), b4.remainder());
    for (x, y) in a4.zip(b4) {
        for l in 0..4 {
            acc[l] = acc[l] + x[l] * y[l];
        }
    }
    let mut tail = T::zero();
    for (&x, &y) in ra.iter().zip(rb) {
        tail = tail + x * y;
    }
    ((acc[0] + acc[1]) + (acc[2] + acc[3])) + tail
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn block_dot_matches_naive_sum_on_integers() {
        let a: Vec<f64> = (0..1003).map(|v| v as f64).collect();
        let naive: f64 = a.iter().map(|v| v * v).sum();
        assert_eq!(block_dot(&a, &a), naive);
    }

    #[test]
    fn blocks_cover_every_cell_once() {
        for (nx, ny) in [(1, 1), (1, 9000), (9000, 1), (333, 77), (64, 64)] {
            let grid = Grid::new(nx, ny).unwrap();
            let mut k = Kernels::<f64>::new(grid);
            let ones = vec![1.0; grid.cells()];
            assert_eq!(k.dot(&ones, &ones), grid.cells() as f64, "{nx} x {ny}");
        }
    }
}

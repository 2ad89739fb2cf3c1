//! The block executor and the fused vector kernels built on it.
//!
//! Every vector is cut into fixed blocks of consecutive unknowns: whole grid rows for a grid
//! operator (about [`BLOCK_CELLS`] cells and at least [`BLOCK_MIN_ROWS`] rows per block), runs
//! of [`BLOCK_CELLS`] otherwise. The cut depends only on the vector's length and grid. A kernel
//! runs one function per block — on the calling thread, or on rayon's pool when the
//! [`Space`] allows threads and the vector is long enough — and a reducing kernel writes one
//! partial per block, which the space combines in block order. Neither the blocks nor the
//! combining order depend on the threads, so neither do the bits of any result.
//!
//! This is the only place in the crate that starts parallel work, and (with [`crate::space`])
//! the only place block partials become global values.
//!
//! **Fixed cells.** The `*_free` kernels write zero at fixed cells of the output, so fixed cells
//! carry an exactly zero residual and search direction.

use std::ops::Range;

#[cfg(feature = "parallel")]
use rayon::prelude::*;

use crate::grid::Grid;
use crate::operator::{FixedCells, LinearOperator};
#[cfg(feature = "parallel")]
use crate::space::PARALLEL_MIN_CELLS;
use crate::space::{Combine, Space, BLOCK_CELLS, BLOCK_MIN_ROWS};
use crate::Scalar;

/// The two partials every reducing kernel produces per block: a sum and a maximum.
const WIDTH: usize = 2;
const OPS: [Combine; WIDTH] = [Combine::Sum, Combine::Max];

/// The block cut of one vector length (and grid), with the per-block partials buffer, so that
/// no kernel allocates.
#[derive(Clone, Debug)]
pub(crate) struct Blocks<T> {
    len: usize,
    grid: Option<Grid>,
    block: usize,
    partials: Vec<T>,
}

impl<T: Scalar> Blocks<T> {
    /// Blocks for vectors of `len` entries, the cells of `grid` if given.
    pub(crate) fn new(len: usize, grid: Option<Grid>) -> Blocks<T> {
        let block = match grid {
            Some(g) => {
                let rows = (BLOCK_CELLS / g.nx()).max(BLOCK_MIN_ROWS).min(g.ny());
                rows * g.nx()
            }
            None => BLOCK_CELLS.min(len).max(1),
        };
        let count = len.div_ceil(block);
        Blocks {
            len,
            grid,
            block,
            partials: vec![T::zero(); WIDTH * count],
        }
    }

    /// Blocks of one entry each for vectors of `len` entries: every reduction partial is one
    /// rounded value, for spaces whose sums are exact ([`Space::exact_sums`]).
    pub(crate) fn per_entry(len: usize) -> Blocks<T> {
        Blocks {
            len,
            grid: None,
            block: 1,
            partials: vec![T::zero(); WIDTH * len],
        }
    }

    /// Whether these blocks hold one entry each.
    pub(crate) fn is_per_entry(&self) -> bool {
        self.block == 1
    }

    /// Blocks for the vectors of `op`.
    pub(crate) fn for_operator(op: &(impl LinearOperator<T> + ?Sized)) -> Blocks<T> {
        Blocks::new(op.len(), op.on_grid())
    }

    /// Blocks for the cells of `grid`.
    pub(crate) fn for_grid(grid: Grid) -> Blocks<T> {
        Blocks::new(grid.cells(), Some(grid))
    }

    /// Whether these blocks cut vectors of `op`.
    pub(crate) fn fits(&self, op: &(impl LinearOperator<T> + ?Sized)) -> bool {
        self.len == op.len() && self.grid == op.on_grid()
    }

    /// `a·b`.
    pub(crate) fn dot(&mut self, space: &dyn Space, a: &[T], b: &[T]) -> T {
        let (a, b) = (self.clip(a), self.clip(b));
        self.reduce(space, |cells| {
            (block_dot(slice(a, &cells), slice(b, &cells)), T::zero())
        })
        .0
    }

    /// `y = A·x` with the rows as given (no fixed-cell treatment, no reduction).
    pub(crate) fn apply(
        &mut self,
        space: &dyn Space,
        op: &(impl LinearOperator<T> + ?Sized),
        x: &[T],
        y: &mut [T],
    ) {
        op.exchange_halo(x);
        self.for_each(space, y, |cells, y| op.apply_block(cells, x, y));
    }

    /// `q = A·p` on the free cells (zero at fixed cells), returning `p·q`: the curvature of CG,
    /// taken in the same pass over memory.
    pub(crate) fn apply_dot_free(
        &mut self,
        space: &dyn Space,
        op: &(impl LinearOperator<T> + ?Sized),
        p: &[T],
        q: &mut [T],
    ) -> T {
        self.apply_free_dot(space, op, p, q, p)
    }

    /// `r = b − A·x` on the free cells (zero at fixed cells), returning `r·r`.
    pub(crate) fn residual_free(
        &mut self,
        space: &dyn Space,
        op: &(impl LinearOperator<T> + ?Sized),
        b: &[T],
        x: &[T],
        r: &mut [T],
    ) -> T {
        let fixed = op.fixed_cells();
        op.exchange_halo(x);
        self.map(space, r, |cells, r| {
            op.apply_block(cells.clone(), x, r);
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
    pub(crate) fn cg_update(
        &mut self,
        space: &dyn Space,
        alpha: T,
        p: &[T],
        q: &[T],
        x: &mut [T],
        r: &mut [T],
    ) -> (T, T) {
        let (rr, pmax) = self.map2(space, x, r, |cells, x, r| {
            let (p, q) = (slice(p, &cells), slice(q, &cells));
            let pmax = axpy_largest(alpha, p, x);
            (subtract_norm(alpha, q, r), pmax)
        });
        (rr, alpha.abs() * pmax)
    }

    /// The steepest-descent update in one pass: `x += α·r`, `r −= α·q`; returns the new `r·r`
    /// and the largest change of the solution, `|α|·max|r_old|`.
    pub(crate) fn descent_update(
        &mut self,
        space: &dyn Space,
        alpha: T,
        q: &[T],
        x: &mut [T],
        r: &mut [T],
    ) -> (T, T) {
        let (rr, rmax) = self.map2(space, x, r, |cells, x, r| {
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
    pub(crate) fn direction_update(&mut self, space: &dyn Space, z: &[T], beta: T, p: &mut [T]) {
        self.for_each(space, p, |cells, p| {
            for (pi, &zi) in p.iter_mut().zip(slice(z, &cells)) {
                *pi = zi + beta * *pi;
            }
        });
    }

    /// `y = A·x` on the free cells (zero at fixed cells), returning `y·other` taken in the
    /// same pass (BiCGSTAB's `r̂·A·p̂` and `t·s`).
    pub(crate) fn apply_free_dot(
        &mut self,
        space: &dyn Space,
        op: &(impl LinearOperator<T> + ?Sized),
        x: &[T],
        y: &mut [T],
        other: &[T],
    ) -> T {
        let fixed = op.fixed_cells();
        op.exchange_halo(x);
        self.map(space, y, |cells, y| {
            op.apply_block(cells.clone(), x, y);
            zero_fixed(fixed, &cells, y);
            (block_dot(slice(other, &cells), y), T::zero())
        })
        .0
    }

    /// `y = A·x` on the free cells (zero at fixed cells), returning `(y·other, y·y)` from one
    /// pass and one reduction (BiCGSTAB's `t·s` and `t·t`).
    pub(crate) fn apply_free_dot_norm(
        &mut self,
        space: &dyn Space,
        op: &(impl LinearOperator<T> + ?Sized),
        x: &[T],
        y: &mut [T],
        other: &[T],
    ) -> (T, T) {
        let fixed = op.fixed_cells();
        let sums = [Combine::Sum, Combine::Sum];
        op.exchange_halo(x);
        self.map_with(
            space,
            y,
            |cells, y| {
                op.apply_block(cells.clone(), x, y);
                zero_fixed(fixed, &cells, y);
                (block_dot(slice(other, &cells), y), block_dot(y, y))
            },
            &sums,
        )
    }

    /// `y = A·x` on the free cells (zero at fixed cells); no reduction.
    pub(crate) fn apply_free(
        &mut self,
        space: &dyn Space,
        op: &(impl LinearOperator<T> + ?Sized),
        x: &[T],
        y: &mut [T],
    ) {
        let fixed = op.fixed_cells();
        op.exchange_halo(x);
        self.for_each(space, y, |cells, y| {
            op.apply_block(cells.clone(), x, y);
            zero_fixed(fixed, &cells, y);
        });
    }

    /// `out = a·x` (no reduction).
    pub(crate) fn scale_into(&mut self, space: &dyn Space, a: T, x: &[T], out: &mut [T]) {
        self.for_each(space, out, |cells, out| {
            for (oi, &xi) in out.iter_mut().zip(slice(x, &cells)) {
                *oi = a * xi;
            }
        });
    }

    /// `y = a·y` (no reduction).
    pub(crate) fn scale(&mut self, space: &dyn Space, a: T, y: &mut [T]) {
        self.for_each(space, y, |_, y| {
            for yi in y.iter_mut() {
                *yi = a * *yi;
            }
        });
    }

    /// `y += a·x` (no reduction).
    pub(crate) fn axpy(&mut self, space: &dyn Space, a: T, x: &[T], y: &mut [T]) {
        self.for_each(space, y, |cells, y| {
            for (yi, &xi) in y.iter_mut().zip(slice(x, &cells)) {
                *yi = *yi + a * xi;
            }
        });
    }

    /// `y += a·x`, returning `y·other` of the updated `y` in the same pass (one step of
    /// modified Gram–Schmidt fused with the next projection).
    pub(crate) fn axpy_dot(
        &mut self,
        space: &dyn Space,
        a: T,
        x: &[T],
        y: &mut [T],
        other: &[T],
    ) -> T {
        self.map(space, y, |cells, y| {
            for (yi, &xi) in y.iter_mut().zip(slice(x, &cells)) {
                *yi = *yi + a * xi;
            }
            (block_dot(slice(other, &cells), y), T::zero())
        })
        .0
    }

    /// `y += a·x`, returning `y·y` of the updated `y` in the same pass.
    pub(crate) fn axpy_norm(&mut self, space: &dyn Space, a: T, x: &[T], y: &mut [T]) -> T {
        self.map(space, y, |cells, y| {
            for (yi, &xi) in y.iter_mut().zip(slice(x, &cells)) {
                *yi = *yi + a * xi;
            }
            (block_dot(y, y), T::zero())
        })
        .0
    }

    /// The BiCGSTAB direction update `p = r + β·(p − ω·v)` (no reduction).
    pub(crate) fn bicg_direction(
        &mut self,
        space: &dyn Space,
        r: &[T],
        beta: T,
        omega: T,
        v: &[T],
        p: &mut [T],
    ) {
        self.for_each(space, p, |cells, p| {
            let (r, v) = (slice(r, &cells), slice(v, &cells));
            for ((pi, &ri), &vi) in p.iter_mut().zip(r).zip(v) {
                *pi = ri + beta * (*pi - omega * vi);
            }
        });
    }

    /// The end of a BiCGSTAB iteration in one pass: `x += α·p̂ + ω·ŝ` and `r −= ω·t` (`r`
    /// holds `s` on entry; `s_hat` is `None` when `ŝ = s`, without a preconditioner). Returns
    /// the new `r·r` and the largest change of the solution.
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn bicgstab_update(
        &mut self,
        space: &dyn Space,
        alpha: T,
        p_hat: &[T],
        omega: T,
        s_hat: Option<&[T]>,
        t: &[T],
        x: &mut [T],
        r: &mut [T],
    ) -> (T, T) {
        self.map2(space, x, r, |cells, x, r| {
            let (p_hat, t) = (slice(p_hat, &cells), slice(t, &cells));
            let s_hat = s_hat.map(|v| slice(v, &cells));
            let mut largest = T::zero();
            for (k, (xi, ri)) in x.iter_mut().zip(r.iter_mut()).enumerate() {
                let sk = s_hat.map_or(*ri, |v| v[k]);
                let d = alpha * p_hat[k] + omega * sk;
                *xi = *xi + d;
                largest = largest.max(d.abs());
                *ri = *ri - omega * t[k];
            }
            (block_dot(r, r), largest)
        })
    }

    /// `x += a·p + b·q`; returns the largest change `|a·p + b·q|`.
    pub(crate) fn add_two_largest(
        &mut self,
        space: &dyn Space,
        a: T,
        p: &[T],
        b: T,
        q: &[T],
        x: &mut [T],
    ) -> T {
        self.map(space, x, |cells, x| {
            let (p, q) = (slice(p, &cells), slice(q, &cells));
            let mut largest = T::zero();
            for ((xi, &pi), &qi) in x.iter_mut().zip(p).zip(q) {
                let d = a * pi + b * qi;
                *xi = *xi + d;
                largest = largest.max(d.abs());
            }
            (T::zero(), largest)
        })
        .1
    }

    /// `x += d` on every entry; returns the largest `|d|`.
    pub(crate) fn add_largest(&mut self, space: &dyn Space, d: &[T], x: &mut [T]) -> T {
        self.map(space, x, |cells, x| {
            let mut largest = T::zero();
            for (xi, &di) in x.iter_mut().zip(slice(d, &cells)) {
                *xi = *xi + di;
                largest = largest.max(di.abs());
            }
            (T::zero(), largest)
        })
        .1
    }

    /// Run `f(cells, out_block)` on every block of `out`, in parallel when `space` allows it.
    /// No reduction.
    pub(crate) fn for_each<F>(&mut self, space: &dyn Space, out: &mut [T], f: F)
    where
        F: Fn(Range<usize>, &mut [T]) + Sync,
    {
        let (bc, n) = (self.block, self.len);
        let len = n.min(out.len());
        let out = &mut out[..len];
        let body = |(b, out): (usize, &mut [T])| f(b * bc..((b + 1) * bc).min(n), out);
        #[cfg(feature = "parallel")]
        if self.parallel(space) {
            out.par_chunks_mut(bc).enumerate().for_each(body);
            return;
        }
        #[cfg(not(feature = "parallel"))]
        let _ = space;
        out.chunks_mut(bc).enumerate().for_each(body);
    }

    /// Run `f(cells, out_block)` on every block of `out`, in parallel when `space` allows it,
    /// and combine the `(sum, max)` partials through `space`.
    pub(crate) fn map<F>(&mut self, space: &dyn Space, out: &mut [T], f: F) -> (T, T)
    where
        F: Fn(Range<usize>, &mut [T]) -> (T, T) + Sync,
    {
        self.map_with(space, out, f, &OPS)
    }

    /// As [`Blocks::map`], the two partials combined by `ops`.
    fn map_with<F>(
        &mut self,
        space: &dyn Space,
        out: &mut [T],
        f: F,
        ops: &[Combine; WIDTH],
    ) -> (T, T)
    where
        F: Fn(Range<usize>, &mut [T]) -> (T, T) + Sync,
    {
        let (bc, n) = (self.block, self.len);
        let len = n.min(out.len());
        let out = &mut out[..len];
        let body = |(b, (out, part)): (usize, (&mut [T], &mut [T]))| {
            let (s, m) = f(b * bc..((b + 1) * bc).min(n), out);
            part[0] = s;
            part[1] = m;
        };
        #[cfg(feature = "parallel")]
        if self.parallel(space) {
            out.par_chunks_mut(bc)
                .zip(self.partials.par_chunks_mut(WIDTH))
                .enumerate()
                .for_each(body);
            return self.finish_with(space, ops);
        }
        out.chunks_mut(bc)
            .zip(self.partials.chunks_mut(WIDTH))
            .enumerate()
            .for_each(body);
        self.finish_with(space, ops)
    }

    /// As [`Blocks::map`] with two outputs cut into the same blocks.
    fn map2<F>(&mut self, space: &dyn Space, out1: &mut [T], out2: &mut [T], f: F) -> (T, T)
    where
        F: Fn(Range<usize>, &mut [T], &mut [T]) -> (T, T) + Sync,
    {
        let (bc, n) = (self.block, self.len);
        let body = |(b, ((o1, o2), part)): (usize, (Pair<'_, T>, &mut [T]))| {
            let (s, m) = f(b * bc..((b + 1) * bc).min(n), o1, o2);
            part[0] = s;
            part[1] = m;
        };
        let len = n.min(out1.len());
        let out1 = &mut out1[..len];
        let len = n.min(out2.len());
        let out2 = &mut out2[..len];
        #[cfg(feature = "parallel")]
        if self.parallel(space) {
            out1.par_chunks_mut(bc)
                .zip(out2.par_chunks_mut(bc))
                .zip(self.partials.par_chunks_mut(WIDTH))
                .enumerate()
                .for_each(body);
            return self.finish(space);
        }
        out1.chunks_mut(bc)
            .zip(out2.chunks_mut(bc))
            .zip(self.partials.chunks_mut(WIDTH))
            .enumerate()
            .for_each(body);
        self.finish(space)
    }

    /// As [`Blocks::map`] with no output.
    fn reduce<F>(&mut self, space: &dyn Space, f: F) -> (T, T)
    where
        F: Fn(Range<usize>) -> (T, T) + Sync,
    {
        let (bc, n) = (self.block, self.len);
        let body = |(b, part): (usize, &mut [T])| {
            let (s, m) = f(b * bc..((b + 1) * bc).min(n));
            part[0] = s;
            part[1] = m;
        };
        #[cfg(feature = "parallel")]
        if self.parallel(space) {
            self.partials
                .par_chunks_mut(WIDTH)
                .enumerate()
                .for_each(body);
            return self.finish(space);
        }
        self.partials.chunks_mut(WIDTH).enumerate().for_each(body);
        self.finish(space)
    }

    /// The reduction seam: block partials become the global `(sum, max)` in `space`.
    fn finish(&self, space: &dyn Space) -> (T, T) {
        self.finish_with(space, &OPS)
    }

    /// The reduction seam with the two columns combined by `ops`.
    fn finish_with(&self, space: &dyn Space, ops: &[Combine; WIDTH]) -> (T, T) {
        let mut out = [T::zero(); WIDTH];
        T::combine(space, &self.partials, ops, &mut out);
        (out[0], out[1])
    }

    #[cfg(feature = "parallel")]
    fn parallel(&self, space: &dyn Space) -> bool {
        self.len >= PARALLEL_MIN_CELLS && space.threaded()
    }

    fn clip<'a>(&self, v: &'a [T]) -> &'a [T] {
        &v[..self.len.min(v.len())]
    }
}

/// How many threads `space` lets work of `cells` entries run on: rayon's current pool when the
/// space is threaded and the work is at least [`PARALLEL_MIN_CELLS`] long, else 1. Callers cut
/// their work by it only in ways that leave the bits of the result unchanged.
pub(crate) fn threads_for(space: &dyn Space, cells: usize) -> usize {
    #[cfg(feature = "parallel")]
    if space.threaded() && cells >= PARALLEL_MIN_CELLS {
        return rayon::current_num_threads();
    }
    let _ = (space, cells);
    1
}

/// `(a(), b())`, the two on rayon's pool side by side when `parallel` (and the crate is built
/// with threads), else one after the other.
pub(crate) fn join<A, B, RA, RB>(parallel: bool, a: A, b: B) -> (RA, RB)
where
    A: FnOnce() -> RA + Send,
    B: FnOnce() -> RB + Send,
    RA: Send,
    RB: Send,
{
    #[cfg(feature = "parallel")]
    if parallel {
        return rayon::join(a, b);
    }
    let _ = parallel;
    (a(), b())
}

impl Blocks<f64> {
    /// `a·b` with `b` widened from `f32` entry by entry: the bits of [`Blocks::dot`] on the
    /// widened vector, without writing it out (`f64::from` is exact).
    pub(crate) fn dot_widened(&mut self, space: &dyn Space, a: &[f64], b: &[f32]) -> f64 {
        let a = self.clip(a);
        let b = &b[..self.len.min(b.len())];
        self.reduce(space, |cells| {
            (block_dot_widened(slice(a, &cells), slice(b, &cells)), 0.0)
        })
        .0
    }

    /// [`Blocks::cg_update`] with the new `r` also rounded to `f32` into `low` in the same
    /// pass (the bits of `cg_update` followed by rounding `r`).
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn cg_update_rounding(
        &mut self,
        space: &dyn Space,
        alpha: f64,
        p: &[f64],
        q: &[f64],
        x: &mut [f64],
        r: &mut [f64],
        low: &mut [f32],
    ) -> (f64, f64) {
        let (bc, n) = (self.block, self.len);
        let body = |(b, (((x, r), low), part)): (usize, (Rounding<'_>, &mut [f64]))| {
            let cells = b * bc..((b + 1) * bc).min(n);
            let (p, q) = (slice(p, &cells), slice(q, &cells));
            part[1] = axpy_largest(alpha, p, x);
            part[0] = subtract_norm(alpha, q, r);
            for (l, &h) in low.iter_mut().zip(r.iter()) {
                *l = h as f32;
            }
        };
        let len = n.min(x.len());
        let x = &mut x[..len];
        let len = n.min(r.len());
        let r = &mut r[..len];
        let len = n.min(low.len());
        let low = &mut low[..len];
        #[cfg(feature = "parallel")]
        if self.parallel(space) {
            x.par_chunks_mut(bc)
                .zip(r.par_chunks_mut(bc))
                .zip(low.par_chunks_mut(bc))
                .zip(self.partials.par_chunks_mut(WIDTH))
                .enumerate()
                .for_each(body);
            let (rr, pmax) = self.finish(space);
            return (rr, alpha.abs() * pmax);
        }
        x.chunks_mut(bc)
            .zip(r.chunks_mut(bc))
            .zip(low.chunks_mut(bc))
            .zip(self.partials.chunks_mut(WIDTH))
            .enumerate()
            .for_each(body);
        let (rr, pmax) = self.finish(space);
        (rr, alpha.abs() * pmax)
    }

    /// `p = z + β·p` with `z` widened from `f32` (`p = z` without `β`): the bits of
    /// [`Blocks::direction_update`] (or of a copy) on the widened vector (no reduction).
    pub(crate) fn direction_widened(
        &mut self,
        space: &dyn Space,
        z: &[f32],
        beta: Option<f64>,
        p: &mut [f64],
    ) {
        self.for_each(space, p, |cells, p| {
            let z = slice(z, &cells);
            match beta {
                Some(beta) => {
                    for (pi, &zi) in p.iter_mut().zip(z) {
                        *pi = f64::from(zi) + beta * *pi;
                    }
                }
                None => {
                    for (pi, &zi) in p.iter_mut().zip(z) {
                        *pi = f64::from(zi);
                    }
                }
            }
        });
    }
}

/// Two output blocks cut alike.
type Pair<'a, T> = (&'a mut [T], &'a mut [T]);

/// `x` and `r` blocks with the `f32` block `r` is rounded into, cut alike.
type Rounding<'a> = (Pair<'a, f64>, &'a mut [f32]);

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

/// `x += a·p` on one block, returning `max|p|` (zero for an empty block; NaN entries of `p`
/// are passed over, as `max` does). Four running maxima, so that the loop vectorises: the
/// largest of a set does not depend on the order it is taken in, so neither do the bits.
#[inline]
fn axpy_largest<T: Scalar>(a: T, p: &[T], x: &mut [T]) -> T {
    let larger = |m: T, v: T| if v > m { v } else { m };
    let n = x.len().min(p.len());
    let (x, p) = (&mut x[..n], &p[..n]);
    let mut lanes = [T::zero(); 4];
    let mut x4 = x.chunks_exact_mut(4);
    let p4 = p.chunks_exact(4);
    let rp = p4.remainder();
    for (xs, ps) in (&mut x4).zip(p4) {
        for l in 0..4 {
            xs[l] = xs[l] + a * ps[l];
            lanes[l] = larger(lanes[l], ps[l].abs());
        }
    }
    let mut largest = larger(larger(lanes[0], lanes[1]), larger(lanes[2], lanes[3]));
    for (xi, &pi) in x4.into_remainder().iter_mut().zip(rp) {
        *xi = *xi + a * pi;
        largest = larger(largest, pi.abs());
    }
    largest
}

/// `r −= a·q` on one block, returning the new `r·r` from the same loop: the bits of the
/// update followed by [`block_dot`]`(r, r)` (the same four running sums, in the same order).
#[inline]
fn subtract_norm<T: Scalar>(a: T, q: &[T], r: &mut [T]) -> T {
    let n = r.len().min(q.len());
    let (r, q) = (&mut r[..n], &q[..n]);
    let mut acc = [T::zero(); 4];
    let mut r4 = r.chunks_exact_mut(4);
    let q4 = q.chunks_exact(4);
    let rq = q4.remainder();
    for (rs, qs) in (&mut r4).zip(q4) {
        for l in 0..4 {
            rs[l] = rs[l] - a * qs[l];
            acc[l] = acc[l] + rs[l] * rs[l];
        }
    }
    let mut tail = T::zero();
    for (ri, &qi) in r4.into_remainder().iter_mut().zip(rq) {
        *ri = *ri - a * qi;
        tail = tail + *ri * *ri;
    }
    ((acc[0] + acc[1]) + (acc[2] + acc[3])) + tail
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

/// [`block_dot`] of `a` with `b` widened from `f32`, in the same order (the same bits as
/// [`block_dot`] on the widened copy).
#[inline]
fn block_dot_widened(a: &[f64], b: &[f32]) -> f64 {
    let n = a.len().min(b.len());
    let (a, b) = (&a[..n], &b[..n]);
    let mut acc = [0.0f64; 4];
    let (a4, b4) = (a.chunks_exact(4), b.chunks_exact(4));
    let (ra, rb) = (a4.remainder(), b4.remainder());
    for (x, y) in a4.zip(b4) {
        for l in 0..4 {
            acc[l] += x[l] * f64::from(y[l]);
        }
    }
    let mut tail = 0.0;
    for (&x, &y) in ra.iter().zip(rb) {
        tail += x * f64::from(y);
    }
    ((acc[0] + acc[1]) + (acc[2] + acc[3])) + tail
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::space::Threaded;

    #[test]
    fn block_dot_matches_naive_sum_on_integers() {
        let a: Vec<f64> = (0..1003).map(|v| v as f64).collect();
        let naive: f64 = a.iter().map(|v| v * v).sum();
        assert_eq!(block_dot(&a, &a), naive);
    }

    #[test]
    fn axpy_largest_matches_the_running_max() {
        for n in [0, 1, 3, 4, 7, 8, 1001] {
            let mut p: Vec<f64> = (0..n)
                .map(|k| ((k * 37 % 101) as f64 - 50.0) * 0.3)
                .collect();
            if n > 5 {
                p[5] = f64::NAN; // passed over by `max`, and so by the kernel
            }
            let x0: Vec<f64> = (0..n).map(|k| k as f64 * 0.1).collect();
            let (mut x, mut naive_x) = (x0.clone(), x0);
            let mut naive = 0.0f64;
            for (xi, &pi) in naive_x.iter_mut().zip(&p) {
                *xi += 0.7 * pi;
                naive = naive.max(pi.abs());
            }
            assert_eq!(
                axpy_largest(0.7, &p, &mut x).to_bits(),
                naive.to_bits(),
                "{n}"
            );
            let same = |a: &f64, b: &f64| a.to_bits() == b.to_bits();
            assert!(x.iter().zip(&naive_x).all(|(a, b)| same(a, b)), "{n}");
        }
    }

    #[test]
    fn subtract_norm_matches_the_update_then_block_dot() {
        for n in [0, 1, 3, 4, 7, 1001] {
            let q: Vec<f64> = (0..n).map(|k| (k as f64 * 0.37).sin()).collect();
            let r0: Vec<f64> = (0..n).map(|k| (k as f64 * 0.11).cos()).collect();
            let (mut r, mut naive_r) = (r0.clone(), r0);
            for (ri, &qi) in naive_r.iter_mut().zip(&q) {
                *ri -= 0.3 * qi;
            }
            let rr = subtract_norm(0.3, &q, &mut r);
            assert_eq!(rr.to_bits(), block_dot(&naive_r, &naive_r).to_bits(), "{n}");
            assert!(r
                .iter()
                .zip(&naive_r)
                .all(|(a, b)| a.to_bits() == b.to_bits()));
        }
    }

    #[test]
    fn blocks_cover_every_cell_once() {
        for (nx, ny) in [(1, 1), (1, 9000), (9000, 1), (333, 77), (64, 64)] {
            let grid = Grid::new(nx, ny).unwrap();
            let mut k = Blocks::<f64>::for_grid(grid);
            let ones = vec![1.0; grid.cells()];
            assert_eq!(
                k.dot(&Threaded, &ones, &ones),
                grid.cells() as f64,
                "{nx} x {ny}"
            );
        }
        for len in [1, 5, 16384, 16385, 100_000] {
            let mut k = Blocks::<f64>::new(len, None);
            let ones = vec![1.0; len];
            assert_eq!(k.dot(&Threaded, &ones, &ones), len as f64, "{len}");
        }
    }
}

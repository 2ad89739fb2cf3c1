//! The one owner of global reductions and of the serial/parallel choice.
//!
//! Every global value the crate computes from a vector — dot products, norms, largest changes,
//! the sums of a flow budget, the search for the first bad entry — ends in one call to a
//! [`Space`]: the kernels compute one partial value per fixed block of the vector, and the space
//! combines the partials in block order. The same space tells every kernel, preconditioner and
//! smoother whether it may use threads. Drivers take it from the
//! [`Workspace`](crate::Workspace); models keep their own.
//!
//! Two spaces come with the crate: [`Threaded`] (the default: block work on rayon's pool for
//! large vectors, when the `parallel` feature is on) and [`Serial`]. Both combine partials in a
//! fixed order, so they give the same bits. A distributed space would hold a process's block
//! of every vector and turn the local partials into global values with one collective per
//! call; a counting space (see the test suite) proves that nothing reduces around it.
//!
//! # Example
//!
//! ```
//! use std::sync::Arc;
//! use quintet::prelude::*;
//! use quintet::space::Serial;
//!
//! let grid = Grid::new(300, 300)?;
//! let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
//! let rhs = vec![1.0; grid.cells()];
//! let (mut a, mut b) = (vec![0.0; grid.cells()], vec![0.0; grid.cells()]);
//! Cg::default().solve_with(&op, &rhs, &mut a, &mut Workspace::new())?;
//! Cg::default().solve_with(&op, &rhs, &mut b, &mut Workspace::new().with_space(Arc::new(Serial)))?;
//! assert_eq!(a, b); // threads never change the bits
//! # Ok::<(), quintet::Error>(())
//! ```

use std::fmt;

use crate::Scalar;

/// How one column of block partials is combined.
///
/// ```
/// use quintet::space::{combine_in_order, Combine};
/// let partials = [1.0, 5.0, 2.0, 3.0]; // two blocks, two columns
/// let mut out = [0.0; 2];
/// combine_in_order(&partials, &[Combine::Sum, Combine::Max], &mut out);
/// assert_eq!(out, [3.0, 5.0]);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Combine {
    /// The sum, added in block order.
    Sum,
    /// The largest value (NaN-ignoring, as `f64::max`).
    Max,
    /// The smallest value (NaN-ignoring, as `f64::min`).
    Min,
}

/// The owner of global reductions and of the serial/parallel choice (see the
/// [module notes](self)).
///
/// Implement it to plug in another execution: a distributed space, or an instrumented one
/// for tests. Only [`threaded`](Space::threaded) is required; the combining methods default to
/// [`combine_in_order`].
///
/// # Example
///
/// A space that counts the reductions it performs:
///
/// ```
/// use std::sync::atomic::{AtomicUsize, Ordering};
/// use std::sync::Arc;
/// use quintet::prelude::*;
/// use quintet::space::{combine_in_order, Combine, Space};
///
/// #[derive(Debug, Default)]
/// struct Counting(AtomicUsize);
/// impl Space for Counting {
///     fn threaded(&self) -> bool {
///         false
///     }
///     fn combine_f64(&self, partials: &[f64], ops: &[Combine], out: &mut [f64]) {
///         self.0.fetch_add(1, Ordering::Relaxed);
///         combine_in_order(partials, ops, out);
///     }
/// }
///
/// let grid = Grid::new(20, 20)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let space = Arc::new(Counting::default());
/// let mut ws = Workspace::new().with_space(space.clone());
/// let mut x = vec![0.0; grid.cells()];
/// Cg::default().solve_with(&op, &vec![1.0; grid.cells()], &mut x, &mut ws)?;
/// assert!(space.0.load(Ordering::Relaxed) > 0);
/// # Ok::<(), quintet::Error>(())
/// ```
pub trait Space: Send + Sync + fmt::Debug {
    /// Whether block work may run on several threads. Results are the same bits either way.
    ///
    /// ```
    /// use quintet::space::{Serial, Space};
    /// assert!(!Serial.threaded());
    /// ```
    fn threaded(&self) -> bool;

    /// Combine `f64` block partials: `partials` holds `ops.len()` values per block, block after
    /// block in block order; column `c` is combined by `ops[c]` into `out[c]`.
    ///
    /// ```
    /// use quintet::space::{Combine, Serial, Space};
    /// let mut out = [0.0];
    /// Serial.combine_f64(&[1.0, 2.0, 3.0], &[Combine::Sum], &mut out);
    /// assert_eq!(out, [6.0]);
    /// ```
    fn combine_f64(&self, partials: &[f64], ops: &[Combine], out: &mut [f64]) {
        combine_in_order(partials, ops, out);
    }

    /// As [`combine_f64`](Space::combine_f64), for `f32` partials.
    ///
    /// ```
    /// use quintet::space::{Combine, Serial, Space};
    /// let mut out = [0.0f32];
    /// Serial.combine_f32(&[1.0, 4.0], &[Combine::Max], &mut out);
    /// assert_eq!(out, [4.0]);
    /// ```
    fn combine_f32(&self, partials: &[f32], ops: &[Combine], out: &mut [f32]) {
        combine_in_order(partials, ops, out);
    }

    /// Whether the sums of this space are exact (rounded once, whatever the order of the
    /// partials). A workspace then cuts the vectors of an operator without a grid into blocks
    /// of one entry, so that every partial is one rounded product and the result does not
    /// depend on how the vector is cut over threads or processes (see
    /// [`crate::distributed`]). Default: `false`.
    ///
    /// ```
    /// use quintet::space::{Serial, Space};
    /// assert!(!Serial.exact_sums());
    /// ```
    fn exact_sums(&self) -> bool {
        false
    }

    /// The index in the whole problem of this process's entry `local` (the entry itself on one
    /// process): errors found by a scan name the same cell on every process.
    ///
    /// ```
    /// use quintet::space::{Serial, Space};
    /// assert_eq!(Serial.global_index(7), 7);
    /// ```
    fn global_index(&self, local: usize) -> usize {
        local
    }

    /// The number of unknowns of the whole problem when this process holds `local` of them
    /// (the stop rules' iteration bounds count the whole problem).
    ///
    /// ```
    /// use quintet::space::{Serial, Space};
    /// assert_eq!(Serial.global_len(100), 100);
    /// ```
    fn global_len(&self, local: usize) -> usize {
        local
    }
}

/// The combining rule of the built-in spaces: each column folded over the blocks in block
/// order, starting from zero for [`Combine::Sum`] and from the first block's value for
/// [`Combine::Max`] and [`Combine::Min`] (zero when there are no blocks).
///
/// ```
/// use quintet::space::{combine_in_order, Combine};
/// let mut out = [0.0f64; 1];
/// combine_in_order(&[0.1, 0.2, 0.3], &[Combine::Sum], &mut out);
/// assert_eq!(out[0], (0.0 + 0.1 + 0.2) + 0.3);
/// ```
pub fn combine_in_order<T: num_traits::Float>(partials: &[T], ops: &[Combine], out: &mut [T]) {
    let width = ops.len();
    for (c, (op, slot)) in ops.iter().zip(out.iter_mut()).enumerate() {
        let mut column = partials.iter().skip(c).step_by(width.max(1)).copied();
        *slot = match op {
            Combine::Sum => column.fold(T::zero(), |s, v| s + v),
            Combine::Max => match column.next() {
                Some(first) => column.fold(first, T::max),
                None => T::zero(),
            },
            Combine::Min => match column.next() {
                Some(first) => column.fold(first, T::min),
                None => T::zero(),
            },
        };
    }
}

/// Serial execution: every kernel runs on the calling thread.
///
/// ```
/// use quintet::space::{Serial, Space};
/// assert!(!Serial.threaded());
/// ```
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Serial;

impl Space for Serial {
    fn threaded(&self) -> bool {
        false
    }
}

/// Threaded execution (the default): kernels on vectors of at least
/// [`PARALLEL_MIN_CELLS`] entries run their blocks on rayon's pool (the current pool, so
/// `pool.install(…)` chooses the threads). Serial when the crate is built without the
/// `parallel` feature.
///
/// ```
/// use quintet::space::{Space, Threaded};
/// assert_eq!(Threaded.threaded(), cfg!(feature = "parallel"));
/// ```
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Threaded;

impl Space for Threaded {
    fn threaded(&self) -> bool {
        cfg!(feature = "parallel")
    }
}

/// Target number of cells per block: kernels compute one partial result per block, and
/// reductions combine them in block order.
///
/// ```
/// assert!(quintet::space::BLOCK_CELLS >= 1024);
/// ```
pub const BLOCK_CELLS: usize = 16384;

/// Fewest grid rows per block of a grid operator's vectors (unless the grid has fewer): a
/// block's product reads one row of `x` beyond each of its ends, so short blocks would read `x`
/// more than once.
///
/// ```
/// assert!(quintet::space::BLOCK_MIN_ROWS >= 1);
/// ```
pub const BLOCK_MIN_ROWS: usize = 8;

/// Vectors shorter than this run their kernels serially even in a threaded space (the same
/// bits either way: only the thread count changes, never the blocks).
///
/// ```
/// assert!(quintet::space::PARALLEL_MIN_CELLS >= 1024);
/// ```
pub const PARALLEL_MIN_CELLS: usize = 1 << 15;

/// `values[c]` summed over the processes of `space`, for small vectors of rank-local totals
/// (budget lines, region sums). One process holds the whole model, so on the built-in spaces
/// the totals are the local values; the call is the seam a distributed space reduces at.
pub(crate) fn total<T: Scalar>(space: &dyn Space, values: &mut [T]) {
    const WIDTH: usize = 16;
    let ops = [Combine::Sum; WIDTH];
    let mut out = [T::zero(); WIDTH];
    for chunk in values.chunks_mut(WIDTH) {
        let w = chunk.len();
        T::combine(space, chunk, &ops[..w], &mut out[..w]);
        chunk.copy_from_slice(&out[..w]);
    }
}

/// The lowest index over the processes of `space` at which `flagged` holds, searching this
/// process's `len` entries: the cell an input error names (one collective, so every process
/// reports the same cell).
pub(crate) fn first_flagged(
    space: &dyn Space,
    len: usize,
    flagged: impl Fn(usize) -> bool,
) -> Option<usize> {
    let local = (0..len).find(|&k| flagged(k));
    let mut out = [0.0f64];
    let partial = [local.map_or(f64::INFINITY, |k| space.global_index(k) as f64)];
    space.combine_f64(&partial, &[Combine::Min], &mut out);
    out[0].is_finite().then_some(out[0] as usize)
}

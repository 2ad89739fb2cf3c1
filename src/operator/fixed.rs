//! Fixed (Dirichlet) cells: cells whose value is given, not solved for.

use std::ops::Range;

use crate::error::Error;
use crate::grid::Grid;

/// A set of fixed (Dirichlet) cells on a grid.
///
/// A fixed cell keeps the value the caller stores in `x` before the solve; every driver leaves
/// it untouched and reports its residual as exactly zero. Attach the set to an operator with
/// [`Banded5::with_fixed`](crate::Banded5::with_fixed) or
/// [`ClosureStencil::with_fixed`](crate::ClosureStencil::with_fixed).
///
/// # Example
///
/// ```
/// use quintet::{FixedCells, Grid};
///
/// let grid = Grid::new(4, 4)?;
/// let fixed = FixedCells::new(grid, grid.edge_cells())?;
/// assert_eq!(fixed.len(), 12);
/// assert!(fixed.contains(0) && !fixed.contains(5));
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct FixedCells {
    grid: Option<Grid>,
    total: usize,
    cells: Vec<usize>,
    mask: Vec<u64>,
}

impl FixedCells {
    /// The set of the given cells (duplicates allowed, order free).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::CellOutOfRange`](crate::ErrorKind::CellOutOfRange) for an index not on the grid.
    ///
    /// ```
    /// let grid = quintet::Grid::new(3, 3)?;
    /// let fixed = quintet::FixedCells::new(grid, [8, 0, 8])?;
    /// assert_eq!(fixed.cells(), &[0, 8]);
    /// assert!(quintet::FixedCells::new(grid, [9]).is_err());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(grid: Grid, cells: impl IntoIterator<Item = usize>) -> Result<FixedCells, Error> {
        let mut set = FixedCells::of_len(grid.cells(), cells)?;
        set.grid = Some(grid);
        Ok(set)
    }

    /// The set of the given entries of a vector of `len` unknowns with no grid behind it (for
    /// an operator that implements only [`LinearOperator`](crate::LinearOperator)).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::CellOutOfRange`](crate::ErrorKind::CellOutOfRange) for an index `>= len`.
    ///
    /// ```
    /// let fixed = quintet::FixedCells::of_len(10, [0, 9])?;
    /// assert_eq!((fixed.len(), fixed.grid()), (2, None));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn of_len(len: usize, cells: impl IntoIterator<Item = usize>) -> Result<FixedCells, Error> {
        let n = len;
        let mut list: Vec<usize> = cells.into_iter().collect();
        if let Some(&bad) = list.iter().find(|&&k| k >= n) {
            return Err(Error::cell_out_of_range(bad, n));
        }
        list.sort_unstable();
        list.dedup();
        let mut mask = crate::memory::filled("the fixed-cell mask", n.div_ceil(64), 0u64)?;
        for &k in &list {
            mask[k / 64] |= 1 << (k % 64);
        }
        Ok(FixedCells {
            grid: None,
            total: n,
            cells: list,
            mask,
        })
    }

    /// The grid the set belongs to (`None` for a set made by [`FixedCells::of_len`]).
    ///
    /// ```
    /// let grid = quintet::Grid::new(3, 3)?;
    /// assert_eq!(quintet::FixedCells::new(grid, [])?.grid(), Some(grid));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn grid(&self) -> Option<Grid> {
        self.grid
    }

    /// The number of unknowns the set is a subset of (fixed and free together).
    ///
    /// ```
    /// let fixed = quintet::FixedCells::new(quintet::Grid::new(3, 2)?, [1])?;
    /// assert_eq!(fixed.total(), 6);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn total(&self) -> usize {
        self.total
    }

    /// Whether cell `k` is fixed (`false` for cells off the grid).
    ///
    /// ```
    /// let fixed = quintet::FixedCells::new(quintet::Grid::new(3, 1)?, [1])?;
    /// assert!(fixed.contains(1) && !fixed.contains(2) && !fixed.contains(100));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    #[inline]
    pub fn contains(&self, k: usize) -> bool {
        self.mask
            .get(k / 64)
            .is_some_and(|word| word & (1 << (k % 64)) != 0)
    }

    /// The fixed cells in increasing order.
    ///
    /// ```
    /// let fixed = quintet::FixedCells::new(quintet::Grid::new(3, 1)?, [2, 0])?;
    /// assert_eq!(fixed.cells(), &[0, 2]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn cells(&self) -> &[usize] {
        &self.cells
    }

    /// The fixed cells whose index lies in `range`, in increasing order.
    ///
    /// ```
    /// let fixed = quintet::FixedCells::new(quintet::Grid::new(10, 1)?, [1, 4, 5, 9])?;
    /// assert_eq!(fixed.in_range(2..6), &[4, 5]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn in_range(&self, range: Range<usize>) -> &[usize] {
        let lo = self.cells.partition_point(|&k| k < range.start);
        let hi = self.cells.partition_point(|&k| k < range.end).max(lo);
        &self.cells[lo..hi]
    }

    /// Number of fixed cells.
    ///
    /// ```
    /// assert_eq!(quintet::FixedCells::new(quintet::Grid::new(3, 1)?, [0, 0])?.len(), 1);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn len(&self) -> usize {
        self.cells.len()
    }

    /// Whether no cell is fixed.
    ///
    /// ```
    /// assert!(quintet::FixedCells::new(quintet::Grid::new(3, 1)?, [])?.is_empty());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn is_empty(&self) -> bool {
        self.cells.is_empty()
    }
}

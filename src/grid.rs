//! The structured grid: `nx × ny` cells numbered `k = i + nx·j`, with `i` growing east and `j`
//! growing north.

use std::fmt;
use std::ops::Range;

use crate::error::{Error, Location};

/// A rectangular grid of `nx × ny` cells.
///
/// Cell `(i, j)` has the linear index `k = i + nx·j`; `i` grows east, `j` grows north. All
/// vectors (solution, right-hand side, coefficient arrays) are stored in this order.
///
/// # Example
///
/// ```
/// use quintet::{Grid, Side};
///
/// let grid = Grid::new(4, 3)?;
/// assert_eq!(grid.cells(), 12);
/// assert_eq!(grid.index(1, 2), 9);
/// assert_eq!(grid.coords(9), (1, 2));
/// assert_eq!(grid.neighbour(9, Side::South), Some(5));
/// assert_eq!(grid.neighbour(9, Side::North), None);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct Grid {
    nx: usize,
    ny: usize,
}

impl Grid {
    /// A grid of `nx` cells east by `ny` cells north.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidGrid`](crate::ErrorKind::InvalidGrid) if either side is zero;
    /// [`ErrorKind::TooLarge`](crate::ErrorKind::TooLarge) for more than
    /// [`MAX_CELLS`](crate::MAX_CELLS) cells.
    ///
    /// # Example
    ///
    /// ```
    /// use quintet::{ErrorKind, Grid};
    /// let grid = Grid::new(100, 50)?;
    /// assert_eq!(grid.nx(), 100);
    /// assert_eq!(Grid::new(1 << 33, 1 << 30).unwrap_err().kind(), ErrorKind::TooLarge);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(nx: usize, ny: usize) -> Result<Grid, Error> {
        if nx == 0 || ny == 0 {
            return Err(Error::invalid_grid(nx, ny));
        }
        if nx
            .checked_mul(ny)
            .is_none_or(|cells| cells > crate::MAX_CELLS)
        {
            return Err(Error::grid_too_large(nx, ny));
        }
        Ok(Grid { nx, ny })
    }

    /// Cells in the east (`i`) direction.
    ///
    /// ```
    /// assert_eq!(quintet::Grid::new(7, 2)?.nx(), 7);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn nx(&self) -> usize {
        self.nx
    }

    /// Cells in the north (`j`) direction.
    ///
    /// ```
    /// assert_eq!(quintet::Grid::new(7, 2)?.ny(), 2);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn ny(&self) -> usize {
        self.ny
    }

    /// Total number of cells, `nx · ny`.
    ///
    /// ```
    /// assert_eq!(quintet::Grid::new(7, 2)?.cells(), 14);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn cells(&self) -> usize {
        self.nx * self.ny
    }

    /// Linear index `i + nx·j` of cell `(i, j)`. The caller keeps `i < nx`, `j < ny` (checked
    /// in debug builds); use [`Grid::try_index`] for untrusted coordinates.
    ///
    /// ```
    /// assert_eq!(quintet::Grid::new(10, 10)?.index(3, 2), 23);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    #[inline]
    pub fn index(&self, i: usize, j: usize) -> usize {
        debug_assert!(
            i < self.nx && j < self.ny,
            "cell ({i}, {j}) is outside the {} x {} grid",
            self.nx,
            self.ny
        );
        i + self.nx * j
    }

    /// Linear index of `(i, j)`, or an error naming the cell and the grid.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::CellOutOfRange`](crate::ErrorKind::CellOutOfRange) if `i ≥ nx` or `j ≥ ny`.
    ///
    /// ```
    /// let grid = quintet::Grid::new(10, 5)?;
    /// assert_eq!(grid.try_index(9, 4)?, 49);
    /// let err = grid.try_index(10, 0).unwrap_err();
    /// assert_eq!(err.to_string(), "cell (i = 10, j = 0) is outside the grid of 10 x 5 cells");
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn try_index(&self, i: usize, j: usize) -> Result<usize, Error> {
        self.checked_index(i, j)
            .ok_or_else(|| Error::coords_out_of_range(i, j, self.nx, self.ny))
    }

    /// Linear index of `(i, j)`, or `None` if the cell is not on the grid.
    ///
    /// ```
    /// let grid = quintet::Grid::new(10, 10)?;
    /// assert_eq!(grid.checked_index(9, 9), Some(99));
    /// assert_eq!(grid.checked_index(10, 0), None);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn checked_index(&self, i: usize, j: usize) -> Option<usize> {
        (i < self.nx && j < self.ny).then(|| self.index(i, j))
    }

    /// Coordinates `(i, j)` of linear index `k` (for `k` on the grid).
    ///
    /// ```
    /// assert_eq!(quintet::Grid::new(10, 10)?.coords(23), (3, 2));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    #[inline]
    pub fn coords(&self, k: usize) -> (usize, usize) {
        (k % self.nx, k / self.nx)
    }

    /// Index of the neighbour of cell `k` on `side`, or `None` at the grid edge (or if `k` is
    /// off the grid).
    ///
    /// ```
    /// use quintet::{Grid, Side};
    /// let grid = Grid::new(3, 3)?;
    /// assert_eq!(grid.neighbour(4, Side::West), Some(3));
    /// assert_eq!(grid.neighbour(3, Side::West), None);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn neighbour(&self, k: usize, side: Side) -> Option<usize> {
        if k >= self.cells() {
            return None;
        }
        let (i, j) = self.coords(k);
        match side {
            Side::West => (i > 0).then(|| k - 1),
            Side::East => (i + 1 < self.nx).then(|| k + 1),
            Side::South => (j > 0).then(|| k - self.nx),
            Side::North => (j + 1 < self.ny).then(|| k + self.nx),
        }
    }

    /// The cells on the outer edge of the grid, in increasing index order: the usual place for
    /// fixed (Dirichlet) boundary nodes in a finite-difference code.
    ///
    /// ```
    /// let grid = quintet::Grid::new(3, 3)?;
    /// assert_eq!(grid.edge_cells(), vec![0, 1, 2, 3, 5, 6, 7, 8]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn edge_cells(&self) -> Vec<usize> {
        (0..self.cells())
            .filter(|&k| {
                let (i, j) = self.coords(k);
                i == 0 || j == 0 || i + 1 == self.nx || j + 1 == self.ny
            })
            .collect()
    }

    /// Range of linear indices covered by the rows `rows` (clamped to the grid).
    ///
    /// ```
    /// assert_eq!(quintet::Grid::new(4, 3)?.row_cells(1..3), 4..12);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn row_cells(&self, rows: Range<usize>) -> Range<usize> {
        let end = rows.end.min(self.ny);
        let start = rows.start.min(end);
        start * self.nx..end * self.nx
    }
}

impl fmt::Display for Grid {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{} x {} cells", self.nx, self.ny)
    }
}

/// One of the four compass neighbours of a cell.
///
/// ```
/// use quintet::Side;
/// assert_eq!(Side::West.opposite(), Side::East);
/// assert_eq!(Side::North.to_string(), "north");
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Side {
    /// Towards `i − 1`.
    West,
    /// Towards `i + 1`.
    East,
    /// Towards `j − 1`.
    South,
    /// Towards `j + 1`.
    North,
}

impl Side {
    /// All four sides, in the order west, east, south, north.
    ///
    /// ```
    /// assert_eq!(quintet::Side::ALL.len(), 4);
    /// ```
    pub const ALL: [Side; 4] = [Side::West, Side::East, Side::South, Side::North];

    /// The side facing this one.
    ///
    /// ```
    /// assert_eq!(quintet::Side::South.opposite(), quintet::Side::North);
    /// ```
    pub fn opposite(self) -> Side {
        match self {
            Side::West => Side::East,
            Side::East => Side::West,
            Side::South => Side::North,
            Side::North => Side::South,
        }
    }
}

impl Side {
    /// The side's name in lower case.
    pub(crate) fn name(self) -> &'static str {
        match self {
            Side::West => "west",
            Side::East => "east",
            Side::South => "south",
            Side::North => "north",
        }
    }
}

impl fmt::Display for Side {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.pad(self.name())
    }
}

impl Location {
    /// Cell `k` of `grid`.
    ///
    /// ```
    /// let at = quintet::Location::on(quintet::Grid::new(4, 4)?, 5);
    /// assert_eq!(at.coords, Some((1, 1)));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn on(grid: Grid, k: usize) -> Location {
        Location {
            cell: k,
            coords: (k < grid.cells()).then(|| grid.coords(k)),
        }
    }

    /// Cell `k` of `grid` if there is one, else entry `k`.
    pub(crate) fn of(grid: Option<Grid>, k: usize) -> Location {
        grid.map_or(Location::entry(k), |g| Location::on(g, k))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn index_and_coords_round_trip() {
        let g = Grid::new(5, 7).unwrap();
        for k in 0..g.cells() {
            let (i, j) = g.coords(k);
            assert_eq!(g.index(i, j), k);
        }
    }

    #[test]
    fn neighbours_are_mutual() {
        let g = Grid::new(4, 3).unwrap();
        for k in 0..g.cells() {
            for side in Side::ALL {
                if let Some(n) = g.neighbour(k, side) {
                    assert_eq!(g.neighbour(n, side.opposite()), Some(k));
                }
            }
        }
        assert_eq!(g.neighbour(99, Side::East), None);
    }

    #[test]
    fn overflowing_grid_is_rejected() {
        assert!(Grid::new(usize::MAX, 2).is_err());
    }
}

//! Grid-ordered slices as 2-D `ndarray` arrays of shape `(ny, nx)`, and back.

use ndarray::{Array2, ArrayView2, ArrayViewMut2};

use crate::error::Error;
use crate::grid::Grid;
use crate::memory;

/// A read-only 2-D view of shape `(ny, nx)` over a grid-ordered slice, without copying:
/// axis 0 is `j` (north), axis 1 is `i` (east), and `view[[j, i]] == values[i + nx·j]`.
///
/// Works for any element type: a field, a mask, cell labels.
///
/// Available with the `ndarray` feature.
///
/// # Errors
///
/// [`ErrorKind::LengthMismatch`] if `values` does not have one entry per cell of `grid`.
///
/// # Example
///
/// ```
/// use quintet::{interop, Grid};
///
/// let grid = Grid::new(3, 2)?;
/// let x = [0.0, 1.0, 2.0, 10.0, 11.0, 12.0]; // row j = 0, then row j = 1
/// let view = interop::as_array(grid, &x)?;
/// assert_eq!(view.dim(), (2, 3));
/// assert_eq!(view[[1, 0]], 10.0); // j = 1 (north), i = 0 (west edge)
/// assert_eq!(view.row(0).to_vec(), vec![0.0, 1.0, 2.0]); // the southmost row of cells
/// assert_eq!(view.column(2).to_vec(), vec![2.0, 12.0]); // the eastmost column
/// # Ok::<(), quintet::Error>(())
/// ```
///
/// [`ErrorKind::LengthMismatch`]: crate::ErrorKind::LengthMismatch
pub fn as_array<T>(grid: Grid, values: &[T]) -> Result<ArrayView2<'_, T>, Error> {
    check_length(grid, values.len())?;
    ArrayView2::from_shape((grid.ny(), grid.nx()), values)
        .map_err(|_| Error::length("field", grid.cells(), values.len()))
}

/// A mutable 2-D view of shape `(ny, nx)` over a grid-ordered slice, without copying: writing
/// `view[[j, i]]` writes `values[i + nx·j]`.
///
/// Available with the `ndarray` feature.
///
/// # Errors
///
/// [`ErrorKind::LengthMismatch`] if `values` does not have one entry per cell of `grid`.
///
/// # Example
///
/// ```
/// use quintet::{interop, Grid};
///
/// let grid = Grid::new(3, 2)?;
/// let mut source = vec![0.0; grid.cells()];
/// let mut view = interop::as_array_mut(grid, &mut source)?;
/// view.row_mut(1).fill(5.0); // the northmost row of cells
/// view[[0, 2]] = 1.0; // j = 0, i = 2
/// assert_eq!(source, [0.0, 0.0, 1.0, 5.0, 5.0, 5.0]);
/// # Ok::<(), quintet::Error>(())
/// ```
///
/// [`ErrorKind::LengthMismatch`]: crate::ErrorKind::LengthMismatch
pub fn as_array_mut<T>(grid: Grid, values: &mut [T]) -> Result<ArrayViewMut2<'_, T>, Error> {
    check_length(grid, values.len())?;
    let found = values.len();
    ArrayViewMut2::from_shape((grid.ny(), grid.nx()), values)
        .map_err(|_| Error::length("field", grid.cells(), found))
}

/// An owned 2-D array of shape `(ny, nx)` (axis 0 = `j`, north; axis 1 = `i`, east) as its
/// grid and a grid-ordered vector, `x[i + nx·j] == array[[j, i]]`.
///
/// An array in standard (C, row-major) layout hands over its buffer without copying the
/// values; any other layout (Fortran order, a transposed or strided array) is copied into
/// grid order.
///
/// Available with the `ndarray` feature.
///
/// # Errors
///
/// [`ErrorKind::InvalidGrid`] for an axis of length zero, [`ErrorKind::TooLarge`] for more
/// than [`MAX_CELLS`] cells or a copy whose memory is not granted.
///
/// # Example
///
/// ```
/// use ndarray::array;
/// use quintet::{interop, Grid};
///
/// // Row j = 0 (south) first; 3 cells east, 2 north.
/// let a = array![[1.0, 2.0, 3.0], [4.0, 5.0, 6.0]];
/// let (grid, x) = interop::from_array(a)?;
/// assert_eq!(grid, Grid::new(3, 2)?);
/// assert_eq!(x[grid.index(2, 1)], 6.0);
///
/// // A transposed array is copied into grid order.
/// let t = array![[1.0, 4.0], [2.0, 5.0], [3.0, 6.0]].reversed_axes();
/// assert_eq!(interop::from_array(t)?.1, x);
/// # Ok::<(), quintet::Error>(())
/// ```
///
/// [`ErrorKind::InvalidGrid`]: crate::ErrorKind::InvalidGrid
/// [`ErrorKind::TooLarge`]: crate::ErrorKind::TooLarge
/// [`MAX_CELLS`]: crate::MAX_CELLS
pub fn from_array<T: Clone>(array: Array2<T>) -> Result<(Grid, Vec<T>), Error> {
    let (ny, nx) = array.dim();
    let grid = Grid::new(nx, ny)?;
    let cells = grid.cells();
    if !array.is_standard_layout() {
        let mut values = memory::with_capacity("field", cells)?;
        values.extend(array.iter().cloned());
        return Ok((grid, values));
    }
    // Standard layout: the values are contiguous in grid order, starting at `offset` of the
    // buffer (not 0 for an array sliced in place).
    let (mut values, offset) = array.into_raw_vec_and_offset();
    let start = offset.unwrap_or(0);
    values.truncate(start + cells);
    values.drain(..start);
    Ok((grid, values))
}

fn check_length(grid: Grid, found: usize) -> Result<(), Error> {
    if found == grid.cells() {
        Ok(())
    } else {
        Err(Error::length("field", grid.cells(), found))
    }
}

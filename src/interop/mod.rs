//! Per-cell fields to and from other tools: `.npy` files (feature `npy`) and 2-D
//! [`ndarray`](https://docs.rs/ndarray) arrays (feature `ndarray`). Both features are off by
//! default.
//!
//! # Orientation
//!
//! A per-cell field is a slice in grid order, cell `(i, j)` at `k = i + nx·j` ([`Grid`]). Its
//! 2-D form has shape `(ny, nx)` in C (row-major) order, the same bytes in the same order:
//!
//! * axis 0 is `j`, growing north: row `j` of the array is the row of cells `j`;
//! * axis 1 is `i`, growing east: column `i` is the column of cells `i`;
//! * `array[[j, i]] == x[i + nx·j]`.
//!
//! A NumPy user therefore reads row `j` = north index and column `i` = east index. Plotting
//! such an array as an image with row 0 at the top puts south at the top; ask the plotting
//! tool for the origin at the lower left to see north up.
//!
//! ```
//! # #[cfg(feature = "ndarray")] {
//! use quintet::{interop, Grid};
//!
//! let grid = Grid::new(3, 2)?; // 3 cells east, 2 north
//! let x: Vec<f64> = (0..grid.cells()).map(|k| k as f64).collect();
//! let view = interop::as_array(grid, &x)?;
//! assert_eq!(view.dim(), (2, 3)); // (ny, nx)
//! assert_eq!(view[[1, 2]], x[grid.index(2, 1)]); // [[j, i]]
//! # }
//! # Ok::<(), quintet::Error>(())
//! ```
//!
//! # Caution
//!
//! A `.npy` file or an array holds values only: no units, cell sizes, origin or inactive-cell
//! mask travel with it. Keep those beside the data, and check a field read back from another
//! tool (its orientation, units and extent) before you build a model or a decision on it.
//!
//! [`Grid`]: crate::Grid

#[cfg(feature = "ndarray")]
mod array;
#[cfg(feature = "npy")]
mod npy;

#[cfg(feature = "ndarray")]
pub use array::{as_array, as_array_mut, from_array};
#[cfg(feature = "npy")]
pub use npy::{read_npy, read_npy_grid, write_npy};

//! Checks on an operator's coefficients that name the offending cell.

use crate::error::Location;
use crate::operator::FixedCells;
use crate::operator::{row_sums_to_zero, Coeffs5, Stencil5};
use crate::scalar::{is_positive, to_f64};
use crate::{Error, Grid, Scalar, Side};

/// What a full pass over the coefficients found (when no check failed).
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct Survey {
    /// First free cell whose center is not positive, with its value.
    pub first_nonpositive: Option<(usize, f64)>,
    /// No cell is fixed and every row sums to zero (to rounding): `A·1 = 0`.
    pub rows_sum_to_zero: bool,
}

/// One pass over every cell: every coefficient finite, no coupling off the grid, and the first
/// free cell with a non-positive center remembered (whether that is an error depends on the
/// method, so it is not one here).
pub(crate) fn survey<T: Scalar>(
    grid: Grid,
    fixed: Option<&FixedCells>,
    coeffs: impl Fn(usize, usize) -> Coeffs5<T>,
) -> Result<Survey, Error> {
    let mut first_nonpositive = None;
    let mut rows_sum_to_zero = fixed.is_none_or(|f| f.is_empty());
    let (nx, ny) = (grid.nx(), grid.ny());
    // Row by row, so a cell's neighbours follow from (i, j) without dividing its index.
    for j in 0..ny {
        for i in 0..nx {
            let k = i + nx * j;
            let c = coeffs(i, j);
            let named = [
                ("center coefficient", c.center),
                ("west coefficient", c.west),
                ("east coefficient", c.east),
                ("south coefficient", c.south),
                ("north coefficient", c.north),
            ];
            if let Some(&(what, _)) = named.iter().find(|(_, v)| !v.is_finite()) {
                return Err(Error::non_finite(what, Location::on(grid, k)));
            }
            // The sides in the order of `Side::ALL`, each with whether it has a neighbour.
            let sides = [
                (Side::West, i > 0),
                (Side::East, i + 1 < nx),
                (Side::South, j > 0),
                (Side::North, j + 1 < ny),
            ];
            for (side, inside) in sides {
                let value = c.towards(side);
                if !inside && value != T::zero() {
                    return Err(Error::off_grid(
                        Location::on(grid, k),
                        side.name(),
                        to_f64(value),
                    ));
                }
            }
            let free = !fixed.is_some_and(|f| f.contains(k));
            if free && first_nonpositive.is_none() && !is_positive(c.center) {
                first_nonpositive = Some((k, to_f64(c.center)));
            }
            rows_sum_to_zero = rows_sum_to_zero && row_sums_to_zero(c);
        }
    }
    Ok(Survey {
        first_nonpositive,
        rows_sum_to_zero,
    })
}

/// Check that the system the Krylov drivers see (free cells, couplings to fixed cells
/// removed) is symmetric: for every pair of free neighbours, the coupling each way agrees to
/// within `rel_tol · max(|a|, |b|)`.
///
/// # Errors
///
/// [`ErrorKind::Asymmetric`](crate::ErrorKind::Asymmetric) naming the first pair (in increasing cell order) that disagrees, and
/// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) if `rel_tol` is negative or not finite.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(3, 1)?;
/// let op = Banded5::from_fn(grid, |i, _| Coeffs5 {
///     center: 2.0,
///     west: if i > 0 { -1.0 } else { 0.0 },
///     east: if i == 0 { -0.5 } else if i == 1 { -1.0 } else { 0.0 },
///     ..Coeffs5::default()
/// })?;
/// let err = check_symmetry(&op, 1e-12).unwrap_err();
/// assert_eq!(err.kind(), ErrorKind::Asymmetric);
/// assert_eq!(err.location().map(|at| at.cell), Some(0));
/// # Ok::<(), quintet::Error>(())
/// ```
pub fn check_symmetry<T: Scalar, S: Stencil5<T> + ?Sized>(
    op: &S,
    rel_tol: f64,
) -> Result<(), Error> {
    if !(rel_tol >= 0.0 && rel_tol.is_finite()) {
        return Err(Error::setting("rel_tol", rel_tol, "a finite value >= 0"));
    }
    let grid = op.grid();
    let (nx, ny) = (grid.nx(), grid.ny());
    let differ = |a: f64, b: f64| (a - b).abs() > rel_tol * a.abs().max(b.abs());
    // Row by row: each cell's eliminated row is formed once as the east neighbour of the cell
    // before it and once as the north neighbour of the cell below; pairs are checked in
    // increasing cell order, east before north, as the error promises.
    for j in 0..ny {
        let mut here = op.eliminated_coeffs(0, j);
        for i in 0..nx {
            let k = i + nx * j;
            let east = (i + 1 < nx).then(|| op.eliminated_coeffs(i + 1, j));
            if let Some(there) = east {
                let (a, b) = (to_f64(here.east), to_f64(there.west));
                if differ(a, b) {
                    return Err(Error::asymmetric(Location::on(grid, k), k + 1, a, b));
                }
            }
            if j + 1 < ny {
                let there = op.eliminated_coeffs(i, j + 1);
                let (a, b) = (to_f64(here.north), to_f64(there.south));
                if differ(a, b) {
                    return Err(Error::asymmetric(Location::on(grid, k), k + nx, a, b));
                }
            }
            if let Some(next) = east {
                here = next;
            }
        }
    }
    Ok(())
}

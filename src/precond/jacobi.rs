//! Jacobi (diagonal) preconditioning.

use super::Preconditioner;
use crate::kernels::{slice, Kernels};
use crate::stencil::Stencil5;
use crate::{to_f64, Error, Scalar};

/// Jacobi preconditioning `M = diag(A)`: `z_k = r_k / a_k`, zero on fixed cells.
///
/// Cheap (one pass over three vectors) and effective when the center coefficients vary a lot
/// from cell to cell, as they do with jumping conductivities; it does not change the growth of
/// the iteration count with grid size.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(2, 1)?;
/// let op = Banded5::new(grid, vec![2.0, 8.0], vec![0.0, -1.0], vec![-1.0, 0.0], vec![0.0; 2], vec![0.0; 2])?;
/// let mut jacobi = Jacobi::new(&op)?;
/// let mut z = vec![0.0; 2];
/// jacobi.apply(&[1.0, 1.0], &mut z);
/// assert_eq!(z, vec![0.5, 0.125]);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Jacobi<T> {
    inverse_diagonal: Vec<T>,
    kernels: Kernels<T>,
}

impl<T: Scalar> Jacobi<T> {
    /// Set up from the operator's center coefficients.
    ///
    /// # Errors
    ///
    /// [`Error::NonPositiveCenter`] for a free cell whose center is not positive.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 1)?;
    /// let op = Banded5::from_fn(grid, |i, _| Coeffs5 { center: i as f64, ..Coeffs5::default() })?;
    /// assert!(matches!(Jacobi::new(&op), Err(Error::NonPositiveCenter { cell: 0, .. })));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new<S: Stencil5<T> + ?Sized>(op: &S) -> Result<Jacobi<T>, Error> {
        let grid = op.grid();
        if let Some((k, value)) = op.first_nonpositive_center() {
            let (i, j) = grid.coords(k);
            return Err(Error::NonPositiveCenter {
                cell: k,
                i,
                j,
                value: to_f64(value),
            });
        }
        let fixed = op.fixed_cells();
        let inverse_diagonal = (0..grid.cells())
            .map(|k| {
                if fixed.is_some_and(|f| f.contains(k)) {
                    T::zero()
                } else {
                    let (i, j) = grid.coords(k);
                    T::one() / op.coeffs(i, j).center
                }
            })
            .collect();
        Ok(Jacobi {
            inverse_diagonal,
            kernels: Kernels::new(grid),
        })
    }
}

impl<T: Scalar> Preconditioner<T> for Jacobi<T> {
    fn apply(&mut self, r: &[T], z: &mut [T]) {
        let d = &self.inverse_diagonal;
        self.kernels.map_blocks(z, |_, cells, z| {
            for ((zi, &ri), &di) in z.iter_mut().zip(slice(r, &cells)).zip(slice(d, &cells)) {
                *zi = ri * di;
            }
            (T::zero(), T::zero())
        });
    }
    fn name(&self) -> &'static str {
        "Jacobi"
    }
}

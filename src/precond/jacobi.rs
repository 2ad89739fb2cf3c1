//! Jacobi (diagonal) preconditioning.

use super::{check_built_for, check_centers, Preconditioner};
use crate::blocks::{slice, Blocks};
use crate::operator::Stencil5;
use crate::space::Space;
use crate::{Error, Grid, LinearOperator, Scalar};

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
/// jacobi.apply(&op, &quintet::space::Serial, &[1.0, 1.0], &mut z);
/// assert_eq!(z, vec![0.5, 0.125]);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Jacobi<T> {
    grid: Grid,
    inverse_diagonal: Vec<T>,
    blocks: Blocks<T>,
}

impl<T: Scalar> Jacobi<T> {
    /// Set up from the operator's center coefficients.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::NonPositiveCenter`](crate::ErrorKind::NonPositiveCenter) for a free cell
    /// whose center is not positive.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 1)?;
    /// let op = Banded5::from_fn(grid, |i, _| Coeffs5 { center: i as f64, ..Coeffs5::default() })?;
    /// assert_eq!(Jacobi::new(&op).unwrap_err().kind(), ErrorKind::NonPositiveCenter);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new<S: Stencil5<T> + ?Sized>(op: &S) -> Result<Jacobi<T>, Error> {
        let grid = op.grid();
        check_centers(op)?;
        let fixed = op.fixed();
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
            grid,
            inverse_diagonal,
            blocks: Blocks::for_grid(grid),
        })
    }
}

impl<T: Scalar> Preconditioner<T> for Jacobi<T> {
    fn apply(&mut self, _op: &dyn LinearOperator<T>, space: &dyn Space, r: &[T], z: &mut [T]) {
        let d = &self.inverse_diagonal;
        self.blocks.for_each(space, z, |cells, z| {
            for ((zi, &ri), &di) in z.iter_mut().zip(slice(r, &cells)).zip(slice(d, &cells)) {
                *zi = ri * di;
            }
        });
    }
    fn check(&self, op: &dyn LinearOperator<T>) -> Result<(), Error> {
        check_built_for(self.grid, op)
    }
    fn name(&self) -> &'static str {
        "Jacobi"
    }
}

//! Jacobi preconditioning of a distributed operator: each process scales its own residual by
//! its own inverse centers (no communication, no reduction).

use super::stencil::DistributedStencil;
use crate::blocks::{slice, Blocks};
use crate::operator::check_len;
use crate::precond::Preconditioner;
use crate::space::Space;
use crate::{Error, LinearOperator};

/// Jacobi (diagonal) preconditioning for a [`DistributedStencil`]: `z = r / center` on free
/// cells, zero on fixed cells, computed by each process on its own block.
///
/// ```
/// use quintet::distributed::{DistributedJacobi, DistributedStencil, Partition, Processes};
/// use quintet::prelude::*;
/// let grid = Grid::new(30, 30)?;
/// let part = Partition::new(grid, Processes::single())?;
/// let op = DistributedStencil::from_fn(&part, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let rhs = part.local_from_fn(|_, _| 1.0);
/// let mut x = vec![0.0; part.local_len()];
/// let mut pcg = Pcg::new(DistributedJacobi::new(&op)?);
/// assert!(pcg.solve_with(&op, &rhs, &mut x, &mut part.workspace(true))?.converged());
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct DistributedJacobi {
    inverse_center: Vec<f64>,
    blocks: Blocks<f64>,
}

impl DistributedJacobi {
    /// The inverse centers of this process's free cells. A collective call.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::NonPositiveCenter`](crate::ErrorKind::NonPositiveCenter) naming the first
    /// free cell of the whole grid with a center that is not positive, on every process.
    ///
    /// ```
    /// use quintet::distributed::{DistributedJacobi, DistributedStencil, Partition, Processes};
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 4)?;
    /// let part = Partition::new(grid, Processes::single())?;
    /// let op = DistributedStencil::from_fn(&part, |i, j| {
    ///     let mut c = Coeffs5::laplacian(grid, i, j);
    ///     if (i, j) == (1, 2) { c.center = 0.0; }
    ///     c
    /// })?;
    /// let err = DistributedJacobi::new(&op).unwrap_err();
    /// assert_eq!(err.kind(), ErrorKind::NonPositiveCenter);
    /// assert_eq!(err.location().map(|at| at.coords), Some(Some((1, 2))));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(op: &DistributedStencil) -> Result<DistributedJacobi, Error> {
        if let Some((k, value)) = op.first_nonpositive_diagonal() {
            return Err(Error::non_positive_center(op.cell_location(k), value));
        }
        let fixed = op.fixed_cells();
        let inverse_center = op
            .centers()
            .iter()
            .enumerate()
            .map(|(k, &c)| {
                if fixed.is_some_and(|f| f.contains(k)) {
                    0.0
                } else {
                    1.0 / c
                }
            })
            .collect();
        Ok(DistributedJacobi {
            inverse_center,
            blocks: Blocks::new(op.len(), None),
        })
    }
}

impl Preconditioner<f64> for DistributedJacobi {
    fn apply(
        &mut self,
        _op: &dyn LinearOperator<f64>,
        space: &dyn Space,
        r: &[f64],
        z: &mut [f64],
    ) {
        let d = &self.inverse_center;
        self.blocks.for_each(space, z, |cells, z| {
            for ((zi, &ri), &di) in z.iter_mut().zip(slice(r, &cells)).zip(slice(d, &cells)) {
                *zi = ri * di;
            }
        });
    }

    fn check(&self, op: &dyn LinearOperator<f64>) -> Result<(), Error> {
        check_len(
            "the operator of a distributed Jacobi preconditioner",
            self.inverse_center.len(),
            op.len(),
        )
    }

    fn name(&self) -> &'static str {
        "Jacobi"
    }
}

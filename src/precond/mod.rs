//! Preconditioners for [`Pcg`](crate::Pcg): the [`Preconditioner`] trait, [`Identity`] (plain
//! CG) and [`Jacobi`] (diagonal scaling).
//!
//! A preconditioner is built once from an operator (setup: factorisation, scaling, hierarchy)
//! and then applied many times; applying it allocates nothing. For PCG it must be symmetric
//! positive definite on the free cells. The driver holds `z` at zero on fixed cells after
//! every application, so a preconditioner never moves a fixed cell.

mod jacobi;

pub use jacobi::Jacobi;

use crate::Scalar;

/// An approximate inverse `M⁻¹ ≈ A⁻¹`, applied as `z = M⁻¹ r`.
///
/// # Example
///
/// A preconditioner that scales by a constant (equivalent to plain CG, but shows the trait):
///
/// ```
/// use quintet::prelude::*;
///
/// struct Scaled(f64);
/// impl Preconditioner<f64> for Scaled {
///     fn apply(&mut self, r: &[f64], z: &mut [f64]) {
///         for (zi, ri) in z.iter_mut().zip(r) {
///             *zi = self.0 * ri;
///         }
///     }
///     fn name(&self) -> &'static str {
///         "scaled identity"
///     }
/// }
///
/// let grid = Grid::new(20, 20)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let mut x = vec![0.0; grid.cells()];
/// let report = Pcg::new(Scaled(0.25)).solve(&op, &vec![1.0; grid.cells()], &mut x)?;
/// assert_eq!(report.method, "PCG + scaled identity");
/// # Ok::<(), quintet::Error>(())
/// ```
pub trait Preconditioner<T: Scalar> {
    /// `z = M⁻¹ r`. Both slices have one entry per cell of the operator's grid.
    fn apply(&mut self, r: &[T], z: &mut [T]);

    /// A short name for reports. Default `"custom"`.
    fn name(&self) -> &'static str {
        "custom"
    }

    /// Whether this is the identity (lets PCG skip the copy `z = r`). Default `false`.
    fn is_identity(&self) -> bool {
        false
    }
}

/// The identity preconditioner `M = I`: PCG with it is plain CG.
///
/// ```
/// use quintet::{Identity, Preconditioner};
/// let mut z = [0.0; 2];
/// Identity.apply(&[1.0, 2.0], &mut z);
/// assert_eq!(z, [1.0, 2.0]);
/// ```
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Identity;

impl<T: Scalar> Preconditioner<T> for Identity {
    fn apply(&mut self, r: &[T], z: &mut [T]) {
        let n = r.len().min(z.len());
        z[..n].copy_from_slice(&r[..n]);
    }
    fn name(&self) -> &'static str {
        "identity"
    }
    fn is_identity(&self) -> bool {
        true
    }
}

//! Preconditioners for [`Pcg`](crate::Pcg): the [`Preconditioner`] trait, [`Identity`] (plain
//! CG), [`Jacobi`] (diagonal scaling), [`Ssor`], [`IncompleteCholesky`] (IC(0) and MIC(0)),
//! Stone's [`Sip`] and the geometric [`Multigrid`] V-cycle. [`Sip`] and [`Multigrid`] are also
//! standalone [`IterativeSolver`](crate::IterativeSolver)s.
//!
//! | preconditioner | setup | storage (`T` entries per cell) | PCG iterations, Dirichlet Poisson, 64² → 1024² (measured) |
//! |---|---|---|---|
//! | [`Jacobi`] | none | 1 | as CG: `∝ h⁻¹` (119 → 941 at 512²) |
//! | [`Ssor`] | one pass | 3 | `∝ h⁻¹` with ω = 1 (60 → 807); `∝ h^{-1/2}` with ω = 2/(1 + πh) (34 → 102 at 512²) |
//! | [`IncompleteCholesky`] IC(0) | one pass | 3 | `∝ h⁻¹`, a third of CG's (52 → 682) |
//! | [`IncompleteCholesky`] MIC(0) | one pass | 3 | `∝ h^{-1/2}` (36 → 191) |
//! | [`Sip`] (symmetrised) | one pass | 6 | between IC(0) and MIC(0) (33 → 379); not positive definite on high-contrast fields |
//! | [`Multigrid`] | hierarchy | about 5 (coarse levels, vectors, weights) | bounded: 6 at every size |
//!
//! Every preconditioner here is built from the operator's eliminated coefficients
//! ([`Stencil5::eliminated_coeffs`]): fixed cells are identity rows, couplings towards them
//! are removed.
//!
//! A preconditioner is built once from an operator (setup: factorisation, scaling, hierarchy)
//! and then applied many times; applying it allocates nothing. For PCG it must be symmetric
//! positive definite on the free cells. The driver holds `z` at zero on fixed cells after
//! every application, so a preconditioner never moves a fixed cell.

mod correction;
mod factor;
mod ic0;
mod jacobi;
pub mod multigrid;
mod single;
mod sip;
mod ssor;

pub use ic0::{FactorSettings, IncompleteCholesky, WeakPivot};
pub use jacobi::Jacobi;
pub use multigrid::{CoarseOperator, Multigrid, MultigridSettings};
pub use single::SinglePrecision;
pub use sip::{Sip, SipSettings};
pub use ssor::Ssor;

use crate::stencil::Stencil5;
use crate::{to_f64, Error, Scalar};

/// `Err(NonPositiveCenter)` for the first free cell whose center is not positive.
pub(crate) fn check_centers<T: Scalar, S: Stencil5<T> + ?Sized>(op: &S) -> Result<(), Error> {
    match op.first_nonpositive_center() {
        None => Ok(()),
        Some((k, value)) => {
            let (i, j) = op.grid().coords(k);
            Err(Error::NonPositiveCenter {
                cell: k,
                i,
                j,
                value: to_f64(value),
            })
        }
    }
}

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
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(2, 1)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mut z = [0.0; 2];
    /// Jacobi::new(&op)?.apply(&[4.0, 8.0], &mut z); // centers are 4
    /// assert_eq!(z, [1.0, 2.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn apply(&mut self, r: &[T], z: &mut [T]);

    /// A short name for reports. Default `"custom"`.
    ///
    /// ```
    /// use quintet::{Identity, Preconditioner};
    /// assert_eq!(Preconditioner::<f64>::name(&Identity), "identity");
    /// ```
    fn name(&self) -> &'static str {
        "custom"
    }

    /// Whether this is the identity (lets PCG skip the copy `z = r`). Default `false`.
    ///
    /// ```
    /// use quintet::{Identity, Preconditioner};
    /// assert!(Preconditioner::<f64>::is_identity(&Identity));
    /// ```
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

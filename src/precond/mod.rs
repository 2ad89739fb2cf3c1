//! Preconditioners for [`Pcg`](crate::Pcg) and for drivers of non-symmetric systems: the
//! [`Preconditioner`] trait, [`Identity`] (plain CG), [`Jacobi`] (diagonal scaling), [`Ssor`],
//! [`IncompleteCholesky`] (IC(0) and MIC(0)), [`Ilu0`] (ILU(0), for non-symmetric operators),
//! Stone's [`Sip`] and the geometric [`Multigrid`] V-cycle. [`Sip`] and [`Multigrid`] are also
//! standalone [`IterativeSolver`](crate::IterativeSolver)s.
//!
//! | preconditioner | setup | storage (`T` entries per cell) | PCG iterations, Dirichlet Poisson, 64² → 1024² (measured) |
//! |---|---|---|---|
//! | [`Jacobi`] | none | 1 | as CG: `∝ h⁻¹` (119 → 941 at 512²) |
//! | [`Ssor`] | one pass | 3 | `∝ h⁻¹` with ω = 1 (60 → 807); `∝ h^{-1/2}` with ω = 2/(1 + πh) (34 → 102 at 512²) |
//! | [`IncompleteCholesky`] IC(0) | one pass | 3 | `∝ h⁻¹`, a third of CG's (52 → 682) |
//! | [`IncompleteCholesky`] MIC(0) | one pass | 3 | `∝ h^{-1/2}` (36 → 191) |
//! | [`Ilu0`] ILU(0) | one pass | 5 (pivots, two lower and two upper couplings) | on a symmetric operator it is IC(0) (same counts); for non-symmetric systems see the non-symmetric table below |
//! | [`Sip`] (symmetrised) | one pass | 6 | between IC(0) and MIC(0) (33 → 379); not positive definite on high-contrast fields |
//! | [`Multigrid`] | hierarchy | about 5 (coarse levels, vectors, weights) | bounded: 6 at every size |
//!
//! **Non-symmetric operators** (upwinded advection–diffusion): [`Ilu0`], [`Sip`] with
//! [`SipSettings::symmetrised`] off (the plain `(LU)⁻¹`) and [`Multigrid`] (which detects the
//! non-symmetry and builds its coarse levels for it, see the [module notes](multigrid)) are
//! preconditioners for the non-symmetric Krylov drivers; their counts with those drivers
//! belong in the non-symmetric table of the crate docs. What is measured here is the
//! standalone iterations (`tests/nonsymmetric_precond.rs`, ignored test
//! `measure_standalone_multigrid_and_sip_by_peclet`): steady upwind advection–diffusion on
//! the unit square, diffusion 1, uniform flow along the grid rows at cell Péclet number `Pe`,
//! fixed values at the inflow and outflow columns, zero start, relative residual 10⁻⁸;
//! iterations, the same with the flow along or against the cell order unless two are given
//! (along / against):
//!
//! | `Pe` | multigrid V(3,3), 64² / 128² / 256² | SIP (α = 0.92), 64² / 128² / 256² (along; against within 3) | Gauss–Seidel, 64² / 128² / 256² |
//! |---|---|---|---|
//! | 0.1 | 7 / 7 / 7 | 349 / 617 / 911 | > 2000 |
//! | 1 | 7 / 7 / 8 | 39 / 56 / 87 | 398 / 599 / 957 (along), 462 / 727 / 1214 (against) |
//! | 10 | 9 / 11–13 / 14–16 | 17 / 22 / 32 | 45 / 67 / 106 (along), 107 / 194 / 361 (against) |
//! | 100 | 9 / 15 / 28 | 8 / 11 / 14 | 12 / 16 / 23 (along), 74 / 142 / 277 (against) |
//!
//! (Multigrid ranges: upscaled / lumped Galerkin coarse operators; the default
//! [`CoarseOperator::LargerConductance`] builds the upscaled ones for a non-symmetric
//! operator.) Multigrid with the red-black Gauss–Seidel smoother keeps its grid-independent count up to cell Péclet 1; from
//! Péclet 10 on its count grows with the grid (9 → 28 cycles from 64² to 256² at Péclet 100),
//! and SIP, whose incomplete factors come closer to exact as advection dominates (in either
//! direction), needs fewer iterations at a fraction of the work each. SOR
//! with ω = 1.5 is slower than Gauss–Seidel from Péclet 10 on (212 against 67 sweeps at 128²,
//! Péclet 10), which is why [`estimate_relaxation`](crate::estimate_relaxation) answers ω = 1
//! for diagonally dominant non-symmetric operators.
//!
//! Every preconditioner here is built from the operator's eliminated coefficients
//! ([`Stencil5::eliminated_coeffs`]): fixed cells are identity rows, couplings towards them
//! are removed.
//!
//! A preconditioner is built once from an operator (setup: factorisation, scaling, hierarchy)
//! and then applied many times; applying it allocates nothing. For PCG it must be symmetric
//! positive definite on the free cells (ILU(0) and the plain SIP inverse are not, on a
//! non-symmetric operator). The driver holds `z` at zero on fixed cells after every
//! application, so a preconditioner never moves a fixed cell.

mod factor;
pub(crate) mod fused;
mod ic0;
mod ilu0;
mod jacobi;
pub mod multigrid;
mod single;
mod sip;
mod ssor;

pub use ic0::{FactorSettings, IncompleteCholesky, WeakPivot};
pub use ilu0::Ilu0;
pub use jacobi::Jacobi;
pub use multigrid::{CoarseOperator, Multigrid, MultigridSettings};
pub use single::SinglePrecision;
pub use sip::{Sip, SipSettings};
pub use ssor::Ssor;

use crate::error::Location;
use crate::operator::Stencil5;
use crate::operator::{check_shape, grid_shape, shape_of, LinearOperator};
use crate::scalar::to_f64;
use crate::space::Space;
use crate::{Error, Grid, Scalar};

/// `Err(NonPositiveCenter)` for the first free cell whose center is not positive.
pub(crate) fn check_centers<T: Scalar, S: Stencil5<T> + ?Sized>(op: &S) -> Result<(), Error> {
    match op.first_nonpositive_center() {
        None => Ok(()),
        Some((k, value)) => Err(Error::non_positive_center(
            Location::on(op.grid(), k),
            to_f64(value),
        )),
    }
}

/// `Err(GridMismatch)` unless `op` lives on `grid`, the grid a preconditioner was built for.
pub(crate) fn check_built_for<T: Scalar>(
    grid: Grid,
    op: &dyn LinearOperator<T>,
) -> Result<(), Error> {
    check_shape("the preconditioner", shape_of(op), grid_shape(grid))
}

/// An approximate inverse `M⁻¹ ≈ A⁻¹`, applied as `z = M⁻¹ r`.
///
/// # Example
///
/// A preconditioner that scales by a constant (equivalent to plain CG, but shows the trait):
///
/// ```
/// use quintet::prelude::*;
/// use quintet::space::Space;
///
/// struct Scaled(f64);
/// impl Preconditioner<f64> for Scaled {
///     fn apply(&mut self, _op: &dyn LinearOperator<f64>, _space: &dyn Space, r: &[f64], z: &mut [f64]) {
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
    /// `z = M⁻¹ r` for the system with operator `op` (the one being solved, which
    /// [`check`](Preconditioner::check) accepted), with the threads `space` allows. Both slices
    /// have one entry per unknown.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// use quintet::space::Serial;
    /// let grid = Grid::new(2, 1)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mut z = [0.0; 2];
    /// Jacobi::new(&op)?.apply(&op, &Serial, &[4.0, 8.0], &mut z); // centers are 4
    /// assert_eq!(z, [1.0, 2.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn apply(&mut self, op: &dyn LinearOperator<T>, space: &dyn Space, r: &[T], z: &mut [T]);

    /// Check, once per solve before the first iteration, that this preconditioner fits `op`:
    /// the preconditioners of this crate refuse an operator on another grid than the one they
    /// were built from ([`ErrorKind::GridMismatch`](crate::ErrorKind::GridMismatch)), and
    /// multigrid one that is not a [`Stencil5`]. Default: accept.
    ///
    /// # Errors
    ///
    /// Whatever makes the preconditioner unusable with `op`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let small = Grid::new(4, 4)?;
    /// let big = Grid::new(8, 2)?;
    /// let a: Banded5<f64> = Banded5::from_fn(small, |i, j| Coeffs5::laplacian(small, i, j))?;
    /// let b: Banded5<f64> = Banded5::from_fn(big, |i, j| Coeffs5::laplacian(big, i, j))?;
    /// let jacobi = Jacobi::new(&a)?;
    /// assert!(jacobi.check(&a).is_ok());
    /// assert_eq!(jacobi.check(&b).unwrap_err().kind(), ErrorKind::GridMismatch);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn check(&self, op: &dyn LinearOperator<T>) -> Result<(), Error> {
        let _ = op;
        Ok(())
    }

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

    /// Hidden: PCG's `r·z` and direction update fused with this preconditioner's own passes
    /// (`precond/fused.rs`; the argument cannot be named outside the crate). `None`, the
    /// default: not offered, PCG calls [`apply`](Preconditioner::apply) and makes the passes.
    #[doc(hidden)]
    fn fused_direction(&mut self, pass: fused::DirectionPass<'_, T>) -> Option<T> {
        let _ = pass;
        None
    }

    /// Hidden: PCG's update of `x` and `r` fused with this preconditioner's own passes
    /// (`precond/fused.rs`). `None`, the default: not offered.
    #[doc(hidden)]
    fn fused_update(&mut self, pass: fused::UpdatePass<'_, T>) -> Option<(T, T)> {
        let _ = pass;
        None
    }
}

/// The identity preconditioner `M = I`: PCG with it is plain CG.
///
/// ```
/// use quintet::prelude::*;
/// use quintet::space::Serial;
/// let grid = Grid::new(2, 1)?;
/// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let mut z = [0.0; 2];
/// Identity.apply(&op, &Serial, &[1.0, 2.0], &mut z);
/// assert_eq!(z, [1.0, 2.0]);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Identity;

impl<T: Scalar> Preconditioner<T> for Identity {
    fn apply(&mut self, _op: &dyn LinearOperator<T>, _space: &dyn Space, r: &[T], z: &mut [T]) {
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

/// A boxed preconditioner is one: `Pcg<Box<dyn Preconditioner<f64>>>` takes any of them.
///
/// ```
/// use quintet::prelude::*;
/// let grid = Grid::new(16, 16)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let choices: Vec<Box<dyn Preconditioner<f64>>> =
///     vec![Box::new(Jacobi::new(&op)?), Box::new(IncompleteCholesky::mic0(&op)?)];
/// for pre in choices {
///     let mut x = vec![0.0; grid.cells()];
///     assert!(Pcg::new(pre).solve(&op, &vec![1.0; grid.cells()], &mut x)?.converged());
/// }
/// # Ok::<(), quintet::Error>(())
/// ```
impl<T: Scalar, P: Preconditioner<T> + ?Sized> Preconditioner<T> for Box<P> {
    fn apply(&mut self, op: &dyn LinearOperator<T>, space: &dyn Space, r: &[T], z: &mut [T]) {
        (**self).apply(op, space, r, z)
    }
    fn check(&self, op: &dyn LinearOperator<T>) -> Result<(), Error> {
        (**self).check(op)
    }
    fn name(&self) -> &'static str {
        (**self).name()
    }
    fn is_identity(&self) -> bool {
        (**self).is_identity()
    }
    fn fused_direction(&mut self, pass: fused::DirectionPass<'_, T>) -> Option<T> {
        (**self).fused_direction(pass)
    }
    fn fused_update(&mut self, pass: fused::UpdatePass<'_, T>) -> Option<(T, T)> {
        (**self).fused_update(pass)
    }
}

//! A single-precision preconditioner for a double-precision PCG.

use super::Preconditioner;
use crate::blocks::{slice, Blocks};
use crate::operator::{check_shape, shape_of};
use crate::space::Space;
use crate::{Error, LinearOperator};

/// Runs an `f32` preconditioner inside an `f64` PCG: `r` is rounded to `f32`, the inner
/// preconditioner is applied with the `f32` copy of the operator, and `z` is widened back. The
/// preconditioner only has to approximate `A⁻¹`, so single precision costs it nothing in
/// quality but halves the bytes it moves (a multigrid V-cycle is most of a PCG iteration's
/// traffic), while the Krylov iteration, its residuals and the solution stay in `f64`.
///
/// Rounding makes `M⁻¹` symmetric only to about `10⁻⁷` relative. PCG tolerates that at the
/// usual tolerances; for residuals far below `10⁻⁸`, prefer an `f64` preconditioner or
/// [`MixedRefinement`](crate::MixedRefinement).
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(128, 128)?;
/// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let single = op.cast::<f32>()?;
/// let mg = Multigrid::new(&single, MultigridSettings::default())?;
/// let mut pcg = Pcg::new(SinglePrecision::new(single, mg));
/// let mut x = vec![0.0; grid.cells()];
/// let report = pcg.solve(&op, &vec![1.0; grid.cells()], &mut x)?;
/// assert!(report.iterations <= 8);
/// assert_eq!(report.method, "PCG + single-precision preconditioner");
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct SinglePrecision<S, P> {
    low: S,
    inner: P,
    r: Vec<f32>,
    z: Vec<f32>,
    narrow: Blocks<f32>,
    widen: Blocks<f64>,
}

impl<S: LinearOperator<f32>, P: Preconditioner<f32>> SinglePrecision<S, P> {
    /// Wrap `inner`, a preconditioner set up on `low`, the `f32` copy of the operator (see
    /// [`Banded5::cast`](crate::Banded5::cast)).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(16, 16)?;
    /// let single: Banded5<f32> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j).cast())?;
    /// let jacobi = Jacobi::new(&single)?;
    /// let wrapped = SinglePrecision::new(single, jacobi);
    /// assert_eq!(wrapped.inner().name(), "Jacobi");
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(low: S, inner: P) -> SinglePrecision<S, P> {
        let n = low.len();
        SinglePrecision {
            r: vec![0.0; n],
            z: vec![0.0; n],
            narrow: Blocks::for_operator(&low),
            widen: Blocks::new(n, low.on_grid()),
            low,
            inner,
        }
    }

    /// The wrapped `f32` preconditioner.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 4)?;
    /// let single: Banded5<f32> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j).cast())?;
    /// let wrapped = SinglePrecision::new(single, Identity);
    /// assert!(<Identity as Preconditioner<f32>>::is_identity(wrapped.inner()));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn inner(&self) -> &P {
        &self.inner
    }

    /// The `f32` operator the inner preconditioner works with.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 4)?;
    /// let single: Banded5<f32> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j).cast())?;
    /// assert_eq!(SinglePrecision::new(single, Identity).operator().len(), 16);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn operator(&self) -> &S {
        &self.low
    }
}

impl<S: LinearOperator<f32>, P: Preconditioner<f32>> Preconditioner<f64> for SinglePrecision<S, P> {
    fn apply(
        &mut self,
        _op: &dyn LinearOperator<f64>,
        space: &dyn Space,
        r: &[f64],
        z: &mut [f64],
    ) {
        self.narrow.for_each(space, &mut self.r, |cells, low| {
            for (l, &h) in low.iter_mut().zip(slice(r, &cells)) {
                *l = h as f32;
            }
        });
        self.inner.apply(&self.low, space, &self.r, &mut self.z);
        let low = &self.z;
        self.widen.for_each(space, z, |cells, high| {
            for (h, &l) in high.iter_mut().zip(slice(low, &cells)) {
                *h = f64::from(l);
            }
        });
    }

    /// The `f64` operator must have the shape of the `f32` copy, and the inner preconditioner
    /// must fit the copy.
    fn check(&self, op: &dyn LinearOperator<f64>) -> Result<(), Error> {
        check_shape("the f32 operator", shape_of(op), shape_of(&self.low))?;
        self.inner.check(&self.low)
    }

    fn name(&self) -> &'static str {
        "single-precision preconditioner"
    }
}

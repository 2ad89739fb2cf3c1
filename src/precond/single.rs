//! A single-precision preconditioner for a double-precision PCG.

use super::Preconditioner;
use crate::kernels::{slice, Kernels};
use crate::Grid;

/// Runs an `f32` preconditioner inside an `f64` PCG: `r` is rounded to `f32`, the inner
/// preconditioner is applied, and `z` is widened back. The preconditioner only has to
/// approximate `A⁻¹`, so single precision costs it nothing in quality but halves the bytes it
/// moves (a multigrid V-cycle is most of a PCG iteration's traffic), while the Krylov
/// iteration, its residuals and the solution stay in `f64`.
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
/// let mut pcg = Pcg::new(SinglePrecision::new(mg, grid));
/// let mut x = vec![0.0; grid.cells()];
/// let report = pcg.solve(&op, &vec![1.0; grid.cells()], &mut x)?;
/// assert!(report.iterations <= 8);
/// assert_eq!(report.method, "PCG + single-precision preconditioner");
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct SinglePrecision<P> {
    inner: P,
    r: Vec<f32>,
    z: Vec<f32>,
    narrow: Kernels<f32>,
    widen: Kernels<f64>,
}

impl<P: Preconditioner<f32>> SinglePrecision<P> {
    /// Wrap `inner`, a preconditioner set up on the `f32` copy of the operator on `grid`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(16, 16)?;
    /// let single: Banded5<f32> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let wrapped = SinglePrecision::new(Jacobi::new(&single)?, grid);
    /// assert_eq!(wrapped.inner().name(), "Jacobi");
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(inner: P, grid: Grid) -> SinglePrecision<P> {
        let n = grid.cells();
        SinglePrecision {
            inner,
            r: vec![0.0; n],
            z: vec![0.0; n],
            narrow: Kernels::new(grid),
            widen: Kernels::new(grid),
        }
    }

    /// The wrapped `f32` preconditioner.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 4)?;
    /// let wrapped = SinglePrecision::new(Identity, grid);
    /// assert!(<Identity as Preconditioner<f32>>::is_identity(wrapped.inner()));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn inner(&self) -> &P {
        &self.inner
    }
}

impl<P: Preconditioner<f32>> Preconditioner<f64> for SinglePrecision<P> {
    fn apply(&mut self, r: &[f64], z: &mut [f64]) {
        self.narrow.map_blocks(&mut self.r, |_, cells, low| {
            for (l, &h) in low.iter_mut().zip(slice(r, &cells)) {
                *l = h as f32;
            }
            (0.0, 0.0)
        });
        self.inner.apply(&self.r, &mut self.z);
        let low = &self.z;
        self.widen.map_blocks(z, |_, cells, high| {
            for (h, &l) in high.iter_mut().zip(slice(low, &cells)) {
                *h = f64::from(l);
            }
            (0.0, 0.0)
        });
    }

    fn name(&self) -> &'static str {
        "single-precision preconditioner"
    }
}

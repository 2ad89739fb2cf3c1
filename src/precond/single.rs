//! A single-precision preconditioner for a double-precision PCG.

use super::Preconditioner;
use crate::blocks::{slice, zero_fixed, Blocks};
use crate::operator::{check_shape, shape_of};
use crate::scalar::is_positive;
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
        self.apply_low(space, r);
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

    /// `r·z` and the direction straight from the `f32` `z` (widening is exact, so the bits
    /// are those of the `f64` copy): 12 bytes per cell for `r·z` and 20 for the direction,
    /// against 12 to widen, 16 for `r·z` and 24 for the direction. Not offered in a space
    /// with exact sums or on a cut other than PCG's (the blocks could differ).
    fn apply_to_direction(
        &mut self,
        op: &dyn LinearOperator<f64>,
        space: &dyn Space,
        r: &[f64],
        previous: Option<f64>,
        p: &mut [f64],
    ) -> Option<f64> {
        if space.exact_sums() || op.on_grid() != self.low.on_grid() || op.len() != self.low.len() {
            return None;
        }
        self.apply_low(space, r);
        zero_fixed(op.fixed_cells(), &(0..self.z.len()), &mut self.z);
        let rz = self.widen.dot_widened(space, r, &self.z);
        if is_positive(rz) {
            let beta = previous.map(|previous| rz / previous);
            self.widen.direction_widened(space, &self.z, beta, p);
        }
        Some(rz)
    }
}

impl<S: LinearOperator<f32>, P: Preconditioner<f32>> SinglePrecision<S, P> {
    /// `z = M⁻¹r` in `f32`, in the preconditioner's own `z`.
    fn apply_low(&mut self, space: &dyn Space, r: &[f64]) {
        self.narrow.for_each(space, &mut self.r, |cells, low| {
            for (l, &h) in low.iter_mut().zip(slice(r, &cells)) {
                *l = h as f32;
            }
        });
        self.inner.apply(&self.low, space, &self.r, &mut self.z);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::precond::{Multigrid, MultigridSettings};
    use crate::space::{Serial, Threaded};
    use crate::{Banded5, Coeffs5, FixedCells, Grid};

    /// `apply_to_direction` gives the bits of `apply`, zeroing at fixed cells, the `r·z` pass
    /// and the direction update that PCG makes without it.
    #[test]
    fn the_fused_direction_has_the_bits_of_the_separate_passes() {
        let grid = Grid::new(301, 203).unwrap();
        let fixed = FixedCells::new(grid, grid.edge_cells().into_iter().step_by(3)).unwrap();
        let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| {
            let mut row = Coeffs5::laplacian(grid, i, j);
            row.center += 0.1 + 0.05 * ((i * j) as f64 * 0.1).sin(); // a varying storage term
            row
        })
        .unwrap()
        .with_fixed(fixed)
        .unwrap();
        let n = grid.cells();
        let single = op.cast::<f32>().unwrap();
        let mg = Multigrid::new(&single, MultigridSettings::default()).unwrap();
        let mut pre = SinglePrecision::new(single, mg);
        let mut r: Vec<f64> = (0..n).map(|k| (k as f64 * 0.37).sin()).collect();
        zero_fixed(op.fixed_cells(), &(0..n), &mut r);
        let old_p: Vec<f64> = (0..n).map(|k| (k as f64 * 0.11).cos()).collect();
        for space in [&Serial as &dyn Space, &Threaded] {
            for previous in [None, Some(0.75)] {
                let mut blocks = Blocks::for_operator(&op);
                let mut z = vec![0.0; n];
                pre.apply(&op, space, &r, &mut z);
                zero_fixed(op.fixed_cells(), &(0..n), &mut z);
                let rz = blocks.dot(space, &r, &z);
                let mut p = old_p.clone();
                match previous {
                    None => p.copy_from_slice(&z),
                    Some(previous) => blocks.direction_update(space, &z, rz / previous, &mut p),
                }
                let mut fused_p = old_p.clone();
                let fused = pre.apply_to_direction(&op, space, &r, previous, &mut fused_p);
                assert_eq!(fused.map(f64::to_bits), Some(rz.to_bits()));
                assert!(p
                    .iter()
                    .zip(&fused_p)
                    .all(|(a, b)| a.to_bits() == b.to_bits()));
            }
        }
    }
}

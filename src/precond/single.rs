//! A single-precision preconditioner for a double-precision PCG.

use super::fused::{DirectionPass, UpdatePass};
use super::Preconditioner;
use crate::blocks::{slice, zero_fixed, Blocks};
use crate::operator::{check_shape, shape_of};
use crate::scalar::is_positive;
use crate::space::Space;
use crate::{Error, LinearOperator};

/// Runs an `f32` preconditioner inside an `f64` PCG: `r` is rounded to `f32`, the inner
/// preconditioner is applied with the `f32` copy of the operator, and `z` is widened back
/// (inside [`Pcg`](crate::Pcg), `r` is rounded in the pass that updates it and `z` is read in
/// `f32` by the passes that use it, so neither conversion costs a pass of its own). The
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
/// // The f32 copy stored by colour: the hierarchy reads its fine level there.
/// let single = Banded5ByColour::from_stencil(&op)?;
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
    /// [`Banded5::cast`](crate::Banded5::cast); for a multigrid cycle,
    /// [`Banded5ByColour::from_stencil`](crate::Banded5ByColour::from_stencil)).
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
        self.round(space, r);
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

    /// `r·z` and the direction straight from the `f32` `z` (widening is exact, so the bits
    /// are those of the `f64` copy): 12 bytes per cell for `r·z` and 20 for the direction,
    /// against 12 to widen, 16 for `r·z` and 24 for the direction; and no rounding pass when
    /// [`fused_update`](Preconditioner::fused_update) rounded `r` already.
    fn fused_direction(&mut self, pass: DirectionPass<'_, f64>) -> Option<f64> {
        let DirectionPass {
            op,
            space,
            r,
            rounded,
            previous,
            p,
        } = pass;
        if !self.fuses(op, space) {
            return None;
        }
        if !rounded {
            self.round(space, r);
        }
        self.inner.apply(&self.low, space, &self.r, &mut self.z);
        zero_fixed(op.fixed_cells(), &(0..self.z.len()), &mut self.z);
        let rz = self.widen.dot_widened(space, r, &self.z);
        if is_positive(rz) {
            let beta = previous.map(|previous| rz / previous);
            self.widen.direction_widened(space, &self.z, beta, p);
        }
        Some(rz)
    }

    /// PCG's update of `x` and `r` with `r` rounded to `f32` in the same pass: 4 bytes per
    /// cell written instead of a 12-byte rounding pass before the next `M⁻¹`.
    fn fused_update(&mut self, pass: UpdatePass<'_, f64>) -> Option<(f64, f64)> {
        let UpdatePass {
            op,
            space,
            alpha,
            p,
            q,
            x,
            r,
        } = pass;
        if !self.fuses(op, space) {
            return None;
        }
        Some(
            self.widen
                .cg_update_rounding(space, alpha, p, q, x, r, &mut self.r),
        )
    }
}

impl<S: LinearOperator<f32>, P: Preconditioner<f32>> SinglePrecision<S, P> {
    /// `r` rounded to `f32`, into the preconditioner's own `r`.
    fn round(&mut self, space: &dyn Space, r: &[f64]) {
        self.narrow.for_each(space, &mut self.r, |cells, low| {
            for (l, &h) in low.iter_mut().zip(slice(r, &cells)) {
                *l = h as f32;
            }
        });
    }

    /// Whether the fused passes may run: PCG's blocks are cut like `widen` (a space with exact
    /// sums may cut them per entry, and another grid would cut them otherwise).
    fn fuses(&self, op: &dyn LinearOperator<f64>, space: &dyn Space) -> bool {
        !space.exact_sums() && op.on_grid() == self.low.on_grid() && op.len() == self.low.len()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::precond::{Multigrid, MultigridSettings};
    use crate::space::{Serial, Threaded};
    use crate::{Banded5, Coeffs5, FixedCells, Grid};

    fn bits(v: &[f64]) -> Vec<u64> {
        v.iter().map(|v| v.to_bits()).collect()
    }

    /// The fused passes give the bits of `apply`, zeroing at fixed cells, the `r·z` pass, the
    /// direction update, `cg_update` and the rounding of `r` that PCG makes without them.
    #[test]
    fn the_fused_passes_have_the_bits_of_the_separate_ones() {
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
            let mut blocks = Blocks::for_operator(&op);
            for previous in [None, Some(0.75)] {
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
                let pass = DirectionPass {
                    op: &op,
                    space,
                    r: &r,
                    rounded: false,
                    previous,
                    p: &mut fused_p,
                };
                let fused = pre.fused_direction(pass);
                assert_eq!(fused.map(f64::to_bits), Some(rz.to_bits()));
                assert_eq!(bits(&p), bits(&fused_p));
            }
            // The update, then a direction from the `r` it rounded.
            let q: Vec<f64> = (0..n).map(|k| (k as f64 * 0.23).sin()).collect();
            let (mut x, mut r1) = (old_p.clone(), r.clone());
            let expected = blocks.cg_update(space, 0.3, &old_p, &q, &mut x, &mut r1);
            let (mut fused_x, mut fused_r) = (old_p.clone(), r.clone());
            let pass = UpdatePass {
                op: &op,
                space,
                alpha: 0.3,
                p: &old_p,
                q: &q,
                x: &mut fused_x,
                r: &mut fused_r,
            };
            let fused = pre.fused_update(pass).unwrap();
            assert_eq!(
                (fused.0.to_bits(), fused.1.to_bits()),
                (expected.0.to_bits(), expected.1.to_bits())
            );
            assert_eq!((bits(&x), bits(&r1)), (bits(&fused_x), bits(&fused_r)));
            let mut from_rounded = old_p.clone();
            let pass = DirectionPass {
                op: &op,
                space,
                r: &r1,
                rounded: true,
                previous: Some(0.75),
                p: &mut from_rounded,
            };
            let rz_rounded = pre.fused_direction(pass).unwrap();
            let mut from_r = old_p.clone();
            let pass = DirectionPass {
                op: &op,
                space,
                r: &r1,
                rounded: false,
                previous: Some(0.75),
                p: &mut from_r,
            };
            assert_eq!(
                pre.fused_direction(pass).unwrap().to_bits(),
                rz_rounded.to_bits()
            );
            assert_eq!(bits(&from_rounded), bits(&from_r));
        }
    }

    /// Forwards `apply` only, so PCG makes its own passes.
    struct Unfused<P>(P);

    impl<P: Preconditioner<f64>> Preconditioner<f64> for Unfused<P> {
        fn apply(
            &mut self,
            op: &dyn LinearOperator<f64>,
            space: &dyn Space,
            r: &[f64],
            z: &mut [f64],
        ) {
            self.0.apply(op, space, r, z);
        }
    }

    /// Whole PCG solves, with true-residual refreshes every third iteration (the rounded `r`
    /// must not outlive a replaced `r`), give the same bits with and without the fused passes.
    #[test]
    fn pcg_with_the_fused_passes_gives_the_bits_of_pcg_without() {
        use crate::{IterativeSolver, Pcg, SolveOptions, Workspace};
        let grid = Grid::new(190, 170).unwrap();
        let fixed = FixedCells::new(grid, grid.edge_cells().into_iter().step_by(5)).unwrap();
        let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| {
            let mut row = Coeffs5::laplacian(grid, i, j);
            row.center += 1e-4 * (1.0 + ((i + 3 * j) as f64 * 0.2).sin());
            row
        })
        .unwrap()
        .with_fixed(fixed)
        .unwrap();
        let n = grid.cells();
        let single = op.cast::<f32>().unwrap();
        let mg = Multigrid::new(&single, MultigridSettings::default()).unwrap();
        let rhs: Vec<f64> = (0..n).map(|k| (k as f64 * 0.013).cos()).collect();
        let options = SolveOptions::default().tolerance(1e-10).residual_refresh(3);
        for threads in [false, true] {
            let mut fused = Pcg::new(SinglePrecision::new(single.clone(), mg.clone()))
                .with_options(options.clone());
            let mut plain = Pcg::new(Unfused(SinglePrecision::new(single.clone(), mg.clone())))
                .with_options(options.clone());
            let mut ws = Workspace::new().with_threads(threads);
            let (mut x, mut y) = (vec![0.0; n], vec![0.0; n]);
            let a = fused.solve_with(&op, &rhs, &mut x, &mut ws).unwrap();
            let b = plain.solve_with(&op, &rhs, &mut y, &mut ws).unwrap();
            assert!(a.iterations > 3, "{a}");
            assert_eq!(a.iterations, b.iterations);
            assert_eq!(a.residual_norm.to_bits(), b.residual_norm.to_bits());
            assert_eq!(bits(&x), bits(&y));
        }
    }
}

//! The default coarse operator ([`CoarseOperator::LargerConductance`]): the upscaled operator,
//! each coarse face stiffened to the lumped Galerkin conductance where that one is larger.
//!
//! The upscaled conductances (series along fine lines, parallel across a face) follow the
//! fine coefficients along each axis but miss the energy an interpolated correction spends
//! *across* the lines when the interpolation weights change from one fine line to the next —
//! at layer boundaries and block edges. There they under-estimate the energy of some coarse
//! corrections, the V-cycle over-corrects them (eigenvalues of `B·A` above 2), and MG-PCG needs
//! more iterations as the grid grows. The lumped Galerkin product `Pᵀ·A·P` (`galerkin.rs`)
//! sees that energy, but lumping 25 points onto 5 costs accuracy where the upscaled operator
//! is exact (it is the rediscretised operator of a homogeneous medium). Taking, per coarse
//! face, the larger of the two conductances keeps the upscaled operator wherever it is at
//! least as stiff and raises it where the Galerkin product finds more energy; the centers keep
//! the upscaled row-sum excess (storage, fixed neighbours), so every coarse operator is again a
//! symmetric M-matrix with non-negative excess.
//!
//! Measured (`tests/multigrid.rs`, `examples/iterations.rs`): on the contrast-10⁴ field
//! MG-PCG needs 9 iterations from 64² to 2048² (upscaled alone: 13–24, growing with n), and
//! the plain standalone cycle converges (it diverged); on Poisson the hierarchy is the
//! upscaled one, bit for bit.
//!
//! On a level with even sides whose couplings between unknowns are all equal the Galerkin
//! product is not computed: there it never came out larger than the upscaled conductance (the
//! unit test in `stiffen_tests.rs` builds both ways on such fields with storage and fixed
//! cells and compares the bits), and skipping it keeps the set-up of a homogeneous problem near
//! the upscaled cost.
//! (Beside the one-cell-wide aggregates of an odd side it is larger, so such levels are
//! stiffened.)

use super::aggregate::Axis;
use super::galerkin::galerkin_lumped;
use crate::operator::{FixedCells, Stencil5};
use crate::{Coeffs5, Grid, Scalar};

#[cfg(doc)]
use super::CoarseOperator;

/// A coarse level as the stiffening sees it: its grid, its cells without an unknown, and the
/// interpolation from the finer level (axes and the stored `f32` weights).
pub(super) struct CoarseLevel<'a> {
    pub(super) grid: Grid,
    pub(super) inactive: &'a FixedCells,
    pub(super) axes: (&'a Axis, &'a Axis),
    pub(super) weights: (&'a [f32], &'a [f32]),
}

/// Raise each coupling of the coarse `rows` (built by the upscaled rule from `fine`) to the
/// lumped Galerkin conductance where that is larger (see the module notes); `false`, with
/// nothing done, when the fine couplings between unknowns are all equal, unless `always`.
/// The caller recomputes what depends on the centers.
pub(super) fn stiffen<T: Scalar, R: Stencil5<T> + ?Sized>(
    fine: &R,
    coarse: CoarseLevel<'_>,
    rows: &mut [Coeffs5<T>],
    always: bool,
) -> bool {
    if !always && uniform_couplings(fine) {
        return false;
    }
    let active: Vec<bool> = (0..coarse.grid.cells())
        .map(|k| !coarse.inactive.contains(k))
        .collect();
    let (wx, wy) = coarse.weights;
    let widen = |w: f32| T::from(w).unwrap_or_else(T::zero);
    let galerkin = galerkin_lumped(
        fine,
        coarse.axes.0,
        coarse.axes.1,
        |k| (widen(wx[k]), widen(wy[k])),
        coarse.grid,
        &active,
    );
    let couplings = |r: &Coeffs5<T>| r.west + r.east + r.south + r.north;
    // The stronger coupling is the more negative one.
    let stronger = |u: T, g: T| if g < u { g } else { u };
    for ((row, g), _) in rows
        .iter_mut()
        .zip(&galerkin)
        .zip(&active)
        .filter(|(_, &on)| on)
    {
        let excess = row.center + couplings(row);
        let stiff = Coeffs5 {
            center: T::zero(),
            west: stronger(row.west, g.west),
            east: stronger(row.east, g.east),
            south: stronger(row.south, g.south),
            north: stronger(row.north, g.north),
        };
        *row = Coeffs5 {
            center: excess - couplings(&stiff),
            ..stiff
        };
    }
    true
}

/// Whether both sides of `fine` are even and every coupling between two unknowns has the same
/// value (couplings to fixed cells and the centers may differ). (Next to the one-cell-wide
/// aggregates of an odd side the Galerkin product is larger even in a uniform medium.)
pub(super) fn uniform_couplings<T: Scalar, R: Stencil5<T> + ?Sized>(fine: &R) -> bool {
    let g = fine.grid();
    if g.nx() % 2 == 1 || g.ny() % 2 == 1 {
        return false;
    }
    let fixed = fine.fixed().filter(|f| !f.is_empty());
    if fixed.is_none() {
        // Every cell an unknown: the given couplings are the eliminated ones, and the first
        // (sides even, so at least 2) is cell 0's east.
        let (nx, ny) = (g.nx(), g.ny());
        let first = fine.coeffs(0, 0).east;
        return (0..ny).all(|j| {
            (0..nx).all(|i| {
                let c = fine.coeffs(i, j);
                (i + 1 == nx || c.east == first) && (j + 1 == ny || c.north == first)
            })
        });
    }
    let free = |k: usize| !fixed.is_some_and(|f| f.contains(k));
    let mut first: Option<T> = None;
    for j in 0..g.ny() {
        for i in 0..g.nx() {
            let k = i + g.nx() * j;
            if !free(k) {
                continue;
            }
            let c = fine.eliminated_coeffs(i, j);
            let east = (i + 1 < g.nx() && free(k + 1)).then_some(c.east);
            let north = (j + 1 < g.ny() && free(k + g.nx())).then_some(c.north);
            for v in [east, north].into_iter().flatten() {
                match first {
                    None => first = Some(v),
                    Some(f) if f != v => return false,
                    Some(_) => {}
                }
            }
        }
    }
    true
}

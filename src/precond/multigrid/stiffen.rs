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
//! unit test below builds both ways on such fields with storage and fixed cells and compares
//! the bits), and skipping it keeps the set-up of a homogeneous problem near the upscaled cost.
//! (Beside the one-cell-wide aggregates of an odd side it is larger, so such levels are
//! stiffened.)

use super::galerkin::galerkin_lumped;
use super::level::{inverse_centers, Level};
use crate::operator::Stencil5;
use crate::{Coeffs5, Scalar};

#[cfg(doc)]
use super::CoarseOperator;

/// Raise each coupling of `level` (built by the upscaled rule from `fine`) to the lumped
/// Galerkin conductance where that is larger (see the module notes); nothing to do when the
/// fine couplings between unknowns are all equal, unless `always`.
pub(super) fn stiffen<T: Scalar, R: Stencil5<T> + ?Sized>(
    level: &mut Level<T>,
    fine: &R,
    always: bool,
) {
    if !always && uniform_couplings(fine) {
        return;
    }
    let grid = level.op.grid;
    let active: Vec<bool> = (0..grid.cells())
        .map(|k| !level.op.inactive.contains(k))
        .collect();
    let (wx, wy) = (&level.wx, &level.wy);
    let widen = |w: f32| T::from(w).unwrap_or_else(T::zero);
    let galerkin = galerkin_lumped(
        fine,
        &level.ax,
        &level.ay,
        |k| (widen(wx[k]), widen(wy[k])),
        grid,
        &active,
    );
    let couplings = |r: &Coeffs5<T>| r.west + r.east + r.south + r.north;
    // The stronger coupling is the more negative one.
    let stronger = |u: T, g: T| if g < u { g } else { u };
    for ((row, g), _) in level
        .op
        .rows
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
    level.inverse_centers = inverse_centers(&level.op.rows, |k| active[k]);
}

/// Whether both sides of `fine` are even and every coupling between two unknowns has the same
/// value (couplings to fixed cells and the centers may differ). (Next to the one-cell-wide
/// aggregates of an odd side the Galerkin product is larger even in a uniform medium.)
fn uniform_couplings<T: Scalar, R: Stencil5<T> + ?Sized>(fine: &R) -> bool {
    let g = fine.grid();
    if g.nx() % 2 == 1 || g.ny() % 2 == 1 {
        return false;
    }
    let fixed = fine.fixed();
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

#[cfg(test)]
mod tests {
    use super::super::CoarseOperator;
    use super::*;
    use crate::testing::{diffusion as field, Numbers};

    fn bits(level: &Level<f64>) -> Vec<[u64; 5]> {
        level
            .op
            .rows
            .iter()
            .map(|c| [c.center, c.west, c.east, c.south, c.north].map(f64::to_bits))
            .collect()
    }

    /// The claim behind skipping uniform levels: where all couplings are equal, the stiffened
    /// operator is the upscaled one, bit for bit, whatever the storage, fixed cells and sides.
    #[test]
    fn uniform_couplings_keep_the_upscaled_operator() {
        let mut numbers = Numbers(7);
        for (nx, ny) in [(16, 16), (18, 12), (34, 28), (10, 40)] {
            let fixed = [0, nx + 3, nx * ny / 2 + 1, nx * ny - 1];
            let storage: Vec<f64> = (0..nx * ny).map(|_| numbers.next()).collect();
            for (store, cells) in [(false, &[][..]), (true, &fixed[..]), (false, &fixed[..])] {
                let op = field(
                    nx,
                    ny,
                    &mut || 1.5,
                    &|k| if store { storage[k] } else { 0.0 },
                    cells,
                );
                assert!(uniform_couplings(&op));
                // An odd side is not skipped: its one-cell-wide aggregates are stiffened.
                let odd = field(nx + 1, ny, &mut || 1.5, &|_| 0.0, &[]);
                assert!(!uniform_couplings(&odd));
                let plain = Level::below(&op, CoarseOperator::Upscaled).unwrap();
                let mut forced = plain.clone();
                stiffen(&mut forced, &op, true);
                assert_eq!(
                    bits(&plain),
                    bits(&forced),
                    "{nx} x {ny}, {store}, {cells:?}"
                );
            }
        }
    }

    /// On random fields (conductances over four decades) the stiffened coarse operator is a
    /// symmetric M-matrix with non-negative excess — weakly diagonally dominant, so positive
    /// semi-definite by Gershgorin's circle theorem — whose every coupling is at least as strong
    /// as the upscaled one, and stronger somewhere.
    #[test]
    fn stiffened_levels_are_symmetric_m_matrices() {
        let mut numbers = Numbers(11);
        for (nx, ny) in [(24, 24), (31, 18)] {
            let fixed = [nx, 2 * nx + 5, nx * ny - 2];
            let mut conductance = || 10f64.powf(4.0 * numbers.next() - 2.0);
            let op = field(nx, ny, &mut conductance, &|_| 0.0, &fixed);
            assert!(!uniform_couplings(&op));
            let plain = Level::below(&op, CoarseOperator::Upscaled).unwrap();
            let stiff = Level::below(&op, CoarseOperator::LargerConductance).unwrap();
            let (cnx, rows) = (stiff.op.grid.nx(), &stiff.op.rows);
            let mut raised = 0;
            for (k, (s, p)) in rows.iter().zip(&plain.op.rows).enumerate() {
                for (a, b) in [(s.west, p.west), (s.east, p.east)] {
                    assert!(a <= b && a <= 0.0, "cell {k}");
                    raised += usize::from(a < b);
                }
                for (a, b) in [(s.south, p.south), (s.north, p.north)] {
                    assert!(a <= b && a <= 0.0, "cell {k}");
                }
                let excess = s.center + s.west + s.east + s.south + s.north;
                assert!(excess >= -1e-12 * s.center, "cell {k}: excess {excess}");
                if k % cnx + 1 < cnx {
                    assert_eq!(s.east.to_bits(), rows[k + 1].west.to_bits());
                }
                if k + cnx < rows.len() {
                    assert_eq!(s.north.to_bits(), rows[k + cnx].south.to_bits());
                }
            }
            assert!(raised > 0);
        }
    }
}

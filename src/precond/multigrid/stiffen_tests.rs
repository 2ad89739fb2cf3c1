//! Unit tests of the stiffened coarse operators (`stiffen.rs`).

use super::level::Level;
use super::stiffen::uniform_couplings;
use super::CoarseOperator;
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
            forced.stiffen_from(&op, true);
            assert_eq!(
                bits(&plain),
                bits(&forced),
                "{nx} x {ny}, {store}, {cells:?}"
            );
        }
    }
}

/// Without fixed cells, one interior face of another conductance anywhere (last row and
/// column included) makes the couplings non-uniform; a different wall conductance (it only
/// enters a center) does not.
#[test]
fn uniform_couplings_find_one_different_face() {
    let (nx, ny) = (6, 4);
    let cells = nx * ny;
    for changed in 0..2 * cells {
        let mut call = 0;
        let mut conductance = || {
            call += 1;
            if call - 1 == changed {
                2.0
            } else {
                1.5
            }
        };
        let op = field(nx, ny, &mut conductance, &|_| 0.0, &[]);
        // `field` draws every cell's east, then every cell's north conductance.
        let interior = if changed < cells {
            changed % nx + 1 < nx
        } else {
            (changed - cells) / nx + 1 < ny
        };
        assert_eq!(uniform_couplings(&op), !interior, "conductance {changed}");
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

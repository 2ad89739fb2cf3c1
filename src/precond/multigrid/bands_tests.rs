//! The smoothing passes give the same bits whatever the bands of rows and whether they run
//! side by side: every cell gets the same expression from the same values (the red-black
//! ordering argument of the module notes), and each coarse cell adds its restriction terms in
//! the same order.

use super::band_scratch_rows;
use crate::precond::multigrid::smooth::Rows;
use crate::precond::multigrid::{Multigrid, MultigridSettings};
use crate::testing::Numbers;
use crate::{Banded5, Coeffs5, FixedCells, Grid};

/// A symmetric diffusion operator with conductances over four orders of magnitude, a little
/// storage, and scattered fixed cells.
fn random_operator(grid: Grid, seed: u64) -> Banded5<f64> {
    let mut g = Numbers(seed);
    let (nx, ny, n) = (grid.nx(), grid.ny(), grid.cells());
    let mut cond = || 10f64.powf(4.0 * g.next() - 2.0);
    let east: Vec<f64> = (0..n)
        .map(|k| if (k + 1) % nx != 0 { cond() } else { 0.0 })
        .collect();
    let north: Vec<f64> = (0..n)
        .map(|k| if k + nx < n { cond() } else { 0.0 })
        .collect();
    let op = Banded5::from_fn(grid, |i, j| {
        let k = i + nx * j;
        let west = if i > 0 { east[k - 1] } else { 0.0 };
        let south = if j > 0 { north[k - nx] } else { 0.0 };
        Coeffs5 {
            center: west + east[k] + south + north[k] + 1e-3 * (1 + k % 7) as f64,
            west: -west,
            east: -east[k],
            south: -south,
            north: -north[k],
        }
    })
    .unwrap();
    let fixed = (0..n).filter(|k| (k * 7919 + seed as usize) % 37 == 0);
    let _ = ny;
    op.with_fixed(FixedCells::new(grid, fixed).unwrap())
        .unwrap()
}

fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|e| e.to_bits()).collect()
}

/// Pre-smoothing with restriction and prolongation with post-smoothing, on the fine level
/// (products through the operator) and the first coarse level (stored rows), in 1 to 6 bands,
/// serial and side by side: the same bits as one band.
#[test]
fn bands_do_not_change_the_bits() {
    for (nx, ny, sweeps, seed) in [
        (23, 200, 3, 1u64),
        (40, 201, 2, 2),
        (7, 263, 1, 3),
        (31, 199, 4, 4),
    ] {
        let grid = Grid::new(nx, ny).unwrap();
        let op = random_operator(grid, seed);
        let settings = MultigridSettings {
            smoothing_sweeps: sweeps,
            coarsest_cells: 16,
            ..Default::default()
        };
        let mut mg = Multigrid::new(&op, settings).unwrap();
        let mut g = Numbers(seed + 10);
        let b: Vec<f64> = (0..grid.cells()).map(|_| g.next() - 0.5).collect();
        let per_band = band_scratch_rows(sweeps) * nx;
        let fine_inv = mg.fine_inverse_centers.clone();
        let (level0, rest) = mg.levels.split_at_mut(1);
        let (level0, level1) = (&mut level0[0], &mut rest[0]);
        // Coarse-level inputs: a right-hand side and the level below's correction.
        let coarse_b: Vec<f64> = (0..level0.b.len()).map(|_| g.next() - 0.5).collect();
        let below_x: Vec<f64> = (0..level1.x.len()).map(|_| g.next() - 0.5).collect();
        let coarse_x: Vec<f64> = (0..level0.x.len()).map(|_| g.next() - 0.5).collect();
        let mut reference = None;
        for bands in 1..=6 {
            for parallel in [false, true] {
                let mut scratch = vec![0.0; 6 * per_band];
                // Fine level.
                let fine = Rows {
                    op: &op,
                    inv: &fine_inv,
                    b: &b,
                    stored: None,
                    by_colour: None,
                };
                let mut x = vec![f64::NAN; grid.cells()];
                let mut restricted = vec![f64::NAN; level0.b.len()];
                let (transfer, _) = level0.transfer_and_rhs();
                fine.pre_smooth_restrict(
                    &mut x,
                    &mut scratch,
                    sweeps,
                    bands,
                    parallel,
                    &transfer,
                    &mut restricted,
                );
                let pre = x.clone();
                fine.prolong_smooth(
                    &mut x,
                    &mut scratch,
                    sweeps,
                    bands,
                    parallel,
                    &transfer,
                    &coarse_x,
                );
                // First coarse level, stored rows.
                let coarse = Rows {
                    op: &level0.op,
                    inv: &level0.inverse_centers,
                    b: &coarse_b,
                    stored: Some(&level0.op.rows),
                    by_colour: None,
                };
                let mut y = vec![f64::NAN; level0.x.len()];
                let mut restricted1 = vec![f64::NAN; level1.b.len()];
                let (transfer1, _) = level1.transfer_and_rhs();
                coarse.pre_smooth_restrict(
                    &mut y,
                    &mut scratch,
                    sweeps,
                    bands,
                    parallel,
                    &transfer1,
                    &mut restricted1,
                );
                coarse.prolong_smooth(
                    &mut y,
                    &mut scratch,
                    sweeps,
                    bands,
                    parallel,
                    &transfer1,
                    &below_x,
                );
                let got = [
                    bits(&pre),
                    bits(&restricted),
                    bits(&x),
                    bits(&y),
                    bits(&restricted1),
                ];
                assert!(got
                    .iter()
                    .all(|v| v.iter().all(|&e| !f64::from_bits(e).is_nan())));
                match &reference {
                    None => reference = Some(got),
                    Some(r) => assert_eq!(
                        r, &got,
                        "{nx} x {ny}, {sweeps} sweeps, {bands} bands, parallel {parallel}"
                    ),
                }
            }
        }
    }
}

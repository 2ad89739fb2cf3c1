//! A coarse level built in bands of fine rows, serial or side by side, has the bits of the
//! level built in one sweep: the passes give every fine cell the same expression from the
//! same values, and every coarse entry gets its terms in the order of the one sweep (the
//! bands' own coarse rows from the band, the coarse rows at a cut from the cut's step).

use super::{sweep_with_windows, Swept, HISTORY, MIN_BAND_ROWS};
use crate::precond::multigrid::sweep::Sweep;
use crate::precond::multigrid::{CoarseOperator, Level};
use crate::testing::Numbers;
use crate::{Banded5, Coeffs5, FixedCells, Grid};

/// The even rows where `bands` bands cut a grid of `ny` rows (as `cuts` makes them).
fn cut_rows(ny: usize, bands: usize) -> Vec<usize> {
    let cuts = super::cuts(ny, bands);
    cuts[1..cuts.len() - 1].to_vec()
}

/// A symmetric diffusion operator with conductances over four orders of magnitude, some
/// zero (barriers), storage on some cells, fixed cells scattered sparsely (so that runs of
/// rows stay clear of them and take the fast paths) and on the rows next to the cuts of 2 to
/// 6 bands, and a column of fixed cells in part of the grid.
fn random_operator(grid: Grid, seed: u64) -> Banded5<f64> {
    let mut g = Numbers(seed);
    let (nx, ny, n) = (grid.nx(), grid.ny(), grid.cells());
    let mut cond = || {
        let u = g.next();
        if u < 0.02 {
            0.0
        } else {
            10f64.powf(4.0 * u - 2.0)
        }
    };
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
        let storage = if k % 5 == 0 {
            1e-3 * (1 + k % 7) as f64
        } else {
            0.0
        };
        Coeffs5 {
            center: west + east[k] + south + north[k] + storage + 1e-9,
            west: -west,
            east: -east[k],
            south: -south,
            north: -north[k],
        }
    })
    .unwrap();
    let mut fixed: Vec<usize> = (0..n)
        .filter(|k| (k * 7919 + seed as usize) % 401 == 0)
        .collect();
    for bands in 2..=6 {
        for cut in cut_rows(ny, bands) {
            // Inside the cut's zone: on the rows either side and a few rows away.
            for j in [cut - 1, cut, cut + 3, cut - 4] {
                fixed.push((j * 7 + bands) % nx + nx * j);
            }
        }
    }
    fixed.extend((ny / 3..ny / 2).map(|j| nx / 2 + nx * j));
    fixed.sort_unstable();
    fixed.dedup();
    op.with_fixed(FixedCells::new(grid, fixed).unwrap())
        .unwrap()
}

/// Bits of everything a level holds (its `Debug` text prints every float exactly).
fn level_text(level: &Level<f64>) -> String {
    format!("{level:?}")
}

/// Levels of random fields with fixed cells (odd sides, narrow and wide grids, a grid with
/// no fixed cells), both coarse-operator rules, built in 1 to 6 bands, serial and side by
/// side: the bits of the one-band build.
#[test]
fn bands_build_the_bits_of_one_sweep() {
    for (nx, ny, seed) in [(23, 200, 1u64), (40, 201, 2), (7, 263, 3), (131, 199, 4)] {
        let grid = Grid::new(nx, ny).unwrap();
        let ops = [
            random_operator(grid, seed),
            Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j)).unwrap(),
        ];
        for op in &ops {
            for rule in [CoarseOperator::Upscaled, CoarseOperator::LumpedGalerkin] {
                let one = Level::below_in_bands(op, rule, 1e-10, 1, false)
                    .unwrap()
                    .unwrap();
                let reference = level_text(&one);
                for bands in 1..=6 {
                    for parallel in [false, true] {
                        let level = Level::below_in_bands(op, rule, 1e-10, bands, parallel)
                            .unwrap()
                            .unwrap();
                        assert!(
                            level_text(&level) == reference,
                            "{nx} x {ny}, {rule:?}, {bands} bands, parallel {parallel}"
                        );
                    }
                }
            }
        }
    }
}

/// The bits of what a sweep builds.
fn swept_bits(swept: &Swept<f64>) -> (Vec<bool>, Vec<u64>) {
    let mut bits: Vec<u64> = swept
        .wx
        .iter()
        .chain(&swept.wy)
        .map(|v| v.to_bits())
        .collect();
    for r in &swept.rows {
        bits.extend([r.center, r.west, r.east, r.south, r.north].map(f64::to_bits));
    }
    (swept.active.clone(), bits)
}

/// Windows of pass 0's output that move down a band (the smallest allowed, sizes that move at
/// rows of either parity, the default) give the bits of a window holding the whole band, for
/// 1 to 6 bands: the rows a pass reads are still there, unchanged, after each move (a
/// refactoring check against the crate's own whole-band sweep; common practice).
#[test]
fn moving_windows_keep_the_bits_of_whole_bands() {
    for (nx, ny, seed) in [(23, 200, 1u64), (131, 199, 4)] {
        let op = random_operator(Grid::new(nx, ny).unwrap(), seed);
        let sweep = Sweep::new(&op, 1e-10);
        for bands in 1..=6 {
            let whole = sweep_with_windows(&sweep, bands, false, ny).unwrap();
            for window_rows in [HISTORY + 1, HISTORY + 2, 13, super::WINDOW_ROWS] {
                let moved = sweep_with_windows(&sweep, bands, true, window_rows).unwrap();
                assert!(
                    swept_bits(&moved) == swept_bits(&whole),
                    "{nx} x {ny}, {bands} bands, window of {window_rows} rows"
                );
            }
        }
    }
}

/// The bands are as many as asked for while each keeps its minimum of rows, and every cut
/// leaves the cut's zone of coarse rows inside the two bands it separates.
#[test]
fn cuts_keep_whole_zones() {
    for ny in [1, 2, 63, 64, 65, 200, 263, 2000] {
        for bands in 1..=8 {
            let cuts = super::cuts(ny, bands);
            assert_eq!((cuts[0], cuts[cuts.len() - 1]), (0, ny));
            for pair in cuts.windows(2) {
                assert!(pair[0] % 2 == 0 && pair[0] < pair[1], "{ny} rows, {cuts:?}");
                if cuts.len() > 2 {
                    assert!(pair[1] - pair[0] >= MIN_BAND_ROWS, "{ny} rows, {cuts:?}");
                }
            }
        }
    }
}

/// An asymmetric pair of couplings in any band (near a cut, in the first and the last band)
/// gives `None` for every number of bands, as in one sweep.
#[test]
fn any_band_finds_an_asymmetry() {
    let grid = Grid::new(37, 230).unwrap();
    let base = random_operator(grid, 7);
    let mut rows = vec![3, 229];
    rows.extend(cut_rows(230, 2));
    rows.extend(cut_rows(230, 3).iter().map(|j| j + 1));
    for j in rows {
        let mut north = base.north().to_vec();
        let k = 11 + 37 * (j - 1);
        north[k] -= 0.5;
        let op = Banded5::new(
            grid,
            base.center().to_vec(),
            base.west().to_vec(),
            base.east().to_vec(),
            base.south().to_vec(),
            north,
        )
        .unwrap();
        for bands in 1..=6 {
            for parallel in [false, true] {
                let built =
                    Level::below_in_bands(&op, CoarseOperator::Upscaled, 1e-10, bands, parallel)
                        .unwrap();
                assert!(
                    built.is_none(),
                    "row {j}, {bands} bands, parallel {parallel}"
                );
            }
        }
    }
}

/// Two pairs of cells coupled so strongly that their paths' products overflow (the coarse
/// centers come out NaN), one in the first and one in the last piece of the coarse cells:
/// every number of bands reports the first, as one sweep does.
#[test]
fn the_first_pivot_at_fault_is_reported() {
    let grid = Grid::new(30, 240).unwrap();
    let strong = |i: usize, j: usize| (j == 20 || j == 200) && (i == 20 || i == 21);
    let op = Banded5::from_fn(grid, |i, j| {
        let mut c = Coeffs5::laplacian(grid, i, j);
        if strong(i, j) {
            c.center += 1.5e308;
            if i == 20 {
                c.east = -1.5e308;
            } else {
                c.west = -1.5e308;
            }
        }
        c
    })
    .unwrap();
    let one = Level::below_in_bands(&op, CoarseOperator::Upscaled, 1e-10, 1, false).unwrap_err();
    assert_eq!(one.kind(), crate::ErrorKind::PivotBreakdown);
    for bands in 1..=6 {
        for parallel in [false, true] {
            let err = Level::below_in_bands(&op, CoarseOperator::Upscaled, 1e-10, bands, parallel)
                .unwrap_err();
            assert_eq!(format!("{err:?}"), format!("{one:?}"), "{bands} bands");
        }
    }
    // The first pair's neighbourhood is named (cell (18, 18)), not the second's.
    assert!(format!("{one}").contains("j = 18)"), "{one}");
}

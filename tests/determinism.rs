//! Same coefficients, same bits: closure vs banded operators, serial vs threaded kernels, and
//! any number of threads (common practice for reproducible numerical software: float addition
//! is not associative, so the reduction order must not depend on scheduling).

mod common;

use common::engines::engines;
use common::{random_sdd, Problem};
use quintet::prelude::*;

/// Run every engine of the registry that handles the problem on `op` from `x0`, its
/// preconditioners built from `banded` (the same coefficients), returning (x, history) per
/// engine. Slow engines run a fixed number of iterations: the bits are compared, converged or
/// not.
fn run_all(
    banded: &Banded5<f64>,
    op: &dyn LinearOperator<f64>,
    p: &Problem,
    threads: bool,
) -> Vec<(String, Vec<f64>, Vec<f64>)> {
    let mut out = Vec::new();
    let mut ws = Workspace::new().with_threads(threads);
    for engine in engines() {
        if !engine.handles(p.is_m_matrix()) {
            continue;
        }
        let limit = if engine.slow { 200 } else { 3000 };
        let opts = SolveOptions::default()
            .tolerance(1e-10)
            .max_iterations(limit);
        let mut x = p.x0.clone();
        let history = match engine
            .solver(banded, opts)
            .solve_with(op, &p.rhs, &mut x, &mut ws)
        {
            Ok(r) => r.history.to_vec(),
            Err(e) => e.report().map(|r| r.history.to_vec()).unwrap_or_default(),
        };
        out.push((engine.name.to_string(), x, history));
    }
    out
}

fn assert_same_bits(a: &[(String, Vec<f64>, Vec<f64>)], b: &[(String, Vec<f64>, Vec<f64>)]) {
    assert_eq!(a.len(), b.len());
    for ((name, xa, ha), (_, xb, hb)) in a.iter().zip(b) {
        assert!(!ha.is_empty(), "{name}: no history");
        let bits = |v: &[f64]| v.iter().map(|e| e.to_bits()).collect::<Vec<_>>();
        assert_eq!(bits(xa), bits(xb), "{name}: solutions differ");
        assert_eq!(bits(ha), bits(hb), "{name}: histories differ");
    }
}

#[test]
fn closure_and_banded_operators_give_identical_bits() {
    for (nx, ny, seed) in [(13, 9, 1u64), (1, 30, 2), (30, 1, 3), (40, 35, 4)] {
        let p = random_sdd(nx, ny, seed, 0.15, seed % 2 == 1);
        let banded = p.banded();
        let bands = p.bands.clone();
        let grid = p.grid;
        let closure = ClosureStencil::new(grid, move |i, j| {
            let k = grid.index(i, j);
            Coeffs5 {
                center: bands[0][k],
                west: bands[1][k],
                east: bands[2][k],
                south: bands[3][k],
                north: bands[4][k],
            }
        })
        .unwrap()
        .with_fixed(FixedCells::new(grid, p.fixed.iter().copied()).unwrap())
        .unwrap();
        let a = run_all(&banded, &banded, &p, true);
        let b = run_all(&banded, &closure, &p, true);
        assert_same_bits(&a, &b);
    }
}

#[test]
fn threads_do_not_change_the_bits() {
    // Large enough for the threaded path (at least space::PARALLEL_MIN_CELLS cells) and for
    // several reduction blocks.
    let p = random_sdd(400, 300, 9, 0.05, false);
    use quintet::space::{BLOCK_CELLS, BLOCK_MIN_ROWS, PARALLEL_MIN_CELLS};
    assert!(p.grid.cells() >= PARALLEL_MIN_CELLS);
    let rows_per_block = (BLOCK_CELLS / p.grid.nx()).max(BLOCK_MIN_ROWS);
    assert!(p.grid.ny().div_ceil(rows_per_block) >= 6);
    let op = p.banded();
    let serial = run_all(&op, &op, &p, false);
    for threads in [1, 2, 4] {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        let threaded = pool.install(|| run_all(&op, &op, &p, true));
        assert_same_bits(&serial, &threaded);
    }
}

#[test]
fn symmetric_and_banded_storage_give_identical_bits() {
    // random_sdd's couplings are exactly symmetric (its fixed rows differ only in the center).
    for (nx, ny, seed) in [(17, 11, 5u64), (1, 25, 6), (25, 1, 7), (60, 45, 8)] {
        let p = random_sdd(nx, ny, seed, 0.1, seed % 2 == 1);
        let banded = p.banded();
        let compact = Symmetric5::from_banded(&banded, 0.0).unwrap();
        let a = run_all(&banded, &banded, &p, true);
        let b = run_all(&banded, &compact, &p, true);
        assert_same_bits(&a, &b);
    }
}

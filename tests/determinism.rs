//! Same coefficients, same bits: closure vs banded operators, serial vs threaded kernels, and
//! any number of threads (common practice for reproducible numerical software: float addition
//! is not associative, so the reduction order must not depend on scheduling).

mod common;

use common::random_sdd;
use quintet::prelude::*;

/// Run every driver on `op` from `x0`, returning (x, history) per driver.
fn run_all<S: Stencil5<f64>>(
    op: &S,
    rhs: &[f64],
    x0: &[f64],
    threads: bool,
) -> Vec<(String, Vec<f64>, Vec<f64>)> {
    let opts = SolveOptions::default()
        .tolerance(1e-10)
        .max_iterations(3000);
    let mut out = Vec::new();
    let mut ws = Workspace::new().with_threads(threads);
    let mut record = |name: &str, result: Result<Report, Error>, x: Vec<f64>| {
        let history = match result {
            Ok(r) => r.history,
            Err(e) => e.report().map(|r| r.history.clone()).unwrap_or_default(),
        };
        out.push((name.to_string(), x, history));
    };
    let mut x = x0.to_vec();
    let r = SteepestDescent::new(opts.clone()).solve_with(op, rhs, &mut x, &mut ws);
    record("sd", r, x);
    let mut x = x0.to_vec();
    let r = Cg::default()
        .with_options(opts.clone())
        .solve_with(op, rhs, &mut x, &mut ws);
    record("cg", r, x);
    let mut x = x0.to_vec();
    let r = Pcg::new(Jacobi::new(op).unwrap())
        .with_options(opts.clone())
        .solve_with(op, rhs, &mut x, &mut ws);
    record("pcg-jacobi", r, x);
    let mut x = x0.to_vec();
    let r = Pcg::new(Multigrid::new(op, MultigridSettings::default()).unwrap())
        .with_options(opts.clone())
        .solve_with(op, rhs, &mut x, &mut ws);
    record("pcg-multigrid", r, x);
    for order in [SweepOrder::Lexicographic, SweepOrder::RedBlack] {
        let mut x = x0.to_vec();
        let r = Sor::new(1.6)
            .unwrap()
            .ordering(order)
            .with_options(opts.clone())
            .solve_with(op, rhs, &mut x, &mut ws);
        record(&format!("sor-{order}"), r, x);
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
        let p = random_sdd(nx, ny, seed, 0.15, true);
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
        let a = run_all(&banded, &p.rhs, &p.x0, true);
        let b = run_all(&closure, &p.rhs, &p.x0, true);
        assert_same_bits(&a, &b);
    }
}

#[test]
fn threads_do_not_change_the_bits() {
    // Large enough for the threaded path (at least kernels::PARALLEL_MIN_CELLS cells) and for
    // several reduction blocks.
    let p = random_sdd(400, 300, 9, 0.05, false);
    assert!(p.grid.cells() >= quintet::kernels::PARALLEL_MIN_CELLS);
    assert!(quintet::kernels::Kernels::<f64>::new(p.grid).blocks() >= 6);
    let op = p.banded();
    let serial = run_all(&op, &p.rhs, &p.x0, false);
    for threads in [1, 2, 4] {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        let threaded = pool.install(|| run_all(&op, &p.rhs, &p.x0, true));
        assert_same_bits(&serial, &threaded);
    }
}

#[test]
fn symmetric_and_banded_storage_give_identical_bits() {
    // random_sdd's couplings are exactly symmetric (its fixed rows differ only in the center).
    for (nx, ny, seed) in [(17, 11, 5u64), (1, 25, 6), (25, 1, 7), (60, 45, 8)] {
        let p = random_sdd(nx, ny, seed, 0.1, true);
        let banded = p.banded();
        let compact = Symmetric5::from_banded(&banded, 0.0).unwrap();
        let a = run_all(&banded, &p.rhs, &p.x0, true);
        let b = run_all(&compact, &p.rhs, &p.x0, true);
        assert_same_bits(&a, &b);
    }
}

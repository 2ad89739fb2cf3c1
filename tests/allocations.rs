//! No allocation inside iteration loops: a counting global allocator shows that a solve of 2k
//! iterations allocates exactly as often as a solve of k iterations on a warmed-up workspace
//! (the remaining allocations are per solve: the report's copy of the history and its method
//! name), and that applying a preconditioner allocates nothing (common practice for solvers
//! used inside time loops).
//!
//! Threaded kernels are checked from inside a rayon pool. Called from a thread outside the
//! pool, each kernel call hands rayon one job through its global queue, and that queue
//! allocates a block every 63 jobs: rayon's allocation, not ours, and avoidable by solving
//! from inside the pool (`pool.install(|| …)`).

mod common;

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;
use std::sync::atomic::{AtomicUsize, Ordering};

use common::random_sdd;
use quintet::prelude::*;
use quintet::stop::IterationLimit;

struct Counting;

static ALLOCATIONS: AtomicUsize = AtomicUsize::new(0);

thread_local! {
    /// Set on the threads whose allocations count: the pool's workers, which run the solves.
    /// The test harness's own thread (bookkeeping, timers) is left out.
    static COUNTED: Cell<bool> = const { Cell::new(false) };
}

fn count() {
    if COUNTED.with(Cell::get) {
        ALLOCATIONS.fetch_add(1, Ordering::Relaxed);
    }
}

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        count();
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) }
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        count();
        unsafe { System.realloc(ptr, layout, new_size) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

fn allocations_during(f: impl FnOnce()) -> usize {
    let before = ALLOCATIONS.load(Ordering::SeqCst);
    f();
    ALLOCATIONS.load(Ordering::SeqCst) - before
}

/// Allocations of a solve limited to `iterations`, on a workspace used once before.
fn solve_allocations<S: IterativeSolver<f64>>(
    make: &dyn Fn(usize) -> S,
    op: &Banded5<f64>,
    rhs: &[f64],
    x0: &[f64],
    iterations: usize,
    ws: &mut Workspace<f64>,
) -> usize {
    let mut solver = make(iterations);
    let mut x = x0.to_vec();
    let _ = solver.solve_with(op, rhs, &mut x, ws); // warm-up: sizes the workspace
    let mut x = x0.to_vec();
    let mut solver = make(iterations);
    allocations_during(|| {
        let result = solver.solve_with(op, rhs, &mut x, ws);
        let report = match &result {
            Ok(r) => r,
            Err(e) => e.report().expect("an iteration error"),
        };
        assert_eq!(
            report.iterations, iterations,
            "stopped early: {:?}",
            report.reason
        );
    })
}

/// Compares the allocations of `k` and `2k` iterations. `k` must keep the solve above the
/// rounding floor (the drivers stop there on their own, `StopReason::RoundingFloor`).
fn check_driver<S: IterativeSolver<f64>>(
    name: &str,
    make: &dyn Fn(usize) -> S,
    cells: (usize, usize),
    k: usize,
) {
    let p = random_sdd(cells.0, cells.1, 5, 0.05, false);
    let op = p.banded();
    let mut ws = Workspace::new();
    let short = solve_allocations(make, &op, &p.rhs, &p.x0, k, &mut ws);
    let long = solve_allocations(make, &op, &p.rhs, &p.x0, 2 * k, &mut ws);
    assert_eq!(
        short, long,
        "{name} on {cells:?}: {short} vs {long} allocations"
    );
}

fn limit(k: usize) -> SolveOptions {
    SolveOptions::default()
        .stop_when(IterationLimit(k))
        .residual_refresh(7)
}

/// One test function for the whole file, so no other test runs on the counted threads.
#[test]
fn nothing_is_allocated_per_iteration_or_per_application() {
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .start_handler(|_| COUNTED.with(|c| c.set(true)))
        .build()
        .unwrap();
    // Start both workers (their own start-up allocations are not ours) before counting.
    pool.broadcast(|_| ());
    pool.install(drivers_allocate_nothing_per_iteration);
    pool.install(preconditioner_application_allocates_nothing);
}

fn drivers_allocate_nothing_per_iteration() {
    // A small grid (serial kernels) and one large enough for the threaded path.
    for cells in [(30, 20), (200, 200)] {
        check_driver(
            "steepest descent",
            &|k| SteepestDescent::new(limit(k)),
            cells,
            20,
        );
        check_driver("CG", &|k| Cg::default().with_options(limit(k)), cells, 20);
        check_driver(
            "SOR",
            &|k| Sor::new(1.5).unwrap().with_options(limit(k)),
            cells,
            20,
        );
        check_driver(
            "SOR red-black",
            &|k| {
                Sor::new(1.5)
                    .unwrap()
                    .ordering(SweepOrder::RedBlack)
                    .with_options(limit(k))
            },
            cells,
            20,
        );
        // Preconditioners built on the same operator check_driver solves (same seed).
        let p = random_sdd(cells.0, cells.1, 5, 0.05, false);
        let jacobi = Jacobi::new(&p.banded()).unwrap();
        check_driver(
            "PCG + Jacobi",
            &|k| Pcg::new(jacobi.clone()).with_options(limit(k)),
            cells,
            20,
        );
        let ic0 = IncompleteCholesky::ic0(&p.banded()).unwrap();
        check_driver(
            "PCG + IC(0)",
            &|k| Pcg::new(ic0.clone()).with_options(limit(k)),
            cells,
            20,
        );
        let mg = Multigrid::new(p.banded(), MultigridSettings::default()).unwrap();
        check_driver(
            "PCG + multigrid",
            &|k| Pcg::new(mg.clone()).with_options(limit(k)),
            cells,
            4,
        );
        check_driver(
            "multigrid, standalone",
            &|k| {
                let mut solver = mg.clone();
                solver.options = limit(k);
                solver
            },
            cells,
            4,
        );
        let sip = Sip::new(&p.banded(), SipSettings::default()).unwrap();
        check_driver(
            "Stone's SIP, standalone",
            &|k| {
                let mut solver = sip.clone();
                solver.options = limit(k);
                solver
            },
            cells,
            20,
        );
    }
}

fn preconditioner_application_allocates_nothing() {
    for cells in [(30, 20), (200, 200)] {
        let p = random_sdd(cells.0, cells.1, 8, 0.05, false);
        let op = p.banded();
        let r: Vec<f64> = (0..op.grid().cells()).map(|k| (k as f64).cos()).collect();
        let mut z = vec![0.0; r.len()];
        let mut jacobi = Jacobi::new(&op).unwrap();
        let mut ssor = Ssor::new(&op, 1.4).unwrap();
        let mut ic = IncompleteCholesky::ic0(&op).unwrap();
        let mut mic = IncompleteCholesky::mic0(&op).unwrap();
        let mut sip = Sip::new(&op, SipSettings::default()).unwrap();
        let mut mg = Multigrid::new(&op, MultigridSettings::default()).unwrap();
        let list: [&mut dyn Preconditioner<f64>; 7] = [
            &mut Identity,
            &mut jacobi,
            &mut ssor,
            &mut ic,
            &mut mic,
            &mut sip,
            &mut mg,
        ];
        for pre in list {
            pre.apply(&r, &mut z);
            let n = allocations_during(|| {
                for _ in 0..3 {
                    pre.apply(&r, &mut z);
                }
            });
            assert_eq!(n, 0, "{} allocated {n} times on {cells:?}", pre.name());
        }
    }
}

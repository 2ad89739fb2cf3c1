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
mod precond_problems;

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;
use std::sync::atomic::{AtomicUsize, Ordering};

use common::engines::{engines, preconditioners, Engine};
use common::random_sdd;
use quintet::distributed::{DistributedMultigrid, DistributedStencil, Partition, Processes};
use quintet::prelude::*;
use quintet::space::Threaded;
use quintet::stop::RuleFn;

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

/// Allocations of `engine` limited to `iterations`, on a workspace used once before.
fn solve_allocations(
    engine: &Engine,
    op: &Banded5<f64>,
    rhs: &[f64],
    x0: &[f64],
    iterations: usize,
    ws: &mut Workspace<f64>,
) -> usize {
    let mut solver = engine.solver(op, limit(iterations));
    let mut x = x0.to_vec();
    let _ = solver.solve_with(op, rhs, &mut x, ws); // warm-up: sizes the workspace
    let mut x = x0.to_vec();
    allocations_during(|| {
        let result = solver.solve_with(op, rhs, &mut x, ws);
        let report = match &result {
            Ok(r) => r,
            Err(e) => e.report().expect("an iteration error"),
        };
        assert_eq!(
            report.iterations, iterations,
            "{}: stopped early: {:?}",
            engine.name, report.reason
        );
    })
}

/// Compares the allocations of `k` and `2k` iterations. `k` must keep the solve above the
/// rounding floor (the drivers stop there on their own, `StopReason::RoundingFloor`): 4 for
/// multigrid, whose iterations each gain a factor of ten or more, 12 for BiCGSTAB (two
/// products per iteration). GMRES(30) at 20 and 40 iterations crosses the end of a cycle
/// (the Hessenberg storage is the driver's, sized once).
fn check_engine(engine: &Engine, cells: (usize, usize)) {
    let k = if engine.name.contains("multigrid") {
        4
    } else if engine.name.contains("BiCGSTAB") {
        12
    } else {
        20
    };
    let p = random_sdd(cells.0, cells.1, 5, 0.05, false);
    let op = p.banded();
    let mut ws = Workspace::new();
    let short = solve_allocations(engine, &op, &p.rhs, &p.x0, k, &mut ws);
    let long = solve_allocations(engine, &op, &p.rhs, &p.x0, 2 * k, &mut ws);
    assert_eq!(
        (short, long),
        (0, 0),
        "{} on {cells:?}: allocations of a warm solve of {k} and {} iterations",
        engine.name,
        2 * k
    );
}

/// Stop after `k` iterations, counted as converged (a solve that does not converge ends in
/// an error, which is allowed to allocate).
fn limit(k: usize) -> SolveOptions {
    SolveOptions::default()
        .stop_when(RuleFn(move |p: &Progress<'_>| {
            (p.iteration >= k).then_some(StopReason::Custom {
                converged: true,
                label: "k iterations",
            })
        }))
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
    pool.install(nonsymmetric_preconditioners_allocate_nothing);
}

/// The preconditioners built for non-symmetric operators (ILU(0), the plain SIP inverse,
/// multigrid's non-symmetric hierarchy) on upwind advection–diffusion.
fn nonsymmetric_preconditioners_allocate_nothing() {
    for n in [24, 200] {
        let (op, _, _) = precond_problems::advection(n, 10.0);
        let plain = SipSettings {
            symmetrised: false,
            ..Default::default()
        };
        let mut choices: Vec<Box<dyn Preconditioner<f64>>> = vec![
            Box::new(Ilu0::new(&op).unwrap()),
            Box::new(Sip::new(&op, plain).unwrap()),
            Box::new(Multigrid::new(&op, MultigridSettings::default()).unwrap()),
        ];
        let r: Vec<f64> = (0..op.grid().cells()).map(|k| (k as f64).cos()).collect();
        let mut z = vec![0.0; r.len()];
        for pre in &mut choices {
            pre.apply(&op, &Threaded, &r, &mut z);
            let count = allocations_during(|| {
                for _ in 0..3 {
                    pre.apply(&op, &Threaded, &r, &mut z);
                }
            });
            assert_eq!(count, 0, "{} on {n}²", pre.name());
        }
    }
}

fn drivers_allocate_nothing_per_iteration() {
    // A small grid (serial kernels) and one large enough for the threaded path.
    for cells in [(30, 20), (200, 200)] {
        for engine in engines() {
            check_engine(&engine, cells);
        }
    }
}

fn preconditioner_application_allocates_nothing() {
    for cells in [(30, 20), (200, 200)] {
        let p = random_sdd(cells.0, cells.1, 8, 0.05, false);
        let op = p.banded();
        let r: Vec<f64> = (0..op.grid().cells()).map(|k| (k as f64).cos()).collect();
        let mut z = vec![0.0; r.len()];
        for mut pre in preconditioners(&op) {
            pre.apply(&op, &Threaded, &r, &mut z);
            let n = allocations_during(|| {
                for _ in 0..3 {
                    pre.apply(&op, &Threaded, &r, &mut z);
                }
            });
            assert_eq!(n, 0, "{} allocated {n} times on {cells:?}", pre.name());
        }
        // The distributed V-cycle (one process: every margin exchange and gather is a copy).
        let part = Partition::new(op.grid(), Processes::single()).unwrap();
        let dop = DistributedStencil::from_fn(&part, |i, j| op.coeffs(i, j)).unwrap();
        let mut mg = DistributedMultigrid::new(&dop, MultigridSettings::default()).unwrap();
        mg.apply(&dop, &Threaded, &r, &mut z);
        let n = allocations_during(|| {
            for _ in 0..3 {
                mg.apply(&dop, &Threaded, &r, &mut z);
            }
        });
        assert_eq!(
            n, 0,
            "distributed multigrid allocated {n} times on {cells:?}"
        );
    }
}

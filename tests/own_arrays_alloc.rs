//! A step of a user's own backward-Euler loop allocates nothing: the capacity update
//! (`CapacityTerm::add_to_rhs`) and a warm MG-PCG solve through a `Banded5View` of the user's
//! finite-volume arrays, counted with a global allocator on the threads of a rayon pool that
//! runs the loop (as `tests/allocations.rs` does; called from outside a pool, rayon's global
//! queue allocates a block every 63 jobs, which is rayon's allocation, not ours). The budget
//! is not part of the step: it builds its lines and labels. No allocation inside a time loop
//! is common practice for solvers used in one.

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;
use std::sync::atomic::{AtomicUsize, Ordering};

use quintet::prelude::*;

struct Counting;

static ALLOCATIONS: AtomicUsize = AtomicUsize::new(0);

thread_local! {
    /// Set on the pool's workers, which run the loop; the harness's own thread is left out.
    static COUNTED: Cell<bool> = const { Cell::new(false) };
}

fn count() {
    if COUNTED.with(Cell::get) {
        ALLOCATIONS.fetch_add(1, Ordering::Relaxed);
    }
}

// SAFETY: forwards every call to the system allocator unchanged; the thread-local flag has a
// const initialiser and no destructor, so reading it never allocates or re-enters.
unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        count();
        // SAFETY: same contract as the caller's.
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        // SAFETY: same contract as the caller's.
        unsafe { System.dealloc(ptr, layout) }
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        count();
        // SAFETY: same contract as the caller's.
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

/// A user's arrays for an invented plate: conductance 3 W/K between neighbours (10 W/K in a
/// band of rows), a 1 W/K loss to 25 °C air from every cell folded into `a_P` and `b`, a
/// 40 W heater block, the west column held at 15 °C.
struct Plate {
    grid: Grid,
    a_p: Vec<f64>,
    a_w: Vec<f64>,
    a_e: Vec<f64>,
    a_s: Vec<f64>,
    a_n: Vec<f64>,
    b: Vec<f64>,
    capacity: Vec<f64>,
    fixed: FixedCells,
}

fn plate(nx: usize, ny: usize) -> Plate {
    let grid = Grid::new(nx, ny).unwrap();
    let n = grid.cells();
    let g = |j: usize| if j > ny / 3 && j < ny / 2 { 10.0 } else { 3.0 };
    let (mut a_w, mut a_e, mut a_s, mut a_n) =
        (vec![0.0; n], vec![0.0; n], vec![0.0; n], vec![0.0; n]);
    let (mut a_p, mut b) = (vec![0.0; n], vec![0.0; n]);
    let heater: Vec<usize> = (0..n)
        .filter(|&k| {
            let (i, j) = grid.coords(k);
            (nx / 2..nx / 2 + 6).contains(&i) && (ny / 2..ny / 2 + 4).contains(&j)
        })
        .collect();
    for k in 0..n {
        let (i, j) = grid.coords(k);
        if i > 0 {
            a_w[k] = g(j);
        }
        if i + 1 < nx {
            a_e[k] = g(j);
        }
        if j > 0 {
            a_s[k] = 2.0 / (1.0 / g(j) + 1.0 / g(j - 1)); // harmonic mean
        }
        if j + 1 < ny {
            a_n[k] = 2.0 / (1.0 / g(j) + 1.0 / g(j + 1));
        }
        let loss = 1.0;
        a_p[k] = a_w[k] + a_e[k] + a_s[k] + a_n[k] + loss;
        b[k] = loss * 25.0;
    }
    for &k in &heater {
        b[k] += 40.0 / heater.len() as f64;
    }
    let fixed = FixedCells::new(grid, (0..ny).map(|j| grid.index(0, j))).unwrap();
    Plate {
        grid,
        a_p,
        a_w,
        a_e,
        a_s,
        a_n,
        b,
        capacity: vec![50.0; n],
        fixed,
    }
}

/// Steps of the loop, after one warm-up step (which sizes the workspace and the report's
/// history): allocations per step, measured.
fn allocations_per_step(p: &Plate, steps: usize) -> Vec<usize> {
    let n = p.grid.cells();
    let term = CapacityTerm::new(p.grid, &p.capacity, 5.0).unwrap();
    let mut center = vec![0.0; n];
    term.add_to_center(&p.a_p, &mut center).unwrap();
    let op = Banded5View::from_finite_volume(p.grid, &center, &p.a_w, &p.a_e, &p.a_s, &p.a_n)
        .unwrap()
        .with_fixed(&p.fixed)
        .unwrap();
    let mut pcg = Pcg::new(Multigrid::new(&op, MultigridSettings::default()).unwrap())
        .with_options(SolveOptions::default().tolerance(1e-9));
    let mut ws = Workspace::for_grid(p.grid);
    let mut t = vec![25.0; n];
    p.fixed.cells().iter().for_each(|&k| t[k] = 15.0);
    let mut rhs = vec![0.0; n];
    let mut step = |t: &mut Vec<f64>| {
        term.add_to_rhs(&p.b, t, &mut rhs).unwrap();
        let report = pcg.solve_with(&op, &rhs, t, &mut ws).unwrap();
        assert!(report.converged() && report.iterations > 0);
    };
    step(&mut t); // warm-up
    let counts = (0..steps)
        .map(|_| allocations_during(|| step(&mut t)))
        .collect();
    // The loop did something: the heater block warmed above the air.
    assert!(t.iter().any(|&v| v > 25.5));
    counts
}

/// One test function for the whole file, so no other test runs on the counted threads.
#[test]
fn a_step_of_the_users_loop_allocates_nothing() {
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .start_handler(|_| COUNTED.with(|c| c.set(true)))
        .build()
        .unwrap();
    pool.broadcast(|_| ()); // start both workers before counting
                            // Below the parallel threshold (serial kernels) and above it (threaded kernels).
    for (nx, ny) in [(60, 40), (240, 160)] {
        let p = plate(nx, ny);
        let counts = pool.install(|| allocations_per_step(&p, 5));
        assert_eq!(counts, vec![0; 5], "{nx} x {ny}: allocations per step");
    }
}

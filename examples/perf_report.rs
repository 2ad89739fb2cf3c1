//! The performance report: every figure a ratio measured inside this one run, so that it holds
//! on a noisy shared machine where absolute times do not.
//!
//! Run with `cargo run --release --example perf_report` (about two minutes). Prints one
//! `name=value` line per metric, after a few `#` lines describing the machine and the run.
//! Memory-bandwidth figures use model bytes per cell (see `benches/support/mod.rs`) divided by
//! the bandwidth of a STREAM-like triad measured in the same process with the same threads.

#[path = "../benches/support/mod.rs"]
mod support;

use std::alloc::{GlobalAlloc, Layout, System};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::Instant;

use quintet::kernels::Kernels;
use quintet::prelude::*;
use quintet::stop::IterationLimit;
use support::*;

/// Tracks the bytes currently allocated and their peak, for the memory comparison.
struct Tracking;

static CURRENT: AtomicUsize = AtomicUsize::new(0);
static PEAK: AtomicUsize = AtomicUsize::new(0);

unsafe impl GlobalAlloc for Tracking {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        let now = CURRENT.fetch_add(layout.size(), Ordering::Relaxed) + layout.size();
        PEAK.fetch_max(now, Ordering::Relaxed);
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        CURRENT.fetch_sub(layout.size(), Ordering::Relaxed);
        unsafe { System.dealloc(ptr, layout) }
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        if new_size >= layout.size() {
            let now = CURRENT.fetch_add(new_size - layout.size(), Ordering::Relaxed) + new_size
                - layout.size();
            PEAK.fetch_max(now, Ordering::Relaxed);
        } else {
            CURRENT.fetch_sub(layout.size() - new_size, Ordering::Relaxed);
        }
        unsafe { System.realloc(ptr, layout, new_size) }
    }
}

#[global_allocator]
static GLOBAL: Tracking = Tracking;

/// Peak bytes allocated by `f` above what was allocated when it started.
fn peak_bytes_of(f: impl FnOnce()) -> usize {
    let base = CURRENT.load(Ordering::SeqCst);
    PEAK.store(base, Ordering::SeqCst);
    f();
    PEAK.load(Ordering::SeqCst) - base
}

/// The preconditioner the report calls "best PCG", and its name.
fn best_preconditioner(op: &Banded5<f64>) -> Multigrid<f64, &Banded5<f64>> {
    Multigrid::new(op, MultigridSettings::default()).expect("multigrid setup")
}
const BEST_PCG: &str = "PCG + multigrid V-cycle (default settings)";

/// Setup + solve time of the best PCG to relative residual `tol` from zero, and its iterations.
fn best_pcg_solve(op: &Banded5<f64>, tol: f64) -> (f64, usize) {
    let rhs = vec![1.0; op.grid().cells()];
    let mut x = vec![0.0; rhs.len()];
    let start = Instant::now();
    let mut pcg = Pcg::new(best_preconditioner(op)).with_options(
        SolveOptions::default()
            .tolerance(tol)
            .max_iterations(100_000),
    );
    let report = pcg.solve(op, &rhs, &mut x).expect("best PCG converges");
    (start.elapsed().as_secs_f64(), report.iterations)
}

fn pool(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("thread pool")
}

/// Triad bandwidth in bytes per second on the current pool.
fn triad_bandwidth(n: usize) -> f64 {
    let (b, c) = (wave(n), wave(n));
    let mut a = vec![0.0; n];
    let t = best_of(15, || triad(&mut a, &b, &c, 3.0));
    BYTES_TRIAD * n as f64 / t
}

/// Time of `iterations` of our CG (identity preconditioner) on `op`.
fn our_cg_time(op: &Banded5<f64>, iterations: usize, threads_allowed: bool) -> f64 {
    let rhs = vec![1.0; op.grid().cells()];
    let mut ws = Workspace::for_grid(op.grid()).with_threads(threads_allowed);
    let mut cg = Cg::default().with_options(
        SolveOptions::default()
            .stop_when(IterationLimit(iterations))
            .residual_refresh(0),
    );
    best_of(3, || {
        let mut x = vec![0.0; rhs.len()];
        let _ = cg.solve_with(op, &rhs, &mut x, &mut ws);
    })
}

fn main() {
    let threads = rayon::current_num_threads();
    println!("# quintet perf report: {threads} rayon threads, f64, best of repeated runs");
    println!("# best PCG = {BEST_PCG}");

    // Bandwidth figures on 2000 x 2000 cells.
    let n2000 = 2000 * 2000;
    let bw = triad_bandwidth(n2000);
    println!("# triad bandwidth = {:.2} GB/s", bw / 1e9);
    let op = poisson(2000);
    let compact = Symmetric5::from_banded(&op, 0.0).expect("symmetric");
    let x = wave(n2000);
    let mut y = vec![0.0; n2000];
    let mut kernels = Kernels::<f64>::new(op.grid());
    let t_banded = best_of(15, || kernels.apply(&op, &x, &mut y));
    let t_sym = best_of(15, || kernels.apply(&compact, &x, &mut y));
    println!(
        "matvec_banded_vs_triad={:.3}",
        BYTES_MATVEC_BANDED * n2000 as f64 / t_banded / bw
    );
    println!(
        "matvec_symmetric_vs_triad={:.3}",
        BYTES_MATVEC_SYMMETRIC * n2000 as f64 / t_sym / bw
    );

    // One CG iteration = fused matvec+dot, fused x/r update + dot, direction update.
    let (mut p, mut q, mut xs, mut r) =
        (wave(n2000), vec![0.0; n2000], vec![0.0; n2000], wave(n2000));
    let t_iter = best_of(15, || {
        let pq = kernels.apply_dot_free(&op, &p, &mut q);
        let (rr, _) = kernels.cg_update(1e-9 / pq.max(1.0), &p, &q, &mut xs, &mut r);
        kernels.direction_update(&r, 1e-9 * rr.min(1.0), &mut p);
    });
    println!(
        "cg_iteration_vs_triad={:.3}",
        BYTES_CG_ITERATION * n2000 as f64 / t_iter / bw
    );
    drop((p, q, xs, r, y));

    // Ours vs a textbook CG loop over a general-purpose CSR matrix, one thread each (the CSR
    // kernel is serial), 50 iterations on 1000 x 1000.
    let op1000 = poisson(1000);
    let csr = to_csr(&op1000);
    let single = pool(1);
    let (t_csr, t_ours) = single.install(|| {
        let b = vec![1.0; op1000.grid().cells()];
        let mut xx = vec![0.0; b.len()];
        let t_csr = best_of(3, || {
            textbook_cg(&mut |p, q| csr_apply(&csr, p, q), &b, &mut xx, 50);
        });
        (t_csr, our_cg_time(&op1000, 50, false))
    });
    println!("cg_speedup_vs_csr={:.2}", t_csr / t_ours);
    drop(csr);

    // Our best PCG vs faer's sparse Cholesky (factor + solve), same Poisson problem.
    faer::set_global_parallelism(faer::Par::rayon(threads));
    for n in [1000usize, 2000] {
        let op_n = poisson(n);
        let (t_pcg, its) = best_pcg_solve(&op_n, 1e-8);
        let csc = to_csc_lower(&op_n);
        let mut b = vec![1.0; n * n];
        let t0 = Instant::now();
        direct_solve(&csc, &mut b);
        let t_direct = t0.elapsed().as_secs_f64();
        println!("# {n}x{n}: best PCG {its} iterations, {t_pcg:.3} s; direct {t_direct:.3} s");
        println!("mgpcg_speedup_vs_direct_{n}={:.2}", t_direct / t_pcg);
    }

    // Peak memory, 1500 x 1500: each method's own matrix representation and work space.
    let n1500 = 1500;
    let ours = peak_bytes_of(|| {
        let op_n = poisson(n1500);
        let _ = best_pcg_solve(&op_n, 1e-8);
    });
    let direct = peak_bytes_of(|| {
        let op_n = poisson(n1500);
        let csc = to_csc_lower(&op_n);
        drop(op_n);
        let mut b = vec![1.0; n1500 * n1500];
        direct_solve(&csc, &mut b);
    });
    println!(
        "# 1500x1500 peak memory: ours {:.1} MB, direct {:.1} MB",
        ours as f64 / 1e6,
        direct as f64 / 1e6
    );
    println!(
        "peak_memory_ratio_direct_vs_ours_1500={:.2}",
        direct as f64 / ours as f64
    );

    // Parallel speed-up of CG against the triad's, 2000 x 2000, 1 vs `threads` threads.
    if threads > 1 {
        let (cg1, tr1) = single.install(|| (our_cg_time(&op, 30, true), triad_bandwidth(n2000)));
        let many = pool(threads);
        let (cgn, trn) = many.install(|| (our_cg_time(&op, 30, true), triad_bandwidth(n2000)));
        let cg_speedup = cg1 / cgn;
        let triad_speedup = trn / tr1;
        println!(
            "# CG speed-up {cg_speedup:.2}, triad speed-up {triad_speedup:.2} on {threads} threads"
        );
        println!(
            "parallel_speedup_vs_triad_speedup={:.3}",
            cg_speedup / triad_speedup
        );
    } else {
        println!("# one thread only: parallel_speedup_vs_triad_speedup not measured");
    }
    drop(op);
    drop(compact);

    // Scaling of the best PCG's time per cell from 1024^2 to 4096^2 cells.
    let (t1024, i1024) = best_pcg_solve(&poisson(1024), 1e-8);
    let (t4096, i4096) = best_pcg_solve(&poisson(4096), 1e-8);
    println!("# best PCG: {i1024} iterations at 1024^2, {i4096} at 4096^2");
    println!(
        "time_per_cell_4096_vs_1024={:.2}",
        (t4096 / (4096.0 * 4096.0)) / (t1024 / (1024.0 * 1024.0))
    );
}

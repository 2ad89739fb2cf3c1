//! The performance report: every figure a ratio measured inside this one run, so that it holds
//! on a noisy shared machine where absolute times do not.
//!
//! Run with `cargo run --release -p quintet-bench --example perf_report` (three to four minutes).
//! Prints one `name=value` line per metric, after a few `#` lines describing the machine and
//! the run.
//! Memory-bandwidth figures use model bytes per cell (see `benches/support/mod.rs`) divided by
//! the bandwidth of a STREAM-like triad measured in the same process with the same threads.

#[path = "../support/mod.rs"]
mod support;

// The layered contrast-10⁴ field of the multigrid tests and the iterations example.
#[path = "../../tests/precond_problems/mod.rs"]
mod precond_problems;

use std::alloc::{GlobalAlloc, Layout, System};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::Instant;

use quintet::kernels::Kernels;
use quintet::prelude::*;
use quintet::stop::IterationLimit;
use support::*;

/// Tracks the bytes currently allocated and their peak, for the memory comparison. Zeroed
/// allocations go to the system's zeroed allocation (fresh pages come zeroed from the OS and
/// are first touched by whoever writes them, as in a program without this tracker); the
/// trait's default would write the zeros itself, on one thread, before the caller sees the
/// memory.
struct Tracking;

static CURRENT: AtomicUsize = AtomicUsize::new(0);
static PEAK: AtomicUsize = AtomicUsize::new(0);

unsafe impl GlobalAlloc for Tracking {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        let now = CURRENT.fetch_add(layout.size(), Ordering::Relaxed) + layout.size();
        PEAK.fetch_max(now, Ordering::Relaxed);
        unsafe { System.alloc(layout) }
    }
    unsafe fn alloc_zeroed(&self, layout: Layout) -> *mut u8 {
        let now = CURRENT.fetch_add(layout.size(), Ordering::Relaxed) + layout.size();
        PEAK.fetch_max(now, Ordering::Relaxed);
        unsafe { System.alloc_zeroed(layout) }
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

/// The two multigrid-preconditioned CG configurations the report times.
#[derive(Clone, Copy, PartialEq)]
enum MgPcg {
    /// The V-cycle in `f32` on an `f32` copy of the operator stored by colour, inside `f64`
    /// PCG ([`SinglePrecision`], [`Banded5ByColour`]): the fastest configuration quintet ships.
    SingleVcycle,
    /// Everything in `f64`, default settings.
    DoubleVcycle,
}

const BEST_PCG: &str = "PCG (f64) + multigrid V-cycle in f32, default settings; \
                        setup (f32 copy by colour + hierarchy) included in every time";

/// The `f32` multigrid preconditioner as the docs build it: the operator copied to `f32` by
/// colour, the hierarchy on that copy.
fn single_multigrid(op: &Banded5<f64>) -> SinglePrecision<Banded5ByColour<f32>, Multigrid<f32>> {
    let single = Banded5ByColour::from_stencil(op).expect("finite coefficients");
    let mg = Multigrid::new(&single, MultigridSettings::default()).expect("setup");
    SinglePrecision::new(single, mg)
}

/// Setup + solve time of MG-PCG to relative residual `tol` from zero, and its iterations.
fn mgpcg_solve(op: &Banded5<f64>, rhs: &[f64], tol: f64, how: MgPcg) -> (f64, usize) {
    let mut x = vec![0.0; rhs.len()];
    let options = SolveOptions::default()
        .tolerance(tol)
        .max_iterations(100_000);
    let start = Instant::now();
    let report = match how {
        MgPcg::SingleVcycle => {
            let mut pcg = Pcg::new(single_multigrid(op)).with_options(options);
            pcg.solve(op, rhs, &mut x)
        }
        MgPcg::DoubleVcycle => {
            let mg = Multigrid::new(op, MultigridSettings::default()).expect("setup");
            Pcg::new(mg).with_options(options).solve(op, rhs, &mut x)
        }
    }
    .expect("MG-PCG converges");
    (start.elapsed().as_secs_f64(), report.iterations)
}

fn pool(threads: usize) -> rayon::ThreadPool {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("thread pool")
}

/// Fastest time of each closure over `rounds` rounds, the closures run in turn within a round,
/// so that a slow spell of a shared machine hits all of them alike.
fn interleaved<const N: usize>(rounds: usize, mut runs: [&mut dyn FnMut(); N]) -> [f64; N] {
    let mut best = [f64::INFINITY; N];
    for _ in 0..rounds {
        for (run, best) in runs.iter_mut().zip(&mut best) {
            let t = Instant::now();
            run();
            *best = best.min(t.elapsed().as_secs_f64());
        }
    }
    best
}

/// A closure running `iterations` of our CG (identity preconditioner) on `op`.
fn our_cg<'a, S: Stencil5<f64>>(
    op: &'a S,
    iterations: usize,
    threads_allowed: bool,
) -> impl FnMut() + 'a {
    let rhs = vec![1.0; op.grid().cells()];
    let mut x = vec![0.0; rhs.len()];
    let mut ws = Workspace::for_grid(op.grid()).with_threads(threads_allowed);
    let mut cg = Cg::default().with_options(
        SolveOptions::default()
            .stop_when(IterationLimit(iterations))
            .residual_refresh(0),
    );
    move || {
        x.fill(0.0);
        let _ = cg.solve_with(op, &rhs, &mut x, &mut ws);
    }
}

fn main() {
    let threads = rayon::current_num_threads();
    println!("# quintet perf report: {threads} rayon threads, f64 unless said otherwise");
    println!("# each comparison: fastest of several rounds, its contenders run in turn per round");
    println!("# MG-PCG = {BEST_PCG}");

    // Bandwidth figures on 2000 x 2000 cells, each kernel against the triad run beside it.
    let n2000 = 2000 * 2000;
    let op = poisson(2000);
    let compact = Symmetric5::from_banded(&op, 0.0).expect("symmetric");
    let (tb, tc) = (wave(n2000), wave(n2000));
    let mut ta = vec![0.0; n2000];
    let x = wave(n2000);
    let (mut y, mut y2) = (vec![0.0; n2000], vec![0.0; n2000]);
    let mut kernels = Kernels::<f64>::new(op.grid());
    let mut k1 = Kernels::<f64>::new(op.grid());
    let mut k2 = Kernels::<f64>::new(op.grid());
    let (mut p, mut q, mut xs, mut r) =
        (wave(n2000), vec![0.0; n2000], vec![0.0; n2000], wave(n2000));
    let [t_triad, t_banded, t_sym, t_iter] = interleaved(
        15,
        [
            &mut || triad(&mut ta, &tb, &tc, 3.0),
            &mut || kernels.apply(&op, &x, &mut y),
            &mut || k1.apply(&compact, &x, &mut y2),
            // One CG iteration: fused matvec + p·Ap, fused x/r update + r·r, p = r + βp.
            &mut || {
                let pq = k2.apply_dot_free(&op, &p, &mut q);
                let (rr, _) = k2.cg_update(1e-9 / pq.max(1.0), &p, &q, &mut xs, &mut r);
                k2.direction_update(&r, 1e-9 * rr.min(1.0), &mut p);
            },
        ],
    );
    let bw = BYTES_TRIAD * n2000 as f64 / t_triad;
    let rate = |bytes: f64, t: f64| bytes * n2000 as f64 / t;
    println!(
        "# triad {:.2} GB/s; matvec Banded5 {:.2}, Symmetric5 {:.2}, CG iteration {:.2} GB/s",
        bw / 1e9,
        rate(BYTES_MATVEC_BANDED, t_banded) / 1e9,
        rate(BYTES_MATVEC_SYMMETRIC, t_sym) / 1e9,
        rate(BYTES_CG_ITERATION, t_iter) / 1e9
    );
    println!(
        "matvec_banded_vs_triad={:.3}",
        rate(BYTES_MATVEC_BANDED, t_banded) / bw
    );
    println!(
        "matvec_symmetric_vs_triad={:.3}",
        rate(BYTES_MATVEC_SYMMETRIC, t_sym) / bw
    );
    println!(
        "cg_iteration_vs_triad={:.3}",
        rate(BYTES_CG_ITERATION, t_iter) / bw
    );
    drop((p, q, xs, r, y, y2, ta, tb, tc, x));

    // Ours vs a textbook CG loop over a general-purpose CSR matrix, one thread each (the CSR
    // kernel is serial), 50 iterations on 1000 x 1000.
    let op1000 = poisson(1000);
    let compact1000 = Symmetric5::from_banded(&op1000, 0.0).expect("symmetric");
    let csr = to_csr(&op1000);
    let single = pool(1);
    let [t_csr, t_ours, t_compact] = single.install(|| {
        let b = vec![1.0; op1000.grid().cells()];
        let mut xx = vec![0.0; b.len()];
        interleaved(
            5,
            [
                &mut || {
                    textbook_cg(&mut |p, q| csr_apply(&csr, p, q), &b, &mut xx, 50);
                },
                &mut our_cg(&op1000, 50, false),
                &mut our_cg(&compact1000, 50, false),
            ],
        )
    });
    println!(
        "# CG on 1000x1000, 1 thread: CSR {:.2} ms/iteration, Banded5 {:.2}, Symmetric5 {:.2}; \
         bandwidth model ratio CSR/Banded5 {:.2}",
        t_csr * 20.0,
        t_ours * 20.0,
        t_compact * 20.0,
        BYTES_CG_CSR_ITERATION / BYTES_CG_ITERATION
    );
    println!("cg_speedup_vs_csr={:.2}", t_csr / t_ours);
    println!("cg_speedup_symmetric_vs_csr={:.2}", t_csr / t_compact);
    drop((csr, op1000, compact1000));

    // MG-PCG vs faer's sparse Cholesky (factor + solve), same Poisson problem and rhs.
    faer::set_global_parallelism(faer::Par::rayon(threads));
    for n in [1000usize, 2000] {
        let op_n = poisson(n);
        let csc = to_csc_lower(&op_n);
        let rhs = vec![1.0; n * n];
        let (mut its, mut its64) = (0, 0);
        // The same solve on a copy, hierarchy and workspace built before and kept (as in time
        // stepping): its iterations alone, without set-up or fresh pages. The direct time over
        // it bounds what the one-shot ratio can reach with this cycle and iteration count.
        let mut warm = WarmMgPcg::new(n);
        let [t_pcg, t_pcg64, t_direct, t_warm] = interleaved(
            2,
            [
                &mut || its = mgpcg_solve(&op_n, &rhs, 1e-8, MgPcg::SingleVcycle).1,
                &mut || its64 = mgpcg_solve(&op_n, &rhs, 1e-8, MgPcg::DoubleVcycle).1,
                &mut || direct_solve(&csc, &mut rhs.clone()),
                &mut || warm.solve(),
            ],
        );
        drop(warm);
        println!(
            "# {n}x{n}: MG-PCG {its} iterations {t_pcg:.3} s (f64 V-cycle: {its64}, \
             {t_pcg64:.3} s); direct {t_direct:.3} s"
        );
        println!("mgpcg_speedup_vs_direct_{n}={:.2}", t_direct / t_pcg);
        println!(
            "mgpcg_f64_vcycle_speedup_vs_direct_{n}={:.2}",
            t_direct / t_pcg64
        );
        println!(
            "# {n}x{n}: MG-PCG iterations alone (warm) {t_warm:.3} s: direct / iterations alone \
             {:.1}, the most a one-shot solve with this cycle could reach",
            t_direct / t_warm
        );
    }

    // Peak memory, 1500 x 1500: each method's own matrix representation and work space. Ours
    // in its leanest shipped form: compact symmetric storage and an f64 V-cycle (the f32
    // V-cycle needs an f32 copy of the operator besides the f64 one).
    let n1500 = 1500;
    let ours = peak_bytes_of(|| {
        let compact = Symmetric5::from_banded(&poisson(n1500), 0.0).expect("symmetric");
        let rhs = vec![1.0; compact.grid().cells()];
        let mut x = vec![0.0; rhs.len()];
        let mg = Multigrid::new(&compact, MultigridSettings::default()).expect("setup");
        let options = SolveOptions::default().tolerance(1e-8);
        solved(
            Pcg::new(mg)
                .with_options(options)
                .solve(&compact, &rhs, &mut x),
        );
    });
    let banded = |how| {
        peak_bytes_of(|| {
            let op_n = poisson(n1500);
            let rhs = vec![1.0; op_n.grid().cells()];
            mgpcg_solve(&op_n, &rhs, 1e-8, how);
        })
    };
    let (banded64, banded32) = (banded(MgPcg::DoubleVcycle), banded(MgPcg::SingleVcycle));
    let direct = peak_bytes_of(|| {
        let op_n = poisson(n1500);
        let csc = to_csc_lower(&op_n);
        drop(op_n);
        let mut b = vec![1.0; n1500 * n1500];
        direct_solve(&csc, &mut b);
    });
    let mb = |bytes: usize| bytes as f64 / 1e6;
    println!(
        "# 1500x1500 peak memory: MG-PCG on Symmetric5 {:.1} MB, on Banded5 {:.1} MB \
         (f32 V-cycle {:.1} MB); direct {:.1} MB",
        mb(ours),
        mb(banded64),
        mb(banded32),
        mb(direct)
    );
    println!(
        "peak_memory_ratio_direct_vs_ours_1500={:.2}",
        direct as f64 / ours as f64
    );

    mixed_precision(1000);

    // Parallel speed-up of CG against the triad's, 2000 x 2000, 1 vs `threads` threads.
    if threads > 1 {
        let many = pool(threads);
        let (tb, tc) = (wave(n2000), wave(n2000));
        let mut ta = vec![0.0; n2000];
        let mut cg1 = our_cg(&op, 30, true);
        let mut cgn = our_cg(&op, 30, true);
        let triad1 = |a: &mut [f64]| single.install(|| triad(a, &tb, &tc, 3.0));
        let triadn = |a: &mut [f64]| many.install(|| triad(a, &tb, &tc, 3.0));
        let mut ta2 = vec![0.0; n2000];
        let [t_cg1, t_cgn, t_tr1, t_trn] = interleaved(
            10,
            [
                &mut || single.install(&mut cg1),
                &mut || many.install(&mut cgn),
                &mut || triad1(&mut ta),
                &mut || triadn(&mut ta2),
            ],
        );
        let cg_speedup = t_cg1 / t_cgn;
        let triad_speedup = t_tr1 / t_trn;
        println!(
            "# CG speed-up {cg_speedup:.2}, triad speed-up {triad_speedup:.2} on {threads} threads"
        );
        println!(
            "parallel_speedup_vs_triad_speedup={:.3}",
            cg_speedup / triad_speedup
        );
        // The same for whole MG-PCG solves (the V-cycle's smoothing passes in bands of rows),
        // hierarchies built in the larger pool (their scratch sized for its threads), triads
        // beside them again.
        let mut mg1 = many.install(|| WarmMgPcg::new(2000));
        let mut mgn = many.install(|| WarmMgPcg::new(2000));
        let [t_mg1, t_mgn, t_tr1, t_trn] = interleaved(
            5,
            [
                &mut || single.install(|| mg1.solve()),
                &mut || many.install(|| mgn.solve()),
                &mut || triad1(&mut ta),
                &mut || triadn(&mut ta2),
            ],
        );
        let (mg_speedup, triad_speedup) = (t_mg1 / t_mgn, t_tr1 / t_trn);
        println!(
            "# MG-PCG 2000x2000 speed-up {mg_speedup:.2}, triad speed-up {triad_speedup:.2} on \
             {threads} threads"
        );
        println!(
            "mgpcg_parallel_speedup_vs_triad_speedup={:.3}",
            mg_speedup / triad_speedup
        );
    } else {
        println!("# one thread only: parallel_speedup_vs_triad_speedup not measured");
    }
    drop(op);
    drop(compact);

    mgpcg_iteration(2000);
    heterogeneous_vs_poisson(1024);

    // Scaling of MG-PCG's time per cell from 1024^2 to 4096^2 cells: repeated solves with the
    // hierarchy and workspace built once (the cost that recurs per time step), and, on a
    // `#` line, first solves including setup.
    let mut small = WarmMgPcg::new(1024);
    let mut large = WarmMgPcg::new(4096);
    let [warm1024, warm4096] = interleaved(3, [&mut || small.solve(), &mut || large.solve()]);
    let per_cell = |t: f64, n: usize| t / (n * n) as f64;
    println!(
        "# MG-PCG: {} iterations at 1024^2, {} at 4096^2; first solve with setup \
         {:.1} vs {:.1} ns/cell (ratio {:.2})",
        small.iterations,
        large.iterations,
        per_cell(small.cold, 1024) * 1e9,
        per_cell(large.cold, 4096) * 1e9,
        per_cell(large.cold, 4096) / per_cell(small.cold, 1024)
    );
    println!(
        "time_per_cell_4096_vs_1024={:.2}",
        per_cell(warm4096, 4096) / per_cell(warm1024, 1024)
    );
}

/// One MG-PCG iteration against the triad, and the hierarchy's set-up against one iteration,
/// on `n x n` Poisson cells with the f32 V-cycle at default settings.
fn mgpcg_iteration(n: usize) {
    let cells = n * n;
    let mut warm = WarmMgPcg::new(n);
    let (tb, tc) = (wave(cells), wave(cells));
    let mut ta = vec![0.0; cells];
    let op = poisson(n);
    let mut setup = || {
        std::hint::black_box(single_multigrid(&op));
    };
    let [t_triad, t_solve, t_setup] = interleaved(
        5,
        [
            &mut || triad(&mut ta, &tb, &tc, 3.0),
            &mut || warm.solve(),
            &mut setup,
        ],
    );
    let t_iteration = t_solve / warm.iterations as f64;
    let (krylov, fine, coarse) = (
        BYTES_MGPCG_KRYLOV,
        BYTES_VCYCLE_F32_FINE,
        BYTES_VCYCLE_F32_COARSE,
    );
    let bytes = krylov + fine + coarse;
    let bw = BYTES_TRIAD * cells as f64 / t_triad;
    let rate = bytes * cells as f64 / t_iteration;
    println!(
        "# MG-PCG iteration byte model per fine cell: Krylov f64 {krylov:.0} + fine V-cycle f32 \
         {fine:.0} + coarse levels {coarse:.0} = {bytes:.0} B"
    );
    println!(
        "# {n}x{n} MG-PCG: {} iterations, {:.2} ns/cell per iteration = {:.2} GB/s by the model \
         (triad {:.2} GB/s); set-up (f32 copy by colour + hierarchy) {:.3} s",
        warm.iterations,
        t_iteration / cells as f64 * 1e9,
        rate / 1e9,
        bw / 1e9,
        t_setup
    );
    println!("mgpcg_iteration_vs_triad={:.3}", rate / bw);
    println!("mgpcg_setup_vs_iteration={:.2}", t_setup / t_iteration);
}

/// Whole MG-PCG solves (set-up included, f32 V-cycle, default settings) on the layered
/// contrast-10⁴ field and on Poisson, `n x n` cells each, time per cell against each other.
fn heterogeneous_vs_poisson(n: usize) {
    let (field, zero, x0) = precond_problems::heterogeneous(n);
    let model = poisson(n);
    let ones = vec![1.0; n * n];
    let (mut its_field, mut its_model) = (0, 0);
    let solve = |op: &Banded5<f64>, rhs: &[f64], start: &[f64]| {
        let mut x = start.to_vec();
        let mut pcg =
            Pcg::new(single_multigrid(op)).with_options(SolveOptions::default().tolerance(1e-8));
        solved(pcg.solve(op, rhs, &mut x)).iterations
    };
    let [t_field, t_model] = interleaved(
        3,
        [&mut || its_field = solve(&field, &zero, &x0), &mut || {
            its_model = solve(&model, &ones, &vec![0.0; n * n])
        }],
    );
    println!(
        "# {n}x{n} MG-PCG with set-up: contrast-10^4 field {its_field} iterations {t_field:.3} s, \
         Poisson {its_model} iterations {t_model:.3} s"
    );
    println!(
        "mgpcg_heterogeneous_ns_per_cell_vs_poisson={:.2}",
        t_field / t_model
    );
}

/// MG-PCG (f32 V-cycle) on `n x n` Poisson cells, built once for repeated solves from zero.
struct WarmMgPcg {
    op: Banded5<f64>,
    pcg: Pcg<SinglePrecision<Banded5ByColour<f32>, Multigrid<f32>>>,
    ws: Workspace<f64>,
    rhs: Vec<f64>,
    x: Vec<f64>,
    /// Time of the first solve, setup (f32 copy by colour + hierarchy) included.
    cold: f64,
    iterations: usize,
}

impl WarmMgPcg {
    fn new(n: usize) -> WarmMgPcg {
        let op = poisson(n);
        let rhs = vec![1.0; op.grid().cells()];
        let mut x = vec![0.0; rhs.len()];
        let start = Instant::now();
        let mut pcg =
            Pcg::new(single_multigrid(&op)).with_options(SolveOptions::default().tolerance(1e-8));
        let mut ws = Workspace::for_grid(op.grid());
        let report = solved(pcg.solve_with(&op, &rhs, &mut x, &mut ws));
        let cold = start.elapsed().as_secs_f64();
        WarmMgPcg {
            op,
            pcg,
            ws,
            rhs,
            x,
            cold,
            iterations: report.iterations,
        }
    }

    fn solve(&mut self) {
        self.x.fill(0.0);
        solved(
            self.pcg
                .solve_with(&self.op, &self.rhs, &mut self.x, &mut self.ws),
        );
    }
}

/// Mixed precision to relative residual 1e-12, `n x n` cells: f32 inner solves with f64
/// refinement ([`MixedRefinement`]) against the same method all in f64. The problem is one
/// backward-Euler step of a diffusion problem (Laplacian plus a storage term of 0.01 per cell),
/// whose rounding floor lies well below 1e-12 (on the pure Poisson problem at 1000^2 it is about
/// 1.5e-11, so 1e-12 is out of reach in any precision). Solvers and workspaces are built once
/// and reused, as in time stepping; the times are the solves alone.
fn mixed_precision(n: usize) {
    let grid = Grid::new(n, n).expect("grid");
    let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| {
        let mut c = Coeffs5::laplacian(grid, i, j);
        c.center += 0.01;
        c
    })
    .expect("valid");
    let single = op.cast::<f32>().expect("finite coefficients");
    let rhs = wave(grid.cells());
    let options = SolveOptions::default()
        .tolerance(1e-12)
        .max_iterations(100_000);
    let mut cg = Cg::default().with_options(options.clone());
    let mut mixed_cg = MixedRefinement::with_preconditioner(single.clone(), Identity).expect("ok");
    let mg = Multigrid::new(&op, MultigridSettings::default()).expect("setup");
    let mut mg_pcg = Pcg::new(mg).with_options(options);
    let mg32 = Multigrid::new(&single, MultigridSettings::default()).expect("setup");
    let mut mixed_mg = MixedRefinement::with_preconditioner(single, mg32).expect("ok");
    let names = [
        "CG f64",
        "CG f32 + refinement",
        "MG-PCG f64",
        "MG-PCG f32 + refinement",
    ];
    let mut reports: [Option<Report>; 4] = [None, None, None, None];
    let (mut x, mut ws) = (vec![0.0; rhs.len()], Workspace::for_grid(grid));
    let mut run = |k: usize| {
        x.fill(0.0);
        let result = match k {
            0 => cg.solve_with(&op, &rhs, &mut x, &mut ws),
            1 => mixed_cg.solve_with(&op, &rhs, &mut x, &mut ws),
            2 => mg_pcg.solve_with(&op, &rhs, &mut x, &mut ws),
            _ => mixed_mg.solve_with(&op, &rhs, &mut x, &mut ws),
        };
        reports[k] = Some(solved(result));
    };
    // One closure per contender, all driving the same `run`.
    let times = {
        let run = std::cell::RefCell::new(&mut run);
        interleaved(
            3,
            [
                &mut || (run.borrow_mut())(0),
                &mut || (run.borrow_mut())(1),
                &mut || (run.borrow_mut())(2),
                &mut || (run.borrow_mut())(3),
            ],
        )
    };
    for ((name, report), t) in names.iter().zip(&reports).zip(times) {
        let report = report.as_ref().expect("ran");
        println!(
            "# {n}x{n} + storage, {name}: {} iterations, relative residual {:.1e}, {t:.3} s",
            report.iterations,
            report.relative_residual()
        );
    }
    println!("mixed_precision_speedup_cg_{n}={:.2}", times[0] / times[1]);
    println!(
        "mixed_precision_speedup_mgpcg_{n}={:.2}",
        times[2] / times[3]
    );
}

fn solved(result: Result<Report, Error>) -> Report {
    result.expect("the solve converges")
}

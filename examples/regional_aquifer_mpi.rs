//! A regional confined aquifer of our own invention solved over MPI processes: a coastal plain
//! with a sea boundary on the west, a river held at its stage across the plain, a buried
//! channel of gravel, silty patches, recharge and a well field. Every process builds only its
//! block of the operator; process 0 gathers the heads and draws the map. The run prints
//! `iterations=N` and `solution_hash=H` (a hash of the gathered solution's bits), which are
//! the same for any number of processes and threads. PCG is preconditioned by the distributed
//! multigrid V-cycle (`--jacobi`: by Jacobi, the cheapest and slowest choice).
//!
//! The plain, its channel, river and wells are invented for this demonstration; only the
//! conductivity ranges come from a handbook. Results support, and do not replace,
//! engineering judgement: design to local codes and licensed professional practice.
//!
//! ```sh
//! cargo build --release --features mpi --example regional_aquifer_mpi
//! mpirun -n 4 target/release/examples/regional_aquifer_mpi
//! ```
//!
//! (`--allow-run-as-root --oversubscribe` when running as root on a machine with fewer
//! cores than processes.) `--compare` (one process only) also solves the same system with a
//! `Banded5` in the ordinary threaded space (same preconditioner kind), to measure the cost of
//! exact sums.

mod support;

use std::time::Instant;

use quintet::distributed::{
    DistributedJacobi, DistributedMultigrid, DistributedStencil, Partition, Processes,
};
use quintet::prelude::*;
use support::contour::round_levels;
use support::picture::{finite_range, Map};
use support::{failure, ramp, Failure, Options};

const HELP: &str = "\
regional_aquifer_mpi: steady heads in an invented coastal aquifer, solved over MPI processes
(mpirun -n P); prints iterations=N and solution_hash=H, writes heads.png on process 0.

Usage: mpirun -n 4 target/release/examples/regional_aquifer_mpi [OPTIONS]

Options:
    --nx N        cells along x (default 400; the plain is 30 km x 20 km)
    --threads     let each process use rayon's threads as well
    --jacobi      precondition PCG by Jacobi instead of the distributed multigrid V-cycle
    --compare     (one process) also solve with Banded5 in the ordinary space and print
                  the time per iteration of both";

// Hydraulic conductivity ranges from Freeze & Cherry, Groundwater, 1979, Table 2.2, from
// memory: gravel 1e-3 to 1 m/s, clean sand 1e-6 to 1e-2 m/s, silt 1e-9 to 1e-5 m/s. The
// values below lie inside those ranges.
const K_SAND: f64 = 1e-3; // m/s
const K_GRAVEL: f64 = 5e-3; // m/s
const K_SILT: f64 = 5e-6; // m/s
const THICKNESS: f64 = 30.0; // m
const SIZE: (f64, f64) = (30_000.0, 20_000.0); // m
/// Recharge: 100 mm per year, in m/s.
const RECHARGE: f64 = 0.100 / (365.25 * 86_400.0);
/// Wells: x, y (m), pumping (m³/s).
const WELLS: [(f64, f64, f64); 3] = [
    (14_000.0, 9_000.0, 0.04),
    (15_500.0, 10_200.0, 0.03),
    (22_000.0, 6_000.0, 0.05),
];

fn conductivity(x: f64, y: f64) -> f64 {
    let channel = y - (8_000.0 + 3_000.0 * (x / 7_000.0).sin());
    if channel.abs() < 600.0 {
        return K_GRAVEL;
    }
    let silt = ((x - 20_000.0) / 2_500.0).powi(2) + ((y - 14_000.0) / 1_500.0).powi(2) < 1.0
        || ((x - 8_000.0) / 1_800.0).powi(2) + ((y - 3_500.0) / 1_200.0).powi(2) < 1.0;
    if silt {
        K_SILT
    } else {
        K_SAND * 10f64.powf(0.3 * (x / 4_000.0).cos() * (y / 3_000.0).sin())
    }
}

/// The river's stage where it crosses column x (m), or None off its course.
fn river(x: f64, y: f64, h: f64) -> Option<f64> {
    let course = 16_000.0 + 1_500.0 * (x / 5_000.0).cos();
    ((y - course).abs() < h / 2.0 && x > 2_000.0).then(|| 2.0 + 18.0 * x / SIZE.0)
}

fn main() {
    support::run(body);
}

fn body() -> Result<(), Failure> {
    let procs = Processes::mpi_world().map_err(failure)?;
    let root = procs.rank() == 0;
    let mut options = Options::parse("regional_aquifer_mpi", HELP)?;
    let nx: usize = support::option(&mut options.rest, "--nx", 400)?;
    let threads = options.rest.contains("--threads");
    let compare = options.rest.contains("--compare");
    let jacobi = options.rest.contains("--jacobi");
    let out = if root { Some(options.finish()?) } else { None };
    let ny = (nx * 2).div_ceil(3).max(1);
    let h = SIZE.0 / nx as f64; // square cells
    let grid = Grid::new(nx, ny).map_err(failure)?;
    let centre = |i: usize, j: usize| ((i as f64 + 0.5) * h, (j as f64 + 0.5) * h);
    let k_at = |i: usize, j: usize| {
        let (x, y) = centre(i, j);
        conductivity(x, y) * THICKNESS // transmissivity, m²/s
    };
    // Face conductance between two square cells: harmonic mean of the transmissivities.
    let face = |a: f64, b: f64| -2.0 * a * b / (a + b);
    let coeffs = |i: usize, j: usize| {
        let t = k_at(i, j);
        let mut c = Coeffs5::default();
        if i > 0 {
            c.west = face(t, k_at(i - 1, j));
        }
        if i + 1 < nx {
            c.east = face(t, k_at(i + 1, j));
        }
        if j > 0 {
            c.south = face(t, k_at(i, j - 1));
        }
        if j + 1 < ny {
            c.north = face(t, k_at(i, j + 1));
        }
        c.center = -(c.west + c.east + c.south + c.north);
        c
    };
    let fixed_head = |i: usize, j: usize| {
        let (x, y) = centre(i, j);
        if i == 0 {
            Some(0.0) // the sea
        } else {
            river(x, y, h)
        }
    };
    let rhs_at = |i: usize, j: usize| {
        let (x, y) = centre(i, j);
        let mut q = RECHARGE * h * h;
        for &(wx, wy, rate) in &WELLS {
            if (wx - x).abs() <= h / 2.0 && (wy - y).abs() <= h / 2.0 {
                q -= rate;
            }
        }
        q
    };

    let part = Partition::new(grid, procs.clone()).map_err(failure)?;
    let op = DistributedStencil::from_fn(&part, coeffs)
        .and_then(|op| op.with_fixed(|i, j| fixed_head(i, j).is_some()))
        .map_err(failure)?;
    let rhs = part.local_from_fn(rhs_at);
    let mut heads = part.local_from_fn(|i, j| fixed_head(i, j).unwrap_or(0.0));
    let started = Instant::now();
    let preconditioner: Box<dyn Preconditioner<f64>> = if jacobi {
        Box::new(DistributedJacobi::new(&op).map_err(failure)?)
    } else {
        Box::new(DistributedMultigrid::new(&op, MultigridSettings::default()).map_err(failure)?)
    };
    let setup = started.elapsed().as_secs_f64();
    let mut pcg = Pcg::new(preconditioner);
    *IterativeSolver::<f64>::options_mut(&mut pcg) = SolveOptions::default().tolerance(1e-8);
    let mut ws = part.workspace(threads);
    let started = Instant::now();
    let report = pcg
        .solve_with(&op, &rhs, &mut heads, &mut ws)
        .map_err(failure)?;
    let seconds = started.elapsed().as_secs_f64();
    let whole = part.gather(&heads).map_err(failure)?;
    let Some(whole) = whole else {
        return Ok(());
    };
    let (px, py) = part.process_grid();
    println!(
        "grid {nx} x {ny} ({} cells, {h:.0} m), {} processes as {px} x {py}",
        grid.cells(),
        procs.count()
    );
    println!("{}", report.method);
    println!("iterations={}", report.iterations);
    println!("solution_hash={:016x}", hash(&whole));
    println!(
        "time per iteration {:.3} ms ({:.2} s in all, set-up {:.3} s)",
        1e3 * seconds / report.iterations.max(1) as f64,
        seconds,
        setup
    );
    if compare && procs.count() == 1 {
        compare_ordinary(
            grid,
            coeffs,
            fixed_head,
            rhs_at,
            jacobi,
            seconds / report.iterations.max(1) as f64,
        )?;
    }
    if let Some(out) = out {
        draw(&out, nx, ny, h, &whole)?;
    }
    Ok(())
}

/// FNV-1a over the bits of every value (common practice for a short fingerprint).
fn hash(values: &[f64]) -> u64 {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for v in values {
        for b in v.to_bits().to_le_bytes() {
            h = (h ^ u64::from(b)).wrapping_mul(0x0100_0000_01b3);
        }
    }
    h
}

/// The same system as a `Banded5` in the ordinary (threaded, block-summing) space.
fn compare_ordinary(
    grid: Grid,
    coeffs: impl Fn(usize, usize) -> Coeffs5<f64>,
    fixed_head: impl Fn(usize, usize) -> Option<f64>,
    rhs_at: impl Fn(usize, usize) -> f64,
    jacobi: bool,
    exact_per_iteration: f64,
) -> Result<(), Failure> {
    let fixed: Vec<usize> = (0..grid.cells())
        .filter(|&k| {
            let (i, j) = grid.coords(k);
            fixed_head(i, j).is_some()
        })
        .collect();
    let op = Banded5::from_fn(grid, coeffs)
        .and_then(|op| op.with_fixed(FixedCells::new(grid, fixed)?))
        .map_err(failure)?;
    let rhs: Vec<f64> = (0..grid.cells())
        .map(|k| rhs_at(k % grid.nx(), k / grid.nx()))
        .collect();
    let mut x: Vec<f64> = (0..grid.cells())
        .map(|k| fixed_head(k % grid.nx(), k / grid.nx()).unwrap_or(0.0))
        .collect();
    let preconditioner: Box<dyn Preconditioner<f64>> = if jacobi {
        Box::new(Jacobi::new(&op).map_err(failure)?)
    } else {
        Box::new(Multigrid::<f64>::new(&op, MultigridSettings::default()).map_err(failure)?)
    };
    let mut pcg = Pcg::new(preconditioner);
    *IterativeSolver::<f64>::options_mut(&mut pcg) = SolveOptions::default().tolerance(1e-8);
    let started = Instant::now();
    let report = pcg
        .solve_with(&op, &rhs, &mut x, &mut Workspace::new())
        .map_err(failure)?;
    let per = started.elapsed().as_secs_f64() / report.iterations.max(1) as f64;
    println!(
        "ordinary space (Banded5, block sums): {} iterations, {:.3} ms per iteration; exact sums cost {:.2}x",
        report.iterations,
        1e3 * per,
        exact_per_iteration / per
    );
    Ok(())
}

/// The head map, averaged onto at most 300 columns so the picture stays quick to draw.
fn draw(out: &std::path::Path, nx: usize, ny: usize, h: f64, heads: &[f64]) -> Result<(), Failure> {
    let step = nx.div_ceil(300).max(1);
    let (mx, my) = (nx.div_ceil(step), ny.div_ceil(step));
    let mut coarse = vec![0.0; mx * my];
    for (k, c) in coarse.iter_mut().enumerate() {
        let (ci, cj) = (k % mx, k / mx);
        let (mut sum, mut count) = (0.0, 0.0);
        for j in cj * step..((cj + 1) * step).min(ny) {
            for i in ci * step..((ci + 1) * step).min(nx) {
                sum += heads[i + nx * j];
                count += 1.0;
            }
        }
        *c = sum / count;
    }
    let km = |n: usize, w: f64| (0..=n).map(|k| k as f64 * w / 1000.0).collect::<Vec<_>>();
    let nodes = |n: usize, w: f64| {
        (0..n)
            .map(|k| (k as f64 + 0.5) * w / 1000.0)
            .collect::<Vec<_>>()
    };
    let (wx, wy) = (h * step as f64, h * step as f64);
    let mut x_faces = km(mx, wx);
    let mut y_faces = km(my, wy);
    *x_faces.last_mut().unwrap_or(&mut 0.0) = SIZE.0 / 1000.0;
    *y_faces.last_mut().unwrap_or(&mut 0.0) = ny as f64 * h / 1000.0;
    let (lo, hi) = finite_range(&coarse);
    let levels = round_levels(lo, hi, 12);
    let map = Map {
        title: "Regional heads, solved over MPI processes".into(),
        x_label: "x [km]".into(),
        y_label: "y [km]".into(),
        scale_label: "hydraulic head [m]".into(),
        x_faces,
        y_faces,
        x_nodes: nodes(mx, wx),
        y_nodes: nodes(my, wy),
        values: &coarse,
        ramp: &ramp::HEAD,
        decimals: support::contour::decimals_for(&levels),
        levels,
    };
    let path = out.join("heads.png");
    map.draw(&path, |_| Ok(()))?;
    println!("picture: {}", path.display());
    Ok(())
}

//! Distributed solves under `mpirun -n P` (P = 1, 2, 3, 4 in `.ci/run`): halo products against
//! the serial product, and CG/PCG solves against the single-process solve computed on every
//! process, bit for bit; typed errors agreed by every process. Run it directly (one process)
//! or under mpirun; it needs the `mpi` feature:
//!
//! ```sh
//! cargo build --release -p quintet-tests --features mpi --test mpi_solves
//! mpirun --allow-run-as-root --oversubscribe -n 3 target/release/deps/mpi_solves-*
//! ```
//!
//! A plain main (no test harness): MPI is started once, every check runs on every process in
//! the same order (they are collective), and a failed check panics, which ends the process
//! with an error status that mpirun reports.

use quintet::distributed::{
    DistributedJacobi, DistributedMultigrid, DistributedStencil, Partition, Processes,
};
use quintet::prelude::*;

/// A deterministic generator (xorshift64, common practice): the same numbers on every process.
struct Numbers(u64);

impl Numbers {
    fn next(&mut self) -> f64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// A random 5-point stencil with zero couplings off the grid (not symmetric: the product
/// check needs none of that).
fn random_stencil(grid: Grid, seed: u64) -> Vec<Coeffs5<f64>> {
    let mut g = Numbers(seed);
    (0..grid.cells())
        .map(|k| {
            let (i, j) = grid.coords(k);
            let mut c = || -g.next();
            let (w, e, s, n) = (c(), c(), c(), c());
            Coeffs5 {
                center: 4.0 + g.next(),
                west: if i > 0 { w } else { 0.0 },
                east: if i + 1 < grid.nx() { e } else { 0.0 },
                south: if j > 0 { s } else { 0.0 },
                north: if j + 1 < grid.ny() { n } else { 0.0 },
            }
        })
        .collect()
}

/// Every process grid px × py with px·py = P that fits `grid`.
fn process_grids(grid: Grid, p: usize) -> Vec<(usize, usize)> {
    (1..=p)
        .filter(|px| p % px == 0 && *px <= grid.nx() && p / px <= grid.ny())
        .map(|px| (px, p / px))
        .collect()
}

fn halo_products(procs: &Processes) {
    // Reference: the serial Banded5 product (the crate's single-process operator).
    for (nx, ny, seed) in [(13, 11, 1), (7, 30, 2), (30, 4, 3), (5, 5, 4), (1, 9, 5)] {
        let grid = Grid::new(nx, ny).unwrap();
        let coeffs = random_stencil(grid, seed);
        let banded = Banded5::from_fn(grid, |i, j| coeffs[i + nx * j]).unwrap();
        let mut g = Numbers(seed + 100);
        let x: Vec<f64> = (0..grid.cells()).map(|_| g.next() - 0.5).collect();
        let mut expected = vec![0.0; grid.cells()];
        banded.apply(&x, &mut expected).unwrap();
        for (px, py) in process_grids(grid, procs.count()) {
            let part = Partition::with_process_grid(grid, procs.clone(), px, py).unwrap();
            let op = DistributedStencil::from_fn(&part, |i, j| coeffs[i + nx * j]).unwrap();
            let local_x = part.local_part(&x).unwrap();
            let mut y = vec![0.0; part.local_len()];
            op.apply(&local_x, &mut y).unwrap();
            if let Some(whole) = part.gather(&y).unwrap() {
                let same = whole
                    .iter()
                    .zip(&expected)
                    .all(|(a, b)| a.to_bits() == b.to_bits());
                assert!(same, "product on {nx} x {ny} over {px} x {py} processes");
            }
        }
    }
}

/// The heterogeneous test problem: conductivities over three decades (a smooth field with
/// low-conductivity lenses), faces by harmonic mean, a fixed column crossing the middle of the
/// grid and a fixed block straddling the middle row, the west edge fixed; sources in the
/// east. Invented data (a demo field), used for the bit-for-bit and reference checks.
struct Field {
    grid: Grid,
    k: Vec<f64>,
    /// A storage term `storage·k` on the center (a time step's; zero for steady flow).
    storage: f64,
}

impl Field {
    fn new(nx: usize, ny: usize, storage: f64) -> Field {
        let grid = Grid::new(nx, ny).unwrap();
        let k = (0..grid.cells())
            .map(|c| {
                let (i, j) = grid.coords(c);
                let (x, y) = (i as f64 / nx as f64, j as f64 / ny as f64);
                let smooth = (6.0 * x).sin() * (4.0 * y).cos();
                let lens = ((x - 0.6).powi(2) + (y - 0.4).powi(2)) < 0.02;
                10f64.powf(smooth) * if lens { 1e-2 } else { 1.0 }
            })
            .collect();
        Field { grid, k, storage }
    }

    fn coeffs(&self, i: usize, j: usize) -> Coeffs5<f64> {
        let (nx, ny) = (self.grid.nx(), self.grid.ny());
        let here = self.k[i + nx * j];
        let face = |other: f64| -2.0 * here * other / (here + other);
        let mut c = Coeffs5::default();
        if i > 0 {
            c.west = face(self.k[i - 1 + nx * j]);
        }
        if i + 1 < nx {
            c.east = face(self.k[i + 1 + nx * j]);
        }
        if j > 0 {
            c.south = face(self.k[i + nx * (j - 1)]);
        }
        if j + 1 < ny {
            c.north = face(self.k[i + nx * (j + 1)]);
        }
        c.center = -(c.west + c.east + c.south + c.north) + self.storage * here;
        c
    }

    fn fixed(&self, i: usize, j: usize) -> bool {
        let (nx, ny) = (self.grid.nx(), self.grid.ny());
        i == 0
            || (i == nx / 2 && j > ny / 4 && j < 3 * ny / 4)
            || (i > nx / 5 && i < nx / 3 && j + 2 > ny / 2 && j < ny / 2 + 2)
    }

    /// Fixed values in `x`, zero elsewhere.
    fn start(&self, i: usize, j: usize) -> f64 {
        if !self.fixed(i, j) {
            0.0
        } else if i == 0 {
            1.0
        } else {
            0.25
        }
    }

    fn rhs(&self, i: usize, j: usize) -> f64 {
        let nx = self.grid.nx();
        if i == 4 * nx / 5 {
            0.01 * (1.0 + j as f64 / 10.0)
        } else {
            0.0
        }
    }
}

/// The drivers run distributed.
#[derive(Clone, Copy, Debug, PartialEq)]
enum Method {
    Cg,
    PcgJacobi,
    PcgMultigrid(CoarseOperator),
}

/// One solve of `field` on `part`: the gathered solution (process 0) and the report.
fn solve(
    field: &Field,
    part: &Partition,
    method: Method,
    threads: usize,
    options: SolveOptions,
) -> (Option<Vec<f64>>, Result<Report, Error>) {
    let op = DistributedStencil::from_fn(part, |i, j| field.coeffs(i, j))
        .unwrap()
        .with_fixed(|i, j| field.fixed(i, j))
        .unwrap();
    let rhs = part.local_from_fn(|i, j| field.rhs(i, j));
    let mut x = part.local_from_fn(|i, j| field.start(i, j));
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap();
    let mut ws = part.workspace(threads > 1);
    let result = pool.install(|| match method {
        Method::PcgJacobi => {
            let mut solver = Pcg::new(DistributedJacobi::new(&op).unwrap());
            *IterativeSolver::<f64>::options_mut(&mut solver) = options.clone();
            solver.solve_with(&op, &rhs, &mut x, &mut ws)
        }
        Method::PcgMultigrid(coarse_operator) => {
            let settings = MultigridSettings {
                coarse_operator,
                ..Default::default()
            };
            let mut solver = Pcg::new(DistributedMultigrid::new(&op, settings).unwrap());
            *IterativeSolver::<f64>::options_mut(&mut solver) = options.clone();
            solver.solve_with(&op, &rhs, &mut x, &mut ws)
        }
        Method::Cg => {
            let mut solver = Cg::default();
            *IterativeSolver::<f64>::options_mut(&mut solver) = options.clone();
            solver.solve_with(&op, &rhs, &mut x, &mut ws)
        }
    });
    (part.gather(&x).unwrap(), result)
}

fn same_bits(a: &[f64], b: &[f64]) -> bool {
    a.len() == b.len() && a.iter().zip(b).all(|(x, y)| x.to_bits() == y.to_bits())
}

fn same_report(a: &Report, b: &Report) -> bool {
    a.iterations == b.iterations
        && a.reason == b.reason
        && a.residual_norm.to_bits() == b.residual_norm.to_bits()
        && same_bits(a.history.as_slice(), b.history.as_slice())
}

/// The solution, iteration count and residual history equal the single-process solve
/// (computed on every process) for every process grid and 1 or 2 threads.
fn bit_identical_solves(procs: &Processes) {
    let single = Processes::single();
    let options = SolveOptions::default().tolerance(1e-10);
    // Small enough to be quick; large enough (second case) that a process's block passes
    // the crate's threshold for threaded kernels on up to 4 processes.
    // Threads change nothing below the threaded-kernel threshold, so the small case runs on
    // one thread; its storage term keeps the iteration count (and the collectives, slow on an
    // oversubscribed CI machine) modest.
    for (nx, ny, storage, threads) in [(37, 29, 0.5, vec![1]), (400, 330, 0.05, vec![1, 2])] {
        let field = Field::new(nx, ny, storage);
        let reference = Partition::new(field.grid, single.clone()).unwrap();
        let multigrid = [
            CoarseOperator::Upscaled,
            CoarseOperator::LumpedGalerkin,
            CoarseOperator::LargerConductance,
        ];
        let methods = [Method::Cg, Method::PcgJacobi]
            .into_iter()
            .chain(multigrid.map(Method::PcgMultigrid));
        for method in methods {
            if nx > 100 && method == Method::Cg {
                continue; // the large case checks the threads with preconditioned CG only
            }
            let (x_ref, r_ref) = solve(&field, &reference, method, 1, options.clone());
            let r_ref = r_ref.expect("the reference solve converges");
            let x_ref = x_ref.expect("one process gathers");
            for (px, py) in process_grids(field.grid, procs.count()) {
                let part = Partition::with_process_grid(field.grid, procs.clone(), px, py).unwrap();
                for &t in &threads {
                    let (x, report) = solve(&field, &part, method, t, options.clone());
                    let report = report.expect("the distributed solve converges");
                    let what =
                        format!("{nx} x {ny}, {method:?}, {px} x {py} processes, {t} threads");
                    assert!(same_report(&report, &r_ref), "report: {what}");
                    if let Some(x) = x {
                        assert!(same_bits(&x, &x_ref), "solution: {what}");
                    }
                }
            }
            if procs.rank() == 0 {
                println!(
                    "{nx} x {ny} {method:?}: {} iterations, identical on {} processes",
                    r_ref.iterations,
                    procs.count()
                );
            }
        }
    }
}

/// Distributed MG-PCG needs as many iterations as the serial MG-PCG (`Multigrid<f64>` on a
/// `Banded5` with the same rows and fixed cells): the same hierarchy, the same cycle.
fn multigrid_counts(procs: &Processes) {
    let options = SolveOptions::default().tolerance(1e-10);
    for (nx, ny) in [(37, 29), (200, 150)] {
        let field = Field::new(nx, ny, 0.0);
        let grid = field.grid;
        let banded = Banded5::from_fn(grid, |i, j| field.coeffs(i, j))
            .unwrap()
            .with_fixed(
                FixedCells::new(
                    grid,
                    (0..grid.cells()).filter(|&k| {
                        let (i, j) = grid.coords(k);
                        field.fixed(i, j)
                    }),
                )
                .unwrap(),
            )
            .unwrap();
        let rhs: Vec<f64> = (0..grid.cells())
            .map(|k| field.rhs(k % nx, k / nx))
            .collect();
        let mut x: Vec<f64> = (0..grid.cells())
            .map(|k| field.start(k % nx, k / nx))
            .collect();
        let mut serial =
            Pcg::new(Multigrid::<f64>::new(&banded, MultigridSettings::default()).unwrap());
        *IterativeSolver::<f64>::options_mut(&mut serial) = options.clone();
        let serial = serial.solve(&banded, &rhs, &mut x).unwrap();
        let part = Partition::new(grid, procs.clone()).unwrap();
        // The serial solver's default coarse operator.
        let method = Method::PcgMultigrid(CoarseOperator::default());
        let (_, report) = solve(&field, &part, method, 1, options.clone());
        let report = report.unwrap();
        assert_eq!(report.iterations, serial.iterations, "{nx} x {ny}");
        if procs.rank() == 0 {
            println!(
                "{nx} x {ny}: MG-PCG {} iterations, distributed and serial",
                report.iterations
            );
        }
    }
}

/// The distributed solution against nalgebra's dense LU of the free-cell system (a
/// general-purpose reference library). For an SPD matrix, ‖x − x*‖₂ ≤ ‖r‖₂ / λ_min (Golub &
/// Van Loan, Matrix Computations, 4th ed. 2013, §2.6 and §8.1), and the converged solve has
/// ‖r‖₂ ≤ tol·‖b_free‖₂; λ_min from nalgebra's symmetric eigensolver.
fn against_dense_lu(procs: &Processes) {
    let field = Field::new(29, 23, 0.0);
    let tol = 1e-10;
    let part = Partition::new(field.grid, procs.clone()).unwrap();
    let methods = [
        Method::PcgJacobi,
        Method::PcgMultigrid(CoarseOperator::Upscaled),
        Method::PcgMultigrid(CoarseOperator::LargerConductance),
    ];
    for method in methods {
        let (x, report) = solve(
            &field,
            &part,
            method,
            1,
            SolveOptions::default().tolerance(tol),
        );
        if let Some(x) = x {
            close_to_dense_lu(&field, &x, &report.unwrap(), tol);
        }
    }
}

/// `x` within the bound of [`against_dense_lu`].
fn close_to_dense_lu(field: &Field, x: &[f64], report: &Report, tol: f64) {
    let grid = field.grid;
    let free: Vec<usize> = (0..grid.cells())
        .filter(|&k| {
            let (i, j) = grid.coords(k);
            !field.fixed(i, j)
        })
        .collect();
    let index = |k: usize| free.iter().position(|&f| f == k);
    let n = free.len();
    let mut a = nalgebra::DMatrix::<f64>::zeros(n, n);
    let mut b = nalgebra::DVector::<f64>::zeros(n);
    for (row, &k) in free.iter().enumerate() {
        let (i, j) = grid.coords(k);
        let c = field.coeffs(i, j);
        a[(row, row)] = c.center;
        b[row] = field.rhs(i, j);
        for (side, value) in Side::ALL.iter().zip([c.west, c.east, c.south, c.north]) {
            if let Some(m) = grid.neighbour(k, *side) {
                let (mi, mj) = grid.coords(m);
                match index(m) {
                    Some(col) => a[(row, col)] = value,
                    None => b[row] -= value * field.start(mi, mj),
                }
            }
        }
    }
    let exact = a
        .clone()
        .lu()
        .solve(&b)
        .expect("the free system is regular");
    let lambda_min = a.symmetric_eigenvalues().min();
    let error: f64 = free
        .iter()
        .enumerate()
        .map(|(row, &k)| (x[k] - exact[row]).powi(2))
        .sum::<f64>()
        .sqrt();
    let bound = 2.0 * tol * b.norm() / lambda_min + 1e-12 * exact.norm();
    assert!(report.converged());
    assert!(error <= bound, "error {error:e} above the bound {bound:e}");
    println!(
        "29 x 23 {} against dense LU: error {error:.3e}, bound {bound:.3e}",
        report.method
    );
}

/// A bad coefficient, a bad center and a bad right-hand side on the last process's block:
/// every process returns the same typed error naming the same cell; a solve stopped by its
/// iteration limit leaves the same iterate as the single-process solve, and the same report.
fn failures(procs: &Processes) {
    let field = Field::new(37, 29, 0.0);
    let grid = field.grid;
    let part = Partition::new(grid, procs.clone()).unwrap();
    let (last_i, last_j) = (grid.nx() - 1, grid.ny() - 1); // owned by the last process
    let corner = last_i + grid.nx() * last_j;

    let err = DistributedStencil::from_fn(&part, |i, j| {
        let mut c = field.coeffs(i, j);
        if (i, j) == (last_i, last_j) {
            c.south = f64::NAN;
        }
        c
    })
    .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::NonFinite);
    assert_eq!(err.location().map(|at| at.cell), Some(corner));

    let err = DistributedStencil::from_fn(&part, |i, j| {
        let mut c = field.coeffs(i, j);
        if (i, j) == (last_i, last_j) {
            c.east = -1.0; // points off the grid
        }
        c
    })
    .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::OffGridCoupling);
    assert_eq!(err.location().map(|at| at.cell), Some(corner));

    let negative = DistributedStencil::from_fn(&part, |i, j| {
        let mut c = field.coeffs(i, j);
        if (i, j) == (last_i, last_j) {
            c.center = -2.5;
        }
        c
    })
    .unwrap();
    let err = DistributedJacobi::new(&negative).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::NonPositiveCenter);
    assert_eq!(err.location().map(|at| at.cell), Some(corner));
    assert_eq!(err.value(), Some(-2.5));
    let mut x = vec![0.0; part.local_len()];
    let rhs = part.local_from_fn(|i, j| field.rhs(i, j));
    let err = Cg::default()
        .solve_with(&negative, &rhs, &mut x, &mut part.workspace(false))
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::NonPositiveCenter);
    assert_eq!(err.location().map(|at| at.cell), Some(corner));

    let op = DistributedStencil::from_fn(&part, |i, j| field.coeffs(i, j))
        .unwrap()
        .with_fixed(|i, j| field.fixed(i, j))
        .unwrap();
    let bad_rhs = part.local_from_fn(|i, j| {
        if (i, j) == (last_i, last_j) {
            f64::INFINITY
        } else {
            0.0
        }
    });
    let err = Cg::default()
        .solve_with(&op, &bad_rhs, &mut x, &mut part.workspace(false))
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::NonFinite);
    assert_eq!(
        err.location().map(|at| at.coords),
        Some(Some((last_i, last_j)))
    );

    // An asymmetric coupling on the last process: distributed multigrid refuses it
    // everywhere, naming the same cell and neighbour.
    let lopsided = DistributedStencil::from_fn(&part, |i, j| {
        let mut c = field.coeffs(i, j);
        if (i, j) == (last_i - 1, last_j) {
            c.east *= 1.5;
        }
        c
    })
    .unwrap();
    let err = DistributedMultigrid::new(&lopsided, MultigridSettings::default()).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::Asymmetric);
    assert_eq!(err.location().map(|at| at.cell), Some(corner - 1));

    // Conductances near the largest f64: the coarse operator's series products overflow and
    // every process reports the same cell of the first coarse level (as the serial hierarchy).
    let huge = DistributedStencil::from_fn(&part, |i, j| {
        let c = Coeffs5::laplacian(grid, i, j);
        let s = 1e307;
        Coeffs5 {
            center: c.center * s,
            west: c.west * s,
            east: c.east * s,
            south: c.south * s,
            north: c.north * s,
        }
    })
    .unwrap();
    let err = DistributedMultigrid::new(&huge, MultigridSettings::default()).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::PivotBreakdown);
    assert_eq!(err.location().map(|at| at.cell), Some(0));

    // Non-convergence: the iteration limit stops every process at the same place.
    let limited = SolveOptions::default().tolerance(1e-10).max_iterations(7);
    let reference = Partition::new(grid, Processes::single()).unwrap();
    let (x_ref, r_ref) = solve(&field, &reference, Method::PcgJacobi, 1, limited.clone());
    let (x, result) = solve(&field, &part, Method::PcgJacobi, 1, limited);
    let (e_ref, e) = (r_ref.unwrap_err(), result.unwrap_err());
    assert_eq!(e.kind(), ErrorKind::NotConverged);
    assert!(same_report(e.report().unwrap(), e_ref.report().unwrap()));
    assert_eq!(e.report().unwrap().iterations, 7);
    if let (Some(x), Some(x_ref)) = (x, x_ref) {
        assert!(same_bits(&x, &x_ref), "the last iterate after the limit");
    }

    // Too many processes for the grid: the same typed error everywhere.
    let tiny = Partition::new(Grid::new(1, 1).unwrap(), procs.clone());
    assert_eq!(tiny.is_err(), procs.count() > 1);
    if let Err(e) = tiny {
        assert_eq!(e.kind(), ErrorKind::InvalidSetting);
    }
}

fn main() {
    let procs = Processes::mpi_world().expect("MPI starts");
    halo_products(&procs);
    bit_identical_solves(&procs);
    multigrid_counts(&procs);
    against_dense_lu(&procs);
    failures(&procs);
    if procs.rank() == 0 {
        println!(
            "mpi_solves: all checks passed on {} processes",
            procs.count()
        );
    }
}

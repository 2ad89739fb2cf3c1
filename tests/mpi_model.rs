//! The model, distributed, under `mpirun -n P` (P = 1, 2, 3, 4 in `.ci/run`): a heterogeneous
//! groundwater model assembled block by block ([`DistributedSystem`]) and solved with PCG +
//! Jacobi, PCG + distributed multigrid, BiCGSTAB and GMRES on every process grid of P processes; the gathered heads, the
//! iteration counts and every budget line must be the bits of the `Processes::single()` run
//! (computed on every process), and close to the serial `SteadySystem` solve and budget within
//! bounds derived from the residuals. Run it directly (one process) or under mpirun; it needs
//! the `mpi` feature:
//!
//! ```sh
//! cargo build --release -p quintet-tests --features mpi --test mpi_model
//! mpirun --allow-run-as-root --oversubscribe -n 3 target/release/deps/mpi_model-*
//! ```
//!
//! A plain main (no test harness): MPI is started once, every check runs on every process in
//! the same order (they are collective), and a failed check panics, which ends the process
//! with an error status that mpirun reports.

use quintet::distributed::{
    DistributedJacobi, DistributedMultigrid, DistributedSystem, Partition, Processes,
};
use quintet::model::{Budget, Conductivity, Field, Geometry, Model, SteadySystem};
use quintet::prelude::*;

const NX: usize = 37;
const NY: usize = 29;
/// The stopping tolerance of every solve (relative residual).
const TOLERANCE: f64 = 1e-11;

/// Every process grid px × py with px·py = P that fits `grid`.
fn process_grids(grid: Grid, p: usize) -> Vec<(usize, usize)> {
    (1..=p)
        .filter(|px| p % px == 0 && *px <= grid.nx() && p / px <= grid.ny())
        .map(|px| (px, p / px))
        .collect()
}

/// The heterogeneous test model (invented data, a demo aquifer): 37 × 29 cells of 25 m,
/// conductivity over three decades with a low-conductivity lens, a prescribed head on the west
/// edge, a lake of prescribed cells, a river of exchange cells along a row and a column,
/// recharge varying by cell, six wells and two inactive blocks. The block boundaries of every
/// process grid of 2, 3 and 4 processes (i = 9, 12, 18, 24, 27; j = 7, 9, 14, 19, 21) cut
/// through the lake, the river, the inactive blocks and lie beside the wells. Also returns the
/// cells of each line that depends on the heads (the others are sources). On a node-centred
/// geometry the west edge's nodes are held at the prescribed heads (fixed cells linked to
/// their neighbours across the block boundaries of 1 × P process grids), on a cell-centred
/// one the heads act through half a cell.
fn model(node_centred: bool) -> (Model, Vec<(&'static str, Vec<usize>)>) {
    let geometry = if node_centred {
        Geometry::node_centered(NX, NY, 25.0, 25.0, 12.0).unwrap()
    } else {
        Geometry::cell_centered(NX, NY, 25.0, 25.0, 12.0).unwrap()
    };
    let grid = geometry.grid();
    let k = Field::from_fn(grid, |i, j| {
        let (x, y) = (i as f64 / NX as f64, j as f64 / NY as f64);
        let smooth = (5.0 * x).sin() * (3.0 * y).cos();
        let lens = (x - 0.62).powi(2) + (y - 0.35).powi(2) < 0.015;
        2e-4 * 10f64.powf(smooth) * if lens { 1e-2 } else { 1.0 }
    });
    let mut model = Model::new(geometry, Conductivity::isotropic(k)).unwrap();
    let at = |i: usize, j: usize| grid.index(i, j);
    // Inactive: a block across i = 9 and j = 21, and one across i = 27 (and 24).
    let mut dead: Vec<usize> = Vec::new();
    for j in 19..=23 {
        for i in 7..=10 {
            dead.push(at(i, j));
        }
    }
    for j in 2..=6 {
        for i in 26..=28 {
            dead.push(at(i, j));
        }
    }
    model.deactivate(dead).unwrap();
    model
        .prescribe_edge(
            "west boundary",
            Side::West,
            (0..NY).map(|j| 41.0 - 0.02 * j as f64).collect::<Vec<_>>(),
        )
        .unwrap();
    // A lake of prescribed cells straddling i = 18 and j = 14.
    let lake: Vec<usize> = (12..=16)
        .flat_map(|j| (16..=20).map(move |i| (i, j)))
        .map(|(i, j)| at(i, j))
        .collect();
    model.prescribe_cells("lake", lake.clone(), 39.2).unwrap();
    // A river along row j = 9 (east of the lake) and up column i = 24.
    let mut river: Vec<usize> = (22..NX).map(|i| at(i, 9)).collect();
    river.extend((10..NY).map(|j| at(24, j)));
    let stages: Vec<f64> = (0..river.len()).map(|t| 38.5 - 0.01 * t as f64).collect();
    model
        .cell_exchange("river", river.clone(), 0.015, stages)
        .unwrap();
    model
        .areal_source(
            "recharge",
            Field::from_fn(grid, |i, j| 3e-9 * (1.0 + 0.5 * ((i + 2 * j) % 3) as f64)),
        )
        .unwrap();
    // Wells on both sides of block boundaries.
    for (n, (i, j, q)) in [
        (17, 6, -4e-3),
        (18, 6, -3e-3),
        (12, 25, -2e-3),
        (11, 25, 1e-3),
        (30, 14, -5e-3),
        (9, 3, -2.5e-3),
    ]
    .into_iter()
    .enumerate()
    {
        model
            .point_source(format!("well {n}"), at(i, j), q)
            .unwrap();
    }
    let west = (0..NY).map(|j| at(0, j)).collect();
    (
        model,
        vec![("west boundary", west), ("lake", lake), ("river", river)],
    )
}

fn same_bits(a: &[f64], b: &[f64]) -> bool {
    a.len() == b.len() && a.iter().zip(b).all(|(x, y)| x.to_bits() == y.to_bits())
}

fn same_budget(a: &Budget, b: &Budget) -> bool {
    a.lines.len() == b.lines.len()
        && a.lines.iter().zip(&b.lines).all(|(x, y)| {
            x.label == y.label
                && x.kind == y.kind
                && x.inflow.to_bits() == y.inflow.to_bits()
                && x.outflow.to_bits() == y.outflow.to_bits()
        })
}

/// The drivers checked distributed, by name.
fn driver(name: &str, system: &DistributedSystem) -> Box<dyn IterativeSolver<f64>> {
    let options = SolveOptions::default().tolerance(TOLERANCE);
    let jacobi = || DistributedJacobi::new(system.operator()).unwrap();
    match name {
        "PCG + Jacobi" => Box::new(Pcg::new(jacobi()).with_options(options)),
        "PCG + multigrid" => Box::new(
            Pcg::new(
                DistributedMultigrid::new(system.operator(), MultigridSettings::default()).unwrap(),
            )
            .with_options(options),
        ),
        "BiCGSTAB + Jacobi" => Box::new(BiCgStab::new(jacobi()).with_options(options)),
        "GMRES(30) + Jacobi" => Box::new(
            Gmres::new(jacobi())
                .with_restart(30)
                .unwrap()
                .with_options(options),
        ),
        _ => unreachable!("no driver {name}"),
    }
}

/// One distributed run: (this process's heads, the report's iterations, the budget).
fn run(part: &Partition, model: &Model, name: &str) -> (Vec<f64>, usize, Budget) {
    let system = DistributedSystem::new(model, part).unwrap();
    let mut x = system.initial_solution(40.0);
    let mut solver = driver(name, &system);
    let report = system
        .solve(&mut *solver, &mut x, &mut part.workspace(true))
        .unwrap();
    assert!(report.converged(), "{name}: {report:?}");
    let budget = system.budget(&x).unwrap();
    (x, report.iterations, budget)
}

/// `b − A·x` at the free cells of the serial system (zero at fixed cells), and its largest
/// entry.
fn residual_max(system: &SteadySystem, x: &[f64]) -> f64 {
    let op = system.operator();
    let mut ax = vec![0.0; x.len()];
    op.apply(x, &mut ax).unwrap();
    let fixed = op.fixed().unwrap();
    (0..x.len())
        .filter(|&k| !fixed.contains(k))
        .map(|k| (system.rhs()[k] - ax[k]).abs())
        .fold(0.0, f64::max)
}

/// `‖A⁻¹‖∞` of the free part of the serial operator: a symmetric M-matrix (positive centers,
/// non-positive couplings, weakly diagonally dominant and irreducibly so in every region,
/// since assembly refuses regions without a prescribed value or exchange), so `A⁻¹ ≥ 0`
/// entrywise and `‖A⁻¹‖∞ = ‖A⁻¹·1‖∞` (Varga, *Matrix Iterative Analysis*, 2nd ed. 2000,
/// §3.5: from memory). With `y` an approximate solution of `A·y = 1` and `s = 1 − A·y`,
/// `A⁻¹·1 = y + A⁻¹·s`, so `‖A⁻¹‖∞ ≤ ‖y‖∞ / (1 − ‖s‖∞)`.
fn inverse_norm(system: &SteadySystem) -> f64 {
    let op = system.operator();
    let fixed = op.fixed().unwrap();
    let n = system.grid().cells();
    let ones: Vec<f64> = (0..n)
        .map(|k| if fixed.contains(k) { 0.0 } else { 1.0 })
        .collect();
    let mut y = vec![0.0; n];
    Pcg::new(Jacobi::new(op).unwrap())
        .with_options(SolveOptions::default().tolerance(1e-10))
        .solve_with(op, &ones, &mut y, &mut Workspace::new())
        .unwrap();
    assert!(y.iter().all(|&v| v >= 0.0), "A⁻¹ ≥ 0 of an M-matrix");
    let mut ay = vec![0.0; n];
    op.apply(&y, &mut ay).unwrap();
    let s = (0..n)
        .filter(|&k| !fixed.contains(k))
        .map(|k| (1.0 - ay[k]).abs())
        .fold(0.0, f64::max);
    assert!(s < 0.5, "A·y = 1 solved: {s}");
    y.iter().fold(0.0, |a: f64, &b| a.max(b)) / (1.0 - s)
}

/// The serial solve and budget against the one-process distributed ones.
///
/// Heads: both solves stop at relative residual `TOLERANCE`, so
/// `|x_d − x_s|∞ ≤ ‖A⁻¹‖∞ · (‖r_d‖∞ + ‖r_s‖∞) = δ` with the true residuals of both.
///
/// Budget lines: a cell's flow through an exchange or an edge half cell is `w·(level − h)`
/// with `w` part of the cell's center; a prescribed cell's flow is `Σ C·(h_P − h_nb)` over its
/// faces (its own head is the same in both solutions, and the `C` are part of its center)
/// less the other conditions' flows into it (which do not depend on its neighbours). So a
/// line's flows move by at most `δ·Σ center` over the line's cells between the two solutions
/// (a flow that changes sign moves each side by less than its change), and source lines not
/// at all. The serial line is a sum of at most `m = cells` rounded additions:
/// `m·ε·(inflow + outflow)` more (Higham, *Accuracy and Stability of Numerical Algorithms*,
/// 2nd ed. 2002, §4.2; the distributed line is rounded once).
fn against_serial(
    model: &Model,
    line_cells: &[(&str, Vec<usize>)],
    x_single: &[f64],
    budget_single: &Budget,
) {
    let serial = model.assemble().unwrap();
    let mut x = serial.initial_solution(40.0);
    let mut pcg = Pcg::new(Jacobi::new(serial.operator()).unwrap())
        .with_options(SolveOptions::default().tolerance(TOLERANCE));
    serial
        .solve(&mut pcg, &mut x, &mut Workspace::new())
        .unwrap();
    let delta =
        inverse_norm(&serial) * (residual_max(&serial, &x) + residual_max(&serial, x_single));
    let worst = x
        .iter()
        .zip(x_single)
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    assert!(worst <= delta, "heads differ by {worst:e} > δ = {delta:e}");
    let grid = serial.grid();
    let centers = |label: &str| -> f64 {
        let cells = line_cells.iter().find(|(l, _)| *l == label);
        cells.map_or(0.0, |(_, cells)| {
            cells
                .iter()
                .map(|&k| {
                    let (i, j) = grid.coords(k);
                    serial.operator().coeffs(i, j).center.abs()
                })
                .sum()
        })
    };
    let budget = serial.budget(&x).unwrap();
    assert_eq!(budget.lines.len(), budget_single.lines.len());
    let eps = f64::EPSILON * grid.cells() as f64;
    for (s, d) in budget.lines.iter().zip(&budget_single.lines) {
        assert_eq!((&s.label, s.kind), (&d.label, d.kind));
        let bound = delta * centers(&s.label) + eps * (s.inflow + s.outflow);
        let off = (s.inflow - d.inflow)
            .abs()
            .max((s.outflow - d.outflow).abs());
        assert!(off <= bound, "{}: {off:e} > {bound:e}", s.label);
        println!(
            "  {:>15}: in {:.4e} out {:.4e}, serial - distributed {off:.1e} (bound {bound:.1e})",
            s.label, d.inflow, d.outflow
        );
    }
    println!(
        "mpi_model: serial vs distributed heads {worst:.2e} m (δ = {delta:.2e} m), imbalance {:.2e} %",
        budget_single.imbalance_percent()
    );
}

fn bit_identical_runs(procs: &Processes) {
    let runs = [
        (false, "PCG + Jacobi"),
        (false, "BiCGSTAB + Jacobi"),
        (false, "GMRES(30) + Jacobi"),
        (false, "PCG + multigrid"),
        (true, "PCG + Jacobi"),
    ];
    for (node_centred, name) in runs {
        let (model, line_cells) = model(node_centred);
        let grid = model.geometry().grid();
        let centring = if node_centred { "node" } else { "cell" };
        // The reference: one process without MPI, on every process.
        let single = Partition::new(grid, Processes::single()).unwrap();
        let (x1, its1, budget1) = run(&single, &model, name);
        if name == "PCG + Jacobi" && procs.rank() == 0 {
            println!("mpi_model: {centring}-centred model");
            against_serial(&model, &line_cells, &x1, &budget1);
        }
        for (px, py) in process_grids(grid, procs.count()) {
            let part = Partition::with_process_grid(grid, procs.clone(), px, py).unwrap();
            let (x, its, budget) = run(&part, &model, name);
            assert_eq!(its, its1, "{name}: iterations on {px} x {py}");
            assert!(
                same_budget(&budget, &budget1),
                "{name}: budget on {px} x {py}:\n{}\nagainst\n{}",
                budget.table("m³/s"),
                budget1.table("m³/s")
            );
            if let Some(whole) = part.gather(&x).unwrap() {
                assert!(same_bits(&whole, &x1), "{name}: heads on {px} x {py}");
            }
            if procs.rank() == 0 {
                println!(
                    "mpi_model: {centring}-centred, {name} on {px} x {py}: {its} iterations, same bits"
                );
            }
        }
    }
}

/// What is not distributed is refused the same way on every process.
fn refusals(procs: &Processes) {
    let grid = Grid::new(NX, NY).unwrap();
    let part = Partition::new(grid, procs.clone()).unwrap();
    // A model of another grid.
    let other = Model::new(
        Geometry::cell_centered(NX + 1, NY, 1.0, 1.0, 1.0).unwrap(),
        Conductivity::isotropic(1.0),
    )
    .unwrap();
    let err = DistributedSystem::new(&other, &part).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::GridMismatch);
    // A floating model (no prescribed value, no exchange).
    let mut floating = Model::new(
        Geometry::cell_centered(NX, NY, 1.0, 1.0, 1.0).unwrap(),
        Conductivity::isotropic(1.0),
    )
    .unwrap();
    floating.point_source("well", 5, -1.0).unwrap();
    let err = DistributedSystem::new(&floating, &part).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::FloatingRegion);
    // A wrong length, on one process only: every process gets the error.
    let system = DistributedSystem::new(&model(false).0, &part).unwrap();
    let mut x = system.initial_solution(40.0);
    if procs.rank() + 1 == procs.count() {
        x.push(0.0);
    }
    let err = system.budget(&x).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::LengthMismatch);
}

fn main() {
    let procs = Processes::mpi_world().expect("MPI starts");
    bit_identical_runs(&procs);
    refusals(&procs);
    if procs.rank() == 0 {
        println!(
            "mpi_model: all checks passed on {} processes",
            procs.count()
        );
    }
}

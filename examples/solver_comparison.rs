//! Every driver and preconditioner on one problem: iterations, residual reached and time in a
//! table, and the convergence of each (relative residual against iteration, log scale) in a
//! picture.
//!
//! Two problems to choose from (`--problem`):
//!
//! * `lenses` (the default): an invented confined aquifer, 128 × 128 cells of 10 m, sand with
//!   five clay blocks (conductivity contrast 10⁴), fixed heads on the west and east edges,
//!   recharge and one pumping well, assembled with `quintet::model`.
//! * `poisson`: the model problem of every iterative-methods text, the 5-point Laplacian on
//!   127 × 127 interior points of the unit square with zero boundary values and a uniform
//!   source.
//!
//! Every solve starts from the same initial guess and stops at `‖r‖₂ ≤ 10⁻⁸·‖b‖₂`; the slow
//! stationary methods are capped (`--cap`, default 4000 iterations) so the run stays short,
//! and their rows show the residual they reached.
//!
//! Run with `cargo run --release --example solver_comparison` (pictures in
//! `out/solver_comparison/`, `--out DIR` to change; `--help` for the options).

mod support;

use std::time::Instant;

use plotters::prelude::SeriesLabelPosition;
use quintet::model::{Conductivity, Field, Geometry, Model};
use quintet::prelude::*;
use support::picture::{decades, Curve, LineChart};
use support::{Failure, Options};

const HELP: &str = "\
solver_comparison: every driver and preconditioner on one problem; prints a table and writes
convergence.png (relative residual against iteration).

Usage: cargo run --release --example solver_comparison -- [OPTIONS]

Options:
    --problem P   lenses (aquifer with clay blocks, contrast 1e4; default) or poisson
    --cap N       iteration limit for steepest descent and Gauss-Seidel (default 4000)";

const TOLERANCE: f64 = 1e-8;

/// A problem: the operator, its right-hand side and the initial guess (fixed values in it).
struct Problem {
    title: &'static str,
    op: Banded5<f64>,
    rhs: Vec<f64>,
    start: Vec<f64>,
}

/// One solve: the method, its report (or the report inside its error), and the setup time.
struct Row {
    report: Report,
    setup: f64,
    note: String,
}

fn main() {
    support::run(body);
}

fn body() -> Result<(), Failure> {
    let mut options = Options::parse("solver_comparison", HELP)?;
    let problem: String = support::option(&mut options.rest, "--problem", "lenses".to_string())?;
    let cap: usize = support::option(&mut options.rest, "--cap", 4000)?;
    let problem = match problem.as_str() {
        "lenses" => lenses()?,
        "poisson" => poisson()?,
        other => {
            return Err(support::failure(format!(
                "--problem: unknown problem {other:?} (lenses or poisson)"
            )))
        }
    };
    if cap == 0 {
        return Err(support::failure("--cap: give at least 1 iteration"));
    }
    let out = options.finish()?;

    let (title, op) = (problem.title, &problem.op);
    let grid = op.grid();
    println!("{title}, {grid}; every solve to |r|/|b| <= {TOLERANCE:e} from the same start");
    let mut ws = Workspace::for_grid(grid);
    let converge = SolveOptions::default()
        .tolerance(TOLERANCE)
        .max_iterations(100_000);
    let capped = SolveOptions::default()
        .tolerance(TOLERANCE)
        .max_iterations(cap);
    let mut rows = Vec::new();

    // Krylov drivers.
    rows.push(run(
        &mut SteepestDescent::new(capped.clone()),
        0.0,
        &problem,
        &mut ws,
    )?);
    rows.push(run(
        &mut Cg::default().with_options(converge.clone()),
        0.0,
        &problem,
        &mut ws,
    )?);
    let t = Instant::now();
    let jacobi = Jacobi::new(op)?;
    let setup = t.elapsed().as_secs_f64();
    rows.push(run(
        &mut Pcg::new(jacobi).with_options(converge.clone()),
        setup,
        &problem,
        &mut ws,
    )?);

    // Stationary sweeps: Gauss–Seidel, and SOR with ω from the estimated Jacobi radius.
    let t = Instant::now();
    let estimate = estimate_relaxation(op, 80)?;
    let omega_setup = t.elapsed().as_secs_f64();
    for order in [SweepOrder::Lexicographic, SweepOrder::RedBlack] {
        let mut gs = Sor::gauss_seidel()
            .ordering(order)
            .with_options(capped.clone());
        rows.push(run(&mut gs, 0.0, &problem, &mut ws)?);
    }
    for order in [SweepOrder::Lexicographic, SweepOrder::RedBlack] {
        let mut sor = Sor::new(estimate.omega)?
            .ordering(order)
            .with_options(converge.clone());
        let mut row = run(&mut sor, omega_setup, &problem, &mut ws)?;
        row.note = format!("omega estimated from {} Lanczos steps", estimate.steps);
        rows.push(row);
    }

    // Mixed precision: f32 PCG + Jacobi inner solves, f64 outer residuals (outer steps). An
    // f32 residual cannot fall much below eps_f32·κ ≈ 6e-8 · 1e4 of the rhs on these grids,
    // so the inner solves stop at 1e-3, above that floor (at 1e-4 they would stall at the
    // floor until their iteration limit).
    let t = Instant::now();
    let single = op.cast::<f32>()?;
    let inner =
        Pcg::new(Jacobi::new(&single)?).with_options(SolveOptions::default().tolerance(1e-3));
    let mut mixed = MixedRefinement::new(single, inner)?;
    mixed.options = SolveOptions::default()
        .tolerance(TOLERANCE)
        .max_iterations(100);
    let setup = t.elapsed().as_secs_f64();
    let mut row = run(&mut mixed, setup, &problem, &mut ws)?;
    row.note = format!(
        "outer steps; {} inner f32 iterations",
        mixed.inner_iterations()
    );
    rows.push(row);

    println!();
    println!(
        "{:<46} {:>10} {:>11} {:>10} {:>10}  note",
        "method", "iterations", "|r|/|b|", "setup [s]", "solve [s]"
    );
    for row in &rows {
        let r = &row.report;
        let verdict = if r.converged() {
            String::new()
        } else {
            format!("not converged: {}", r.reason)
        };
        println!(
            "{:<46} {:>10} {:>11.3e} {:>10.4} {:>10.4}  {}",
            r.method,
            r.iterations,
            r.relative_residual(),
            row.setup,
            r.elapsed.as_secs_f64(),
            [verdict, row.note.clone()]
                .into_iter()
                .filter(|s| !s.is_empty())
                .collect::<Vec<_>>()
                .join("; ")
        );
    }

    // The picture: relative residual against iteration. The x axis ends a little past the
    // slowest method that converged; the capped ones run off its right edge.
    let curves: Vec<Curve> = rows
        .iter()
        .filter(|row| !row.note.starts_with("outer steps"))
        .map(|row| {
            let r = &row.report;
            let label = if r.converged() {
                format!("{} ({})", r.method, r.iterations)
            } else {
                format!("{} (stopped at {})", r.method, r.iterations)
            };
            Curve {
                label,
                points: r
                    .history
                    .iter()
                    .enumerate()
                    .map(|(n, h)| (n as f64, h / r.rhs_norm))
                    .collect(),
            }
        })
        .collect();
    let last = rows
        .iter()
        .filter(|row| row.report.converged() && !row.note.starts_with("outer steps"))
        .map(|row| row.report.iterations)
        .max()
        .unwrap_or(cap);
    let path = out.join("convergence.png");
    LineChart {
        title: format!("Convergence on the {title}, {grid}"),
        x_label: "iteration".into(),
        y_label: "relative residual |r|/|b|".into(),
        x_range: (0.0, (1.25 * last as f64).max(10.0)),
        y_range: decades(&curves),
        log_y: true,
        height: 560,
        legend: SeriesLabelPosition::UpperRight,
        curves,
    }
    .draw(&path)?;
    println!("\npicture: {}", path.display());
    Ok(())
}

/// Solve from the problem's start. A solve that does not converge still gives its report;
/// an error without one (bad input) ends the example.
fn run(
    solver: &mut impl IterativeSolver<f64>,
    setup: f64,
    problem: &Problem,
    ws: &mut Workspace<f64>,
) -> Result<Row, Failure> {
    let mut x = problem.start.clone();
    let report = match solver.solve_with(&problem.op, &problem.rhs, &mut x, ws) {
        Ok(report) => report,
        Err(e) => match e.report() {
            Some(report) => report.clone(),
            None => return Err(e.into()),
        },
    };
    Ok(Row {
        report,
        setup,
        note: String::new(),
    })
}

/// The invented aquifer: sand (1e-4 m/s) with five clay blocks (1e-8 m/s), 15 m thick.
fn lenses() -> Result<Problem, Failure> {
    let n = 128;
    let geometry = Geometry::cell_centered(n, n, 10.0, 10.0, 15.0)?;
    let grid = geometry.grid();
    // Blocks in cell indices: i from, i to, j from, j to.
    let blocks = [
        (10, 40, 80, 92),
        (50, 58, 20, 100),
        (70, 110, 60, 70),
        (85, 95, 10, 45),
        (20, 35, 30, 50),
    ];
    let k = Field::from_fn(grid, |i, j| {
        let clay = blocks
            .iter()
            .any(|&(i0, i1, j0, j1)| (i0..i1).contains(&i) && (j0..j1).contains(&j));
        if clay {
            1e-8
        } else {
            1e-4
        }
    });
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(k))?;
    model.prescribe_edge("west", Side::West, 30.0)?;
    model.prescribe_edge("east", Side::East, 25.0)?;
    model.areal_source("recharge", 5e-9)?;
    let well = geometry
        .cell_at(700.0, 420.0)
        .ok_or_else(|| support::failure("the well lies outside the model"))?;
    model.point_source("well", well, -4e-3)?;
    let system = model.assemble()?;
    Ok(Problem {
        title: "aquifer with clay blocks (contrast 1e4)",
        start: system.initial_solution(27.5),
        rhs: system.rhs().to_vec(),
        op: system.operator().clone(),
    })
}

/// The Dirichlet model problem on 127 × 127 interior points, h = 1/128, source h² per cell.
fn poisson() -> Result<Problem, Failure> {
    let n = 127;
    let h = 1.0 / (n as f64 + 1.0);
    let grid = Grid::new(n, n)?;
    let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    Ok(Problem {
        title: "Poisson model problem",
        op,
        rhs: vec![h * h; grid.cells()],
        start: vec![0.0; grid.cells()],
    })
}

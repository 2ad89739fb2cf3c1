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

use quintet::model::{Conductivity, Field, Geometry, Model};
use quintet::prelude::*;
use support::chart::{decades, Curve, Legend, LineChart};
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

/// One solve: its report (or the report inside its error), the setup time, a note, and
/// whether its history counts iterations (mixed precision's counts outer steps).
struct Row {
    report: Report,
    setup: f64,
    note: String,
    plotted: bool,
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

    // Conjugate gradients, plain and with every preconditioner. Setup times include building
    // the preconditioner (and, for SSOR, estimating the Jacobi radius its ω comes from).
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
    let (jacobi, setup) = timed(|| Jacobi::new(op))?;
    rows.push(run(
        &mut Pcg::new(jacobi).with_options(converge.clone()),
        setup,
        &problem,
        &mut ws,
    )?);
    let (estimate, omega_setup) = timed(|| estimate_relaxation(op, 80))?;
    // SSOR's ω from the Jacobi radius ρ: 2/(1 + √(2(1 − ρ))), which is 2/(1 + πh) on the
    // model problem (the rule `Ssor`'s documentation gives, with its measurements).
    let ssor_omega = 2.0 / (1.0 + (2.0 * (1.0 - estimate.jacobi_radius)).sqrt());
    let (ssor, setup) = timed(|| Ssor::new(op, ssor_omega))?;
    let mut row = run(
        &mut Pcg::new(ssor).with_options(converge.clone()),
        setup + omega_setup,
        &problem,
        &mut ws,
    )?;
    row.note = format!("omega = {ssor_omega:.4}");
    rows.push(row);
    let (ic0, setup) = timed(|| IncompleteCholesky::ic0(op))?;
    rows.push(run(
        &mut Pcg::new(ic0).with_options(converge.clone()),
        setup,
        &problem,
        &mut ws,
    )?);
    let (mic0, setup) = timed(|| IncompleteCholesky::mic0(op))?;
    rows.push(run(
        &mut Pcg::new(mic0).with_options(converge.clone()),
        setup,
        &problem,
        &mut ws,
    )?);
    let (sip, setup) = timed(|| Sip::new(op, SipSettings::default()))?;
    rows.push(run(
        &mut Pcg::new(sip).with_options(converge.clone()),
        setup,
        &problem,
        &mut ws,
    )?);
    let (mg, setup) = timed(|| Multigrid::new(op, MultigridSettings::default()))?;
    rows.push(run(
        &mut Pcg::new(mg).with_options(converge.clone()),
        setup,
        &problem,
        &mut ws,
    )?);

    // Stationary iterations: Gauss–Seidel, SOR with ω from the estimated Jacobi radius,
    // Stone's SIP and the multigrid V-cycle on their own.
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
    let (sip, setup) = timed(|| Sip::new(op, SipSettings::default()))?;
    rows.push(run(
        &mut sip.with_options(capped.clone()),
        setup,
        &problem,
        &mut ws,
    )?);
    let (mg, setup) = timed(|| Multigrid::new(op, MultigridSettings::default()))?;
    rows.push(run(
        &mut mg.with_options(capped.clone()),
        setup,
        &problem,
        &mut ws,
    )?);

    // Mixed precision: f32 PCG + Jacobi inner solves, f64 outer residuals (outer steps). An
    // f32 residual cannot fall much below eps_f32·κ ≈ 6e-8 · 1e4 of the rhs on these grids;
    // the inner rule of `with_preconditioner` stops at a 1e-4 reduction or when the inner
    // solve stalls at that floor.
    let t = Instant::now();
    let single = op.cast::<f32>()?;
    let jacobi = Jacobi::new(&single)?;
    let mut mixed = MixedRefinement::with_preconditioner(single, jacobi)?;
    mixed.options = SolveOptions::default()
        .tolerance(TOLERANCE)
        .max_iterations(100);
    let setup = t.elapsed().as_secs_f64();
    let mut row = run(&mut mixed, setup, &problem, &mut ws)?;
    row.plotted = false;
    row.note = format!(
        "outer steps; {} inner f32 iterations",
        mixed.inner_iterations()
    );
    rows.push(row);

    // PCG with a constant diagonal is CG: say so when the two histories agree.
    if let [_, cg, jacobi, ..] = &mut rows[..] {
        let same = cg.report.history.len() == jacobi.report.history.len()
            && cg
                .report
                .history
                .iter()
                .zip(&jacobi.report.history)
                .all(|(a, b)| (a - b).abs() <= 1e-12 * a.abs().max(b.abs()));
        if same {
            jacobi.note = "same residual history as CG".to_string();
        }
    }

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

    // The picture: relative residual against iteration, both axes logarithmic so that six
    // iterations and four thousand fit on one chart (iteration 0, the start, is left out).
    let curves: Vec<Curve> = rows
        .iter()
        .filter(|row| row.plotted)
        .map(|row| {
            let r = &row.report;
            let label = match r.reason {
                _ if r.converged() => format!("{} ({})", r.method, r.iterations),
                StopReason::IterationLimit => format!("{} (limit {})", r.method, r.iterations),
                StopReason::Breakdown => format!("{} (breakdown at {})", r.method, r.iterations),
                _ => format!("{} (stopped at {})", r.method, r.iterations),
            };
            Curve {
                label,
                points: r
                    .history
                    .iter()
                    .enumerate()
                    .skip(1)
                    .map(|(n, h)| (n as f64, h / r.rhs_norm))
                    .collect(),
            }
        })
        .collect();
    let most = rows
        .iter()
        .map(|row| row.report.iterations)
        .max()
        .unwrap_or(cap)
        .max(10);
    let path = out.join("convergence.png");
    LineChart {
        title: format!("Convergence on the {title}, {grid}"),
        x_label: "iteration".into(),
        y_label: "relative residual |r|/|b|".into(),
        x_range: (1.0, 10f64.powf((most as f64).log10().ceil())),
        y_range: decades(&curves),
        log_x: true,
        log_y: true,
        height: 520,
        legend: Legend::Below(2),
        curves,
    }
    .draw(&path)?;
    println!("\npicture: {}", path.display());
    Ok(())
}

/// Build something and time it.
fn timed<T>(build: impl FnOnce() -> Result<T, Error>) -> Result<(T, f64), Failure> {
    let t = Instant::now();
    let built = build()?;
    Ok((built, t.elapsed().as_secs_f64()))
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
    let (report, note) = match solver.solve_with(&problem.op, &problem.rhs, &mut x, ws) {
        Ok(report) => (report, String::new()),
        Err(e) => {
            let value = e.value().unwrap_or(f64::NAN);
            let note = match e.kind() {
                ErrorKind::PreconditionerNotPositive => {
                    format!("the preconditioner is not positive definite here (r·z = {value:.2e})")
                }
                ErrorKind::NotPositiveDefinite => {
                    format!("the operator is not positive definite (p·Ap = {value:.2e})")
                }
                _ => String::new(),
            };
            match e.report() {
                Some(report) => (report.clone(), note),
                None => return Err(e.into()),
            }
        }
    };
    Ok(Row {
        report,
        setup,
        note,
        plotted: true,
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

//! Iteration counts of every driver and preconditioner on two problems, as CSV on stdout:
//!
//! * `poisson`: the Dirichlet model problem, `n × n` cells, 5-point Laplacian with zero values
//!   just outside the grid, uniform source `h²`.
//! * `heterogeneous`: steady confined flow through a layered aquifer with embedded blocks,
//!   conductivity from 10⁻² to 10² (contrast 10⁴), harmonic-mean face conductances, heads fixed
//!   at 1 on the west column and 0 on the east column, no-flow north and south. The field is
//!   defined on the unit square, so every `n` resolves the same geology.
//!
//! * `advection`: steady advection–diffusion on the unit square (`precond_problems::advection`):
//!   diffusion 1, a uniform flow along +x at cell Péclet number `Pe` (0.1, 1, 10, 100; the
//!   `peclet` column), upwind differencing, the west column fixed at 1 and the east at 0,
//!   no-flow north and south. Non-symmetric, so only BiCGSTAB and GMRES(30) run on it, each
//!   with ILU(0), Stone's SIP (the plain `(LU)⁻¹`) and the multigrid V-cycle. The flow runs
//!   along the grid rows, the order in which the factorisations and Gauss–Seidel sweep: a
//!   favourable case for them.
//!
//! Every solve starts from zero (fixed cells at their heads) and stops at `‖r‖₂ ≤ 10⁻⁸·‖b‖₂`
//! or at an iteration cap of 2500 (n ≤ 512) or 1000 (n ≥ 1024); slow methods on big grids hit
//! it, and their row then shows the residual they reached (a note goes to stderr). `setup_s` is
//! the preconditioner's setup (for SOR and SSOR it includes estimating ω from the Jacobi
//! spectral radius), `solve_s` the iteration.
//!
//! Run with `cargo run --release -p quintet-bench --example iterations` (n = 64 … 1024; the
//! advection rows up to 512); add `--large` for n = 2048 (multigrid, IC(0) and MIC(0) only at
//! that size, the rest would hit their caps), `--only NAME` for one problem.

// The heterogeneous field is the one the multigrid tests use: one definition for both.
#[path = "../../tests/precond_problems/mod.rs"]
mod precond_problems;

use std::time::Instant;

use quintet::prelude::*;

/// Iteration cap: 2500 up to n = 512, 1000 beyond (slow methods on the big grids hit it and
/// report the residual they reached; this keeps the whole run to a few minutes).
fn cap(n: usize) -> usize {
    if n <= 512 {
        2500
    } else {
        1000
    }
}

fn main() -> Result<(), Error> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let large = args.iter().any(|a| a == "--large");
    // `--only NAME` runs one problem (poisson, heterogeneous or advection).
    let only = args
        .iter()
        .position(|a| a == "--only")
        .and_then(|k| args.get(k + 1).cloned());
    let wanted = |problem: &str| only.as_deref().is_none_or(|o| o == problem);
    let mut sizes = vec![64, 128, 256, 512, 1024];
    if large {
        sizes.push(2048);
    }
    println!("problem,n,peclet,method,iterations,setup_s,solve_s,rel_residual");
    for problem in ["poisson", "heterogeneous"]
        .into_iter()
        .filter(|p| wanted(p))
    {
        for &n in &sizes {
            let (op, rhs, x0) = if problem == "poisson" {
                poisson(n)?
            } else {
                precond_problems::heterogeneous(n)
            };
            let methods: &[&str] = if n > 1024 {
                &["ic0", "mic0", "mg"]
            } else {
                &["cg", "jacobi", "ssor", "ic0", "mic0", "sip", "mg", "sor"]
            };
            for &method in methods {
                let row = run(method, &op, &rhs, &x0)?;
                print_row(problem, n, None, method, &row);
            }
        }
    }
    let pecl: &[f64] = if wanted("advection") {
        &[0.1, 1.0, 10.0, 100.0]
    } else {
        &[]
    };
    for &peclet in pecl {
        for &n in sizes.iter().filter(|&&n| n <= 512) {
            let (op, rhs, x0) = precond_problems::advection(n, peclet);
            for method in [
                "bicgstab+ilu0",
                "bicgstab+sip",
                "bicgstab+mg",
                "gmres+ilu0",
                "gmres+sip",
                "gmres+mg",
            ] {
                let row = run(method, &op, &rhs, &x0)?;
                print_row("advection", n, Some(peclet), method, &row);
            }
        }
    }
    Ok(())
}

/// One CSV line (and a note on stderr for a solve that did not converge).
fn print_row(problem: &str, n: usize, peclet: Option<f64>, method: &str, row: &Row) {
    let peclet = peclet.map_or(String::new(), |p| p.to_string());
    println!(
        "{problem},{n},{peclet},{method},{},{:.4},{:.4},{:.3e}",
        row.iterations, row.setup_s, row.solve_s, row.rel_residual
    );
    if !row.converged {
        eprintln!("# {problem} n={n} {method}: {}", row.note);
    }
}

struct Row {
    iterations: usize,
    setup_s: f64,
    solve_s: f64,
    rel_residual: f64,
    converged: bool,
    note: String,
}

fn run(method: &str, op: &Banded5<f64>, rhs: &[f64], x0: &[f64]) -> Result<Row, Error> {
    let options = SolveOptions::default().max_iterations(cap(op.grid().nx()));
    let mut x = x0.to_vec();
    let start = Instant::now();
    let (setup_s, outcome) = match method {
        "cg" => timed(start, Cg::default().with_options(options), op, rhs, &mut x),
        "jacobi" => {
            let p = Pcg::new(Jacobi::new(op)?).with_options(options);
            timed(start, p, op, rhs, &mut x)
        }
        "ssor" => {
            // ω = 2/(1 + √(2(1 − ρ_J))), with ρ_J the Jacobi spectral radius: for the model
            // problem this is 2/(1 + πh), near the best ω for SSOR-preconditioned CG (a rule
            // of thumb from the SSOR condition-number analysis, from memory).
            let rho = estimate_relaxation(op, lanczos_steps(op))?.jacobi_radius;
            let omega = 2.0 / (1.0 + (2.0 * (1.0 - rho)).sqrt());
            let p = Pcg::new(Ssor::new(op, omega)?).with_options(options);
            timed(start, p, op, rhs, &mut x)
        }
        "ic0" => {
            let p = Pcg::new(IncompleteCholesky::ic0(op)?).with_options(options);
            timed(start, p, op, rhs, &mut x)
        }
        "mic0" => {
            let p = Pcg::new(IncompleteCholesky::mic0(op)?).with_options(options);
            timed(start, p, op, rhs, &mut x)
        }
        "sip" => {
            let p = Pcg::new(Sip::new(op, SipSettings::default())?).with_options(options);
            timed(start, p, op, rhs, &mut x)
        }
        "mg" => {
            let p =
                Pcg::new(Multigrid::new(op, MultigridSettings::default())?).with_options(options);
            timed(start, p, op, rhs, &mut x)
        }
        "bicgstab+ilu0" => timed(
            start,
            BiCgStab::new(Ilu0::new(op)?).with_options(options),
            op,
            rhs,
            &mut x,
        ),
        "bicgstab+sip" => timed(
            start,
            BiCgStab::new(Sip::new(op, plain_sip())?).with_options(options),
            op,
            rhs,
            &mut x,
        ),
        "bicgstab+mg" => {
            let mg = Multigrid::new(op, MultigridSettings::default())?;
            timed(
                start,
                BiCgStab::new(mg).with_options(options),
                op,
                rhs,
                &mut x,
            )
        }
        "gmres+ilu0" => timed(
            start,
            Gmres::new(Ilu0::new(op)?).with_options(options),
            op,
            rhs,
            &mut x,
        ),
        "gmres+sip" => timed(
            start,
            Gmres::new(Sip::new(op, plain_sip())?).with_options(options),
            op,
            rhs,
            &mut x,
        ),
        "gmres+mg" => {
            let mg = Multigrid::new(op, MultigridSettings::default())?;
            timed(start, Gmres::new(mg).with_options(options), op, rhs, &mut x)
        }
        _ => {
            let omega = estimate_relaxation(op, lanczos_steps(op))?.omega;
            let s = Sor::new(omega)?.with_options(options);
            timed(start, s, op, rhs, &mut x)
        }
    };
    let (solve_s, result) = outcome;
    let (report, converged, note) = match result {
        Ok(report) => (report, true, String::new()),
        Err(e) => match e.report() {
            Some(report) => (report.clone(), false, e.to_string()),
            None => return Err(e),
        },
    };
    Ok(Row {
        iterations: report.iterations,
        setup_s,
        solve_s,
        rel_residual: report.relative_residual(),
        converged,
        note,
    })
}

/// Stone's factor applied as the plain `(LU)⁻¹`, for the non-symmetric drivers.
fn plain_sip() -> SipSettings {
    SipSettings {
        symmetrised: false,
        ..Default::default()
    }
}

/// Lanczos steps for estimating the Jacobi spectral radius (more on bigger grids, capped).
fn lanczos_steps(op: &Banded5<f64>) -> usize {
    op.grid().nx().clamp(40, 300)
}

/// Setup time (since `start`) and the timed solve.
fn timed(
    start: Instant,
    mut solver: impl IterativeSolver<f64>,
    op: &Banded5<f64>,
    rhs: &[f64],
    x: &mut [f64],
) -> (f64, (f64, Result<Report, Error>)) {
    let setup = start.elapsed().as_secs_f64();
    let t = Instant::now();
    let result = solver.solve(op, rhs, x);
    (setup, (t.elapsed().as_secs_f64(), result))
}

type Problem = (Banded5<f64>, Vec<f64>, Vec<f64>);

/// The Dirichlet model problem on `n × n` cells.
fn poisson(n: usize) -> Result<Problem, Error> {
    let grid = Grid::new(n, n)?;
    let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    let h = 1.0 / (n as f64 + 1.0);
    Ok((op, vec![h * h; grid.cells()], vec![0.0; grid.cells()]))
}

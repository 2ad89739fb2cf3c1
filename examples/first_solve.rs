//! The model problem every iterative-methods text starts from, solved with every driver:
//! the 5-point Poisson equation on the unit square, 127 × 127 unknowns (h = 1/128), zero
//! values on the boundary, uniform source. Prints one line per driver: iterations to a
//! relative residual of 1e-8, final relative residual and time.
//!
//! Run with `cargo run --release --example first_solve`.

use quintet::prelude::*;

fn main() -> Result<(), Error> {
    let n = 127;
    let h = 1.0 / (n as f64 + 1.0);
    let grid = Grid::new(n, n)?;
    let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    let rhs = vec![h * h; grid.cells()];
    let omega_opt = 2.0 / (1.0 + (std::f64::consts::PI * h).sin());
    let estimate = estimate_relaxation(&op, 80)?;

    println!("Poisson model problem on {grid}, h = 1/{}", n + 1);
    println!(
        "omega_opt = 2/(1 + sin(pi h)) = {omega_opt:.5}; estimated from {} Lanczos steps: {:.5}",
        estimate.steps, estimate.omega
    );
    println!();
    println!(
        "{:<44} {:>10} {:>12} {:>10}",
        "driver", "iterations", "|r|/|b|", "time [s]"
    );

    let mut ws = Workspace::for_grid(grid);
    let options = SolveOptions::default().max_iterations(200_000);
    let op = &op;
    let rhs = &rhs;
    run(&mut SteepestDescent::new(options.clone()), op, rhs, &mut ws);
    run(
        &mut Cg::default().with_options(options.clone()),
        op,
        rhs,
        &mut ws,
    );
    let mut pcg = Pcg::new(Jacobi::new(op)?).with_options(options.clone());
    run(&mut pcg, op, rhs, &mut ws);
    for (order, omega) in [
        (SweepOrder::Lexicographic, 1.0),
        (SweepOrder::RedBlack, 1.0),
        (SweepOrder::Lexicographic, omega_opt),
        (SweepOrder::RedBlack, omega_opt),
        (SweepOrder::Lexicographic, estimate.omega),
    ] {
        let mut sor = Sor::new(omega)?
            .ordering(order)
            .with_options(options.clone());
        run(&mut sor, op, rhs, &mut ws);
    }
    Ok(())
}

/// Solve from a zero start and print one line.
fn run(
    solver: &mut impl IterativeSolver<f64>,
    op: &Banded5<f64>,
    rhs: &[f64],
    ws: &mut Workspace<f64>,
) {
    let mut x = vec![0.0; rhs.len()];
    match solver.solve_with(op, rhs, &mut x, ws) {
        Ok(r) => println!(
            "{:<44} {:>10} {:>12.3e} {:>10.4}",
            r.method,
            r.iterations,
            r.relative_residual(),
            r.elapsed.as_secs_f64()
        ),
        Err(e) => println!("{e}"),
    }
}

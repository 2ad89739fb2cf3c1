//! Convergence theorems for the Krylov drivers, checked iteration by iteration.

mod common;

use common::{laplacian, Problem, Rng};
use quintet::prelude::*;
use quintet::stop::IterationLimit;

/// The iterate where `solver` stops (with [`with_limit`]: after exactly `k` iterations, the
/// solve handing back its last iterate in `x`).
fn iterate(p: &Problem, solver: &mut impl IterativeSolver<f64>) -> Vec<f64> {
    let op = p.banded();
    let mut x = p.x0.clone();
    let _ = solver.solve(&op, &p.rhs, &mut x);
    x
}

fn with_limit(k: usize) -> SolveOptions {
    // No periodic residual refresh, so iterates are those of the textbook recurrences.
    SolveOptions::default()
        .stop_when(IterationLimit(k))
        .residual_refresh(0)
}

/// ‖e‖_A² = eᵀAe with A from the raw coefficients (the problems here have no fixed cells).
fn energy_norm(p: &Problem, e: &[f64]) -> f64 {
    (0..p.grid.cells())
        .map(|k| e[k] * p.row_times(k, e))
        .sum::<f64>()
        .sqrt()
}

/// Model problem with a random exact solution: b = A·x*.
fn model_with_solution(n: usize, seed: u64) -> (Problem, Vec<f64>) {
    let mut p = laplacian(n, n);
    let mut rng = Rng::new(seed);
    let exact: Vec<f64> = (0..p.grid.cells()).map(|_| rng.range(-1.0, 1.0)).collect();
    p.rhs = (0..p.grid.cells())
        .map(|k| p.row_times(k, &exact))
        .collect();
    (p, exact)
}

/// κ of the 5-point Dirichlet Laplacian on an n×n grid from its closed-form eigenvalues
/// λ_pq = 4 sin²(pπh/2) + 4 sin²(qπh/2), h = 1/(n+1) (LeVeque, Finite Difference Methods for
/// Ordinary and Partial Differential Equations, 2007, §3.4): κ = sin²(nπh/2) / sin²(πh/2).
fn laplacian_kappa(n: usize) -> f64 {
    let h = 1.0 / (n as f64 + 1.0);
    let half = std::f64::consts::PI * h / 2.0;
    ((n as f64) * half).sin().powi(2) / half.sin().powi(2)
}

#[test]
fn laplacian_condition_number_matches_closed_form() {
    // Cross-check of the closed form against nalgebra's symmetric eigensolver.
    let p = laplacian(9, 9);
    let kappa = p.condition_number();
    assert!((kappa / laplacian_kappa(9) - 1.0).abs() < 1e-10);
}

#[test]
fn steepest_descent_error_obeys_kantorovich_bound() {
    // ‖e_k‖_A ≤ ((κ−1)/(κ+1))^k ‖e_0‖_A (Kantorovich; e.g. Saad, Iterative Methods for Sparse
    // Linear Systems, 2nd ed. 2003, §5.3.1).
    let n = 12;
    let (p, exact) = model_with_solution(n, 7);
    let kappa = laplacian_kappa(n);
    let rate = (kappa - 1.0) / (kappa + 1.0);
    let e0: Vec<f64> = p.x0.iter().zip(&exact).map(|(a, b)| a - b).collect();
    let e0_a = energy_norm(&p, &e0);
    for k in 1..=60 {
        let x = iterate(&p, &mut SteepestDescent::new(with_limit(k)));
        let e: Vec<f64> = x.iter().zip(&exact).map(|(a, b)| a - b).collect();
        let bound = rate.powi(k as i32) * e0_a;
        assert!(
            energy_norm(&p, &e) <= bound * (1.0 + 1e-10),
            "iteration {k}: {} > {bound}",
            energy_norm(&p, &e)
        );
    }
}

#[test]
fn cg_error_obeys_chebyshev_bound() {
    // ‖e_k‖_A ≤ 2((√κ−1)/(√κ+1))^k ‖e_0‖_A (e.g. Saad 2003, §6.11.3).
    let n = 20;
    let (p, exact) = model_with_solution(n, 11);
    let sk = laplacian_kappa(n).sqrt();
    let rate = (sk - 1.0) / (sk + 1.0);
    let e0: Vec<f64> = p.x0.iter().zip(&exact).map(|(a, b)| a - b).collect();
    let e0_a = energy_norm(&p, &e0);
    for k in 1..=50 {
        let x = iterate(&p, &mut Cg::default().with_options(with_limit(k)));
        let e: Vec<f64> = x.iter().zip(&exact).map(|(a, b)| a - b).collect();
        let bound = 2.0 * rate.powi(k as i32) * e0_a;
        assert!(
            energy_norm(&p, &e) <= bound * (1.0 + 1e-10),
            "iteration {k}: {} > {bound}",
            energy_norm(&p, &e)
        );
    }
}

#[test]
fn cg_terminates_after_as_many_steps_as_distinct_eigenvalues() {
    // In exact arithmetic CG finds the solution in at most n steps (Hestenes & Stiefel,
    // "Methods of conjugate gradients for solving linear systems", J. Res. NBS 49, 1952), and
    // more precisely in as many steps as there are distinct eigenvalues among the eigenvectors
    // that b touches (the Krylov space stops growing; e.g. Saad 2003, §6.11.3). For the model
    // problem with b = 1, only modes with odd p and q appear (the sine series of a constant),
    // and λ_pq = λ_qp, so that count is far below n = N².
    for n in [5usize, 7, 9, 15] {
        let p = laplacian(n, n);
        let h = 1.0 / (n as f64 + 1.0);
        let s = |m: usize| (m as f64 * std::f64::consts::PI * h / 2.0).sin().powi(2);
        let mut distinct: Vec<f64> = Vec::new();
        for a in (1..=n).step_by(2) {
            for b in (1..=n).step_by(2) {
                let lambda = 4.0 * (s(a) + s(b));
                if !distinct.iter().any(|&d| (d - lambda).abs() < 1e-9) {
                    distinct.push(lambda);
                }
            }
        }
        let op = p.banded();
        let mut x = p.x0.clone();
        let opts = SolveOptions::default()
            .tolerance(1e-12)
            .max_iterations(distinct.len());
        let report = Cg::default()
            .with_options(opts)
            .solve(&op, &p.rhs, &mut x)
            .unwrap_or_else(|e| panic!("{n}x{n}: {e}"));
        assert!(report.iterations <= distinct.len() && report.iterations < n * n);
    }
}

#[test]
fn steepest_descent_on_identity_takes_one_step() {
    // A = I: r₀ = b − x₀ and α = (r·r)/(r·Ar) = 1, so x₁ = b (common practice).
    let grid = Grid::new(7, 5).unwrap();
    let op = Banded5::from_fn(grid, |_, _| Coeffs5::identity()).unwrap();
    let mut rng = Rng::new(3);
    let rhs: Vec<f64> = (0..grid.cells()).map(|_| rng.range(-5.0, 5.0)).collect();
    let mut x = vec![0.0; grid.cells()];
    let report = SteepestDescent::default().solve(&op, &rhs, &mut x).unwrap();
    assert_eq!(report.iterations, 1);
    assert_eq!(x, rhs);
}

#[test]
fn successive_steepest_descent_residuals_are_orthogonal() {
    // The exact line search makes r_{k+1} ⟂ r_k (common practice).
    let (p, _) = model_with_solution(10, 5);
    let residual = |x: &[f64]| -> Vec<f64> {
        (0..p.grid.cells())
            .map(|k| p.rhs[k] - p.row_times(k, x))
            .collect()
    };
    let mut prev = residual(&p.x0);
    for k in 1..=20 {
        let x = iterate(&p, &mut SteepestDescent::new(with_limit(k)));
        let r = residual(&x);
        let dot: f64 = r.iter().zip(&prev).map(|(a, b)| a * b).sum();
        let scale = common::norm(&r) * common::norm(&prev);
        assert!(
            dot.abs() <= 1e-10 * scale,
            "iteration {k}: cos = {}",
            dot / scale
        );
        prev = r;
    }
}

#[test]
fn cg_in_f32_reaches_the_accuracy_single_precision_allows() {
    // A backward-stable iteration cannot push the true residual below about
    // ε·‖A‖·‖x‖ (common practice; e.g. Higham, Accuracy and Stability of Numerical
    // Algorithms, 2nd ed. 2002, §7.1). For the 32×32 Laplacian ‖A‖₂ < 8; with ‖x‖ taken from an
    // f64 solve, ask f32 CG for ten times that floor and check it gets there, with about the
    // iteration count of f64 CG to the same tolerance.
    let grid = Grid::new(32, 32).unwrap();
    let op64 = Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j)).unwrap();
    let b64 = vec![1.0f64; grid.cells()];
    let mut x64 = vec![0.0f64; grid.cells()];
    Cg::default().solve(&op64, &b64, &mut x64).unwrap();
    let floor = f32::EPSILON as f64 * 8.0 * common::norm(&x64) / common::norm(&b64);
    let tol = 10.0 * floor;
    assert!(tol < 1e-3, "the floor itself is {floor:e}");

    let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j).cast()).unwrap();
    let rhs = vec![1.0f32; grid.cells()];
    let mut x = vec![0.0f32; grid.cells()];
    let mut cg = Cg::default().with_options(SolveOptions::default().tolerance(tol));
    let report = cg.solve(&op, &rhs, &mut x).unwrap();
    assert!(report.relative_residual() <= tol);

    let mut x64 = vec![0.0f64; grid.cells()];
    let mut cg64 = Cg::default().with_options(SolveOptions::default().tolerance(tol));
    let r64 = cg64.solve(&op64, &b64, &mut x64).unwrap();
    assert!(
        report.iterations.abs_diff(r64.iterations) <= 3,
        "f32 {} vs f64 {}",
        report.iterations,
        r64.iterations
    );
}

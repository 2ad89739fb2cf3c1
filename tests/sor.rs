//! SOR and Gauss–Seidel on the model problem, against Young's theory.
//!
//! For the 5-point Dirichlet Laplacian on an N×N grid (h = 1/(N+1)) the Jacobi iteration has
//! spectral radius ρ_J = cos πh, Gauss–Seidel ρ_GS = ρ_J² = cos² πh, and SOR with
//! ω_opt = 2/(1 + sin πh) has ρ = ω_opt − 1, for any consistent ordering, lexicographic and
//! red-black alike (Young, "Iterative methods for solving partial difference equations of
//! elliptic type", Trans. AMS 76, 1954; Varga, Matrix Iterative Analysis, 1962, §4.3).

mod common;

use common::{laplacian, log_log_slope};
use quintet::prelude::*;
use quintet::stop::{AnyOf, IterationLimit, ResidualReduction};

use std::f64::consts::PI;

fn omega_opt(n: usize) -> f64 {
    2.0 / (1.0 + (PI / (n as f64 + 1.0)).sin())
}

/// Sweeps to reduce the residual by `reduction`, from a zero start, b = 1.
fn sweeps(n: usize, omega: f64, order: SweepOrder, reduction: f64) -> usize {
    let p = laplacian(n, n);
    let op = p.banded();
    let mut x = p.x0.clone();
    let mut sor = Sor::new(omega).unwrap().ordering(order).with_options(
        SolveOptions::default().stop_when(
            AnyOf::new()
                .or(ResidualReduction(reduction))
                .or(IterationLimit(1_000_000)),
        ),
    );
    sor.solve(&op, &p.rhs, &mut x).unwrap().iterations
}

/// Asymptotic convergence factor per sweep: geometric mean of the residual ratios over the
/// last `tail` of `total` sweeps.
fn asymptotic_factor(n: usize, omega: f64, order: SweepOrder, total: usize, tail: usize) -> f64 {
    let p = laplacian(n, n);
    let op = p.banded();
    let mut x = p.x0.clone();
    let mut sor = Sor::new(omega)
        .unwrap()
        .ordering(order)
        .with_options(SolveOptions::default().stop_when(IterationLimit(total)));
    let err = sor.solve(&op, &p.rhs, &mut x).unwrap_err();
    let h = &err.report().unwrap().history;
    (h[total] / h[total - tail]).powf(1.0 / tail as f64)
}

#[test]
fn gauss_seidel_factor_is_cos_squared_pi_h_in_both_orderings() {
    let n = 31;
    let theory = (PI / 32.0).cos().powi(2);
    for order in [SweepOrder::Lexicographic, SweepOrder::RedBlack] {
        let measured = asymptotic_factor(n, 1.0, order, 1500, 500);
        assert!(
            (measured - theory).abs() < 1e-3,
            "{order}: measured {measured}, theory {theory}"
        );
    }
}

#[test]
fn optimal_sor_factor_is_omega_minus_one_in_both_orderings() {
    // With ω_opt the iteration matrix has a Jordan block for the eigenvalue ω − 1, so the
    // per-sweep ratio approaches ω − 1 only as (1 + 1/k); over a late window the geometric
    // mean sits within a few percent of it.
    let n = 31;
    let omega = omega_opt(n);
    let theory = omega - 1.0;
    for order in [SweepOrder::Lexicographic, SweepOrder::RedBlack] {
        let measured = asymptotic_factor(n, omega, order, 120, 40);
        assert!(
            measured <= theory * 1.05 && measured >= theory * 0.9,
            "{order}: measured {measured}, theory {theory}"
        );
    }
}

#[test]
fn optimal_sor_needs_far_fewer_sweeps_and_scales_as_one_over_h() {
    // Gauss–Seidel sweeps grow as h⁻² (1/(−ln cos² πh) ≈ 1/(π²h²)); optimal SOR sweeps as h⁻¹.
    // The fitted exponents over N = 15, 31, 63 must be near 2 and 1.
    let sizes = [15usize, 31, 63];
    let hinv: Vec<f64> = sizes.iter().map(|&n| n as f64 + 1.0).collect();
    let gs: Vec<f64> = sizes
        .iter()
        .map(|&n| sweeps(n, 1.0, SweepOrder::Lexicographic, 1e-6) as f64)
        .collect();
    let sor: Vec<f64> = sizes
        .iter()
        .map(|&n| sweeps(n, omega_opt(n), SweepOrder::Lexicographic, 1e-6) as f64)
        .collect();
    for (g, s) in gs.iter().zip(&sor) {
        assert!(g / s > 5.0, "GS {g} vs SOR {s}");
    }
    let gs_slope = log_log_slope(&hinv, &gs);
    let sor_slope = log_log_slope(&hinv, &sor);
    assert!(
        (1.8..=2.2).contains(&gs_slope),
        "GS exponent {gs_slope} ({gs:?})"
    );
    assert!(
        (0.8..=1.25).contains(&sor_slope),
        "SOR exponent {sor_slope} ({sor:?})"
    );
    eprintln!(
        "GS sweeps {gs:?} (exponent {gs_slope:.3}); SOR sweeps {sor:?} (exponent {sor_slope:.3})"
    );
}

#[test]
fn red_black_and_lexicographic_need_similar_sweeps() {
    // Both orderings are consistent orderings, so they share the asymptotic rate (Young);
    // counts to the same reduction agree within the transient differences.
    for (n, omega) in [(31usize, 1.0), (31, omega_opt(31)), (63, omega_opt(63))] {
        let lex = sweeps(n, omega, SweepOrder::Lexicographic, 1e-8) as f64;
        let rb = sweeps(n, omega, SweepOrder::RedBlack, 1e-8) as f64;
        assert!(
            (lex / rb - 1.0).abs() < 0.15,
            "N = {n}, omega = {omega}: {lex} vs {rb}"
        );
    }
}

#[test]
fn estimated_relaxation_factor_matches_young_formula() {
    // ρ_J = cos πh exactly for the model problem, so the estimate can be checked directly.
    for n in [15usize, 31, 63] {
        let p = laplacian(n, n);
        let op = p.banded();
        let est = estimate_relaxation(&op, 60).unwrap();
        let rho = (PI / (n as f64 + 1.0)).cos();
        assert!(
            est.jacobi_radius <= rho + 1e-12,
            "estimate above the true radius"
        );
        assert!(
            (rho - est.jacobi_radius) < 1e-5,
            "N = {n}: {} vs {rho}",
            est.jacobi_radius
        );
        assert!(
            (est.omega - omega_opt(n)).abs() < 2e-3,
            "N = {n}: {} vs {}",
            est.omega,
            omega_opt(n)
        );
    }
}

#[test]
fn estimated_factor_beats_gauss_seidel_on_a_variable_coefficient_problem() {
    // A layered conductivity (contrast 100): no closed form, but the estimated ω must still
    // cut the sweep count well below Gauss–Seidel's (common practice).
    let grid = Grid::new(40, 40).unwrap();
    let k = |j: usize| if (j / 5) % 2 == 0 { 1.0 } else { 100.0 };
    // Faces on the grid edge tie the cell to a zero boundary value (Dirichlet all round).
    let face = |a: f64, b: f64| 2.0 * a * b / (a + b);
    let op = Banded5::from_fn(grid, |i, j| {
        let kx = k(j);
        let ks = if j > 0 { face(kx, k(j - 1)) } else { kx };
        let kn = if j + 1 < 40 { face(kx, k(j + 1)) } else { kx };
        let present = |p: bool, v: f64| if p { -v } else { 0.0 };
        Coeffs5 {
            center: 2.0 * kx + ks + kn,
            west: present(i > 0, kx),
            east: present(i + 1 < 40, kx),
            south: present(j > 0, ks),
            north: present(j + 1 < 40, kn),
        }
    })
    .unwrap();
    let rhs = vec![1.0; grid.cells()];
    let est = estimate_relaxation(&op, 80).unwrap();
    let count = |omega: f64| {
        let mut x = vec![0.0; grid.cells()];
        let mut sor = Sor::new(omega).unwrap().with_options(
            SolveOptions::default()
                .tolerance(1e-6)
                .max_iterations(100_000),
        );
        sor.solve(&op, &rhs, &mut x).unwrap().iterations
    };
    let (gs, sor) = (count(1.0), count(est.omega));
    assert!(gs > 5 * sor, "GS {gs} vs SOR {sor} (omega {})", est.omega);
}

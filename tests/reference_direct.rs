//! Every engine of the registry (`common::engines`) against a general-purpose dense direct solver (nalgebra's LU factorisation) on
//! random symmetric, strictly diagonally dominant 5-point systems with fixed cells, including
//! 1×1, 1×n and n×1 grids; the engines for general systems (`Reach::General`: BiCGSTAB,
//! GMRES) also on random NON-symmetric, strictly diagonally dominant systems
//! (`common::nonsymmetric_problems`).
//!
//! Tolerance: for a solve stopped at `‖r‖/‖b‖ ≤ τ`, the error obeys
//! `‖x − x*‖/‖x*‖ ≤ κ(A)·‖r‖/‖b‖` (Golub & Van Loan, Matrix Computations, 4th ed. 2013, §2.6.2),
//! with κ computed from the dense matrix's eigenvalues (its singular values when it is not
//! symmetric). The check allows that bound plus a
//! rounding allowance of `100·n·ε·κ`.

mod common;

use common::engines::engines;
use common::{dist, nonsymmetric_problems, norm, random_nonsymmetric, random_sdd, Problem};
use proptest::prelude::*;
use quintet::prelude::*;

const TOL: f64 = 1e-10;

fn check_against_reference(
    p: &Problem,
    solver: &mut dyn IterativeSolver<f64>,
) -> Result<(), TestCaseError> {
    check_or_refuse(p, solver, |_| false)
}

/// As [`check_against_reference`], but an error that `allowed` accepts passes (an engine's one
/// honest refusal, see `Reach::MMatrixOrRefuses`); fixed cells must still hold their values.
fn check_or_refuse(
    p: &Problem,
    solver: &mut dyn IterativeSolver<f64>,
    allowed: impl Fn(&Error) -> bool,
) -> Result<(), TestCaseError> {
    let op = p.banded();
    let mut x = p.x0.clone();
    let report = match solver.solve(&op, &p.rhs, &mut x) {
        Ok(report) => report,
        Err(e) if allowed(&e) => {
            prop_assert!(e.report().is_some(), "a refusal keeps its report: {e}");
            for &k in &p.fixed {
                prop_assert_eq!(x[k].to_bits(), p.x0[k].to_bits());
            }
            return Ok(());
        }
        Err(e) => return Err(TestCaseError::fail(format!("{e}"))),
    };
    prop_assert!(report.converged());
    let exact = p.reference_solution();
    let kappa = p.condition_number();
    let n = p.grid.cells() as f64;
    let free: Vec<usize> = p.free_cells();
    let xf: Vec<f64> = free.iter().map(|&k| x[k]).collect();
    let ef: Vec<f64> = free.iter().map(|&k| exact[k]).collect();
    let rel_res = report.relative_residual();
    let bound = kappa * rel_res + 100.0 * n * f64::EPSILON * kappa;
    let err = dist(&xf, &ef) / norm(&ef).max(f64::MIN_POSITIVE);
    prop_assert!(
        err <= bound * 1.01 || norm(&ef) == 0.0,
        "{}: error {err:e} > bound {bound:e} (kappa {kappa:e}, rel res {rel_res:e})",
        report.method
    );
    // The reported residual is the true residual over the free cells (common practice).
    let true_res = p.free_residual_norm(&x);
    prop_assert!(
        (true_res - report.residual_norm).abs() <= 1e-8 * p.free_rhs_norm().max(1e-300) + 1e-300
    );
    // Fixed cells hold their values bit for bit.
    for &k in &p.fixed {
        prop_assert_eq!(x[k].to_bits(), p.x0[k].to_bits());
    }
    Ok(())
}

fn problems() -> impl Strategy<Value = Problem> {
    (
        1usize..=10,
        1usize..=10,
        any::<u64>(),
        0.0f64..0.4,
        any::<bool>(),
    )
        .prop_map(|(nx, ny, seed, frac, mixed)| random_sdd(nx, ny, seed, frac, mixed))
}

fn options() -> SolveOptions {
    SolveOptions::default()
        .tolerance(TOL)
        .max_iterations(1_000_000)
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    /// Every engine of the registry against the dense direct solve, on the same problems.
    #[test]
    fn every_engine_matches_dense_lu(p in problems()) {
        let m_matrix = p.is_m_matrix();
        let op = p.banded();
        for engine in engines() {
            if engine.handles(m_matrix) {
                let solver = &mut *engine.solver(&op, options());
                check_or_refuse(&p, solver, |e| engine.may_refuse_with(e))
                    .map_err(|e| TestCaseError::fail(format!("{}: {e}", engine.name)))?;
            }
        }
    }

    /// The engines for general systems against the dense LU on non-symmetric, diagonally
    /// dominant systems (BiCGSTAB: van der Vorst 1992; GMRES: Saad & Schultz 1986), 256 cases,
    /// every engine on each.
    #[test]
    fn every_general_engine_matches_dense_lu_on_nonsymmetric_systems(p in nonsymmetric_problems()) {
        let op = p.banded();
        for engine in engines() {
            if engine.handles_nonsymmetric() {
                let solver = &mut *engine.solver(&op, options());
                check_against_reference(&p, solver)
                    .map_err(|e| TestCaseError::fail(format!("{}: {e}", engine.name)))?;
            }
        }
    }

    #[test]
    fn sor_at_any_relaxation_factor_matches_dense_lu(p in problems(), omega in 0.5f64..1.9) {
        for order in [SweepOrder::Lexicographic, SweepOrder::RedBlack] {
            let mut sor = Sor::new(omega).unwrap().ordering(order).with_options(options());
            check_against_reference(&p, &mut sor)?;
        }
    }
}

#[test]
fn degenerate_grids_solve_exactly() {
    // 1×1, 1×n and n×1 (common practice: the shapes where edge handling breaks first).
    for (nx, ny) in [(1, 1), (1, 17), (17, 1)] {
        for seed in 0..8 {
            let p = random_sdd(nx, ny, seed, 0.2, false);
            let op = p.banded();
            for engine in engines() {
                check_against_reference(&p, &mut *engine.solver(&op, options()))
                    .unwrap_or_else(|e| panic!("{} on {nx} x {ny}: {e}", engine.name));
            }
            let q = random_nonsymmetric(nx, ny, seed, 0.2, 0.2);
            let op = q.banded();
            for engine in engines().iter().filter(|e| e.handles_nonsymmetric()) {
                check_against_reference(&q, &mut *engine.solver(&op, options())).unwrap_or_else(
                    |e| panic!("{} on {nx} x {ny}, non-symmetric: {e}", engine.name),
                );
            }
        }
    }
}

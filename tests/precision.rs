//! Mixed-precision iterative refinement reaches double-precision accuracy with single-precision
//! inner solves (Moler, "Iterative refinement in floating point", J. ACM 14, 1967: refinement
//! with residuals in the higher precision converges to the higher-precision solution as long as
//! the inner solve reduces the error, i.e. κ·ε_low < 1).

mod common;

use common::{dist, norm, random_sdd};
use quintet::prelude::*;

#[test]
fn refinement_reaches_f64_accuracy_against_dense_lu() {
    for (nx, ny, seed) in [(12usize, 9usize, 1u64), (20, 20, 2), (1, 30, 3)] {
        let p = random_sdd(nx, ny, seed, 0.15, false);
        let op = p.banded();
        let single = op.cast::<f32>().unwrap();
        let inner = Pcg::new(Jacobi::new(&single).unwrap())
            .with_options(SolveOptions::default().tolerance(1e-4));
        let mut solver = MixedRefinement::new(single, inner).unwrap();
        let mut x = p.x0.clone();
        let report = solver.solve(&op, &p.rhs, &mut x).unwrap();
        assert!(report.relative_residual() <= 1e-12, "{report}");
        // Forward error bound ‖e‖/‖x‖ ≤ κ·‖r‖/‖b‖ (Golub & Van Loan 2013, §2.6.2).
        let exact = p.reference_solution();
        let free = p.free_cells();
        let xf: Vec<f64> = free.iter().map(|&k| x[k]).collect();
        let ef: Vec<f64> = free.iter().map(|&k| exact[k]).collect();
        let kappa = p.condition_number();
        let bound =
            kappa * report.relative_residual() + 100.0 * xf.len() as f64 * f64::EPSILON * kappa;
        assert!(dist(&xf, &ef) / norm(&ef) <= bound * 1.01);
        for &k in &p.fixed {
            assert_eq!(x[k].to_bits(), p.x0[k].to_bits());
        }
        // Far beyond what f32 alone can reach (≈ 1e-7 relative).
        assert!(report.iterations >= 2 && solver.inner_iterations() > report.iterations);
    }
}

#[test]
fn refinement_rejects_an_operator_on_another_grid() {
    let grid = Grid::new(5, 5).unwrap();
    let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j)).unwrap();
    let other = Grid::new(5, 6).unwrap();
    let single: Banded5<f32> =
        Banded5::from_fn(other, |i, j| Coeffs5::laplacian(other, i, j).cast()).unwrap();
    let mut solver = MixedRefinement::new(single, Cg::default()).unwrap();
    let mut x = vec![0.0; 25];
    assert!(
        (solver.solve(&op, &[1.0; 25], &mut x)).is_err_and(|e| e.kind() == ErrorKind::GridMismatch)
    );
}

#[test]
fn casting_to_f32_reports_coefficients_that_overflow() {
    let grid = Grid::new(3, 1).unwrap();
    let op = Banded5::new(
        grid,
        vec![1e300, 1.0, 1.0],
        vec![0.0; 3],
        vec![0.0; 3],
        vec![0.0; 3],
        vec![0.0; 3],
    )
    .unwrap();
    assert!((op.cast::<f32>()).is_err_and(
        |e| e.kind() == ErrorKind::NonFinite && e.location().map(|at| at.cell) == Some(0)
    ));
}

#[test]
fn a_single_precision_preconditioner_keeps_f64_pcg_accurate() {
    // PCG with an f32 multigrid cycle reaches the f64 tolerance 1e-10 and matches dense LU
    // within κ·‖r‖/‖b‖ (Golub & Van Loan 2013, §2.6.2); the iteration count stays close to the
    // f64 cycle's (the preconditioner's quality does not need double precision; common practice).
    for (nx, ny, seed) in [(24usize, 20usize, 4u64), (32, 32, 5)] {
        let p = random_sdd(nx, ny, seed, 0.1, false);
        let op = p.banded();
        let single = op.cast::<f32>().unwrap();
        let mg32 = Multigrid::new(&single, MultigridSettings::default()).unwrap();
        let opts = SolveOptions::default().tolerance(1e-10);
        let mut x = p.x0.clone();
        let report = Pcg::new(SinglePrecision::new(single, mg32))
            .with_options(opts.clone())
            .solve(&op, &p.rhs, &mut x)
            .unwrap();
        let mut x64 = p.x0.clone();
        let mg64 = Multigrid::new(&op, MultigridSettings::default()).unwrap();
        let r64 = Pcg::new(mg64)
            .with_options(opts)
            .solve(&op, &p.rhs, &mut x64)
            .unwrap();
        assert!(
            report.iterations <= r64.iterations + 2,
            "{} vs {}",
            report.iterations,
            r64.iterations
        );
        let exact = p.reference_solution();
        let free = p.free_cells();
        let xf: Vec<f64> = free.iter().map(|&k| x[k]).collect();
        let ef: Vec<f64> = free.iter().map(|&k| exact[k]).collect();
        let kappa = p.condition_number();
        let bound =
            kappa * report.relative_residual() + 100.0 * xf.len() as f64 * f64::EPSILON * kappa;
        assert!(dist(&xf, &ef) / norm(&ef) <= bound * 1.01);
    }
}

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

/// Every bit of a vector, for comparisons that must be exact.
fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|x| x.to_bits()).collect()
}

#[test]
fn the_colour_copy_holds_the_coefficients_of_the_cast() {
    // Rounding each coefficient to f32 (IEEE 754-2019 §5.4.2, round to nearest) is the same
    // operation whichever array it lands in: the copy stored by colour and the natural cast
    // must agree bit for bit, cell by cell, and so must their products and their surveys.
    for (nx, ny, seed) in [
        (1usize, 1usize, 1u64),
        (1, 9, 2),
        (7, 5, 3),
        (8, 6, 4),
        (33, 17, 5),
    ] {
        let p = random_sdd(nx, ny, seed, 0.1, true);
        let op = p.banded();
        let cast = op.cast::<f32>().unwrap();
        let colour = Banded5ByColour::<f32>::from_stencil(&op).unwrap();
        assert_eq!(colour.grid(), cast.grid());
        assert_eq!(colour.fixed(), cast.fixed());
        for j in 0..ny {
            for i in 0..nx {
                assert_eq!(colour.coeffs(i, j), cast.coeffs(i, j), "cell ({i}, {j})");
            }
        }
        assert_eq!(
            colour.first_nonpositive_center(),
            cast.first_nonpositive_center()
        );
        assert_eq!(colour.rows_sum_to_zero(), cast.rows_sum_to_zero());
        let x: Vec<f32> = (0..nx * ny).map(|k| ((k as f32) * 0.618).fract()).collect();
        let (mut y_colour, mut y_cast) = (vec![0.0f32; nx * ny], vec![0.0f32; nx * ny]);
        colour.apply(&x, &mut y_colour).unwrap();
        cast.apply(&x, &mut y_cast).unwrap();
        let as_bits = |v: &[f32]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        assert_eq!(as_bits(&y_colour), as_bits(&y_cast));
    }
    // A pure-Neumann operator: every row sums to zero in both copies.
    let grid = Grid::new(6, 4).unwrap();
    let neumann = Banded5::from_fn(grid, |i, j| {
        let mut c = Coeffs5::<f64>::laplacian(grid, i, j);
        c.center = -(c.west + c.east + c.south + c.north);
        c
    })
    .unwrap();
    let colour = Banded5ByColour::<f32>::from_stencil(&neumann).unwrap();
    assert!(colour.rows_sum_to_zero() && neumann.cast::<f32>().unwrap().rows_sum_to_zero());
}

#[test]
fn the_colour_copy_reports_coefficients_that_overflow() {
    let grid = Grid::new(4, 2).unwrap();
    let mut center = [4.0; 8];
    center[5] = 1e300;
    let op = Banded5::from_fn(grid, |i, j| Coeffs5 {
        center: center[i + 4 * j],
        ..Coeffs5::laplacian(grid, i, j)
    })
    .unwrap();
    let found = Banded5ByColour::<f32>::from_stencil(&op).unwrap_err();
    assert_eq!(found.kind(), ErrorKind::NonFinite);
    assert_eq!(found.location().map(|at| at.cell), Some(5));
}

/// PCG on `op` from `p.x0` with the f32 multigrid cycle built on `single`: the solution and
/// the report.
fn single_precision_solve<S: Stencil5<f32>>(
    single: S,
    settings: MultigridSettings,
    op: &Banded5<f64>,
    p: &common::Problem,
) -> (Vec<f64>, Report) {
    let mg = Multigrid::new(&single, settings).unwrap();
    let mut x = p.x0.clone();
    let report = Pcg::new(SinglePrecision::new(single, mg))
        .solve(op, &p.rhs, &mut x)
        .unwrap();
    (x, report)
}

#[test]
fn single_precision_multigrid_gives_the_same_bits_on_every_copy_and_layout() {
    // The hierarchy and the cycle read the colour copy's coefficients in place of the cast's:
    // the same values, so PCG must take the same steps. And the fine level by colour stores
    // `r` in its order, smooths there and puts `z` back: cells of one colour do not couple
    // in a 5-point stencil, so the order of a half-sweep's cells changes no value (the
    // red-black ordering argument, common practice), and PCG must take the steps of the
    // hierarchy in the natural order, bit for bit (the cycle-level test in `colour.rs`
    // compares one V-cycle; here a change of layout anywhere in PCG's passes would show).
    // Serial and threaded, even and odd widths (34 × 1000: blocks of 481 rows, on two
    // threads; 34 and 130 have an odd coarse width below), fixed cells.
    for (nx, ny, seed) in [
        (32usize, 24usize, 6u64),
        (31, 20, 7),
        (64, 64, 8),
        (130, 97, 9),
        (34, 1000, 10),
    ] {
        let p = random_sdd(nx, ny, seed, 0.05, false);
        let op = p.banded();
        for threads in [1, 2] {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            let mut first_layout: Option<(Vec<u64>, Vec<u64>)> = None;
            for by_colour in [true, false] {
                let settings = MultigridSettings {
                    fine_level_by_colour: by_colour,
                    ..MultigridSettings::default()
                };
                let case = format!("{nx}x{ny} {threads} threads, by colour {by_colour}");
                let (x_cast, r_cast) = pool.install(|| {
                    single_precision_solve(op.cast::<f32>().unwrap(), settings, &op, &p)
                });
                let (x_colour, r_colour) = pool.install(|| {
                    let single = Banded5ByColour::<f32>::from_stencil(&op).unwrap();
                    single_precision_solve(single, settings, &op, &p)
                });
                assert!(r_colour.converged(), "{case}");
                assert_eq!(r_cast.iterations, r_colour.iterations, "{case}");
                assert_eq!(bits(&x_cast), bits(&x_colour), "{case}");
                let steps = (bits(&x_colour), bits(&r_colour.history));
                assert!(
                    first_layout.get_or_insert_with(|| steps.clone()) == &steps,
                    "{case}"
                );
            }
        }
    }
}

#[test]
fn a_hierarchy_that_reads_the_colour_copy_needs_it() {
    // Built on the copy by colour, the cycle reads its fine coefficients from that copy; an
    // operator stored otherwise is refused before a solve rather than read as something else.
    let grid = Grid::new(128, 128).unwrap();
    let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j)).unwrap();
    let colour = Banded5ByColour::<f32>::from_stencil(&op).unwrap();
    let mg = Multigrid::new(&colour, MultigridSettings::default()).unwrap();
    let natural = op.cast::<f32>().unwrap();
    assert!(Preconditioner::<f32>::check(&mg, &colour).is_ok());
    assert!(Preconditioner::<f32>::check(&mg, &natural).is_err());
    // And it keeps no copy of its own: five f32 arrays fewer than a hierarchy on the cast.
    let on_cast = Multigrid::new(&natural, MultigridSettings::default()).unwrap();
    assert_eq!(
        on_cast.storage_bytes() - mg.storage_bytes(),
        5 * 4 * grid.cells()
    );
}

//! Every error kind provoked through the public API and matched, with its context (common
//! practice: bad input gets a typed error that names the cell, never a panic).

mod common;
mod precond_problems;

use quintet::prelude::*;
use quintet::space::Space;

/// The kind of the error in `r`.
fn kind<T: std::fmt::Debug>(r: Result<T, Error>) -> ErrorKind {
    r.unwrap_err().kind()
}

/// Kind, subject, cell index and `(i, j)` of the error in `r`.
fn located<T: std::fmt::Debug>(
    r: Result<T, Error>,
) -> (ErrorKind, String, usize, Option<(usize, usize)>) {
    let e = r.unwrap_err();
    let at = e.location().expect("the error names a cell");
    (
        e.kind(),
        e.subject().unwrap_or("").to_string(),
        at.cell,
        at.coords,
    )
}

fn laplace(grid: Grid) -> Banded5<f64> {
    Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j)).unwrap()
}

#[test]
fn invalid_grids() {
    for (nx, ny) in [(0, 4), (4, 0)] {
        assert_eq!(kind(Grid::new(nx, ny)), ErrorKind::InvalidGrid);
    }
    for (nx, ny) in [(usize::MAX, 3), (1 << 33, 1 << 30)] {
        assert_eq!(kind(Grid::new(nx, ny)), ErrorKind::TooLarge);
    }
    assert_eq!(
        Grid::new(0, 4).unwrap_err().to_string(),
        "a grid of 0 x 4 cells is not allowed: both sides must be at least 1"
    );
}

#[test]
fn length_mismatches_name_the_array() {
    let grid = Grid::new(3, 3).unwrap();
    let v = |n| vec![0.0; n];
    let err = Banded5::new(grid, v(9), v(9), v(8), v(9), v(9)).unwrap_err();
    assert_eq!(
        (err.kind(), err.subject()),
        (ErrorKind::LengthMismatch, Some("east coefficients"))
    );
    assert_eq!(
        err.to_string(),
        "east coefficients: 8 entries given, 9 needed"
    );
    let op = laplace(grid);
    let mut x = v(9);
    let err = Cg::default().solve(&op, &v(10), &mut x).unwrap_err();
    assert_eq!(
        (err.kind(), err.subject()),
        (ErrorKind::LengthMismatch, Some("rhs"))
    );
    let mut short = v(4);
    let err = Sor::gauss_seidel()
        .solve(&op, &v(9), &mut short)
        .unwrap_err();
    assert_eq!(
        (err.kind(), err.subject()),
        (ErrorKind::LengthMismatch, Some("x"))
    );
    let mut y = v(2);
    assert_eq!(op.apply(&v(9), &mut y).unwrap_err().subject(), Some("y"));
    assert_eq!(op.diagonal(&mut y).unwrap_err().subject(), Some("diagonal"));
}

#[test]
fn grid_mismatch_and_cells_out_of_range() {
    let (a, b) = (Grid::new(3, 3).unwrap(), Grid::new(4, 3).unwrap());
    let fixed = FixedCells::new(b, [0]).unwrap();
    let err = laplace(a).with_fixed(fixed).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::GridMismatch);
    assert_eq!(
        err.to_string(),
        "the fixed-cell set was built for 4 x 3 cells, but the operator has 3 x 3 cells"
    );
    let err = FixedCells::new(a, [2, 9]).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::CellOutOfRange);
    assert_eq!(err.location().map(|at| at.cell), Some(9));
}

#[test]
fn non_finite_input_names_the_cell() {
    let grid = Grid::new(4, 3).unwrap();
    let bad_coeff = Banded5::from_fn(grid, |i, j| {
        let mut c = Coeffs5::laplacian(grid, i, j);
        if (i, j) == (2, 1) {
            c.north = f64::NAN;
        }
        c
    });
    assert_eq!(
        located(bad_coeff),
        (
            ErrorKind::NonFinite,
            "north coefficient".to_string(),
            6,
            Some((2, 1))
        )
    );
    let op = laplace(grid);
    let mut rhs = vec![1.0; 12];
    rhs[5] = f64::INFINITY;
    let mut x = vec![0.0; 12];
    assert_eq!(
        located(Cg::default().solve(&op, &rhs, &mut x)),
        (ErrorKind::NonFinite, "rhs".to_string(), 5, Some((1, 1)))
    );
    let rhs = vec![1.0; 12];
    x[11] = f64::NAN;
    assert_eq!(
        located(SteepestDescent::default().solve(&op, &rhs, &mut x)),
        (
            ErrorKind::NonFinite,
            "initial guess".to_string(),
            11,
            Some((3, 2))
        )
    );
}

#[test]
fn non_positive_centers_are_refused_where_the_method_needs_them() {
    let grid = Grid::new(3, 2).unwrap();
    let op = Banded5::from_fn(grid, |i, j| {
        let mut c = Coeffs5::laplacian(grid, i, j);
        if (i, j) == (1, 1) {
            c.center = 0.0;
        }
        c
    })
    .unwrap();
    let expect = (ErrorKind::NonPositiveCenter, String::new(), 4, Some((1, 1)));
    let (rhs, mut x) = (vec![1.0; 6], vec![0.0; 6]);
    assert_eq!(located(Cg::default().solve(&op, &rhs, &mut x)), expect);
    assert_eq!(
        located(Sor::gauss_seidel().solve(&op, &rhs, &mut x)),
        expect
    );
    assert_eq!(
        located(SteepestDescent::default().solve(&op, &rhs, &mut x)),
        expect
    );
    assert_eq!(located(Jacobi::new(&op)), expect);
    assert_eq!(located(estimate_relaxation(&op, 10)), expect);
    assert_eq!(Jacobi::new(&op).unwrap_err().value(), Some(0.0));
    // The same cell fixed: its center no longer matters.
    let fixed = op
        .clone()
        .with_fixed(FixedCells::new(grid, [4]).unwrap())
        .unwrap();
    assert!(Cg::default().solve(&fixed, &rhs, &mut x).is_ok());
}

#[test]
fn off_grid_couplings_name_cell_and_side() {
    let grid = Grid::new(3, 3).unwrap();
    let err = ClosureStencil::new(grid, move |i, j| {
        let mut c = Coeffs5::laplacian(grid, i, j);
        if (i, j) == (2, 1) {
            c.east = -0.5;
        }
        c
    })
    .unwrap_err();
    assert_eq!(
        (err.kind(), err.location().map(|at| at.coords), err.value()),
        (ErrorKind::OffGridCoupling, Some(Some((2, 1))), Some(-0.5))
    );
    assert_eq!(
        err.to_string(),
        "cell 5 (i = 2, j = 1) has east coupling -0.5, but it has no east neighbour"
    );
}

#[test]
fn asymmetry_reports_the_first_pair() {
    let grid = Grid::new(3, 3).unwrap();
    let op = Banded5::from_fn(grid, |i, j| {
        let mut c = Coeffs5::laplacian(grid, i, j);
        if (i, j) == (1, 2) {
            c.south = -2.0; // its south neighbour (1, 1) still says −1
        }
        c
    })
    .unwrap();
    assert!(check_symmetry(&laplace(grid), 0.0).is_ok());
    let err = check_symmetry(&op, 1e-12).unwrap_err();
    assert_eq!(
        (err.kind(), err.location().map(|at| at.cell)),
        (ErrorKind::Asymmetric, Some(4))
    );
    assert_eq!(
        err.to_string(),
        "couplings between cell 4 (i = 1, j = 1) and cell 7 differ: -1 from the first, -2 from the second"
    );
    // Couplings towards fixed cells are eliminated, so they cannot be asymmetric.
    let fixed = op.with_fixed(FixedCells::new(grid, [7]).unwrap()).unwrap();
    assert!(check_symmetry(&fixed, 1e-12).is_ok());
    assert_eq!(
        kind(check_symmetry(&fixed, -1.0)),
        ErrorKind::InvalidSetting
    );
}

#[test]
fn settings_out_of_range() {
    for omega in [0.0, 2.0, -1.0, 2.5, f64::NAN] {
        let err = Sor::new(omega).unwrap_err();
        assert_eq!(
            (err.kind(), err.subject()),
            (ErrorKind::InvalidSetting, Some("relaxation factor omega"))
        );
    }
    let op = laplace(Grid::new(4, 4).unwrap());
    assert_eq!(
        estimate_relaxation(&op, 0).unwrap_err().subject(),
        Some("steps")
    );
    for omega in [0.0, 2.0, -1.0, 2.5, f64::NAN, f64::INFINITY] {
        let settings = MultigridSettings {
            smoothing_omega: Some(omega),
            ..Default::default()
        };
        let err = Multigrid::new(&op, settings).unwrap_err();
        assert_eq!(
            (err.kind(), err.subject()),
            (ErrorKind::InvalidSetting, Some("smoothing_omega"))
        );
    }
}

#[test]
fn cg_detects_an_indefinite_operator_at_the_iteration_it_happens() {
    // A = [[1, −2], [−2, 1]] has positive centers but eigenvalues −1 and 3. From x₀ = 0 with
    // b = (1, 0), worked by hand: p₀ = (1, 0), p₀·Ap₀ = 1, x₁ = (1, 0), r₁ = (0, 2), β = 4,
    // p₁ = (4, 2), Ap₁ = (0, −6), p₁·Ap₁ = −12: the breakdown comes in iteration 2.
    let grid = Grid::new(2, 1).unwrap();
    let op = Banded5::new(
        grid,
        vec![1.0, 1.0],
        vec![0.0, -2.0],
        vec![-2.0, 0.0],
        vec![0.0; 2],
        vec![0.0; 2],
    )
    .unwrap();
    let mut x = vec![0.0; 2];
    let err = Cg::default().solve(&op, &[1.0, 0.0], &mut x).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::NotPositiveDefinite);
    assert_eq!(err.iteration(), Some(2));
    let curvature = err.value().expect("p·Ap");
    assert!((curvature + 12.0).abs() < 1e-12, "{curvature}");
    let report = err.report().expect("a breakdown carries its report");
    assert_eq!(report.iterations, 1);
    assert_eq!(report.reason, StopReason::Breakdown);
    assert_eq!(report.history.len(), 2);
    assert_eq!(x, vec![1.0, 0.0], "the last iterate is kept");
}

#[test]
fn pcg_detects_a_preconditioner_that_is_not_positive() {
    struct Negated;
    impl Preconditioner<f64> for Negated {
        fn apply(&mut self, _: &dyn LinearOperator<f64>, _: &dyn Space, r: &[f64], z: &mut [f64]) {
            for (zi, ri) in z.iter_mut().zip(r) {
                *zi = -ri;
            }
        }
    }
    let op = laplace(Grid::new(5, 5).unwrap());
    let mut x = vec![0.0; 25];
    let err = Pcg::new(Negated)
        .solve(&op, &[1.0; 25], &mut x)
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::PreconditionerNotPositive);
    assert_eq!(err.iteration(), Some(0));
    assert!(err.value().is_some_and(|v| v < 0.0));
}

#[test]
fn non_convergence_hands_back_report_and_iterate() {
    let grid = Grid::new(30, 30).unwrap();
    let op = laplace(grid);
    let rhs = vec![1.0; grid.cells()];
    let mut x = vec![0.0; grid.cells()];
    let mut sor = Sor::gauss_seidel().with_options(SolveOptions::default().max_iterations(7));
    let err = sor.solve(&op, &rhs, &mut x).unwrap_err();
    let report = err.report().unwrap();
    assert_eq!(err.kind(), ErrorKind::NotConverged);
    assert_eq!(
        (report.iterations, report.reason),
        (7, StopReason::IterationLimit)
    );
    assert_eq!(report.history.len(), 8);
    assert!(x.iter().any(|&v| v != 0.0), "the iterate is kept");
    // The error message carries the figures a modeller needs.
    let text = err.to_string();
    assert!(
        text.contains("did not converge after 7 iterations"),
        "{text}"
    );
}

#[test]
fn overflow_mid_solve_stops_as_non_finite() {
    // Coefficients near the top of the f64 range: the residual overflows to infinity.
    let grid = Grid::new(4, 4).unwrap();
    let big = 1e300;
    let op = Banded5::from_fn(grid, |i, j| {
        let c = Coeffs5::<f64>::laplacian(grid, i, j);
        Coeffs5 {
            center: c.center * big,
            west: c.west * big,
            east: c.east * big,
            south: c.south * big,
            north: c.north * big,
        }
    })
    .unwrap();
    let mut x = vec![1e10; 16];
    let err = Cg::default().solve(&op, &[1.0; 16], &mut x).unwrap_err();
    assert_eq!(err.report().map(|r| r.reason), Some(StopReason::NonFinite));
}

// ---- Misuse a new user makes, caught before any work, with a message that helps ----------

/// Settings that cannot work are refused at once: `x` untouched, no iteration run.
#[test]
fn impossible_settings_are_refused_before_the_first_iteration() {
    let op = laplace(Grid::new(8, 8).unwrap());
    for (options, message) in [
        (
            SolveOptions::default().tolerance(0.0),
            "setting relative tolerance = 0 is not allowed: a finite value > 0",
        ),
        (
            SolveOptions::default().tolerance(-1e-8),
            "setting relative tolerance = -0.00000001 is not allowed: a finite value > 0",
        ),
        (
            SolveOptions::default().tolerance(f64::NAN),
            "setting relative tolerance = NaN is not allowed: a finite value > 0",
        ),
        (
            SolveOptions::default().max_iterations(0),
            "setting iteration limit = 0 is not allowed: at least 1 iteration",
        ),
        (
            SolveOptions::default().absolute_tolerance(-1.0),
            "setting absolute tolerance = -1 is not allowed: a finite value >= 0 (0 turns it off)",
        ),
    ] {
        let mut x = vec![0.5; 64];
        let err = Cg::default()
            .with_options(options)
            .solve(&op, &[1.0; 64], &mut x)
            .unwrap_err();
        assert_eq!(err.kind(), ErrorKind::InvalidSetting);
        assert_eq!(err.to_string(), message);
        assert!(err.report().is_none(), "no iteration was run");
        assert!(x.iter().all(|&v| v == 0.5), "x is untouched");
    }
    // A rule of the user's own composition is checked too.
    let rule = quintet::stop::AnyOf::new().or(quintet::stop::ResidualReduction(0.0));
    let err = Sor::gauss_seidel()
        .with_options(SolveOptions::default().stop_when(rule))
        .solve(&op, &[1.0; 64], &mut [0.0; 64])
        .unwrap_err();
    assert_eq!(
        err.to_string(),
        "setting residual reduction factor = 0 is not allowed: a finite value > 0"
    );
}

/// A grid too large for memory is a typed error before anything is allocated, never an
/// abort or a capacity-overflow panic.
#[test]
fn grids_too_large_for_memory_are_typed_errors() {
    let err = Grid::new(1 << 33, 1 << 30).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::TooLarge);
    assert_eq!(
        err.to_string(),
        "a grid of 8589934592 x 1073741824 cells is more than the 1099511627776 cells quintet allows (MAX_CELLS)"
    );
    // 10¹⁰ cells: five bands of 80 GB each, more than this machine (or any machine the tests
    // run on) grants in one piece.
    let grid = Grid::new(100_000, 100_000).unwrap();
    let err = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j)).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::TooLarge);
    assert_eq!(
        err.to_string(),
        "the coefficient bands of 10000000000 cells need 80000000000 bytes, more than the memory available"
    );
}

#[test]
fn a_preconditioner_from_another_grid_is_refused() {
    let (a, b) = (Grid::new(40, 10).unwrap(), Grid::new(20, 20).unwrap());
    let jacobi = Jacobi::new(&laplace(a)).unwrap();
    let mut x = vec![0.0; 400];
    let err = Pcg::new(jacobi)
        .solve(&laplace(b), &[1.0; 400], &mut x)
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::GridMismatch);
    assert_eq!(
        err.to_string(),
        "the preconditioner was built for 40 x 10 cells, but the operator has 20 x 20 cells"
    );
    let mg = Multigrid::new(&laplace(a), MultigridSettings::default()).unwrap();
    let err = Pcg::new(mg)
        .solve(&laplace(b), &[1.0; 400], &mut x)
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::GridMismatch);
}

#[test]
fn cell_coordinates_off_the_grid_are_named() {
    let grid = Grid::new(10, 5).unwrap();
    let err = grid.try_index(3, 5).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::CellOutOfRange);
    assert_eq!(
        err.to_string(),
        "cell (i = 3, j = 5) is outside the grid of 10 x 5 cells"
    );
}

/// A preconditioner that is not positive definite is named as the cause, with the ones that
/// are positive definite by construction, rather than blamed on the operator's symmetry.
#[test]
fn an_indefinite_preconditioner_is_named_as_the_cause() {
    // The layered contrast-10⁴ test aquifer: symmetric, an M-matrix, and the symmetrised SIP
    // inverse is not positive definite on it (Sip's docs).
    let (op, rhs, x0) = precond_problems::heterogeneous(64);
    let mut x = x0;
    let err = Pcg::new(Sip::new(&op, SipSettings::default()).unwrap())
        .solve(&op, &rhs, &mut x)
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::PreconditionerNotPositive);
    assert_eq!(
        err.to_string(),
        "r·z = -4.964143389717679e0 at iteration 1: the preconditioner is not positive definite. PCG needs a preconditioner that is symmetric positive definite for this operator: Jacobi, SSOR, IC(0) and MIC(0) are by construction, the symmetrised SIP inverse is not on every operator; if the operator itself may be non-symmetric, check_symmetry(&op, 1e-12) names the first pair of cells whose couplings differ"
    );
}

/// A CG breakdown suggests the symmetry check, and the check can run first.
#[test]
fn cg_failures_suggest_the_symmetry_check() {
    let grid = Grid::new(2, 1).unwrap();
    // Positive centers, symmetric but indefinite (eigenvalues −1 and 3).
    let op = Banded5::new(
        grid,
        vec![1.0, 1.0],
        vec![0.0, -2.0],
        vec![-2.0, 0.0],
        vec![0.0; 2],
        vec![0.0; 2],
    )
    .unwrap();
    let err = Cg::default()
        .solve(&op, &[1.0, 0.0], &mut [0.0; 2])
        .unwrap_err();
    assert_eq!(
        err.to_string(),
        "p·Ap = -1.2e1 at iteration 2: the operator is not symmetric positive definite. CG needs a symmetric positive definite operator and preconditioner: check_symmetry(&op, 1e-12) names the first pair of cells whose couplings differ, and SolveOptions::check_symmetry makes the solve check it first"
    );
    // An upwinded (non-symmetric) operator, checked before the first iteration.
    let grid = Grid::new(6, 1).unwrap();
    let upwind = Banded5::from_fn(grid, |i, _| Coeffs5 {
        center: 3.0,
        west: if i > 0 { -2.0 } else { 0.0 },
        east: if i < 5 { -0.5 } else { 0.0 },
        ..Coeffs5::default()
    })
    .unwrap();
    let err = Cg::default()
        .with_options(SolveOptions::default().check_symmetry(1e-12))
        .solve(&upwind, &[1.0; 6], &mut [0.0; 6])
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::Asymmetric);
    assert_eq!(
        err.to_string(),
        "couplings between cell 0 (i = 0, j = 0) and cell 1 differ: -0.5 from the first, -2 from the second"
    );
}

/// A non-symmetric operator gets ω = 1 (Gauss–Seidel) when it is diagonally dominant, and a
/// refusal naming the first row that is not otherwise (Varga, Matrix Iterative Analysis, 1962,
/// ch. 3, from memory: Gauss–Seidel converges for diagonally dominant matrices of this kind).
#[test]
fn the_relaxation_estimate_answers_or_refuses_a_non_symmetric_operator() {
    let grid = Grid::new(6, 1).unwrap();
    let upwind = Banded5::from_fn(grid, |i, _| Coeffs5 {
        center: 3.0,
        west: if i > 0 { -2.0 } else { 0.0 },
        east: if i < 5 { -0.5 } else { 0.0 },
        ..Coeffs5::default()
    })
    .unwrap();
    let est = estimate_relaxation(&upwind, 20).unwrap();
    assert_eq!(est.omega, 1.0);
    assert_eq!(est.basis, quintet::RelaxationBasis::DiagonalDominance);
    let central = Banded5::from_fn(grid, |i, _| Coeffs5 {
        center: 2.0,
        west: if i > 0 { -3.0 } else { 0.0 },
        east: if i < 5 { 1.0 } else { 0.0 },
        ..Coeffs5::default()
    })
    .unwrap();
    let err = estimate_relaxation(&central, 20).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::NotDiagonallyDominant);
    assert_eq!(err.location().map(|at| at.cell), Some(1));
    assert!(err.to_string().starts_with(
        "the row of cell 1 (i = 1, j = 0) is not diagonally dominant: center 2.000 against a sum of coupling magnitudes 4.000. Young's formula"
    ));
    assert!(err
        .hint()
        .is_some_and(|h| h.contains("Young's formula") && h.contains("ILU(0)")));
}

/// A raw system with nothing that fixes its level (no fixed cell, every row sums to zero) is
/// reported as singular, not as "not positive definite".
#[test]
fn a_pure_no_flow_system_is_reported_as_singular() {
    let grid = Grid::new(6, 5).unwrap();
    let insulated = Banded5::from_fn(grid, |i, j| {
        let mut c = Coeffs5::laplacian(grid, i, j);
        c.center = -(c.west + c.east + c.south + c.north);
        c
    })
    .unwrap();
    for engine in common::engines::engines() {
        if engine.name.contains("SOR")
            || engine.name.contains("Gauss")
            || engine.name.contains("SIP")
        {
            continue; // relaxation needs positive centers only, not a determined level
        }
        let mut x = vec![0.0; 30];
        let err = engine
            .solver(&insulated, SolveOptions::default())
            .solve(&insulated, &[0.0; 30], &mut x)
            .map(|_| ())
            .err();
        let Some(err) = err else {
            // Set-up of the preconditioner refused it first (factorisations and multigrid
            // meet the zero pivot of a singular matrix).
            continue;
        };
        assert_eq!(err.kind(), ErrorKind::Singular, "{}: {err}", engine.name);
    }
    let err = Cg::default()
        .solve(&insulated, &[0.0; 30], &mut [0.0; 30])
        .unwrap_err();
    assert_eq!(
        err.to_string(),
        "the system: every row sums to zero and no cell is fixed, so its level is undetermined (any constant can be added to a solution); fix a cell, add a storage or exchange term, or ask the model for the compatible problem (SingularPolicy::FixMean)"
    );
}

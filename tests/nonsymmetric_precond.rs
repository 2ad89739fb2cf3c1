//! Preconditioners and relaxation on non-symmetric 5-point operators: ILU(0), the plain
//! inverse of Stone's SIP, multigrid on upwind advection–diffusion, and the relaxation
//! estimate's answer for non-symmetric operators. References: nalgebra's dense LU, a dense
//! zero-fill incomplete LU written here from its textbook definition, and the theorems named
//! beside each check.

mod precond_problems;

use nalgebra::{DMatrix, DVector};
use precond_problems::{
    advection, advection_along, advection_with, dense_free, random_diffusion, AdvectionScheme,
};
use proptest::prelude::*;
use quintet::prelude::*;
use quintet::space::Serial;
use quintet::RelaxationBasis;

/// A random non-symmetric stencil on `nx × ny` cells with the cells of `fixed` held fixed:
/// couplings `−10^u` (or, with `mixed_signs`, of random sign), `u` uniform in `[−1, 1]`, and
/// centers `(1 + margin)·Σ|couplings| + 10⁻³`, strictly diagonally dominant by rows.
fn random_nonsymmetric(
    nx: usize,
    ny: usize,
    values: &[f64],
    margin: f64,
    mixed_signs: bool,
    fixed: &[usize],
) -> Banded5<f64> {
    let grid = Grid::new(nx, ny).unwrap();
    let n = grid.cells();
    let pick = |k: usize| values[k % values.len()];
    let op = Banded5::from_fn(grid, |i, j| {
        let k = grid.index(i, j);
        let mut c = Coeffs5::default();
        let mut total = 0.0;
        for (s, side) in Side::ALL.into_iter().enumerate() {
            if grid.neighbour(k, side).is_none() {
                continue;
            }
            let u = pick(4 * k + s);
            let magnitude = 10f64.powf(2.0 * u - 1.0);
            let sign = if mixed_signs && pick(7 * k + 3 * s + 1) > 0.7 {
                1.0
            } else {
                -1.0
            };
            *c.towards_mut(side) = sign * magnitude;
            total += magnitude;
        }
        c.center = (1.0 + margin) * total + 1e-3;
        c
    })
    .unwrap();
    op.with_fixed(FixedCells::new(grid, fixed.iter().map(|&k| k % n)).unwrap())
        .unwrap()
}

/// Whether free cells `p` and `q` (positions in `free`) are grid neighbours or equal: the
/// 5-point pattern of the free-cell matrix.
fn in_pattern(grid: Grid, free: &[usize], p: usize, q: usize) -> bool {
    let (a, b) = (free[p], free[q]);
    a == b || Side::ALL.iter().any(|&s| grid.neighbour(a, s) == Some(b))
}

/// Zero-fill incomplete LU of the dense free-cell matrix on its 5-point pattern, by the
/// textbook IKJ elimination with every update outside the pattern dropped (Saad, *Iterative
/// Methods for Sparse Linear Systems*, 2003, §10.3.2, Algorithm 10.4, from memory). Returns
/// `(L, U)` with `L` unit lower triangular.
fn dense_ilu0(
    a: &DMatrix<f64>,
    pattern: impl Fn(usize, usize) -> bool,
) -> (DMatrix<f64>, DMatrix<f64>) {
    let n = a.nrows();
    let mut w = a.clone();
    for i in 1..n {
        for k in 0..i {
            if !pattern(i, k) || w[(i, k)] == 0.0 {
                continue;
            }
            w[(i, k)] /= w[(k, k)];
            for j in k + 1..n {
                if pattern(i, j) {
                    w[(i, j)] -= w[(i, k)] * w[(k, j)];
                }
            }
        }
    }
    let mut l = DMatrix::identity(n, n);
    let mut u = DMatrix::zeros(n, n);
    for i in 0..n {
        for j in 0..n {
            if j < i {
                l[(i, j)] = w[(i, j)];
            } else {
                u[(i, j)] = w[(i, j)];
            }
        }
    }
    (l, u)
}

/// 2-norm condition number of a small dense matrix (singular values by nalgebra's SVD).
fn condition(a: &DMatrix<f64>) -> f64 {
    let s = a.clone().singular_values();
    s.max() / s.min()
}

fn max_abs(v: &[f64]) -> f64 {
    v.iter().fold(0.0f64, |m, x| m.max(x.abs()))
}

/// A reproducible right-hand side with entries in [−0.5, 0.5].
fn ripple(n: usize) -> Vec<f64> {
    (0..n)
        .map(|k| ((k * 7919 + 13) % 1013) as f64 / 1013.0 - 0.5)
        .collect()
}

/// `z` from `pre` for `r`, compared with the dense `M⁻¹·r` on the free cells: the largest
/// difference relative to the largest entry of the reference.
fn compare_with_dense(
    op: &Banded5<f64>,
    pre: &mut dyn Preconditioner<f64>,
    solve: impl Fn(&DVector<f64>) -> DVector<f64>,
    free: &[usize],
) -> f64 {
    let n = op.grid().cells();
    let r = ripple(n);
    let mut z = vec![0.0; n];
    pre.apply(op, &Serial, &r, &mut z);
    let rf = DVector::from_iterator(free.len(), free.iter().map(|&k| r[k]));
    let reference = solve(&rf);
    let diff: Vec<f64> = free
        .iter()
        .enumerate()
        .map(|(p, &k)| z[k] - reference[p])
        .collect();
    max_abs(&diff) / max_abs(reference.as_slice()).max(f64::MIN_POSITIVE)
}

#[test]
fn ilu0_on_one_row_is_the_exact_lu_factorisation() {
    // A tridiagonal matrix has no fill-in, so ILU(0) is its LU factorisation and M⁻¹ = A⁻¹
    // (common practice; Saad 2003, §10.3). Reference: nalgebra's dense LU with partial
    // pivoting. Both are backward stable, so they agree to a few ε·κ(A) (Higham, Accuracy and
    // Stability of Numerical Algorithms, 2002, ch. 9, from memory).
    let values: Vec<f64> = (0..101).map(|k| ((k * 37) % 101) as f64 / 101.0).collect();
    for (nx, ny) in [(40, 1), (1, 33)] {
        let op = random_nonsymmetric(nx, ny, &values, 0.05, true, &[5, 17]);
        let (a, free) = dense_free(&op);
        let kappa = condition(&a);
        let lu = a.clone().lu();
        let mut ilu = Ilu0::new(&op).unwrap();
        let err = compare_with_dense(&op, &mut ilu, |b| lu.solve(b).unwrap(), &free);
        let tol = 10.0 * free.len() as f64 * f64::EPSILON * kappa;
        assert!(
            err <= tol,
            "{nx}x{ny}: {err:e} > {tol:e} (kappa {kappa:.3e})"
        );
    }
}

#[test]
fn ilu0_of_a_symmetric_operator_is_ic0() {
    // On a symmetric operator the ILU(0) pivots are IC(0)'s and L·U = L·D·Lᵀ, the IC(0) factor
    // (Meijerink & van der Vorst, Math. Comp. 31, 1977). The two codes order the same
    // operations alike up to the final scaling, so they agree to a few ε·κ(M).
    let values: Vec<f64> = (0..97).map(|k| ((k * 53) % 97) as f64 / 97.0).collect();
    let op = random_diffusion(23, 17, &values, 1.5, &[0, 40, 200, 390]);
    let (a, _) = dense_free(&op);
    let kappa = condition(&a);
    let n = op.grid().cells();
    let r = ripple(n);
    let (mut z_ilu, mut z_ic) = (vec![0.0; n], vec![0.0; n]);
    Ilu0::new(&op).unwrap().apply(&op, &Serial, &r, &mut z_ilu);
    IncompleteCholesky::ic0(&op)
        .unwrap()
        .apply(&op, &Serial, &r, &mut z_ic);
    let diff: Vec<f64> = z_ilu.iter().zip(&z_ic).map(|(a, b)| a - b).collect();
    let err = max_abs(&diff) / max_abs(&z_ic);
    assert!(err <= 10.0 * n as f64 * f64::EPSILON * kappa, "{err:e}");
}

#[test]
fn ilu0_pivot_failures_name_the_cell_and_grids_are_checked() {
    // Center 1, couplings −1 both ways: the second pivot is 1 − 1 = 0.
    let grid = Grid::new(3, 1).unwrap();
    let op = Banded5::new(
        grid,
        vec![2.0, 1.0, 1.0],
        vec![0.0, -1.0, -2.0],
        vec![-1.0, -1.0, 0.0],
        vec![0.0; 3],
        vec![0.0; 3],
    )
    .unwrap();
    // d0 = 2, d1 = 1 − (−1)(−1)/2 = 0.5, d2 = 1 − (−2)(−1)/0.5 = −3.
    let err = Ilu0::new(&op).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::PivotBreakdown);
    assert_eq!(err.location().map(|at| at.cell), Some(2));
    assert_eq!(err.value(), Some(-3.0));
    let bad_center = Banded5::new(
        grid,
        vec![2.0, 0.0, 1.0],
        vec![0.0; 3],
        vec![0.0; 3],
        vec![0.0; 3],
        vec![0.0; 3],
    )
    .unwrap();
    let err = Ilu0::new(&bad_center).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::NonPositiveCenter);
    assert_eq!(err.location().map(|at| at.cell), Some(1));
    let (small, _, _) = advection(8, 1.0);
    let (large, _, _) = advection(9, 1.0);
    let ilu = Ilu0::new(&small).unwrap();
    assert!(ilu.check(&small).is_ok());
    assert_eq!(
        ilu.check(&large).unwrap_err().kind(),
        ErrorKind::GridMismatch
    );
    // Short slices leave z alone instead of panicking.
    let mut ilu = ilu;
    let mut z = vec![7.0; 3];
    ilu.apply(&small, &Serial, &[1.0; 3], &mut z);
    assert_eq!(z, vec![7.0; 3]);
}

#[test]
fn sip_plain_inverse_at_alpha_zero_is_ilu0() {
    // With α = 0 Stone's factorisation is the plain zero-fill incomplete LU (Stone, SIAM J.
    // Numer. Anal. 5, 1968), so its plain inverse is ILU(0)'s.
    let (op, _, _) = advection(24, 3.0);
    let n = op.grid().cells();
    let r = ripple(n);
    let plain = SipSettings {
        alpha: 0.0,
        symmetrised: false,
        ..SipSettings::default()
    };
    let (mut z_sip, mut z_ilu) = (vec![0.0; n], vec![0.0; n]);
    let mut sip = Sip::new(&op, plain).unwrap();
    assert_eq!(Preconditioner::<f64>::name(&sip), "SIP");
    sip.apply(&op, &Serial, &r, &mut z_sip);
    Ilu0::new(&op).unwrap().apply(&op, &Serial, &r, &mut z_ilu);
    let diff: Vec<f64> = z_sip.iter().zip(&z_ilu).map(|(a, b)| a - b).collect();
    // Same factor, operations in a different order: the difference is rounding, amplified at
    // most by the conditioning of the factor (κ of this operator is below 10⁴).
    assert!(max_abs(&diff) <= 1e4 * n as f64 * f64::EPSILON * max_abs(&z_ilu));
    // The default stays the symmetrised inverse PCG needs.
    let sym = Sip::new(&op, SipSettings::default()).unwrap();
    assert_eq!(Preconditioner::<f64>::name(&sym), "symmetrised SIP");
}

#[test]
fn multigrid_coarsest_solve_of_a_nonsymmetric_operator_is_exact() {
    // A grid within the coarsest size is solved directly (banded LU): M⁻¹ = A⁻¹ to rounding.
    // Reference: nalgebra's dense LU (backward stable: agreement to a few ε·κ).
    for peclet in [0.5, 10.0, 100.0] {
        let (op, _, _) = advection(14, peclet);
        let (a, free) = dense_free(&op);
        let kappa = condition(&a);
        let lu = a.clone().lu();
        let mut mg = Multigrid::new(&op, MultigridSettings::default()).unwrap();
        assert_eq!(mg.level_grids().len(), 1);
        let err = compare_with_dense(&op, &mut mg, |b| lu.solve(b).unwrap(), &free);
        let tol = 10.0 * free.len() as f64 * f64::EPSILON * kappa;
        assert!(err <= tol, "Pe {peclet}: {err:e} > {tol:e}");
    }
}

#[test]
fn multigrid_solves_upwind_advection_diffusion() {
    // The standalone V-cycle on a non-symmetric M-matrix, with coarse levels, against
    // nalgebra's dense LU. The solver claims ‖r‖ ≤ 10⁻⁸·‖b‖ on the true residual, so the
    // error is at most κ(A)·10⁻⁸ relative (common practice).
    for rule in [CoarseOperator::Upscaled, CoarseOperator::LumpedGalerkin] {
        for peclet in [0.1, 1.0, 5.0] {
            let (op, rhs, x0) = advection(32, peclet);
            let settings = MultigridSettings {
                coarsest_cells: 16,
                coarse_operator: rule,
                ..MultigridSettings::default()
            };
            let mut mg = Multigrid::new(&op, settings).unwrap();
            assert_eq!(mg.level_grids().len(), 4);
            let mut x = x0.clone();
            let report = mg.solve(&op, &rhs, &mut x).unwrap();
            assert!(
                report.iterations < 100,
                "{rule:?} Pe {peclet}: {}",
                report.iterations
            );
            // The plain cycle: no energy norm without symmetry.
            assert_eq!(report.method, "multigrid V(3,3)");
            let (a, free) = dense_free(&op);
            let kappa = condition(&a);
            let mut ax0 = vec![0.0; x0.len()];
            let mut fixed_only = x0.clone();
            for &k in &free {
                fixed_only[k] = 0.0;
            }
            op.apply(&fixed_only, &mut ax0).unwrap();
            let b = DVector::from_iterator(free.len(), free.iter().map(|&k| rhs[k] - ax0[k]));
            let xf = a.lu().solve(&b).unwrap();
            let diff: Vec<f64> = free
                .iter()
                .enumerate()
                .map(|(p, &k)| x[k] - xf[p])
                .collect();
            let err = (diff.iter().map(|d| d * d).sum::<f64>()).sqrt() / xf.norm();
            assert!(
                err <= kappa * 1e-8,
                "{rule:?} Pe {peclet}: {err:e} (kappa {kappa:.2e})"
            );
        }
    }
}

#[test]
fn multigrid_solves_random_nonsymmetric_m_matrices_with_fixed_cells() {
    // Random non-symmetric M-matrices (couplings ≤ 0, strictly dominant rows) with scattered
    // fixed cells, so coarse levels get cells without an unknown and blocked lumping paths;
    // odd sides give 1-wide aggregates. Against nalgebra's dense LU, error ≤ κ·10⁻⁸ (common
    // practice).
    let values: Vec<f64> = (0..89).map(|k| ((k * 29) % 89) as f64 / 89.0).collect();
    let fixed: Vec<usize> = (0..40).map(|k| (k * 97 + 11) % 899).collect();
    for (nx, ny) in [(31, 29), (24, 17)] {
        let op = random_nonsymmetric(nx, ny, &values, 0.02, false, &fixed);
        let n = op.grid().cells();
        let settings = MultigridSettings {
            coarsest_cells: 8,
            ..MultigridSettings::default()
        };
        let mut mg = Multigrid::new(&op, settings).unwrap();
        assert!(mg.level_grids().len() >= 3);
        let rhs = ripple(n);
        let mut x = vec![0.0; n];
        mg.solve(&op, &rhs, &mut x).unwrap();
        let (a, free) = dense_free(&op);
        let kappa = condition(&a);
        let b = DVector::from_iterator(free.len(), free.iter().map(|&k| rhs[k]));
        let xf = a.lu().solve(&b).unwrap();
        let diff: Vec<f64> = free
            .iter()
            .enumerate()
            .map(|(p, &k)| x[k] - xf[p])
            .collect();
        let err = diff.iter().map(|d| d * d).sum::<f64>().sqrt() / xf.norm();
        assert!(
            err <= kappa * 1e-8,
            "{nx}x{ny}: {err:e} (kappa {kappa:.2e})"
        );
    }
}

/// On a non-symmetric operator the default settings smooth with plain Gauss–Seidel (ω = 1),
/// not the over-relaxed sweeps of the symmetric default: on upwind advection the Gauss–Seidel
/// sweep along the flow is close to solving along the streamlines, and over-relaxing it
/// overshoots. Measured with `benches/examples/iterations.rs` (BiCGSTAB + multigrid at cell
/// Péclet 10, 128²): 6 iterations with ω = 1, 22 with ω = 1.3, which diverged at 512². Checked
/// here: the defaults give exactly the ω = 1 preconditioner, and BiCGSTAB with it reaches 10⁻⁸
/// within 10 iterations at Péclet 10 on 128² (measured 6).
#[test]
fn multigrid_on_a_nonsymmetric_operator_smooths_with_gauss_seidel_by_default() {
    let (op, rhs, x0) = advection(128, 10.0);
    let n = op.grid().cells();
    let r = ripple(n);
    let plain = MultigridSettings {
        smoothing_omega: Some(1.0),
        ..Default::default()
    };
    let mut z = [vec![0.0; n], vec![0.0; n]];
    for (settings, z) in [MultigridSettings::default(), plain]
        .into_iter()
        .zip(&mut z)
    {
        Multigrid::new(&op, settings)
            .unwrap()
            .apply(&op, &Serial, &r, z);
    }
    assert!(z[0]
        .iter()
        .zip(&z[1])
        .all(|(a, b)| a.to_bits() == b.to_bits()));
    let mg = Multigrid::new(&op, MultigridSettings::default()).unwrap();
    let mut x = x0.clone();
    let report = BiCgStab::new(mg).solve(&op, &rhs, &mut x).unwrap();
    assert!(report.iterations <= 10, "{report}");
}

#[test]
fn multigrid_preconditioner_on_a_nonsymmetric_operator_is_finite_and_helps() {
    // One V-cycle applied to a residual must reduce it (‖r − A·B·r‖ < ‖r‖) on an upwind
    // M-matrix at moderate Péclet numbers: the defining job of a preconditioner (common
    // practice).
    for peclet in [0.1, 1.0] {
        let (op, _, _) = advection(64, peclet);
        let n = op.grid().cells();
        let free: Vec<bool> = (0..n)
            .map(|k| !op.fixed_cells().is_some_and(|f| f.contains(k)))
            .collect();
        let r: Vec<f64> = ripple(n)
            .iter()
            .zip(&free)
            .map(|(v, &f)| if f { *v } else { 0.0 })
            .collect();
        let mut mg = Multigrid::new(&op, MultigridSettings::default()).unwrap();
        let mut z = vec![0.0; n];
        mg.apply(&op, &Serial, &r, &mut z);
        assert!(z.iter().all(|v| v.is_finite()));
        for (zk, &f) in z.iter_mut().zip(&free) {
            if !f {
                *zk = 0.0;
            }
        }
        let mut az = vec![0.0; n];
        op.apply(&z, &mut az).unwrap();
        let after: f64 = (0..n)
            .filter(|&k| free[k])
            .map(|k| (r[k] - az[k]).powi(2))
            .sum();
        let before: f64 = r.iter().map(|v| v * v).sum();
        assert!(
            after.sqrt() < 0.5 * before.sqrt(),
            "Pe {peclet}: {} vs {}",
            after.sqrt(),
            before.sqrt()
        );
    }
}

#[test]
fn relaxation_estimate_of_an_upwind_operator_is_gauss_seidel_and_converges() {
    // Upwind advection–diffusion is weakly chained diagonally dominant (rows next to the fixed
    // columns are strictly dominant), so Gauss–Seidel converges (Varga, Matrix Iterative
    // Analysis, 1962, ch. 3, from memory).
    let (op, rhs, x0) = advection(32, 10.0);
    let est = estimate_relaxation(&op, 40).unwrap();
    assert_eq!(est.basis, RelaxationBasis::DiagonalDominance);
    assert_eq!(est.omega, 1.0);
    assert!(est.jacobi_radius <= 1.0);
    let mut sor = Sor::new(est.omega).unwrap();
    let mut x = x0;
    let report = sor.solve(&op, &rhs, &mut x).unwrap();
    assert!(report.converged());
}

#[test]
fn relaxation_estimate_refuses_central_differences_above_peclet_two() {
    // Central differencing at cell Péclet 10: east couplings 1 − 5 = +4, so the first free
    // row (cell 1: i = 1, j = 0, west neighbour fixed) has center 3 against |4| + |−1| = 5.
    let (op, _, _) = advection_with(16, 10.0, AdvectionScheme::Central);
    let err = estimate_relaxation(&op, 40).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::NotDiagonallyDominant);
    assert_eq!(err.location().map(|at| at.cell), Some(1));
    assert_eq!(err.value(), Some(3.0));
    let message = err.to_string();
    assert!(message.contains("cell 1 (i = 1, j = 0)"), "{message}");
    assert!(message.contains("not diagonally dominant"), "{message}");
    assert!(err.hint().is_some_and(|h| h.contains("ILU(0)")));
    // Below cell Péclet 2 central differences are dominant again: ω = 1.
    let (op, _, _) = advection_with(16, 1.0, AdvectionScheme::Central);
    assert_eq!(
        estimate_relaxation(&op, 40).unwrap().basis,
        RelaxationBasis::DiagonalDominance
    );
    // A symmetric operator still gets Young's formula.
    let (op, _, _) = advection(16, 0.0);
    assert_eq!(
        estimate_relaxation(&op, 40).unwrap().basis,
        RelaxationBasis::YoungFormula
    );
}

#[test]
fn relaxation_estimate_refuses_rows_that_reach_no_dominant_row() {
    // Weak dominance everywhere is not enough: a weakly dominant row must reach a strictly
    // dominant one (a weakly chained diagonally dominant matrix; without it the matrix can be
    // singular, as both examples below show with row sums 0 — common practice).
    let grid = Grid::new(2, 1).unwrap();
    let chained = Banded5::new(
        grid,
        vec![1.0, 1.0],
        vec![0.0, -1.0],
        vec![-0.5, 0.0],
        vec![0.0; 2],
        vec![0.0; 2],
    )
    .unwrap();
    // Row 0: 1 > 0.5, strictly dominant; row 1: 1 = |−1|, weakly, and reaches row 0.
    assert_eq!(estimate_relaxation(&chained, 10).unwrap().omega, 1.0);
    let closed = Banded5::new(
        grid,
        vec![1.0, 2.0],
        vec![0.0, -2.0],
        vec![-1.0, 0.0],
        vec![0.0; 2],
        vec![0.0; 2],
    )
    .unwrap();
    // Non-symmetric, both rows exactly weakly dominant, neither strictly (singular).
    let err = estimate_relaxation(&closed, 10).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::NotDiagonallyDominant);
    assert_eq!(err.location().map(|at| at.cell), Some(0));
    assert!(
        err.to_string().contains("no strictly dominant row"),
        "{err}"
    );
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    /// ILU(0) against a dense zero-fill incomplete LU written from the definition (Saad 2003,
    /// §10.3.2), on random non-symmetric, strictly diagonally dominant stencils with fixed
    /// cells (some with couplings of both signs). The reference factor is first checked for
    /// the defining property — `(L·U)_ij = a_ij` at every position of the pattern — and then
    /// `M⁻¹·r` is compared. Pivots are positive: by induction each is at least the pivot of
    /// the comparison matrix's ILU(0), which is an M-matrix (common practice).
    #[test]
    fn ilu0_matches_the_dense_zero_fill_factorisation(
        nx in 1usize..10,
        ny in 1usize..10,
        values in proptest::collection::vec(0.0f64..1.0, 64),
        margin in 0.0f64..0.5,
        mixed in any::<bool>(),
        fixed in proptest::collection::vec(0usize..100, 0..6),
    ) {
        let op = random_nonsymmetric(nx, ny, &values, margin, mixed, &fixed);
        let grid = op.grid();
        let (a, free) = dense_free(&op);
        prop_assume!(!free.is_empty());
        let pattern = |p: usize, q: usize| in_pattern(grid, &free, p, q);
        let (l, u) = dense_ilu0(&a, pattern);
        let lu = &l * &u;
        let scale = a.amax();
        for p in 0..free.len() {
            for q in 0..free.len() {
                if pattern(p, q) {
                    prop_assert!((lu[(p, q)] - a[(p, q)]).abs() <= 1e-13 * scale,
                        "L·U differs from A at ({p}, {q})");
                }
            }
        }
        let kappa = condition(&lu);
        let mut ilu = Ilu0::new(&op).unwrap();
        let solve = |b: &DVector<f64>| {
            let y = l.solve_lower_triangular(b).unwrap();
            u.solve_upper_triangular(&y).unwrap()
        };
        let err = compare_with_dense(&op, &mut ilu, solve, &free);
        let tol = 10.0 * free.len() as f64 * f64::EPSILON * kappa;
        prop_assert!(err <= tol, "{err:e} > {tol:e}");
    }
}

/// The measurement behind the non-symmetric rows of the preconditioner table (run with
/// `cargo test --release -p quintet-tests --test nonsymmetric_precond -- --ignored
/// --nocapture`): iterations of the standalone multigrid V(3,3) cycle (red-black Gauss–Seidel)
/// and of Stone's SIP to a relative residual of 10⁻⁸ on upwind advection–diffusion. Prints a
/// table; asserts nothing about counts or times.
#[test]
#[ignore]
fn measure_standalone_multigrid_and_sip_by_peclet() {
    let cap = 2000;
    println!("flow,n,peclet,method,iterations,outcome");
    for (flow, towards_east) in [("east", true), ("west", false)] {
        for n in [64, 128, 256] {
            for peclet in [0.1, 1.0, 10.0, 100.0] {
                let (op, rhs, x0) =
                    advection_along(n, peclet, AdvectionScheme::Upwind, towards_east);
                let options = SolveOptions::default().tolerance(1e-8).max_iterations(cap);
                for rule in [CoarseOperator::Upscaled, CoarseOperator::LumpedGalerkin] {
                    let settings = MultigridSettings {
                        coarse_operator: rule,
                        ..MultigridSettings::default()
                    };
                    let mut mg = Multigrid::new(&op, settings)
                        .unwrap()
                        .with_options(options.clone());
                    let mut x = x0.clone();
                    let (its, outcome) = match mg.solve(&op, &rhs, &mut x) {
                        Ok(r) => (r.iterations, "converged".to_string()),
                        Err(e) => (
                            e.report().map_or(0, |r| r.iterations),
                            format!("{:?}", e.report().map(|r| r.reason)),
                        ),
                    };
                    println!("{flow},{n},{peclet},mg-{rule:?},{its},{outcome}");
                }
                let mut sip = Sip::new(&op, SipSettings::default())
                    .unwrap()
                    .with_options(options.clone());
                let mut x = x0.clone();
                let (its, outcome) = match sip.solve(&op, &rhs, &mut x) {
                    Ok(r) => (r.iterations, "converged".to_string()),
                    Err(e) => (
                        e.report().map_or(0, |r| r.iterations),
                        format!("{:?}", e.report().map(|r| r.reason)),
                    ),
                };
                println!("{flow},{n},{peclet},sip,{its},{outcome}");
                for omega in [1.0, 1.5] {
                    let mut sor = Sor::new(omega).unwrap().with_options(options.clone());
                    let mut x = x0.clone();
                    let (its, outcome) = match sor.solve(&op, &rhs, &mut x) {
                        Ok(r) => (r.iterations, "converged".to_string()),
                        Err(e) => (
                            e.report().map_or(0, |r| r.iterations),
                            format!("{:?}", e.report().map(|r| r.reason)),
                        ),
                    };
                    println!("{flow},{n},{peclet},sor-{omega},{its},{outcome}");
                }
            }
        }
    }
}

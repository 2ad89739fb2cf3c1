//! SSOR, IC(0), MIC(0), SIP and multigrid against outside references: a dense Cholesky solve
//! (nalgebra), the symmetry PCG theory needs, and the exactness of IC(0) on a chain.

mod precond_problems;

use precond_problems::{dense_reference, poisson, random_diffusion};
use proptest::prelude::*;
use quintet::prelude::*;
use quintet::space::{Serial, Space};

const TOL: f64 = 1e-10;

fn options() -> SolveOptions {
    SolveOptions::default().tolerance(TOL).max_iterations(5000)
}

/// Every preconditioner this module ships, set up for `op`.
fn all_preconditioners(op: &Banded5<f64>) -> Vec<Box<dyn Preconditioner<f64> + '_>> {
    let small = MultigridSettings {
        coarsest_cells: 4,
        ..Default::default()
    };
    let multigrid = [
        MultigridSettings::default(),
        MultigridSettings {
            smoothing_sweeps: 1,
            ..small
        },
        MultigridSettings {
            coarse_operator: CoarseOperator::LumpedGalerkin,
            ..small
        },
        // Red-black SOR smoothing near both ends of its range (0, 2): the mirrored sweeps keep
        // the V-cycle symmetric and positive definite for any ω there (common practice).
        MultigridSettings {
            smoothing_omega: Some(1.9),
            ..small
        },
        MultigridSettings {
            smoothing_omega: Some(0.5),
            smoothing_sweeps: 1,
            ..small
        },
    ]
    .map(|settings| -> Box<dyn Preconditioner<f64>> {
        Box::new(Multigrid::new(op, settings).unwrap())
    });
    let mut list: Vec<Box<dyn Preconditioner<f64> + '_>> = vec![
        Box::new(Ssor::new(op, 1.0).unwrap()),
        Box::new(Ssor::new(op, 1.6).unwrap()),
        Box::new(IncompleteCholesky::ic0(op).unwrap()),
        Box::new(IncompleteCholesky::mic0(op).unwrap()),
        Box::new(
            IncompleteCholesky::new(
                op,
                FactorSettings {
                    compensation: 0.9,
                    ..FactorSettings::mic0()
                },
            )
            .unwrap(),
        ),
    ];
    list.extend(multigrid);
    list
}

/// A boxed preconditioner as a concrete type for `Pcg`.
struct Boxed<'a>(Box<dyn Preconditioner<f64> + 'a>);

impl Preconditioner<f64> for Boxed<'_> {
    fn apply(&mut self, op: &dyn LinearOperator<f64>, space: &dyn Space, r: &[f64], z: &mut [f64]) {
        self.0.apply(op, space, r, z)
    }
    fn name(&self) -> &'static str {
        self.0.name()
    }
}

/// `‖a − b‖₂ / ‖b‖₂` over the cells where `keep` holds.
fn relative_error(a: &[f64], b: &[f64], keep: impl Fn(usize) -> bool) -> f64 {
    let (mut num, mut den) = (0.0, 0.0);
    for k in (0..a.len()).filter(|&k| keep(k)) {
        num += (a[k] - b[k]).powi(2);
        den += b[k] * b[k];
    }
    (num / den.max(f64::MIN_POSITIVE)).sqrt()
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

fn norm(a: &[f64]) -> f64 {
    dot(a, a).sqrt()
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]

    /// PCG with each preconditioner agrees with nalgebra's dense Cholesky solution of the
    /// free-cell system. Bound: ‖x − x*‖/‖x*‖ ≤ κ(A)·‖r‖/‖b‖ (common practice: the standard
    /// residual bound, e.g. Golub & Van Loan, Matrix Computations, 4th ed. 2013, §2.6.2), with
    /// the residual PCG actually reached and κ(A) from nalgebra's eigenvalues, plus κ·100·ε for
    /// the dense solve's own rounding.
    #[test]
    fn pcg_with_every_preconditioner_matches_dense_cholesky(
        nx in 1usize..12,
        ny in 1usize..12,
        values in prop::collection::vec(0.0f64..1.0, 64),
        fixed in prop::collection::vec(0usize..200, 0..12),
        spread in 0.0f64..2.0,
    ) {
        let op = random_diffusion(nx, ny, &values, spread, &fixed);
        let n = op.grid().cells();
        let rhs: Vec<f64> = (0..n).map(|k| values[(k * 7) % 64] - 0.5).collect();
        let x0: Vec<f64> = (0..n).map(|k| values[(k * 3 + 1) % 64]).collect();
        let free = |k: usize| !op.fixed_cells().is_some_and(|f| f.contains(k));
        if (0..n).all(|k| !free(k)) {
            return Ok(());
        }
        let (reference, kappa) = dense_reference(&op, &rhs, &x0);
        for pre in all_preconditioners(&op) {
            let mut x = x0.clone();
            let mut pcg = Pcg::new(Boxed(pre)).with_options(options());
            let report = pcg.solve(&op, &rhs, &mut x).unwrap();
            let bound = kappa * (report.relative_residual() + 100.0 * f64::EPSILON);
            let err = relative_error(&x, &reference, free);
            prop_assert!(err <= bound, "{}: error {err:e} > bound {bound:e}", report.method);
            for k in (0..n).filter(|&k| !free(k)) {
                prop_assert_eq!(x[k], x0[k]);
            }
        }
    }

    /// ⟨M⁻¹u, v⟩ = ⟨u, M⁻¹v⟩ to rounding for random u, v (PCG needs a symmetric M; common
    /// practice). Rounding allowance: n·ε per inner product (the standard dot-product error
    /// bound, Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed. 2002, §3.1, from
    /// memory) times 10³ for
    /// the rounding inside the sweeps that produce M⁻¹u.
    #[test]
    fn preconditioners_are_symmetric(
        nx in 1usize..12,
        ny in 1usize..12,
        values in prop::collection::vec(0.0f64..1.0, 64),
        fixed in prop::collection::vec(0usize..200, 0..12),
        spread in 0.0f64..2.0,
    ) {
        let op = random_diffusion(nx, ny, &values, spread, &fixed);
        let n = op.grid().cells();
        let u: Vec<f64> = (0..n).map(|k| values[(k * 5) % 64] - 0.5).collect();
        let v: Vec<f64> = (0..n).map(|k| values[(k * 11 + 3) % 64] - 0.5).collect();
        let mut sip = Sip::new(&op, SipSettings::default()).unwrap();
        let mut list = all_preconditioners(&op);
        list.push(Box::new(Jacobi::new(&op).unwrap()));
        let (mut mu, mut mv) = (vec![0.0; n], vec![0.0; n]);
        for pre in list.iter_mut().map(|p| p.as_mut()).chain([&mut sip as &mut dyn Preconditioner<f64>]) {
            pre.apply(&op, &Serial, &u, &mut mu);
            pre.apply(&op, &Serial, &v, &mut mv);
            let (a, b) = (dot(&mu, &v), dot(&u, &mv));
            let scale = norm(&mu) * norm(&v) + norm(&u) * norm(&mv);
            let allowed = 1e3 * n as f64 * f64::EPSILON * scale;
            prop_assert!((a - b).abs() <= allowed, "{}: {a} vs {b}", pre.name());
        }
    }

    /// Stone's iteration, standalone, converges to nalgebra's dense solution on diagonally
    /// dominant M-matrices (Stone 1968 analyses the method for these; from memory). Same residual
    /// bound as
    /// above.
    #[test]
    fn sip_iteration_matches_dense_cholesky(
        nx in 1usize..10,
        ny in 1usize..10,
        values in prop::collection::vec(0.0f64..1.0, 64),
        fixed in prop::collection::vec(0usize..100, 1..8),
    ) {
        let op = random_diffusion(nx, ny, &values, 0.5, &fixed);
        let n = op.grid().cells();
        let rhs: Vec<f64> = (0..n).map(|k| values[(k * 13) % 64]).collect();
        let free = |k: usize| !op.fixed_cells().is_some_and(|f| f.contains(k));
        if (0..n).all(|k| !free(k)) {
            return Ok(());
        }
        let x0 = vec![0.0; n];
        let (reference, kappa) = dense_reference(&op, &rhs, &x0);
        let mut sip = Sip::new(&op, SipSettings::default()).unwrap().with_options(options());
        let mut x = x0.clone();
        let report = sip.solve(&op, &rhs, &mut x).unwrap();
        let bound = kappa * (report.relative_residual() + 100.0 * f64::EPSILON);
        prop_assert!(relative_error(&x, &reference, free) <= bound);
    }
}

/// On a grid one cell wide the 5-point pattern has no fill-in, so IC(0) is the exact Cholesky
/// factor and PCG converges in one iteration (common practice).
#[test]
fn ic0_on_a_chain_is_exact_cholesky() {
    let values: Vec<f64> = (0..64).map(|k| ((k * 37) % 64) as f64 / 64.0).collect();
    for (nx, ny) in [(1, 40), (40, 1), (1, 1), (2, 1)] {
        for fixed in [vec![], vec![3, 17]] {
            let op = random_diffusion(nx, ny, &values, 1.5, &fixed);
            let n = op.grid().cells();
            let rhs: Vec<f64> = (0..n).map(|k| 1.0 + values[k % 64]).collect();
            let mut x = vec![0.0; n];
            let mut pcg = Pcg::new(IncompleteCholesky::ic0(&op).unwrap());
            let report = pcg.solve(&op, &rhs, &mut x).unwrap();
            assert!(report.iterations <= 1, "{nx} x {ny}: {report}");
        }
    }
}

/// A pivot that turns negative never produces NaN: it is replaced (and counted) or rejected
/// with the cell named. The system: center 1, couplings −2 on a chain, so d₁ = 1 − 4 < 0.
#[test]
fn weak_pivots_are_replaced_or_rejected_never_nan() {
    let grid = Grid::new(3, 1).unwrap();
    let op = Banded5::new(
        grid,
        vec![1.0; 3],
        vec![0.0, -2.0, -2.0],
        vec![-2.0, -2.0, 0.0],
        vec![0.0; 3],
        vec![0.0; 3],
    )
    .unwrap();
    for settings in [FactorSettings::ic0(), FactorSettings::mic0()] {
        let mut ic = IncompleteCholesky::new(&op, settings).unwrap();
        assert!(ic.replaced_pivots() >= 1);
        let mut z = vec![0.0f64; 3];
        ic.apply(&op, &Serial, &[1.0, 1.0, 1.0], &mut z);
        assert!(z.iter().all(|v| v.is_finite()), "{z:?}");
        let strict = FactorSettings {
            weak_pivot: WeakPivot::Reject,
            ..settings
        };
        assert!((IncompleteCholesky::new(&op, strict))
            .is_err_and(|e| e.kind() == ErrorKind::PivotBreakdown
                && e.location().map(|at| at.cell) == Some(1)));
    }
    let strict = SipSettings {
        weak_pivot: WeakPivot::Reject,
        ..Default::default()
    };
    assert!((Sip::new(&op, strict)).is_err_and(|e| e.kind() == ErrorKind::PivotBreakdown));
    let mut sip = Sip::new(&op, SipSettings::default()).unwrap();
    let mut z = vec![0.0f64; 3];
    sip.apply(&op, &Serial, &[1.0, 1.0, 1.0], &mut z);
    assert!(z.iter().all(|v| v.is_finite()));
}

/// Full MIC(0) (α = 1) on a pure no-flow problem (no fixed cell, no storage: a singular
/// matrix whose row sums are zero) drives the last pivot to zero; the safeguard keeps the
/// factor finite.
#[test]
fn full_mic_on_a_singular_problem_stays_finite() {
    let grid = Grid::new(12, 9).unwrap();
    let op = Banded5::from_fn(grid, |i, j| {
        let mut c = Coeffs5::<f64>::laplacian(grid, i, j);
        c.center = -(c.west + c.east + c.south + c.north);
        c
    })
    .unwrap();
    let full = FactorSettings {
        compensation: 1.0,
        ..FactorSettings::mic0()
    };
    let mut mic = IncompleteCholesky::new(&op, full).unwrap();
    assert!(mic.replaced_pivots() >= 1);
    let r: Vec<f64> = (0..grid.cells()).map(|k| (k % 3) as f64 - 1.0).collect();
    let mut z = vec![0.0; grid.cells()];
    mic.apply(&op, &Serial, &r, &mut z);
    assert!(z.iter().all(|v| v.is_finite()));
}

#[test]
fn bad_settings_are_rejected_with_typed_errors() {
    let op = poisson(8);
    for omega in [0.0, 2.0, -1.0, f64::NAN] {
        assert!((Ssor::new(&op, omega)).is_err_and(|e| e.kind() == ErrorKind::InvalidSetting));
    }
    for compensation in [-0.1, 1.1, f64::NAN] {
        let s = FactorSettings {
            compensation,
            ..FactorSettings::ic0()
        };
        assert!(
            (IncompleteCholesky::new(&op, s)).is_err_and(|e| e.kind() == ErrorKind::InvalidSetting)
        );
    }
    let s = FactorSettings {
        pivot_floor: 1.0,
        ..FactorSettings::ic0()
    };
    assert!((IncompleteCholesky::new(&op, s)).is_err_and(|e| e.kind() == ErrorKind::InvalidSetting));
    for alpha in [-0.5, 1.0, f64::INFINITY] {
        let s = SipSettings {
            alpha,
            ..Default::default()
        };
        assert!((Sip::new(&op, s)).is_err_and(|e| e.kind() == ErrorKind::InvalidSetting));
    }
    for s in [
        MultigridSettings {
            smoothing_sweeps: 0,
            ..Default::default()
        },
        MultigridSettings {
            smoothing_sweeps: 17,
            ..Default::default()
        },
        MultigridSettings {
            coarsest_cells: 0,
            ..Default::default()
        },
        MultigridSettings {
            coarsest_cells: 5000,
            ..Default::default()
        },
        MultigridSettings {
            max_levels: 0,
            ..Default::default()
        },
    ] {
        assert!((Multigrid::new(&op, s)).is_err_and(|e| e.kind() == ErrorKind::InvalidSetting));
    }
    // A hierarchy whose coarsest level would be too big for the direct solve says so.
    let big = poisson(100);
    let one_level = MultigridSettings {
        max_levels: 1,
        ..Default::default()
    };
    assert!((Multigrid::new(&big, one_level)).is_err_and(|e| e.kind() == ErrorKind::InvalidSetting));
    // A non-positive center is named.
    let grid = Grid::new(3, 1).unwrap();
    let bad = Banded5::from_fn(grid, |i, _| Coeffs5 {
        center: if i == 1 { 0.0 } else { 2.0 },
        ..Coeffs5::default()
    })
    .unwrap();
    assert!((Ssor::new(&bad, 1.0))
        .is_err_and(|e| e.kind() == ErrorKind::NonPositiveCenter
            && e.location().map(|at| at.cell) == Some(1)));
    assert!((IncompleteCholesky::ic0(&bad))
        .is_err_and(|e| e.kind() == ErrorKind::NonPositiveCenter
            && e.location().map(|at| at.cell) == Some(1)));
    assert!((Sip::new(&bad, SipSettings::default()))
        .is_err_and(|e| e.kind() == ErrorKind::NonPositiveCenter
            && e.location().map(|at| at.cell) == Some(1)));
    assert!((Multigrid::new(&bad, MultigridSettings::default()))
        .is_err_and(|e| e.kind() == ErrorKind::NonPositiveCenter
            && e.location().map(|at| at.cell) == Some(1)));
    // A standalone solver handed an operator on another grid says so.
    let mut sip = Sip::new(&op, SipSettings::default()).unwrap();
    let other = poisson(9);
    let mut x = vec![0.0; 81];
    assert!(
        (sip.solve(&other, &[1.0; 81], &mut x)).is_err_and(|e| e.kind() == ErrorKind::GridMismatch)
    );
}

/// Wrong slice lengths handed to `apply` do not panic (the trait has no error channel; the
/// drivers always pass full-length slices).
#[test]
fn short_slices_do_not_panic() {
    let op = poisson(6);
    let mut sip = Sip::new(&op, SipSettings::default()).unwrap();
    let mut list = all_preconditioners(&op);
    for pre in list
        .iter_mut()
        .map(|p| p.as_mut())
        .chain([&mut sip as &mut dyn Preconditioner<f64>])
    {
        let mut z = vec![0.0; 5];
        pre.apply(&op, &Serial, &[1.0; 3], &mut z);
        pre.apply(&op, &Serial, &[1.0; 36], &mut z);
    }
}

/// The preconditioners work in `f32` too: PCG reaches a tolerance `f32` can carry. The
/// attainable relative residual is about ε·κ (common practice); here ε_f32 ≈ 6·10⁻⁸ and
/// κ ≈ 700 give about 4·10⁻⁵, so the test asks for 10⁻⁴.
#[test]
fn single_precision_works() {
    let grid = Grid::new(40, 30).unwrap();
    let op: Banded5<f32> =
        Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j).cast()).unwrap();
    let rhs = vec![1.0f32; grid.cells()];
    let opts = SolveOptions::default().tolerance(1e-4);
    let mut x = vec![0.0f32; grid.cells()];
    Pcg::new(IncompleteCholesky::mic0(&op).unwrap())
        .with_options(opts.clone())
        .solve(&op, &rhs, &mut x)
        .unwrap();
    let mut x = vec![0.0f32; grid.cells()];
    Pcg::new(Multigrid::new(&op, MultigridSettings::default()).unwrap())
        .with_options(opts.clone())
        .solve(&op, &rhs, &mut x)
        .unwrap();
    let mut x = vec![0.0f32; grid.cells()];
    Pcg::new(Ssor::new(&op, 1.3).unwrap())
        .with_options(opts)
        .solve(&op, &rhs, &mut x)
        .unwrap();
}

/// Every preconditioner works on any `Stencil5`: a `ClosureStencil` with the same coefficients
/// as a `Banded5` gives the same bits (both feed the same eliminated rows; common practice for
/// a matrix-free interface: the operator's storage must not change the arithmetic).
#[test]
fn closure_and_banded_operators_give_the_same_bits() {
    let grid = Grid::new(37, 23).unwrap();
    // A heterogeneous symmetric operator: couplings scaled by the mean of the two cells' factors.
    let factor = |i: usize, j: usize| 1.0 + ((i * 7 + j * 3) % 5) as f64;
    let sym = move |i: usize, j: usize| {
        let base = Coeffs5::<f64>::laplacian(grid, i, j);
        let f = factor(i, j);
        let mut c = Coeffs5 {
            center: 0.5,
            west: 0.0,
            east: 0.0,
            south: 0.0,
            north: 0.0,
        };
        for side in Side::ALL {
            let t = base.towards(side);
            if t != 0.0 {
                let (ni, nj) = match side {
                    Side::West => (i - 1, j),
                    Side::East => (i + 1, j),
                    Side::South => (i, j - 1),
                    Side::North => (i, j + 1),
                };
                let g = t * 0.5 * (f + factor(ni, nj));
                *c.towards_mut(side) = g;
                c.center -= g;
            }
        }
        c
    };
    let fixed = FixedCells::new(grid, [0, 5, 100, 500]).unwrap();
    let banded = Banded5::from_fn(grid, sym)
        .unwrap()
        .with_fixed(fixed.clone())
        .unwrap();
    let closure = ClosureStencil::new(grid, sym)
        .unwrap()
        .with_fixed(fixed)
        .unwrap();
    let r: Vec<f64> = (0..grid.cells())
        .map(|k| ((k * 31) % 17) as f64 - 8.0)
        .collect();
    let (mut za, mut zb) = (vec![0.0; grid.cells()], vec![0.0; grid.cells()]);
    type Pair<'a> = (
        Box<dyn Preconditioner<f64> + 'a>,
        Box<dyn Preconditioner<f64> + 'a>,
    );
    let pairs: Vec<Pair<'_>> = vec![
        (
            Box::new(Ssor::new(&banded, 1.3).unwrap()),
            Box::new(Ssor::new(&closure, 1.3).unwrap()),
        ),
        (
            Box::new(IncompleteCholesky::mic0(&banded).unwrap()),
            Box::new(IncompleteCholesky::mic0(&closure).unwrap()),
        ),
        (
            Box::new(Sip::new(&banded, SipSettings::default()).unwrap()),
            Box::new(Sip::new(&closure, SipSettings::default()).unwrap()),
        ),
        (
            Box::new(Multigrid::new(&banded, MultigridSettings::default()).unwrap()),
            Box::new(Multigrid::new(&closure, MultigridSettings::default()).unwrap()),
        ),
    ];
    for (mut a, mut b) in pairs {
        a.apply(&banded, &Serial, &r, &mut za);
        b.apply(&closure, &Serial, &r, &mut zb);
        assert_eq!(za, zb, "{}", a.name());
    }
}

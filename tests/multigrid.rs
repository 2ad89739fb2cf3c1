//! Multigrid and incomplete-factorisation iteration counts against published behaviour, at
//! sizes that run in a few seconds (the large sizes are in `examples/iterations.rs`).

mod precond_problems;

use precond_problems::{fitted_exponent, heterogeneous, iterations, poisson};
use quintet::prelude::*;

/// Standalone plain V-cycle (`α = 1`) convergence factor on the Dirichlet Poisson problem of
/// side `n`, per cycle, from the geometric mean of the residual reduction over cycles 3 to 10
/// (the first cycles also remove the smoothest error and go faster).
fn v_cycle_factor(n: usize, settings: MultigridSettings) -> f64 {
    let op = poisson(n);
    let cells = op.grid().cells();
    let rhs = vec![0.0; cells];
    // A rough start: every Fourier mode present.
    let mut x: Vec<f64> = (0..cells)
        .map(|k| ((k * 7919) % 1000) as f64 / 500.0 - 1.0)
        .collect();
    let plain = MultigridSettings {
        energy_step: false,
        ..settings
    };
    let mut mg = Multigrid::new(&op, plain)
        .unwrap()
        .with_options(SolveOptions::default().stop_when(quintet::stop::IterationLimit(10)));
    let err = mg.solve(&op, &rhs, &mut x).unwrap_err();
    let h = &err.report().unwrap().history;
    (h[10] / h[2]).powf(1.0 / 8.0)
}

/// Trottenberg, Oosterlee & Schüller, Multigrid (2001), report V-cycle factors of about 0.1–0.2
/// for red-black Gauss–Seidel with one or two sweeps each side on the model problem,
/// independent of h (from memory; the project target is < 0.2). Here V(3,3) with the default
/// settings: the factor must be below 0.2 at every size and must not drift with n by more than
/// 0.05.
#[test]
fn v_cycle_factor_on_poisson_is_below_0_2_and_grid_independent() {
    let mut factors = Vec::new();
    for n in [32, 64, 128, 256] {
        let factor = v_cycle_factor(n, MultigridSettings::default());
        factors.push(factor);
        eprintln!("n = {n}: V-cycle factor {factor:.4}");
        assert!(factor < 0.2, "n = {n}: factor {factor}");
    }
    let (lo, hi) = factors
        .iter()
        .fold((1.0f64, 0.0f64), |(l, h), &f| (l.min(f), h.max(f)));
    assert!(hi - lo < 0.05, "factor drifts with n: {factors:?}");
}

/// Over-relaxing the red-black sweeps (ω > 1) damps the smooth end of the oscillatory modes
/// that plain red-black Gauss–Seidel leaves, so the V-cycle contracts faster on the model
/// problem (Yavneh, On red-black SOR smoothing in multigrid, SIAM J. Sci. Comput. 17(1), 1996;
/// from memory). Checked: the default ω's factor is below the Gauss–Seidel one (ω = 1) at every
/// size, and ω = 1.3 is not past the point where over-relaxation starts to hurt, i.e. ω = 1.6
/// contracts more slowly than ω = 1.3.
#[test]
fn over_relaxed_red_black_smoothing_contracts_faster_on_poisson() {
    let with = |omega| MultigridSettings {
        smoothing_omega: Some(omega),
        ..Default::default()
    };
    for n in [32, 64, 128, 256] {
        let default = v_cycle_factor(n, MultigridSettings::default());
        let (gs, high) = (v_cycle_factor(n, with(1.0)), v_cycle_factor(n, with(1.6)));
        eprintln!("n = {n}: factor ω = 1 {gs:.4}, default {default:.4}, ω = 1.6 {high:.4}");
        assert!(default < gs, "n = {n}: {default} vs {gs}");
        assert!(v_cycle_factor(n, with(1.3)) < high, "n = {n}");
    }
}

/// The standalone solver (energy-minimising steps) converges on the high-contrast field: with
/// an SPD operator and an SPD V-cycle each step reduces the energy norm of the error
/// (preconditioned steepest descent; common practice). The bound checked: the relative
/// residual reaches 1e-8 within the default iteration limit.
#[test]
fn standalone_multigrid_converges_on_the_heterogeneous_field() {
    let (op, rhs, x0) = heterogeneous(128);
    let mut mg = Multigrid::new(&op, MultigridSettings::default()).unwrap();
    let mut x = x0.clone();
    let report = mg.solve(&op, &rhs, &mut x).unwrap();
    eprintln!("{report}");
    assert!(report.relative_residual() <= 1e-8);
}

/// With the lumped Galerkin coarse operators the plain standalone V-cycle converges on the
/// high-contrast field (Galerkin coarse operators make the coarse correction an energy
/// projection; Trottenberg et al. 2001, from memory — the lumping keeps that for linear
/// functions), and MG-PCG stays within the 25-iteration target.
#[test]
fn lumped_galerkin_on_the_heterogeneous_field() {
    let (op, rhs, x0) = heterogeneous(256);
    let settings = MultigridSettings {
        coarse_operator: CoarseOperator::LumpedGalerkin,
        energy_step: false,
        ..Default::default()
    };
    let mut mg = Multigrid::new(&op, settings).unwrap();
    let mut x = x0.clone();
    let report = mg.solve(&op, &rhs, &mut x).unwrap();
    eprintln!("{report}");
    let it = iterations(
        &mut Pcg::new(Multigrid::new(&op, settings).unwrap()),
        &op,
        &rhs,
        &x0,
    );
    eprintln!("lumped Galerkin MG-PCG: {it} iterations");
    assert!(it <= 25);
}

/// MG-preconditioned CG reaches 1e-8 in at most 12 iterations on Dirichlet Poisson, with
/// max/min over the sizes at most 1.3 (the project target; grid independence is the defining
/// property of multigrid; Trottenberg et al. 2001, from memory).
#[test]
fn mg_pcg_on_poisson_is_grid_independent() {
    let mut counts = Vec::new();
    for n in [64, 128, 256, 512] {
        let op = poisson(n);
        let cells = op.grid().cells();
        let h = 1.0 / (n as f64 + 1.0);
        let mg = Multigrid::new(&op, MultigridSettings::default()).unwrap();
        let it = iterations(
            &mut Pcg::new(mg),
            &op,
            &vec![h * h; cells],
            &vec![0.0; cells],
        );
        counts.push(it);
    }
    let (lo, hi) = (*counts.iter().min().unwrap(), *counts.iter().max().unwrap());
    assert!(hi <= 12, "{counts:?}");
    assert!(hi as f64 <= 1.3 * lo as f64, "{counts:?}");
}

/// MG-PCG on the layered-plus-blocks field (contrast 10⁴, harmonic-mean faces) with the default
/// settings: grid-independent like on Poisson (the defining property of multigrid;
/// Trottenberg et al. 2001, from memory) — at most 12 iterations from 64² to 512², max/min at
/// most 1.3 (the project target; the upscaled coarse operators alone needed 14–22 and grew
/// with n). The f32 V-cycle inside f64 PCG, the configuration the docs recommend for large
/// grids, is held to the same bound.
#[test]
fn mg_pcg_on_the_heterogeneous_field_is_grid_independent() {
    let (mut counts, mut single) = (Vec::new(), Vec::new());
    for n in [64, 128, 256, 512] {
        let (op, rhs, x0) = heterogeneous(n);
        let mg = Multigrid::new(&op, MultigridSettings::default()).unwrap();
        counts.push(iterations(&mut Pcg::new(mg), &op, &rhs, &x0));
        let op32 = op.cast::<f32>().unwrap();
        let mg32 = Multigrid::new(&op32, MultigridSettings::default()).unwrap();
        let mut pcg = Pcg::new(SinglePrecision::new(op32, mg32));
        single.push(iterations(&mut pcg, &op, &rhs, &x0));
    }
    eprintln!("MG-PCG iterations, f64 V-cycle {counts:?}, f32 V-cycle {single:?}");
    for c in [&counts, &single] {
        let (lo, hi) = (*c.iter().min().unwrap(), *c.iter().max().unwrap());
        assert!(hi <= 12, "{c:?}");
        assert!(hi as f64 <= 1.3 * lo as f64, "{c:?}");
    }
}

/// With the default coarse operators (upscaled, stiffened to the lumped Galerkin conductance
/// where that is larger) the *plain* standalone V-cycle (`α = 1`) converges on the
/// high-contrast field: it needs every eigenvalue of `B·A` below 2, i.e. coarse operators that
/// do not under-estimate the energy of the interpolated corrections (Trottenberg et al. 2001,
/// from memory). The upscaled operators alone diverged here. Bound: 1e-8 within 30 cycles
/// (measured 10–13 from 64² to 512²).
#[test]
fn plain_v_cycle_converges_on_the_heterogeneous_field() {
    for n in [64, 256] {
        let (op, rhs, x0) = heterogeneous(n);
        let plain = MultigridSettings {
            energy_step: false,
            ..Default::default()
        };
        let mut mg = Multigrid::new(&op, plain)
            .unwrap()
            .with_options(SolveOptions::default().tolerance(1e-8).max_iterations(30));
        let mut x = x0.clone();
        let report = mg.solve(&op, &rhs, &mut x).unwrap();
        eprintln!("n = {n}: {report}");
    }
}

/// Growth of the PCG iteration count with n on the Dirichlet Poisson problem, fitted over
/// n = 32 … 256: CG grows like h⁻¹ (κ = O(h⁻²), iterations ∝ √κ; common practice), IC(0)
/// like h⁻¹ (Meijerink & van der Vorst 1977 keep κ = O(h⁻²)), MIC(0) like h^{-1/2}
/// (Gustafsson 1978: κ = O(h⁻¹)). Bands ±0.2 around the theoretical exponents: at these
/// sizes the pre-asymptotic terms move the fit by about 0.1.
#[test]
fn iteration_growth_exponents() {
    let sizes = [32, 64, 128, 256];
    let mut cg = Vec::new();
    let mut ic = Vec::new();
    let mut mic = Vec::new();
    for &n in &sizes {
        let op = poisson(n);
        let cells = op.grid().cells();
        let h = 1.0 / (n as f64 + 1.0);
        let (rhs, x0) = (vec![h * h; cells], vec![0.0; cells]);
        cg.push((n, iterations(&mut Cg::default(), &op, &rhs, &x0)));
        let p = IncompleteCholesky::ic0(&op).unwrap();
        ic.push((n, iterations(&mut Pcg::new(p), &op, &rhs, &x0)));
        let full = FactorSettings {
            compensation: 1.0,
            ..FactorSettings::mic0()
        };
        let p = IncompleteCholesky::new(&op, full).unwrap();
        mic.push((n, iterations(&mut Pcg::new(p), &op, &rhs, &x0)));
    }
    let (e_cg, e_ic, e_mic) = (
        fitted_exponent(&cg),
        fitted_exponent(&ic),
        fitted_exponent(&mic),
    );
    eprintln!("exponents: CG {e_cg:.3}, IC(0) {e_ic:.3}, MIC(0) {e_mic:.3}");
    assert!((0.8..=1.2).contains(&e_cg), "CG {e_cg}: {cg:?}");
    assert!((0.8..=1.2).contains(&e_ic), "IC(0) {e_ic}: {ic:?}");
    assert!((0.3..=0.7).contains(&e_mic), "MIC(0) {e_mic}: {mic:?}");
}

/// The hierarchy stays within 1.5 times the storage of the fine operator in five arrays.
#[test]
fn hierarchy_memory_is_bounded() {
    for (nx, ny) in [(512, 512), (1000, 37), (3, 2000), (257, 129)] {
        let grid = Grid::new(nx, ny).unwrap();
        let op: Banded5<f64> =
            Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j)).unwrap();
        let mg = Multigrid::new(&op, MultigridSettings::default()).unwrap();
        let fine = 5 * grid.cells() * std::mem::size_of::<f64>();
        assert!(
            mg.storage_bytes() as f64 <= 1.5 * fine as f64,
            "{nx} x {ny}: {} vs {fine}",
            mg.storage_bytes()
        );
    }
}

/// Odd and one-cell-wide grids and scattered fixed cells: MG-PCG on these Laplacians stays
/// within the same 12-iteration band as on the square Poisson problem (grid independence must
/// not depend on the grid being square or a power of two; common practice). Measured: 0–7.
#[test]
fn awkward_grids_converge() {
    for (nx, ny) in [(1, 300), (300, 1), (33, 65), (2, 2), (1, 1), (129, 3)] {
        let grid = Grid::new(nx, ny).unwrap();
        let fixed = FixedCells::new(grid, grid.edge_cells().into_iter().step_by(3)).unwrap();
        let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))
            .unwrap()
            .with_fixed(fixed)
            .unwrap();
        let cells = grid.cells();
        let mg = Multigrid::new(
            &op,
            MultigridSettings {
                coarsest_cells: 4,
                ..Default::default()
            },
        )
        .unwrap();
        let it = iterations(&mut Pcg::new(mg), &op, &vec![1.0; cells], &vec![0.5; cells]);
        assert!(it <= 12, "{nx} x {ny}: {it}");
    }
}

//! Your own arrays, first-class: a `Banded5View` over borrowed finite-volume arrays solves
//! exactly as the owned `Banded5` does, `SystemBudget` gives the model's budget for a raw
//! system, and `CapacityTerm` steps exactly as the model's backward-Euler `Stepper` does.
//!
//! Outside references: the dense LU solution of `nalgebra` (a general-purpose library), the
//! plane wall with uniform generation (Incropera & DeWitt, Fundamentals of Heat and Mass
//! Transfer, §3.5, from memory), the eigenvalues of the 1-D second-difference matrix
//! (LeVeque, Finite Difference Methods for Ordinary and Partial Differential Equations, 2007,
//! §2.10, from memory), the error bound ‖e‖ ≤ ‖A⁻¹‖·‖r‖ and the rounding bound of recursive
//! summation (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., 2002, §4.2,
//! from memory). The model route (`quintet::model`) is the crate's own, and serves as the
//! second route the raw one must agree with.

mod common;

use common::{dist, norm, random_sdd, Problem};
use quintet::model::{Budget, BudgetLine, Conductivity, Field, FlowKind, Geometry, Model};
use quintet::model::{Stepper, Storage, TimeScheme};
use quintet::prelude::*;

const EPS: f64 = f64::EPSILON;

/// The problem's bands in the finite-volume convention (neighbour coefficients negated).
fn finite_volume_bands(p: &Problem) -> [Vec<f64>; 5] {
    let [c, w, e, s, n] = &p.bands;
    let neg = |v: &Vec<f64>| v.iter().map(|x| -x).collect::<Vec<f64>>();
    [c.clone(), neg(w), neg(e), neg(s), neg(n)]
}

fn fixed_of(p: &Problem) -> FixedCells {
    FixedCells::new(p.grid, p.fixed.iter().copied()).expect("cells on the grid")
}

fn same_bits(a: &[f64], b: &[f64]) -> bool {
    a.len() == b.len() && a.iter().zip(b).all(|(x, y)| x.to_bits() == y.to_bits())
}

/// Products through a view, in either sign convention, carry the same bits as products
/// through a `Banded5` with the same coefficients: one serial grid and one above the
/// parallel threshold (the threaded path), edges and odd row lengths included.
#[test]
fn view_products_are_bit_identical_to_banded5() {
    for (nx, ny, seed) in [(1, 7, 1), (7, 1, 2), (37, 23, 3), (301, 157, 4)] {
        let p = random_sdd(nx, ny, seed, 0.1, true);
        let fixed = fixed_of(&p);
        let owned = p.banded().with_fixed(fixed.clone()).unwrap();
        let [c, w, e, s, n] = &p.bands;
        let plain = Banded5View::new(p.grid, c, w, e, s, n)
            .unwrap()
            .with_fixed(&fixed)
            .unwrap();
        let fv = finite_volume_bands(&p);
        let negated =
            Banded5View::from_finite_volume(p.grid, &fv[0], &fv[1], &fv[2], &fv[3], &fv[4])
                .unwrap()
                .with_fixed(&fixed)
                .unwrap();
        let owned_fv = Banded5::from_finite_volume(
            p.grid,
            fv[0].clone(),
            fv[1].clone(),
            fv[2].clone(),
            fv[3].clone(),
            fv[4].clone(),
        )
        .unwrap();
        let x: Vec<f64> = (0..p.grid.cells())
            .map(|k| (0.37 * k as f64).sin() * 10f64.powi((k % 7) as i32 - 3))
            .collect();
        let mut y = [(); 4].map(|_| vec![0.0; x.len()]);
        owned.apply(&x, &mut y[0]).unwrap();
        plain.apply(&x, &mut y[1]).unwrap();
        negated.apply(&x, &mut y[2]).unwrap();
        owned_fv.apply(&x, &mut y[3]).unwrap();
        for (name, other) in [
            ("view", &y[1]),
            ("finite-volume view", &y[2]),
            ("Banded5::from_finite_volume", &y[3]),
        ] {
            assert!(
                same_bits(&y[0], other),
                "{name} on {nx} x {ny}: products differ"
            );
        }
        // Row by row, as the relaxation methods read them.
        for k in 0..p.grid.cells() {
            let (i, j) = p.grid.coords(k);
            assert_eq!(owned.coeffs(i, j), negated.coeffs(i, j));
            assert_eq!(
                owned.eliminated_coeffs(i, j),
                negated.eliminated_coeffs(i, j)
            );
        }
        assert_eq!(
            owned.first_nonpositive_center(),
            negated.first_nonpositive_center()
        );
    }
}

/// Every driver kind, with its preconditioner set up from the operator it is given.
fn drivers<S: Stencil5<f64>>(op: &S) -> Vec<(&'static str, Box<dyn IterativeSolver<f64>>)> {
    let tight = SolveOptions::default().tolerance(1e-10);
    vec![
        ("CG", Box::new(Cg::default().with_options(tight.clone()))),
        (
            "PCG + Jacobi",
            Box::new(Pcg::new(Jacobi::new(op).unwrap()).with_options(tight.clone())),
        ),
        (
            "PCG + MIC(0)",
            Box::new(Pcg::new(IncompleteCholesky::mic0(op).unwrap()).with_options(tight.clone())),
        ),
        (
            "PCG + multigrid",
            Box::new(
                Pcg::new(Multigrid::new(op, MultigridSettings::default()).unwrap())
                    .with_options(tight.clone()),
            ),
        ),
        (
            "SOR, red-black",
            Box::new(
                Sor::new(1.6)
                    .unwrap()
                    .ordering(SweepOrder::RedBlack)
                    .with_options(tight.clone().max_iterations(100_000)),
            ),
        ),
        (
            "Stone's SIP",
            Box::new(Sip::new(op, SipSettings::default()).unwrap()),
        ),
    ]
}

/// Whole solves through a finite-volume view (preconditioners set up from the view) give the
/// same iterates, bit for bit, as through a `Banded5`: the view is usable by every driver and
/// preconditioner with nothing lost.
#[test]
fn solves_through_a_view_are_bit_identical_to_banded5() {
    for (nx, ny, seed) in [(45, 31, 11), (220, 160, 12)] {
        let p = random_sdd(nx, ny, seed, 0.05, false);
        let fixed = fixed_of(&p);
        let owned = p.banded().with_fixed(fixed.clone()).unwrap();
        let fv = finite_volume_bands(&p);
        let view = Banded5View::from_finite_volume(p.grid, &fv[0], &fv[1], &fv[2], &fv[3], &fv[4])
            .unwrap()
            .with_fixed(&fixed)
            .unwrap();
        for ((name, mut on_owned), (_, mut on_view)) in
            drivers(&owned).into_iter().zip(drivers(&view))
        {
            let mut x_owned = p.x0.clone();
            let mut x_view = p.x0.clone();
            let r_owned = on_owned.solve(&owned, &p.rhs, &mut x_owned).unwrap();
            let r_view = on_view.solve(&view, &p.rhs, &mut x_view).unwrap();
            assert_eq!(
                r_owned.iterations, r_view.iterations,
                "{name} on {nx} x {ny}"
            );
            assert!(
                same_bits(&x_owned, &x_view),
                "{name} on {nx} x {ny}: iterates differ"
            );
        }
    }
}

/// A finite-volume view solves to the dense LU solution of `nalgebra`: with the true residual
/// below τ·‖b_f‖, the error is at most κ₂(A_ff)·τ·‖x*‖ (‖e‖ ≤ ‖A⁻¹‖·‖r‖ and ‖b_f‖ ≤ ‖A‖·‖x*‖),
/// plus rounding in the residual the driver checks (allowed for by doubling the bound).
#[test]
fn finite_volume_view_solves_to_the_dense_reference() {
    let tau = 1e-10;
    for (nx, ny, seed) in [(18, 13, 21), (9, 25, 22)] {
        let p = random_sdd(nx, ny, seed, 0.08, false);
        let fixed = fixed_of(&p);
        let fv = finite_volume_bands(&p);
        let view = Banded5View::from_finite_volume(p.grid, &fv[0], &fv[1], &fv[2], &fv[3], &fv[4])
            .unwrap()
            .with_fixed(&fixed)
            .unwrap();
        let reference = p.reference_solution();
        let kappa = p.condition_number();
        let mut x = p.x0.clone();
        let mut pcg = Pcg::new(Multigrid::new(&view, MultigridSettings::default()).unwrap())
            .with_options(SolveOptions::default().tolerance(tau));
        pcg.solve(&view, &p.rhs, &mut x).unwrap();
        let bound = 2.0 * kappa * tau * norm(&reference);
        let error = dist(&x, &reference);
        assert!(
            error <= bound,
            "{nx} x {ny}: error {error:e} > bound {bound:e} (κ = {kappa:.1})"
        );
    }
}

/// Validation names the array and the cell, in the convention the caller used; a pure
/// no-flow system is singular (constant in the null space) through the view too.
#[test]
fn views_check_their_arrays() {
    let grid = Grid::new(4, 3).unwrap();
    let n = grid.cells();
    let zero = vec![0.0; n];
    let ones = vec![1.0; n];
    let err =
        Banded5View::from_finite_volume(grid, &ones, &zero, &zero[..5], &zero, &zero).unwrap_err();
    assert_eq!(
        (err.kind(), err.subject()),
        (ErrorKind::LengthMismatch, Some("a_E"))
    );
    let mut a_w = zero.clone();
    a_w[4] = 1.0; // cell (0, 1) has no west neighbour
    let err = Banded5View::from_finite_volume(grid, &ones, &a_w, &zero, &zero, &zero).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::OffGridCoupling);
    assert_eq!(err.location().map(|at| at.coords), Some(Some((0, 1))));
    let mut a_p = ones.clone();
    a_p[7] = f64::INFINITY;
    let err = Banded5View::from_finite_volume(grid, &a_p, &zero, &zero, &zero, &zero).unwrap_err();
    assert_eq!(
        (err.kind(), err.location().map(|at| at.cell)),
        (ErrorKind::NonFinite, Some(7))
    );
    let other = FixedCells::new(Grid::new(3, 4).unwrap(), [0]).unwrap();
    let view = Banded5View::new(grid, &ones, &zero, &zero, &zero, &zero).unwrap();
    assert_eq!(
        view.with_fixed(&other).unwrap_err().kind(),
        ErrorKind::GridMismatch
    );

    // Insulated on all sides, a_P = Σ a_nb: the level is undetermined.
    let p = random_sdd(6, 5, 31, 0.0, false);
    let fv = finite_volume_bands(&p);
    let a_p: Vec<f64> = (0..p.grid.cells())
        .map(|k| fv[1][k] + fv[2][k] + fv[3][k] + fv[4][k])
        .collect();
    let floating =
        Banded5View::from_finite_volume(p.grid, &a_p, &fv[1], &fv[2], &fv[3], &fv[4]).unwrap();
    let mut x = vec![0.0; p.grid.cells()];
    let err = Cg::default()
        .solve(&floating, &vec![0.0; x.len()], &mut x)
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::Singular);
}

// ---- budgets ----

/// A small invented conduction model with every kind of condition the raw budget can mirror,
/// each on cells of its own: two groups of prescribed cells, a heater, a cooler, an exchange
/// channel through the middle and an exchange edge.
struct Mirror {
    model: Model,
    cold: Vec<usize>,
    inlet: Vec<usize>,
    heater: usize,
    cooler: usize,
    channel: Vec<usize>,
    air: Vec<usize>,
}

fn mirror() -> Mirror {
    let geometry = Geometry::cell_centered(24, 16, 0.01, 0.01, 0.005).unwrap();
    let grid = geometry.grid();
    let k = Field::from_fn(grid, |i, j| if i > 10 && j < 6 { 400.0 } else { 40.0 });
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(k)).unwrap();
    let cold: Vec<usize> = (2..12).map(|j| grid.index(0, j)).collect();
    let inlet: Vec<usize> = (20..23).map(|i| grid.index(i, 0)).collect();
    let heater = grid.index(6, 5);
    let cooler = grid.index(17, 11);
    let channel: Vec<usize> = (4..20).map(|i| grid.index(i, 8)).collect();
    let air = geometry.edge(Side::North);
    model
        .prescribe_cells("cold plate", cold.clone(), 15.0)
        .unwrap();
    // One value along the inlet: conduction between fixed cells at different values is not
    // part of the solved system, and the raw budget does not book it (the model does).
    model.prescribe_cells("inlet", inlet.clone(), 40.0).unwrap();
    model.point_source("heater", heater, 12.0).unwrap();
    model.point_source("cooler", cooler, -3.0).unwrap();
    model
        .cell_exchange("channel", channel.clone(), 0.05, 25.0)
        .unwrap();
    model.edge_exchange("air", Side::North, 30.0, 20.0).unwrap();
    Mirror {
        model,
        cold,
        inlet,
        heater,
        cooler,
        channel,
        air,
    }
}

/// |a − b| allowed for a line summed over `cells` terms of total magnitude `magnitude` by two
/// routes in the same order: twice the recursive-summation bound (cells + 8)·u·Σ|terms|
/// (Higham 2002, §4.2; u = ε/2, the 8 covers the few operations inside each term).
fn rounding(cells: usize, magnitude: f64) -> f64 {
    (cells as f64 + 8.0) * EPS * magnitude
}

/// Σ over `cells` of the magnitudes that enter a cell's source term: |b_k| + 2·center·|φ_k|.
fn source_magnitude(op: &Banded5<f64>, rhs: &[f64], x: &[f64], cells: &[usize]) -> f64 {
    cells
        .iter()
        .map(|&k| rhs[k].abs() + 2.0 * op.center()[k] * x[k].abs())
        .sum()
}

/// Σ over `cells` (fixed) of the magnitudes of their link terms: Σ |a_nb|·(|φ_f| + |φ_nb|).
fn link_magnitude(op: &Banded5<f64>, x: &[f64], cells: &[usize]) -> f64 {
    let grid = op.grid();
    cells
        .iter()
        .flat_map(|&f| Side::ALL.map(|s| (f, grid.neighbour(f, s), s)))
        .filter_map(|(f, nb, side)| nb.map(|k| (f, k, side)))
        .map(|(f, k, side)| {
            let (i, j) = grid.coords(k);
            op.coeffs(i, j).towards(side.opposite()).abs() * (x[f].abs() + x[k].abs())
        })
        .sum()
}

fn line<'a>(budget: &'a Budget, label: &str) -> &'a BudgetLine {
    budget
        .lines
        .iter()
        .find(|l| l.label == label)
        .unwrap_or_else(|| panic!("no line {label}"))
}

fn assert_close(what: &str, a: f64, b: f64, allowed: f64) {
    assert!(
        (a - b).abs() <= allowed,
        "{what}: {a} against {b} (allowed {allowed:e})"
    );
}

/// The raw budget of the model's own operator, right-hand side and fixed cells, with groups
/// named after the model's conditions, agrees with the model's budget line by line, entering
/// and leaving, to the rounding of the two summations. Without groups, the catch-all lines
/// carry the same totals.
#[test]
fn system_budget_agrees_with_the_model_budget() {
    let m = mirror();
    let system = m.model.assemble().unwrap();
    let op = system.operator();
    let mut t = system.initial_solution(20.0);
    let mut pcg = Pcg::new(Multigrid::new(op, MultigridSettings::default()).unwrap())
        .with_options(SolveOptions::default().tolerance(1e-12));
    system
        .solve(&mut pcg, &mut t, &mut Workspace::new())
        .unwrap();
    let rhs = system.rhs();
    let model_budget = system.budget(&t).unwrap();

    let raw = SystemBudget::new(op, &t, rhs)
        .unwrap()
        .fixed_group("cold plate", m.cold.iter().copied())
        .unwrap()
        .fixed_group("inlet", m.inlet.iter().copied())
        .unwrap()
        .source_group("heater", FlowKind::PointSource, [m.heater])
        .unwrap()
        .source_group("cooler", FlowKind::PointSource, [m.cooler])
        .unwrap()
        .source_group("channel", FlowKind::Exchange, m.channel.iter().copied())
        .unwrap()
        .source_group("air", FlowKind::Exchange, m.air.iter().copied())
        .unwrap()
        .budget();
    for (label, cells, fixed) in [
        ("cold plate", &m.cold, true),
        ("inlet", &m.inlet, true),
        ("heater", &vec![m.heater], false),
        ("cooler", &vec![m.cooler], false),
        ("channel", &m.channel, false),
        ("air", &m.air, false),
    ] {
        let (ours, theirs) = (line(&raw, label), line(&model_budget, label));
        assert_eq!(ours.kind, theirs.kind, "{label}");
        let magnitude = if fixed {
            link_magnitude(op, &t, cells)
        } else {
            source_magnitude(op, rhs, &t, cells)
        };
        let allowed = rounding(cells.len(), magnitude);
        assert_close(
            &format!("{label} entering"),
            ours.inflow,
            theirs.inflow,
            allowed,
        );
        assert_close(
            &format!("{label} leaving"),
            ours.outflow,
            theirs.outflow,
            allowed,
        );
    }
    // Every free cell not named has no source: its line is empty.
    let rest = line(&raw, "other sources");
    assert_eq!(
        (rest.kind, rest.inflow, rest.outflow),
        (FlowKind::CellSource, 0.0, 0.0)
    );

    // No groups: one line per sort, the same totals.
    let plain = SystemBudget::new(op, &t, rhs).unwrap().budget();
    let labels: Vec<&str> = plain.lines.iter().map(|l| l.label.as_str()).collect();
    assert_eq!(labels, ["fixed cells", "sources"]);
    let all = grid_magnitude(op, rhs, &t);
    let cells = op.grid().cells();
    let fixed_in: f64 = ["cold plate", "inlet"]
        .iter()
        .map(|l| line(&model_budget, l).inflow)
        .sum();
    let fixed_out: f64 = ["cold plate", "inlet"]
        .iter()
        .map(|l| line(&model_budget, l).outflow)
        .sum();
    assert_close(
        "fixed cells entering",
        plain.lines[0].inflow,
        fixed_in,
        rounding(cells, all),
    );
    assert_close(
        "fixed cells leaving",
        plain.lines[0].outflow,
        fixed_out,
        rounding(cells, all),
    );
    assert_close("net", plain.net(), model_budget.net(), rounding(cells, all));
}

fn grid_magnitude(op: &Banded5<f64>, rhs: &[f64], x: &[f64]) -> f64 {
    let all: Vec<usize> = (0..op.grid().cells()).collect();
    source_magnitude(op, rhs, x, &all) + link_magnitude(op, x, &all)
}

/// A plane wall of thickness 2L with uniform generation q̇ and both faces held at T_s
/// (Incropera & DeWitt, Fundamentals of Heat and Mass Transfer, §3.5, from memory):
/// T(x) = q̇L²/(2k)·(1 − x²/L²) + T_s, and each face passes q̇·L per unit area. Written as a
/// user's own node-centred finite-volume arrays (the face nodes fixed), the discrete solution
/// is exact at the nodes (the 3-point difference is exact for quadratics) and each fixed face
/// takes q̇·A·(L − Δx/2): the face flux less the generation in the half cell at the face,
/// which the fixed node holds outside the solved system. Rows of the same wall are stacked
/// with insulated faces between them, so the test runs through both directions of the grid.
#[test]
fn plane_wall_with_generation_budget() {
    let (half, k, q, t_s) = (0.05, 1.4, 2.0e5, 30.0); // m, W/(m·K), W/m³, °C
    let (nodes, rows, depth, height) = (41, 4, 1.0, 0.25); // per row: 0.25 m high, 1 m deep
    let grid = Grid::new(nodes, rows).unwrap();
    let n = grid.cells();
    let dx = 2.0 * half / (nodes - 1) as f64;
    let area = depth * height;
    let g = k * area / dx;
    let (mut a_p, mut a_w, mut a_e, a_s, a_n, mut b) = (
        vec![0.0; n],
        vec![0.0; n],
        vec![0.0; n],
        vec![0.0; n],
        vec![0.0; n],
        vec![0.0; n],
    );
    for c in 0..n {
        let (i, _) = grid.coords(c);
        if i > 0 {
            a_w[c] = g;
        }
        if i + 1 < nodes {
            a_e[c] = g;
        }
        a_p[c] = a_w[c] + a_e[c];
        b[c] = q * area * dx;
    }
    let left: Vec<usize> = (0..rows).map(|j| grid.index(0, j)).collect();
    let right: Vec<usize> = (0..rows).map(|j| grid.index(nodes - 1, j)).collect();
    let faces = FixedCells::new(grid, left.iter().chain(&right).copied()).unwrap();
    let op = Banded5View::from_finite_volume(grid, &a_p, &a_w, &a_e, &a_s, &a_n)
        .unwrap()
        .with_fixed(&faces)
        .unwrap();
    let tau = 1e-12;
    let mut t = vec![t_s; n];
    let mut pcg =
        Pcg::new(Jacobi::new(&op).unwrap()).with_options(SolveOptions::default().tolerance(tau));
    pcg.solve(&op, &b, &mut t).unwrap();
    let budget = SystemBudget::new(&op, &t, &b)
        .unwrap()
        .fixed_group("left face", left)
        .unwrap()
        .fixed_group("right face", right)
        .unwrap()
        .budget();

    // Error bounds from the stopping rule: ‖r‖ ≤ τ·‖b_f‖ over the free cells, b_f = b plus
    // the fixed faces' pull g·T_s; ‖A_ff⁻¹‖ = 1/λ_min with λ_min = 2g·(1 − cos(π/(nodes − 1)))
    // (the chain's smallest eigenvalue, LeVeque 2007 §2.10; the insulated links between rows
    // add a zero mode only).
    let free = (nodes - 2) * rows;
    let b_f = ((0..n)
        .filter(|&c| !faces.contains(c))
        .map(|c| {
            let (i, _) = grid.coords(c);
            let pull = if i == 1 || i == nodes - 2 {
                g * t_s
            } else {
                0.0
            };
            (b[c] + pull).powi(2)
        })
        .sum::<f64>())
    .sqrt();
    let lambda_min = 2.0 * g * (1.0 - (std::f64::consts::PI / (nodes - 1) as f64).cos());
    let error = tau * b_f / lambda_min; // ‖e‖₂ bound
    let ulps = 1e3 * EPS * (q * half * half / k + t_s); // a few ulps per node, generously

    let centre = grid.index(nodes / 2, 1);
    let analytic = q * half * half / (2.0 * k) + t_s;
    assert_close("centre temperature", t[centre], analytic, error + ulps);

    let face = q * area * (half - dx / 2.0) * rows as f64;
    for label in ["left face", "right face"] {
        let l = line(&budget, label);
        // Σ over the face's rows of g·|e| ≤ g·√rows·‖e‖.
        let allowed = g * (rows as f64).sqrt() * error + g * rows as f64 * ulps;
        assert_close(&format!("{label} leaving"), l.outflow, face, allowed);
        assert_eq!(l.inflow, 0.0);
    }
    let generated = line(&budget, "sources");
    assert_eq!(generated.kind, FlowKind::CellSource);
    assert_close(
        "generation",
        generated.inflow,
        q * area * dx * free as f64,
        rounding(free, generated.inflow),
    );
    // Net = Σ residual over the free cells: |net| ≤ √free·τ·‖b_f‖.
    let allowed = (free as f64).sqrt() * tau * b_f + rounding(n, 2.0 * generated.inflow);
    assert!(
        budget.net().abs() <= allowed,
        "net {:e} > {allowed:e}",
        budget.net()
    );
}

/// Groups must name cells of the right sort, once.
#[test]
fn budget_groups_are_checked() {
    let p = random_sdd(8, 6, 41, 0.2, false);
    let fixed = fixed_of(&p);
    let op = p.banded().with_fixed(fixed.clone()).unwrap();
    let free = p.free_cells()[0];
    let (f0, f1) = (p.fixed[0], p.fixed[1]);
    let new = || SystemBudget::new(&op, &p.x0, &p.rhs).unwrap();
    let err = new().fixed_group("plate", [f0, free]).unwrap_err();
    assert_eq!(
        (err.kind(), err.subject()),
        (ErrorKind::BudgetGroup, Some("plate"))
    );
    assert_eq!(err.location().map(|at| at.cell), Some(free));
    let err = new()
        .source_group("heater", FlowKind::PointSource, [f1])
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::BudgetGroup);
    let err = new()
        .fixed_group("a", [f0, f0])
        .unwrap()
        .fixed_group("b", [f1, f0])
        .unwrap_err();
    assert_eq!(
        (err.kind(), err.location().map(|at| at.cell)),
        (ErrorKind::BudgetGroup, Some(f0))
    );
    assert!(err.to_string().contains("\"a\""), "{err}");
    let err = new().fixed_group("a", [p.grid.cells()]).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::CellOutOfRange);
    let short = vec![0.0; 3];
    assert_eq!(
        SystemBudget::new(&op, &short, &p.rhs).unwrap_err().kind(),
        ErrorKind::LengthMismatch
    );
    // Named groups take their lines first; the rest go on the catch-all lines.
    let b = new().fixed_group("a", [f0]).unwrap().budget();
    let labels: Vec<&str> = b.lines.iter().map(|l| l.label.as_str()).collect();
    assert_eq!(labels, ["a", "other fixed cells", "sources"]);
}

// ---- transient ----

/// A small invented transient conduction model: a plate at 20 °C, a cold plate at 5 °C, a
/// heater, an air edge; ρc per volume.
fn transient_model() -> (Model, Vec<usize>, usize) {
    let geometry = Geometry::cell_centered(36, 28, 0.005, 0.005, 0.004).unwrap();
    let grid = geometry.grid();
    let k = Field::from_fn(grid, |i, _| if i < 18 { 200.0 } else { 15.0 });
    let mut model = Model::new(geometry, Conductivity::isotropic(k)).unwrap();
    model
        .set_storage(Storage::per_volume(Field::from_fn(grid, |i, _| {
            if i < 18 {
                2.4e6
            } else {
                3.9e6
            }
        })))
        .unwrap();
    let cold: Vec<usize> = (8..20).map(|j| grid.index(35, j)).collect();
    model
        .prescribe_cells("cold plate", cold.clone(), 5.0)
        .unwrap();
    let heater = grid.index(9, 14);
    model.point_source("heater", heater, 25.0).unwrap();
    model.edge_exchange("air", Side::South, 12.0, 20.0).unwrap();
    (model, cold, heater)
}

/// A user's backward-Euler loop over the steady operator's arrays with `CapacityTerm` follows
/// the model's `Stepper` (backward Euler) on the same model. Each solve leaves a relative
/// residual ≤ τ, so each step's solution is within κ·τ of the exact step (κ of the step
/// operator, bounded by Gershgorin's theorem above and by min C/Δt below, since the
/// conduction part is positive semi-definite); backward Euler does not amplify earlier
/// errors (it is contractive in the C-weighted norm), so after N steps of both routes the
/// solutions differ by at most 2·N·κ·τ·max‖x‖·√(max C / min C).
#[test]
fn capacity_term_steps_like_the_model_stepper() {
    let (model, cold, _) = transient_model();
    let geometry = model.geometry().clone();
    let grid = model.grid();
    let n = grid.cells();
    let (dt, steps, tau) = (2.0, 15, 1e-11);

    // The model's route.
    let initial = vec![20.0; n];
    let options = SolveOptions::default().tolerance(tau);
    let mut stepper = Stepper::new(&model, TimeScheme::BackwardEuler, dt, 0.0, &initial, |op| {
        Ok(Pcg::new(Multigrid::new(op, MultigridSettings::default())?)
            .with_options(options.clone()))
    })
    .unwrap();

    // The user's route: the steady system's arrays, a capacity per cell, our own loop.
    let system = model.assemble().unwrap();
    let steady = system.operator();
    let rho_c = |k: usize| if grid.coords(k).0 < 18 { 2.4e6 } else { 3.9e6 };
    let capacity: Vec<f64> = (0..n).map(|k| rho_c(k) * geometry.volume(k)).collect();
    let term = CapacityTerm::new(grid, &capacity, dt).unwrap();
    let mut center = vec![0.0; n];
    term.add_to_center(steady.center(), &mut center).unwrap();
    let fixed = steady.fixed().unwrap().clone();
    let op = Banded5View::new(
        grid,
        &center,
        steady.west(),
        steady.east(),
        steady.south(),
        steady.north(),
    )
    .unwrap()
    .with_fixed(&fixed)
    .unwrap();
    let mut pcg = Pcg::new(Multigrid::new(&op, MultigridSettings::default()).unwrap())
        .with_options(options.clone());
    let mut ws = Workspace::new();
    let mut t = system.initial_solution(20.0);
    let mut rhs = vec![0.0; n];
    let mut largest = 0.0f64;
    for _ in 0..steps {
        stepper.step().unwrap();
        term.add_to_rhs(system.rhs(), &t, &mut rhs).unwrap();
        pcg.solve_with(&op, &rhs, &mut t, &mut ws).unwrap();
        largest = largest.max(norm(&t));
    }

    // κ of the step operator on the free cells.
    let free = |k: &usize| !fixed.contains(*k);
    let gershgorin = (0..n)
        .filter(free)
        .map(|k| {
            let (i, j) = grid.coords(k);
            let c = op.coeffs(i, j);
            c.center + c.west.abs() + c.east.abs() + c.south.abs() + c.north.abs()
        })
        .fold(0.0, f64::max);
    let rates: Vec<f64> = (0..n).filter(free).map(|k| capacity[k] / dt).collect();
    let (lo, hi) = rates
        .iter()
        .fold((f64::MAX, 0.0f64), |(a, b), &r| (a.min(r), b.max(r)));
    let kappa = gershgorin / lo;
    let bound = 2.0 * steps as f64 * kappa * tau * largest * (hi / lo).sqrt();
    let difference = dist(stepper.solution(), &t);
    assert!(
        difference <= bound,
        "difference {difference:e} > bound {bound:e} (κ ≤ {kappa:.1})"
    );
    assert!(cold.iter().all(|&k| t[k] == 5.0));
    // It moved: the heater warmed its cell well above the start.
    assert!(t[grid.index(9, 14)] > 21.0);
}

/// The budget of one step through `SystemBudget::storage`, on the stepper's own solution,
/// agrees with the stepper's budget line by line: storage, the cold plate, and the sources
/// (the heater and the air edge, which the raw budget sees as cell sources).
#[test]
fn step_budget_agrees_with_the_stepper_budget() {
    let (model, cold, heater) = transient_model();
    let geometry = model.geometry().clone();
    let grid = model.grid();
    let n = grid.cells();
    let dt = 5.0;
    let mut stepper = Stepper::new(
        &model,
        TimeScheme::BackwardEuler,
        dt,
        0.0,
        &vec![20.0; n],
        |op| Ok(Pcg::new(Jacobi::new(op)?).with_options(SolveOptions::default().tolerance(1e-12))),
    )
    .unwrap();
    stepper.step().unwrap();
    let previous = stepper.solution().to_vec();
    stepper.step().unwrap();
    let theirs = stepper.budget().unwrap();

    let system = model.assemble().unwrap();
    let steady = system.operator();
    let rho_c = |k: usize| if grid.coords(k).0 < 18 { 2.4e6 } else { 3.9e6 };
    let capacity: Vec<f64> = (0..n).map(|k| rho_c(k) * geometry.volume(k)).collect();
    let term = CapacityTerm::new(grid, &capacity, dt).unwrap();
    let mut center = vec![0.0; n];
    term.add_to_center(steady.center(), &mut center).unwrap();
    let op = Banded5View::new(
        grid,
        &center,
        steady.west(),
        steady.east(),
        steady.south(),
        steady.north(),
    )
    .unwrap()
    .with_fixed(steady.fixed().unwrap())
    .unwrap();
    let x = stepper.solution();
    let air = geometry.edge(Side::South);
    let ours = SystemBudget::new(&op, x, system.rhs())
        .unwrap()
        .fixed_group("cold plate", cold.iter().copied())
        .unwrap()
        .source_group("heater", FlowKind::PointSource, [heater])
        .unwrap()
        .source_group("air", FlowKind::Exchange, air.iter().copied())
        .unwrap()
        .storage(&term, &previous)
        .unwrap()
        .budget();
    // Magnitudes for the rounding allowance: every cell's center, capacity and values.
    let magnitude: f64 = (0..n)
        .map(|k| system.rhs()[k].abs() + 2.0 * center[k] * (x[k].abs() + previous[k].abs()))
        .sum();
    let allowed = rounding(n, magnitude);
    for label in ["storage", "cold plate", "heater", "air"] {
        let (a, b) = (line(&ours, label), line(&theirs, label));
        assert_eq!(a.kind, b.kind, "{label}");
        assert_close(&format!("{label} entering"), a.inflow, b.inflow, allowed);
        assert_close(&format!("{label} leaving"), a.outflow, b.outflow, allowed);
    }
    assert!(line(&ours, "storage").outflow > 0.0); // the heater warms the plate
    assert_close("net", ours.net(), theirs.net(), 2.0 * allowed);
}

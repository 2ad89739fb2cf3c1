//! The distributed model ([`DistributedSystem`]) on one process against the outside: the
//! linear head profile of 1-D confined flow and its Darcy discharge, and Thiem's drawdown with
//! the budget of the well. The same runs on many processes give the same bits
//! (tests/mpi_model.rs), so these checks hold for any process count.

use quintet::distributed::{DistributedJacobi, DistributedSystem, Partition, Processes};
use quintet::model::{Conductivity, Geometry, Model, SingularPolicy};
use quintet::prelude::*;

/// Solve `system` on `part` with PCG + Jacobi to relative residual `tolerance`; the heads and
/// the 2-norm of the true residual `b − A·h` at the free cells.
fn solve(system: &DistributedSystem, part: &Partition, tolerance: f64) -> (Vec<f64>, f64) {
    let mut h = system.initial_solution(0.0);
    let mut pcg = Pcg::new(DistributedJacobi::new(system.operator()).unwrap())
        .with_options(SolveOptions::default().tolerance(tolerance));
    let report = system
        .solve(&mut pcg, &mut h, &mut part.workspace(true))
        .unwrap();
    assert!(report.converged());
    let op = system.operator();
    let mut ah = vec![0.0; h.len()];
    op.apply(&h, &mut ah).unwrap();
    let fixed = op.fixed_cells();
    let r2: f64 = (0..h.len())
        .filter(|&k| !fixed.is_some_and(|f| f.contains(k)))
        .map(|k| (system.rhs()[k] - ah[k]).powi(2))
        .sum();
    (h, r2.sqrt())
}

/// Steady 1-D confined flow between two prescribed heads: by Darcy's law and continuity the
/// head is linear between them and the discharge is `Q = K·b·W·(h_W − h_E)/L` (Freeze &
/// Cherry, *Groundwater*, 1979, ch. 2: from memory). The cell-centred scheme
/// (faces in series, the edge value through half a cell) is exact for a linear profile, so
/// only the algebraic error remains: `|e|∞ ≤ ‖e‖₂ ≤ ‖r‖₂/λ_min`. The operator is
/// `A_x ⊗ I + I ⊗ A_y` with `A_y` the no-flow chain along y (smallest eigenvalue 0) and
/// `A_x = C·T + C·(e₁e₁ᵀ + eₙeₙᵀ)`, `T = tridiag(−1, 2, −1)`, `C = K·b·Δy/Δx`; so
/// `λ_min ≥ λ_min(C·T) = 4C·sin²(π/(2(n + 1)))` (eigenvalues of `T`: Golub & Van Loan,
/// *Matrix Computations*, 4th ed. 2013, §4.8; a positive semidefinite addition raises no
/// eigenvalue: Weyl's inequality, Horn & Johnson, *Matrix Analysis*, 2nd ed. 2013, §4.3; both
/// from memory). The
/// west line's inflow is `Σ 2C·(h_W − h₀)` over the edge cells: it differs from `Q` by at most
/// `ny·2C·|e|∞` and the rounding of `ny` additions.
#[test]
fn linear_profile_and_darcy_discharge() {
    let (nx, ny, dx, dy, b, k) = (40, 5, 10.0, 10.0, 8.0, 3e-4);
    let (h_w, h_e) = (20.0, 15.0);
    let geometry = Geometry::cell_centered(nx, ny, dx, dy, b).unwrap();
    let mut model = Model::new(geometry, Conductivity::isotropic(k)).unwrap();
    let west = model.prescribe_edge("west", Side::West, h_w).unwrap();
    let east = model.prescribe_edge("east", Side::East, h_e).unwrap();
    let part = Partition::new(model.geometry().grid(), Processes::single()).unwrap();
    let system = DistributedSystem::new(&model, &part).unwrap();
    let (h, r) = solve(&system, &part, 1e-12);

    let c = k * b * dy / dx;
    let lambda_min = 4.0
        * c
        * (std::f64::consts::PI / (2.0 * (nx as f64 + 1.0)))
            .sin()
            .powi(2);
    let bound = r / lambda_min + 8.0 * f64::EPSILON * h_w;
    let length = nx as f64 * dx;
    let mut worst: f64 = 0.0;
    for (cell, &head) in h.iter().enumerate() {
        let x = (cell % nx) as f64 * dx + dx / 2.0;
        let exact = h_w + (h_e - h_w) * x / length;
        worst = worst.max((head - exact).abs());
    }
    println!("linear profile: largest error {worst:.2e} m, bound {bound:.2e} m");
    assert!(worst <= bound, "{worst:e} > {bound:e}");

    let q = k * b * (ny as f64 * dy) * (h_w - h_e) / length;
    let budget = system.budget(&h).unwrap();
    let tolerance = ny as f64 * 2.0 * c * bound + 8.0 * f64::EPSILON * q;
    let into = budget.line(west).unwrap();
    let out = budget.line(east).unwrap();
    println!(
        "Darcy discharge {q:.6e} m³/s: in {:.6e}, out {:.6e} (tolerance {tolerance:.1e})",
        into.inflow, out.outflow
    );
    assert!((into.inflow - q).abs() <= tolerance && into.outflow == 0.0);
    assert!((out.outflow - q).abs() <= tolerance && out.inflow == 0.0);
}

/// Thiem (1906), steady radial flow to a well in a confined aquifer:
/// `h(r) = h(R) − Q/(2πT)·ln(R/r)`, R = 1 km beyond the model's edge, the ring of edge cells
/// held at the exact heads. As in tests/model_steady.rs (the serial model), heads at r ≥ 3
/// cells must lie within 1 % of the drawdown. The budget: the well's line is its rate, and the
/// ring delivers it; the lines sum to minus the sum of the residuals, `|net| ≤ ‖r‖₁ ≤ √n·‖r‖₂`
/// (the scheme conserves: common practice), plus the rounding of the sums.
#[test]
fn thiem_drawdown_and_well_budget() {
    let (n, a) = (51, 10.0);
    let (k, b, q, radius, h_r) = (1.5e-4, 20.0, 0.012, 1000.0, 50.0);
    let geometry = Geometry::cell_centered(n, n, a, a, b).unwrap();
    let grid = geometry.grid();
    let centre = n as f64 * a / 2.0;
    let r_of = |cell: usize| {
        let (x, y) = geometry.position(cell);
        ((x - centre).powi(2) + (y - centre).powi(2)).sqrt()
    };
    let exact = |r: f64| h_r - q / (2.0 * std::f64::consts::PI * k * b) * (radius / r).ln();
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(k)).unwrap();
    let edge = grid.edge_cells();
    let heads: Vec<f64> = edge.iter().map(|&c| exact(r_of(c))).collect();
    let ring = model.prescribe_cells("outer ring", edge, heads).unwrap();
    let well = model
        .point_source("pumping well", grid.index(n / 2, n / 2), -q)
        .unwrap();
    let part = Partition::new(grid, Processes::single()).unwrap();
    let system = DistributedSystem::new(&model, &part).unwrap();
    let (h, r) = solve(&system, &part, 1e-12);

    let mut worst: f64 = 0.0;
    for (c, &head) in h.iter().enumerate() {
        let dist = r_of(c);
        if dist >= 3.0 * a - 1e-9 {
            worst = worst.max((head - exact(dist)).abs() / (h_r - exact(dist)));
        }
    }
    println!(
        "Thiem: largest error at r >= 3 cells = {:.4} % of the drawdown",
        100.0 * worst
    );
    assert!(worst < 0.01);

    let budget = system.budget(&h).unwrap();
    assert_eq!(
        budget.line(well).map(|l| (l.inflow, l.outflow)),
        Some((0.0, q))
    );
    let ring = budget.line(ring).unwrap();
    let closure = (grid.cells() as f64).sqrt() * r + 4.0 * f64::EPSILON * q;
    println!(
        "Thiem budget: ring delivers {:.9e} m³/s for {q:e} (closure bound {closure:.1e})",
        ring.net()
    );
    assert!((ring.net() - q).abs() <= closure);
}

/// What is not distributed is refused with a typed error: floating regions held at a mean.
#[test]
fn fix_mean_is_refused() {
    let geometry = Geometry::cell_centered(6, 4, 1.0, 1.0, 1.0).unwrap();
    let mut model = Model::new(geometry, Conductivity::isotropic(1.0)).unwrap();
    model.point_source("in", 3, 1.0).unwrap();
    model.point_source("out", 20, -1.0).unwrap();
    model.set_singular_policy(SingularPolicy::FixMean(0.0));
    let part = Partition::new(model.geometry().grid(), Processes::single()).unwrap();
    let err = DistributedSystem::new(&model, &part).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::InvalidSetting);
    assert!(model.assemble().is_ok(), "the serial system holds the mean");
}

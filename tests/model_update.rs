//! Models that change in place: a conductivity field, an exchange coefficient or the storage
//! changed after assembly is re-assembled into the same operator storage with exactly the bits
//! a fresh assembly of the changed model gives, and every condition handle stays valid
//! (common practice for calibration runs and nonlinear outer iterations: the re-assembly must
//! be the assembly, not an approximation of it). Also: the model with the fastest solver,
//! written the natural way.

use quintet::model::{
    ConditionId, Conductivity, Field, Geometry, Model, Stepper, Storage, TimeScheme,
};
use quintet::prelude::*;

/// An invented confined aquifer, 24 × 16 cells of 25 m, with a river, a fixed-head edge, a
/// well and recharge.
fn aquifer(k: &Field) -> (Model, ConditionId, ConditionId) {
    let geometry = Geometry::cell_centered(24, 16, 25.0, 25.0, 12.0).unwrap();
    let mut model = Model::new(geometry, Conductivity::isotropic(k.clone())).unwrap();
    let river = model
        .edge_exchange("river", Side::West, 2e-6, 30.0)
        .unwrap();
    model.prescribe_edge("lake", Side::East, 28.0).unwrap();
    let well = model.point_source("well", 8 * 24 + 10, -3e-3).unwrap();
    model.areal_source("recharge", 5e-9).unwrap();
    (model, river, well)
}

fn field(grid: Grid, contrast: f64) -> Field {
    Field::from_fn(grid, |i, j| {
        if (6..12).contains(&i) && (3..9).contains(&j) {
            1e-4 / contrast
        } else {
            1e-4
        }
    })
}

fn bits(v: &[f64]) -> Vec<u64> {
    v.iter().map(|x| x.to_bits()).collect()
}

fn bands_bits(op: &Banded5<f64>) -> Vec<Vec<u64>> {
    [op.center(), op.west(), op.east(), op.south(), op.north()]
        .iter()
        .map(|b| bits(b))
        .collect()
}

fn solve(system: &quintet::model::SteadySystem) -> Vec<f64> {
    let mut h = system.initial_solution(29.0);
    let mg = Multigrid::new(system.operator(), MultigridSettings::default()).unwrap();
    let mut pcg = Pcg::new(mg).with_options(SolveOptions::default().tolerance(1e-12));
    system
        .solve(&mut pcg, &mut h, &mut Workspace::new())
        .unwrap();
    h
}

#[test]
fn a_new_conductivity_gives_the_bits_of_a_fresh_assembly() {
    let grid = Grid::new(24, 16).unwrap();
    let (model, river, well) = aquifer(&field(grid, 1.0));
    let mut system = model.assemble().unwrap();
    let clay = field(grid, 100.0);
    system
        .set_conductivity(Conductivity::isotropic(clay.clone()))
        .unwrap();
    let fresh = aquifer(&clay).0.assemble().unwrap();
    assert_eq!(bands_bits(system.operator()), bands_bits(fresh.operator()));
    assert_eq!(bits(system.rhs()), bits(fresh.rhs()));
    let (h, h_fresh) = (solve(&system), solve(&fresh));
    assert_eq!(bits(&h), bits(&h_fresh));
    // The handles issued before the change still name their lines.
    let budget = system.budget(&h).unwrap();
    assert_eq!(budget, fresh.budget(&h_fresh).unwrap());
    assert_eq!(budget.line(well).map(|l| l.outflow), Some(3e-3));
    assert!(budget.line(river).is_some_and(|l| l.inflow > 0.0));
}

#[test]
fn a_new_exchange_coefficient_gives_the_bits_of_a_fresh_assembly() {
    let grid = Grid::new(24, 16).unwrap();
    let k = field(grid, 10.0);
    let (model, river, _) = aquifer(&k);
    let mut system = model.assemble().unwrap();
    system.set_exchange(river, 8e-6).unwrap();
    let geometry = Geometry::cell_centered(24, 16, 25.0, 25.0, 12.0).unwrap();
    let mut changed = Model::new(geometry, Conductivity::isotropic(k)).unwrap();
    changed
        .edge_exchange("river", Side::West, 8e-6, 30.0)
        .unwrap();
    changed.prescribe_edge("lake", Side::East, 28.0).unwrap();
    changed.point_source("well", 8 * 24 + 10, -3e-3).unwrap();
    changed.areal_source("recharge", 5e-9).unwrap();
    let fresh = changed.assemble().unwrap();
    assert_eq!(bands_bits(system.operator()), bands_bits(fresh.operator()));
    assert_eq!(bits(system.rhs()), bits(fresh.rhs()));
    // Levels forced before the change are kept (the river stage here).
    system.force(|f| f.set(river, 31.0)).unwrap();
    system.set_exchange(river, 8e-6).unwrap();
    assert!(system.rhs()[0] > fresh.rhs()[0]);
}

#[test]
fn a_refused_change_leaves_the_system_as_it_was() {
    let grid = Grid::new(24, 16).unwrap();
    let (model, river, _) = aquifer(&field(grid, 1.0));
    let mut system = model.assemble().unwrap();
    let before = (bands_bits(system.operator()), bits(system.rhs()));
    let bad = Field::from_fn(grid, |i, j| if (i, j) == (3, 4) { -1.0 } else { 1e-4 });
    let err = system
        .set_conductivity(Conductivity::isotropic(bad))
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::InvalidProperty);
    assert_eq!(
        err.location(),
        Some(quintet::Location::on(grid, 4 * 24 + 3))
    );
    let err = system.set_exchange(river, vec![1.0; 3]).unwrap_err();
    assert_eq!(err.kind(), ErrorKind::LengthMismatch);
    assert_eq!((bands_bits(system.operator()), bits(system.rhs())), before);
    // A handle from another model is refused, not misapplied.
    let (_, other_river, _) = aquifer(&field(grid, 1.0));
    assert_eq!(
        system.set_exchange(other_river, 1e-6).unwrap_err().kind(),
        ErrorKind::UnknownCondition
    );
}

/// A stepper changed in place steps exactly as a stepper set up fresh with the new properties
/// from the same state (backward Euler carries no other history).
#[test]
fn a_stepper_changed_in_place_steps_like_a_fresh_one() {
    let grid = Grid::new(24, 16).unwrap();
    let (mut model, _, well) = aquifer(&field(grid, 1.0));
    model.set_storage(Storage::per_area(2e-4)).unwrap();
    let start = vec![28.5; grid.cells()];
    let mut run =
        Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 3600.0, 0.0, &start).unwrap();
    run.solver_mut().options = SolveOptions::default().tolerance(1e-12);
    run.step().unwrap();
    let clay = field(grid, 50.0);
    run.set_conductivity(Conductivity::isotropic(clay.clone()))
        .unwrap();
    run.set_storage(Storage::per_area(5e-4)).unwrap();

    let (mut changed, _, _) = aquifer(&clay);
    changed.set_storage(Storage::per_area(5e-4)).unwrap();
    let mut fresh = Stepper::with_jacobi(
        &changed,
        TimeScheme::BackwardEuler,
        3600.0,
        run.time(),
        run.solution(),
    )
    .unwrap();
    fresh.solver_mut().options = SolveOptions::default().tolerance(1e-12);
    assert_eq!(bands_bits(run.operator()), bands_bits(fresh.operator()));
    // The in-place stepper keeps the Jacobi scaling it was built with; the solutions agree to
    // the solver tolerance (relative 1e-12 of ‖b‖, times κ ≤ 1e4 here) and the step budgets
    // both close.
    run.step().unwrap();
    fresh.step().unwrap();
    let diff = run
        .solution()
        .iter()
        .zip(fresh.solution())
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    assert!(diff < 1e-6, "{diff}");
    let budget = run.budget().unwrap();
    assert!(budget.imbalance_percent().abs() < 1e-6);
    assert_eq!(budget.line(well).map(|l| l.outflow), Some(3e-3));
}

/// The fastest solver with the natural code: multigrid built from the system's operator, the
/// system then forced and solved; a stepper whose driver is built by a closure from the step
/// operator. Both compile and run without cloning the operator.
#[test]
fn the_model_takes_the_multigrid_solver_the_natural_way() {
    let grid = Grid::new(24, 16).unwrap();
    let (mut model, _, well) = aquifer(&field(grid, 1e3));
    let mut system = model.assemble().unwrap();
    let mut pcg =
        Pcg::new(Multigrid::new(system.operator(), MultigridSettings::default()).unwrap());
    system.force(|f| f.set(well, -4e-3)).unwrap();
    let mut h = system.initial_solution(29.0);
    let report = system
        .solve(&mut pcg, &mut h, &mut Workspace::new())
        .unwrap();
    assert!(report.iterations <= 20, "{report}");

    model.set_storage(Storage::per_area(2e-4)).unwrap();
    let mut run = Stepper::new(&model, TimeScheme::CrankNicolson, 3600.0, 0.0, &h, |op| {
        Ok(Pcg::new(Multigrid::new(op, MultigridSettings::default())?))
    })
    .unwrap();
    let mut residual = 0.0;
    for _ in 0..3 {
        let report = run.step().unwrap();
        assert!(report.iterations <= 10, "{report}");
        residual = report.residual_norm;
    }
    // The budget's net is the sum of the last solve's residuals (the discrete balance of each
    // cell; common practice), at most √n·‖r‖₂ by Cauchy–Schwarz: the imbalance is bounded by
    // the stopping tolerance, not by how far below it the last iteration happened to land.
    let budget = run.budget().unwrap();
    let mean = 0.5 * (budget.total_in + budget.total_out);
    let bound = 100.0 * (grid.cells() as f64).sqrt() * residual / mean;
    assert!(
        budget.imbalance_percent().abs() <= bound,
        "{} % against {bound} %",
        budget.imbalance_percent()
    );
}

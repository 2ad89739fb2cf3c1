//! The stepper allocates nothing per step: a step makes exactly as many heap allocations as
//! the driver's own solves (each builds its `Report`), measured with a counting allocator on
//! the test's thread. The grid is below the parallel threshold, so all work runs on it.

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;

use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
use quintet::prelude::*;

struct Counting;

thread_local! {
    static ALLOCATIONS: Cell<usize> = const { Cell::new(0) };
}

// SAFETY: forwards every call to the system allocator unchanged; the thread-local counter has
// a const initialiser and no destructor, so touching it never allocates or re-enters.
unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        ALLOCATIONS.with(|c| c.set(c.get() + 1));
        // SAFETY: same contract as the caller's.
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        // SAFETY: same contract as the caller's.
        unsafe { System.dealloc(ptr, layout) }
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        ALLOCATIONS.with(|c| c.set(c.get() + 1));
        // SAFETY: same contract as the caller's.
        unsafe { System.realloc(ptr, layout, new_size) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

fn allocations_during(f: impl FnOnce()) -> usize {
    let before = ALLOCATIONS.with(|c| c.get());
    f();
    ALLOCATIONS.with(|c| c.get()) - before
}

fn model() -> (Model, quintet::model::ConditionId) {
    let geometry = Geometry::cell_centered(60, 40, 10.0, 10.0, 8.0).unwrap();
    let grid = geometry.grid();
    let mut model = Model::new(geometry, Conductivity::isotropic(1e-4)).unwrap();
    model.set_storage(Storage::per_area(1e-4)).unwrap();
    model.prescribe_edge("river", Side::West, 5.0).unwrap();
    model.edge_exchange("lake", Side::East, 1e-6, 4.0).unwrap();
    model.areal_source("recharge", 5e-9).unwrap();
    let well = model.point_source("well", grid.index(30, 20), 0.0).unwrap();
    (model, well)
}

#[test]
fn steps_allocate_nothing() {
    let (model, well) = model();
    let n = model.grid().cells();
    for (scheme, damped, solves_per_step) in [
        (TimeScheme::BackwardEuler, 0, 1),
        (TimeScheme::CrankNicolson, 0, 1),
        (TimeScheme::CrankNicolson, 100, 2),
    ] {
        let mut stepper = Stepper::with_jacobi(&model, scheme, 3600.0, 0.0, &vec![5.0; n])
            .unwrap()
            .damped_start(damped);
        stepper.step().unwrap(); // warm-up: the driver sizes its history buffer
                                 // The driver alone, on the stepper's own operator with a warm workspace.
        let op = stepper.operator().clone();
        let mut pcg = Pcg::new(Jacobi::new(&op).unwrap());
        let mut ws = Workspace::for_grid(op.grid());
        let rhs = vec![1e-3; n];
        let mut x = stepper.solution().to_vec();
        pcg.solve_with(&op, &rhs, &mut x, &mut ws).unwrap();
        let per_solve = allocations_during(|| {
            pcg.solve_with(&op, &rhs, &mut x, &mut ws).unwrap();
        });
        for _ in 0..3 {
            let per_step = allocations_during(|| {
                stepper
                    .step_with(|t, f| f.set(well, -1e-3 * (t / 3600.0).min(4.0)))
                    .unwrap();
            });
            println!("{scheme:?} (damped {damped}): {per_step} allocations per step, {per_solve} per bare solve");
            assert_eq!(per_step, solves_per_step * per_solve);
            // A warm solve allocates nothing (the report shares the workspace's history and
            // the driver's name), so neither does a step.
            assert_eq!(per_step, 0, "{scheme:?} (damped {damped})");
        }
    }
}

/// The same with a flow field carrying heat: the step operator is not symmetric and the
/// stepper runs the model's default driver for it (standalone SIP), which allocates nothing
/// per warm solve, so neither does a step.
#[test]
fn steps_with_advection_allocate_nothing() {
    use quintet::model::{AdvectionScheme, FaceFlows};
    let (mut model, well) = model();
    let n = model.grid().cells();
    let geometry = model.geometry().clone();
    let flows = FaceFlows::uniform(&geometry, 2e-6, -5e-7, 4.18e6).unwrap();
    model
        .set_advection(flows, AdvectionScheme::PowerLaw)
        .unwrap();
    model.inflow_value("upstream", Side::West, 5.0).unwrap();
    model.inflow_value("north side", Side::North, 4.5).unwrap();
    for (scheme, damped, solves_per_step) in [
        (TimeScheme::BackwardEuler, 0, 1),
        (TimeScheme::CrankNicolson, 0, 1),
        (TimeScheme::CrankNicolson, 100, 2),
    ] {
        let mut stepper = Stepper::with_default_solver(&model, scheme, 3600.0, 0.0, &vec![5.0; n])
            .unwrap()
            .damped_start(damped);
        stepper.step().unwrap(); // warm-up: the driver sizes its history buffer
        let op = stepper.operator().clone();
        let mut sip = Sip::new(&op, SipSettings::default()).unwrap();
        let mut ws = Workspace::for_grid(op.grid());
        let rhs = vec![1e-3; n];
        let mut x = stepper.solution().to_vec();
        sip.solve_with(&op, &rhs, &mut x, &mut ws).unwrap();
        let per_solve = allocations_during(|| {
            sip.solve_with(&op, &rhs, &mut x, &mut ws).unwrap();
        });
        for _ in 0..3 {
            let per_step = allocations_during(|| {
                stepper
                    .step_with(|t, f| f.set(well, -1e-3 * (t / 3600.0).min(4.0)))
                    .unwrap();
            });
            println!("advection, {scheme:?} (damped {damped}): {per_step} allocations per step, {per_solve} per bare solve");
            assert_eq!(per_step, solves_per_step * per_solve);
            assert_eq!(per_step, 0, "advection, {scheme:?} (damped {damped})");
        }
    }
}

/// The outer iteration of a nonlinear model allocates nothing per outer iteration beyond what
/// its driver's solves allocate (their `Report`): two more outer iterations cost exactly two
/// more solves' allocations.
#[test]
fn outer_iterations_allocate_nothing_beyond_the_driver() {
    use quintet::model::{Aquifer, NonlinearSystem, OuterMethod, OuterSettings};
    let (model, well) = model();
    let mut linear = model.assemble().unwrap();
    linear.force(|f| f.set(well, -2e-3)).unwrap();
    let op = linear.operator().clone();
    let mut cg = Cg::default();
    let mut ws = Workspace::for_grid(op.grid());
    let n = op.grid().cells();
    let rhs = vec![1e-3; n];
    let mut x = vec![5.0; n];
    cg.solve_with(&op, &rhs, &mut x, &mut ws).unwrap();
    let per_solve = allocations_during(|| {
        x.fill(5.0);
        cg.solve_with(&op, &rhs, &mut x, &mut ws).unwrap();
    });

    let mut system = NonlinearSystem::aquifer(&model, Aquifer::unconfined(0.0)).unwrap();
    system.force(|f| f.set(well, -2e-3)).unwrap();
    let mut run = |outer: usize| {
        let settings = OuterSettings {
            max_outer: outer,
            change_tolerance: 0.0,
            residual_tolerance: 0.0,
            ..OuterSettings::new(OuterMethod::Picard)
        };
        let mut h = system.initial_solution(5.0);
        allocations_during(|| {
            let result = system.solve_with(&mut cg, &mut ws, &mut h, &settings, &mut |_| {});
            assert!(result.is_err()); // tolerances of zero are never met
        })
    };
    run(2); // warm-up
    let (two, four) = (run(2), run(4));
    println!("allocations: 2 outer {two}, 4 outer {four}, one solve {per_solve}");
    assert_eq!(four - two, 2 * per_solve);
}

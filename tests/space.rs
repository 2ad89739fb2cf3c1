//! The one owner of global reductions and threads: every reduction of every engine, of the
//! model's validation and budget passes through the `Space` a caller gives (a counting space
//! sees them), a preconditioner application reduces nothing, and no file of the crate but the
//! space and the block executor reduces over a vector or starts threads (a scan of the
//! sources). A distributed space plugs in at exactly this seam (common practice in parallel
//! numerical libraries: reductions are the only global communication of a Krylov method).

mod common;
mod precond_problems;

use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::Arc;

use common::engines::{engines, preconditioners};
use common::random_sdd;
use quintet::model::{Conductivity, Geometry, Model, Stepper, Storage, TimeScheme};
use quintet::prelude::*;
use quintet::space::{combine_in_order, Combine, Space};

/// Counts the reductions it performs; threads allowed.
#[derive(Debug, Default)]
struct Counting {
    reductions: AtomicUsize,
}

impl Counting {
    fn count(&self) -> usize {
        self.reductions.load(Ordering::SeqCst)
    }
}

impl Space for Counting {
    fn threaded(&self) -> bool {
        true
    }
    fn combine_f64(&self, partials: &[f64], ops: &[Combine], out: &mut [f64]) {
        self.reductions.fetch_add(1, Ordering::SeqCst);
        combine_in_order(partials, ops, out);
    }
    fn combine_f32(&self, partials: &[f32], ops: &[Combine], out: &mut [f32]) {
        self.reductions.fetch_add(1, Ordering::SeqCst);
        combine_in_order(partials, ops, out);
    }
}

#[test]
fn every_engine_reduces_through_the_space_it_is_given() {
    // Large enough for several blocks and the threaded path.
    let p = random_sdd(230, 160, 12, 0.05, false);
    let op = p.banded();
    for engine in engines() {
        let space = Arc::new(Counting::default());
        let mut ws = Workspace::new().with_space(space.clone());
        let options = SolveOptions::default().tolerance(1e-8).max_iterations(50);
        let mut x = p.x0.clone();
        let result = engine
            .solver(&op, options)
            .solve_with(&op, &p.rhs, &mut x, &mut ws);
        let report = match &result {
            Ok(r) => r,
            Err(e) => e.report().expect("an iteration error"),
        };
        // The input scans (rhs, x), ‖b‖ and ‖r₀‖, then at least the residual of each
        // iteration.
        assert!(
            space.count() >= 4 + report.iterations,
            "{}: {} reductions for {} iterations",
            engine.name,
            space.count(),
            report.iterations
        );
    }
}

#[test]
fn a_preconditioner_application_reduces_nothing() {
    let p = random_sdd(230, 160, 13, 0.05, false);
    let op = p.banded();
    let r: Vec<f64> = (0..op.len()).map(|k| (0.37 * k as f64).sin()).collect();
    let mut z = vec![0.0; r.len()];
    for mut pre in preconditioners(&op) {
        let space = Counting::default();
        pre.apply(&op, &space, &r, &mut z);
        assert_eq!(space.count(), 0, "{}", pre.name());
    }
}

#[test]
fn a_nonsymmetric_preconditioner_application_reduces_nothing() {
    let (op, _, _) = precond_problems::advection(180, 10.0);
    let plain = SipSettings {
        symmetrised: false,
        ..Default::default()
    };
    let choices: Vec<Box<dyn Preconditioner<f64>>> = vec![
        Box::new(Ilu0::new(&op).unwrap()),
        Box::new(Sip::new(&op, plain).unwrap()),
        Box::new(Multigrid::new(&op, MultigridSettings::default()).unwrap()),
    ];
    let r: Vec<f64> = (0..op.len()).map(|k| (0.37 * k as f64).sin()).collect();
    let mut z = vec![0.0; r.len()];
    for mut pre in choices {
        let space = Counting::default();
        pre.apply(&op, &space, &r, &mut z);
        assert_eq!(space.count(), 0, "{}", pre.name());
    }
}

#[test]
fn the_models_validation_and_budgets_reduce_through_its_space() {
    let geometry = Geometry::cell_centered(40, 30, 5.0, 5.0, 2.0).unwrap();
    let mut model = Model::new(geometry, Conductivity::isotropic(1e-4)).unwrap();
    model.prescribe_edge("lake", Side::West, 10.0).unwrap();
    model.areal_source("recharge", 1e-8).unwrap();
    model.point_source("well", 615, -2e-4).unwrap();
    let space = Arc::new(Counting::default());
    model.set_space(space.clone());

    let system = model.assemble().unwrap();
    let validation = space.count();
    assert!(validation > 0, "the property scan of the assembly");
    let mut h = system.initial_solution(10.0);
    let mut ws = Workspace::new().with_space(space.clone());
    system.solve(&mut Cg::default(), &mut h, &mut ws).unwrap();
    let solved = space.count();
    system.budget(&h).unwrap();
    assert!(space.count() > solved, "the budget's line totals");

    model.set_storage(Storage::per_area(1e-4)).unwrap();
    let before = space.count();
    let mut run = Stepper::with_jacobi(&model, TimeScheme::BackwardEuler, 3600.0, 0.0, &h).unwrap();
    run.step().unwrap();
    let stepped = space.count();
    assert!(
        stepped > before,
        "a time step reduces through the model's space"
    );
    run.budget().unwrap();
    assert!(space.count() > stepped, "the step budget's totals");
}

/// The source scan behind "grep finds no global reduction outside the one owner": outside
/// `space.rs` and `blocks.rs`, no line of the crate sums, folds or starts parallel work, unless
/// it says why the sum is local (`// local:` on the line: four faces of one cell, the lines of
/// a budget that are totals already).
#[test]
fn no_reduction_or_thread_outside_the_owner() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../src");
    let mut offending = Vec::new();
    let mut stack = vec![root.clone()];
    while let Some(dir) = stack.pop() {
        for entry in std::fs::read_dir(&dir).unwrap() {
            let path = entry.unwrap().path();
            if path.is_dir() {
                stack.push(path);
                continue;
            }
            let name = path
                .strip_prefix(&root)
                .unwrap()
                .to_string_lossy()
                .to_string();
            if name == "space.rs" || name == "blocks.rs" || !name.ends_with(".rs") {
                continue;
            }
            let text = std::fs::read_to_string(&path).unwrap();
            for (n, line) in text.lines().enumerate() {
                let code = line.trim_start();
                if code.starts_with("//") {
                    continue;
                }
                let reduces = [
                    ".sum()",
                    ".sum::<",
                    ".product()",
                    "fold(",
                    "par_",
                    "rayon::",
                ]
                .iter()
                .any(|p| code.contains(p));
                if reduces && !code.contains("// local:") {
                    offending.push(format!("src/{name}:{}: {}", n + 1, code));
                }
            }
        }
    }
    assert!(
        offending.is_empty(),
        "reductions or threads outside the space:\n{}",
        offending.join("\n")
    );
}

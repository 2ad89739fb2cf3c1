//! The outer iteration of nonlinear models: Newton converges quadratically near the solution
//! and Picard linearly (measured orders of successive changes), the per-iteration record,
//! the typed error that keeps the last iterate, and the stopping rule on both change and
//! residual.
//!
//! The test problem is steady unconfined flow between two lakes with recharge (Dupuit–
//! Forchheimer), whose nonlinearity is the saturated thickness `b = h − bottom`.

use quintet::model::{
    Aquifer, Axis, Conductivity, Geometry, Model, NonlinearSystem, OuterMethod, OuterSettings,
    OuterStep,
};
use quintet::prelude::*;

/// Strip aquifer 1 km long, lakes at 10 m and 6 m above the base, recharge 1e-8 m/s.
fn strip(n: usize) -> NonlinearSystem {
    let x = Axis::uniform_nodes(n, 1000.0 / (n - 1) as f64).unwrap();
    let geometry = Geometry::new(x, Axis::uniform_cells(1, 10.0).unwrap(), 10.0).unwrap();
    let mut model = Model::new(geometry, Conductivity::isotropic(1e-4)).unwrap();
    model.prescribe_edge("west lake", Side::West, 10.0).unwrap();
    model.prescribe_edge("east lake", Side::East, 6.0).unwrap();
    model.areal_source("recharge", 1e-8).unwrap();
    NonlinearSystem::aquifer(&model, Aquifer::unconfined(0.0)).unwrap()
}

/// Run to the rounding level and return every outer step.
fn steps(method: OuterMethod, start: f64) -> Vec<OuterStep> {
    let mut system = strip(81);
    let mut h = system.initial_solution(start);
    let settings = OuterSettings {
        change_tolerance: 1e-12,
        residual_tolerance: 1e-14,
        inner_min: 1e-14,
        max_outer: 200,
        ..OuterSettings::new(method)
    };
    let mut log = Vec::new();
    let result = system.solve(&mut h, &settings, &mut |s| log.push(*s));
    for s in &log {
        println!("{method:?}: {s}");
    }
    // Tolerances at the rounding level may not all be met; the steps are what we measure.
    let _ = result;
    log
}

/// Estimated order `p = ln(c₊/c)/ln(c/c₋)` of successive changes `c₋, c, c₊`, kept while
/// the changes are well above rounding (1e-10 m on heads of 10 m).
fn orders(log: &[OuterStep]) -> Vec<f64> {
    log.windows(3)
        .filter(|w| w[2].change > 1e-10)
        .map(|w| (w[2].change / w[1].change).ln() / (w[1].change / w[0].change).ln())
        .collect()
}

/// Newton's method converges quadratically near a solution where the Jacobian is regular
/// and Lipschitz (Kelley 1995, *Iterative Methods for Linear and Nonlinear Equations*, SIAM,
/// Theorem 5.1.2), and stays quadratic with inner tolerances η = O(‖F‖) (Dembo, Eisenstat &
/// Steihaug 1982, *SIAM J. Numer. Anal.* 19(2), Theorem 3.3; from memory). The last measured
/// order above rounding must be near 2 (at least 1.7).
#[test]
fn newton_converges_quadratically() {
    let log = steps(OuterMethod::Newton, 2.0);
    let p = orders(&log);
    println!("Newton orders: {p:?}");
    let last = *p.last().expect("at least three steps above rounding");
    assert!(last > 1.7, "Newton order {last} is not near 2");
    assert!(log.last().unwrap().change < 1e-9);
}

/// A Picard (fixed-point) iteration converges linearly: the ratio of successive changes
/// settles near the contraction factor instead of falling to zero (Kelley 1995, ch. 4; a
/// theorem for contractions). Measured here over the last five ratios above rounding: each
/// within a factor 3 of their geometric mean, which lies below 1; Newton's ratios over the
/// same stretch fall by orders of magnitude.
#[test]
fn picard_converges_linearly() {
    let ratios = |log: &[OuterStep]| -> Vec<f64> {
        log.windows(2)
            .filter(|w| w[1].change > 1e-10)
            .map(|w| w[1].change / w[0].change)
            .collect()
    };
    let log = steps(OuterMethod::Picard, 2.0);
    let r = ratios(&log);
    let tail = &r[r.len() - 5..];
    let mean = (tail.iter().map(|q| q.ln()).sum::<f64>() / tail.len() as f64).exp();
    println!("Picard ratios of successive changes: {tail:.3?}, geometric mean {mean:.3}");
    assert!(mean < 0.5 && mean > 1e-3, "Picard ratio {mean}");
    for &q in tail {
        assert!(q / mean < 3.0 && mean / q < 3.0, "ratio {q} against {mean}");
    }
    let newton = steps(OuterMethod::Newton, 2.0);
    let rn = ratios(&newton);
    println!("Newton ratios: {rn:?}");
    assert!(rn[rn.len() - 1] < 1e-2 * rn[0]);
    assert!(newton.len() < log.len());
}

/// The observer sees one record per outer iteration, numbered from 1, with the inner
/// iterations and a tightening inner tolerance; the report sums them. Common practice.
#[test]
fn observer_records_every_outer_iteration() {
    let mut system = strip(41);
    let mut h = system.initial_solution(8.0);
    let mut log = Vec::new();
    let report = system
        .solve(&mut h, &OuterSettings::default(), &mut |s| log.push(*s))
        .unwrap();
    assert_eq!(log.len(), report.outer_iterations);
    assert_eq!(
        log.iter().map(|s| s.inner_iterations).sum::<usize>(),
        report.inner_iterations
    );
    for (n, s) in log.iter().enumerate() {
        assert_eq!(s.outer, n + 1);
        assert!(s.inner_iterations > 0);
    }
    assert!(log.last().unwrap().inner_tolerance <= log[0].inner_tolerance);
    // Both stopping criteria hold at the end.
    let last = log.last().unwrap();
    assert!(last.change <= 1e-6);
    assert!(last.residual <= 1e-8 * report.initial_residual);
}

/// An outer iteration that runs out of iterations is an error of its own kind, with the
/// outer count and the last residual, the last inner report, and the last iterate in `x`.
#[test]
fn failure_keeps_the_last_iterate() {
    let mut system = strip(41);
    let mut h = system.initial_solution(2.0);
    let mut log = Vec::new();
    let settings = OuterSettings {
        max_outer: 2,
        ..OuterSettings::new(OuterMethod::Picard)
    };
    let err = system
        .solve(&mut h, &settings, &mut |s| log.push(*s))
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::OuterNotConverged);
    assert!(err.kind().is_solve());
    assert_eq!(err.iteration(), Some(2));
    assert_eq!(err.value(), Some(log[1].residual));
    assert!(err.report().is_some());
    assert!(err.to_string().contains("Picard"), "{err}");
    // x is the second iterate: running two iterations again from the start gives its bits.
    let mut again = system.initial_solution(2.0);
    let _ = system.solve(&mut again, &settings, &mut |_| {});
    assert_eq!(h, again);
    assert!(h[20] != 2.0);
}

/// Settings outside their range are refused before anything runs.
#[test]
fn invalid_settings_are_refused() {
    let mut system = strip(11);
    let mut h = system.initial_solution(8.0);
    for bad in [
        OuterSettings {
            max_outer: 0,
            ..Default::default()
        },
        OuterSettings {
            inner_min: 0.0,
            ..Default::default()
        },
        OuterSettings {
            change_tolerance: f64::NAN,
            ..Default::default()
        },
    ] {
        let err = system.solve(&mut h, &bad, &mut |_| {}).unwrap_err();
        assert_eq!(err.kind(), ErrorKind::InvalidSetting);
    }
}

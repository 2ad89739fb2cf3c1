//! Conduction with a temperature-dependent conductivity and radiation at an edge, against
//! exact solutions: the plane wall with `k = k₀(1 + βT)` through the Kirchhoff transform
//! (observed order 2, and the heat flux), a tabulated law that reproduces the linear one,
//! and a rod whose end radiates (surface energy balance).

use quintet::model::{
    Axis, Conductivity, ConductivityLaw, Geometry, Model, NonlinearSystem, OuterMethod,
    OuterSettings, STEFAN_BOLTZMANN,
};
use quintet::prelude::*;

fn tight(method: OuterMethod) -> OuterSettings {
    OuterSettings {
        change_tolerance: 1e-10,
        residual_tolerance: 1e-13,
        ..OuterSettings::new(method)
    }
}

/// A rod of `n` nodes over `length` m, 1 cm x 1 cm in section.
fn rod(n: usize, length: f64, k0: f64) -> Model {
    let geometry = Geometry::new(
        Axis::uniform_nodes(n, length / (n - 1) as f64).unwrap(),
        Axis::uniform_cells(1, 0.01).unwrap(),
        0.01,
    )
    .unwrap();
    Model::new(geometry, Conductivity::isotropic(k0)).unwrap()
}

const K0: f64 = 20.0; // W/(m·K)
const BETA: f64 = 5e-3; // 1/K
const T1: f64 = 400.0; // K, x = 0
const T2: f64 = 300.0; // K, x = L
const L: f64 = 0.2; // m

/// Kirchhoff transform `U = ∫₀ᵀ k/k₀ dT = T + βT²/2` turns `d/dx(k dT/dx) = 0` into
/// `U'' = 0`: `U` is linear between the walls, `T = (√(1 + 2βU) − 1)/β`, and the heat flux is
/// `k₀(U₁ − U₂)/L` (Carslaw & Jaeger 1959, *Conduction of Heat in Solids*, 2nd ed., §1.8;
/// Incropera & DeWitt 2007, *Fundamentals of Heat and Mass Transfer*, 6th ed., §3.1 with
/// variable conductivity; both from memory).
fn kirchhoff(x: f64) -> f64 {
    let u = |t: f64| t + BETA * t * t / 2.0;
    let ux = u(T1) + (u(T2) - u(T1)) * x / L;
    ((1.0 + 2.0 * BETA * ux).sqrt() - 1.0) / BETA
}

fn wall_run(n: usize, law: ConductivityLaw, method: OuterMethod) -> (Vec<f64>, f64, f64) {
    let mut model = rod(n, L, K0);
    let hot = model.prescribe_edge("hot face", Side::West, T1).unwrap();
    model.prescribe_edge("cold face", Side::East, T2).unwrap();
    let geometry = model.geometry().clone();
    let mut system = NonlinearSystem::thermal(&model, law).unwrap();
    let mut t = system.initial_solution(350.0);
    system.solve(&mut t, &tight(method), &mut |_| {}).unwrap();
    let mut worst: f64 = 0.0;
    for (k, &v) in t.iter().enumerate() {
        worst = worst.max((v - kirchhoff(geometry.position(k).0)).abs());
    }
    let budget = system.budget(&t).unwrap();
    let flux = budget.line(hot).unwrap().net() / 1e-4; // W/m² through 1 cm²
    (t, worst, flux)
}

/// Observed order 2 (the half-cells in series at their own temperatures are second order on
/// smooth fields), and the heat flux through the hot face within the same accuracy.
#[test]
fn plane_wall_with_linear_conductivity() {
    let u = |t: f64| t + BETA * t * t / 2.0;
    let exact_flux = K0 * (u(T1) - u(T2)) / L;
    let law = ConductivityLaw::linear(BETA, 0.0).unwrap();
    let mut errors = Vec::new();
    for n in [11, 21, 41, 81] {
        let (_, e, flux) = wall_run(n, law.clone(), OuterMethod::Newton);
        let fe = (flux - exact_flux).abs() / exact_flux;
        println!(
            "Kirchhoff wall, {n} nodes: largest error {e:.3e} K, flux error {fe:.3e} (relative)"
        );
        errors.push((e, fe));
    }
    for w in errors.windows(2) {
        println!("order {:.2}", (w[0].0 / w[1].0).log2());
    }
    let p = (errors[2].0 / errors[3].0).log2();
    assert!((p - 2.0).abs() < 0.2, "order {p}");
    assert!(errors[3].0 < 1e-2);
    assert!(errors[3].1 < 1e-4);
    // Picard reaches the same discrete solution.
    let (newton, _, _) = wall_run(41, law.clone(), OuterMethod::Newton);
    let (picard, _, _) = wall_run(41, law, OuterMethod::Picard);
    for (a, b) in newton.iter().zip(&picard) {
        assert!((a - b).abs() < 1e-7);
    }
}

/// A table of the same linear law, interpolated linearly, is the same law: the solutions
/// agree to the outer tolerance (interpolation of a linear function is exact; a theorem).
#[test]
fn tabulated_law_reproduces_the_linear_one() {
    let points: Vec<(f64, f64)> = (0..=6)
        .map(|i| {
            let t = 250.0 + 30.0 * i as f64;
            (t, 1.0 + BETA * t)
        })
        .collect();
    let table = ConductivityLaw::table(points).unwrap();
    let linear = ConductivityLaw::linear(BETA, 0.0).unwrap();
    let (a, _, _) = wall_run(41, table, OuterMethod::Newton);
    let (b, _, _) = wall_run(41, linear, OuterMethod::Newton);
    for (x, y) in a.iter().zip(&b) {
        assert!((x - y).abs() < 1e-8, "{x} against {y}");
    }
}

/// A rod held at 500 K at one end, its other end radiating to surroundings at 300 K with
/// emissivity 0.8; constant k. The profile is linear, and the end temperature `T_e` solves
/// the surface energy balance `k(T₁ − T_e)/L = εσ(T_e⁴ − T_s⁴)` (Incropera & DeWitt 2007,
/// §1.3.1, surface energy balance, from memory; σ from CODATA 2018). The node-centred
/// scheme is exact for a linear profile, so the end temperature must match to the outer
/// tolerance; the same in °C with an offset of 273.15 K.
#[test]
fn rod_end_radiating_to_surroundings() {
    let (k, length, t1, ts, eps): (f64, f64, f64, f64, f64) = (15.0, 0.05, 500.0, 300.0, 0.8);
    let balance =
        |te: f64| k * (t1 - te) / length - eps * STEFAN_BOLTZMANN * (te.powi(4) - ts.powi(4));
    let (mut lo, mut hi) = (ts, t1);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if balance(mid) > 0.0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let exact_end = 0.5 * (lo + hi);
    for (offset, shift) in [(0.0, 0.0), (273.15, 273.15)] {
        for method in [OuterMethod::Newton, OuterMethod::Picard] {
            let mut model = rod(21, length, k);
            model
                .prescribe_edge("heater", Side::West, t1 - shift)
                .unwrap();
            let mut system =
                NonlinearSystem::thermal(&model, ConductivityLaw::linear(0.0, 0.0).unwrap())
                    .unwrap();
            system
                .add_radiation("to the room", Side::East, eps, ts - shift, offset)
                .unwrap();
            let mut t = system.initial_solution(t1 - shift);
            // T⁴ terms of 6e10 K⁴ put the residual's rounding level near 1e-13 of its start.
            let settings = OuterSettings {
                residual_tolerance: 1e-11,
                ..tight(method)
            };
            let report = system.solve(&mut t, &settings, &mut |_| {}).unwrap();
            let end = t[20] + shift;
            println!(
                "radiating rod, offset {offset}, {method:?}: end {end:.9} K against {exact_end:.9} K, {} outer iterations",
                report.outer_iterations
            );
            assert!((end - exact_end).abs() < 1e-7, "{end} against {exact_end}");
            // The budget: what the heater delivers leaves by radiation.
            let budget = system.budget(&t).unwrap();
            let radiated = budget.lines.last().unwrap();
            assert_eq!(radiated.label, "to the room");
            let delivered = budget.lines[0].net();
            assert!((delivered - radiated.outflow).abs() < 1e-9 * delivered);
        }
    }
}

/// Emissivity outside [0, 1] and radiation on an aquifer are refused.
#[test]
fn radiation_settings_are_checked() {
    let mut model = rod(5, 0.1, 1.0);
    model.prescribe_edge("end", Side::West, 300.0).unwrap();
    let mut system =
        NonlinearSystem::thermal(&model, ConductivityLaw::linear(0.0, 0.0).unwrap()).unwrap();
    let err = system
        .add_radiation("bad", Side::East, 1.5, 300.0, 0.0)
        .unwrap_err();
    assert_eq!(err.kind(), ErrorKind::InvalidSetting);
    let mut aquifer =
        NonlinearSystem::aquifer(&model, quintet::model::Aquifer::unconfined(0.0)).unwrap();
    assert!(aquifer
        .add_radiation("sun", Side::East, 0.5, 300.0, 0.0)
        .is_err());
}

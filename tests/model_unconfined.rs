//! Unconfined and convertible aquifers against published solutions: Dupuit–Forchheimer flow
//! between two water levels with recharge (head profile, discharge, observed order for both
//! face weightings), the unconfined Thiem well, budget closure with drying cells (steady and
//! per time step), and the warning for a confined aquifer drawn below its top.

use quintet::model::{
    Aquifer, AquiferKind, Axis, Conductivity, FaceWeighting, Geometry, Model, NonlinearSystem,
    OuterMethod, OuterSettings,
};
use quintet::prelude::*;

/// Tight outer tolerances: the discretisation error, not the iteration, is measured.
fn tight() -> OuterSettings {
    OuterSettings {
        change_tolerance: 1e-10,
        residual_tolerance: 1e-12,
        ..OuterSettings::new(OuterMethod::Newton)
    }
}

const K: f64 = 1e-4; // m/s
const LENGTH: f64 = 1000.0; // m
const H0: f64 = 10.0; // m above the base, west
const HL: f64 = 6.0; // east
const W: f64 = 1e-8; // recharge, m/s

/// Dupuit–Forchheimer with uniform recharge `W` between fixed levels `h₀` (x = 0) and `h_L`
/// (x = L): `h² = h₀² − (h₀² − h_L²)·x/L + (W/K)·x·(L − x)`, and the discharge per unit
/// width `q(x) = K(h₀² − h_L²)/(2L) + W(x − L/2)` (Bear 1979, *Hydraulics of Groundwater*,
/// ch. 5, unconfined flow under the Dupuit assumption; Freeze & Cherry 1979, *Groundwater*,
/// §5.5; both from memory).
fn dupuit(x: f64) -> f64 {
    (H0 * H0 - (H0 * H0 - HL * HL) * x / LENGTH + W / K * x * (LENGTH - x)).sqrt()
}

fn dupuit_discharge(x: f64) -> f64 {
    K * (H0 * H0 - HL * HL) / (2.0 * LENGTH) + W * (x - LENGTH / 2.0)
}

/// One Dupuit run on `n` nodes; returns the largest head error and the error of the
/// discharge into the model through the west lake (per metre of width).
fn dupuit_run(n: usize, faces: FaceWeighting) -> (f64, f64) {
    let dx = LENGTH / (n - 1) as f64;
    let width = 10.0;
    let geometry = Geometry::new(
        Axis::uniform_nodes(n, dx).unwrap(),
        Axis::uniform_cells(1, width).unwrap(),
        H0,
    )
    .unwrap();
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(K)).unwrap();
    let west = model.prescribe_edge("west lake", Side::West, H0).unwrap();
    model.prescribe_edge("east lake", Side::East, HL).unwrap();
    model.areal_source("recharge", W).unwrap();
    let aquifer = Aquifer::unconfined(0.0).faces(faces);
    let mut system = NonlinearSystem::aquifer(&model, aquifer).unwrap();
    let mut h = system.initial_solution(8.0);
    system.solve(&mut h, &tight(), &mut |_| {}).unwrap();
    let mut worst: f64 = 0.0;
    for (k, &v) in h.iter().enumerate() {
        worst = worst.max((v - dupuit(geometry.position(k).0)).abs());
    }
    let budget = system.budget(&h).unwrap();
    let q_west = budget.line(west).unwrap().net() / width;
    (worst, (q_west - dupuit_discharge(0.0)).abs())
}

/// Head profile and discharge to discretisation accuracy, with the observed order:
/// harmonic faces (half-cells of `K·b` in series) are second order; upstream saturated
/// thickness is first order (the face takes the thickness half a cell away). Orders from
/// four grids halving the spacing; the last ratio must lie within 0.25 of the theory.
#[test]
fn dupuit_forchheimer_with_recharge() {
    for (faces, order) in [
        (FaceWeighting::Harmonic, 2.0),
        (FaceWeighting::Upstream, 1.0),
    ] {
        let runs: Vec<(usize, f64, f64)> = [21, 41, 81, 161]
            .into_iter()
            .map(|n| {
                let (e, q) = dupuit_run(n, faces);
                (n, e, q)
            })
            .collect();
        for w in runs.windows(2) {
            let p = (w[0].1 / w[1].1).log2();
            let pq = (w[0].2 / w[1].2).log2();
            println!(
                "{faces:?}: {} -> {} nodes: head error {:.3e} -> {:.3e} m (order {p:.2}), discharge error {:.3e} -> {:.3e} m²/s (order {pq:.2})",
                w[0].0, w[1].0, w[0].1, w[1].1, w[0].2, w[1].2
            );
        }
        let last = &runs[runs.len() - 2..];
        let p = (last[0].1 / last[1].1).log2();
        assert!((p - order).abs() < 0.25, "{faces:?}: head order {p}");
        // Discretisation accuracy on the finest grid: heads within 1 cm of 10 m at worst,
        // discharge within 1 % of the west lake's.
        assert!(last[1].1 < 1e-2, "{faces:?}: head error {}", last[1].1);
        assert!(last[1].2 < 1e-2 * dupuit_discharge(0.0).abs());
    }
}

/// Unconfined Thiem: `h² − h_w² = (Q/(πK))·ln(r/r_w)`, i.e. between r and R,
/// `h(r)² = h(R)² − (Q/(πK))·ln(R/r)` (Thiem 1906; Bear 1979 and Freeze & Cherry 1979 as
/// above, from memory). Edge cells held at the analytic head; the well a point source. Same
/// tolerance as the confined Thiem check (tests/model_steady.rs): heads at r ≥ 3 cells
/// within 1 % of the drawdown, and closer on a grid a third the size.
#[test]
fn unconfined_thiem() {
    let (q, radius, h_r) = (0.03, 1000.0, 30.0); // m³/s, m, m above the base
    let exact = |r: f64| (h_r * h_r - q / (std::f64::consts::PI * K) * (radius / r).ln()).sqrt();
    for faces in [FaceWeighting::Harmonic, FaceWeighting::Upstream] {
        let mut worst = Vec::new();
        for (n, a) in [(51, 10.0), (153, 10.0 / 3.0)] {
            let geometry = Geometry::cell_centered(n, n, a, a, h_r).unwrap();
            let grid = geometry.grid();
            let centre = n as f64 * a / 2.0;
            let r_of = |c: usize| {
                let (x, y) = geometry.position(c);
                ((x - centre).powi(2) + (y - centre).powi(2)).sqrt()
            };
            let mut model = Model::new(geometry.clone(), Conductivity::isotropic(K)).unwrap();
            let edge = grid.edge_cells();
            let heads: Vec<f64> = edge.iter().map(|&c| exact(r_of(c))).collect();
            model.prescribe_cells("outer ring", edge, heads).unwrap();
            model
                .point_source("pumping well", grid.index(n / 2, n / 2), -q)
                .unwrap();
            let mut system =
                NonlinearSystem::aquifer(&model, Aquifer::unconfined(0.0).faces(faces)).unwrap();
            let mut h = system.initial_solution(h_r);
            system.solve(&mut h, &tight(), &mut |_| {}).unwrap();
            let mut max_rel: f64 = 0.0;
            for (c, &hc) in h.iter().enumerate() {
                let r = r_of(c);
                if r >= 3.0 * a - 1e-9 {
                    max_rel = max_rel.max((hc - exact(r)).abs() / (h_r - exact(r)));
                }
            }
            println!(
                "unconfined Thiem, {faces:?}, {n} x {n} cells of {a:.3} m: largest error at r >= 3 cells = {:.4} % of the drawdown",
                100.0 * max_rel
            );
            assert!(max_rel < 0.01, "{} %", 100.0 * max_rel);
            worst.push(max_rel);
        }
        assert!(worst[1] < worst[0]);
    }
}

/// A small aquifer whose base rises to a bedrock ridge east of a pumping well: pumping
/// lowers the water table below the ridge, whose cells run dry. The outer iteration
/// converges, the dry cells are reported, and the budget closes to the nonlinear residual
/// left (a conservation identity of the scheme: the lines sum to `−Σ F` over the free cells,
/// so `|in − out| ≤ √n·‖F‖₂`; common practice to check closure).
fn drying_model() -> (Model, Aquifer, Vec<usize>) {
    let geometry = Geometry::cell_centered(21, 21, 20.0, 20.0, 8.0).unwrap();
    let grid = geometry.grid();
    let mut model = Model::new(geometry, Conductivity::isotropic(5e-5)).unwrap();
    model.prescribe_edge("lake", Side::West, 6.0).unwrap();
    model.areal_source("recharge", 5e-9).unwrap();
    model
        .point_source("well", grid.index(12, 10), -2.5e-3)
        .unwrap();
    let ridge: Vec<usize> = (0..grid.cells())
        .filter(|&k| {
            let (i, j) = grid.coords(k);
            (14..=17).contains(&i) && (6..=14).contains(&j)
        })
        .collect();
    let bottom: Vec<f64> = (0..grid.cells())
        .map(|k| if ridge.contains(&k) { 5.5 } else { 0.0 })
        .collect();
    let aquifer = Aquifer::convertible(8.0, bottom).smoothing_width(0.05);
    (model, aquifer, ridge)
}

fn limited() -> OuterSettings {
    OuterSettings {
        max_change: 1.0,
        max_outer: 200,
        ..OuterSettings::default()
    }
}

#[test]
fn budget_closes_with_drying_cells_steady() {
    let (model, aquifer, ridge) = drying_model();
    let mut system = NonlinearSystem::aquifer(&model, aquifer).unwrap();
    let mut h = system.initial_solution(6.0);
    let report = system
        .solve(&mut h, &limited(), &mut |s| println!("{s}"))
        .unwrap();
    let check = system.check(&h).unwrap();
    println!("{check}");
    assert!(!check.dry.is_empty());
    assert!(
        check.dry.iter().all(|k| ridge.contains(k)),
        "only ridge cells dry"
    );
    let budget = system.budget(&h).unwrap();
    println!("{}", budget.table("m³/s"));
    let n = (system.grid().cells() as f64).sqrt();
    assert!(budget.net().abs() <= n * report.residual * (1.0 + 1e-9) + 1e-15);
    assert!(budget.total_in > 1e-3);
}

#[test]
fn budget_closes_with_drying_cells_every_step() {
    let (mut model, aquifer, ridge) = drying_model();
    model
        .set_storage(quintet::model::Storage::per_area(1e-4))
        .unwrap();
    let mut system = NonlinearSystem::aquifer(&model, aquifer.specific_yield(0.1)).unwrap();
    let mut h = system.initial_solution(6.0);
    let n = (system.grid().cells() as f64).sqrt();
    let mut dried = 0;
    for step in 0..15 {
        let previous = h.clone();
        system.set_step(Some((30.0 * 86_400.0, &previous))).unwrap();
        let report = system.solve(&mut h, &limited(), &mut |_| {}).unwrap();
        let budget = system.budget(&h).unwrap();
        let storage = budget.lines.last().unwrap();
        assert_eq!(storage.label, "storage");
        let dry = system.check(&h).unwrap().dry;
        println!(
            "day {}: {} outer, storage release {:.3e} m³/s, net {:.2e}, dry cells {}",
            30 * (step + 1),
            report.outer_iterations,
            storage.net(),
            budget.net(),
            dry.len()
        );
        assert!(storage.inflow > 0.0, "the well draws on storage");
        assert!(budget.net().abs() <= n * report.residual * (1.0 + 1e-9) + 1e-15);
        assert!(dry.iter().all(|k| ridge.contains(k)));
        dried = dried.max(dry.len());
    }
    assert!(dried > 0, "ridge cells run dry during the run");
}

/// A confined model whose heads fall far below the aquifer top solves without complaint;
/// the check says so, naming the cell and the depth (common practice: a head below the top
/// of a confined aquifer means it is no longer confined).
#[test]
fn confined_aquifer_drawn_below_its_top_is_reported() {
    let (top, bottom) = (30.0, 0.0);
    let geometry = Geometry::cell_centered(31, 31, 25.0, 25.0, top - bottom).unwrap();
    let grid = geometry.grid();
    let mut model = Model::new(geometry, Conductivity::isotropic(2e-5)).unwrap();
    model.prescribe_edge("far field", Side::West, 45.0).unwrap();
    model
        .prescribe_edge("far field east", Side::East, 45.0)
        .unwrap();
    model
        .point_source("well", grid.index(15, 15), -3e-2)
        .unwrap();
    let system = model.assemble().unwrap();
    let mut h = system.initial_solution(45.0);
    let mut pcg = Pcg::new(Jacobi::new(system.operator()).unwrap())
        .with_options(SolveOptions::default().tolerance(1e-10));
    system
        .solve(&mut pcg, &mut h, &mut Workspace::new())
        .unwrap();
    let aquifer = Aquifer::confined(top, bottom);
    let check = aquifer.check(grid, &h).unwrap();
    let drawdown = 45.0 - h[grid.index(15, 15)];
    println!("drawdown at the well {drawdown:.1} m in a {top} m thick aquifer\n{check}");
    assert_eq!(check.kind, AquiferKind::Confined);
    assert!(!check.is_clear());
    assert!(check.below_top.contains(&grid.index(15, 15)));
    let (at, depth) = check.deepest_below_top.unwrap();
    assert_eq!(at.cell, grid.index(15, 15));
    assert!((depth - (top - h[at.cell])).abs() < 1e-12);
    assert!(check.to_string().contains("no longer confined"));
    // The same heads in a convertible aquifer: the nonlinear model lets it drain instead.
    let mut nl = NonlinearSystem::aquifer(&model, Aquifer::convertible(top, bottom)).unwrap();
    let mut hc = nl.initial_solution(45.0);
    nl.solve(&mut hc, &OuterSettings::default(), &mut |_| {})
        .unwrap();
    assert!(hc[grid.index(15, 15)] < h[grid.index(15, 15)]);
}

//! Energy budgets close with a flow field carrying heat (`Model::set_advection`).
//!
//! The scheme conserves: every face flux `J = F·φ_P + a_E·(φ_P − φ_E)` is the same number seen
//! from either cell (Patankar 1980, *Numerical Heat Transfer and Fluid Flow*, §5.3, from
//! memory), so summing the balance rows telescopes and `in − out = Σ_k r_k` over the free
//! cells, the driver's residual (the same identity as in `model_budget.rs`, common practice).
//! Hence `|in − out| ≤ √n·‖r‖₂`. Rounding adds a few ulps per face of the largest terms of a
//! row, here bounded by `8·n·ε·(in + out + Σ|F|·max|φ|)`: the carried terms `F·φ` of interior
//! faces cancel in the sum but not in the ulps. Percent imbalances divide by `(in + out)/2`.

use quintet::model::{
    AdvectionScheme, Axis, Budget, Conductivity, FaceFlows, FlowKind, Geometry, Model, Stepper,
    Storage, TimeScheme,
};
use quintet::prelude::*;

const EPS: f64 = f64::EPSILON;

/// The bound described above, in percent.
fn imbalance_bound(budget: &Budget, free: usize, report: &Report, carried: f64, x: &[f64]) -> f64 {
    let mean = 0.5 * (budget.total_in + budget.total_out);
    let n = x.len() as f64;
    let max_x = x.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let residual_sum = (free as f64).sqrt() * report.residual_norm;
    let rounding = 8.0 * n * EPS * (budget.total_in + budget.total_out + carried * max_x);
    100.0 * (residual_sum + rounding) / mean
}

fn free_cells<S: Stencil5<f64>>(op: &S) -> usize {
    op.grid().cells() - op.fixed_cells().map_or(0, |f| f.len())
}

/// Σ|F| over all faces.
fn total_flow(flows: &FaceFlows) -> f64 {
    let grid = flows.grid();
    let (nx, ny) = (grid.nx(), grid.ny());
    let mut s = 0.0;
    for j in 0..ny {
        for i in 0..=nx {
            s += flows.x_face(i, j).abs();
        }
    }
    for j in 0..=ny {
        for i in 0..nx {
            s += flows.y_face(i, j).abs();
        }
    }
    s
}

/// SplitMix64 (Steele, Lea & Flood, OOPSLA 2014) for invented test flows.
fn uniform(state: &mut u64) -> f64 {
    *state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
}

/// Divergence-free flows from a stream function: a drift towards the north-east and a vortex.
fn swirl_flows(grid: Grid, strength: f64) -> FaceFlows {
    let (nx, ny) = (grid.nx(), grid.ny());
    let psi = |i: usize, j: usize| {
        let (x, y) = (i as f64 / nx as f64, j as f64 / ny as f64);
        strength * (0.6 * y - 0.3 * x)
            + 0.4 * strength * (std::f64::consts::PI * x).sin() * (std::f64::consts::PI * y).sin()
    };
    let xf = (0..ny)
        .flat_map(|j| (0..=nx).map(move |i| (i, j)))
        .map(|(i, j)| psi(i, j + 1) - psi(i, j))
        .collect();
    let yf = (0..=ny)
        .flat_map(|j| (0..nx).map(move |i| (i, j)))
        .map(|(i, j)| -(psi(i + 1, j) - psi(i, j)))
        .collect();
    FaceFlows::new(grid, xf, yf).unwrap()
}

/// Flows with sources and sinks of fluid in the cells (a well field): random face flows.
fn random_flows(grid: Grid, scale: f64, seed: u64) -> FaceFlows {
    let mut state = seed;
    let (nx, ny) = (grid.nx(), grid.ny());
    let xf = (0..(nx + 1) * ny)
        .map(|_| scale * (uniform(&mut state) - 0.3))
        .collect();
    let yf = (0..nx * (ny + 1))
        .map(|_| scale * (uniform(&mut state) - 0.6))
        .collect();
    FaceFlows::new(grid, xf, yf).unwrap()
}

/// An aquifer slice, 30 x 20 cells of 2 m, 5 m thick, with every kind of condition around a
/// flow field: inflow values on all edges, a warm foundation of prescribed cells in the flow,
/// a prescribed edge, an exchange edge, a heater, a cooling pipe, inactive cells. Temperatures
/// in °C.
fn aquifer(flows: FaceFlows, scheme: AdvectionScheme) -> Model {
    let geometry = Geometry::cell_centered(30, 20, 2.0, 2.0, 5.0).unwrap();
    let grid = geometry.grid();
    let mut model = Model::new(geometry, Conductivity::anisotropic(2.4, 1.8)).unwrap();
    model.set_storage(Storage::per_volume(2.6e6)).unwrap();
    model.set_advection(flows, scheme).unwrap();
    model
        .deactivate((26..30).flat_map(|i| (16..20).map(move |j| grid.index(i, j))))
        .unwrap();
    model.inflow_value("west inflow", Side::West, 10.0).unwrap();
    let south: Vec<f64> = (0..30).map(|i| 10.0 + 0.05 * i as f64).collect();
    model
        .inflow_value("south inflow", Side::South, south)
        .unwrap();
    model.inflow_value("east inflow", Side::East, 9.0).unwrap();
    model
        .inflow_value("north inflow", Side::North, 9.5)
        .unwrap();
    let block: Vec<usize> = (12..16)
        .flat_map(|i| (8..11).map(move |j| grid.index(i, j)))
        .collect();
    model
        .prescribe_cells("warm foundation", block, 18.0)
        .unwrap();
    model.prescribe_edge("river bank", Side::East, 9.0).unwrap();
    model
        .edge_exchange("ground surface", Side::North, 0.8, 6.0)
        .unwrap();
    model
        .point_source("heater", grid.index(5, 5), 40.0)
        .unwrap();
    let pipe: Vec<usize> = (4..20).map(|i| grid.index(i, 15)).collect();
    model.cell_exchange("cooling pipe", pipe, 0.5, 4.0).unwrap();
    model
}

/// A node-centred plate whose west edge nodes are held at a value.
fn plate(scheme: AdvectionScheme) -> Model {
    let geometry = Geometry::node_centered(31, 21, 0.01, 0.01, 0.005).unwrap();
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(15.0)).unwrap();
    model.set_storage(Storage::per_volume(3.9e6)).unwrap();
    let flows = FaceFlows::uniform(&geometry, 2e-3, 5e-4, 4.18e6).unwrap();
    model.set_advection(flows, scheme).unwrap();
    model
        .prescribe_edge("inlet edge", Side::West, 20.0)
        .unwrap();
    // An inflow value on the prescribed nodes: it cannot change them, and the prescribed line
    // takes up the difference (the budget path of carried slots at fixed cells).
    model
        .inflow_value("water at the inlet edge", Side::West, 19.0)
        .unwrap();
    model
        .inflow_value("coolant from the south", Side::South, 21.0)
        .unwrap();
    model.edge_exchange("air", Side::North, 10.0, 25.0).unwrap();
    model.volumetric_source("joule heating", 5e5).unwrap();
    model
}

fn cases() -> Vec<(String, Model)> {
    let grid = Grid::new(30, 20).unwrap();
    let mut out = Vec::new();
    for scheme in [
        AdvectionScheme::Upwind,
        AdvectionScheme::Exponential,
        AdvectionScheme::PowerLaw,
    ] {
        out.push((
            format!("swirl, {scheme:?}"),
            aquifer(swirl_flows(grid, 60.0), scheme),
        ));
        out.push((
            format!("wells (random flows), {scheme:?}"),
            aquifer(random_flows(grid, 8.0, 7), scheme),
        ));
        out.push((format!("plate, {scheme:?}"), plate(scheme)));
    }
    out
}

#[test]
fn steady_budgets_close_with_advection() {
    for (name, model) in cases() {
        let system = model.assemble().unwrap();
        assert!(!system.is_symmetric());
        let mut solver = system.default_solver().unwrap();
        *solver.options_mut() = SolveOptions::default()
            .tolerance(1e-12)
            .max_iterations(100_000);
        let mut x = system.initial_solution(10.0);
        let report = system
            .solve(&mut solver, &mut x, &mut Workspace::new())
            .unwrap();
        let budget = system.budget(&x).unwrap();
        let carried: Vec<_> = budget
            .lines
            .iter()
            .filter(|l| l.kind == FlowKind::Carried)
            .collect();
        assert!(
            carried.iter().any(|l| l.inflow > 0.0),
            "{name}: nothing carried in"
        );
        assert!(
            carried.iter().any(|l| l.outflow > 0.0),
            "{name}: nothing carried out"
        );
        let flows = model.advection().map_or(0.0, |(f, _)| total_flow(f));
        let d = budget.imbalance_percent();
        let bound = imbalance_bound(&budget, free_cells(system.operator()), &report, flows, &x);
        println!(
            "{name}: imbalance {d:.3e} % (bound {bound:.3e} %), {} iterations of {}, relative residual {:.2e}",
            report.iterations,
            report.method,
            report.relative_residual()
        );
        if name.starts_with("swirl, Upwind") {
            println!("{}", budget.table("W"));
        }
        assert!(d.abs() <= bound, "{name}: {d:e} % > {bound:e} %");
        assert!(d.abs() < 1e-8, "{name}: {d:e} %");
    }
}

#[test]
fn transient_budgets_close_with_advection_every_step() {
    for (name, model) in cases() {
        for (scheme, damped) in [
            (TimeScheme::BackwardEuler, 0),
            (TimeScheme::CrankNicolson, 2),
            (TimeScheme::CrankNicolson, 0),
        ] {
            let n = model.grid().cells();
            let initial = vec![10.0; n];
            let mut run = Stepper::with_default_solver(&model, scheme, 3600.0, 0.0, &initial)
                .unwrap()
                .damped_start(damped);
            *run.solver_mut().options_mut() = SolveOptions::default()
                .tolerance(1e-12)
                .max_iterations(100_000);
            let flows = model.advection().map_or(0.0, |(f, _)| total_flow(f));
            let mut worst = 0.0f64;
            for step in 0..4 {
                let report = run.step().unwrap();
                let budget = run.budget().unwrap();
                assert_eq!(budget.lines.last().map(|l| l.kind), Some(FlowKind::Storage));
                let d = budget.imbalance_percent();
                let bound = imbalance_bound(
                    &budget,
                    free_cells(run.operator()),
                    &report,
                    flows,
                    run.solution(),
                );
                assert!(
                    d.abs() <= bound,
                    "{name}, {scheme:?} (damped {damped}) step {step}: {d:e} % > {bound:e} %"
                );
                assert!(d.abs() < 1e-8, "{name}, {scheme:?} step {step}: {d:e} %");
                worst = worst.max(d.abs());
            }
            println!("{name}, {scheme:?} (damped {damped}): worst imbalance {worst:.3e} %");
        }
    }
}

/// A warm pulse carried by uniform flow along a channel, upwind, small conductivity: each
/// step's change of stored heat equals the step's net boundary flow times Δt (the budget, to
/// the residual bound), and while the pulse is far from both ends, nothing crosses them, so
/// the total heat stays constant to that bound and its centre moves at the carried velocity
/// `F·Δx/C` per unit time (an upwind scheme in conservation form keeps the first moment: the
/// diffusive part is symmetric and the carried part shifts it by `F` per cell; common
/// practice, shown by summing `x_k` times the rows).
#[test]
fn pulse_carried_by_uniform_flow_conserves_heat() {
    let cells = 240;
    let geometry = Geometry::new(
        Axis::uniform_cells(cells, 1.0).unwrap(),
        Axis::uniform_cells(1, 1.0).unwrap(),
        1.0,
    )
    .unwrap();
    let grid = geometry.grid();
    let rho_c = 2.5e6; // J/(m³·K), saturated sand (invented)
    let dt = 3600.0;
    let courant = 0.5;
    let f = courant * rho_c / dt; // W/K: the pulse moves half a cell per step
    let mut model = Model::new(geometry, Conductivity::isotropic(0.05)).unwrap();
    model.set_storage(Storage::per_volume(rho_c)).unwrap();
    let flows = FaceFlows::new(grid, vec![f; cells + 1], vec![0.0; 2 * cells]).unwrap();
    model.set_advection(flows, AdvectionScheme::Upwind).unwrap();
    model.inflow_value("clean inflow", Side::West, 0.0).unwrap();
    let initial: Vec<f64> = (0..cells)
        .map(|k| {
            let x = k as f64 + 0.5 - 50.0;
            30.0 * (-x * x / (2.0 * 16.0)).exp()
        })
        .collect();
    let heat = |x: &[f64]| x.iter().map(|v| rho_c * v).sum::<f64>();
    let centre = |x: &[f64]| {
        let w: f64 = x.iter().sum();
        x.iter()
            .enumerate()
            .map(|(k, v)| (k as f64 + 0.5) * v)
            .sum::<f64>()
            / w
    };
    let h0 = heat(&initial);
    let c0 = centre(&initial);
    let mut run =
        Stepper::with_default_solver(&model, TimeScheme::BackwardEuler, dt, 0.0, &initial).unwrap();
    *run.solver_mut().options_mut() = SolveOptions::default()
        .tolerance(1e-13)
        .max_iterations(100_000);
    let steps = 200;
    let mut drift_bound = 0.0;
    let mut before = heat(&initial);
    for step in 0..steps {
        let report = run.step().unwrap();
        let after = heat(run.solution());
        let budget = run.budget().unwrap();
        let outside = || budget.lines.iter().filter(|l| l.kind != FlowKind::Storage);
        let boundary: f64 = outside().map(|l| l.net()).sum();
        let crossing: f64 = outside().map(|l| l.inflow + l.outflow).sum();
        // Stored heat change against Δt × net boundary flow, to the residual bound.
        let scale = dt * (budget.total_in + budget.total_out) + before.abs() + after.abs();
        let bound =
            dt * (cells as f64).sqrt() * report.residual_norm + 8.0 * cells as f64 * EPS * scale;
        let change = after - before;
        assert!(
            (change - dt * boundary).abs() <= bound,
            "step {step}: stored {change:e} J, boundary × Δt {:e} J, bound {bound:e}",
            dt * boundary
        );
        // The heat may change by what crosses the ends (the pulse's far tails) plus the bound.
        drift_bound += bound + dt * crossing;
        before = after;
    }
    let x = run.solution();
    let moved = centre(x) - c0;
    let expected = f * dt * steps as f64 / rho_c; // m
    println!(
        "pulse: total heat {h0:.6e} J → {:.6e} J (relative change {:.2e}, bound {:.2e}); centre moved {moved:.6} m, carried velocity × time {expected:.6} m",
        heat(x),
        (heat(x) - h0) / h0,
        drift_bound / h0
    );
    assert!((heat(x) - h0).abs() <= drift_bound);
    assert!((heat(x) - h0).abs() / h0 < 1e-9);
    assert!((moved - expected).abs() < 1e-6 * expected);
}

/// Face flows from a groundwater solve (`SteadySystem::face_flows`): every free cell's net
/// outflow through its faces equals the water its sources put in (a well, recharge), to the
/// driver's residual (the cell's row of Darcy's law, a finite-volume mass balance; common
/// practice); a heat model carried by those flows closes its budget, with the pumped water
/// leaving at the well cell's temperature.
#[test]
fn flows_from_a_groundwater_solve_carry_heat_and_balance() {
    let rho_c_water = 4.18e6; // J/(m³·K), water near 15 °C (from memory)
    let geometry = Geometry::cell_centered(30, 20, 10.0, 10.0, 12.0).unwrap();
    let grid = geometry.grid();
    let mut water = Model::new(geometry.clone(), Conductivity::isotropic(2e-4)).unwrap();
    water.prescribe_edge("upstream", Side::West, 20.0).unwrap();
    water
        .prescribe_edge("downstream", Side::East, 19.0)
        .unwrap();
    let pumping = grid.index(18, 9);
    let injection = grid.index(10, 12);
    water.point_source("pumping well", pumping, -3e-3).unwrap();
    water
        .point_source("injection well", injection, 2e-3)
        .unwrap();
    water.areal_source("recharge", 5e-9).unwrap();
    let flow = water.assemble().unwrap();
    let mut heads = flow.initial_solution(19.5);
    let mut solver = flow.default_solver().unwrap();
    *solver.options_mut() = SolveOptions::default()
        .tolerance(1e-13)
        .max_iterations(100_000);
    let report = flow
        .solve(&mut solver, &mut heads, &mut Workspace::new())
        .unwrap();
    let flows = flow.face_flows(&heads, rho_c_water).unwrap();
    let mut worst = 0.0f64;
    for k in 0..grid.cells() {
        let (i, j) = grid.coords(k);
        let out = flows.x_face(i + 1, j) - flows.x_face(i, j) + flows.y_face(i, j + 1)
            - flows.y_face(i, j);
        let source = match k {
            k if k == pumping => -3e-3,
            k if k == injection => 2e-3,
            _ => 0.0,
        } + 5e-9 * geometry.plan_area(k);
        let miss = (out / rho_c_water - source).abs();
        worst = worst.max(miss);
        assert!(
            miss <= report.residual_norm + 64.0 * EPS * 3e-3,
            "cell {k}: net outflow {:e} m³/s, sources {source:e} m³/s",
            out / rho_c_water
        );
    }
    println!(
        "groundwater face flows: worst cell mass balance miss {worst:.2e} m³/s (residual {:.2e})",
        report.residual_norm
    );

    // Heat: rock and water at 12 °C, warm water injected at 25 °C.
    let mut heat = Model::new(geometry.clone(), Conductivity::isotropic(2.5)).unwrap();
    heat.set_advection(flows, AdvectionScheme::PowerLaw)
        .unwrap();
    heat.inflow_value("inflowing groundwater", Side::West, 12.0)
        .unwrap();
    heat.inflow_value("return from downstream", Side::East, 12.0)
        .unwrap();
    // The injected water enters at the cell's value through the flow field (its line); the
    // exchange with conductance ρ_w·c_w·Q brings it to 25 °C: ρc·Q·T_cell + ρc·Q·(25 − T_cell).
    heat.cell_exchange("injected water", [injection], rho_c_water * 2e-3, 25.0)
        .unwrap();
    heat.prescribe_edge("far field west", Side::West, 12.0)
        .unwrap();
    let system = heat.assemble().unwrap();
    let mut t = system.initial_solution(12.0);
    let mut solver = system.default_solver().unwrap();
    *solver.options_mut() = SolveOptions::default()
        .tolerance(1e-12)
        .max_iterations(100_000);
    let report = system
        .solve(&mut solver, &mut t, &mut Workspace::new())
        .unwrap();
    let budget = system.budget(&t).unwrap();
    println!("{}", budget.table("W"));
    let field = budget.lines.last().unwrap();
    assert_eq!(field.kind, FlowKind::Carried);
    // The pumped water leaves at the well cell's temperature, booked on the flow-field line.
    assert!(field.outflow >= rho_c_water * 3e-3 * t[pumping]);
    let carried = heat.advection().map_or(0.0, |(f, _)| total_flow(f));
    let d = budget.imbalance_percent();
    let bound = imbalance_bound(&budget, free_cells(system.operator()), &report, carried, &t);
    println!("heat from the groundwater flows: imbalance {d:.3e} % (bound {bound:.3e} %)");
    assert!(
        d.abs() <= bound && d.abs() < 1e-8,
        "{d:e} % (bound {bound:e} %)"
    );
    println!(
        "T at the injection well {:.4} °C, at the pumping well {:.4} °C, range {:.4} to {:.4} °C",
        t[injection],
        t[pumping],
        t.iter().copied().fold(f64::MAX, f64::min),
        t.iter().copied().fold(f64::MIN, f64::max)
    );
    // Maximum principle of an M-matrix with these inflow values (common practice): every
    // temperature between 12 and 25 °C; the injection cell, whose faces all carry water out
    // at cell Péclet numbers above 10 (power law: no diffusion against it), sits at 25 °C.
    assert!(t.iter().all(|&v| (12.0 - 1e-9..=25.0 + 1e-9).contains(&v)));
    assert!(t[pumping] > 12.0 && (t[injection] - 25.0).abs() < 1e-9);
}

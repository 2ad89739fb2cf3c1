//! Heat carried by groundwater, in a scenario of our own invention: an office building cools
//! itself with groundwater. A production well draws water from a sandy-gravel aquifer, the heat
//! pump warms it, and an injection well downstream returns it warmer. Groundwater flows from
//! west to east under the valley's regional gradient. The example solves the flow first (heads,
//! then the Darcy flow through every face), then the steady temperature that flow carries: the
//! warm plume of the injection well, whether it reaches back to the production well, and the
//! energy budget. It ends with the iterations each non-symmetric method needs on the heat
//! system, and draws the temperature map with the flow direction.
//!
//! Everything here is invented for the demonstration; only the property ranges come from
//! handbooks (named beside them). The 2-D depth-averaged model ignores thermal dispersion and
//! density effects and treats the confining layers as a simple exchange term. Results support,
//! and do not replace, engineering judgement: design open-loop systems to local codes, permits
//! and licensed professional practice.
//!
//! Run with `cargo run --release --example groundwater_heat` (picture in
//! `out/groundwater_heat/`, `--out DIR` to change; `--help` for the options).

mod support;

use std::time::Instant;

use quintet::model::{AdvectionScheme, Conductivity, FaceFlows, Geometry, Model};
use quintet::prelude::*;
use support::contour::round_levels;
use support::picture::{boxed_label, finite_range, Map, MapChart};
use support::{ramp, Failure, Options};

const HELP: &str = "\
groundwater_heat: an invented open-loop cooling well pair in a sandy-gravel aquifer with
regional groundwater flow; solves the flow, then the steady temperature it carries; prints the
energy budget and the iterations each non-symmetric method needs, and writes temperature.png.

Usage: cargo run --release --example groundwater_heat -- [OPTIONS]

Options:
    --cell M      cell size in m (default 5)";

// The invented valley, in metres.
const SIZE: (f64, f64) = (1600.0, 1000.0);
const THICKNESS: f64 = 20.0;
// Hydraulic conductivity of sandy gravel: Freeze & Cherry, Groundwater, 1979, Table 2.2, from
// memory (gravel 1e-3 to 1, clean sand 1e-6 to 1e-2 m/s); the value lies inside that range.
const K_AQUIFER: f64 = 1e-3; // m/s
/// Heads on the west and east edges (m): a regional gradient of 1.5 per mille.
const HEADS: (f64, f64) = (40.0, 37.6);
// Thermal conductivity of water-saturated sand and gravel, about 2 to 3 W/(m·K) (common
// practice, from memory); the confining clay about 1.5 to 2 W/(m·K).
const LAMBDA_AQUIFER: f64 = 2.4; // W/(m·K)
const LAMBDA_CLAY: f64 = 1.7; // W/(m·K)
/// Distance from the aquifer's mid-plane to where the confining layers stay at the natural
/// temperature (m), above and below: an invented simplification of vertical conduction.
const CLAY_DEPTH: f64 = 15.0;
/// Volumetric heat capacity of water, ρ_w·c_w ≈ 1000 kg/m³ · 4186 J/(kg·K) (handbook value
/// for water near 10 °C, from memory).
const WATER_HEAT_CAPACITY: f64 = 4.186e6; // J/(m³·K)
/// The natural groundwater temperature (°C).
const NATURAL: f64 = 11.0;
/// The well pair: production and injection, x and y (m), and the flow they carry (m³/s).
const PRODUCTION: (f64, f64) = (620.0, 500.0);
const INJECTION: (f64, f64) = (800.0, 500.0);
const PUMPING: f64 = 0.018;
/// The temperature at which the heat pump returns the water (°C).
const RETURN: f64 = 17.0;

fn main() {
    support::run(body);
}

fn body() -> Result<(), Failure> {
    let mut options = Options::parse("groundwater_heat", HELP)?;
    let cell: f64 = support::option(&mut options.rest, "--cell", 5.0)?;
    if !(2.0..=50.0).contains(&cell) {
        return Err(support::failure("--cell: give a size between 2 and 50 m"));
    }
    let out = options.finish()?;
    let (nx, ny) = (
        (SIZE.0 / cell).round() as usize,
        (SIZE.1 / cell).round() as usize,
    );
    let (dx, dy) = (SIZE.0 / nx as f64, SIZE.1 / ny as f64);
    let geometry = Geometry::cell_centered(nx, ny, dx, dy, THICKNESS)?;
    let grid = geometry.grid();
    let at = |(x, y): (f64, f64), what: &str| {
        geometry
            .cell_at(x, y)
            .ok_or_else(|| support::failure(format!("the {what} well lies outside the model")))
    };
    let (production, injection) = (at(PRODUCTION, "production")?, at(INJECTION, "injection")?);

    // 1. The flow: heads fixed on the west and east edges, no flow north and south, the two
    //    wells.
    let mut water = Model::new(geometry.clone(), Conductivity::isotropic(K_AQUIFER))?;
    water.prescribe_edge("upstream valley (west)", Side::West, HEADS.0)?;
    water.prescribe_edge("downstream valley (east)", Side::East, HEADS.1)?;
    water.point_source("production well", production, -PUMPING)?;
    water.point_source("injection well", injection, PUMPING)?;
    let flow = water.assemble()?;
    let mut heads = flow.initial_solution(0.5 * (HEADS.0 + HEADS.1));
    let mut pcg = Pcg::new(Multigrid::new(
        flow.operator(),
        MultigridSettings::default(),
    )?)
    .with_options(SolveOptions::default().tolerance(1e-12));
    let mut ws = Workspace::for_grid(grid);
    let flow_report = flow.solve(&mut pcg, &mut heads, &mut ws)?;
    let water_budget = flow.budget(&heads)?;
    let flows = flow.face_flows(&heads, WATER_HEAT_CAPACITY)?;

    // 2. The heat that flow carries.
    let mut heat = Model::new(geometry.clone(), Conductivity::isotropic(LAMBDA_AQUIFER))?;
    heat.set_advection(flows.clone(), AdvectionScheme::PowerLaw)?;
    heat.inflow_value("upstream groundwater", Side::West, NATURAL)?;
    // Conduction into the confining layers above and below, to the natural temperature at
    // CLAY_DEPTH: a conductance 2·λ·A/d per cell.
    let area = dx * dy;
    let cells: Vec<usize> = (0..grid.cells()).collect();
    let confining = heat.cell_exchange(
        "confining layers",
        cells,
        vec![2.0 * LAMBDA_CLAY * area / CLAY_DEPTH; grid.cells()],
        vec![NATURAL; grid.cells()],
    )?;
    // The injected water appears at the cell's own temperature (the flow field's sources) and
    // the heat pump's warming on top: ρ_w·c_w·Q·(RETURN − T).
    heat.cell_exchange(
        "heat pump return",
        vec![injection],
        vec![WATER_HEAT_CAPACITY * PUMPING],
        vec![RETURN],
    )?;
    let system = heat.assemble()?;
    let mut temperature = system.initial_solution(NATURAL);
    let mut solver = system.default_solver()?;
    solver.options_mut().tolerances.relative = 1e-10;
    let heat_report = system.solve(&mut solver, &mut temperature, &mut ws)?;
    let budget = system.budget(&temperature)?;

    println!(
        "Aquifer: {:.0} m x {:.0} m, {THICKNESS} m of sandy gravel (K = {K_AQUIFER:e} m/s), {grid} of {dx} m",
        SIZE.0, SIZE.1
    );
    println!(
        "wells {:.0} m apart, {:.0} L/s drawn and returned at {RETURN} °C into {NATURAL} °C groundwater",
        INJECTION.0 - PRODUCTION.0,
        1e3 * PUMPING
    );
    println!("flow: {flow_report}");
    println!("\nWater budget\n{}", water_budget.table("m³/s"));
    println!("heat: {heat_report}");
    println!("\nEnergy budget\n{}", budget.table("W"));
    println!(
        "(energies relative to 0 °C; the returned water enters with \"carried by the flow field\" at its\n cell's temperature, and \"heat pump return\" adds the rest up to {RETURN} °C)"
    );
    if let Some(warning) = budget.warning(1e-3) {
        println!("WARNING: {warning}");
    }
    // Where the heat pump's heat goes, counted apart from the budget: relative to the natural
    // temperature, the pump adds ρ_w·c_w·Q·(RETURN − T_production); at steady state it leaves
    // through the confining layers and with the water that flows out across the east edge.
    let pumped = WATER_HEAT_CAPACITY * PUMPING * (RETURN - temperature[production]);
    let into_clay = -budget.line(confining).map_or(0.0, |l| l.net());
    let east = downstream_excess(&flows, &temperature, grid);
    println!(
        "\ntemperature at the production well: {:.3} °C ({:+.3} K above the natural {NATURAL} °C: returned heat coming back)",
        temperature[production],
        temperature[production] - NATURAL
    );
    println!(
        "heat the heat pump rejects into the aquifer: {:>8.1} kW",
        1e-3 * pumped
    );
    println!(
        "  into the confining layers:                {:>8.1} kW",
        1e-3 * into_clay
    );
    println!(
        "  carried out across the east edge:         {:>8.1} kW (above {NATURAL} °C)",
        1e-3 * east
    );
    println!(
        "  unaccounted:                              {:>8.1e} kW",
        1e-3 * (pumped - into_clay - east)
    );
    println!(
        "cell Péclet number ρ_w·c_w·|q|·Δx/λ: up to {:.0} (near the wells), {:.1} in the regional flow",
        peclet_max(&flows, &geometry),
        WATER_HEAT_CAPACITY * K_AQUIFER * (HEADS.0 - HEADS.1) / SIZE.0 * dx / LAMBDA_AQUIFER
    );

    iterations_by_method(&system, &temperature)?;

    let png = out.join("temperature.png");
    let (lo, hi) = finite_range(&temperature);
    let levels = round_levels(lo + 0.5, hi, 6);
    let map = Map {
        title: format!(
            "Steady temperature: {:.0} L/s returned at {RETURN} °C",
            1e3 * PUMPING
        ),
        x_label: "x [m]".into(),
        y_label: "y [m]".into(),
        scale_label: "temperature [°C]".into(),
        x_faces: support::faces(geometry.x(), 1.0),
        y_faces: support::faces(geometry.y(), 1.0),
        x_nodes: support::nodes(geometry.x(), 1.0),
        y_nodes: support::nodes(geometry.y(), 1.0),
        values: &temperature,
        ramp: &ramp::TEMPERATURE,
        decimals: support::contour::decimals_for(&levels),
        levels,
    };
    map.draw(&png, |chart| draw_features(chart, &flows, &geometry))?;
    println!("\npicture: {}", png.display());
    Ok(())
}

/// The heat the flow carries out across the east edge above the natural temperature (W):
/// `Σ F·(T − NATURAL)` over the east faces where the water leaves.
fn downstream_excess(flows: &FaceFlows, temperature: &[f64], grid: Grid) -> f64 {
    (0..grid.ny())
        .map(|j| {
            let f = flows.x_face(grid.nx(), j);
            f.max(0.0) * (temperature[grid.index(grid.nx() - 1, j)] - NATURAL)
        })
        .sum()
}

/// The largest cell Péclet number `|F|·Δx/(λ·A)` over the x- and y-faces.
fn peclet_max(flows: &FaceFlows, geometry: &Geometry) -> f64 {
    let grid = geometry.grid();
    let (dx, dy) = (geometry.x().width(0), geometry.y().width(0));
    let mut largest: f64 = 0.0;
    for j in 0..grid.ny() {
        for i in 0..=grid.nx() {
            largest =
                largest.max(flows.x_face(i, j).abs() * dx / (LAMBDA_AQUIFER * dy * THICKNESS));
        }
    }
    for j in 0..=grid.ny() {
        for i in 0..grid.nx() {
            largest =
                largest.max(flows.y_face(i, j).abs() * dy / (LAMBDA_AQUIFER * dx * THICKNESS));
        }
    }
    largest
}

/// Every non-symmetric method on the heat system, from the natural temperature, to a relative
/// residual of 1e-10: iterations, time, and the largest difference from the default solver's
/// answer.
fn iterations_by_method(
    system: &quintet::model::SteadySystem,
    reference: &[f64],
) -> Result<(), Failure> {
    let op = system.operator();
    type Build = fn(&Banded5<f64>) -> Result<Box<dyn IterativeSolver<f64>>, Error>;
    let methods: Vec<(&str, Build)> = vec![
        ("BiCGSTAB + ILU(0)", |op| {
            Ok(Box::new(BiCgStab::new(Ilu0::new(op)?)))
        }),
        ("GMRES(30) + ILU(0)", |op| {
            Ok(Box::new(Gmres::new(Ilu0::new(op)?)))
        }),
        ("BiCGSTAB + SIP", |op| {
            let plain = SipSettings {
                symmetrised: false,
                ..Default::default()
            };
            Ok(Box::new(BiCgStab::new(Sip::new(op, plain)?)))
        }),
        ("GMRES(30) + multigrid", |op| {
            Ok(Box::new(Gmres::new(Multigrid::new(
                op,
                MultigridSettings::default(),
            )?)))
        }),
        ("BiCGSTAB + multigrid", |op| {
            Ok(Box::new(BiCgStab::new(Multigrid::new(
                op,
                MultigridSettings::default(),
            )?)))
        }),
        ("BiCGSTAB + Jacobi", |op| {
            Ok(Box::new(BiCgStab::new(Jacobi::new(op)?)))
        }),
        ("Stone's SIP", |op| {
            Ok(Box::new(Sip::new(op, SipSettings::default())?))
        }),
        ("Gauss-Seidel", |_| Ok(Box::new(Sor::gauss_seidel()))),
    ];
    println!("\nIterations on the heat system (relative residual 1e-10, from {NATURAL} °C)");
    println!(
        "{:<22} {:>10} {:>10} {:>12} {:>16}",
        "method", "iterations", "time [s]", "residual", "max |ΔT| [K]"
    );
    let mut ws = Workspace::for_grid(op.grid());
    for (name, build) in methods {
        let start = Instant::now();
        let mut solver = build(op)?;
        *solver.options_mut() = SolveOptions::default()
            .tolerance(1e-10)
            .max_iterations(20_000);
        let mut t = system.initial_solution(NATURAL);
        let outcome = system.solve(&mut solver, &mut t, &mut ws);
        let seconds = start.elapsed().as_secs_f64();
        match outcome {
            Ok(report) => {
                let diff = t
                    .iter()
                    .zip(reference)
                    .map(|(a, b)| (a - b).abs())
                    .fold(0.0, f64::max);
                println!(
                    "{name:<22} {:>10} {seconds:>10.3} {:>12.2e} {diff:>16.1e}",
                    report.iterations,
                    report.relative_residual()
                );
            }
            Err(e) => match e.report() {
                Some(report) => println!(
                    "{name:<22} {:>10} {seconds:>10.3} {:>12.2e}   did not converge: {}",
                    report.iterations,
                    report.relative_residual(),
                    report.reason
                ),
                None => println!("{name:<22} {:>10} {seconds:>10.3}   refused: {e}", "-"),
            },
        }
    }
    Ok(())
}

/// Flow arrows on a coarse lattice, and the wells.
fn draw_features(
    chart: &mut MapChart<'_, '_>,
    flows: &FaceFlows,
    geometry: &Geometry,
) -> Result<(), Failure> {
    use plotters::prelude::*;
    let grid = geometry.grid();
    // Darcy velocity at cell centres from the mean of the two face flows (W/K → m³/s → m/s).
    let (dx, dy) = (geometry.x().width(0), geometry.y().width(0));
    let velocity = |i: usize, j: usize| {
        let qx = 0.5 * (flows.x_face(i, j) + flows.x_face(i + 1, j))
            / (WATER_HEAT_CAPACITY * dy * THICKNESS);
        let qy = 0.5 * (flows.y_face(i, j) + flows.y_face(i, j + 1))
            / (WATER_HEAT_CAPACITY * dx * THICKNESS);
        (qx, qy)
    };
    // Arrow lengths on a log scale of the speed, so both the regional flow and the wells show.
    let regional = K_AQUIFER * (HEADS.0 - HEADS.1) / SIZE.0;
    let spacing = 100.0;
    let arrow = RGBColor(235, 235, 235);
    let (mx, my) = ((SIZE.0 / spacing) as usize, (SIZE.1 / spacing) as usize);
    for a in 0..mx {
        for b in 0..my {
            let (x, y) = ((a as f64 + 0.5) * spacing, (b as f64 + 0.5) * spacing);
            let Some(k) = geometry.cell_at(x, y) else {
                continue;
            };
            let (i, j) = grid.coords(k);
            let (qx, qy) = velocity(i, j);
            let speed = qx.hypot(qy);
            if speed == 0.0 {
                continue;
            }
            let length = 0.5 * spacing * (1.0 + 0.5 * (speed / regional).log10().max(0.0)).min(1.6);
            let (ux, uy) = (qx / speed, qy / speed);
            let tip = (x + 0.5 * length * ux, y + 0.5 * length * uy);
            let tail = (x - 0.5 * length * ux, y - 0.5 * length * uy);
            let head = 0.3 * length;
            let (cos, sin) = (0.94_f64, 0.34_f64); // ±20°
            let left = (
                tip.0 - head * (ux * cos - uy * sin),
                tip.1 - head * (uy * cos + ux * sin),
            );
            let right = (
                tip.0 - head * (ux * cos + uy * sin),
                tip.1 - head * (uy * cos - ux * sin),
            );
            chart.draw_series(std::iter::once(PathElement::new(
                vec![tail, tip],
                arrow.stroke_width(2),
            )))?;
            chart.draw_series(std::iter::once(PathElement::new(
                vec![left, tip, right],
                arrow.stroke_width(2),
            )))?;
        }
    }
    for ((x, y), label) in [(PRODUCTION, "production"), (INJECTION, "injection")] {
        chart.draw_series(std::iter::once(Circle::new((x, y), 6, BLACK.filled())))?;
        chart.draw_series(std::iter::once(Circle::new(
            (x, y),
            9,
            WHITE.stroke_width(2),
        )))?;
        let offset = if label == "production" {
            (-90.0, 60.0)
        } else {
            (0.0, -105.0)
        };
        boxed_label(chart, (x + offset.0, y + offset.1), label, 13)?;
    }
    boxed_label(chart, (1420.0, 100.0), "arrows: groundwater flow", 13)?;
    Ok(())
}

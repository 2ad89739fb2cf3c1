//! A heat spreader: an aluminium plate with a copper bar pressed into it, two heaters on it,
//! one edge clamped to a water-cooled rail, the other edges insulated. Steady conduction in
//! the plane of the plate, solved with PCG; prints the hottest cell, the energy budget and
//! the solver report, and draws the temperature map with isotherms.
//!
//! The plate, the heaters and the rail are invented for this demonstration; only the two
//! conductivities come from a handbook. Results support, and do not replace, engineering
//! judgement: design to local codes and licensed professional practice.
//!
//! Run with `cargo run --release --example heat_spreader` (pictures in `out/heat_spreader/`,
//! `--out DIR` to change; `--help` for the options).

mod support;

use plotters::prelude::{Color, Cross, BLACK};
use quintet::model::{Conductivity, Field, Geometry, Model};
use quintet::prelude::*;
use support::contour::{decimals_for, round_levels};
use support::picture::{boxed_label, Map, MapChart};
use support::{ramp, Failure, Options};

const HELP: &str = "\
heat_spreader: steady temperature in an aluminium heat-spreader plate with a copper bar,
two heaters and one water-cooled edge; prints the hottest cell, the energy budget and the
solver report, and writes temperature.png.

Usage: cargo run --release --example heat_spreader -- [OPTIONS]

Options:
    --cell MM     cell size in mm (default 0.5)";

// Thermal conductivities at 300 K from Incropera, DeWitt, Bergman & Lavine, Fundamentals of
// Heat and Mass Transfer, 6th ed., 2007, Table A.1 (thermophysical properties of selected
// metallic solids), from memory: pure aluminium 237 W/(m·K), pure copper 401 W/(m·K).
const K_ALUMINIUM: f64 = 237.0;
const K_COPPER: f64 = 401.0;

// The invented design, in metres, watts and °C.
const PLATE: (f64, f64) = (0.160, 0.100); // 160 mm x 100 mm
const THICKNESS: f64 = 0.006; // 6 mm
/// The copper bar: x from, x to, y from, y to (it runs out to the cooled east edge).
const COPPER: [f64; 4] = [0.030, 0.160, 0.056, 0.074];
/// Heaters: label, power (W), footprint (x from, x to, y from, y to).
const HEATERS: [(&str, f64, [f64; 4]); 2] = [
    ("heater A", 20.0, [0.030, 0.052, 0.054, 0.076]),
    ("heater B", 12.0, [0.060, 0.090, 0.016, 0.030]),
];
/// The rail along the east edge: water at 25 °C, contact and rail together taken as a
/// coefficient of 5000 W/(m²·K) on the plate's edge face (a demonstration value).
const RAIL_WATER: f64 = 25.0;
const RAIL_COEFFICIENT: f64 = 5000.0;

fn inside(rect: [f64; 4], (x, y): (f64, f64)) -> bool {
    x > rect[0] && x < rect[1] && y > rect[2] && y < rect[3]
}

fn main() {
    support::run(body);
}

fn body() -> Result<(), Failure> {
    let mut options = Options::parse("heat_spreader", HELP)?;
    let cell_mm: f64 = support::option(&mut options.rest, "--cell", 0.5)?;
    if !(0.1..=10.0).contains(&cell_mm) {
        return Err(support::failure(
            "--cell: give a size between 0.1 and 10 mm",
        ));
    }
    let out = options.finish()?;

    let h = cell_mm / 1000.0;
    let (nx, ny) = (
        (PLATE.0 / h).round() as usize,
        (PLATE.1 / h).round() as usize,
    );
    let geometry =
        Geometry::cell_centered(nx, ny, PLATE.0 / nx as f64, PLATE.1 / ny as f64, THICKNESS)?;
    let grid = geometry.grid();
    let is_copper = |k: usize| inside(COPPER, geometry.position(k));
    let k = Field::from_fn(grid, |i, j| {
        if is_copper(grid.index(i, j)) {
            K_COPPER
        } else {
            K_ALUMINIUM
        }
    });

    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(k))?;
    // Each heater's power spread evenly over the cells under its footprint (W/m² of plan
    // area), so the total is exact whatever the cell size.
    for (label, power, footprint) in HEATERS {
        let area: f64 = (0..grid.cells())
            .filter(|&k| inside(footprint, geometry.position(k)))
            .map(|k| geometry.plan_area(k))
            .sum();
        if area == 0.0 {
            return Err(support::failure(format!(
                "{label}: no cell under its footprint; use smaller cells"
            )));
        }
        let rate = Field::from_fn(grid, |i, j| {
            if inside(footprint, geometry.position(grid.index(i, j))) {
                power / area
            } else {
                0.0
            }
        });
        model.areal_source(label, rate)?;
    }
    model.edge_exchange(
        "cooled rail (east edge)",
        Side::East,
        RAIL_COEFFICIENT,
        RAIL_WATER,
    )?;
    // West, south and north edges: no condition, so insulated. Both faces of the plate are
    // insulated too: the model is two-dimensional.

    let system = model.assemble()?;
    let mut t = system.initial_solution(RAIL_WATER);
    let mut pcg = Pcg::new(IncompleteCholesky::mic0(system.operator())?).with_options(
        SolveOptions::default()
            .tolerance(1e-10)
            .max_iterations(20_000),
    );
    let report = system.solve(&mut pcg, &mut t, &mut Workspace::for_grid(grid))?;
    let budget = system.budget(&t)?;

    let total: f64 = HEATERS.iter().map(|h| h.1).sum();
    println!(
        "Heat spreader: {:.0} mm x {:.0} mm x {:.0} mm aluminium plate with a copper bar, {grid} of {cell_mm} mm",
        1e3 * PLATE.0,
        1e3 * PLATE.1,
        1e3 * THICKNESS
    );
    println!(
        "{total} W from two heaters; east edge on a rail at {RAIL_WATER} °C (h = {RAIL_COEFFICIENT} W/(m²·K)); other edges and faces insulated"
    );
    println!("{report}");
    let (hot, t_max) =
        t.iter().copied().enumerate().fold(
            (0, f64::MIN),
            |best, (k, v)| if v > best.1 { (k, v) } else { best },
        );
    let (x, y) = geometry.position(hot);
    let under = HEATERS
        .iter()
        .find(|h| inside(h.2, (x, y)))
        .map_or("under no heater".to_string(), |h| format!("under {}", h.0));
    println!(
        "hottest cell: {t_max:.2} °C at x = {:.2} mm, y = {:.2} mm ({under}, {})",
        1e3 * x,
        1e3 * y,
        if is_copper(hot) {
            "copper"
        } else {
            "aluminium"
        }
    );
    for (label, _, footprint) in HEATERS {
        let cells: Vec<usize> = (0..grid.cells())
            .filter(|&k| inside(footprint, geometry.position(k)))
            .collect();
        let mean = cells.iter().map(|&k| t[k]).sum::<f64>() / cells.len() as f64;
        println!("mean plate temperature under {label}: {mean:.2} °C");
    }
    println!("\nEnergy budget\n{}", budget.table("W"));
    if let Some(warning) = budget.warning(1e-3) {
        println!("WARNING: {warning}");
    }

    let path = out.join("temperature.png");
    let levels = round_levels(support::picture::finite_range(&t).0, t_max, 10);
    let map = Map {
        title: format!("Heat spreader: steady temperature, {total} W, rail at {RAIL_WATER} °C"),
        x_label: "x [mm]".into(),
        y_label: "y [mm]".into(),
        scale_label: "temperature [°C]".into(),
        x_faces: support::faces(geometry.x(), 1e3),
        y_faces: support::faces(geometry.y(), 1e3),
        x_nodes: support::nodes(geometry.x(), 1e3),
        y_nodes: support::nodes(geometry.y(), 1e3),
        values: &t,
        ramp: &ramp::TEMPERATURE,
        decimals: decimals_for(&levels),
        levels,
    };
    map.draw(&path, |chart| {
        draw_parts(chart, 1e3 * PLATE.0, 1e3 * PLATE.1)?;
        let at = (1e3 * x, 1e3 * y);
        chart.draw_series(std::iter::once(Cross::new(at, 6, BLACK.stroke_width(2))))?;
        boxed_label(
            chart,
            (at.0, at.1 - 16.0),
            &format!("hottest {t_max:.1} °C"),
            13,
        )
    })?;
    println!("\npicture: {}", path.display());
    Ok(())
}

/// Outlines of the copper bar and the heaters, and the cooled edge.
fn draw_parts(chart: &mut MapChart<'_, '_>, width_mm: f64, height_mm: f64) -> Result<(), Failure> {
    use plotters::prelude::*;
    let outline = |r: [f64; 4]| {
        let r = r.map(|v| 1e3 * v);
        vec![
            (r[0], r[2]),
            (r[1], r[2]),
            (r[1], r[3]),
            (r[0], r[3]),
            (r[0], r[2]),
        ]
    };
    chart.draw_series(std::iter::once(PathElement::new(
        outline(COPPER),
        RGBColor(120, 60, 20).stroke_width(2),
    )))?;
    boxed_label(
        chart,
        (
            1e3 * (COPPER[0] + COPPER[1]) / 2.0 + 25.0,
            1e3 * COPPER[3] - 4.0,
        ),
        "copper bar",
        13,
    )?;
    for (label, power, footprint) in HEATERS {
        chart.draw_series(std::iter::once(PathElement::new(
            outline(footprint),
            WHITE.stroke_width(2),
        )))?;
        let centre = (
            1e3 * (footprint[0] + footprint[1]) / 2.0,
            1e3 * footprint[3] + 4.0,
        );
        boxed_label(chart, centre, &format!("{label}, {power} W"), 13)?;
    }
    chart.draw_series(std::iter::once(PathElement::new(
        vec![(width_mm, 0.0), (width_mm, height_mm)],
        RGBColor(20, 60, 200).stroke_width(6),
    )))?;
    boxed_label(chart, (width_mm - 14.0, height_mm - 6.0), "cooled rail", 13)?;
    Ok(())
}

//! Dewatering a construction pit with four wells in an unconfined sand-and-gravel aquifer of
//! our own invention, whose base rises to a buried bedrock knoll under the pit: pumping
//! lowers the water table below the knoll, and the cells there run dry. Solved with Newton
//! and with Picard outer iterations; prints both outer-iteration logs and counts, the water
//! budget (with the rate the wells actually deliver), the dry cells, and draws the water
//! table with the dry cells marked.
//!
//! The site, knoll, river and wells are invented for this demonstration; only the
//! conductivity and specific yield ranges come from a handbook. Results support, and do not
//! replace, engineering judgement: design dewatering systems to local codes and licensed
//! professional practice, and check drawdowns against observation wells.
//!
//! Run with `cargo run --release --example dewatering` (pictures in `out/dewatering/`,
//! `--out DIR` to change; `--help` for the options).

mod support;

use std::time::Instant;

use quintet::model::{
    Aquifer, Conductivity, Field, Geometry, Model, NonlinearSystem, OuterMethod, OuterSettings,
    OuterStep,
};
use quintet::prelude::*;
use support::contour::round_levels;
use support::picture::{boxed_label, finite_range, Map, MapChart};
use support::{ramp, Failure, Options};

const HELP: &str = "\
dewatering: steady water table in an invented unconfined aquifer dewatered by four wells around
a construction pit above a buried bedrock knoll; Newton and Picard outer iterations, water
budget, dry cells; writes water_table.png.

Usage: cargo run --release --example dewatering -- [OPTIONS]

Options:
    --cell M      cell size in m (default 10)";

// Sand and gravel: hydraulic conductivity 1e-5 to 1e-2 m/s for clean sand to gravel (Freeze
// & Cherry, Groundwater, 1979, Table 2.2, from memory); the value below lies inside.
const K: f64 = 2e-4; // m/s

// The invented site, in metres above the datum, m/s and m³/s.
const SIZE: (f64, f64) = (1200.0, 800.0);
/// River along the west edge and the regional water level along the east edge.
const RIVER_STAGE: f64 = 12.0;
const EAST_LEVEL: f64 = 14.0;
/// Aquifer base: at `BASE` m, rising by `height` to a knoll under the pit.
const BASE: f64 = -10.0;
const KNOLL: (f64, f64, f64, f64) = (720.0, 400.0, 19.5, 140.0); // x, y, height, radius scale
/// Recharge: 200 mm per year, except on the pit, whose floor is sealed.
const RECHARGE: f64 = 0.200 / (365.25 * 86_400.0);
/// The pit: x and y ranges.
const PIT: ((f64, f64), (f64, f64)) = ((630.0, 810.0), (350.0, 450.0));
/// The wells around the pit: label, x, y, requested rate (m³/s out of the aquifer).
const WELLS: [(&str, f64, f64, f64); 4] = [
    ("D1", 530.0, 400.0, 0.025),
    ("D2", 910.0, 400.0, 0.025),
    ("D3", 720.0, 230.0, 0.025),
    ("D4", 720.0, 570.0, 0.025),
];

fn base(x: f64, y: f64) -> f64 {
    let (cx, cy, height, scale) = KNOLL;
    BASE + height * (-((x - cx).powi(2) + (y - cy).powi(2)) / (2.0 * scale * scale)).exp()
}

fn main() {
    support::run(body);
}

fn body() -> Result<(), Failure> {
    let mut options = Options::parse("dewatering", HELP)?;
    let cell: f64 = support::option(&mut options.rest, "--cell", 10.0)?;
    if !(5.0..=50.0).contains(&cell) {
        return Err(support::failure("--cell: give a size between 5 and 50 m"));
    }
    let out = options.finish()?;

    let (nx, ny) = (
        (SIZE.0 / cell).round() as usize,
        (SIZE.1 / cell).round() as usize,
    );
    let (dx, dy) = (SIZE.0 / nx as f64, SIZE.1 / ny as f64);
    // The geometry's thickness sets the face areas of edge conditions only: the full
    // saturated thickness at the edges.
    let geometry = Geometry::cell_centered(nx, ny, dx, dy, RIVER_STAGE - BASE)?;
    let grid = geometry.grid();
    let bottom = Field::from_fn(grid, |i, j| {
        let (x, y) = geometry.position(grid.index(i, j));
        base(x, y)
    });

    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(K))?;
    model.prescribe_edge("river (west edge)", Side::West, RIVER_STAGE)?;
    model.prescribe_edge("regional level (east edge)", Side::East, EAST_LEVEL)?;
    let recharge = Field::from_fn(grid, |i, j| {
        let (x, y) = geometry.position(grid.index(i, j));
        let ((x0, x1), (y0, y1)) = PIT;
        if (x0..=x1).contains(&x) && (y0..=y1).contains(&y) {
            0.0
        } else {
            RECHARGE
        }
    });
    model.areal_source("recharge (not on the pit)", recharge)?;
    let mut wells = Vec::new();
    for (label, x, y, rate) in WELLS {
        let cell = geometry
            .cell_at(x, y)
            .ok_or_else(|| support::failure(format!("{label} lies outside the model")))?;
        let id = model.point_source(format!("well {label}"), cell, -rate)?;
        wells.push((label, cell, rate, id));
    }
    // Smoothing width 5 cm; pumping falls off once less than 1 m of water stands in a well
    // cell (the pumps' intakes sit near the base).
    let aquifer = Aquifer::unconfined(bottom.clone())
        .smoothing_width(0.05)
        .pumping_reduction(1.0);

    println!(
        "Unconfined aquifer: {:.0} m x {:.0} m, K = {K:e} m/s, base at {BASE} m rising to a knoll at {:.1} m under the pit; {grid} of {dx} m",
        SIZE.0, SIZE.1, BASE + KNOLL.2
    );
    println!(
        "river at {RIVER_STAGE} m (west), regional level {EAST_LEVEL} m (east), recharge {:.0} mm/year, four wells of {:.0} L/s requested",
        RECHARGE * 365.25 * 86_400.0 * 1e3,
        1e3 * WELLS[0].3
    );

    let mut results = Vec::new();
    for method in [OuterMethod::Newton, OuterMethod::Picard] {
        let mut system = NonlinearSystem::aquifer(&model, aquifer.clone())?;
        let mut heads = system.initial_solution(RIVER_STAGE);
        // At most 1 m of change per outer iteration keeps the iterates in range while the
        // knoll drains.
        let settings = OuterSettings {
            max_change: 1.0,
            max_outer: 300,
            ..OuterSettings::new(method)
        };
        println!("\n{method:?} outer iteration (change in m, residual in m³/s):");
        let started = Instant::now();
        let mut log: Vec<OuterStep> = Vec::new();
        let report = system.solve(&mut heads, &settings, &mut |s| {
            if s.outer <= 12 || s.outer % 10 == 0 || s.change < 1e-4 {
                println!("  {s}");
            }
            log.push(*s);
        })?;
        let seconds = started.elapsed().as_secs_f64();
        println!(
            "  {method:?}: {} outer iterations, {} inner iterations, {seconds:.2} s",
            report.outer_iterations, report.inner_iterations
        );
        results.push((method, report, heads, system, seconds));
    }

    let (_, newton_report, heads, system, _) = &results[0];
    let (_, picard_report, picard_heads, _, _) = &results[1];
    let difference = heads
        .iter()
        .zip(picard_heads)
        .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
    println!(
        "\nouter iterations: Newton {}, Picard {}; inner iterations: Newton {}, Picard {}; largest head difference {difference:.1e} m",
        newton_report.outer_iterations,
        picard_report.outer_iterations,
        newton_report.inner_iterations,
        picard_report.inner_iterations
    );

    let budget = system.budget(heads)?;
    println!("\nWater budget (Newton solution)\n{}", budget.table("m³/s"));
    println!("\nWells: requested and delivered rate, water standing in the well cell");
    for &(label, cell, rate, id) in &wells {
        let delivered = budget.line(id).map_or(0.0, |l| l.outflow);
        println!(
            "  {label}: {:>5.1} L/s requested, {:>5.1} L/s delivered, {:>5.2} m of water above the base",
            1e3 * rate,
            1e3 * delivered,
            aquifer.saturated_thickness(cell, heads[cell])
        );
    }
    let check = system.check(heads)?;
    println!("\n{check}");

    // The water table, dry cells left grey and crossed.
    let dry = check.dry.clone();
    let shown: Vec<f64> = heads
        .iter()
        .enumerate()
        .map(|(k, &h)| if dry.contains(&k) { f64::NAN } else { h })
        .collect();
    let png = out.join("water_table.png");
    let (lo, hi) = finite_range(&shown);
    let levels = round_levels(lo, hi, 12);
    let map = Map {
        title: format!(
            "Water table while dewatering ({} dry cells, grey)",
            dry.len()
        ),
        x_label: "x [m]".into(),
        y_label: "y [m]".into(),
        scale_label: "water table [m above datum]".into(),
        x_faces: support::faces(geometry.x(), 1.0),
        y_faces: support::faces(geometry.y(), 1.0),
        x_nodes: support::nodes(geometry.x(), 1.0),
        y_nodes: support::nodes(geometry.y(), 1.0),
        values: &shown,
        ramp: &ramp::HEAD,
        decimals: support::contour::decimals_for(&levels),
        levels,
    };
    let centres: Vec<(f64, f64)> = dry.iter().map(|&k| geometry.position(k)).collect();
    map.draw(&png, |chart| draw_features(chart, &centres, (dx, dy)))?;
    println!("\npicture: {}", png.display());
    Ok(())
}

/// Dry cells (a cross each), the pit, the knoll's 5 m base contour, the river, and the wells.
fn draw_features(
    chart: &mut MapChart<'_, '_>,
    dry: &[(f64, f64)],
    (dx, dy): (f64, f64),
) -> Result<(), Failure> {
    use plotters::prelude::*;
    let mark = RGBColor(60, 60, 60);
    for &(x, y) in dry {
        let (a, b) = (0.35 * dx, 0.35 * dy);
        chart.draw_series(std::iter::once(PathElement::new(
            vec![(x - a, y - b), (x + a, y + b)],
            mark.stroke_width(1),
        )))?;
        chart.draw_series(std::iter::once(PathElement::new(
            vec![(x - a, y + b), (x + a, y - b)],
            mark.stroke_width(1),
        )))?;
    }
    let ((x0, x1), (y0, y1)) = PIT;
    chart.draw_series(std::iter::once(PathElement::new(
        vec![(x0, y0), (x1, y0), (x1, y1), (x0, y1), (x0, y0)],
        BLACK.stroke_width(2),
    )))?;
    boxed_label(
        chart,
        (0.5 * (x0 + x1), y0 - 22.0),
        "pit (sealed floor)",
        13,
    )?;
    // Where the base stands 5 m above the datum.
    let (cx, cy, height, scale) = KNOLL;
    let radius = scale * (2.0 * (height / (5.0 - BASE)).ln()).sqrt();
    let ring: Vec<(f64, f64)> = (0..=96)
        .map(|s| {
            let phi = 2.0 * std::f64::consts::PI * s as f64 / 96.0;
            (cx + radius * phi.cos(), cy + radius * phi.sin())
        })
        .collect();
    let rock = RGBColor(110, 70, 40);
    chart.draw_series(DashedLineSeries::new(ring, 6, 4, rock.stroke_width(2)))?;
    boxed_label(
        chart,
        (cx - 210.0, cy + radius + 40.0),
        "bedrock knoll: base 5 m (dashed)",
        13,
    )?;
    let water = RGBColor(20, 70, 200);
    chart.draw_series(std::iter::once(PathElement::new(
        vec![(0.0, 0.0), (0.0, SIZE.1)],
        water.stroke_width(8),
    )))?;
    boxed_label(chart, (110.0, 60.0), &format!("river {RIVER_STAGE} m"), 13)?;
    boxed_label(
        chart,
        (SIZE.0 - 150.0, 60.0),
        &format!("regional {EAST_LEVEL} m"),
        13,
    )?;
    for (label, x, y, _) in WELLS {
        chart.draw_series(std::iter::once(Circle::new((x, y), 6, BLACK.filled())))?;
        chart.draw_series(std::iter::once(Circle::new(
            (x, y),
            9,
            WHITE.stroke_width(2),
        )))?;
        let dx_label = if x < KNOLL.0 { -45.0 } else { 45.0 };
        boxed_label(chart, (x + dx_label, y), label, 13)?;
    }
    Ok(())
}

//! A confined aquifer of our own invention: sand with three clay lenses, a lake along the west
//! edge (fixed head), a river crossing the north of the valley (exchange through its bed),
//! recharge, and two pumping wells. Solved once without and once with pumping; prints the
//! water budget, the drawdown at the wells and where the pumped water comes from, and draws
//! the head map (contours, wells, river, lenses) and the drawdown map.
//!
//! The valley, its lenses, river, lake and wells are invented for this demonstration; only
//! the conductivity ranges come from a handbook. Results support, and do not replace,
//! engineering judgement: design wells to local codes and licensed professional practice.
//!
//! Run with `cargo run --release --example aquifer` (pictures in `out/aquifer/`, `--out DIR`
//! to change; `--help` for the options).

mod support;

use std::f64::consts::PI;

use quintet::model::{Budget, Conductivity, Field, Geometry, Model};
use quintet::prelude::*;
use support::contour::round_levels;
use support::picture::{boxed_label, finite_range, Map, MapChart};
use support::{ramp, Failure, Options};

const HELP: &str = "\
aquifer: steady heads in an invented confined sand aquifer with clay lenses, a lake, a river,
recharge and two pumping wells; prints the water budget and the drawdown at the wells, and
writes heads.png and drawdown.png.

Usage: cargo run --release --example aquifer -- [OPTIONS]

Options:
    --cell M      cell size in m (default 20)";

// Hydraulic conductivity ranges from Freeze & Cherry, Groundwater, 1979, Table 2.2 (range of
// values of hydraulic conductivity and permeability), from memory: clean sand 1e-6 to 1e-2
// m/s, unweathered marine clay 1e-12 to 1e-9 m/s. The values below lie inside those ranges.
const K_SAND: f64 = 2e-4; // m/s
const K_CLAY: f64 = 1e-9; // m/s

// The invented valley, in metres, m/s and m³/s.
const SIZE: (f64, f64) = (3000.0, 2000.0);
const THICKNESS: f64 = 20.0;
/// Clay lenses: centre x, centre y, half-length along x, half-width along y.
const LENSES: [(f64, f64, f64, f64); 3] = [
    (1050.0, 1250.0, 380.0, 140.0),
    (2050.0, 820.0, 260.0, 200.0),
    (650.0, 520.0, 220.0, 120.0),
];
/// The lake along the west edge: water level (m above the datum).
const LAKE_LEVEL: f64 = 48.0;
/// The river's course, upstream (east) first, and its stage at both ends.
const RIVER: [(f64, f64); 5] = [
    (3000.0, 1720.0),
    (2350.0, 1580.0),
    (1550.0, 1760.0),
    (750.0, 1640.0),
    (0.0, 1700.0),
];
const RIVER_STAGE: (f64, f64) = (52.5, 48.2);
/// The river bed: conductivity (m/s), thickness (m) and width (m) of the wetted bed.
const BED: (f64, f64, f64) = (1e-5, 1.0, 12.0);
/// Recharge: 150 mm per year, in m/s.
const RECHARGE: f64 = 0.150 / (365.25 * 86_400.0);
/// Wells: label, x, y, pumping rate (m³/s, positive out of the aquifer).
const WELLS: [(&str, f64, f64, f64); 2] =
    [("W1", 1620.0, 1130.0, 0.015), ("W2", 2430.0, 560.0, 0.010)];
/// Well-screen radius (m), for the drawdown in the wells.
const WELL_RADIUS: f64 = 0.15;

fn in_lens((x, y): (f64, f64)) -> bool {
    LENSES
        .iter()
        .any(|&(cx, cy, a, b)| ((x - cx) / a).powi(2) + ((y - cy) / b).powi(2) < 1.0)
}

fn main() {
    support::run(body);
}

fn body() -> Result<(), Failure> {
    let mut options = Options::parse("aquifer", HELP)?;
    let cell: f64 = support::option(&mut options.rest, "--cell", 20.0)?;
    if !(5.0..=200.0).contains(&cell) {
        return Err(support::failure("--cell: give a size between 5 and 200 m"));
    }
    let out = options.finish()?;

    let (nx, ny) = (
        (SIZE.0 / cell).round() as usize,
        (SIZE.1 / cell).round() as usize,
    );
    let (dx, dy) = (SIZE.0 / nx as f64, SIZE.1 / ny as f64);
    let geometry = Geometry::cell_centered(nx, ny, dx, dy, THICKNESS)?;
    let grid = geometry.grid();
    let k = Field::from_fn(grid, |i, j| {
        if in_lens(geometry.position(grid.index(i, j))) {
            K_CLAY
        } else {
            K_SAND
        }
    });

    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(k))?;
    let lake = model.prescribe_edge("lake (west edge)", Side::West, LAKE_LEVEL)?;
    let (river_cells, conductance, stage) = river_cells(&geometry);
    let river = model.cell_exchange("river", river_cells.clone(), conductance, stage)?;
    // The lenses are clay from the top to the bottom of the aquifer: the recharge that
    // reaches the aquifer through its confining layer enters the sand only.
    let rate = Field::from_fn(grid, |i, j| {
        if in_lens(geometry.position(grid.index(i, j))) {
            0.0
        } else {
            RECHARGE
        }
    });
    let recharge = model.areal_source("recharge (on the sand)", rate)?;
    let mut wells = Vec::new();
    for (label, x, y, rate) in WELLS {
        let cell = geometry
            .cell_at(x, y)
            .ok_or_else(|| support::failure(format!("{label} lies outside the model")))?;
        if in_lens(geometry.position(cell)) {
            return Err(support::failure(format!("{label} is screened in clay")));
        }
        let id = model.point_source(format!("well {label}"), cell, -rate)?;
        wells.push((label, cell, rate, id));
    }
    // East, south and north edges: no condition, so no flow (valley sides).

    let mut system = model.assemble()?;
    let mut pcg = Pcg::new(IncompleteCholesky::mic0(system.operator())?).with_options(
        SolveOptions::default()
            .tolerance(1e-10)
            .max_iterations(50_000),
    );
    let mut ws = Workspace::for_grid(grid);

    // Without pumping first, for the drawdown; then with the wells on, warm-started.
    system.force(|f| {
        for w in &wells {
            f.set(w.3, 0.0)?;
        }
        Ok(())
    })?;
    let mut natural = system.initial_solution(LAKE_LEVEL);
    let natural_report = system.solve(&mut pcg, &mut natural, &mut ws)?;
    let natural_budget = system.budget(&natural)?;
    system.force(|f| {
        for w in &wells {
            f.set(w.3, -w.2)?;
        }
        Ok(())
    })?;
    let mut heads = natural.clone();
    let report = system.solve(&mut pcg, &mut heads, &mut ws)?;
    let budget = system.budget(&heads)?;

    println!(
        "Confined aquifer: {:.0} m x {:.0} m, {THICKNESS} m of sand (K = {K_SAND:e} m/s) with three clay lenses (K = {K_CLAY:e} m/s), {grid} of {dx} m",
        SIZE.0, SIZE.1
    );
    println!(
        "lake at {LAKE_LEVEL} m on the west edge; river over {} cells, stage {} m to {} m; recharge {:.0} mm/year",
        river_cells.len(),
        RIVER_STAGE.0,
        RIVER_STAGE.1,
        RECHARGE * 365.25 * 86_400.0 * 1e3
    );
    println!("without pumping: {natural_report}");
    println!("with pumping:    {report}");
    println!("\nWater budget with pumping\n{}", budget.table("m³/s"));
    if let Some(warning) = budget.warning(1e-3) {
        println!("WARNING: {warning}");
    }

    let transmissivity = K_SAND * THICKNESS;
    // Equivalent radius of a square cell: the radius at which the steady radial (Thiem)
    // profile around the well equals the cell's computed head, r_e = dx·exp(−π/2) ≈ 0.208·dx
    // (Peaceman 1978, "Interpretation of well-block pressures in numerical reservoir
    // simulation", SPE Journal 18(3), from memory). Valid for a well in uniform conductivity
    // in the middle of a square cell.
    let equivalent_radius = dx * (-PI / 2.0).exp();
    println!("\nDrawdown at the wells (natural head minus pumped head)");
    println!(
        "{:<6} {:>10} {:>14} {:>14} {:>18}",
        "well", "rate [L/s]", "head [m]", "cell [m]", "in the well [m]"
    );
    for &(label, cell, rate, _) in &wells {
        let in_cell = natural[cell] - heads[cell];
        let thiem = rate / (2.0 * PI * transmissivity) * (equivalent_radius / WELL_RADIUS).ln();
        println!(
            "{label:<6} {:>10.1} {:>14.3} {:>14.3} {:>18.3}",
            1e3 * rate,
            heads[cell],
            in_cell,
            in_cell + thiem
        );
    }
    println!(
        "(cell: the cell-average drawdown; in the well: plus the Thiem loss from r_e = {equivalent_radius:.2} m to the {WELL_RADIUS} m screen)"
    );
    println!("\nWhere the pumped water comes from (change in net inflow, L/s)");
    for (label, id) in [("lake", lake), ("river", river), ("recharge", recharge)] {
        let change = net(&budget, id) - net(&natural_budget, id);
        println!("  {label:<10} {:>+8.2}", 1e3 * change);
    }

    let heads_png = out.join("heads.png");
    let (lo, hi) = finite_range(&heads);
    let levels = round_levels(lo, hi, 12);
    let decimals = support::contour::decimals_for(&levels);
    let map = Map {
        title: format!(
            "Heads with pumping ({:.0} L/s in total)",
            1e3 * WELLS.iter().map(|w| w.3).sum::<f64>()
        ),
        x_label: "x [m]".into(),
        y_label: "y [m]".into(),
        scale_label: "hydraulic head [m]".into(),
        x_faces: support::faces(geometry.x(), 1.0),
        y_faces: support::faces(geometry.y(), 1.0),
        x_nodes: support::nodes(geometry.x(), 1.0),
        y_nodes: support::nodes(geometry.y(), 1.0),
        values: &heads,
        ramp: &ramp::HEAD,
        levels,
        decimals,
    };
    map.draw(&heads_png, draw_features)?;

    let drawdown: Vec<f64> = natural.iter().zip(&heads).map(|(a, b)| a - b).collect();
    let drawdown_png = out.join("drawdown.png");
    let levels = round_levels(0.0, finite_range(&drawdown).1, 10);
    let map = Map {
        title: "Drawdown caused by the two wells".into(),
        scale_label: "drawdown [m]".into(),
        values: &drawdown,
        ramp: &ramp::DRAWDOWN,
        decimals: support::contour::decimals_for(&levels),
        levels,
        ..map
    };
    map.draw(&drawdown_png, draw_features)?;
    println!(
        "\npictures: {}, {}",
        heads_png.display(),
        drawdown_png.display()
    );
    Ok(())
}

/// Net inflow of one condition (m³/s).
fn net(budget: &Budget, id: quintet::model::ConditionId) -> f64 {
    budget.line(id).map_or(0.0, |l| l.net())
}

/// The cells the river crosses, in order downstream, with their bed conductances (m²/s:
/// bed conductivity / bed thickness × width × length of river in the cell) and stages (m,
/// falling linearly with distance along the river).
fn river_cells(geometry: &Geometry) -> (Vec<usize>, Vec<f64>, Vec<f64>) {
    let length: f64 = RIVER
        .windows(2)
        .map(|w| (w[1].0 - w[0].0).hypot(w[1].1 - w[0].1))
        .sum();
    let step = 0.25 * geometry.x().width(0).min(geometry.y().width(0));
    let (mut cells, mut lengths, mut stages): (Vec<usize>, Vec<f64>, Vec<f64>) = Default::default();
    let mut along = 0.0;
    for w in RIVER.windows(2) {
        let reach = (w[1].0 - w[0].0).hypot(w[1].1 - w[0].1);
        let samples = (reach / step).ceil() as usize;
        for s in 0..samples {
            let t = (s as f64 + 0.5) / samples as f64;
            let (x, y) = (
                w[0].0 + t * (w[1].0 - w[0].0),
                w[0].1 + t * (w[1].1 - w[0].1),
            );
            let Some(k) = geometry.cell_at(x, y) else {
                continue;
            };
            let d = along + t * reach;
            let stage = RIVER_STAGE.0 + (RIVER_STAGE.1 - RIVER_STAGE.0) * d / length;
            match cells.iter().position(|&c| c == k) {
                Some(n) => lengths[n] += reach / samples as f64,
                None => {
                    cells.push(k);
                    lengths.push(reach / samples as f64);
                    stages.push(stage);
                }
            }
        }
        along += reach;
    }
    let (bed_k, bed_b, width) = BED;
    let conductance = lengths.iter().map(|l| bed_k / bed_b * width * l).collect();
    (cells, conductance, stages)
}

/// The lenses' outlines, the river, the lake edge and the wells.
fn draw_features(chart: &mut MapChart<'_, '_>) -> Result<(), Failure> {
    use plotters::prelude::*;
    let clay = RGBColor(90, 60, 40);
    for (n, &(cx, cy, a, b)) in LENSES.iter().enumerate() {
        let ring: Vec<(f64, f64)> = (0..=72)
            .map(|s| {
                let phi = 2.0 * PI * s as f64 / 72.0;
                (cx + a * phi.cos(), cy + b * phi.sin())
            })
            .collect();
        chart.draw_series(DashedLineSeries::new(ring, 6, 4, clay.stroke_width(2)))?;
        if n == 0 {
            boxed_label(chart, (cx - 150.0, cy + b + 45.0), "clay lens", 13)?;
        }
    }
    let water = RGBColor(20, 70, 200);
    chart.draw_series(std::iter::once(PathElement::new(
        RIVER.to_vec(),
        water.stroke_width(4),
    )))?;
    boxed_label(chart, (2650.0, 1740.0), "river", 13)?;
    chart.draw_series(std::iter::once(PathElement::new(
        vec![(0.0, 0.0), (0.0, SIZE.1)],
        water.stroke_width(8),
    )))?;
    boxed_label(chart, (170.0, 120.0), &format!("lake {LAKE_LEVEL} m"), 13)?;
    for (label, x, y, rate) in WELLS {
        chart.draw_series(std::iter::once(Circle::new((x, y), 6, BLACK.filled())))?;
        chart.draw_series(std::iter::once(Circle::new(
            (x, y),
            9,
            WHITE.stroke_width(2),
        )))?;
        boxed_label(
            chart,
            (x + 170.0, y + 60.0),
            &format!("{label} {:.0} L/s", 1e3 * rate),
            13,
        )?;
    }
    Ok(())
}

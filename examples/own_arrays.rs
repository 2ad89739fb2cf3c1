//! Your own finite-volume arrays, first-class: the base plate of a power converter, assembled
//! the way your own code would (plain `Vec<f64>` of a_P, a_W, a_E, a_S, a_N and b per cell),
//! solved in place through a borrowed view with the multigrid-preconditioned PCG, checked with
//! an energy balance table, then warmed up from switch-on in your own backward-Euler loop that
//! reuses the operator, the preconditioner, the workspace and every vector (a step, right-hand
//! side and solve, allocates nothing when run inside a rayon pool: `tests/own_arrays_alloc.rs`
//! counts it). Prints a short summary and draws the steady temperature map.
//!
//! The plate, the modules, the cold bars and the cabinet air are invented for this
//! demonstration; only the aluminium properties come from a handbook. Results support, and do
//! not replace, engineering judgement: design to local codes and licensed professional
//! practice.
//!
//! Run with `cargo run --release --example own_arrays` (picture in `out/own_arrays/`, `--out
//! DIR` to change; `--help` for the options).

mod support;

use plotters::prelude::{Color, Cross, PathElement, RGBColor, BLACK, WHITE};
use quintet::model::FlowKind;
use quintet::prelude::*;
use support::contour::{decimals_for, round_levels};
use support::picture::{boxed_label, finite_range, Map, MapChart};
use support::{ramp, Failure, Options};

const HELP: &str = "\
own_arrays: a converter base plate assembled as your own finite-volume arrays (a_P, a_W, a_E,
a_S, a_N, b per cell); steady temperature with MG-PCG, energy balance table, then the warm-up
after switch-on in your own backward-Euler loop; writes temperature.png.

Usage: cargo run --release --example own_arrays -- [OPTIONS]

Options:
    --cell MM       cell size in mm (default 0.5: 600 x 400 cells)
    --dt S          time step in s (default 5)
    --duration S    length of the warm-up run in s (default 180)";

// Pure aluminium at 300 K: k = 237 W/(m·K), ρ = 2702 kg/m³, c_p = 903 J/(kg·K) (Incropera,
// DeWitt, Bergman & Lavine, Fundamentals of Heat and Mass Transfer, 6th ed., 2007, Table A.1,
// from memory).
const K_ALUMINIUM: f64 = 237.0;
const RHO_C_ALUMINIUM: f64 = 2702.0 * 903.0;

// The invented design, in metres, watts and °C.
const PLATE: (f64, f64) = (0.300, 0.200); // 300 mm x 200 mm
const THICKNESS: f64 = 0.008; // 8 mm
/// Power modules: label, power (W), footprint (x from, x to, y from, y to).
const MODULES: [(&str, f64, [f64; 4]); 6] = [
    ("module 1", 90.0, [0.035, 0.085, 0.052, 0.088]),
    ("module 2", 120.0, [0.125, 0.175, 0.052, 0.088]),
    ("module 3", 90.0, [0.215, 0.265, 0.052, 0.088]),
    ("module 4", 80.0, [0.035, 0.085, 0.112, 0.148]),
    ("module 5", 110.0, [0.125, 0.175, 0.112, 0.148]),
    ("module 6", 80.0, [0.215, 0.265, 0.112, 0.148]),
];
/// Water-cooled bars clamped under the plate: label, water temperature, footprint. The plate
/// cells over a bar are held at the water temperature (ideal contact: a demonstration
/// simplification).
const BARS: [(&str, f64, [f64; 4]); 2] = [
    (
        "cold bar A (inlet water)",
        25.0,
        [0.020, 0.280, 0.018, 0.032],
    ),
    (
        "cold bar B (outlet water)",
        29.0,
        [0.020, 0.280, 0.168, 0.182],
    ),
];
/// Cabinet air over the uncovered top face: temperature and a combined convection and
/// radiation coefficient (demonstration values). The underside is taken as insulated.
const AIR: f64 = 35.0;
const H_AIR: f64 = 8.0;

fn inside(rect: [f64; 4], (x, y): (f64, f64)) -> bool {
    x > rect[0] && x < rect[1] && y > rect[2] && y < rect[3]
}

/// What your own code holds: the finite-volume coefficients of
/// `a_P·T_P = a_W·T_W + a_E·T_E + a_S·T_S + a_N·T_N + b`, one entry per cell, in W/K and W,
/// with two source vectors: modules running, and idle (air exchange only).
struct Arrays {
    a_p: Vec<f64>,
    a_w: Vec<f64>,
    a_e: Vec<f64>,
    a_s: Vec<f64>,
    a_n: Vec<f64>,
    b: Vec<f64>,
    b_idle: Vec<f64>,
}

/// The plate's arrays on `nx × ny` cells of `dx × dy`, written as a user's assembly loop would
/// be: face conductances from the two half cells in series (the harmonic mean of the cell
/// conductivities), insulated outer edges, the module power spread over each footprint, and
/// the air exchange folded into a_P and b.
fn assemble(nx: usize, ny: usize, dx: f64, dy: f64, k: &[f64]) -> Result<Arrays, Failure> {
    let n = nx * ny;
    let centre = |i: usize, j: usize| ((i as f64 + 0.5) * dx, (j as f64 + 0.5) * dy);
    let mut a = Arrays {
        a_p: vec![0.0; n],
        a_w: vec![0.0; n],
        a_e: vec![0.0; n],
        a_s: vec![0.0; n],
        a_n: vec![0.0; n],
        b: vec![0.0; n],
        b_idle: vec![0.0; n],
    };
    // Conductance between cells c and d across a face of area `face`, centres `dist` apart.
    let between = |c: usize, d: usize, face: f64, dist: f64| {
        let k_face = 2.0 / (1.0 / k[c] + 1.0 / k[d]);
        k_face * face / dist
    };
    for j in 0..ny {
        for i in 0..nx {
            let c = i + nx * j;
            if i > 0 {
                a.a_w[c] = between(c, c - 1, dy * THICKNESS, dx);
            }
            if i + 1 < nx {
                a.a_e[c] = between(c, c + 1, dy * THICKNESS, dx);
            }
            if j > 0 {
                a.a_s[c] = between(c, c - nx, dx * THICKNESS, dy);
            }
            if j + 1 < ny {
                a.a_n[c] = between(c, c + nx, dx * THICKNESS, dy);
            }
            a.a_p[c] = a.a_w[c] + a.a_e[c] + a.a_s[c] + a.a_n[c];
        }
    }
    let covered = |c: usize| {
        let at = centre(c % nx, c / nx);
        MODULES.iter().any(|m| inside(m.2, at)) || BARS.iter().any(|b| inside(b.2, at))
    };
    for c in (0..n).filter(|&c| !covered(c)) {
        let h_a = H_AIR * dx * dy;
        a.a_p[c] += h_a;
        a.b_idle[c] = h_a * AIR;
    }
    a.b.copy_from_slice(&a.b_idle);
    for (label, power, footprint) in MODULES {
        let cells: Vec<usize> = (0..n)
            .filter(|&c| inside(footprint, centre(c % nx, c / nx)))
            .collect();
        if cells.is_empty() {
            return Err(support::failure(format!(
                "{label}: no cell under its footprint; use smaller cells"
            )));
        }
        for &c in &cells {
            a.b[c] += power / cells.len() as f64;
        }
    }
    Ok(a)
}

fn main() {
    support::run(body);
}

fn body() -> Result<(), Failure> {
    let mut options = Options::parse("own_arrays", HELP)?;
    let cell_mm: f64 = support::option(&mut options.rest, "--cell", 0.5)?;
    let dt: f64 = support::option(&mut options.rest, "--dt", 5.0)?;
    let duration: f64 = support::option(&mut options.rest, "--duration", 180.0)?;
    if !(0.25..=10.0).contains(&cell_mm) {
        return Err(support::failure(
            "--cell: give a size between 0.25 and 10 mm",
        ));
    }
    if !(dt > 0.0 && duration >= dt && duration / dt <= 100_000.0) {
        return Err(support::failure(
            "--dt, --duration: give 0 < dt <= duration, at most 100 000 steps",
        ));
    }
    let out = options.finish()?;

    // ---- your own arrays ----
    let h = cell_mm / 1000.0;
    let (nx, ny) = (
        (PLATE.0 / h).round() as usize,
        (PLATE.1 / h).round() as usize,
    );
    let (dx, dy) = (PLATE.0 / nx as f64, PLATE.1 / ny as f64);
    let grid = Grid::new(nx, ny)?;
    let n = grid.cells();
    let centre = |c: usize| {
        let (i, j) = grid.coords(c);
        ((i as f64 + 0.5) * dx, (j as f64 + 0.5) * dy)
    };
    let k = vec![K_ALUMINIUM; n];
    let arrays = assemble(nx, ny, dx, dy, &k)?;
    let bar_cells: Vec<Vec<usize>> = BARS
        .iter()
        .map(|bar| (0..n).filter(|&c| inside(bar.2, centre(c))).collect())
        .collect();
    let module_cells: Vec<Vec<usize>> = MODULES
        .iter()
        .map(|m| (0..n).filter(|&c| inside(m.2, centre(c))).collect())
        .collect();
    let mut covered = vec![false; n];
    for &c in bar_cells.iter().chain(&module_cells).flatten() {
        covered[c] = true;
    }
    let air_cells: Vec<usize> = (0..n).filter(|&c| !covered[c]).collect();
    let fixed = FixedCells::new(grid, bar_cells.iter().flatten().copied())?;

    // ---- steady state: a view of the arrays, nothing copied ----
    let op = Banded5View::from_finite_volume(
        grid,
        &arrays.a_p,
        &arrays.a_w,
        &arrays.a_e,
        &arrays.a_s,
        &arrays.a_n,
    )?
    .with_fixed(&fixed)?;
    let mut t = vec![AIR; n];
    for ((_, water, _), cells) in BARS.iter().zip(&bar_cells) {
        cells.iter().for_each(|&c| t[c] = *water);
    }
    let mut ws = Workspace::for_grid(grid);
    let tight = SolveOptions::default().tolerance(1e-10);
    let mut pcg =
        Pcg::new(Multigrid::new(&op, MultigridSettings::default())?).with_options(tight.clone());
    let report = pcg.solve_with(&op, &arrays.b, &mut t, &mut ws)?;
    let steady = t.clone();

    let mut budget = SystemBudget::new(&op, &steady, &arrays.b)?;
    for ((label, _, _), cells) in BARS.iter().zip(&bar_cells) {
        budget = budget.fixed_group(*label, cells.iter().copied())?;
    }
    for ((label, _, _), cells) in MODULES.iter().zip(&module_cells) {
        budget = budget.source_group(*label, FlowKind::ArealSource, cells.iter().copied())?;
    }
    let budget = budget
        .source_group(
            "cabinet air (top face)",
            FlowKind::Exchange,
            air_cells.iter().copied(),
        )?
        .budget();

    let total: f64 = MODULES.iter().map(|m| m.1).sum();
    println!(
        "Converter base plate: {:.0} mm x {:.0} mm x {:.0} mm aluminium, your own finite-volume arrays on {grid} of {cell_mm} mm",
        1e3 * PLATE.0,
        1e3 * PLATE.1,
        1e3 * THICKNESS
    );
    println!(
        "{} power modules, {total} W; cold bars at {} °C and {} °C; top face to cabinet air at {AIR} °C (h = {H_AIR} W/(m²·K))",
        MODULES.len(),
        BARS[0].1,
        BARS[1].1
    );
    println!("\nSteady state\n{report}");
    let (hot, t_max) = hottest(&steady);
    let (hx, hy) = centre(hot);
    let under = MODULES
        .iter()
        .find(|m| inside(m.2, (hx, hy)))
        .map_or("under no module", |m| m.0);
    println!(
        "hottest cell: {t_max:.2} °C at x = {:.1} mm, y = {:.1} mm ({under})",
        1e3 * hx,
        1e3 * hy
    );
    let means: Vec<String> = MODULES
        .iter()
        .zip(&module_cells)
        .map(|(m, cells)| format!("{} {:.2}", m.0, mean(&steady, cells)))
        .collect();
    println!(
        "mean plate temperature under each module, °C: {}",
        means.join(", ")
    );
    println!("\nEnergy balance\n{}", budget.table("W"));
    if let Some(warning) = budget.warning(1e-3) {
        println!("WARNING: {warning}");
    }

    // ---- warm-up after switch-on: your own backward-Euler loop ----
    // Set up once: the heat capacity per cell, the step's center a_P + ρ·c·V/Δt, its view,
    // its preconditioner; the workspace and the vectors are reused. Each step only writes the
    // right-hand side b + ρ·c·V/Δt·T_old and solves, warm-started from T_old.
    let capacity = vec![RHO_C_ALUMINIUM * dx * dy * THICKNESS; n]; // ρ·c·V, J/K
    let storage = CapacityTerm::new(grid, &capacity, dt)?;
    let mut center = vec![0.0; n];
    storage.add_to_center(&arrays.a_p, &mut center)?;
    let step_op = Banded5View::from_finite_volume(
        grid,
        &center,
        &arrays.a_w,
        &arrays.a_e,
        &arrays.a_s,
        &arrays.a_n,
    )?
    .with_fixed(&fixed)?;
    let mut step_pcg =
        Pcg::new(Multigrid::new(&step_op, MultigridSettings::default())?).with_options(tight);
    let mut rhs = vec![0.0; n];
    let mut previous = vec![0.0; n];
    // Before switch-on the plate sits at its idle steady state (bars running, modules off):
    // the steady operator and its solver once more, with the idle sources.
    pcg.solve_with(&op, &arrays.b_idle, &mut t, &mut ws)?;
    let idle_max = hottest(&t).1;
    let steps = (duration / dt).round() as usize;
    let reports_at: Vec<usize> = [10.0, 30.0, 60.0, 120.0, duration]
        .iter()
        .map(|s| ((s / dt).round() as usize).clamp(1, steps))
        .collect();
    println!(
        "\nWarm-up after switch-on from the idle state (hottest cell {idle_max:.2} °C): backward Euler, Δt = {dt} s, {steps} steps;\noperator, multigrid, workspace and vectors set up once"
    );
    println!(
        "{:>8} {:>13} {:>16} {:>14} {:>12}",
        "t [s]", "hottest [°C]", "into storage [W]", "imbalance [%]", "iterations"
    );
    let within = 1.0; // K
    let mut settled: Option<f64> = None;
    let mut iterations = 0;
    for step in 1..=steps {
        previous.copy_from_slice(&t);
        storage.add_to_rhs(&arrays.b, &previous, &mut rhs)?;
        let report = step_pcg.solve_with(&step_op, &rhs, &mut t, &mut ws)?;
        iterations += report.iterations;
        let now = step as f64 * dt;
        if settled.is_none() && (t[hot] - steady[hot]).abs() <= within {
            settled = Some(now);
        }
        if reports_at.contains(&step) {
            // The budget builds its table: only on the steps that print.
            let b = SystemBudget::new(&step_op, &t, &arrays.b)?
                .storage(&storage, &previous)?
                .budget();
            let stored = b
                .lines
                .iter()
                .find(|l| l.kind == FlowKind::Storage)
                .map_or(0.0, |l| -l.net());
            println!(
                "{now:>8.0} {:>13.2} {stored:>16.2} {:>14.1e} {:>12}",
                hottest(&t).1,
                b.imbalance_percent(),
                report.iterations
            );
        }
    }
    println!(
        "{iterations} PCG iterations in {steps} steps ({:.1} per step)",
        iterations as f64 / steps as f64
    );
    match settled {
        Some(s) => println!(
            "the hottest cell of the steady state comes within {within} K of its steady {:.2} °C after {s:.0} s",
            steady[hot]
        ),
        None => println!(
            "the hottest cell of the steady state is still more than {within} K from its steady {:.2} °C after {duration} s",
            steady[hot]
        ),
    }

    // ---- the picture ----
    let path = out.join("temperature.png");
    let levels = round_levels(finite_range(&steady).0, t_max, 8);
    let x_faces: Vec<f64> = (0..=nx).map(|i| 1e3 * i as f64 * dx).collect();
    let y_faces: Vec<f64> = (0..=ny).map(|j| 1e3 * j as f64 * dy).collect();
    let map = Map {
        title: format!("Converter base plate: steady temperature, {total} W in six modules"),
        x_label: "x [mm]".into(),
        y_label: "y [mm]".into(),
        scale_label: "temperature [°C]".into(),
        x_nodes: x_faces.windows(2).map(|f| 0.5 * (f[0] + f[1])).collect(),
        y_nodes: y_faces.windows(2).map(|f| 0.5 * (f[0] + f[1])).collect(),
        x_faces,
        y_faces,
        values: &steady,
        ramp: &ramp::TEMPERATURE,
        decimals: decimals_for(&levels),
        levels,
    };
    map.draw(&path, |chart| {
        draw_parts(chart)?;
        let at = (1e3 * hx, 1e3 * hy);
        chart.draw_series(std::iter::once(Cross::new(at, 6, BLACK.stroke_width(2))))?;
        boxed_label(
            chart,
            (at.0 + 17.0, at.1 + 8.0),
            &format!("hottest {t_max:.1} °C"),
            13,
        )
    })?;
    println!("\npicture: {}", path.display());
    Ok(())
}

/// The hottest cell and its temperature.
fn hottest(t: &[f64]) -> (usize, f64) {
    t.iter().copied().enumerate().fold(
        (0, f64::MIN),
        |best, (k, v)| if v > best.1 { (k, v) } else { best },
    )
}

/// The mean of `t` over `cells`.
fn mean(t: &[f64], cells: &[usize]) -> f64 {
    cells.iter().map(|&c| t[c]).sum::<f64>() / cells.len().max(1) as f64
}

/// Outlines of the modules and the cold bars, in mm.
fn draw_parts(chart: &mut MapChart<'_, '_>) -> Result<(), Failure> {
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
    for (label, water, footprint) in BARS {
        chart.draw_series(std::iter::once(PathElement::new(
            outline(footprint),
            RGBColor(20, 60, 200).stroke_width(3),
        )))?;
        let short = label.split(" (").next().unwrap_or(label);
        boxed_label(
            chart,
            (
                1e3 * footprint[0] + 45.0, // left of the middle, where isoline labels sit
                1e3 * (footprint[2] + footprint[3]) / 2.0,
            ),
            &format!("{short}, {water} °C"),
            13,
        )?;
    }
    for (label, power, footprint) in MODULES {
        chart.draw_series(std::iter::once(PathElement::new(
            outline(footprint),
            WHITE.stroke_width(2),
        )))?;
        boxed_label(
            chart,
            (
                1e3 * (footprint[0] + footprint[1]) / 2.0,
                // Below the upper row, above the lower one: in the gap between the rows.
                if footprint[2] > 0.5 * PLATE.1 {
                    1e3 * footprint[2] - 6.0
                } else {
                    1e3 * footprint[3] + 6.0
                },
            ),
            &format!("{label}, {power} W"),
            12,
        )?;
    }
    Ok(())
}

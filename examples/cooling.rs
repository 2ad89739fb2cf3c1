//! A transient cooling run: the cross-section of a hot stainless-steel bar cooled by a water
//! mist on its top and sides while it lies on an insulating board. Crank–Nicolson steps (the
//! first ones damped) through the model's `Stepper`, each step warm-started from the last;
//! a progress bar while it runs; prints the time the core needs to cool, the iterations per
//! step and an energy check; draws the temperature at four probe points over time and the
//! section at two minutes.
//!
//! The bar and the mist are invented for this demonstration; the steel's properties come
//! from a handbook. The model is linear: radiation and temperature-dependent properties are
//! left out. Results support, and do not replace, engineering judgement.
//!
//! Run with `cargo run --release --example cooling` (pictures in `out/cooling/`, `--out DIR`
//! to change; `--help` for the options).

mod support;

use indicatif::{ProgressBar, ProgressStyle};
use plotters::prelude::SeriesLabelPosition;
use quintet::model::{Conductivity, FlowKind, Geometry, Model, Stepper, Storage, TimeScheme};
use quintet::prelude::*;
use support::chart::{Curve, Legend, LineChart};
use support::contour::{decimals_for, round_levels};
use support::picture::{finite_range, Map};
use support::{ramp, Failure, Options};

const HELP: &str = "\
cooling: transient cooling of a hot stainless-steel bar section in a water mist, with warm-
started Crank-Nicolson steps and a progress bar; writes probes.png and section.png.

Usage: cargo run --release --example cooling -- [OPTIONS]

Options:
    --step S      time step in seconds (default 2)
    --minutes M   length of the run in minutes (default 20)";

// AISI 304 stainless steel at 300 K from Incropera, DeWitt, Bergman & Lavine, Fundamentals of
// Heat and Mass Transfer, 6th ed., 2007, Table A.1, from memory: density 7900 kg/m³,
// specific heat 477 J/(kg·K), conductivity 14.9 W/(m·K).
const DENSITY: f64 = 7900.0;
const SPECIFIC_HEAT: f64 = 477.0;
const CONDUCTIVITY: f64 = 14.9;

// The invented case: an 80 mm x 40 mm section, nodes 1 mm apart, per metre of bar length.
const SECTION: (usize, usize) = (81, 41); // nodes
const SPACING: f64 = 0.001; // m
const START: f64 = 200.0; // °C, uniform when the mist starts
const MIST: f64 = 20.0; // °C
const MIST_COEFFICIENT: f64 = 400.0; // W/(m²·K), a demonstration value
const HANDLING: f64 = 50.0; // °C: the temperature the run reports the section falling below
const SNAPSHOT: f64 = 120.0; // s

fn main() {
    support::run(body);
}

fn body() -> Result<(), Failure> {
    let mut options = Options::parse("cooling", HELP)?;
    let dt: f64 = support::option(&mut options.rest, "--step", 2.0)?;
    let minutes: f64 = support::option(&mut options.rest, "--minutes", 20.0)?;
    let sensible = dt > 0.0 && dt <= 600.0 && minutes > 0.0 && minutes <= 24.0 * 60.0;
    if !sensible {
        return Err(support::failure(
            "--step must lie in (0, 600] s and --minutes in (0, 1440]",
        ));
    }
    let out = options.finish()?;

    let geometry = Geometry::node_centered(SECTION.0, SECTION.1, SPACING, SPACING, 1.0)?;
    let grid = geometry.grid();
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(CONDUCTIVITY))?;
    model.set_storage(Storage::per_volume(DENSITY * SPECIFIC_HEAT))?;
    for (label, side) in [
        ("mist, top", Side::North),
        ("mist, west side", Side::West),
        ("mist, east side", Side::East),
    ] {
        model.edge_exchange(label, side, MIST_COEFFICIENT, MIST)?;
    }
    // South edge: no condition, so insulated (the board).

    let initial = vec![START; grid.cells()];
    // The driver is built from the step operator (storage/Δt + θ·conduction) once; every
    // step reuses it and starts from the previous step's solution.
    let options = SolveOptions::default()
        .tolerance(1e-10)
        .max_iterations(10_000);
    let mut run = Stepper::new(&model, TimeScheme::CrankNicolson, dt, 0.0, &initial, |op| {
        Ok(Pcg::new(IncompleteCholesky::mic0(op)?).with_options(options))
    })?;

    let (mx, my) = (SECTION.0 - 1, SECTION.1 - 1);
    // The slowest point first: the middle of the face on the board.
    let probes = [
        ("bottom face, middle (on the board)", grid.index(mx / 2, 0)),
        ("centre of the section", grid.index(mx / 2, my / 2)),
        ("top face, middle", grid.index(mx / 2, my)),
        ("top corner", grid.index(0, my)),
    ];
    let steps = (minutes * 60.0 / dt).round().max(1.0) as usize;
    println!(
        "Cooling: {} mm x {} mm AISI 304 section at {START} °C, water mist at {MIST} °C (h = {MIST_COEFFICIENT} W/(m²·K)) on top and sides, board below",
        mx as f64 * SPACING * 1e3,
        my as f64 * SPACING * 1e3,
    );
    println!(
        "{} x {} nodes 1 mm apart; Crank–Nicolson, {dt} s steps (first two damped), {steps} steps, each warm-started from the last",
        SECTION.0, SECTION.1
    );

    let bar = ProgressBar::new(steps as u64);
    bar.set_style(
        ProgressStyle::with_template("{bar:36} {pos}/{len} steps  {msg}")
            .map_err(|e| support::failure(format!("progress bar: {e}")))?,
    );
    let mut history: Vec<Vec<(f64, f64)>> = probes
        .iter()
        .map(|&(_, k)| vec![(0.0, initial[k])])
        .collect();
    let (mut iterations, mut first_iterations, mut last_iterations) = (0, 0, 0);
    let (mut released, mut to_mist) = (0.0, 0.0);
    let mut snapshot = None;
    let mut hottest = vec![(0.0, START)];
    for step in 1..=steps {
        let report = run.step()?;
        iterations += report.iterations;
        if step == 1 {
            first_iterations = report.iterations;
        }
        last_iterations = report.iterations;
        let budget = run
            .budget()
            .ok_or_else(|| support::failure("no budget after a step"))?;
        for line in &budget.lines {
            match line.kind {
                FlowKind::Storage => released += line.net() * dt,
                FlowKind::Exchange => to_mist -= line.net() * dt,
                _ => {}
            }
        }
        let t = run.solution();
        hottest.push((
            run.time() / 60.0,
            t.iter().copied().fold(f64::MIN, f64::max),
        ));
        for (points, &(_, k)) in history.iter_mut().zip(&probes) {
            points.push((run.time() / 60.0, t[k]));
        }
        if snapshot.is_none() && run.time() >= SNAPSHOT - 1e-9 {
            snapshot = Some((run.time(), t.to_vec()));
        }
        bar.set_message(format!(
            "t = {:.1} min, hottest {:.1} °C",
            run.time() / 60.0,
            hottest.last().map_or(f64::NAN, |h| h.1)
        ));
        bar.inc(1);
    }
    bar.finish_and_clear();

    let t = run.solution();
    println!("after {:.1} min:", run.time() / 60.0);
    for (label, k) in probes {
        println!("  {label:<36} {:>7.2} °C", t[k]);
    }
    match crossing(&hottest, HANDLING) {
        Some(minute) => println!("the whole section is below {HANDLING} °C after {minute:.2} min"),
        None => {
            println!("the section is still above {HANDLING} °C in places at the end of the run")
        }
    }
    println!(
        "PCG + MIC(0) iterations per step: first {first_iterations}, last {last_iterations}, mean {:.1}",
        iterations as f64 / steps as f64
    );
    let from_temperatures: f64 = (0..grid.cells())
        .map(|k| DENSITY * SPECIFIC_HEAT * geometry.volume(k) * (START - t[k]))
        .sum();
    println!(
        "energy per metre of bar: released from storage {:.2} kJ (from the temperatures: {:.2} kJ), carried off by the mist {:.2} kJ",
        released / 1e3,
        from_temperatures / 1e3,
        to_mist / 1e3
    );

    let probes_png = out.join("probes.png");
    LineChart {
        title: format!("Bar section in a water mist at {MIST} °C: temperature at the probes"),
        x_label: "time [min]".into(),
        y_label: "temperature [°C]".into(),
        x_range: (0.0, run.time() / 60.0),
        y_range: (0.0, START * 1.05),
        log_x: false,
        log_y: false,
        height: 500,
        legend: Legend::Inside(SeriesLabelPosition::UpperRight),
        curves: probes
            .iter()
            .zip(history)
            .map(|(&(label, _), points)| Curve {
                label: label.to_string(),
                points,
            })
            .collect(),
    }
    .draw(&probes_png)?;
    let mut pictures = vec![probes_png];
    if let Some((time, values)) = snapshot {
        let section = out.join("section.png");
        let (lo, hi) = finite_range(&values);
        let levels = round_levels(lo, hi, 10);
        Map {
            title: format!("Bar section after {:.0} s in the mist", time),
            x_label: "x [mm]".into(),
            y_label: "y [mm]".into(),
            scale_label: "temperature [°C]".into(),
            x_faces: support::faces(geometry.x(), 1e3),
            y_faces: support::faces(geometry.y(), 1e3),
            x_nodes: support::nodes(geometry.x(), 1e3),
            y_nodes: support::nodes(geometry.y(), 1e3),
            values: &values,
            ramp: &ramp::TEMPERATURE,
            decimals: decimals_for(&levels),
            levels,
        }
        .draw(&section, |_| Ok(()))?;
        pictures.push(section);
    }
    let names: Vec<String> = pictures.iter().map(|p| p.display().to_string()).collect();
    println!("pictures: {}", names.join(", "));
    Ok(())
}

/// The first time (x) at which the curve falls to `level`, linearly interpolated.
fn crossing(points: &[(f64, f64)], level: f64) -> Option<f64> {
    points.windows(2).find_map(|w| {
        let ((t0, v0), (t1, v1)) = (w[0], w[1]);
        (v0 > level && v1 <= level).then(|| t0 + (t1 - t0) * (v0 - level) / (v0 - v1))
    })
}

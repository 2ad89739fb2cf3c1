//! Your own stencil: a problem defined in about ten lines as a closure that gives each cell's
//! five coefficients, solved with two drivers (PCG with Jacobi, and SOR with an estimated
//! relaxation factor), each with a stopping rule of our own and an observer that records the
//! iteration as it goes.
//!
//! The problem (invented for the demonstration): a vertical section through the ground under
//! a heated floor slab, 24 m wide and 12 m deep, in three soil layers. The slab (8 m wide, in
//! the middle) is at 18 °C, the ground surface on either side at 6 °C, the ground at 12 m
//! depth at 10 °C; the two sides are symmetry planes (no flow). The layer conductivities are
//! round numbers for the demonstration, not measured values.
//!
//! Run with `cargo run --release --example own_stencil` (pictures in `out/own_stencil/`,
//! `--out DIR` to change).

mod support;

use plotters::prelude::SeriesLabelPosition;
use quintet::prelude::*;
use support::chart::{decades, Curve, Legend, LineChart};
use support::contour::{decimals_for, round_levels};
use support::picture::{boxed_label, Map};
use support::{ramp, Failure, Options};

const HELP: &str = "\
own_stencil: a closure-based 5-point operator (ground under a heated slab) solved with PCG
and with SOR, a custom stopping rule and an observer; writes section.png and convergence.png.

Usage: cargo run --release --example own_stencil -- [OPTIONS]

Options:";

const WIDTH: f64 = 24.0; // m
const DEPTH: f64 = 12.0; // m
const H: f64 = 0.1; // cell size, m
const SLAB: (f64, f64) = (8.0, 16.0); // m from the west side
const T_SLAB: f64 = 18.0; // °C
const T_SURFACE: f64 = 6.0;
const T_DEEP: f64 = 10.0;

/// Conductivity at depth `z` below the surface (m), W/(m·K): topsoil, clay, sand.
fn conductivity(z: f64) -> f64 {
    if z < 1.5 {
        0.9
    } else if z < 6.0 {
        1.4
    } else {
        2.2
    }
}

/// Converged when the largest temperature change of the last iteration is at most
/// `kelvin` and the relative residual at most `relative`; gives up after `limit` iterations.
/// (A rule of your own: anything that looks at the `Progress` of the solve.)
struct SettledTemperature {
    kelvin: f64,
    relative: f64,
    limit: usize,
}

impl StopRule for SettledTemperature {
    fn check(&self, p: &Progress<'_>) -> Option<StopReason> {
        let settled = p.solution_change.is_some_and(|c| c <= self.kelvin);
        if settled && p.relative_residual() <= self.relative {
            return Some(StopReason::Custom {
                converged: true,
                label: "temperatures settled and residual small",
            });
        }
        (p.iteration >= self.limit).then_some(StopReason::IterationLimit)
    }
    fn iteration_bound(&self, _unknowns: usize) -> Option<usize> {
        Some(self.limit)
    }
}

fn main() {
    support::run(body);
}

fn body() -> Result<(), Failure> {
    let out = Options::parse("own_stencil", HELP)?.finish()?;
    let (nx, ny) = ((WIDTH / H).round() as usize, (DEPTH / H).round() as usize);
    let grid = Grid::new(nx, ny)?;
    // Row j = ny − 1 is the surface, j = 0 the deep boundary; depth of row j's centre:
    let depth = move |j: usize| (ny - 1 - j) as f64 * H;

    // ---- the problem, in ten lines: face conductance = harmonic mean of the two cells'
    // conductivities (square cells, per metre of section), couplings negative, center their
    // sum; nothing off the grid.
    let operator = move |i: usize, j: usize| {
        let here = conductivity(depth(j));
        let face = |k: f64| 2.0 * here * k / (here + k);
        let mut c = Coeffs5::default();
        c.west = if i > 0 { -here } else { 0.0 };
        c.east = if i + 1 < nx { -here } else { 0.0 };
        c.south = if j > 0 {
            -face(conductivity(depth(j - 1)))
        } else {
            0.0
        };
        c.north = if j + 1 < ny {
            -face(conductivity(depth(j + 1)))
        } else {
            0.0
        };
        c.center = -(c.west + c.east + c.south + c.north);
        c
    };
    // ----
    let fixed = FixedCells::new(grid, grid.row_cells(0..1).chain(grid.row_cells(ny - 1..ny)))?;
    let op = ClosureStencil::new(grid, operator)?.with_fixed(fixed)?;
    let rhs = vec![0.0; grid.cells()]; // no sources inside
    let mut start = vec![T_DEEP; grid.cells()];
    for i in 0..nx {
        let x = (i as f64 + 0.5) * H;
        let on_slab = x > SLAB.0 && x < SLAB.1;
        start[grid.index(i, ny - 1)] = if on_slab { T_SLAB } else { T_SURFACE };
    }

    let rule = || SettledTemperature {
        kelvin: 1e-7,
        relative: 1e-8,
        limit: 50_000,
    };
    let estimate = estimate_relaxation(&op, 60)?;
    println!(
        "Ground under a heated slab: {grid} of {H} m, three layers; closure operator, no stored coefficients"
    );
    println!(
        "stopping rule: largest change <= 1e-7 K and |r|/|b| <= 1e-8; SOR omega = {:.4} (estimated from {} Lanczos steps)",
        estimate.omega, estimate.steps
    );

    let mut pcg =
        Pcg::new(Jacobi::new(&op)?).with_options(SolveOptions::default().stop_when(rule()));
    let mut sor = Sor::new(estimate.omega)?
        .ordering(SweepOrder::RedBlack)
        .with_options(SolveOptions::default().stop_when(rule()));
    let mut ws = Workspace::for_grid(grid);

    let mut curves = Vec::new();
    let mut solutions = Vec::new();
    for name in ["PCG + Jacobi", "SOR, red-black"] {
        // The observer sees every iteration: here it keeps the largest change of each one (the
        // report keeps the residuals) and prints a line now and then.
        let mut changes: Vec<(f64, f64)> = Vec::new();
        let mut observer = |p: &Progress<'_>| {
            if let Some(change) = p.solution_change {
                changes.push((p.iteration as f64, change));
            }
            if p.iteration > 0 && p.iteration % 200 == 0 {
                println!(
                    "  {name}: iteration {:>5}, |r|/|b| = {:.2e}, largest change {:.2e} K",
                    p.iteration,
                    p.relative_residual(),
                    p.solution_change.unwrap_or(f64::NAN)
                );
            }
        };
        let mut t = start.clone();
        let report = match name {
            "PCG + Jacobi" => pcg.solve_observed(&op, &rhs, &mut t, &mut ws, &mut observer)?,
            _ => sor.solve_observed(&op, &rhs, &mut t, &mut ws, &mut observer)?,
        };
        println!("{report}");
        let relative: Vec<(f64, f64)> = report
            .history
            .iter()
            .enumerate()
            .map(|(n, r)| (n as f64, r / report.rhs_norm))
            .collect();
        curves.push(Curve {
            label: format!("{name}: |r|/|b|"),
            points: relative,
        });
        curves.push(Curve {
            label: format!("{name}: largest change [K]"),
            points: changes,
        });
        solutions.push(t);
    }
    let t = &solutions[0];
    let difference = t
        .iter()
        .zip(&solutions[1])
        .map(|(a, b)| (a - b).abs())
        .fold(0.0, f64::max);
    println!("largest difference between the two solutions: {difference:.2e} K");

    // Heat the slab loses into the ground: conduction from the slab's surface cells to the
    // row below, through the same face conductances as the operator's.
    let mut loss = 0.0;
    for i in 0..nx {
        let x = (i as f64 + 0.5) * H;
        if x > SLAB.0 && x < SLAB.1 {
            let c = op.coeffs(i, ny - 1);
            loss += -c.south * (t[grid.index(i, ny - 1)] - t[grid.index(i, ny - 2)]);
        }
    }
    println!("heat flow from the slab into the ground: {loss:.2} W per metre of slab length");

    // Pictures: the section (depth downwards) and the convergence of both drivers.
    let section = out.join("section.png");
    let levels = round_levels(T_SURFACE, T_SLAB, 12);
    Map {
        title: "Ground under a heated slab: steady temperature".into(),
        x_label: "distance across the section [m]".into(),
        y_label: "elevation, 0 at the surface [m]".into(),
        scale_label: "temperature [°C]".into(),
        x_faces: (0..=nx).map(|i| i as f64 * H).collect(),
        y_faces: (0..=ny).map(|j| (j as f64 - ny as f64 + 0.5) * H).collect(),
        x_nodes: (0..nx).map(|i| (i as f64 + 0.5) * H).collect(),
        y_nodes: (0..ny).map(|j| -depth(j)).collect(),
        values: t,
        ramp: &ramp::TEMPERATURE,
        decimals: decimals_for(&levels),
        levels,
    }
    .draw(&section, |chart| {
        // The layer boundaries, with each layer's conductivity.
        use plotters::prelude::*;
        for (top, bottom) in [(0.0, 1.5), (1.5, 6.0), (6.0, DEPTH)] {
            if top > 0.0 {
                chart.draw_series(DashedLineSeries::new(
                    [(0.0, -top), (WIDTH, -top)],
                    6,
                    4,
                    WHITE.stroke_width(2),
                ))?;
            }
            let k = conductivity((top + bottom) / 2.0);
            boxed_label(chart, (1.75, -top - 0.4), &format!("{k} W/(m·K)"), 13)?;
        }
        Ok(())
    })?;

    let convergence = out.join("convergence.png");
    let last = curves
        .iter()
        .flat_map(|c| c.points.last())
        .map(|p| p.0)
        .fold(1.0, f64::max);
    LineChart {
        title: "Two drivers on the same closure operator".into(),
        x_label: "iteration".into(),
        y_label: "relative residual / largest change [K]".into(),
        x_range: (0.0, last),
        y_range: decades(&curves),
        log_x: false,
        log_y: true,
        height: 520,
        legend: Legend::Inside(SeriesLabelPosition::UpperRight),
        curves,
    }
    .draw(&convergence)?;
    println!("pictures: {}, {}", section.display(), convergence.display());
    Ok(())
}

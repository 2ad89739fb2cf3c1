//! Two small models built with `quintet::model`, solved, and their flow budgets printed.
//!
//! 1. Groundwater: an invented confined aquifer, 2.4 km × 1.6 km in cells of 40 m, with a sand
//!    channel in silt, a river along its west edge, a fixed head at a lake in the east, a
//!    no-flow north and south, recharge, a wetland that exchanges water with the aquifer, and
//!    two pumping wells. One corner
//!    lies outside the aquifer (inactive cells).
//! 2. Heat: an invented aluminium mounting plate, 200 mm × 120 mm × 4 mm, bolted to a frame at
//!    35 °C along its west edge, cooled by air on its north and south edges, with a 12 W power
//!    module, resistive heating in a strip, a cooling pipe, and a transient warm-up from 20 °C
//!    in Crank–Nicolson steps.
//!
//! All data are made up for the demonstration. Results support, and do not replace,
//! engineering judgement.
//!
//! Run with `cargo run --release --example model_demo`.

use quintet::model::{Axis, Conductivity, Field, Geometry, Model, Stepper, Storage, TimeScheme};
use quintet::prelude::*;

fn main() -> Result<(), Error> {
    groundwater()?;
    println!();
    heat()
}

fn groundwater() -> Result<(), Error> {
    let (nx, ny, a) = (60, 40, 40.0);
    let geometry = Geometry::cell_centered(nx, ny, a, a, 18.0)?; // 18 m thick
    let grid = geometry.grid();
    // A sand channel (K = 3e-4 m/s) meandering through silt (K = 2e-6 m/s).
    let k = Field::from_fn(grid, |i, j| {
        let centre = 20.0 + 8.0 * (i as f64 / 9.0).sin();
        if (j as f64 - centre).abs() < 5.0 {
            3e-4
        } else {
            2e-6
        }
    });
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(k))?;
    model.deactivate((48..nx).flat_map(|i| (32..ny).map(move |j| grid.index(i, j))))?;
    model.set_inactive_value(-1.0)?; // below the aquifer base: never a real head here

    let stage: Vec<f64> = (0..ny).map(|j| 42.0 - 0.02 * j as f64).collect();
    let river = model.edge_exchange("river (west edge)", Side::West, 5e-7, stage)?;
    let lake: Vec<usize> = (52..58)
        .flat_map(|i| (6..12).map(move |j| grid.index(i, j)))
        .collect();
    model.prescribe_cells("lake (fixed head)", lake, 38.5)?;
    model.areal_source("recharge", 4e-9)?; // about 126 mm per year
    let wetland: Vec<usize> = (20..32).map(|i| grid.index(i, 30)).collect();
    model.cell_exchange("wetland", wetland, 2e-3, 40.2)?;
    let well_1 = geometry
        .cell_at(1000.0, 820.0)
        .expect("the point lies inside the model");
    let well_2 = geometry
        .cell_at(1700.0, 640.0)
        .expect("the point lies inside the model");
    model.point_source("well 1", well_1, -9e-3)?;
    model.point_source("well 2", well_2, -6e-3)?;

    let system = model.assemble()?;
    let mut heads = system.initial_solution(40.0);
    let mut pcg = Pcg::new(Jacobi::new(system.operator())?).with_options(
        SolveOptions::default()
            .tolerance(1e-10)
            .max_iterations(50_000),
    );
    let report = system.solve(&mut pcg, &mut heads, &mut Workspace::new())?;
    let budget = system.budget(&heads)?;

    println!("== Groundwater: confined aquifer, {grid}, cells of {a} m");
    println!("{report}");
    println!(
        "cell-average head at well 1: {:.3} m, at well 2: {:.3} m (not the head in the wells)",
        heads[well_1], heads[well_2]
    );
    println!("{}", budget.table("m³/s"));
    match budget.warning(1.0) {
        Some(w) => println!("WARNING: {w}"),
        None => println!("budget within the 1 % rule of thumb"),
    }
    let gained = budget.line(river).map_or(0.0, |l| l.net());
    println!(
        "net flow from the river into the aquifer: {:.4} L/s",
        1e3 * gained
    );
    Ok(())
}

fn heat() -> Result<(), Error> {
    // Node-centred, 2.5 mm spacing: 81 x 49 nodes over 200 mm x 120 mm, 4 mm thick.
    let d = 0.0025;
    let geometry = Geometry::new(
        Axis::uniform_nodes(81, d)?,
        Axis::uniform_nodes(49, d)?,
        0.004,
    )?;
    let grid = geometry.grid();
    let mut model = Model::new(geometry.clone(), Conductivity::isotropic(167.0))?; // W/(m·K)
    model.set_storage(Storage::per_volume(2.43e6))?; // ρc, J/(m³·K)
    model.prescribe_edge("frame (35 °C)", Side::West, 35.0)?;
    model.edge_exchange("air, top edge", Side::North, 25.0, 20.0)?;
    model.edge_exchange("air, bottom edge", Side::South, 25.0, 20.0)?;
    let module = geometry
        .cell_at(0.150, 0.060)
        .expect("the point lies inside the model");
    let power = model.point_source("power module", module, 12.0)?;
    let strip = Field::from_fn(grid, |i, j| {
        if (10..30).contains(&i) && j > 35 {
            5e5
        } else {
            0.0
        }
    });
    model.volumetric_source("heater strip", strip)?;
    let pipe: Vec<usize> = (20..70).map(|i| grid.index(i, 12)).collect();
    model.cell_exchange("cooling pipe", pipe, 0.01, 24.0)?; // W/K per node, water at 24 °C

    let system = model.assemble()?;
    let mut t = system.initial_solution(20.0);
    let mut pcg = Pcg::new(Jacobi::new(system.operator())?).with_options(
        SolveOptions::default()
            .tolerance(1e-10)
            .max_iterations(50_000),
    );
    let report = system.solve(&mut pcg, &mut t, &mut Workspace::new())?;
    let budget = system.budget(&t)?;
    println!(
        "== Heat: mounting plate, {} x {} nodes, 2.5 mm spacing, steady state",
        grid.nx(),
        grid.ny()
    );
    println!("{report}");
    // The module is a point source: its node's temperature depends on the spacing. For a
    // design value, spread the 12 W over the module's footprint instead.
    let hottest = t.iter().cloned().fold(f64::MIN, f64::max);
    println!(
        "hottest node {hottest:.2} °C, at the module {:.2} °C",
        t[module]
    );
    println!("{}", budget.table("W"));

    // Warm-up from 20 °C: the module switches on at t = 0 and runs at 12 W; 30 s steps.
    let initial = vec![20.0; grid.cells()];
    let mut run = Stepper::with_jacobi(&model, TimeScheme::CrankNicolson, 30.0, 0.0, &initial)?;
    run.solver_mut().options = SolveOptions::default()
        .tolerance(1e-10)
        .max_iterations(50_000);
    println!("warm-up, Crank–Nicolson with a damped start, 30 s steps:");
    println!(
        "{:>8} {:>12} {:>14} {:>16}",
        "time [s]", "module [°C]", "stored [W]", "imbalance [%]"
    );
    for step in 1..=40 {
        run.step_with(|_, f| f.set(power, 12.0))?;
        if step % 5 == 0 {
            let b = run.budget().expect("a step was taken");
            let stored = b.lines.last().map_or(0.0, |l| l.outflow - l.inflow);
            println!(
                "{:>8.0} {:>12.3} {:>14.4} {:>16.2e}",
                run.time(),
                run.solution()[module],
                stored,
                b.imbalance_percent()
            );
        }
    }
    Ok(())
}

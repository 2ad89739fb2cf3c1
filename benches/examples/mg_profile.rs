//! Where the time of MG-PCG (f32 V-cycle inside f64 PCG, default settings) goes on `n × n`
//! cells (default 1024), on Poisson and on the layered contrast-10⁴ field: cast and hierarchy
//! set-up, one V-cycle serial and threaded, and whole solves; a checksum of each solution's
//! bits shows whether a change kept the arithmetic.
//!
//! `cargo run --release -p quintet-bench --example mg_profile -- 1024`
//!
//! With `ONLY_CYCLES=k` in the environment it builds both hierarchies and runs `k` serial
//! V-cycles on each, nothing else: subtract the CPU time of `ONLY_CYCLES=0` and divide by
//! `2k·n²` for the cycle's CPU time per cell (less sensitive to a busy machine than wall time),
//! or run it under `perf record`. `NU=ν` sets the smoothing sweeps.

#[path = "../support/mod.rs"]
mod support;

#[path = "../../tests/precond_problems/mod.rs"]
mod precond_problems;

use std::time::Instant;

use quintet::prelude::*;
use quintet::space::{Serial, Threaded};
use support::*;

fn main() {
    let n: usize = std::env::args()
        .nth(1)
        .map_or(1024, |s| s.parse().expect("a grid side"));
    let cycles_only: Option<usize> = std::env::var("ONLY_CYCLES")
        .ok()
        .map(|k| k.parse().expect("a count"));
    let sweeps = std::env::var("NU").map_or(3, |s| s.parse().expect("a sweep count"));
    let cells = n * n;
    let (tb, tc) = (wave(cells), wave(cells));
    let mut ta = vec![0.0; cells];
    let t_triad = best_of(20, || triad(&mut ta, &tb, &tc, 3.0));
    println!(
        "triad {:.2} GB/s, {:.3} ns/cell",
        BYTES_TRIAD * cells as f64 / t_triad / 1e9,
        t_triad / cells as f64 * 1e9
    );
    let (field, zero, heads) = precond_problems::heterogeneous(n);
    let problems = [
        ("poisson", poisson(n), vec![1.0; cells], vec![0.0; cells]),
        ("contrast 1e4", field, zero, heads),
    ];
    let settings = MultigridSettings {
        smoothing_sweeps: sweeps,
        ..Default::default()
    };
    for (name, op, rhs, x0) in problems {
        let start = Instant::now();
        let single = op.cast::<f32>().expect("finite coefficients");
        let t_cast = start.elapsed().as_secs_f64();
        let start = Instant::now();
        let mut mg = Multigrid::new(&single, settings).expect("setup");
        let t_setup = start.elapsed().as_secs_f64();
        let r: Vec<f32> = (0..cells).map(|k| (k as f32 * 0.37).sin()).collect();
        let mut z = vec![0.0f32; cells];
        if let Some(k) = cycles_only {
            for _ in 0..k {
                mg.apply(&single, &Serial, &r, &mut z);
            }
            continue;
        }
        let t_serial = best_of(5, || mg.apply(&single, &Serial, &r, &mut z));
        let t_threaded = best_of(5, || mg.apply(&single, &Threaded, &r, &mut z));
        let mut pcg = Pcg::new(SinglePrecision::new(single, mg))
            .with_options(SolveOptions::default().tolerance(1e-8));
        let mut ws = Workspace::for_grid(op.grid());
        let mut x = x0.clone();
        let mut iterations = 0;
        let t_solve = best_of(3, || {
            x.copy_from_slice(&x0);
            iterations = pcg
                .solve_with(&op, &rhs, &mut x, &mut ws)
                .expect("converges")
                .iterations;
        });
        let checksum = x.iter().fold(0u64, |a, v| a.rotate_left(1) ^ v.to_bits());
        let per_cell = |t: f64| t / cells as f64 * 1e9;
        let t_iteration = t_solve / iterations as f64;
        println!(
            "{name}: cast {:.1} ms, hierarchy {:.1} ms; V-cycle {:.2} ns/cell serial, {:.2} \
             threaded; solve {iterations} iterations, {:.2} ns/cell per iteration; set-up / \
             iteration {:.2}; checksum {checksum:x}",
            t_cast * 1e3,
            t_setup * 1e3,
            per_cell(t_serial),
            per_cell(t_threaded),
            per_cell(t_iteration),
            (t_cast + t_setup) / t_iteration
        );
    }
}

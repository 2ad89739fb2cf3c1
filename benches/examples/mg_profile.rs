//! Temporary profiling harness for one MG-PCG iteration at 1024^2.
#[path = "../../tests/precond_problems/mod.rs"]
#[allow(dead_code)]
mod precond_problems;
#[path = "../support/mod.rs"]
mod support;

use quintet::prelude::*;
use quintet::space::{Serial, Threaded};
use std::time::Instant;
use support::*;

fn best(rounds: usize, mut f: impl FnMut()) -> f64 {
    let mut b = f64::INFINITY;
    for _ in 0..rounds {
        let t = Instant::now();
        f();
        b = b.min(t.elapsed().as_secs_f64());
    }
    b
}

fn main() {
    let n: usize = std::env::args().nth(1).map_or(1024, |s| s.parse().unwrap());
    let cells = n * n;
    let (tb, tc) = (wave(cells), wave(cells));
    let mut ta = vec![0.0; cells];
    let t_triad = best(20, || triad(&mut ta, &tb, &tc, 3.0));
    let bw = 24.0 * cells as f64 / t_triad;
    println!(
        "triad {:.2} GB/s, {:.3} ns/cell",
        bw / 1e9,
        t_triad / cells as f64 * 1e9
    );
    for (name, op, rhs) in [
        ("poisson", poisson(n), vec![1.0; cells]),
        ("hetero", precond_problems::heterogeneous(n).0, {
            let (_, _, x0) = precond_problems::heterogeneous(n);
            x0
        }),
    ] {
        let t0 = Instant::now();
        let single = op.cast::<f32>().unwrap();
        let t_cast = t0.elapsed().as_secs_f64();
        let t1 = Instant::now();
        let mut mg = Multigrid::new(
            &single,
            MultigridSettings {
                smoothing_sweeps: std::env::var("NU").map_or(3, |s| s.parse().unwrap()),
                ..Default::default()
            },
        )
        .unwrap();
        let t_setup = t1.elapsed().as_secs_f64();
        let r: Vec<f32> = (0..cells).map(|k| ((k as f32) * 0.37).sin()).collect();
        let mut z = vec![0.0f32; cells];
        if let Ok(k) = std::env::var("ONLY_CYCLES") {
            for _ in 0..k.parse::<usize>().unwrap() {
                mg.apply(&single, &Serial, &r, &mut z);
            }
            continue;
        }
        let ts = best(5, || mg.apply(&single, &Serial, &r, &mut z));
        let tt = best(5, || mg.apply(&single, &Threaded, &r, &mut z));
        let mut pcg = Pcg::new(SinglePrecision::new(single.clone(), mg.clone()))
            .with_options(SolveOptions::default().tolerance(1e-8));
        let mut ws = Workspace::for_grid(op.grid());
        let mut x = vec![0.0; cells];
        let mut its = 0;
        let mut b = rhs.clone();
        if name == "hetero" {
            // rhs = 0 with fixed values in x0: solve A x = 0 from x0.
            b = vec![0.0; cells];
        }
        let x0 = rhs.clone();
        let tsolve = best(3, || {
            if name == "hetero" {
                x.copy_from_slice(&x0)
            } else {
                x.fill(0.0)
            }
            its = pcg.solve_with(&op, &b, &mut x, &mut ws).unwrap().iterations;
        });
        let sum: u64 = x.iter().fold(0u64, |a, v| a.rotate_left(1) ^ v.to_bits());
        println!("{name}: checksum {sum:x}");
        println!(
            "{name}: cast {:.1} ms, setup {:.1} ms; V-cycle serial {:.2} ms ({:.2} ns/cell), threaded {:.2} ms; solve {its} its {:.1} ms = {:.2} ns/cell/it; setup/iter {:.2}",
            t_cast * 1e3, t_setup * 1e3, ts * 1e3, ts / cells as f64 * 1e9, tt * 1e3, tsolve * 1e3,
            tsolve / cells as f64 / its as f64 * 1e9, (t_cast + t_setup) / (tsolve / its as f64)
        );
    }
}

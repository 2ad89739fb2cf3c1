//! The set-up of MG-PCG with the f32 V-cycle (the cast to `f32` and the multigrid hierarchy)
//! on Poisson and on the layered contrast-10⁴ field, timed against one MG-PCG iteration in the
//! same run, with fingerprints of the bits it builds: a change to the set-up that claims to
//! keep the arithmetic must print the same `fingerprint` lines before and after.
//!
//! `cargo run --release -p quintet-bench --example setup_profile -- 256 1024 2000`
//!
//! Per problem: `cast` and `hierarchy` times (fastest of a few rounds), one iteration's time,
//! and three hashes — of the `f32` copy (`Debug` prints every `f32` exactly, so its text
//! pins the bits), of the whole hierarchy (coarse rows, weights, inverse centers, coarsest
//! factor) and of the solution of a PCG solve to 1e-8 with its iteration count. With
//! `ONLY_SETUP=k` in the environment it only repeats the set-up `k` times per problem (for
//! `perf record`); with `FINGERPRINTS=1` it prints only the hashes of hierarchies built on
//! more operators (odd sides, random fields with fixed cells, an advection operator; both
//! coarse-operator rules, `f64` and `f32`). With `FRESH=f32` (or `cast`, or `f64`) it times
//! one set-up on Poisson of the first size and exits: the `f32` copy by colour and its
//! hierarchy (the natural `f32` cast and its hierarchy, or the `f64` hierarchy), the one
//! set-up of the process, so that its memory comes fresh from the
//! operating system as in a program that builds one hierarchy (in the loops above the
//! allocator hands back the pages of the round before). Run it a dozen times, alternating
//! two binaries, and compare medians.

#[path = "../support/mod.rs"]
mod support;

#[path = "../../tests/precond_problems/mod.rs"]
mod precond_problems;

use std::collections::hash_map::DefaultHasher;
use std::fmt::Write as _;
use std::hash::Hasher;
use std::time::Instant;

use quintet::prelude::*;
use support::*;

/// A hasher fed through `fmt::Write`, so a `Debug` text is hashed without being stored.
struct HashWriter(DefaultHasher);

impl std::fmt::Write for HashWriter {
    fn write_str(&mut self, s: &str) -> std::fmt::Result {
        self.0.write(s.as_bytes());
        Ok(())
    }
}

fn debug_hash(value: &impl std::fmt::Debug) -> u64 {
    let mut w = HashWriter(DefaultHasher::new());
    write!(w, "{value:?}").expect("hashing never fails");
    w.0.finish()
}

fn bits_hash(x: &[f64]) -> u64 {
    let mut h = DefaultHasher::new();
    for v in x {
        h.write_u64(v.to_bits());
    }
    h.finish()
}

/// Hashes of the `f32` copy and of hierarchies of `op` in `f64` and `f32`, every rule.
fn fingerprints(name: &str, op: &Banded5<f64>) {
    let single = op.cast::<f32>().expect("finite coefficients");
    let mut line = format!("fingerprint {name}: f32 copy {:016x}", debug_hash(&single));
    for rule in [
        CoarseOperator::Upscaled,
        CoarseOperator::LumpedGalerkin,
        CoarseOperator::LargerConductance,
    ] {
        let settings = MultigridSettings {
            coarse_operator: rule,
            ..Default::default()
        };
        let double = Multigrid::new(op, settings).map(|mg| debug_hash(&mg));
        let low = Multigrid::new(&single, settings).map(|mg| debug_hash(&mg));
        match (double, low) {
            (Ok(a), Ok(b)) => write!(line, ", {rule:?} {a:016x} {b:016x}"),
            (a, b) => write!(line, ", {rule:?} {:?} {:?}", a.err(), b.err()),
        }
        .expect("formatting never fails");
    }
    println!("{line}");
}

/// One set-up on `n x n` Poisson cells, the first of the process: `f32` on the copy by colour,
/// `cast` on the natural `f32` copy (copies included), or `f64`.
fn fresh_setup(n: usize, precision: &str) {
    let op = poisson(n);
    let start = Instant::now();
    match precision {
        "f32" => {
            let single = Banded5ByColour::<f32>::from_stencil(&op).expect("finite coefficients");
            let mg = Multigrid::new(&single, MultigridSettings::default()).expect("setup");
            std::hint::black_box((single, mg));
        }
        "cast" => {
            let single = op.cast::<f32>().expect("finite coefficients");
            let mg = Multigrid::new(&single, MultigridSettings::default()).expect("setup");
            std::hint::black_box((single, mg));
        }
        "f64" => {
            let mg = Multigrid::new(&op, MultigridSettings::default()).expect("setup");
            std::hint::black_box(mg);
        }
        other => panic!("FRESH={other}: f32, cast or f64"),
    }
    let t = start.elapsed().as_secs_f64();
    println!(
        "{n}x{n} poisson, one set-up in a fresh process ({precision}): {:.1} ms",
        t * 1e3
    );
}

fn main() {
    if std::env::var("FINGERPRINTS").is_ok() {
        let values: Vec<f64> = (0..997).map(|k| ((k as f64) * 0.618_034).fract()).collect();
        for (nx, ny) in [(37, 23), (64, 65), (255, 129), (301, 300)] {
            let fixed: Vec<usize> = (0..nx * ny).step_by(53).collect();
            let op = precond_problems::random_diffusion(nx, ny, &values, 2.0, &fixed);
            fingerprints(&format!("random {nx}x{ny}"), &op);
        }
        for n in [33, 200] {
            fingerprints(
                &format!("contrast 1e4 {n}x{n}"),
                &precond_problems::heterogeneous(n).0,
            );
            fingerprints(
                &format!("advection {n}x{n}"),
                &precond_problems::advection(n, 3.0).0,
            );
        }
        return;
    }
    let sides: Vec<usize> = std::env::args()
        .skip(1)
        .map(|s| s.parse().expect("a grid side"))
        .collect();
    let sides = if sides.is_empty() { vec![1024] } else { sides };
    if let Ok(precision) = std::env::var("FRESH") {
        fresh_setup(sides[0], &precision);
        return;
    }
    let only_setup: Option<usize> = std::env::var("ONLY_SETUP")
        .ok()
        .map(|k| k.parse().expect("a count"));
    for n in sides {
        let cells = n * n;
        let (field, zero, heads) = precond_problems::heterogeneous(n);
        let problems = [
            ("poisson", poisson(n), vec![1.0; cells], vec![0.0; cells]),
            ("contrast 1e4", field, zero, heads),
        ];
        for (name, op, rhs, x0) in problems {
            if let Some(k) = only_setup {
                for _ in 0..k {
                    let single = op.cast::<f32>().expect("finite coefficients");
                    let mg = Multigrid::new(&single, MultigridSettings::default()).expect("setup");
                    std::hint::black_box((single, mg));
                }
                continue;
            }
            let single = op.cast::<f32>().expect("finite coefficients");
            let mg = Multigrid::new(&single, MultigridSettings::default()).expect("setup");
            let (single_hash, mg_hash) = (debug_hash(&single), debug_hash(&mg));
            let mut pcg = Pcg::new(SinglePrecision::new(single, mg))
                .with_options(SolveOptions::default().tolerance(1e-8));
            let mut ws = Workspace::for_grid(op.grid());
            let mut x = x0.clone();
            let mut iterations = 0;
            let mut solve = || {
                x.copy_from_slice(&x0);
                iterations = pcg
                    .solve_with(&op, &rhs, &mut x, &mut ws)
                    .expect("converges")
                    .iterations;
            };
            // Rounds of cast, hierarchy and solve in turn, fastest of each.
            let (mut t_cast, mut t_mg, mut t_solve) = (f64::INFINITY, f64::INFINITY, f64::INFINITY);
            for _ in 0..5 {
                let start = Instant::now();
                let single = op.cast::<f32>().expect("finite coefficients");
                t_cast = t_cast.min(start.elapsed().as_secs_f64());
                let start = Instant::now();
                let mg = Multigrid::new(&single, MultigridSettings::default()).expect("setup");
                t_mg = t_mg.min(start.elapsed().as_secs_f64());
                std::hint::black_box((single, mg));
                t_solve = t_solve.min(best_of(1, &mut solve));
            }
            let t_iteration = t_solve / iterations as f64;
            println!(
                "{n}x{n} {name}: cast {:.2} ms, hierarchy {:.2} ms, iteration {:.2} ms; \
                 (cast + hierarchy) / iteration {:.2}",
                t_cast * 1e3,
                t_mg * 1e3,
                t_iteration * 1e3,
                (t_cast + t_mg) / t_iteration
            );
            println!(
                "fingerprint {n}x{n} {name}: f32 copy {single_hash:016x}, hierarchy \
                 {mg_hash:016x}, solution {:016x} after {iterations} iterations",
                bits_hash(&x)
            );
        }
    }
}

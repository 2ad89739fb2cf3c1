//! Whole-solve benches on the Dirichlet Poisson problem, to relative residual 1e-8 from zero:
//! CG, MIC(0)-PCG, MG-PCG (V-cycle in f64, and in f32 inside the f64 PCG) and SOR (ω_opt) against a general-purpose sparse direct solver
//! (faer's sparse Cholesky, factor + solve). Throughput is in cells, so criterion prints
//! cells per second.
//!
//! CG and SOR take thousands of iterations at 2048² (minutes per sample), so they run at 256²
//! and 1024² only; MIC(0), MG and the direct solver run at all three sizes.
//!
//! A second group, `multigrid_contrast`, times on the layered contrast-10⁴ field at 1024² the
//! hierarchy's set-up (cast to `f32` included) and the whole MG-PCG solve with the f32 V-cycle,
//! for each coarse-operator rule.
//!
//! `cargo bench -p quintet-bench --bench solves`

#[path = "support/mod.rs"]
mod support;

#[path = "../tests/precond_problems/mod.rs"]
mod precond_problems;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use quintet::prelude::*;
use support::*;

const ALL: [usize; 3] = [256, 1024, 2048];
const SMALL: [usize; 2] = [256, 1024];

fn options() -> SolveOptions {
    SolveOptions::default()
        .tolerance(1e-8)
        .max_iterations(100_000)
}

fn bench_solves(c: &mut Criterion) {
    let mut group = c.benchmark_group("solve_poisson");
    group.sample_size(10);
    faer::set_global_parallelism(faer::Par::rayon(rayon::current_num_threads()));
    for n in ALL {
        let op = poisson(n);
        let rhs = vec![1.0; n * n];
        let mut ws = Workspace::for_grid(op.grid());
        group.throughput(Throughput::Elements((n * n) as u64));
        if SMALL.contains(&n) {
            group.bench_function(BenchmarkId::new("cg", n), |b| {
                let mut cg = Cg::default().with_options(options());
                b.iter(|| {
                    let mut x = vec![0.0; n * n];
                    cg.solve_with(&op, &rhs, &mut x, &mut ws)
                        .expect("converges")
                })
            });
            let omega = 2.0 / (1.0 + (std::f64::consts::PI / (n as f64 + 1.0)).sin());
            group.bench_function(BenchmarkId::new("sor_red_black_omega_opt", n), |b| {
                let mut sor = Sor::new(omega)
                    .expect("omega in range")
                    .ordering(SweepOrder::RedBlack)
                    .with_options(options());
                b.iter(|| {
                    let mut x = vec![0.0; n * n];
                    sor.solve_with(&op, &rhs, &mut x, &mut ws)
                        .expect("converges")
                })
            });
        }
        group.bench_function(BenchmarkId::new("mic0_pcg_setup_and_solve", n), |b| {
            b.iter(|| {
                let mut pcg =
                    Pcg::new(IncompleteCholesky::mic0(&op).expect("setup")).with_options(options());
                let mut x = vec![0.0; n * n];
                pcg.solve_with(&op, &rhs, &mut x, &mut ws)
                    .expect("converges")
            })
        });
        group.bench_function(BenchmarkId::new("mg_pcg_setup_and_solve", n), |b| {
            b.iter(|| {
                let mg = Multigrid::new(&op, MultigridSettings::default()).expect("setup");
                let mut pcg = Pcg::new(mg).with_options(options());
                let mut x = vec![0.0; n * n];
                pcg.solve_with(&op, &rhs, &mut x, &mut ws)
                    .expect("converges")
            })
        });
        group.bench_function(BenchmarkId::new("mg_f32_pcg_setup_and_solve", n), |b| {
            b.iter(|| {
                let single = Banded5ByColour::<f32>::from_stencil(&op).expect("finite");
                let mg = Multigrid::new(&single, MultigridSettings::default()).expect("setup");
                let mut pcg = Pcg::new(SinglePrecision::new(single, mg)).with_options(options());
                let mut x = vec![0.0; n * n];
                pcg.solve_with(&op, &rhs, &mut x, &mut ws)
                    .expect("converges")
            })
        });
        let csc = to_csc_lower(&op);
        group.bench_function(
            BenchmarkId::new("direct_cholesky_factor_and_solve", n),
            |b| {
                b.iter(|| {
                    let mut x = rhs.clone();
                    direct_solve(&csc, &mut x);
                    x
                })
            },
        );
    }
    group.finish();
}

fn bench_contrast(c: &mut Criterion) {
    let mut group = c.benchmark_group("multigrid_contrast");
    group.sample_size(10);
    let n = 1024;
    let (op, rhs, x0) = precond_problems::heterogeneous(n);
    let mut ws = Workspace::for_grid(op.grid());
    group.throughput(Throughput::Elements((n * n) as u64));
    for rule in [
        CoarseOperator::LargerConductance,
        CoarseOperator::Upscaled,
        CoarseOperator::LumpedGalerkin,
    ] {
        let settings = MultigridSettings {
            coarse_operator: rule,
            ..Default::default()
        };
        let name = format!("{rule:?}");
        group.bench_function(BenchmarkId::new("f32_setup", &name), |b| {
            b.iter(|| {
                let single = Banded5ByColour::<f32>::from_stencil(&op).expect("finite");
                Multigrid::new(&single, settings).expect("setup")
            })
        });
        group.bench_function(BenchmarkId::new("f32_pcg_setup_and_solve", &name), |b| {
            b.iter(|| {
                let single = Banded5ByColour::<f32>::from_stencil(&op).expect("finite");
                let mg = Multigrid::new(&single, settings).expect("setup");
                let mut pcg = Pcg::new(SinglePrecision::new(single, mg)).with_options(options());
                let mut x = x0.clone();
                pcg.solve_with(&op, &rhs, &mut x, &mut ws)
                    .expect("converges")
            })
        });
    }
    group.finish();
}

criterion_group!(benches, bench_solves, bench_contrast);
criterion_main!(benches);

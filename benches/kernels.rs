//! Kernel benches: matrix–vector products for every operator kind and a general-purpose CSR
//! baseline, the vector kernels, one CG iteration and one f32 multigrid V-cycle. Throughput is in model bytes
//! (`support::BYTES_*`), so criterion prints GB/s; compare with the triad in the same run.
//!
//! `cargo bench -p quintet-bench --bench kernels`

#[path = "support/mod.rs"]
mod support;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use quintet::kernels::Kernels;
use quintet::prelude::*;
use support::*;

const SIZES: [usize; 2] = [1024, 2048];

fn bench_matvec(c: &mut Criterion) {
    let mut group = c.benchmark_group("matvec");
    group.sample_size(20);
    for n in SIZES {
        let cells = n * n;
        let grid = Grid::new(n, n).unwrap();
        let banded = poisson(n);
        let compact = Symmetric5::from_banded(&banded, 0.0).unwrap();
        let constant =
            ClosureStencil::new(grid, move |i, j| Coeffs5::laplacian(grid, i, j)).unwrap();
        // Variable coefficients computed from one conductivity per cell (harmonic-mean faces).
        let field: Vec<f64> = (0..cells).map(|k| 1.0 + (k % 7) as f64).collect();
        let variable = ClosureStencil::new(grid, move |i, j| {
            let k = grid.index(i, j);
            let face = |a: f64, b: f64| 2.0 * a * b / (a + b);
            let kc = field[k];
            let w = if i > 0 { -face(kc, field[k - 1]) } else { 0.0 };
            let e = if i + 1 < n {
                -face(kc, field[k + 1])
            } else {
                0.0
            };
            let s = if j > 0 { -face(kc, field[k - n]) } else { 0.0 };
            let nn = if j + 1 < n {
                -face(kc, field[k + n])
            } else {
                0.0
            };
            Coeffs5 {
                center: 0.1 - (w + e + s + nn),
                west: w,
                east: e,
                south: s,
                north: nn,
            }
        })
        .unwrap();
        let csr = to_csr(&banded);
        let x = wave(cells);
        let mut y = vec![0.0; cells];
        let mut kernels = Kernels::<f64>::new(grid);

        group.throughput(Throughput::Bytes((BYTES_TRIAD * cells as f64) as u64));
        let (b, cc) = (wave(cells), wave(cells));
        group.bench_function(BenchmarkId::new("triad", n), |bch| {
            bch.iter(|| triad(&mut y, &b, &cc, 3.0))
        });
        group.throughput(Throughput::Bytes(
            (BYTES_MATVEC_BANDED * cells as f64) as u64,
        ));
        group.bench_function(BenchmarkId::new("banded", n), |bch| {
            bch.iter(|| kernels.apply(&banded, &x, &mut y))
        });
        group.throughput(Throughput::Bytes(
            (BYTES_MATVEC_SYMMETRIC * cells as f64) as u64,
        ));
        group.bench_function(BenchmarkId::new("symmetric", n), |bch| {
            bch.iter(|| kernels.apply(&compact, &x, &mut y))
        });
        group.throughput(Throughput::Bytes(
            (BYTES_MATVEC_CLOSURE * cells as f64) as u64,
        ));
        group.bench_function(BenchmarkId::new("closure_constant", n), |bch| {
            bch.iter(|| kernels.apply(&constant, &x, &mut y))
        });
        group.throughput(Throughput::Bytes(
            (BYTES_MATVEC_CLOSURE_FIELD * cells as f64) as u64,
        ));
        group.bench_function(BenchmarkId::new("closure_variable", n), |bch| {
            bch.iter(|| kernels.apply(&variable, &x, &mut y))
        });
        group.throughput(Throughput::Bytes((BYTES_MATVEC_CSR * cells as f64) as u64));
        group.bench_function(BenchmarkId::new("csr_nalgebra_sparse_serial", n), |bch| {
            bch.iter(|| csr_apply(&csr, &x, &mut y))
        });
    }
    group.finish();
}

fn bench_vector_kernels(c: &mut Criterion) {
    let mut group = c.benchmark_group("vector");
    group.sample_size(20);
    for n in SIZES {
        let cells = n * n;
        let grid = Grid::new(n, n).unwrap();
        let mut kernels = Kernels::<f64>::new(grid);
        let (p, q) = (wave(cells), wave(cells));
        let (mut x, mut r) = (wave(cells), wave(cells));
        group.throughput(Throughput::Bytes(16 * cells as u64));
        group.bench_function(BenchmarkId::new("dot", n), |b| {
            b.iter(|| kernels.dot(&p, &q))
        });
        group.throughput(Throughput::Bytes(48 * cells as u64));
        group.bench_function(BenchmarkId::new("cg_update", n), |b| {
            b.iter(|| kernels.cg_update(1e-12, &p, &q, &mut x, &mut r))
        });
        group.throughput(Throughput::Bytes(24 * cells as u64));
        group.bench_function(BenchmarkId::new("direction_update", n), |b| {
            b.iter(|| kernels.direction_update(&q, 0.5, &mut x))
        });
    }
    group.finish();
}

fn bench_cg_iteration(c: &mut Criterion) {
    let mut group = c.benchmark_group("cg_iteration");
    group.sample_size(20);
    for n in SIZES {
        let cells = n * n;
        let op = poisson(n);
        let mut kernels = Kernels::<f64>::new(op.grid());
        let (mut p, mut q, mut x, mut r) =
            (wave(cells), vec![0.0; cells], vec![0.0; cells], wave(cells));
        group.throughput(Throughput::Bytes(
            (BYTES_CG_ITERATION * cells as f64) as u64,
        ));
        group.bench_function(BenchmarkId::new("fused", n), |b| {
            b.iter(|| {
                let pq = kernels.apply_dot_free(&op, &p, &mut q);
                let (rr, _) = kernels.cg_update(1e-9 / pq.max(1.0), &p, &q, &mut x, &mut r);
                kernels.direction_update(&r, 1e-9 * rr.min(1.0), &mut p);
            })
        });
    }
    group.finish();
}

/// One f32 multigrid V(3,3) cycle (default settings) on Poisson, serial and threaded (the
/// smoothing passes in bands of rows, one per thread of rayon's pool): throughput in the
/// cycle's model bytes (`BYTES_VCYCLE_F32_*`).
fn bench_vcycle(c: &mut Criterion) {
    let mut group = c.benchmark_group("vcycle_f32");
    group.sample_size(20);
    for n in SIZES {
        let cells = n * n;
        let single = poisson(n).cast::<f32>().expect("finite");
        let mut mg = Multigrid::new(&single, MultigridSettings::default()).expect("setup");
        let r: Vec<f32> = wave(cells).iter().map(|&v| v as f32).collect();
        let mut z = vec![0.0f32; cells];
        group.throughput(Throughput::Bytes(
            ((BYTES_VCYCLE_F32_FINE + BYTES_VCYCLE_F32_COARSE) * cells as f64) as u64,
        ));
        group.bench_function(BenchmarkId::new("serial", n), |b| {
            b.iter(|| mg.apply(&single, &quintet::space::Serial, &r, &mut z))
        });
        group.bench_function(BenchmarkId::new("threaded", n), |b| {
            b.iter(|| mg.apply(&single, &quintet::space::Threaded, &r, &mut z))
        });
    }
    group.finish();
}

criterion_group!(
    benches,
    bench_matvec,
    bench_vector_kernels,
    bench_cg_iteration,
    bench_vcycle
);
criterion_main!(benches);

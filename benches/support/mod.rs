//! Shared by the criterion benches and the perf report: test problems, the general-purpose
//! baselines (a CSR matrix from nalgebra-sparse, a sparse Cholesky factorisation from faer) and
//! a STREAM-like triad. Not part of the library.

#![allow(dead_code)]

use std::time::Instant;

use faer::sparse::{SparseColMat, Triplet};
use nalgebra::{DMatrixView, DMatrixViewMut};
use nalgebra_sparse::ops::serial::spmm_csr_dense;
use nalgebra_sparse::ops::Op;
use nalgebra_sparse::CsrMatrix;
use quintet::prelude::*;
use rayon::prelude::*;

/// Model bytes per cell (f64) of the kernels, for throughput figures.
pub const BYTES_MATVEC_BANDED: f64 = 56.0;
/// Symmetric storage: center, east, north, x, y.
pub const BYTES_MATVEC_SYMMETRIC: f64 = 40.0;
/// A closure with constant coefficients: x and y only.
pub const BYTES_MATVEC_CLOSURE: f64 = 16.0;
/// A closure computing coefficients from one per-cell conductivity array.
pub const BYTES_MATVEC_CLOSURE_FIELD: f64 = 24.0;
/// CSR: 5 values and 5 column indices (8 B each) per row, a row offset, x and y.
pub const BYTES_MATVEC_CSR: f64 = 5.0 * 16.0 + 8.0 + 16.0;
/// One CG iteration, fused: matvec + p·Ap (56), x/r update with r·r (48), p = r + βp (24).
pub const BYTES_CG_ITERATION: f64 = 128.0;
/// One iteration of the textbook CG loop over CSR: matvec (104), p·q (16), x and r updates (48),
/// r·r (8), p = r + βp (24).
pub const BYTES_CG_CSR_ITERATION: f64 = BYTES_MATVEC_CSR + 16.0 + 48.0 + 8.0 + 24.0;
/// One f32 V(ν,ν) cycle's two passes over the rows of a level (see
/// `precond/multigrid/smooth.rs`), per cell: pre-smoothing with the restricted residual reads
/// the operator (20), `b` (4), `1/center` (4), the interpolation weights (8) and writes `x`
/// (4); prolongation with post-smoothing reads the same and reads and writes `x` (8): 40 + 44.
pub const BYTES_VCYCLE_F32_PASSES: f64 = 84.0;
/// The f32 cycle's fine level, stored by colour (`precond/multigrid/colour.rs`): the two
/// passes, the right-hand side put in that order before them (read 4, write 4) and the
/// correction put back in the natural order after them (read 4, write 4).
pub const BYTES_VCYCLE_F32_FINE: f64 = BYTES_VCYCLE_F32_PASSES + 16.0;
/// The coarse levels of that cycle per fine cell: the two passes plus the right-hand side
/// written by the restriction (8, read-modify-write) per coarse cell, and as on the fine
/// level the right-hand side put in the order by colour and the correction put back (16;
/// levels of an odd width skip both, a few per cent of the coarse cells at 2000²), and a
/// third as many coarse cells as fine ones over all levels.
pub const BYTES_VCYCLE_F32_COARSE: f64 = (BYTES_VCYCLE_F32_PASSES + 8.0 + 16.0) / 3.0;
/// The f64 part of one MG-PCG iteration with the V-cycle in f32 (`SinglePrecision` fuses its
/// passes with PCG's, `precond/fused.rs`): `r·z` straight from the f32 `z` (8 + 4),
/// `p = z + βp` from the f32 `z` (4 + 16), `q = A·p` with `p·q` (56), the `x`/`r` update with
/// `r·r` (48) writing `r` rounded to f32 for the next V-cycle (4). The f64 `z` is never
/// stored; rounding `r` as a pass of its own (12) happens only before the first iteration and
/// after a true-residual refresh.
pub const BYTES_MGPCG_KRYLOV: f64 = 12.0 + 20.0 + 56.0 + 52.0;
/// The triad a = b + s·c: two reads and one write.
pub const BYTES_TRIAD: f64 = 24.0;

/// The 5-point Dirichlet Laplacian on an n×n grid (zero values just outside).
pub fn poisson(n: usize) -> Banded5<f64> {
    let grid = Grid::new(n, n).expect("grid");
    Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j)).expect("valid")
}

/// A smooth test vector.
pub fn wave(n: usize) -> Vec<f64> {
    (0..n).map(|k| (k as f64 * 0.001).sin() + 1.5).collect()
}

/// The operator as a CSR matrix (nalgebra-sparse), columns sorted within each row.
pub fn to_csr<S: Stencil5<f64>>(op: &S) -> CsrMatrix<f64> {
    let grid = op.grid();
    let (nx, n) = (grid.nx(), grid.cells());
    let mut offsets = Vec::with_capacity(n + 1);
    let mut cols = Vec::with_capacity(5 * n);
    let mut vals = Vec::with_capacity(5 * n);
    offsets.push(0);
    for k in 0..n {
        let (i, j) = grid.coords(k);
        let c = op.coeffs(i, j);
        let entries = [
            (j > 0, k.wrapping_sub(nx), c.south),
            (i > 0, k.wrapping_sub(1), c.west),
            (true, k, c.center),
            (i + 1 < nx, k + 1, c.east),
            (j + 1 < grid.ny(), k + nx, c.north),
        ];
        for (present, col, v) in entries {
            if present {
                cols.push(col);
                vals.push(v);
            }
        }
        offsets.push(cols.len());
    }
    CsrMatrix::try_from_csr_data(n, n, offsets, cols, vals).expect("valid CSR")
}

/// `y = A·x` through nalgebra-sparse's CSR kernel.
pub fn csr_apply(a: &CsrMatrix<f64>, x: &[f64], y: &mut [f64]) {
    let n = x.len();
    let xv = DMatrixView::from_slice(x, n, 1);
    let yv = DMatrixViewMut::from_slice(y, n, 1);
    spmm_csr_dense(0.0, yv, 1.0, Op::NoOp(a), Op::NoOp(xv));
}

/// Textbook CG (Hestenes & Stiefel 1952) with a given matrix–vector product and plain,
/// unfused vector loops: what a modeller writes around a general sparse matrix. Runs exactly
/// `iterations` iterations from x = 0 and returns ‖r‖.
pub fn textbook_cg(
    apply: &mut dyn FnMut(&[f64], &mut [f64]),
    b: &[f64],
    x: &mut [f64],
    iterations: usize,
) -> f64 {
    let n = b.len();
    x.fill(0.0);
    let mut r = b.to_vec();
    let mut p = r.clone();
    let mut q = vec![0.0; n];
    let dot = |a: &[f64], b: &[f64]| a.iter().zip(b).map(|(u, v)| u * v).sum::<f64>();
    let mut rr = dot(&r, &r);
    for _ in 0..iterations {
        apply(&p, &mut q);
        let alpha = rr / dot(&p, &q);
        for (xi, pi) in x.iter_mut().zip(&p) {
            *xi += alpha * pi;
        }
        for (ri, qi) in r.iter_mut().zip(&q) {
            *ri -= alpha * qi;
        }
        let rr_new = dot(&r, &r);
        let beta = rr_new / rr;
        rr = rr_new;
        for (pi, ri) in p.iter_mut().zip(&r) {
            *pi = ri + beta * *pi;
        }
    }
    rr.sqrt()
}

/// The operator as a symmetric CSC matrix (lower triangle) for faer's sparse Cholesky.
pub fn to_csc_lower<S: Stencil5<f64>>(op: &S) -> SparseColMat<usize, f64> {
    let grid = op.grid();
    let (nx, n) = (grid.nx(), grid.cells());
    let mut triplets = Vec::with_capacity(3 * n);
    for k in 0..n {
        let (i, j) = grid.coords(k);
        let c = op.coeffs(i, j);
        triplets.push(Triplet::new(k, k, c.center));
        if i + 1 < nx {
            triplets.push(Triplet::new(k + 1, k, c.east));
        }
        if j + 1 < grid.ny() {
            triplets.push(Triplet::new(k + nx, k, c.north));
        }
    }
    SparseColMat::try_new_from_triplets(n, n, &triplets).expect("valid CSC")
}

/// Factor with faer's sparse Cholesky (symbolic + numeric) and solve `A·x = b` in place.
pub fn direct_solve(a: &SparseColMat<usize, f64>, b: &mut [f64]) {
    use faer::linalg::solvers::Solve;
    let llt = a
        .as_ref()
        .sp_cholesky(faer::Side::Lower)
        .expect("SPD matrix");
    let mut rhs = faer::Mat::<f64>::from_fn(b.len(), 1, |i, _| b[i]);
    llt.solve_in_place(rhs.as_mut());
    for (i, v) in b.iter_mut().enumerate() {
        *v = rhs[(i, 0)];
    }
}

/// One STREAM-like triad pass `a = b + s·c` on the current rayon pool.
pub fn triad(a: &mut [f64], b: &[f64], c: &[f64], s: f64) {
    const CHUNK: usize = 1 << 14;
    a.par_chunks_mut(CHUNK)
        .zip(b.par_chunks(CHUNK))
        .zip(c.par_chunks(CHUNK))
        .for_each(|((a, b), c)| {
            for ((ai, bi), ci) in a.iter_mut().zip(b).zip(c) {
                *ai = bi + s * ci;
            }
        });
}

/// Fastest of `reps` runs of `f`, in seconds.
pub fn best_of(reps: usize, mut f: impl FnMut()) -> f64 {
    let mut best = f64::INFINITY;
    for _ in 0..reps {
        let t = Instant::now();
        f();
        best = best.min(t.elapsed().as_secs_f64());
    }
    best
}

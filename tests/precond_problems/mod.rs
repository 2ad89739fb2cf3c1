//! Test problems shared by the preconditioner and multigrid tests.
#![allow(dead_code)]

use nalgebra::{DMatrix, DVector};
use quintet::prelude::*;

/// A random diffusion operator on `nx × ny` cells with fixed cells: face conductances
/// `10^u`, `u` uniform in `[-spread, spread]` (from `values`, reused cyclically), a small
/// positive storage term on every cell, and the cells listed in `fixed` held fixed.
pub fn random_diffusion(
    nx: usize,
    ny: usize,
    values: &[f64],
    spread: f64,
    fixed: &[usize],
) -> Banded5<f64> {
    let grid = Grid::new(nx, ny).unwrap();
    let n = grid.cells();
    let pick = |k: usize| values[k % values.len()];
    // Conductance of the east face and the north face of every cell.
    let east: Vec<f64> = (0..n)
        .map(|k| 10f64.powf(spread * (2.0 * pick(2 * k) - 1.0)))
        .collect();
    let north: Vec<f64> = (0..n)
        .map(|k| 10f64.powf(spread * (2.0 * pick(2 * k + 1) - 1.0)))
        .collect();
    let op = Banded5::from_fn(grid, |i, j| {
        let k = grid.index(i, j);
        let mut c = Coeffs5::default();
        let mut total = 0.0;
        if i + 1 < nx {
            c.east = -east[k];
            total += east[k];
        }
        if i > 0 {
            c.west = -east[k - 1];
            total += east[k - 1];
        }
        if j + 1 < ny {
            c.north = -north[k];
            total += north[k];
        }
        if j > 0 {
            c.south = -north[k - nx];
            total += north[k - nx];
        }
        c.center = total + 1e-3 * (1.0 + pick(k));
        c
    })
    .unwrap();
    op.with_fixed(FixedCells::new(grid, fixed.iter().map(|&k| k % n)).unwrap())
        .unwrap()
}

/// The eliminated system (free cells only) as a dense matrix, with the map free index → cell.
pub fn dense_free(op: &impl Stencil5<f64>) -> (DMatrix<f64>, Vec<usize>) {
    let grid = op.grid();
    let free: Vec<usize> = (0..grid.cells())
        .filter(|&k| !op.fixed_cells().is_some_and(|f| f.contains(k)))
        .collect();
    let mut position = vec![usize::MAX; grid.cells()];
    for (p, &k) in free.iter().enumerate() {
        position[k] = p;
    }
    let mut a = DMatrix::zeros(free.len(), free.len());
    for (p, &k) in free.iter().enumerate() {
        let (i, j) = grid.coords(k);
        let c = op.eliminated_coeffs(i, j);
        a[(p, p)] = c.center;
        for side in Side::ALL {
            if let Some(nb) = grid.neighbour(k, side) {
                if position[nb] != usize::MAX {
                    a[(p, position[nb])] = c.towards(side);
                }
            }
        }
    }
    (a, free)
}

/// Dense reference solution of the free-cell system `A_ff·x_f = q_f − A_fc·x_c` by
/// nalgebra's Cholesky factorisation, and the 2-norm condition number of `A_ff`.
pub fn dense_reference(op: &impl Stencil5<f64>, rhs: &[f64], x: &[f64]) -> (Vec<f64>, f64) {
    let grid = op.grid();
    let (a, free) = dense_free(op);
    // b_f = q_f − (couplings to fixed cells)·x_fixed: the residual of x with free cells zeroed.
    let mut x_fixed = x.to_vec();
    for &k in &free {
        x_fixed[k] = 0.0;
    }
    let mut ax = vec![0.0; grid.cells()];
    op.apply(&x_fixed, &mut ax).unwrap();
    let b = DVector::from_iterator(free.len(), free.iter().map(|&k| rhs[k] - ax[k]));
    let chol = a.clone().cholesky().expect("test operator is SPD");
    let xf = chol.solve(&b);
    let eig = a.symmetric_eigen().eigenvalues;
    let (lo, hi) = eig
        .iter()
        .fold((f64::INFINITY, 0.0f64), |(l, h), &e| (l.min(e), h.max(e)));
    let mut full = x.to_vec();
    for (p, &k) in free.iter().enumerate() {
        full[k] = xf[p];
    }
    (full, hi / lo)
}

/// The Dirichlet model problem: 5-point Laplacian with zero values outside, `n × n` cells.
pub fn poisson(n: usize) -> Banded5<f64> {
    let grid = Grid::new(n, n).unwrap();
    Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j)).unwrap()
}

/// Conductivity at `(x, y)` of the unit square: ten layers, then twenty blocks, log10 K in
/// [-2, 2] (contrast 10⁴). The `iterations` example reports on this same field.
pub fn conductivity(x: f64, y: f64) -> f64 {
    const LAYERS: [f64; 10] = [0.0, -2.0, 1.0, -1.0, 2.0, -2.0, 0.5, -1.5, 1.5, -0.5];
    let layer = ((y * 10.0) as usize).min(9);
    let mut log_k = LAYERS[layer];
    let mut seed: u64 = 0x2545_f491_4f6c_dd1d;
    let mut next = || {
        seed ^= seed << 13;
        seed ^= seed >> 7;
        seed ^= seed << 17;
        (seed >> 11) as f64 / (1u64 << 53) as f64
    };
    for b in 0..20 {
        let (x0, y0) = (next(), next());
        let (w, h) = (0.05 + 0.15 * next(), 0.03 + 0.1 * next());
        if x >= x0 && x < x0 + w && y >= y0 && y < y0 + h {
            log_k = if b % 2 == 0 { 2.0 } else { -2.0 };
        }
    }
    10f64.powf(log_k)
}

/// The heterogeneous aquifer of the `iterations` example: harmonic-mean faces, heads fixed at
/// 1 (west column) and 0 (east column). Returns operator, rhs and initial guess.
pub fn heterogeneous(n: usize) -> (Banded5<f64>, Vec<f64>, Vec<f64>) {
    let grid = Grid::new(n, n).unwrap();
    let h = 1.0 / n as f64;
    let k: Vec<f64> = (0..grid.cells())
        .map(|c| {
            let (i, j) = grid.coords(c);
            conductivity((i as f64 + 0.5) * h, (j as f64 + 0.5) * h)
        })
        .collect();
    let op = Banded5::from_fn(grid, |i, j| {
        let c = grid.index(i, j);
        let mut row = Coeffs5::default();
        for side in Side::ALL {
            if let Some(nb) = grid.neighbour(c, side) {
                let t = 2.0 * k[c] * k[nb] / (k[c] + k[nb]);
                *row.towards_mut(side) = -t;
                row.center += t;
            }
        }
        row
    })
    .unwrap();
    let fixed: Vec<usize> = (0..n)
        .flat_map(|j| [grid.index(0, j), grid.index(n - 1, j)])
        .collect();
    let op = op
        .with_fixed(FixedCells::new(grid, fixed).unwrap())
        .unwrap();
    let mut x0 = vec![0.0; grid.cells()];
    for j in 0..n {
        x0[grid.index(0, j)] = 1.0;
    }
    (op, vec![0.0; grid.cells()], x0)
}

/// Iterations of `solver` on `op` from `x0` to the default tolerance (panics if it fails).
pub fn iterations(
    solver: &mut impl IterativeSolver<f64>,
    op: &Banded5<f64>,
    rhs: &[f64],
    x0: &[f64],
) -> usize {
    let mut x = x0.to_vec();
    match solver.solve(op, rhs, &mut x) {
        Ok(r) => r.iterations,
        Err(e) => panic!("solve failed: {e}"),
    }
}

/// Least-squares slope of log(iterations) against log(n).
pub fn fitted_exponent(points: &[(usize, usize)]) -> f64 {
    let m = points.len() as f64;
    let xs: Vec<f64> = points.iter().map(|&(n, _)| (n as f64).ln()).collect();
    let ys: Vec<f64> = points.iter().map(|&(_, it)| (it as f64).ln()).collect();
    let (mx, my) = (xs.iter().sum::<f64>() / m, ys.iter().sum::<f64>() / m);
    let sxy: f64 = xs.iter().zip(&ys).map(|(x, y)| (x - mx) * (y - my)).sum();
    let sxx: f64 = xs.iter().map(|x| (x - mx) * (x - mx)).sum();
    sxy / sxx
}

/// How the advection term of [`advection_with`] is discretised (Patankar, *Numerical Heat
/// Transfer and Fluid Flow*, 1980, §5.2–5.3).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum AdvectionScheme {
    /// First-order upwind: `a_W = D + F`, `a_E = D` for flow towards east. An M-matrix at any
    /// cell Péclet number.
    Upwind,
    /// Central differences: `a_W = D + F/2`, `a_E = D − F/2`; the east coupling turns positive
    /// (the matrix stops being an M-matrix and diagonally dominant) above cell Péclet 2.
    Central,
}

/// Steady advection–diffusion on the unit square, `n × n` cells, upwind differencing: the
/// shared test problem for the non-symmetric solvers and preconditioners.
///
/// Diffusion coefficient 1, a uniform velocity along +x with cell Péclet number
/// `peclet = u·h/D` (`h = 1/n`), finite volumes with unit depth, so each face has the
/// diffusion conductance `D = 1` and the advective face flux `F = peclet`. Row `k` is
/// Patankar's `a_P·φ_P = Σ a_nb·φ_nb` written as `center = a_P`, couplings `−a_nb`; the flow is
/// divergence-free, so `a_P = Σ a_nb`. The west column is fixed at 1 (warm inflow), the east
/// column at 0; south and north edges are no-flow (no coupling off the grid), no sources.
/// Returns the operator, the right-hand side (zero) and the initial guess (the fixed values
/// at the fixed cells, zero elsewhere).
pub fn advection(n: usize, peclet: f64) -> (Banded5<f64>, Vec<f64>, Vec<f64>) {
    advection_with(n, peclet, AdvectionScheme::Upwind)
}

/// [`advection`] with the advection term discretised by `scheme`.
pub fn advection_with(
    n: usize,
    peclet: f64,
    scheme: AdvectionScheme,
) -> (Banded5<f64>, Vec<f64>, Vec<f64>) {
    advection_along(n, peclet, scheme, true)
}

/// [`advection_with`] with the flow towards east (`towards_east`, from the fixed west column
/// at 1 to the east column at 0: along the natural cell order, which Gauss–Seidel and the
/// incomplete factorisations sweep in) or towards west (against it: the west column is then
/// the outflow and holds 0, the east column the inflow at 1).
pub fn advection_along(
    n: usize,
    peclet: f64,
    scheme: AdvectionScheme,
    towards_east: bool,
) -> (Banded5<f64>, Vec<f64>, Vec<f64>) {
    let grid = Grid::new(n, n).unwrap();
    let (d, f) = (1.0, peclet);
    let (upstream, downstream) = match scheme {
        AdvectionScheme::Upwind => (d + f, d),
        AdvectionScheme::Central => (d + 0.5 * f, d - 0.5 * f),
    };
    let (a_west, a_east) = if towards_east {
        (upstream, downstream)
    } else {
        (downstream, upstream)
    };
    let op = Banded5::from_fn(grid, |i, j| {
        let mut c = Coeffs5::default();
        if i > 0 {
            c.west = -a_west;
            c.center += a_west;
        }
        if i + 1 < n {
            c.east = -a_east;
            c.center += a_east;
        }
        if j > 0 {
            c.south = -d;
            c.center += d;
        }
        if j + 1 < n {
            c.north = -d;
            c.center += d;
        }
        // F_e − F_w = 0 inside; at the fixed edge columns (never solved for) the missing face
        // leaves a_P as the sum of the remaining couplings.
        c
    })
    .unwrap();
    let fixed: Vec<usize> = (0..n)
        .flat_map(|j| [grid.index(0, j), grid.index(n - 1, j)])
        .collect();
    let op = op
        .with_fixed(FixedCells::new(grid, fixed).unwrap())
        .unwrap();
    let mut x0 = vec![0.0; grid.cells()];
    let inflow = if towards_east { 0 } else { n - 1 };
    for j in 0..n {
        x0[grid.index(inflow, j)] = 1.0;
    }
    (op, vec![0.0; grid.cells()], x0)
}

//! Test problems and an independent dense reference, shared by the integration tests.
//!
//! Everything here is written from the definitions (row k of A·x = q reads
//! `center·x_k + west·x_{k−1} + east·x_{k+1} + south·x_{k−nx} + north·x_{k+nx}`), without the
//! crate's kernels, so the tests compare quintet with code that does not share its paths.

#![allow(dead_code)]

pub mod engines;

use nalgebra::{DMatrix, DVector};
use quintet::{Banded5, Coeffs5, FixedCells, Grid};

/// SplitMix64: a small deterministic generator for test data (Steele, Lea & Flood, "Fast
/// splittable pseudorandom number generators", OOPSLA 2014).
pub struct Rng(u64);

impl Rng {
    pub fn new(seed: u64) -> Rng {
        Rng(seed)
    }
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    /// Uniform in [lo, hi).
    pub fn range(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.uniform()
    }
    /// Log-uniform in [lo, hi).
    pub fn log_range(&mut self, lo: f64, hi: f64) -> f64 {
        self.range(lo.ln(), hi.ln()).exp()
    }
}

/// A test system: five coefficient arrays, fixed cells, right-hand side and the values held at
/// the fixed cells (stored in `x0`, the initial guess).
#[derive(Clone, Debug)]
pub struct Problem {
    pub grid: Grid,
    pub bands: [Vec<f64>; 5],
    pub fixed: Vec<usize>,
    pub rhs: Vec<f64>,
    pub x0: Vec<f64>,
}

impl Problem {
    pub fn coeffs(&self, k: usize) -> Coeffs5<f64> {
        let [c, w, e, s, n] = &self.bands;
        Coeffs5 {
            center: c[k],
            west: w[k],
            east: e[k],
            south: s[k],
            north: n[k],
        }
    }

    pub fn banded(&self) -> Banded5<f64> {
        let [c, w, e, s, n] = self.bands.clone();
        let op = Banded5::new(self.grid, c, w, e, s, n).expect("valid test coefficients");
        if self.fixed.is_empty() {
            op
        } else {
            op.with_fixed(FixedCells::new(self.grid, self.fixed.iter().copied()).unwrap())
                .unwrap()
        }
    }

    /// Whether every coupling is a conductance (non-positive), as in a diffusion problem.
    pub fn is_m_matrix(&self) -> bool {
        self.bands[1..].iter().flatten().all(|&c| c <= 0.0)
    }

    pub fn is_fixed(&self, k: usize) -> bool {
        self.fixed.contains(&k)
    }

    pub fn free_cells(&self) -> Vec<usize> {
        (0..self.grid.cells())
            .filter(|&k| !self.is_fixed(k))
            .collect()
    }

    /// (A·x)_k from the raw coefficients.
    pub fn row_times(&self, k: usize, x: &[f64]) -> f64 {
        let (nx, ny) = (self.grid.nx(), self.grid.ny());
        let (i, j) = (k % nx, k / nx);
        let c = self.coeffs(k);
        let mut s = c.center * x[k];
        if i > 0 {
            s += c.west * x[k - 1];
        }
        if i + 1 < nx {
            s += c.east * x[k + 1];
        }
        if j > 0 {
            s += c.south * x[k - nx];
        }
        if j + 1 < ny {
            s += c.north * x[k + nx];
        }
        s
    }

    /// ‖b − A·x‖₂ over the free cells.
    pub fn free_residual_norm(&self, x: &[f64]) -> f64 {
        self.free_cells()
            .iter()
            .map(|&k| (self.rhs[k] - self.row_times(k, x)).powi(2))
            .sum::<f64>()
            .sqrt()
    }

    /// The dense system on the free cells: A_ff and b_f = q_f − A_f,fixed·x_fixed.
    pub fn dense_free_system(&self) -> (DMatrix<f64>, DVector<f64>, Vec<usize>) {
        let free = self.free_cells();
        let m = free.len();
        let mut pos = vec![usize::MAX; self.grid.cells()];
        for (p, &k) in free.iter().enumerate() {
            pos[k] = p;
        }
        let nx = self.grid.nx();
        let mut a = DMatrix::zeros(m, m);
        let mut b = DVector::zeros(m);
        for (p, &k) in free.iter().enumerate() {
            let c = self.coeffs(k);
            a[(p, p)] = c.center;
            b[p] = self.rhs[k];
            let (i, j) = (k % nx, k / nx);
            let neighbours = [
                (i > 0, k.wrapping_sub(1), c.west),
                (i + 1 < nx, k + 1, c.east),
                (j > 0, k.wrapping_sub(nx), c.south),
                (j + 1 < self.grid.ny(), k + nx, c.north),
            ];
            for (present, n, coupling) in neighbours {
                if !present {
                    continue;
                }
                if self.is_fixed(n) {
                    b[p] -= coupling * self.x0[n];
                } else {
                    a[(p, pos[n])] = coupling;
                }
            }
        }
        (a, b, free)
    }

    /// The exact solution by a dense LU factorisation (nalgebra), fixed cells at their values.
    pub fn reference_solution(&self) -> Vec<f64> {
        let (a, b, free) = self.dense_free_system();
        let mut x = self.x0.clone();
        if free.is_empty() {
            return x;
        }
        let sol = a.lu().solve(&b).expect("reference system is nonsingular");
        for (p, &k) in free.iter().enumerate() {
            x[k] = sol[p];
        }
        x
    }

    /// Whether the free-cell system is symmetric (couplings equal across every face).
    pub fn is_symmetric(&self) -> bool {
        let (a, _, _) = self.dense_free_system();
        a == a.transpose()
    }

    /// 2-norm condition number of A_ff: from its eigenvalues when it is symmetric, from its
    /// singular values (nalgebra's SVD) otherwise.
    pub fn condition_number(&self) -> f64 {
        let (a, _, free) = self.dense_free_system();
        if free.is_empty() {
            return 1.0;
        }
        if a != a.transpose() {
            let sv = a.singular_values();
            let max = sv.iter().copied().fold(f64::MIN, f64::max);
            let min = sv.iter().copied().fold(f64::MAX, f64::min);
            return max / min;
        }
        let eig = a.symmetric_eigen().eigenvalues;
        let max = eig.iter().copied().fold(f64::MIN, f64::max);
        let min = eig.iter().copied().fold(f64::MAX, f64::min);
        max / min
    }

    /// ‖b_f‖₂ of the free-cell system.
    pub fn free_rhs_norm(&self) -> f64 {
        self.dense_free_system().1.norm()
    }
}

/// The 5-point Laplacian (4, −1) on an `nx × ny` grid with zero values just outside.
pub fn laplacian(nx: usize, ny: usize) -> Problem {
    let grid = Grid::new(nx, ny).unwrap();
    let mut bands: [Vec<f64>; 5] = Default::default();
    for k in 0..grid.cells() {
        let (i, j) = grid.coords(k);
        let c = Coeffs5::<f64>::laplacian(grid, i, j);
        for (b, v) in bands
            .iter_mut()
            .zip([c.center, c.west, c.east, c.south, c.north])
        {
            b.push(v);
        }
    }
    Problem {
        grid,
        bands,
        fixed: Vec::new(),
        rhs: vec![1.0; grid.cells()],
        x0: vec![0.0; grid.cells()],
    }
}

/// Centers that make every row and every column strictly diagonally dominant: the larger of
/// the row's and the column's sum of |couplings| (`couplings` west, east, south, north), times
/// 1.05 to 1.5, plus 0.05 to 1, drawn from `rng` cell by cell in grid order.
fn dominant_centers(grid: Grid, rng: &mut Rng, couplings: [&[f64]; 4], c: &mut [f64]) {
    let [w, e, s, nn] = couplings;
    let (nx, ny) = (grid.nx(), grid.ny());
    for (k, center) in c.iter_mut().enumerate() {
        let (i, j) = grid.coords(k);
        let row = w[k].abs() + e[k].abs() + s[k].abs() + nn[k].abs();
        // The couplings of the neighbours towards k: column k of the matrix.
        let mut column = 0.0;
        if i > 0 {
            column += e[k - 1].abs();
        }
        if i + 1 < nx {
            column += w[k + 1].abs();
        }
        if j > 0 {
            column += nn[k - nx].abs();
        }
        if j + 1 < ny {
            column += s[k + nx].abs();
        }
        *center = row.max(column) * (1.0 + rng.range(0.05, 0.5)) + rng.range(0.05, 1.0);
    }
}

/// A random symmetric, strictly diagonally dominant system with positive centers (so SPD):
/// face couplings log-uniform over two decades (sign negative, or mixed when `mixed_signs`),
/// centers the sum of |couplings| plus a margin, a random fraction of fixed cells whose rows
/// hold unrelated garbage (the drivers must never use them), random rhs and fixed values.
pub fn random_sdd(
    nx: usize,
    ny: usize,
    seed: u64,
    fixed_fraction: f64,
    mixed_signs: bool,
) -> Problem {
    let grid = Grid::new(nx, ny).unwrap();
    let n = grid.cells();
    let mut rng = Rng::new(seed);
    let [mut c, mut w, mut e, mut s, mut nn] = [(); 5].map(|_| vec![0.0; n]);
    for k in 0..n {
        let (i, j) = grid.coords(k);
        if i + 1 < nx {
            let mut a = -rng.log_range(0.1, 10.0);
            if mixed_signs && rng.uniform() < 0.3 {
                a = -a;
            }
            e[k] = a;
            w[k + 1] = a;
        }
        if j + 1 < ny {
            let mut a = -rng.log_range(0.1, 10.0);
            if mixed_signs && rng.uniform() < 0.3 {
                a = -a;
            }
            nn[k] = a;
            s[k + nx] = a;
        }
    }
    dominant_centers(grid, &mut rng, [&w, &e, &s, &nn], &mut c);
    let fixed: Vec<usize> = (0..n).filter(|_| rng.uniform() < fixed_fraction).collect();
    let mut x0 = vec![0.0; n];
    let mut rhs = vec![0.0; n];
    for k in 0..n {
        rhs[k] = rng.range(-1.0, 1.0);
        if fixed.contains(&k) {
            x0[k] = rng.range(-2.0, 2.0);
            // Garbage in a fixed row: it must not influence anything.
            c[k] = rng.range(0.5, 50.0);
            rhs[k] = 1e6 * rng.range(-1.0, 1.0);
        } else {
            x0[k] = rng.range(-0.1, 0.1);
        }
    }
    Problem {
        grid,
        bands: [c, w, e, s, nn],
        fixed,
        rhs,
        x0,
    }
}

/// A random NON-symmetric, strictly diagonally dominant system: every coupling drawn on its
/// own (the two sides of a face differ), log-uniform over two decades, negative or (with
/// probability `positive_fraction`) positive, plus an upwind-like bias: the west and south
/// couplings are scaled up by a random factor of up to 5, as a flow towards the north-east
/// would make them. Centers are the larger of the row's and the column's sum of |couplings|
/// times 1.05 to 1.5 plus 0.05 to 1, so every free row is strictly diagonally dominant and the
/// free-cell system non-singular (Lévy–Desplanques theorem; Horn & Johnson, Matrix Analysis,
/// 2nd ed. 2013, Thm 6.1.10), and so is `A + Aᵀ`: the symmetric part is positive definite,
/// which makes restarted GMRES(m) converge for every m ≥ 1 without a preconditioner
/// (Eisenstat, Elman & Schultz, "Variational iterative methods for nonsymmetric systems of
/// linear equations", SIAM J. Numer. Anal. 20, 1983, from memory). Without the column
/// condition, GMRES(5) + Jacobi was seen to stagnate on a 1 × 7 case (restarted GMRES has no
/// guarantee on a general non-symmetric system).
/// Fixed cells as in [`random_sdd`]: garbage rows, values held in `x0`.
pub fn random_nonsymmetric(
    nx: usize,
    ny: usize,
    seed: u64,
    fixed_fraction: f64,
    positive_fraction: f64,
) -> Problem {
    let grid = Grid::new(nx, ny).unwrap();
    let n = grid.cells();
    let mut rng = Rng::new(seed ^ 0x005E_ED0F_AD7E_C710);
    let [mut c, mut w, mut e, mut s, mut nn] = [(); 5].map(|_| vec![0.0; n]);
    let bias = rng.range(1.0, 5.0);
    let coupling = |rng: &mut Rng, scale: f64| {
        let a = -scale * rng.log_range(0.1, 10.0);
        if rng.uniform() < positive_fraction {
            -a
        } else {
            a
        }
    };
    for k in 0..n {
        let (i, j) = grid.coords(k);
        if i > 0 {
            w[k] = coupling(&mut rng, bias);
        }
        if i + 1 < nx {
            e[k] = coupling(&mut rng, 1.0);
        }
        if j > 0 {
            s[k] = coupling(&mut rng, bias);
        }
        if j + 1 < ny {
            nn[k] = coupling(&mut rng, 1.0);
        }
    }
    dominant_centers(grid, &mut rng, [&w, &e, &s, &nn], &mut c);
    let fixed: Vec<usize> = (0..n).filter(|_| rng.uniform() < fixed_fraction).collect();
    let mut x0 = vec![0.0; n];
    let mut rhs = vec![0.0; n];
    for k in 0..n {
        rhs[k] = rng.range(-1.0, 1.0);
        if fixed.contains(&k) {
            x0[k] = rng.range(-2.0, 2.0);
            c[k] = rng.range(0.5, 50.0);
            rhs[k] = 1e6 * rng.range(-1.0, 1.0);
        } else {
            x0[k] = rng.range(-0.1, 0.1);
        }
    }
    Problem {
        grid,
        bands: [c, w, e, s, nn],
        fixed,
        rhs,
        x0,
    }
}

/// The proptest strategy over [`random_nonsymmetric`] systems: grids of 1–10 × 1–10 cells,
/// up to 40 % fixed cells, up to 30 % positive couplings. Property tests of the drivers for
/// general systems draw from it (a new preconditioner for non-symmetric operators is covered
/// by adding its engine to the registry with `Reach::General`).
pub fn nonsymmetric_problems() -> impl proptest::strategy::Strategy<Value = Problem> {
    use proptest::prelude::*;
    (
        1usize..=10,
        1usize..=10,
        any::<u64>(),
        0.0f64..0.4,
        0.0f64..0.3,
    )
        .prop_map(|(nx, ny, seed, frac, positive)| {
            random_nonsymmetric(nx, ny, seed, frac, positive)
        })
}

/// An upwinded advection–diffusion operator on an `n × n` grid of unit cells: diffusion
/// conductance 1 across every face, a uniform flow towards the east (+i) and north (+j) with
/// cell Péclet number `peclet` in each direction, first-order upwind (Patankar, Numerical Heat
/// Transfer and Fluid Flow, 1980, §5.2–5.3: the upstream neighbour's coefficient gains the
/// flow), the west and south edges held at 0 as fixed cells' neighbours through zero values
/// just outside (Dirichlet through the boundary faces), rhs 1 (a uniform source).
pub fn upwind_advection(n: usize, peclet: f64) -> Problem {
    let grid = Grid::new(n, n).unwrap();
    let mut bands: [Vec<f64>; 5] = Default::default();
    for k in 0..grid.cells() {
        let (i, j) = grid.coords(k);
        let c = Coeffs5::<f64>::laplacian(grid, i, j);
        // The laplacian's center is 4 on every cell (zero values outside); upwinding adds the
        // outflow (east and north faces) to the center and the inflow to the upstream
        // coupling.
        let west = if i > 0 { c.west - peclet } else { 0.0 };
        let south = if j > 0 { c.south - peclet } else { 0.0 };
        let center = c.center + 2.0 * peclet;
        for (b, v) in bands.iter_mut().zip([center, west, c.east, south, c.north]) {
            b.push(v);
        }
    }
    Problem {
        grid,
        bands,
        fixed: Vec::new(),
        rhs: vec![1.0; grid.cells()],
        x0: vec![0.0; grid.cells()],
    }
}

/// ‖a − b‖₂.
pub fn dist(a: &[f64], b: &[f64]) -> f64 {
    a.iter()
        .zip(b)
        .map(|(x, y)| (x - y).powi(2))
        .sum::<f64>()
        .sqrt()
}

/// ‖a‖₂.
pub fn norm(a: &[f64]) -> f64 {
    a.iter().map(|x| x * x).sum::<f64>().sqrt()
}

/// Least-squares slope of log(y) against log(x).
pub fn log_log_slope(x: &[f64], y: &[f64]) -> f64 {
    let lx: Vec<f64> = x.iter().map(|v| v.ln()).collect();
    let ly: Vec<f64> = y.iter().map(|v| v.ln()).collect();
    let m = lx.len() as f64;
    let (mx, my) = (lx.iter().sum::<f64>() / m, ly.iter().sum::<f64>() / m);
    let sxy: f64 = lx.iter().zip(&ly).map(|(a, b)| (a - mx) * (b - my)).sum();
    let sxx: f64 = lx.iter().map(|a| (a - mx).powi(2)).sum();
    sxy / sxx
}

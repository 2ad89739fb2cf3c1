//! The coarsest-level solve: a banded Cholesky factorisation `A = L·Lᵀ` of the eliminated
//! operator (symmetric hierarchies), or a banded LU factorisation without pivoting
//! (non-symmetric ones), in the cell ordering (row-wise or column-wise) with the smaller
//! bandwidth.

use crate::operator::Stencil5;
use crate::{Error, Scalar};

/// Largest number of cells the direct solve accepts.
pub(crate) const MAX_DIRECT_CELLS: usize = 4096;

/// Banded Cholesky factor of a small 5-point operator.
#[derive(Clone, Debug)]
pub(crate) struct BandCholesky<T> {
    n: usize,
    /// Bandwidth: `L[p, q] = 0` for `p − q > m`.
    m: usize,
    /// `L[p, p − m + t]` at `p·(m + 1) + t`, `t = 0..=m` (`t = m` is the diagonal).
    band: Vec<T>,
    /// Position `p` of cell `k` in the factor's ordering.
    position: Vec<usize>,
    /// Scratch in the factor's ordering.
    work: Vec<T>,
    /// Pivots replaced by `√a_kk` because they came out at or below `ε·a_kk`.
    pub(crate) replaced: usize,
}

impl<T: Scalar> BandCholesky<T> {
    /// Factor the operator of `rows` (at most [`MAX_DIRECT_CELLS`] cells). Only the couplings
    /// below the diagonal (in the chosen ordering) are read; the operator is taken as symmetric.
    pub(crate) fn new<R: Stencil5<T> + ?Sized>(rows: &R) -> Result<BandCholesky<T>, Error> {
        let g = rows.grid();
        let (nx, ny, n) = (g.nx(), g.ny(), g.cells());
        if n > MAX_DIRECT_CELLS {
            return Err(Error::setting(
                "coarsest level cells",
                n as f64,
                "at most 4096 cells for the direct coarsest solve",
            ));
        }
        // Row-wise ordering has bandwidth nx, column-wise ny: take the smaller.
        let by_columns = ny < nx;
        let m = if by_columns { ny } else { nx };
        let position: Vec<usize> = (0..n)
            .map(|k| {
                let (i, j) = (k % nx, k / nx);
                if by_columns {
                    j + ny * i
                } else {
                    k
                }
            })
            .collect();
        let w = m + 1;
        let mut band = vec![T::zero(); n * w];
        let mut diag = vec![T::zero(); n];
        for j in 0..ny {
            for i in 0..nx {
                let k = i + nx * j;
                let c = rows.eliminated_coeffs(i, j);
                let p = position[k];
                diag[p] = c.center;
                band[p * w + m] = c.center;
                let mut put = |nb: usize, value: T| {
                    let q = position[nb];
                    if q < p {
                        band[p * w + (m - (p - q))] = value;
                    }
                };
                if i > 0 {
                    put(k - 1, c.west);
                }
                if i + 1 < nx {
                    put(k + 1, c.east);
                }
                if j > 0 {
                    put(k - nx, c.south);
                }
                if j + 1 < ny {
                    put(k + nx, c.north);
                }
            }
        }
        let eps = T::epsilon() * T::from(n.max(16)).unwrap_or_else(T::one);
        let mut replaced = 0;
        for p in 0..n {
            let lo = p.saturating_sub(m);
            for q in lo..=p {
                // s = A[p, q] − Σ_{t < q} L[p, t]·L[q, t], over t within both bands.
                let mut s = band[p * w + (m - (p - q))];
                let t_lo = lo.max(q.saturating_sub(m));
                for t in t_lo..q {
                    s = s - band[p * w + (m - (p - t))] * band[q * w + (m - (q - t))];
                }
                if q < p {
                    band[p * w + (m - (p - q))] = s / band[q * w + m];
                } else {
                    let a = diag[p];
                    let pivot = if s.is_finite() && s > eps * a {
                        s
                    } else {
                        replaced += 1;
                        a
                    };
                    band[p * w + m] = pivot.sqrt();
                }
            }
        }
        Ok(BandCholesky {
            n,
            m,
            band,
            position,
            work: vec![T::zero(); n],
            replaced,
        })
    }

    /// `x = A⁻¹ b` (in cell order).
    #[allow(clippy::needless_range_loop)] // band indexing: clearer as written
    pub(crate) fn solve(&mut self, b: &[T], x: &mut [T]) {
        let (n, m, w) = (self.n, self.m, self.m + 1);
        let y = &mut self.work;
        for (k, &p) in self.position.iter().enumerate() {
            y[p] = b[k];
        }
        for p in 0..n {
            let mut s = y[p];
            for q in p.saturating_sub(m)..p {
                s = s - self.band[p * w + (m - (p - q))] * y[q];
            }
            y[p] = s / self.band[p * w + m];
        }
        for p in (0..n).rev() {
            let mut s = y[p];
            for q in p + 1..(p + m + 1).min(n) {
                s = s - self.band[q * w + (m - (q - p))] * y[q];
            }
            y[p] = s / self.band[p * w + m];
        }
        for (k, &p) in self.position.iter().enumerate() {
            x[k] = y[p];
        }
    }

    /// Bytes held.
    pub(crate) fn bytes(&self) -> usize {
        let t = std::mem::size_of::<T>();
        self.band.len() * t + self.n * (t + std::mem::size_of::<usize>())
    }
}

/// The cell ordering with the smaller bandwidth: (bandwidth, position of each cell).
fn band_ordering(nx: usize, ny: usize) -> (usize, Vec<usize>) {
    let by_columns = ny < nx;
    let m = if by_columns { ny } else { nx };
    let position = (0..nx * ny)
        .map(|k| {
            let (i, j) = (k % nx, k / nx);
            if by_columns {
                j + ny * i
            } else {
                k
            }
        })
        .collect();
    (m, position)
}

/// Banded LU factor (no pivoting) of a small, possibly non-symmetric 5-point operator. The
/// coarse operators of a non-symmetric hierarchy are M-matrices with positive centers
/// (`skew.rs`), for which elimination without pivoting is safe; a pivot at or below rounding
/// level is replaced by the original diagonal entry and counted, like the Cholesky factor's.
#[derive(Clone, Debug)]
pub(crate) struct BandLu<T> {
    n: usize,
    /// Bandwidth on each side.
    m: usize,
    /// `L` (unit, below) and `U` (diagonal and above): entry `(p, q)` at `p·(2m + 1) + q + m − p`.
    band: Vec<T>,
    position: Vec<usize>,
    work: Vec<T>,
    pub(crate) replaced: usize,
}

impl<T: Scalar> BandLu<T> {
    /// Factor the operator of `rows` (at most [`MAX_DIRECT_CELLS`] cells).
    pub(crate) fn new<R: Stencil5<T> + ?Sized>(rows: &R) -> Result<BandLu<T>, Error> {
        let g = rows.grid();
        let (nx, ny, n) = (g.nx(), g.ny(), g.cells());
        if n > MAX_DIRECT_CELLS {
            return Err(Error::setting(
                "coarsest level cells",
                n as f64,
                "at most 4096 cells for the direct coarsest solve",
            ));
        }
        let (m, position) = band_ordering(nx, ny);
        let w = 2 * m + 1;
        let at = |p: usize, q: usize| p * w + q + m - p;
        let mut band = vec![T::zero(); n * w];
        let mut diag = vec![T::zero(); n];
        for j in 0..ny {
            for i in 0..nx {
                let k = i + nx * j;
                let c = rows.eliminated_coeffs(i, j);
                let p = position[k];
                diag[p] = c.center;
                band[at(p, p)] = c.center;
                let neighbours = [
                    (i > 0, k.wrapping_sub(1), c.west),
                    (i + 1 < nx, k + 1, c.east),
                    (j > 0, k.wrapping_sub(nx), c.south),
                    (j + 1 < ny, k + nx, c.north),
                ];
                for (exists, nb, value) in neighbours {
                    if exists {
                        band[at(p, position[nb])] = value;
                    }
                }
            }
        }
        let eps = T::epsilon() * T::from(n.max(16)).unwrap_or_else(T::one);
        let mut replaced = 0;
        for p in 0..n {
            let pivot = band[at(p, p)];
            let a = diag[p];
            if !(pivot.is_finite() && pivot.abs() > eps * a.abs()) {
                replaced += 1;
                band[at(p, p)] = if a == T::zero() { T::one() } else { a };
            }
            let pivot = band[at(p, p)];
            let last = (p + m).min(n - 1);
            for r in p + 1..=last {
                let l = band[at(r, p)] / pivot;
                band[at(r, p)] = l;
                if l == T::zero() {
                    continue;
                }
                for q in p + 1..=last {
                    band[at(r, q)] = band[at(r, q)] - l * band[at(p, q)];
                }
            }
        }
        Ok(BandLu {
            n,
            m,
            band,
            position,
            work: vec![T::zero(); n],
            replaced,
        })
    }

    /// `x = A⁻¹ b` (in cell order).
    #[allow(clippy::needless_range_loop)] // band indexing: clearer as written
    pub(crate) fn solve(&mut self, b: &[T], x: &mut [T]) {
        let (n, m) = (self.n, self.m);
        let w = 2 * m + 1;
        let at = |p: usize, q: usize| p * w + q + m - p;
        let y = &mut self.work;
        for (k, &p) in self.position.iter().enumerate() {
            y[p] = b[k];
        }
        for p in 0..n {
            let mut s = y[p];
            for q in p.saturating_sub(m)..p {
                s = s - self.band[at(p, q)] * y[q];
            }
            y[p] = s;
        }
        for p in (0..n).rev() {
            let mut s = y[p];
            for q in p + 1..(p + m + 1).min(n) {
                s = s - self.band[at(p, q)] * y[q];
            }
            y[p] = s / self.band[at(p, p)];
        }
        for (k, &p) in self.position.iter().enumerate() {
            x[k] = y[p];
        }
    }

    /// Bytes held.
    pub(crate) fn bytes(&self) -> usize {
        let t = std::mem::size_of::<T>();
        self.band.len() * t + self.n * (t + std::mem::size_of::<usize>())
    }
}

/// The coarsest-level factor: Cholesky for a symmetric hierarchy, LU for a non-symmetric one.
#[derive(Clone, Debug)]
pub(crate) enum CoarsestSolve<T> {
    Cholesky(BandCholesky<T>),
    Lu(BandLu<T>),
}

impl<T: Scalar> CoarsestSolve<T> {
    /// Factor `rows`: Cholesky if `symmetric`, LU otherwise.
    pub(crate) fn new<R: Stencil5<T> + ?Sized>(
        rows: &R,
        symmetric: bool,
    ) -> Result<CoarsestSolve<T>, Error> {
        Ok(if symmetric {
            CoarsestSolve::Cholesky(BandCholesky::new(rows)?)
        } else {
            CoarsestSolve::Lu(BandLu::new(rows)?)
        })
    }

    /// `x = A⁻¹ b` (in cell order).
    pub(crate) fn solve(&mut self, b: &[T], x: &mut [T]) {
        match self {
            CoarsestSolve::Cholesky(f) => f.solve(b, x),
            CoarsestSolve::Lu(f) => f.solve(b, x),
        }
    }

    /// Bytes held.
    pub(crate) fn bytes(&self) -> usize {
        match self {
            CoarsestSolve::Cholesky(f) => f.bytes(),
            CoarsestSolve::Lu(f) => f.bytes(),
        }
    }

    /// Pivots replaced while factoring.
    pub(crate) fn replaced(&self) -> usize {
        match self {
            CoarsestSolve::Cholesky(f) => f.replaced,
            CoarsestSolve::Lu(f) => f.replaced,
        }
    }
}

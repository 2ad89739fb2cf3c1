//! Estimating the optimal SOR relaxation factor from the Jacobi iteration's spectral radius.

use crate::blocks::Blocks;
use crate::error::Location;
use crate::operator::Stencil5;
use crate::stencil::check_symmetry;

use crate::scalar::{is_positive, to_f64};
use crate::space::{first_flagged, Combine, Space, Threaded};
use crate::{Error, Scalar, Side};

/// Why a non-symmetric operator that is not diagonally dominant is refused.
const NOT_DOMINANT_HINT: &str = "Young's formula for ω needs a symmetric operator, and for a non-symmetric one Gauss–Seidel (ω = 1) is only guaranteed to converge when every row is diagonally dominant (with a strictly dominant row reachable from each); this one is not (central differencing above cell Péclet 2 does this). Use BiCGSTAB or GMRES with ILU(0), or upwind the advection term";

/// Relative slack of the dominance test: a row counts as weakly dominant when its center is at
/// least `(1 − DOMINANCE_SLACK)` times the sum of its coupling magnitudes (the rounding of a
/// center assembled as that sum), and as strictly dominant when it exceeds the sum by more than
/// `DOMINANCE_SLACK` times the center.
const DOMINANCE_SLACK: f64 = 1e-12;

/// How [`RelaxationEstimate::omega`] was chosen.
///
/// ```
/// use quintet::prelude::*;
/// let grid = Grid::new(16, 16)?;
/// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// assert_eq!(estimate_relaxation(&op, 30)?.basis, quintet::RelaxationBasis::YoungFormula);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[non_exhaustive]
pub enum RelaxationBasis {
    /// A symmetric operator: `ω = 2/(1 + √(1 − ρ_J²))` from the estimated Jacobi spectral
    /// radius (Young's formula).
    YoungFormula,
    /// A non-symmetric, diagonally dominant operator: `ω = 1`, Gauss–Seidel. Young's formula
    /// does not hold without symmetry and no larger ω is known to be safe or faster
    /// (measured on upwind advection–diffusion, 128², zero start, 10⁻⁸: ω = 1.5 needs 212
    /// sweeps against Gauss–Seidel's 67 at cell Péclet 10, and 389 against 16 at Péclet 100;
    /// it wins only near Péclet 1), but Gauss–Seidel converges for every weakly chained
    /// diagonally dominant matrix (see [`estimate_relaxation`]).
    DiagonalDominance,
}

/// The outcome of [`estimate_relaxation`].
///
/// ```
/// use quintet::prelude::*;
/// let grid = Grid::new(63, 63)?;
/// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let est = estimate_relaxation(&op, 60)?;
/// let h = 1.0 / 64.0;
/// assert!((est.jacobi_radius - (std::f64::consts::PI * h).cos()).abs() < 1e-4);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
#[non_exhaustive]
pub struct RelaxationEstimate {
    /// Estimated spectral radius `ρ_J` of the Jacobi iteration matrix `I − D⁻¹A` on the free
    /// cells.
    pub jacobi_radius: f64,
    /// `ω = 2 / (1 + √(1 − ρ_J²))`, Young's optimal factor for consistently ordered matrices.
    pub omega: f64,
    /// Smallest eigenvalue estimate of `D⁻¹A`.
    pub lambda_min: f64,
    /// Largest eigenvalue estimate of `D⁻¹A`.
    pub lambda_max: f64,
    /// Lanczos steps taken (fewer than asked if the Krylov space was exhausted); 0 for
    /// [`RelaxationBasis::DiagonalDominance`].
    pub steps: usize,
    /// How `omega` was chosen. For [`RelaxationBasis::DiagonalDominance`] no eigenvalue is
    /// estimated: `jacobi_radius` is then the Gershgorin bound `max_k Σ|a_kl|/a_kk` (at most 1;
    /// 1 for the usual weakly dominant interior row), and `lambda_min`, `lambda_max` are
    /// `1 ∓` that bound.
    pub basis: RelaxationBasis,
}

/// Estimate `ω_opt = 2/(1 + √(1 − ρ_J²))` for [`Sor`](crate::Sor), where `ρ_J` is the spectral
/// radius of the Jacobi iteration matrix `I − D⁻¹A` restricted to the free cells.
///
/// `ρ_J` comes from the extreme eigenvalues of the symmetrically scaled operator
/// `D^{-1/2} A D^{-1/2}`, found by `steps` Lanczos steps from a smooth start vector, then
/// bisection on the small tridiagonal matrix. Lanczos is the Krylov refinement of power
/// iteration: plain power iteration resolves `ρ_J` to the accuracy `ω_opt` needs only after
/// `O(h⁻²)` steps on an `h`-spaced grid, Lanczos after `O(h⁻¹)`. Each step costs about one CG
/// iteration. 40–80 steps suit grids up to a few hundred cells across; the estimate of `ρ_J`
/// only ever errs low, which gives a slightly small, safe ω. The formula is exact for
/// consistently ordered operators (the 5-point stencil in lexicographic or red-black order) with
/// a symmetric positive definite `A` (Young 1950).
///
/// **Non-symmetric operators** (couplings not symmetric to a relative 10⁻¹⁰, e.g. upwinded
/// advection): Young's formula does not hold, so no ω above 1 is offered. If every free row of
/// the eliminated operator is diagonally dominant, `a_kk ≥ Σ_l |a_kl|`, and from every free
/// row a strictly dominant one can be reached along nonzero couplings (a *weakly chained
/// diagonally dominant* matrix — a row next to a fixed cell is strictly dominant once the
/// coupling to it is eliminated), the answer is `ω = 1` with
/// [`RelaxationBasis::DiagonalDominance`]. The Jacobi matrix `J = I − D⁻¹A` then has
/// `ρ(|J|) < 1` (`|J|` has row sums ≤ 1, below 1 at the strictly dominant rows, so every row
/// of `|J|ⁿ` sums to less than 1 — common practice), and Gauss–Seidel converges whenever
/// `ρ(|J|) < 1` (Varga, *Matrix Iterative Analysis*, 1962, ch. 3, from memory; for strictly
/// or irreducibly diagonally dominant matrices this is Varga's Theorem 3.10, also from
/// memory). Otherwise the operator is refused, naming the first offending row, with a hint
/// pointing to BiCGSTAB/GMRES with [`Ilu0`](crate::Ilu0).
///
/// # Errors
///
/// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) if `steps` is 0 or the
/// estimated `ρ_J ≥ 1` (Jacobi does not converge, so the formula does not apply);
/// [`ErrorKind::NotDiagonallyDominant`](crate::ErrorKind::NotDiagonallyDominant) for a
/// non-symmetric operator with a free row that is not diagonally dominant, or weakly dominant
/// rows from which no strictly dominant row is reachable (the error names the first such row;
/// its hint says what to do instead);
/// [`ErrorKind::NonPositiveCenter`](crate::ErrorKind::NonPositiveCenter) for a free cell with a
/// center that is not positive.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(40, 40)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let est = estimate_relaxation(&op, 50)?;
/// let mut sor = Sor::new(est.omega)?;
/// let mut x = vec![0.0; grid.cells()];
/// assert!(sor.solve(&op, &vec![1.0; grid.cells()], &mut x)?.iterations < 300);
/// # Ok::<(), quintet::Error>(())
/// ```
pub fn estimate_relaxation<T: Scalar, S: Stencil5<T> + ?Sized>(
    op: &S,
    steps: usize,
) -> Result<RelaxationEstimate, Error> {
    if steps == 0 {
        return Err(Error::setting("steps", 0.0, "at least 1"));
    }
    let grid = op.grid();
    if let Some((k, value)) = op.first_nonpositive_center() {
        return Err(Error::non_positive_center(
            Location::on(grid, k),
            to_f64(value),
        ));
    }
    if check_symmetry(op, 1e-10).is_err() {
        return gauss_seidel_if_dominant(op, &Threaded);
    }
    let n = grid.cells();
    let fixed = op.fixed();
    let free = |k: usize| !fixed.is_some_and(|f| f.contains(k));

    // D^{-1/2} on free cells, zero on fixed cells.
    let scale: Vec<T> = (0..n)
        .map(|k| {
            let (i, j) = grid.coords(k);
            if free(k) {
                T::one() / op.coeffs(i, j).center.sqrt()
            } else {
                T::zero()
            }
        })
        .collect();
    // A smooth start with a small deterministic ripple, so that no eigenvector is missed.
    let mut v: Vec<T> = (0..n)
        .map(|k| {
            let ripple = ((k.wrapping_mul(2_654_435_761) % 1000) as f64 / 1000.0) - 0.5;
            if free(k) {
                T::from(1.0 + 0.5 * ripple).unwrap_or_else(T::one)
            } else {
                T::zero()
            }
        })
        .collect();
    let mut kernels = Blocks::for_grid(grid);
    let space = &Threaded;
    let norm = kernels.dot(space, &v, &v).sqrt();
    if !is_positive(norm) {
        // Every cell is fixed: nothing to relax.
        return Ok(RelaxationEstimate {
            jacobi_radius: 0.0,
            omega: 1.0,
            lambda_min: 1.0,
            lambda_max: 1.0,
            steps: 0,
            basis: RelaxationBasis::YoungFormula,
        });
    }
    v.iter_mut().for_each(|e| *e = *e / norm);
    let (mut v_prev, mut u, mut w) = (vec![T::zero(); n], vec![T::zero(); n], vec![T::zero(); n]);
    let (mut alphas, mut betas) = (Vec::with_capacity(steps), Vec::with_capacity(steps));
    let mut beta_prev = T::zero();
    for step in 0..steps {
        for ((uk, &vk), &sk) in u.iter_mut().zip(&v).zip(&scale) {
            *uk = vk * sk;
        }
        kernels.apply_dot_free(space, op, &u, &mut w);
        for (wk, &sk) in w.iter_mut().zip(&scale) {
            *wk = *wk * sk;
        }
        let a = kernels.dot(space, &w, &v);
        for ((wk, &vk), &pk) in w.iter_mut().zip(&v).zip(&v_prev) {
            *wk = *wk - a * vk - beta_prev * pk;
        }
        let b = kernels.dot(space, &w, &w).sqrt();
        alphas.push(to_f64(a));
        let exhausted = !is_positive(to_f64(b) - 1e-12 * to_f64(a).abs());
        if exhausted || step + 1 == steps {
            break;
        }
        betas.push(to_f64(b));
        std::mem::swap(&mut v_prev, &mut v);
        for (vk, &wk) in v.iter_mut().zip(&w) {
            *vk = wk / b;
        }
        beta_prev = b;
    }
    let (lambda_min, lambda_max) = extreme_eigenvalues(&alphas, &betas);
    let jacobi_radius = (1.0 - lambda_min).max(lambda_max - 1.0);
    if !is_positive(1.0 - jacobi_radius) {
        return Err(Error::setting(
            "Jacobi spectral radius",
            jacobi_radius,
            "below 1 (Jacobi must converge for the optimal-omega formula)",
        ));
    }
    Ok(RelaxationEstimate {
        jacobi_radius,
        omega: 2.0 / (1.0 + (1.0 - jacobi_radius * jacobi_radius).sqrt()),
        lambda_min,
        lambda_max,
        steps: alphas.len(),
        basis: RelaxationBasis::YoungFormula,
    })
}

/// `ω = 1` for a weakly chained diagonally dominant non-symmetric operator (centers already
/// checked positive), or the refusal naming the first row that is not.
fn gauss_seidel_if_dominant<T: Scalar, S: Stencil5<T> + ?Sized>(
    op: &S,
    space: &dyn Space,
) -> Result<RelaxationEstimate, Error> {
    let grid = op.grid();
    let n = grid.cells();
    let fixed = op.fixed();
    let free = |k: usize| !fixed.is_some_and(|f| f.contains(k));
    // (center, sum of coupling magnitudes) of each eliminated free row.
    let row = |k: usize| {
        let (i, j) = grid.coords(k);
        let c = op.eliminated_coeffs(i, j);
        let couplings = Side::ALL
            .iter()
            .map(|&side| to_f64(c.towards(side)).abs())
            .sum::<f64>(); // local: the four couplings of one row
        (to_f64(c.center), couplings)
    };
    let weak = |k: usize| {
        let (center, sum) = row(k);
        center >= sum - DOMINANCE_SLACK * center
    };
    let strict = |k: usize| {
        let (center, sum) = row(k);
        center - sum > DOMINANCE_SLACK * center
    };
    if let Some(k) = first_flagged(space, n, |k| free(k) && !weak(k)) {
        let (center, sum) = row(k);
        return Err(
            Error::not_dominant(Location::on(grid, k), center, sum).with_hint(NOT_DOMINANT_HINT)
        );
    }
    // Rows from which a strictly dominant row is reachable along nonzero couplings: a search
    // backwards from the strictly dominant rows (local graph search over this grid's cells).
    let mut reaches = vec![false; n];
    let mut queue: Vec<usize> = (0..n).filter(|&k| free(k) && strict(k)).collect();
    for &k in &queue {
        reaches[k] = true;
    }
    while let Some(k) = queue.pop() {
        for side in Side::ALL {
            let Some(l) = grid.neighbour(k, side) else {
                continue;
            };
            if reaches[l] || !free(l) {
                continue;
            }
            let (li, lj) = grid.coords(l);
            if op.eliminated_coeffs(li, lj).towards(side.opposite()) != T::zero() {
                reaches[l] = true;
                queue.push(l);
            }
        }
    }
    if let Some(k) = first_flagged(space, n, |k| free(k) && !reaches[k]) {
        let (center, _) = row(k);
        return Err(Error::not_dominant(Location::on(grid, k), center, f64::NAN)
            .with_hint(NOT_DOMINANT_HINT));
    }
    let local = (0..n)
        .filter(|&k| free(k))
        .map(|k| {
            let (center, sum) = row(k);
            sum / center
        })
        .fold(0.0f64, f64::max); // local: this process's cells, combined below
    let mut bound = [0.0f64];
    space.combine_f64(&[local], &[Combine::Max], &mut bound);
    let bound = bound[0].min(1.0);
    Ok(RelaxationEstimate {
        jacobi_radius: bound,
        omega: 1.0,
        lambda_min: 1.0 - bound,
        lambda_max: 1.0 + bound,
        steps: 0,
        basis: RelaxationBasis::DiagonalDominance,
    })
}

/// Smallest and largest eigenvalue of the symmetric tridiagonal matrix with diagonal `a` and
/// off-diagonal `b`, by Sturm-sequence bisection inside the Gershgorin interval.
fn extreme_eigenvalues(a: &[f64], b: &[f64]) -> (f64, f64) {
    let m = a.len();
    let radius = |i: usize| {
        let left = if i > 0 { b[i - 1].abs() } else { 0.0 };
        let right = if i + 1 < m { b[i].abs() } else { 0.0 };
        left + right
    };
    let lo = (0..m)
        .map(|i| a[i] - radius(i))
        .fold(f64::INFINITY, f64::min); // local: the small tridiagonal matrix
    let hi = (0..m)
        .map(|i| a[i] + radius(i))
        .fold(f64::NEG_INFINITY, f64::max); // local: as above
                                            // Number of eigenvalues below `x`.
    let below = |x: f64| {
        let mut count = 0;
        let mut q = 1.0;
        for i in 0..m {
            let coupling = if i > 0 { b[i - 1] * b[i - 1] / q } else { 0.0 };
            q = a[i] - x - coupling;
            if q == 0.0 {
                q = f64::EPSILON * (x.abs() + 1.0);
            }
            if q < 0.0 {
                count += 1;
            }
        }
        count
    };
    let bisect = |target: usize| {
        // The smallest x with at least `target` eigenvalues below it.
        let (mut l, mut h) = (lo, hi);
        for _ in 0..200 {
            let mid = 0.5 * (l + h);
            if mid <= l || mid >= h {
                break;
            }
            if below(mid) >= target {
                h = mid;
            } else {
                l = mid;
            }
        }
        0.5 * (l + h)
    };
    (bisect(1), bisect(m))
}

#[cfg(test)]
mod tests {
    use super::extreme_eigenvalues;

    #[test]
    fn tridiagonal_extremes_match_closed_form() {
        // tridiag(-1, 2, -1) of order m has eigenvalues 2 − 2cos(kπ/(m+1)) (common practice).
        let m = 30;
        let a = vec![2.0; m];
        let b = vec![-1.0; m - 1];
        let (lo, hi) = extreme_eigenvalues(&a, &b);
        let th = std::f64::consts::PI / (m as f64 + 1.0);
        assert!((lo - (2.0 - 2.0 * th.cos())).abs() < 1e-12);
        assert!((hi - (2.0 + 2.0 * th.cos())).abs() < 1e-12);
    }
}

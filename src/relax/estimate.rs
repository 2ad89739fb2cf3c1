//! Estimating the optimal SOR relaxation factor from the Jacobi iteration's spectral radius.

use crate::blocks::Blocks;
use crate::error::Location;
use crate::operator::Stencil5;
use crate::stencil::check_symmetry;

/// Why a non-symmetric operator is refused.
const NOT_FOR_NONSYMMETRIC: &str = "estimate_relaxation takes ω from the spectral radius of a symmetric Jacobi iteration (Young's formula), which a non-symmetric operator does not have; for one, run SOR at ω = 1 and a few larger values and compare the reports, or use Stone's SIP";
use crate::scalar::{is_positive, to_f64};
use crate::space::Threaded;
use crate::{Error, Scalar};

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
    /// Lanczos steps taken (fewer than asked if the Krylov space was exhausted).
    pub steps: usize,
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
/// # Errors
///
/// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) if `steps` is 0 or the
/// estimated `ρ_J ≥ 1` (Jacobi does not converge, so the formula does not apply);
/// [`ErrorKind::Asymmetric`](crate::ErrorKind::Asymmetric) for an operator whose couplings are
/// not symmetric to a relative 10⁻¹⁰ (the formula assumes a symmetric Jacobi iteration; the
/// error's hint says what to do instead);
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
    check_symmetry(op, 1e-10).map_err(|e| e.with_hint(NOT_FOR_NONSYMMETRIC))?;
    if let Some((k, value)) = op.first_nonpositive_center() {
        return Err(Error::non_positive_center(
            Location::on(grid, k),
            to_f64(value),
        ));
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

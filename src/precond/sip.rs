//! Stone's strongly implicit procedure (SIP, Stone 1968): an incomplete LU factorisation of
//! the 5-point operator whose dropped fill-in is partly cancelled by a Taylor expansion, used
//! as a standalone iteration or (symmetrised) as a PCG preconditioner.

use super::factor::for_each_eliminated;
use super::{check_built_for, Preconditioner, WeakPivot};
use crate::error::Location;
use crate::iterate::{IterativeSolver, NameCache, Requires, SolveOptions, Task, Workspace};
use crate::operator::Stencil5;
use crate::relax::correction_solve;
use crate::scalar::{is_positive, lit, to_f64};
use crate::space::Space;
use crate::{Error, Grid, LinearOperator, Progress, Report, Scalar};

/// Settings of Stone's factorisation.
///
/// ```
/// let s = quintet::SipSettings { alpha: 0.8, ..Default::default() };
/// assert_eq!(s.alpha, 0.8);
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct SipSettings {
    /// Stone's iteration parameter `α ∈ [0, 1)`: the weight of the Taylor-expansion
    /// cancellation of the dropped fill-in. 0 gives the plain zero-fill incomplete LU
    /// factorisation. Default 0.92.
    pub alpha: f64,
    /// Relative threshold below which a pivot (or a compensation denominator) counts as weak.
    /// Must be in `[0, 1)`. Default `1e-8`.
    pub pivot_floor: f64,
    /// What to do with a weak pivot: [`WeakPivot::UseCenter`] replaces it by the cell's center
    /// (and a weak compensation denominator by 1, i.e. no compensation there);
    /// [`WeakPivot::Reject`] returns [`ErrorKind::PivotBreakdown`](crate::ErrorKind::PivotBreakdown).
    pub weak_pivot: WeakPivot,
    /// Which inverse the [`Preconditioner`] applies. `true` (the default): the symmetrised
    /// `½·((LU)⁻¹ + (LU)⁻ᵀ)`, symmetric as [`Pcg`](crate::Pcg) needs (four triangular sweeps,
    /// reported as "symmetrised SIP"). `false`: the plain `(LU)⁻¹` (two sweeps, reported as
    /// "SIP"), for drivers that accept a non-symmetric preconditioner (BiCGSTAB, GMRES) — on
    /// a non-symmetric operator it is the better approximation of `A⁻¹`, since `LU ≈ A` and
    /// the symmetrisation averages in `(LU)⁻ᵀ ≈ A⁻ᵀ`. The standalone iteration always uses
    /// the plain inverse.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let plain = SipSettings { symmetrised: false, ..Default::default() };
    /// let grid = Grid::new(8, 8)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(Preconditioner::<f64>::name(&Sip::new(&op, plain)?), "SIP");
    /// assert!(SipSettings::default().symmetrised);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub symmetrised: bool,
}

impl Default for SipSettings {
    fn default() -> SipSettings {
        SipSettings {
            alpha: 0.92,
            pivot_floor: 1e-8,
            weak_pivot: WeakPivot::UseCenter,
            symmetrised: true,
        }
    }
}

/// Stone's strongly implicit procedure: `A + N = L·U`, with `L` lower (south, west, diagonal)
/// and `U` unit upper (east, north) on the 5-point pattern, and `N` the two dropped fill-in
/// entries per row minus `α` times their Taylor-expansion estimates
/// `φ_{i+1,j−1} ≈ φ_{i+1,j} + φ_{i,j−1} − φ_{i,j}` (and the mirror one for `φ_{i−1,j+1}`).
/// Row by row, with `S, W, P, E, N` the eliminated coefficients of cell `k`:
///
/// ```text
/// b_k = S_k / (1 + α·e_{k−nx})            c_k = W_k / (1 + α·f_{k−1})
/// d_k = P_k + α·(b_k·e_{k−nx} + c_k·f_{k−1}) − b_k·f_{k−nx} − c_k·e_{k−1}
/// e_k = (E_k − α·b_k·e_{k−nx}) / d_k      f_k = (N_k − α·c_k·f_{k−1}) / d_k
/// ```
///
/// **Two uses.**
///
/// * As an [`IterativeSolver`] it is Stone's method: `x ← x + (LU)⁻¹·(b − A·x)`, monitored
///   and stopped like every driver. It needs positive centers, not symmetry.
/// * As a [`Preconditioner`] for [`Pcg`](crate::Pcg) it applies (by default,
///   [`SipSettings::symmetrised`]) the symmetrised inverse
///   `½·((LU)⁻¹ + (LU)⁻ᵀ)`. `LU` itself is not symmetric for `α > 0`, even when `A` is: the
///   expansion moves the fill-in of each row onto that row's own neighbours, and the fill-in
///   entries of two neighbouring rows differ, so `N ≠ Nᵀ` (at `α = 0` `LU` is the symmetric
///   IC(0) factor). The average of the inverse and its transpose is symmetric by construction;
///   it is positive definite when `LU` is a good approximation of an SPD `A` (as it is for
///   diffusion operators), but this is not guaranteed in general, and PCG stops with
///   [`ErrorKind::PreconditionerNotPositive`](crate::ErrorKind::PreconditionerNotPositive) if it is not. Each application costs four
///   triangular sweeps.
/// * As a preconditioner for the non-symmetric Krylov drivers, build it with
///   [`SipSettings::symmetrised`] off: it then applies the plain `(LU)⁻¹` (two sweeps).
///
/// Storage: five arrays of one entry per cell, plus one scratch vector.
///
/// **Measured** (Dirichlet Poisson, zero start, relative residual 10⁻⁸): the standalone
/// iteration with the default `α = 0.92` needs 429 iterations at 64² and 1668 at 128² (growth
/// like `h⁻²`), and with a fixed `α ≥ 0.97` it diverges there (the divergence rule stops it).
/// Stone cycled `α` through a sequence of values; this implementation keeps one `α`. As a
/// PCG preconditioner it needs 33 → 379 iterations from 64² to 1024², between IC(0) and
/// MIC(0), but on the contrast-10⁴ test field of `benches/examples/iterations.rs` the symmetrised
/// inverse is not positive definite for any `α > 0` tried (0.3 … 0.92) and PCG stops within a
/// few iterations. For diffusion problems prefer MIC(0) or multigrid with PCG; results
/// support, and do not replace, engineering judgement.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(48, 48)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let rhs = vec![1.0; grid.cells()];
///
/// // Standalone Stone iteration.
/// let mut x = vec![0.0; grid.cells()];
/// let mut sip = Sip::new(&op, SipSettings::default())?;
/// let report = sip.solve(&op, &rhs, &mut x)?;
/// assert!(report.method.starts_with("SIP"));
///
/// // As a PCG preconditioner.
/// let mut y = vec![0.0; grid.cells()];
/// let report = Pcg::new(sip).solve(&op, &rhs, &mut y)?;
/// assert_eq!(report.method, "PCG + symmetrised SIP");
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Sip<T> {
    grid: Grid,
    settings: SipSettings,
    /// `L[k, k−nx]`.
    south: Vec<T>,
    /// `L[k, k−1]`.
    west: Vec<T>,
    /// `1 / L[k, k]`.
    inv_diag: Vec<T>,
    /// `U[k, k+1]`.
    east: Vec<T>,
    /// `U[k, k+nx]`.
    north: Vec<T>,
    scratch: Vec<T>,
    replaced: usize,
    /// Stopping rule for the standalone iteration.
    pub options: SolveOptions,
    name: NameCache,
}

impl<T: Scalar> Sip<T> {
    /// Factor `op`'s eliminated coefficients.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for `alpha` outside `[0, 1)` or a pivot floor outside `[0, 1)`;
    /// [`ErrorKind::NonPositiveCenter`](crate::ErrorKind::NonPositiveCenter) for a free cell whose center is not positive;
    /// [`ErrorKind::PivotBreakdown`](crate::ErrorKind::PivotBreakdown) for a weak pivot under [`WeakPivot::Reject`].
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(8, 8)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert!(Sip::new(&op, SipSettings { alpha: 1.0, ..Default::default() }).is_err());
    /// assert_eq!(Sip::new(&op, SipSettings::default())?.replaced_pivots(), 0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new<S: Stencil5<T> + ?Sized>(op: &S, settings: SipSettings) -> Result<Sip<T>, Error> {
        if !(0.0..1.0).contains(&settings.alpha) {
            return Err(Error::setting("alpha", settings.alpha, "0 <= alpha < 1"));
        }
        if !(0.0..1.0).contains(&settings.pivot_floor) {
            return Err(Error::setting(
                "pivot_floor",
                settings.pivot_floor,
                "0 <= pivot_floor < 1",
            ));
        }
        super::check_centers(op)?;
        let grid = op.grid();
        let (nx, n) = (grid.nx(), grid.cells());
        let alpha: T = lit(settings.alpha);
        let floor: T = lit(settings.pivot_floor);
        let reject = settings.weak_pivot == WeakPivot::Reject;
        let zeros = || vec![T::zero(); n];
        let (mut b, mut c, mut inv_d, mut e, mut f) = (zeros(), zeros(), zeros(), zeros(), zeros());
        let mut replaced = 0;
        let mut failure = None;
        // A denominator `1 + α·u` or pivot that is not safely positive.
        let mut weak = |k: usize, value: T, scale: T, fallback: T, replaced: &mut usize| -> T {
            if value.is_finite() && is_positive(value - floor * scale) {
                return value;
            }
            if reject && failure.is_none() {
                failure = Some((k, to_f64(value)));
            }
            *replaced += 1;
            fallback
        };
        for_each_eliminated(op, |k, a| {
            let (i, j) = (k % nx, k / nx);
            let (e_s, f_s) = if j > 0 {
                (e[k - nx], f[k - nx])
            } else {
                (T::zero(), T::zero())
            };
            let (e_w, f_w) = if i > 0 {
                (e[k - 1], f[k - 1])
            } else {
                (T::zero(), T::zero())
            };
            let one = T::one();
            let bk = a.south / weak(k, one + alpha * e_s, one, one, &mut replaced);
            let ck = a.west / weak(k, one + alpha * f_w, one, one, &mut replaced);
            let dk = a.center + alpha * (bk * e_s + ck * f_w) - bk * f_s - ck * e_w;
            let dk = weak(k, dk, a.center, a.center, &mut replaced);
            b[k] = bk;
            c[k] = ck;
            inv_d[k] = one / dk;
            e[k] = (a.east - alpha * bk * e_s) / dk;
            f[k] = (a.north - alpha * ck * f_w) / dk;
        });
        if let Some((cell, value)) = failure {
            return Err(Error::pivot(Location::on(grid, cell), value));
        }
        Ok(Sip {
            grid,
            settings,
            south: b,
            west: c,
            inv_diag: inv_d,
            east: e,
            north: f,
            scratch: zeros(),
            replaced,
            options: SolveOptions::default(),
            name: NameCache::default(),
        })
    }

    /// The same solver with `options` for the standalone iteration.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(8, 8)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let sip = Sip::new(&op, SipSettings::default())?.with_options(SolveOptions::default().max_iterations(50));
    /// assert_eq!(sip.options.tolerances.max_iterations, Some(50));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn with_options(mut self, options: SolveOptions) -> Sip<T> {
        self.options = options;
        self
    }

    /// The settings the factor was built with.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 4)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(Sip::new(&op, SipSettings::default())?.settings().alpha, 0.92);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn settings(&self) -> SipSettings {
        self.settings
    }

    /// How many weak pivots or compensation denominators were replaced
    /// ([`WeakPivot::UseCenter`]).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 4)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(Sip::new(&op, SipSettings::default())?.replaced_pivots(), 0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn replaced_pivots(&self) -> usize {
        self.replaced
    }

    /// Bytes of storage held (factor and scratch).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(10, 10)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(Sip::new(&op, SipSettings::default())?.storage_bytes(), 6 * 100 * 8);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn storage_bytes(&self) -> usize {
        6 * self.grid.cells() * std::mem::size_of::<T>()
    }

    /// `z = (LU)⁻¹ r`: Stone's correction, unsymmetrised.
    fn solve_lu(&self, r: &[T], z: &mut [T]) {
        let (nx, ny) = (self.grid.nx(), self.grid.ny());
        let (b, c, d, e, f) = (
            &self.south,
            &self.west,
            &self.inv_diag,
            &self.east,
            &self.north,
        );
        for j in 0..ny {
            for i in 0..nx {
                let k = i + nx * j;
                let mut acc = r[k];
                if j > 0 {
                    acc = acc - b[k] * z[k - nx];
                }
                if i > 0 {
                    acc = acc - c[k] * z[k - 1];
                }
                z[k] = acc * d[k];
            }
        }
        for j in (0..ny).rev() {
            for i in (0..nx).rev() {
                let k = i + nx * j;
                let mut acc = z[k];
                if i + 1 < nx {
                    acc = acc - e[k] * z[k + 1];
                }
                if j + 1 < ny {
                    acc = acc - f[k] * z[k + nx];
                }
                z[k] = acc;
            }
        }
    }

    /// `z = (LU)⁻ᵀ r = L⁻ᵀ·U⁻ᵀ·r`.
    fn solve_lu_transposed(&self, r: &[T], z: &mut [T]) {
        let (nx, ny) = (self.grid.nx(), self.grid.ny());
        let (b, c, d, e, f) = (
            &self.south,
            &self.west,
            &self.inv_diag,
            &self.east,
            &self.north,
        );
        for j in 0..ny {
            for i in 0..nx {
                let k = i + nx * j;
                let mut acc = r[k];
                if i > 0 {
                    acc = acc - e[k - 1] * z[k - 1];
                }
                if j > 0 {
                    acc = acc - f[k - nx] * z[k - nx];
                }
                z[k] = acc;
            }
        }
        for j in (0..ny).rev() {
            for i in (0..nx).rev() {
                let k = i + nx * j;
                let mut acc = z[k];
                if i + 1 < nx {
                    acc = acc - c[k + 1] * z[k + 1];
                }
                if j + 1 < ny {
                    acc = acc - b[k + nx] * z[k + nx];
                }
                z[k] = acc * d[k];
            }
        }
    }

    fn lengths_ok(&self, r: &[T], z: &[T]) -> bool {
        let n = self.grid.cells();
        r.len() >= n && z.len() >= n
    }
}

impl<T: Scalar> Preconditioner<T> for Sip<T> {
    /// `z = ½·((LU)⁻¹ + (LU)⁻ᵀ)·r`, or `z = (LU)⁻¹·r` with
    /// [`SipSettings::symmetrised`] off. Serial sweeps (recursions); `space` is not used.
    fn apply(&mut self, _op: &dyn LinearOperator<T>, _space: &dyn Space, r: &[T], z: &mut [T]) {
        if !self.lengths_ok(r, z) {
            return;
        }
        if !self.settings.symmetrised {
            self.solve_lu(r, z);
            return;
        }
        let mut scratch = std::mem::take(&mut self.scratch);
        self.solve_lu(r, z);
        self.solve_lu_transposed(r, &mut scratch);
        let half: T = lit(0.5);
        for (zi, &si) in z.iter_mut().zip(&scratch) {
            *zi = half * (*zi + si);
        }
        self.scratch = scratch;
    }
    fn check(&self, op: &dyn LinearOperator<T>) -> Result<(), Error> {
        check_built_for(self.grid, op)
    }
    fn name(&self) -> &'static str {
        if self.settings.symmetrised {
            "symmetrised SIP"
        } else {
            "SIP"
        }
    }
}

impl<T: Scalar> IterativeSolver<T> for Sip<T> {
    /// Stone's iteration `x ← x + (LU)⁻¹·(b − A·x)`. `op` must be the operator the factor was
    /// built from.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::GridMismatch`](crate::ErrorKind::GridMismatch) if `op` lives on another
    /// grid; otherwise as for every [`IterativeSolver`].
    fn solve_observed(
        &mut self,
        op: &dyn LinearOperator<T>,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        check_built_for(self.grid, op)?;
        let alpha = self.settings.alpha;
        let name = self.name.get("", || format!("SIP (alpha = {alpha})"));
        let options = self.options.clone();
        let this = &*self;
        let task = Task {
            op,
            rhs,
            x,
            ws,
            options: &options,
            observer,
        };
        correction_solve(
            task,
            &name,
            false,
            Requires::PositiveCenters,
            |_, _, r, z| this.solve_lu(r, z),
        )
    }

    fn options(&self) -> &SolveOptions {
        &self.options
    }

    fn options_mut(&mut self) -> &mut SolveOptions {
        &mut self.options
    }
}

#[cfg(test)]
mod tests {
    use super::{Sip, SipSettings};
    use crate::space::Serial;
    use crate::{Banded5, Coeffs5, Grid, Preconditioner};

    /// The plain application solves with Stone's factor itself: multiplying `z = (LU)⁻¹·r`
    /// back by the stored `L` and `U` gives `r` to rounding (a triangular solve is backward
    /// stable: the residual is a few `ε·‖L‖·‖U‖·‖z‖` — common practice).
    #[test]
    fn plain_application_inverts_the_stored_factor() {
        let grid = Grid::new(9, 7).unwrap();
        let (nx, n) = (grid.nx(), grid.cells());
        // A non-symmetric, diagonally dominant stencil (upwind-like, flow towards north-east).
        let op = Banded5::from_fn(grid, |i, j| {
            let k = (i * 31 + j * 17) % 11;
            let mut c = Coeffs5::default();
            let mut sum = 0.0;
            for (exists, value, slot) in [
                (i > 0, -1.5 - 0.1 * k as f64, &mut c.west),
                (i + 1 < nx, -0.5, &mut c.east),
                (j > 0, -1.2, &mut c.south),
                (j + 1 < 7, -0.3 - 0.05 * k as f64, &mut c.north),
            ] {
                if exists {
                    *slot = value;
                    sum -= value;
                }
            }
            c.center = sum + 0.2;
            c
        })
        .unwrap();
        let settings = SipSettings {
            symmetrised: false,
            ..SipSettings::default()
        };
        let mut sip = Sip::new(&op, settings).unwrap();
        let r: Vec<f64> = (0..n)
            .map(|k| ((k * 7919) % 101) as f64 / 101.0 - 0.4)
            .collect();
        let mut z = vec![0.0; n];
        sip.apply(&op, &Serial, &r, &mut z);
        // y = U·z (unit upper), then L·y (diagonal 1/inv_diag, west c, south b).
        let y: Vec<f64> = (0..n)
            .map(|k| {
                let mut v = z[k];
                if k % nx + 1 < nx {
                    v += sip.east[k] * z[k + 1];
                }
                if k + nx < n {
                    v += sip.north[k] * z[k + nx];
                }
                v
            })
            .collect();
        let mut worst: f64 = 0.0;
        let scale = r.iter().fold(0.0f64, |m, v| m.max(v.abs())); // local: test
        for k in 0..n {
            let mut v = y[k] / sip.inv_diag[k];
            if k % nx > 0 {
                v += sip.west[k] * y[k - 1];
            }
            if k >= nx {
                v += sip.south[k] * y[k - nx];
            }
            worst = worst.max((v - r[k]).abs());
        }
        assert!(
            worst <= 100.0 * f64::EPSILON * scale,
            "L·U·z − r = {worst:e}"
        );
        assert_eq!(Preconditioner::<f64>::name(&sip), "SIP");
    }
}

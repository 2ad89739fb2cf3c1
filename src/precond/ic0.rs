//! Zero-fill incomplete Cholesky factorisations of the 5-point operator: IC(0)
//! (Meijerink & van der Vorst 1977) and the modified, row-sum compensated MIC(0)
//! (Gustafsson 1978).

use super::factor::LowerFactor;
use super::{check_built_for, Preconditioner};
use crate::error::Location;
use crate::operator::Stencil5;
use crate::scalar::{is_positive, lit, to_f64};
use crate::space::Space;
use crate::{Error, LinearOperator, Scalar};

/// What a factorisation does with a pivot that is not safely positive.
///
/// A pivot `d_k` counts as weak when `d_k ≤ pivot_floor · a_k` (`a_k` the cell's center), and
/// always when it is zero, negative or not finite.
///
/// ```
/// assert_eq!(quintet::WeakPivot::default(), quintet::WeakPivot::UseCenter);
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
#[non_exhaustive]
pub enum WeakPivot {
    /// Replace the pivot by the cell's own center coefficient `a_k` and go on; the number of
    /// replacements is reported by the preconditioner. The factored form stays symmetric
    /// positive definite (any positive pivots give an SPD `M`), so PCG remains valid; only the
    /// quality of the preconditioner suffers near the replaced cells.
    #[default]
    UseCenter,
    /// Stop the setup with [`ErrorKind::PivotBreakdown`](crate::ErrorKind::PivotBreakdown) naming the cell.
    Reject,
}

/// Settings of an incomplete Cholesky factorisation.
///
/// ```
/// use quintet::FactorSettings;
/// let mic = FactorSettings { compensation: 0.95, ..FactorSettings::mic0() };
/// assert_eq!(FactorSettings::default().compensation, 0.0); // IC(0)
/// assert_eq!(mic.compensation, 0.95);
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FactorSettings {
    /// Share `α ∈ [0, 1]` of the dropped fill-in moved onto the diagonal: 0 is IC(0), 1 is
    /// Gustafsson's MIC(0) (row sums of `M` equal those of `A`); values in between are the
    /// relaxed variant. Default 0.
    pub compensation: f64,
    /// Relative threshold below which a pivot counts as weak (see [`WeakPivot`]). Must be in
    /// `[0, 1)`. Default `1e-8`.
    pub pivot_floor: f64,
    /// What to do with a weak pivot. Default [`WeakPivot::UseCenter`].
    pub weak_pivot: WeakPivot,
}

impl Default for FactorSettings {
    fn default() -> FactorSettings {
        FactorSettings::ic0()
    }
}

impl FactorSettings {
    /// IC(0): no compensation.
    ///
    /// ```
    /// assert_eq!(quintet::FactorSettings::ic0().compensation, 0.0);
    /// ```
    pub fn ic0() -> FactorSettings {
        FactorSettings {
            compensation: 0.0,
            pivot_floor: 1e-8,
            weak_pivot: WeakPivot::UseCenter,
        }
    }

    /// MIC(0) with `α = 1`: Gustafsson's full row-sum compensation, with the weak-pivot
    /// safeguard as the stabiliser. Relaxed values (`α` a little below 1) keep pivots further
    /// from zero on nearly singular problems (few fixed cells, no storage), but give back the
    /// `h^{-1/2}` growth on large grids: measured PCG iteration-growth exponents on the
    /// Dirichlet Poisson problem, n = 64 … 1024, are 0.60 for `α = 1`, 0.77 for `α = 0.99` and
    /// 0.86 for `α = 0.95` (IC(0): 0.9).
    ///
    /// ```
    /// assert_eq!(quintet::FactorSettings::mic0().compensation, 1.0);
    /// ```
    pub fn mic0() -> FactorSettings {
        FactorSettings {
            compensation: 1.0,
            ..FactorSettings::ic0()
        }
    }
}

/// Zero-fill incomplete Cholesky preconditioning, IC(0) or MIC(0).
///
/// `M = (D + L)·D⁻¹·(D + Lᵀ)`, with `L` the west and south couplings of the eliminated
/// operator and the pivots `D` chosen so that `M` matches `A` on its diagonal (IC(0),
/// Meijerink & van der Vorst 1977):
///
/// ```text
/// d_k = a_k − w_k²/d_{k−1} − s_k²/d_{k−nx}
///           − α·( w_k·s_{k−1+nx}/d_{k−1} + s_k·w_{k−nx+1}/d_{k−nx} )
/// ```
///
/// where the last line is the fill-in that the zero-fill pattern drops, moved onto the diagonal
/// with weight `α` (MIC(0), Gustafsson 1978: with `α = 1` the row sums of `M` and `A` agree).
/// On the Dirichlet model problem the PCG iteration count grows like `h⁻¹` with IC(0) and like
/// `h^{-1/2}` with MIC(0). On a grid one cell wide the pattern has no fill-in, so IC(0) is the
/// exact Cholesky factor. The upper couplings are taken as the transpose of the lower ones
/// (the operator itself when it is symmetric).
///
/// **Weak pivots.** For an M-matrix every pivot of IC(0) is positive (Meijerink & van der
/// Vorst 1977); for MIC(0) the same holds for diagonally dominant M-matrices that are strictly
/// dominant somewhere in every connected region — a fixed cell or a storage term — (Gustafsson
/// 1978, from memory), though with `α = 1` pivots far from any such row can become small.
/// Elsewhere a pivot can fall to or below zero; [`FactorSettings::weak_pivot`] decides between a documented
/// replacement (the default: the cell's center, counted in
/// [`replaced_pivots`](IncompleteCholesky::replaced_pivots)) and an error. No NaN ever reaches
/// the factor. Storage: three arrays of one entry per cell.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(128, 128)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let rhs = vec![1.0; grid.cells()];
/// let (mut x_ic, mut x_mic) = (vec![0.0; grid.cells()], vec![0.0; grid.cells()]);
/// let ic = Pcg::new(IncompleteCholesky::ic0(&op)?).solve(&op, &rhs, &mut x_ic)?;
/// let mic = Pcg::new(IncompleteCholesky::mic0(&op)?).solve(&op, &rhs, &mut x_mic)?;
/// assert_eq!(mic.method, "PCG + MIC(0)");
/// assert!(mic.iterations < ic.iterations);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct IncompleteCholesky<T> {
    factor: LowerFactor<T>,
    settings: FactorSettings,
    replaced: usize,
}

impl<T: Scalar> IncompleteCholesky<T> {
    /// IC(0) of `op` with the default settings.
    ///
    /// # Errors
    ///
    /// As for [`IncompleteCholesky::new`].
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(16, 16)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(IncompleteCholesky::ic0(&op)?.replaced_pivots(), 0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn ic0<S: Stencil5<T> + ?Sized>(op: &S) -> Result<IncompleteCholesky<T>, Error> {
        IncompleteCholesky::new(op, FactorSettings::ic0())
    }

    /// MIC(0) of `op` with [`FactorSettings::mic0`].
    ///
    /// # Errors
    ///
    /// As for [`IncompleteCholesky::new`].
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(16, 16)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(IncompleteCholesky::mic0(&op)?.settings().compensation, 1.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn mic0<S: Stencil5<T> + ?Sized>(op: &S) -> Result<IncompleteCholesky<T>, Error> {
        IncompleteCholesky::new(op, FactorSettings::mic0())
    }

    /// Factor `op`'s eliminated coefficients with `settings`.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for a compensation outside `[0, 1]` or a pivot floor outside
    /// `[0, 1)`; [`ErrorKind::NonPositiveCenter`](crate::ErrorKind::NonPositiveCenter) for a free cell whose center is not positive;
    /// [`ErrorKind::PivotBreakdown`](crate::ErrorKind::PivotBreakdown) for a weak pivot under [`WeakPivot::Reject`].
    ///
    /// ```
    /// use quintet::prelude::*;
    /// // An indefinite 2-cell system: center 1, coupling −2. The second pivot is 1 − 4 < 0.
    /// let grid = Grid::new(2, 1)?;
    /// let op = Banded5::new(grid, vec![1.0, 1.0], vec![0.0, -2.0], vec![-2.0, 0.0], vec![0.0; 2], vec![0.0; 2])?;
    /// let strict = FactorSettings { weak_pivot: WeakPivot::Reject, ..FactorSettings::ic0() };
    /// let err = IncompleteCholesky::new(&op, strict).unwrap_err();
    /// assert_eq!((err.kind(), err.location().map(|at| at.cell)), (ErrorKind::PivotBreakdown, Some(1)));
    /// assert_eq!(IncompleteCholesky::new(&op, FactorSettings::ic0())?.replaced_pivots(), 1);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new<S: Stencil5<T> + ?Sized>(
        op: &S,
        settings: FactorSettings,
    ) -> Result<IncompleteCholesky<T>, Error> {
        let alpha = settings.compensation;
        if !(0.0..=1.0).contains(&alpha) {
            return Err(Error::setting(
                "compensation",
                alpha,
                "0 <= compensation <= 1",
            ));
        }
        let floor = settings.pivot_floor;
        if !(0.0..1.0).contains(&floor) {
            return Err(Error::setting("pivot_floor", floor, "0 <= pivot_floor < 1"));
        }
        super::check_centers(op)?;
        let mut factor = LowerFactor::lower_part(op);
        let grid = op.grid();
        let (nx, ny) = (grid.nx(), grid.ny());
        let fixed = op.fixed();
        let (alpha, floor): (T, T) = (lit(alpha), lit(floor));
        let mut replaced = 0;
        for j in 0..ny {
            for i in 0..nx {
                let k = i + nx * j;
                let center = if fixed.is_some_and(|f| f.contains(k)) {
                    T::one()
                } else {
                    op.coeffs(i, j).center
                };
                let (w, s) = (factor.west[k], factor.south[k]);
                let mut d = center;
                if i > 0 {
                    let inv = factor.inv_pivot[k - 1];
                    d = d - w * w * inv;
                    if j + 1 < ny {
                        d = d - alpha * w * factor.south[k - 1 + nx] * inv;
                    }
                }
                if j > 0 {
                    let inv = factor.inv_pivot[k - nx];
                    d = d - s * s * inv;
                    if i + 1 < nx {
                        d = d - alpha * s * factor.west[k - nx + 1] * inv;
                    }
                }
                if !(d.is_finite() && is_positive(d - floor * center)) {
                    if settings.weak_pivot == WeakPivot::Reject {
                        return Err(Error::pivot(Location::on(grid, k), to_f64(d)));
                    }
                    replaced += 1;
                    d = center;
                }
                factor.inv_pivot[k] = T::one() / d;
            }
        }
        Ok(IncompleteCholesky {
            factor: factor.finish(),
            settings,
            replaced,
        })
    }

    /// The settings the factor was built with.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 4)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(IncompleteCholesky::ic0(&op)?.settings(), FactorSettings::ic0());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn settings(&self) -> FactorSettings {
        self.settings
    }

    /// How many weak pivots were replaced by the cell's center ([`WeakPivot::UseCenter`]).
    /// Zero for the M-matrices of diffusion problems.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(32, 32)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(IncompleteCholesky::mic0(&op)?.replaced_pivots(), 0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn replaced_pivots(&self) -> usize {
        self.replaced
    }

    /// Bytes of storage held by the factor.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(10, 10)?;
    /// let op: Banded5<f32> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j).cast())?;
    /// assert_eq!(IncompleteCholesky::ic0(&op)?.storage_bytes(), 3 * 100 * 4);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn storage_bytes(&self) -> usize {
        self.factor.bytes()
    }
}

impl<T: Scalar> Preconditioner<T> for IncompleteCholesky<T> {
    fn apply(&mut self, _op: &dyn LinearOperator<T>, _space: &dyn Space, r: &[T], z: &mut [T]) {
        self.factor.solve(r, z);
    }
    fn check(&self, op: &dyn LinearOperator<T>) -> Result<(), Error> {
        check_built_for(self.factor.grid, op)
    }
    fn name(&self) -> &'static str {
        if self.settings.compensation == 0.0 {
            "IC(0)"
        } else {
            "MIC(0)"
        }
    }
}

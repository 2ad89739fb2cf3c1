//! Zero-fill incomplete LU factorisation ILU(0) of a (possibly non-symmetric) 5-point operator:
//! the non-symmetric sibling of IC(0), for the non-symmetric Krylov drivers.

use super::factor::for_each_eliminated;
use super::{check_built_for, Preconditioner};
use crate::error::Location;
use crate::operator::Stencil5;
use crate::scalar::{is_positive, lit, to_f64};
use crate::space::Space;
use crate::{Error, Grid, LinearOperator, Scalar};

/// Relative threshold below which an ILU(0) pivot is refused: `d_k ≤ PIVOT_FLOOR · a_k`.
const PIVOT_FLOOR: f64 = 1e-8;

/// Zero-fill incomplete LU preconditioning, ILU(0), for non-symmetric 5-point operators such
/// as upwinded advection–diffusion.
///
/// `M = L·U ≈ A`, with `L` unit lower triangular (west and south entries) and `U` upper
/// triangular (diagonal, east and north entries), both on the operator's own 5-point pattern,
/// and `L·U = A` at every position of that pattern (the defining property of ILU(0): Saad,
/// *Iterative Methods for Sparse Linear Systems*, 2003, §10.3.2). For the 5-point stencil in
/// the natural cell order, with `P, W, E, S, N` the eliminated coefficients of cell `k`:
///
/// ```text
/// l_k = W_k / d_{k−1}        m_k = S_k / d_{k−nx}
/// d_k = P_k − l_k·E_{k−1} − m_k·N_{k−nx}
/// U[k, k+1] = E_k            U[k, k+nx] = N_k
/// ```
///
/// The upper couplings are the operator's own (no earlier row reaches positions `k+1` and
/// `k+nx`), and the two dropped fill-in entries of each row, `m_k·E_{k−nx}` at `k−nx+1` and
/// `l_k·N_{k−1}` at `k−1+nx`, lie outside the pattern. On a symmetric operator the pivots are
/// those of IC(0) and `M = L·D·Lᵀ` is the IC(0) factor (Meijerink & van der Vorst 1977); on a
/// grid one cell high or wide (a tridiagonal matrix) nothing is dropped and `M = A`.
///
/// **Storage**: five arrays of one entry per cell, the operator's pattern — the inverse pivot
/// `1/d_k`, the two scaled lower couplings `l_k`, `m_k` and the two upper couplings `E_k`,
/// `N_k` — and no scratch. Fixed cells are identity rows (pivot 1, no couplings), as in every
/// preconditioner built from [`Stencil5::eliminated_coeffs`].
///
/// **Pivots.** For an M-matrix (centers positive, couplings ≤ 0, diagonally dominant — upwind
/// advection–diffusion is one) every ILU(0) pivot is positive (Meijerink & van der Vorst 1977).
/// Elsewhere — central differences at cell Péclet numbers above 2, say — a pivot can come out
/// zero, negative or tiny; a pivot `d_k ≤ 10⁻⁸·a_k` or not finite is refused with
/// [`ErrorKind::PivotBreakdown`](crate::ErrorKind::PivotBreakdown) naming the cell, rather than
/// replaced.
///
/// **Applying** `z = U⁻¹·L⁻¹·r` is one forward and one backward triangular sweep, in place in
/// `z`, allocating nothing. The sweeps are recursions, so they run serially whatever the
/// [`Space`] allows (like IC(0) and SIP). `M` is not symmetric, so ILU(0) is not meant for
/// [`Pcg`](crate::Pcg) on non-symmetric systems; on a symmetric M-matrix it is IC(0) and PCG
/// accepts it.
///
/// # Example
///
/// An upwinded advection–diffusion row (diffusion 1, flow towards east with cell Péclet
/// number 2) on one row of cells is tridiagonal, so ILU(0) solves it exactly:
///
/// ```
/// use quintet::prelude::*;
/// use quintet::space::Serial;
///
/// let grid = Grid::new(5, 1)?;
/// let op = Banded5::from_fn(grid, |i, _| Coeffs5 {
///     center: 4.0,
///     west: if i > 0 { -3.0 } else { 0.0 },
///     east: if i + 1 < 5 { -1.0 } else { 0.0 },
///     ..Coeffs5::default()
/// })?;
/// let mut ilu = Ilu0::new(&op)?;
/// let x = [1.0f64, 2.0, 3.0, 4.0, 5.0];
/// let mut r = [0.0; 5];
/// op.apply(&x, &mut r)?;
/// let mut z = [0.0; 5];
/// ilu.apply(&op, &Serial, &r, &mut z);
/// assert!(z.iter().zip(&x).all(|(a, b)| (a - b).abs() < 1e-12));
/// assert_eq!(Preconditioner::<f64>::name(&ilu), "ILU(0)");
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Ilu0<T> {
    grid: Grid,
    /// `1 / d_k`.
    inv_pivot: Vec<T>,
    /// `L[k, k−1] = W_k / d_{k−1}`.
    west: Vec<T>,
    /// `L[k, k−nx] = S_k / d_{k−nx}`.
    south: Vec<T>,
    /// `U[k, k+1] = E_k`.
    east: Vec<T>,
    /// `U[k, k+nx] = N_k`.
    north: Vec<T>,
}

impl<T: Scalar> Ilu0<T> {
    /// Factor `op`'s eliminated coefficients.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::NonPositiveCenter`](crate::ErrorKind::NonPositiveCenter) for a free cell
    /// whose center is not positive; [`ErrorKind::PivotBreakdown`](crate::ErrorKind::PivotBreakdown)
    /// naming the first cell whose pivot `d_k` is not finite or not above `10⁻⁸·a_k`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// // Centers 1, couplings −1 both ways: the second pivot is 1 − 1·1 = 0.
    /// let grid = Grid::new(2, 1)?;
    /// let op = Banded5::new(grid, vec![1.0, 1.0], vec![0.0, -1.0], vec![-1.0, 0.0], vec![0.0; 2], vec![0.0; 2])?;
    /// let err = Ilu0::new(&op).unwrap_err();
    /// assert_eq!(err.kind(), ErrorKind::PivotBreakdown);
    /// assert_eq!(err.location().map(|at| at.cell), Some(1));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new<S: Stencil5<T> + ?Sized>(op: &S) -> Result<Ilu0<T>, Error> {
        super::check_centers(op)?;
        let grid = op.grid();
        let (nx, n) = (grid.nx(), grid.cells());
        let zeros = || vec![T::zero(); n];
        let mut f = Ilu0 {
            grid,
            inv_pivot: zeros(),
            west: zeros(),
            south: zeros(),
            east: zeros(),
            north: zeros(),
        };
        let floor: T = lit(PIVOT_FLOOR);
        let mut failure = None;
        for_each_eliminated(op, |k, a| {
            if failure.is_some() {
                return;
            }
            let (i, j) = (k % nx, k / nx);
            let mut d = a.center;
            if i > 0 {
                let l = a.west * f.inv_pivot[k - 1];
                f.west[k] = l;
                d = d - l * f.east[k - 1];
            }
            if j > 0 {
                let m = a.south * f.inv_pivot[k - nx];
                f.south[k] = m;
                d = d - m * f.north[k - nx];
            }
            if !(d.is_finite() && is_positive(d - floor * a.center)) {
                failure = Some((k, to_f64(d)));
                return;
            }
            f.inv_pivot[k] = T::one() / d;
            f.east[k] = a.east;
            f.north[k] = a.north;
        });
        match failure {
            Some((k, value)) => Err(Error::pivot(Location::on(grid, k), value)),
            None => Ok(f),
        }
    }

    /// Bytes of storage held by the factor: five arrays of one entry per cell.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(10, 10)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(Ilu0::new(&op)?.storage_bytes(), 5 * 100 * 8);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn storage_bytes(&self) -> usize {
        5 * self.grid.cells() * std::mem::size_of::<T>()
    }

    /// `z = U⁻¹·L⁻¹·r`: forward sweep `L·y = r`, backward sweep `U·z = y`, in place in `z`.
    fn solve(&self, r: &[T], z: &mut [T]) {
        let (nx, ny, n) = (self.grid.nx(), self.grid.ny(), self.grid.cells());
        if r.len() < n || z.len() < n {
            return;
        }
        let (r, z) = (&r[..n], &mut z[..n]);
        let (l, m, d) = (&self.west[..n], &self.south[..n], &self.inv_pivot[..n]);
        let (e, nn) = (&self.east[..n], &self.north[..n]);
        for j in 0..ny {
            let (before, rest) = z.split_at_mut(j * nx);
            let cur = &mut rest[..nx];
            let row = j * nx..(j + 1) * nx;
            let (rr, lr, mr) = (&r[row.clone()], &l[row.clone()], &m[row]);
            let mut left = T::zero();
            if j == 0 {
                for i in 0..nx {
                    let y = rr[i] - lr[i] * left;
                    cur[i] = y;
                    left = y;
                }
            } else {
                let below = &before[(j - 1) * nx..];
                for i in 0..nx {
                    let y = (rr[i] - mr[i] * below[i]) - lr[i] * left;
                    cur[i] = y;
                    left = y;
                }
            }
        }
        for j in (0..ny).rev() {
            let start = j * nx;
            let (upto, after) = z.split_at_mut(start + nx);
            let cur = &mut upto[start..];
            let row = start..start + nx;
            let (dr, er, nr) = (&d[row.clone()], &e[row.clone()], &nn[row]);
            let mut right = T::zero();
            if j + 1 == ny {
                for i in (0..nx).rev() {
                    let v = (cur[i] - er[i] * right) * dr[i];
                    cur[i] = v;
                    right = v;
                }
            } else {
                let above = &after[..nx];
                for i in (0..nx).rev() {
                    let v = ((cur[i] - nr[i] * above[i]) - er[i] * right) * dr[i];
                    cur[i] = v;
                    right = v;
                }
            }
        }
    }
}

impl<T: Scalar> Preconditioner<T> for Ilu0<T> {
    /// `z = (L·U)⁻¹·r`, two serial triangular sweeps (`space` is not used: the sweeps are
    /// recursions).
    fn apply(&mut self, _op: &dyn LinearOperator<T>, _space: &dyn Space, r: &[T], z: &mut [T]) {
        self.solve(r, z);
    }
    fn check(&self, op: &dyn LinearOperator<T>) -> Result<(), Error> {
        check_built_for(self.grid, op)
    }
    fn name(&self) -> &'static str {
        "ILU(0)"
    }
}

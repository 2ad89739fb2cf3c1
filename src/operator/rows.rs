//! One row of a 5-point operator: the coefficient record [`Coeffs5`] and the row product every
//! operator shares.

use crate::scalar::{to_f64, Scalar};
use crate::{Grid, Side};

/// The five coefficients of one row of a 5-point operator.
///
/// # Example
///
/// ```
/// use quintet::{Coeffs5, Grid};
///
/// let grid = Grid::new(3, 3)?;
/// let corner = Coeffs5::<f64>::laplacian(grid, 0, 0);
/// assert_eq!(corner.center, 4.0);
/// assert_eq!(corner.west, 0.0); // no west neighbour at i = 0
/// assert_eq!(corner.east, -1.0);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Default)]
pub struct Coeffs5<T> {
    /// Diagonal coefficient of the cell itself.
    pub center: T,
    /// Coupling to the cell at `i − 1`.
    pub west: T,
    /// Coupling to the cell at `i + 1`.
    pub east: T,
    /// Coupling to the cell at `j − 1`.
    pub south: T,
    /// Coupling to the cell at `j + 1`.
    pub north: T,
}

impl<T: Scalar> Coeffs5<T> {
    /// The row of the identity: center one, no couplings.
    ///
    /// ```
    /// let c = quintet::Coeffs5::<f32>::identity();
    /// assert_eq!((c.center, c.east), (1.0, 0.0));
    /// ```
    pub fn identity() -> Coeffs5<T> {
        Coeffs5 {
            center: T::one(),
            west: T::zero(),
            east: T::zero(),
            south: T::zero(),
            north: T::zero(),
        }
    }

    /// The same row in another scalar type (NaN where a value does not fit).
    ///
    /// ```
    /// use quintet::{Coeffs5, Grid};
    /// let grid = Grid::new(3, 3)?;
    /// let single: Coeffs5<f32> = Coeffs5::laplacian(grid, 1, 1).cast();
    /// assert_eq!(single.center, 4.0f32);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn cast<U: Scalar>(self) -> Coeffs5<U> {
        let c = |v: T| U::from(v).unwrap_or_else(U::nan);
        Coeffs5 {
            center: c(self.center),
            west: c(self.west),
            east: c(self.east),
            south: c(self.south),
            north: c(self.north),
        }
    }

    /// The coupling towards `side`.
    ///
    /// ```
    /// use quintet::{Coeffs5, Side};
    /// let c = Coeffs5 { center: 2.0, west: -1.0, east: -0.5, south: 0.0, north: 0.0 };
    /// assert_eq!(c.towards(Side::East), -0.5);
    /// ```
    pub fn towards(&self, side: Side) -> T {
        match side {
            Side::West => self.west,
            Side::East => self.east,
            Side::South => self.south,
            Side::North => self.north,
        }
    }

    /// Mutable access to the coupling towards `side`.
    ///
    /// ```
    /// use quintet::{Coeffs5, Side};
    /// let mut c = Coeffs5::<f64>::identity();
    /// *c.towards_mut(Side::North) = -3.0;
    /// assert_eq!(c.north, -3.0);
    /// ```
    pub fn towards_mut(&mut self, side: Side) -> &mut T {
        match side {
            Side::West => &mut self.west,
            Side::East => &mut self.east,
            Side::South => &mut self.south,
            Side::North => &mut self.north,
        }
    }
}

impl Coeffs5<f64> {
    /// Row `(i, j)` of the standard 5-point Laplacian `4φ_k − Σ φ_nb` (unit spacing) with zero
    /// (Dirichlet) values just outside the grid: couplings that would point off the grid are
    /// left out. The model problem of the iterative-methods literature.
    ///
    /// An `f64` row, so that a closure building on it needs no type annotation (`c.center +=
    /// k[i]` works as written); for `f32` write `Coeffs5::laplacian(grid, i, j).cast()`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(5, 5)?;
    /// let c = Coeffs5::laplacian(grid, 2, 2);
    /// assert_eq!((c.center, c.west, c.north), (4.0, -1.0, -1.0));
    /// // Inside a closure, with the row changed before it is returned:
    /// let k = vec![0.5; grid.cells()];
    /// let op = ClosureStencil::new(grid, move |i, j| {
    ///     let mut c = Coeffs5::laplacian(grid, i, j);
    ///     c.center = c.center.max(4.0 + k[i + 5 * j]);
    ///     c
    /// })?;
    /// assert_eq!(op.coeffs(2, 2).center, 4.5);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn laplacian(grid: Grid, i: usize, j: usize) -> Coeffs5<f64> {
        let edge = |present: bool| if present { -1.0 } else { 0.0 };
        Coeffs5 {
            center: 4.0,
            west: edge(i > 0),
            east: edge(i + 1 < grid.nx()),
            south: edge(j > 0),
            north: edge(j + 1 < grid.ny()),
        }
    }
}

/// The south row, the row itself and the north row of grid row `j` of `x`, which holds the
/// grid's rows from `first` on (`None` at grid edges).
#[inline]
pub(crate) fn row_neighbourhood<T>(
    x: &[T],
    first: usize,
    nx: usize,
    ny: usize,
    j: usize,
) -> (Option<&[T]>, &[T], Option<&[T]>) {
    let at = (j - first) * nx;
    let row = &x[at..at + nx];
    let south = (j > 0).then(|| &x[at - nx..at]);
    let north = (j + 1 < ny).then(|| &x[at + nx..at + 2 * nx]);
    (south, row, north)
}

/// The one row product every operator shares: `y_i = Σ coeff·x` over the row, in the fixed
/// summation order center, west, east, south, north (absent neighbours skipped).
///
/// Interior cells of interior rows go through a branch-free loop over slices cut to one length,
/// so the compiler drops the bounds checks and vectorises it; the two end cells of a row and
/// the first and last rows take the general path. Both paths add in the same order.
#[inline(always)]
pub(crate) fn row_product<T: Scalar>(
    coeffs: impl Fn(usize) -> Coeffs5<T>,
    south: Option<&[T]>,
    row: &[T],
    north: Option<&[T]>,
    y: &mut [T],
) {
    let nx = row.len().min(y.len());
    let (row, y) = (&row[..nx], &mut y[..nx]);
    match (south, north) {
        (Some(xs), Some(xn)) if nx >= 3 && xs.len() >= nx && xn.len() >= nx => {
            y[0] = cell_product(&coeffs, 0, south, row, north);
            let m = nx - 2;
            let (xw, xc, xe) = (&row[..m], &row[1..m + 1], &row[2..m + 2]);
            let (xs, xn) = (&xs[1..m + 1], &xn[1..m + 1]);
            let inner = &mut y[1..m + 1];
            for i in 0..m {
                let c = coeffs(i + 1);
                inner[i] = c.center * xc[i]
                    + c.west * xw[i]
                    + c.east * xe[i]
                    + c.south * xs[i]
                    + c.north * xn[i];
            }
            y[nx - 1] = cell_product(&coeffs, nx - 1, south, row, north);
        }
        _ => {
            for (i, yi) in y.iter_mut().enumerate() {
                *yi = cell_product(&coeffs, i, south, row, north);
            }
        }
    }
}

/// `(A·x)_i` for one cell of a row, with the couplings towards missing neighbours left out:
/// the one summation order (center, west, east, south, north) every product of the crate
/// uses, so that smoothers and distributed levels that compute single cells give the bits of
/// the whole-row product.
#[inline(always)]
pub(crate) fn cell_product<T: Scalar>(
    coeffs: &impl Fn(usize) -> Coeffs5<T>,
    i: usize,
    south: Option<&[T]>,
    row: &[T],
    north: Option<&[T]>,
) -> T {
    let nx = row.len();
    let c = coeffs(i);
    let mut s = c.center * row[i];
    if i > 0 {
        s = s + c.west * row[i - 1];
    }
    if i + 1 < nx {
        s = s + c.east * row[i + 1];
    }
    if let Some(xs) = south {
        s = s + c.south * xs[i];
    }
    if let Some(xn) = north {
        s = s + c.north * xn[i];
    }
    s
}

/// A row sums to zero when `|Σ coefficients| ≤ ROW_SUM_ROUNDING·Σ|coefficients|`: a center
/// assembled as the sum of its conductances differs from it by rounding only.
const ROW_SUM_ROUNDING: f64 = 1e-12;

/// Whether the row `c` sums to zero, to rounding.
pub(crate) fn row_sums_to_zero<T: Scalar>(c: Coeffs5<T>) -> bool {
    let sum =
        to_f64(c.center) + to_f64(c.west) + to_f64(c.east) + to_f64(c.south) + to_f64(c.north);
    let size = [c.center, c.west, c.east, c.south, c.north]
        .iter()
        .map(|&v| to_f64(v).abs())
        .fold(0.0, |a, b| a + b); // local: one row
    sum.abs() <= ROW_SUM_ROUNDING * size
}

//! The 5-point operator: the [`Stencil5`] trait, its coefficient record [`Coeffs5`], and the
//! implementations [`Banded5`] (five owned arrays), [`Symmetric5`] (three arrays, for
//! symmetric operators) and [`ClosureStencil`] (coefficients computed on the fly).
//!
//! Row `k` of `A·φ = q` reads
//!
//! ```text
//! center·φ_k + west·φ_{k−1} + east·φ_{k+1} + south·φ_{k−nx} + north·φ_{k+nx} = q_k
//! ```
//!
//! For diffusion (heat conduction, Darcy flow) the center is positive and the neighbour
//! couplings are zero or negative. The finite-volume form `a_P·φ_P = Σ a_nb·φ_nb + b`, with
//! positive neighbour coefficients, maps onto this by `center = a_P`, `west = −a_W`, …, `q = b`;
//! [`Banded5::from_finite_volume`] does exactly that.

mod banded;
mod closure;
mod fixed;
mod symmetric;
mod validate;

use std::ops::Range;

pub use banded::Banded5;
pub use closure::ClosureStencil;
pub use fixed::FixedCells;
pub use symmetric::Symmetric5;
pub use validate::check_symmetry;
pub(crate) use validate::survey;

use crate::{Error, Grid, Scalar, Side};

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

    /// Row `(i, j)` of the standard 5-point Laplacian `4φ_k − Σ φ_nb` (unit spacing) with zero
    /// (Dirichlet) values just outside the grid: couplings that would point off the grid are
    /// left out. The model problem of the iterative-methods literature.
    ///
    /// ```
    /// use quintet::{Coeffs5, Grid};
    /// let grid = Grid::new(5, 5)?;
    /// let c = Coeffs5::<f64>::laplacian(grid, 2, 2);
    /// assert_eq!((c.center, c.west, c.north), (4.0, -1.0, -1.0));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn laplacian(grid: Grid, i: usize, j: usize) -> Coeffs5<T> {
        let m1 = -T::one();
        let edge = |present: bool| if present { m1 } else { T::zero() };
        Coeffs5 {
            center: T::from(4.0).unwrap_or_else(T::one),
            west: edge(i > 0),
            east: edge(i + 1 < grid.nx()),
            south: edge(j > 0),
            north: edge(j + 1 < grid.ny()),
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

/// A 5-point operator `A` on a structured grid: the matrix of `A·φ = q`, never assembled.
///
/// Two methods are required: [`grid`](Stencil5::grid) and [`coeffs`](Stencil5::coeffs). The
/// rest are provided; implementations override [`apply_rows`](Stencil5::apply_rows) (the row
/// kernel behind every matrix–vector product) when they can do it faster, and
/// [`fixed_cells`](Stencil5::fixed_cells) when they carry fixed (Dirichlet) cells.
///
/// **Fixed cells.** A cell listed by `fixed_cells` keeps the value the caller put in `x`: every
/// driver leaves it untouched and treats its residual as exactly zero. The equations of the
/// free cells still see the fixed values through their couplings, so a finite-difference code
/// that keeps its boundary nodes in the grid needs no right-hand-side surgery. The system the
/// Krylov drivers iterate on is the restriction of `A` to the free cells, which is symmetric
/// whenever the free-to-free couplings are ([`eliminated_coeffs`](Stencil5::eliminated_coeffs)
/// gives its rows).
///
/// # Example
///
/// A custom operator: the Laplacian on a grid, written out by hand.
///
/// ```
/// use quintet::prelude::*;
///
/// struct Poisson(Grid);
///
/// impl Stencil5<f64> for Poisson {
///     fn grid(&self) -> Grid {
///         self.0
///     }
///     fn coeffs(&self, i: usize, j: usize) -> Coeffs5<f64> {
///         Coeffs5::laplacian(self.0, i, j)
///     }
/// }
///
/// let op = Poisson(Grid::new(30, 30)?);
/// let rhs = vec![1.0; 900];
/// let mut x = vec![0.0; 900];
/// let report = Cg::default().solve(&op, &rhs, &mut x)?;
/// assert!(report.converged());
/// # Ok::<(), quintet::Error>(())
/// ```
pub trait Stencil5<T: Scalar>: Sync {
    /// The grid the operator lives on.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(6, 4)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j))?;
    /// assert_eq!(op.grid().cells(), 24);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn grid(&self) -> Grid;

    /// The five coefficients of cell `(i, j)`, as the caller gave them (fixed cells not
    /// eliminated). Couplings that point off the grid must be zero.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 3)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j))?;
    /// let corner = op.coeffs(0, 0);
    /// assert_eq!((corner.center, corner.west, corner.east), (4.0, 0.0, -1.0));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn coeffs(&self, i: usize, j: usize) -> Coeffs5<T>;

    /// The fixed (Dirichlet) cells, if any. Default: none.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 3)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j))?;
    /// assert!(op.fixed_cells().is_none());
    /// let op = op.with_fixed(FixedCells::new(grid, [4])?)?;
    /// assert!(op.fixed_cells().is_some_and(|f| f.contains(4)));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn fixed_cells(&self) -> Option<&FixedCells> {
        None
    }

    /// Row kernel: `y = (A·x)` restricted to the grid rows `rows`, with the coefficients as
    /// given by [`coeffs`](Stencil5::coeffs). `x` is the whole vector (`grid().cells()`
    /// entries) and `y` holds exactly the rows asked for (`rows.len() · nx` entries). Every
    /// matrix–vector product in the crate, serial or parallel, goes through this method;
    /// override it for speed, keeping the summation order
    /// `center·x_k + west·x_{k−1} + east·x_{k+1} + south·x_{k−nx} + north·x_{k+nx}` (terms
    /// towards missing neighbours left out) so results stay bit-identical across operators.
    ///
    /// # Panics
    ///
    /// May panic if the lengths above do not hold. The crate's own callers check them first;
    /// use [`apply`](Stencil5::apply) for a checked product.
    ///
    /// # Example
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 2)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let x = vec![1.0; 6];
    /// let mut top_row = vec![0.0; 3];
    /// op.apply_rows(1..2, &x, &mut top_row);
    /// assert_eq!(top_row, vec![2.0, 1.0, 2.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn apply_rows(&self, rows: Range<usize>, x: &[T], y: &mut [T]) {
        let grid = self.grid();
        let (nx, ny) = (grid.nx(), grid.ny());
        for (j, y_row) in rows.zip(y.chunks_exact_mut(nx)) {
            let (south, row, north) = row_neighbourhood(x, nx, ny, j);
            row_product(|i| self.coeffs(i, j), south, row, north, y_row);
        }
    }

    /// The first free cell whose center coefficient is not positive, with that value.
    /// Default: a scan over [`coeffs`](Stencil5::coeffs); implementations that validated at
    /// construction return a cached answer.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 1)?;
    /// let op = Banded5::from_fn(grid, |i, _| Coeffs5 { center: if i == 2 { -1.0 } else { 2.0 }, ..Coeffs5::default() })?;
    /// assert_eq!(op.first_nonpositive_center(), Some((2, -1.0)));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn first_nonpositive_center(&self) -> Option<(usize, T)> {
        let grid = self.grid();
        let fixed = self.fixed_cells();
        (0..grid.cells())
            .filter(|&k| !fixed.is_some_and(|f| f.contains(k)))
            .map(|k| {
                let (i, j) = grid.coords(k);
                (k, self.coeffs(i, j).center)
            })
            .find(|&(_, c)| !crate::is_positive(c))
    }

    /// Checked matrix–vector product `y = A·x` with the coefficients as given (fixed cells'
    /// rows included as they are).
    ///
    /// # Errors
    ///
    /// [`Error::LengthMismatch`] if `x` or `y` does not have one entry per cell.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 1)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mut y = vec![0.0; 3];
    /// op.apply(&[1.0, 2.0, 3.0], &mut y)?;
    /// assert_eq!(y, vec![2.0, 4.0, 10.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn apply(&self, x: &[T], y: &mut [T]) -> Result<(), Error> {
        let n = self.grid().cells();
        check_len("x", n, x.len())?;
        check_len("y", n, y.len())?;
        crate::kernels::Kernels::new(self.grid()).apply(self, x, y);
        Ok(())
    }

    /// The diagonal of `A` (center coefficients as given) into `d`.
    ///
    /// # Errors
    ///
    /// [`Error::LengthMismatch`] if `d` does not have one entry per cell.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(2, 2)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mut d = vec![0.0; 4];
    /// op.diagonal(&mut d)?;
    /// assert_eq!(d, vec![4.0; 4]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn diagonal(&self, d: &mut [T]) -> Result<(), Error> {
        let grid = self.grid();
        check_len("diagonal", grid.cells(), d.len())?;
        for (k, dk) in d.iter_mut().enumerate() {
            let (i, j) = grid.coords(k);
            *dk = self.coeffs(i, j).center;
        }
        Ok(())
    }

    /// Row `(i, j)` of the system the Krylov drivers and the preconditioners see: the identity
    /// row for a fixed cell, and for a free cell its coefficients with the couplings towards
    /// fixed neighbours removed (those terms are known values, not unknowns).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 1)?;
    /// let fixed = FixedCells::new(grid, [0])?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j))?.with_fixed(fixed)?;
    /// assert_eq!(op.eliminated_coeffs(0, 0), Coeffs5::identity());
    /// assert_eq!(op.eliminated_coeffs(1, 0).west, 0.0);
    /// assert_eq!(op.eliminated_coeffs(1, 0).east, -1.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn eliminated_coeffs(&self, i: usize, j: usize) -> Coeffs5<T> {
        let mut c = self.coeffs(i, j);
        let Some(fixed) = self.fixed_cells() else {
            return c;
        };
        let grid = self.grid();
        let k = grid.index(i, j);
        if fixed.contains(k) {
            return Coeffs5::identity();
        }
        for side in Side::ALL {
            if grid.neighbour(k, side).is_some_and(|n| fixed.contains(n)) {
                *c.towards_mut(side) = T::zero();
            }
        }
        c
    }
}

impl<T: Scalar, S: Stencil5<T> + ?Sized> Stencil5<T> for &S {
    fn grid(&self) -> Grid {
        (**self).grid()
    }
    fn coeffs(&self, i: usize, j: usize) -> Coeffs5<T> {
        (**self).coeffs(i, j)
    }
    fn fixed_cells(&self) -> Option<&FixedCells> {
        (**self).fixed_cells()
    }
    fn apply_rows(&self, rows: Range<usize>, x: &[T], y: &mut [T]) {
        (**self).apply_rows(rows, x, y)
    }
    fn first_nonpositive_center(&self) -> Option<(usize, T)> {
        (**self).first_nonpositive_center()
    }
}

/// `v` in another scalar type; NaN if it cannot be represented (validation then names it).
pub(crate) fn cast_scalar<T: Scalar, U: Scalar>(v: T) -> U {
    U::from(v).unwrap_or_else(U::nan)
}

/// `Err(LengthMismatch)` unless `found == expected`.
pub(crate) fn check_len(what: &'static str, expected: usize, found: usize) -> Result<(), Error> {
    if expected == found {
        Ok(())
    } else {
        Err(Error::LengthMismatch {
            what,
            expected,
            found,
        })
    }
}

/// `Err(GridMismatch)` unless the grids agree.
pub(crate) fn check_grid(expected: Grid, found: Grid) -> Result<(), Error> {
    if expected == found {
        Ok(())
    } else {
        Err(Error::GridMismatch {
            expected_nx: expected.nx(),
            expected_ny: expected.ny(),
            found_nx: found.nx(),
            found_ny: found.ny(),
        })
    }
}

/// The south row, the row itself and the north row of row `j` of `x` (`None` at grid edges).
#[inline]
pub(crate) fn row_neighbourhood<T>(
    x: &[T],
    nx: usize,
    ny: usize,
    j: usize,
) -> (Option<&[T]>, &[T], Option<&[T]>) {
    let row = &x[j * nx..(j + 1) * nx];
    let south = (j > 0).then(|| &x[(j - 1) * nx..j * nx]);
    let north = (j + 1 < ny).then(|| &x[(j + 1) * nx..(j + 2) * nx]);
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

/// `(A·x)_i` for one cell of a row, with the couplings towards missing neighbours left out.
#[inline(always)]
fn cell_product<T: Scalar>(
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

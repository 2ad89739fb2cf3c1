//! The operator traits. [`LinearOperator`] is dimension-free: `y = A·x` on a vector of
//! unknowns, with an optional diagonal and a set of [`FixedCells`] — all a Krylov method needs.
//! [`Stencil5`] is the 5-point view on a structured grid (rows of [`Coeffs5`]) that relaxation
//! methods and preconditioners walk. Every `Stencil5` is a `LinearOperator` automatically, and
//! a `LinearOperator` that is a stencil says so ([`LinearOperator::as_stencil`]); an operator
//! that is not a 5-point stencil (another discretisation, a distributed block, a matrix of
//! your own) implements `LinearOperator` directly.

mod fixed;
mod rows;

use std::ops::Range;

pub use fixed::FixedCells;
pub use rows::Coeffs5;
pub(crate) use rows::{cell_product, row_neighbourhood, row_product, row_sums_to_zero};

use crate::error::{Error, Location, Shape};
use crate::grid::Grid;
use crate::scalar::{is_positive, Scalar};

/// A linear operator `A` on a vector of unknowns, applied block by block: what the Krylov
/// drivers ([`Cg`](crate::Cg), [`Pcg`](crate::Pcg), [`SteepestDescent`](crate::SteepestDescent),
/// [`BiCgStab`](crate::BiCgStab), [`Gmres`](crate::Gmres)) and
/// [`MixedRefinement`](crate::MixedRefinement) ask of an operator.
///
/// Two methods are required: [`len`](LinearOperator::len) and
/// [`apply_block`](LinearOperator::apply_block). Every [`Stencil5`] implements this trait
/// through its rows; implement it yourself only for an operator that is not a 5-point stencil.
///
/// **Blocks.** The drivers cut every vector into fixed blocks of consecutive unknowns (whole
/// grid rows for a grid operator, see [`on_grid`](LinearOperator::on_grid)) and call
/// `apply_block` once per block, in parallel when the [`Space`](crate::space::Space) allows
/// threads. Reductions combine block results in block order, so the bits never depend on the
/// thread count.
///
/// **Fixed cells** ([`fixed_cells`](LinearOperator::fixed_cells)) keep the value the caller put
/// in `x`: every driver leaves them untouched and treats their residual as exactly zero.
///
/// # Example
///
/// The 1-D operator `−u'' + u` on `n` points, with no grid and no stencil behind it:
///
/// ```
/// use std::ops::Range;
/// use quintet::prelude::*;
///
/// struct Chain(usize);
/// impl LinearOperator<f64> for Chain {
///     fn len(&self) -> usize {
///         self.0
///     }
///     fn apply_block(&self, cells: Range<usize>, x: &[f64], y: &mut [f64]) {
///         let n = self.0;
///         for (yk, k) in y.iter_mut().zip(cells) {
///             let left = if k > 0 { x[k - 1] } else { 0.0 };
///             let right = if k + 1 < n { x[k + 1] } else { 0.0 };
///             *yk = 3.0 * x[k] - left - right;
///         }
///     }
/// }
///
/// let op = Chain(500);
/// let mut x = vec![0.0; 500];
/// let report = Cg::default().solve(&op, &vec![1.0; 500], &mut x)?;
/// assert!(report.converged());
/// # Ok::<(), quintet::Error>(())
/// ```
pub trait LinearOperator<T: Scalar>: Sync {
    /// The number of unknowns (entries of `x` and of `A·x`).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(6, 4)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j))?;
    /// assert_eq!(op.len(), 24);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn len(&self) -> usize;

    /// `y = (A·x)[cells]`: the product restricted to the unknowns `cells`, a block as the
    /// drivers cut it (whole grid rows for a grid operator). `x` is the whole vector; `y` holds
    /// exactly `cells.len()` entries. Fixed cells' rows are applied as they are.
    ///
    /// # Panics
    ///
    /// May panic if the lengths above do not hold, or (grid operators) if `cells` does not
    /// cover whole grid rows. The crate's own callers check lengths first; use
    /// [`apply`](LinearOperator::apply) for a checked product.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 2)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let x = vec![1.0; 6];
    /// let mut top_row = vec![0.0; 3];
    /// op.apply_block(3..6, &x, &mut top_row);
    /// assert_eq!(top_row, vec![2.0, 1.0, 2.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn apply_block(&self, cells: Range<usize>, x: &[T], y: &mut [T]);

    /// Whether the operator has no unknowns.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(2, 2)?;
    /// assert!(!Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j))?.is_empty());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// The structured grid whose cells the unknowns are (cell `k = i + nx·j`), if any. It sets
    /// how vectors are cut into blocks (whole rows) and lets errors name `(i, j)`. Default:
    /// `None`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(5, 3)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j))?;
    /// assert_eq!(op.on_grid(), Some(grid));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn on_grid(&self) -> Option<Grid> {
        None
    }

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

    /// Write the diagonal of `A` into `d` and return `true`, or return `false` if the operator
    /// does not know its diagonal (the default).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) if `d` does not have one
    /// entry per unknown.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(2, 2)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let mut d = vec![0.0; 4];
    /// assert!(op.diagonal(&mut d)?);
    /// assert_eq!(d, vec![4.0; 4]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn diagonal(&self, d: &mut [T]) -> Result<bool, Error> {
        check_len("diagonal", self.len(), d.len())?;
        Ok(false)
    }

    /// The first free unknown whose diagonal entry is not positive, with that value, if the
    /// operator knows it (methods that need an SPD operator refuse to start on it, naming the
    /// cell). Default: `None` (not known).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 1)?;
    /// let op = Banded5::from_fn(grid, |i, _| Coeffs5 { center: if i == 2 { -1.0 } else { 2.0 }, ..Coeffs5::default() })?;
    /// assert_eq!(op.first_nonpositive_diagonal(), Some((2, -1.0)));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn first_nonpositive_diagonal(&self) -> Option<(usize, T)> {
        None
    }

    /// Whether the constant vector is in the null space of the system (`A·1 = 0` with no
    /// fixed cell): a pure no-flow (Neumann) problem, whose solution is determined only up to
    /// a constant. Methods for SPD systems refuse it with
    /// [`ErrorKind::Singular`](crate::ErrorKind::Singular). Default: `false` (not known).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 4)?;
    /// let insulated = Banded5::from_fn(grid, |i, j| {
    ///     let mut c = Coeffs5::<f64>::laplacian(grid, i, j);
    ///     c.center = -(c.west + c.east + c.south + c.north); // no flow through the edges
    ///     c
    /// })?;
    /// assert!(insulated.constant_in_null_space());
    /// let mut x = vec![0.0; 16];
    /// let err = Cg::default().solve(&insulated, &[0.0; 16], &mut x).unwrap_err();
    /// assert_eq!(err.kind(), ErrorKind::Singular);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn constant_in_null_space(&self) -> bool {
        false
    }

    /// The operator as a 5-point stencil, if it is one (relaxation methods walk its rows).
    /// Default: `None`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 3)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j))?;
    /// assert!(op.as_stencil().is_some());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn as_stencil(&self) -> Option<&dyn Stencil5<T>> {
        None
    }

    /// Make the values of `x` that this process's rows read but does not hold available to
    /// [`apply_block`](LinearOperator::apply_block). The crate calls it once before every
    /// product over the blocks of `x`, on every process of a distributed solve, so a
    /// distributed operator fetches its neighbours' boundary values here (a collective call).
    /// Default: nothing to do.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 1)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j))?;
    /// op.exchange_halo(&[1.0, 2.0, 3.0]); // one process holds everything
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn exchange_halo(&self, x: &[T]) {
        let _ = x;
    }

    /// Where the unknown numbered `k` in the whole problem sits, for error messages. Default:
    /// cell `k` of [`on_grid`](LinearOperator::on_grid), or entry `k`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 2)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j))?;
    /// assert_eq!(op.cell_location(4).coords, Some((1, 1)));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn cell_location(&self, k: usize) -> Location {
        Location::of(self.on_grid(), k)
    }

    /// Checked product `y = A·x` (fixed cells' rows included as they are), on the calling
    /// thread.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) if `x` or `y` does not
    /// have one entry per unknown.
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
        let n = self.len();
        check_len("x", n, x.len())?;
        check_len("y", n, y.len())?;
        self.exchange_halo(x);
        self.apply_block(0..n, x, y);
        Ok(())
    }
}

/// A 5-point operator `A` on a structured grid: the matrix of `A·φ = q`, never assembled.
///
/// Two methods are required: [`grid`](Stencil5::grid) and [`coeffs`](Stencil5::coeffs). The
/// rest are provided; implementations override [`apply_rows`](Stencil5::apply_rows) (the row
/// kernel behind every matrix–vector product) when they can do it faster, and
/// [`fixed`](Stencil5::fixed) when they carry fixed (Dirichlet) cells.
///
/// Every `Stencil5` is a [`LinearOperator`] (the dimension-free view the Krylov drivers use):
/// [`len`](LinearOperator::len) is the cell count, [`apply`](LinearOperator::apply) the checked
/// product, [`fixed_cells`](LinearOperator::fixed_cells) the set given by `fixed`, and
/// [`diagonal`](LinearOperator::diagonal) the centers.
///
/// **Fixed cells.** A fixed cell keeps the value the caller put in `x`: every driver leaves it
/// untouched and treats its residual as exactly zero. The equations of the free cells still see
/// the fixed values through their couplings, so a finite-difference code that keeps its
/// boundary nodes in the grid needs no right-hand-side surgery. The system the Krylov drivers
/// iterate on is the restriction of `A` to the free cells, which is symmetric whenever the
/// free-to-free couplings are ([`eliminated_coeffs`](Stencil5::eliminated_coeffs) gives its
/// rows).
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
pub trait Stencil5<T: Scalar>: LinearOperator<T> {
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

    /// The fixed (Dirichlet) cells, if any: implement this to give your own stencil fixed
    /// cells; callers read them through [`LinearOperator::fixed_cells`]. Default: none.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 3)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j))?
    ///     .with_fixed(FixedCells::new(grid, [4])?)?;
    /// assert_eq!(op.fixed().map(|f| f.len()), Some(1));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn fixed(&self) -> Option<&FixedCells> {
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
    /// use [`LinearOperator::apply`] for a checked product.
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
        self.apply_rows_from(rows, 0, x, y);
    }

    /// [`apply_rows`](Stencil5::apply_rows) on part of a vector: `x` holds the grid's rows
    /// from row `first` on (`x[0]` is cell `(0, first)`), and must hold every row the product
    /// reads, `rows.start − 1` to `rows.end` (within the grid). The multigrid smoother uses
    /// it to give each thread a band of rows of its own. Implementations that override
    /// `apply_rows` for speed should override this one the same way (the default goes through
    /// [`coeffs`](Stencil5::coeffs)), so that both give the same bits.
    ///
    /// # Example
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 3)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let x: Vec<f64> = (0..9).map(f64::from).collect();
    /// let (mut whole, mut part) = (vec![0.0; 3], vec![0.0; 3]);
    /// op.apply_rows(1..2, &x, &mut whole);
    /// op.apply_rows_from(1..2, 0, &x[..], &mut part); // rows 0..3 held
    /// assert_eq!(whole, part);
    /// let top_two = &x[3..]; // rows 1 and 2 only: enough for row 2
    /// op.apply_rows_from(2..3, 1, top_two, &mut part);
    /// op.apply_rows(2..3, &x, &mut whole);
    /// assert_eq!(whole, part);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn apply_rows_from(&self, rows: Range<usize>, first: usize, x: &[T], y: &mut [T]) {
        let grid = self.grid();
        let (nx, ny) = (grid.nx(), grid.ny());
        for (j, y_row) in rows.zip(y.chunks_exact_mut(nx)) {
            let (south, row, north) = row_neighbourhood(x, first, nx, ny, j);
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
        let fixed = self.fixed();
        (0..grid.cells())
            .filter(|&k| !fixed.is_some_and(|f| f.contains(k)))
            .map(|k| {
                let (i, j) = grid.coords(k);
                (k, self.coeffs(i, j).center)
            })
            .find(|&(_, c)| !crate::scalar::is_positive(c))
    }

    /// Whether no cell is fixed and every row sums to zero (to a relative 10⁻¹²), so that
    /// `A·1 = 0`. Default: a scan over [`coeffs`](Stencil5::coeffs); implementations that
    /// validated at construction return a cached answer.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 1)?;
    /// let op = Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j))?;
    /// assert!(!op.rows_sum_to_zero()); // the zero values outside the grid fix the level
    /// # Ok::<(), quintet::Error>(())
    /// ```
    fn rows_sum_to_zero(&self) -> bool {
        let grid = self.grid();
        self.fixed().is_none_or(|f| f.is_empty())
            && (0..grid.cells()).all(|k| {
                let (i, j) = grid.coords(k);
                row_sums_to_zero(self.coeffs(i, j))
            })
    }

    /// The five coefficient arrays (center, west, east, south, north) when every row of
    /// them is stored as its even columns, then its odd ones (as
    /// [`Banded5ByColour`](crate::Banded5ByColour) stores them): the single-precision
    /// multigrid cycle reads its fine level from them in place. Default: `None`.
    #[doc(hidden)]
    fn bands_by_colour(&self) -> Option<&[Vec<T>; 5]> {
        None
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
    #[inline]
    fn eliminated_coeffs(&self, i: usize, j: usize) -> Coeffs5<T> {
        let mut c = self.coeffs(i, j);
        let Some(fixed) = self.fixed() else {
            return c;
        };
        let grid = self.grid();
        let (nx, ny) = (grid.nx(), grid.ny());
        let k = i + nx * j;
        if fixed.contains(k) {
            return Coeffs5::identity();
        }
        if i > 0 && fixed.contains(k - 1) {
            c.west = T::zero();
        }
        if i + 1 < nx && fixed.contains(k + 1) {
            c.east = T::zero();
        }
        if j > 0 && fixed.contains(k - nx) {
            c.south = T::zero();
        }
        if j + 1 < ny && fixed.contains(k + nx) {
            c.north = T::zero();
        }
        c
    }
}

/// Every 5-point stencil is a linear operator on its cells.
impl<T: Scalar, S: Stencil5<T>> LinearOperator<T> for S {
    fn len(&self) -> usize {
        self.grid().cells()
    }

    /// The rows covered by `cells` (whole rows: the blocks the drivers cut for a grid).
    fn apply_block(&self, cells: Range<usize>, x: &[T], y: &mut [T]) {
        let nx = self.grid().nx();
        debug_assert!(cells.start % nx == 0 && cells.end % nx == 0);
        self.apply_rows(cells.start / nx..cells.end / nx, x, y);
    }

    fn on_grid(&self) -> Option<Grid> {
        Some(self.grid())
    }

    fn fixed_cells(&self) -> Option<&FixedCells> {
        self.fixed()
    }

    fn diagonal(&self, d: &mut [T]) -> Result<bool, Error> {
        let grid = self.grid();
        check_len("diagonal", grid.cells(), d.len())?;
        for (k, dk) in d.iter_mut().enumerate() {
            let (i, j) = grid.coords(k);
            *dk = self.coeffs(i, j).center;
        }
        Ok(true)
    }

    fn first_nonpositive_diagonal(&self) -> Option<(usize, T)> {
        self.first_nonpositive_center()
    }

    fn constant_in_null_space(&self) -> bool {
        self.rows_sum_to_zero()
    }

    fn as_stencil(&self) -> Option<&dyn Stencil5<T>> {
        Some(self)
    }
}

impl<T: Scalar, S: Stencil5<T> + ?Sized> Stencil5<T> for &S {
    fn grid(&self) -> Grid {
        (**self).grid()
    }
    fn coeffs(&self, i: usize, j: usize) -> Coeffs5<T> {
        (**self).coeffs(i, j)
    }
    fn fixed(&self) -> Option<&FixedCells> {
        (**self).fixed()
    }
    fn apply_rows(&self, rows: Range<usize>, x: &[T], y: &mut [T]) {
        (**self).apply_rows(rows, x, y)
    }
    fn apply_rows_from(&self, rows: Range<usize>, first: usize, x: &[T], y: &mut [T]) {
        (**self).apply_rows_from(rows, first, x, y)
    }
    fn first_nonpositive_center(&self) -> Option<(usize, T)> {
        (**self).first_nonpositive_center()
    }
    fn rows_sum_to_zero(&self) -> bool {
        (**self).rows_sum_to_zero()
    }
    fn eliminated_coeffs(&self, i: usize, j: usize) -> Coeffs5<T> {
        (**self).eliminated_coeffs(i, j)
    }
    fn bands_by_colour(&self) -> Option<&[Vec<T>; 5]> {
        (**self).bands_by_colour()
    }
}

/// `Err(LengthMismatch)` unless `found == expected`.
pub(crate) fn check_len(what: &'static str, expected: usize, found: usize) -> Result<(), Error> {
    if expected == found {
        Ok(())
    } else {
        Err(Error::length(what, expected, found))
    }
}

/// The shape of an operator: its length and grid.
pub(crate) fn shape_of<T: Scalar>(op: &(impl LinearOperator<T> + ?Sized)) -> Shape {
    Shape {
        cells: op.len(),
        grid: op.on_grid().map(|g| (g.nx(), g.ny())),
    }
}

/// The shape of a grid.
pub(crate) fn grid_shape(grid: Grid) -> Shape {
    Shape {
        cells: grid.cells(),
        grid: Some((grid.nx(), grid.ny())),
    }
}

/// `Err(GridMismatch)` naming `what` unless `found` (what `what` was built for) equals
/// `expected` (the operator's shape).
pub(crate) fn check_shape(what: &'static str, expected: Shape, found: Shape) -> Result<(), Error> {
    if expected == found {
        Ok(())
    } else {
        Err(Error::shape_mismatch(what, expected, found))
    }
}

/// The location of unknown `k` of `op`.
pub(crate) fn locate<T: Scalar>(op: &(impl LinearOperator<T> + ?Sized), k: usize) -> Location {
    op.cell_location(k)
}

/// `Err(Singular)` for a pure no-flow system (the constant vector in the null space), as far
/// as the operator knows.
pub(crate) fn require_determined_level<T: Scalar>(
    op: &(impl LinearOperator<T> + ?Sized),
) -> Result<(), Error> {
    if op.constant_in_null_space() {
        return Err(Error::singular(
            "the system",
            "every row sums to zero and no cell is fixed, so its level is undetermined (any constant can be added to a solution); fix a cell, add a storage or exchange term, or ask the model for the compatible problem (SingularPolicy::FixMean)",
        ));
    }
    Ok(())
}

/// `Err(NonPositiveCenter)` for the first free unknown with a diagonal entry that is not
/// positive, as far as the operator knows.
pub(crate) fn require_positive_diagonal<T: Scalar>(
    op: &(impl LinearOperator<T> + ?Sized),
) -> Result<(), Error> {
    match op.first_nonpositive_diagonal() {
        Some((k, value)) if !is_positive(value) => Err(Error::non_positive_center(
            locate(op, k),
            crate::scalar::to_f64(value),
        )),
        _ => Ok(()),
    }
}

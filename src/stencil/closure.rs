//! `ClosureStencil`: a 5-point operator whose coefficients a closure computes on the fly.

use std::fmt;

use super::{check_fixed, survey};
use crate::operator::{Coeffs5, FixedCells, Stencil5};
use crate::{Error, Grid, Scalar};

/// A 5-point operator with no coefficient storage: row `(i, j)` is `f(i, j)`, computed each time
/// it is needed. Worth it when coefficients are cheap to compute (constant, or from a few
/// per-cell properties the model keeps anyway): a matrix–vector product then reads only `x` and
/// `y` from memory.
///
/// The closure must be deterministic. It is called once per cell at construction to validate
/// the coefficients (finite, no coupling off the grid).
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// // A screened-diffusion (Helmholtz-like) operator, never stored.
/// let grid = Grid::new(40, 40)?;
/// let op = ClosureStencil::new(grid, move |i, j| {
///     let mut c = Coeffs5::laplacian(grid, i, j);
///     c.center += 0.1;
///     c
/// })?;
/// let rhs = vec![1.0; grid.cells()];
/// let mut x = vec![0.0; grid.cells()];
/// assert!(Cg::default().solve(&op, &rhs, &mut x)?.converged());
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone)]
pub struct ClosureStencil<T, F> {
    grid: Grid,
    coeffs: F,
    fixed: Option<FixedCells>,
    first_nonpositive: Option<(usize, T)>,
    rows_sum_to_zero: bool,
}

impl<T, F> ClosureStencil<T, F>
where
    T: Scalar,
    F: Fn(usize, usize) -> Coeffs5<T> + Sync,
{
    /// An operator whose row `(i, j)` is `coeffs(i, j)`.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite) or [`ErrorKind::OffGridCoupling`](crate::ErrorKind::OffGridCoupling) naming the first bad cell.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 3)?;
    /// // A west coupling on the west edge points off the grid.
    /// let bad = ClosureStencil::new(grid, |_, _| Coeffs5 { center: 4.0, west: -1.0, ..Coeffs5::default() });
    /// let err = bad.unwrap_err();
    /// assert_eq!(err.kind(), ErrorKind::OffGridCoupling);
    /// assert_eq!(err.to_string(), "cell 0 (i = 0, j = 0) has west coupling -1, but it has no west neighbour");
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(grid: Grid, coeffs: F) -> Result<ClosureStencil<T, F>, Error> {
        let mut op = ClosureStencil {
            grid,
            coeffs,
            fixed: None,
            first_nonpositive: None,
            rows_sum_to_zero: false,
        };
        op.resurvey()?;
        Ok(op)
    }

    /// The same operator with the cells of `fixed` held at the values the caller puts in `x`.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::GridMismatch`](crate::ErrorKind::GridMismatch) if `fixed` was built for another grid.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 4)?;
    /// let op = ClosureStencil::new(grid, move |i, j| Coeffs5::<f64>::laplacian(grid, i, j))?
    ///     .with_fixed(FixedCells::new(grid, [0, 15])?)?;
    /// assert_eq!(op.fixed_cells().map(|f| f.cells()), Some(&[0, 15][..]));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn with_fixed(mut self, fixed: FixedCells) -> Result<ClosureStencil<T, F>, Error> {
        check_fixed(self.grid, &fixed)?;
        self.fixed = Some(fixed);
        self.resurvey()?;
        Ok(self)
    }

    fn resurvey(&mut self) -> Result<(), Error> {
        let found = survey(self.grid, self.fixed.as_ref(), &self.coeffs)?;
        self.rows_sum_to_zero = found.rows_sum_to_zero;
        self.first_nonpositive = found.first_nonpositive.map(|(k, _)| {
            let (i, j) = self.grid.coords(k);
            (k, (self.coeffs)(i, j).center)
        });
        Ok(())
    }
}

impl<T, F> Stencil5<T> for ClosureStencil<T, F>
where
    T: Scalar,
    F: Fn(usize, usize) -> Coeffs5<T> + Sync,
{
    fn grid(&self) -> Grid {
        self.grid
    }

    #[inline]
    fn coeffs(&self, i: usize, j: usize) -> Coeffs5<T> {
        (self.coeffs)(i, j)
    }

    fn fixed(&self) -> Option<&FixedCells> {
        self.fixed.as_ref()
    }

    fn first_nonpositive_center(&self) -> Option<(usize, T)> {
        self.first_nonpositive
    }

    fn rows_sum_to_zero(&self) -> bool {
        self.rows_sum_to_zero
    }
}

impl<T, F> fmt::Debug for ClosureStencil<T, F> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("ClosureStencil")
            .field("grid", &self.grid)
            .field("fixed", &self.fixed.as_ref().map(FixedCells::len))
            .finish_non_exhaustive()
    }
}

//! `Symmetric5`: a symmetric 5-point operator stored as three arrays (center, east, north).

use std::ops::Range;

use super::{cast_scalar, check_fixed, check_symmetry, survey, Banded5};
use crate::operator::{check_len, row_neighbourhood, row_product, Coeffs5, FixedCells, Stencil5};
use crate::{memory, Error, Grid, Scalar};

/// A symmetric 5-point operator that stores only the center, east and north coefficients; the
/// west coupling of a cell is the east coupling of its west neighbour, and the south coupling
/// the north coupling of its south neighbour.
///
/// Three arrays instead of five: a matrix–vector product moves about 40 bytes per cell in
/// `f64` instead of 56, which is what a memory-bound CG iteration is paid in. Every driver and
/// preconditioner accepts it; the results are bit-identical to a [`Banded5`] holding the same
/// (symmetric) coefficients.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(64, 64)?;
/// let banded: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let compact = Symmetric5::from_banded(&banded, 0.0)?;
/// assert_eq!(compact.coeffs(3, 4), banded.coeffs(3, 4));
///
/// let rhs = vec![1.0; grid.cells()];
/// let (mut x1, mut x2) = (vec![0.0; grid.cells()], vec![0.0; grid.cells()]);
/// Cg::default().solve(&banded, &rhs, &mut x1)?;
/// Cg::default().solve(&compact, &rhs, &mut x2)?;
/// assert_eq!(x1, x2);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct Symmetric5<T> {
    grid: Grid,
    center: Vec<T>,
    east: Vec<T>,
    north: Vec<T>,
    fixed: Option<FixedCells>,
    first_nonpositive: Option<(usize, T)>,
    rows_sum_to_zero: bool,
}

impl<T: Scalar> Symmetric5<T> {
    /// An operator from the center, east and north arrays (`grid.cells()` entries each).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) naming the array, [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite) naming the first
    /// non-finite coefficient, [`ErrorKind::OffGridCoupling`](crate::ErrorKind::OffGridCoupling) for an east coupling on the east
    /// edge or a north coupling on the north edge.
    ///
    /// ```
    /// use quintet::{Grid, Stencil5, Symmetric5};
    /// let grid = Grid::new(2, 1)?;
    /// let op = Symmetric5::new(grid, vec![2.0, 2.0], vec![-1.0, 0.0], vec![0.0, 0.0])?;
    /// assert_eq!(op.coeffs(1, 0).west, -1.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(
        grid: Grid,
        center: Vec<T>,
        east: Vec<T>,
        north: Vec<T>,
    ) -> Result<Symmetric5<T>, Error> {
        let n = grid.cells();
        check_len("center coefficients", n, center.len())?;
        check_len("east coefficients", n, east.len())?;
        check_len("north coefficients", n, north.len())?;
        let mut op = Symmetric5 {
            grid,
            center,
            east,
            north,
            fixed: None,
            first_nonpositive: None,
            rows_sum_to_zero: false,
        };
        op.resurvey()?;
        Ok(op)
    }

    /// The compact form of `banded`, after checking that it is symmetric to within
    /// `rel_tol` (see [`check_symmetry`]; fixed cells are carried over, and couplings towards
    /// them do not need to be symmetric). The east and north couplings are kept.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::Asymmetric`](crate::ErrorKind::Asymmetric) naming the first pair of cells that disagree.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 1)?;
    /// let lopsided = Banded5::new(grid, vec![2.0; 3], vec![0.0, -1.0, -1.0], vec![-0.5, -1.0, 0.0], vec![0.0; 3], vec![0.0; 3])?;
    /// let err = Symmetric5::from_banded(&lopsided, 1e-12).unwrap_err();
    /// assert_eq!(err.kind(), ErrorKind::Asymmetric);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn from_banded(banded: &Banded5<T>, rel_tol: f64) -> Result<Symmetric5<T>, Error> {
        check_symmetry(banded, rel_tol)?;
        let op = Symmetric5::new(
            banded.grid(),
            banded.center().to_vec(),
            banded.east().to_vec(),
            banded.north().to_vec(),
        )?;
        match banded.fixed() {
            Some(fixed) => op.with_fixed(fixed.clone()),
            None => Ok(op),
        }
    }

    /// The same operator with the cells of `fixed` held at the values the caller puts in `x`.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::GridMismatch`](crate::ErrorKind::GridMismatch) if `fixed` was built for another grid.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 3)?;
    /// let banded: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let op = Symmetric5::from_banded(&banded, 0.0)?.with_fixed(FixedCells::new(grid, [4])?)?;
    /// assert!(op.fixed_cells().is_some_and(|f| f.contains(4)));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn with_fixed(mut self, fixed: FixedCells) -> Result<Symmetric5<T>, Error> {
        check_fixed(self.grid, &fixed)?;
        self.fixed = Some(fixed);
        self.resurvey()?;
        Ok(self)
    }

    /// The same operator in another scalar type, fixed cells included.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite) if a coefficient does not fit the new type.
    ///
    /// ```
    /// # let grid = quintet::Grid::new(2, 1)?;
    /// let op = quintet::Symmetric5::new(grid, vec![2.0, 3.0], vec![-1.0, 0.0], vec![0.0; 2])?;
    /// let single: quintet::Symmetric5<f32> = op.cast()?;
    /// assert_eq!(single.east(), &[-1.0f32, 0.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn cast<U: Scalar>(&self) -> Result<Symmetric5<U>, Error> {
        let convert = |v: &[T]| -> Result<Vec<U>, Error> {
            let mut out = memory::with_capacity("the converted bands", v.len())?;
            out.extend(v.iter().map(|&e| cast_scalar::<T, U>(e)));
            Ok(out)
        };
        let op = Symmetric5::new(
            self.grid,
            convert(&self.center)?,
            convert(&self.east)?,
            convert(&self.north)?,
        )?;
        match &self.fixed {
            Some(fixed) => op.with_fixed(fixed.clone()),
            None => Ok(op),
        }
    }

    /// Center coefficients.
    ///
    /// ```
    /// # let grid = quintet::Grid::new(2, 1)?;
    /// let op = quintet::Symmetric5::new(grid, vec![2.0, 3.0], vec![-1.0, 0.0], vec![0.0; 2])?;
    /// assert_eq!(op.center(), &[2.0, 3.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn center(&self) -> &[T] {
        &self.center
    }

    /// East couplings (also the west couplings of the east neighbours).
    ///
    /// ```
    /// # let grid = quintet::Grid::new(2, 1)?;
    /// let op = quintet::Symmetric5::new(grid, vec![2.0, 3.0], vec![-1.0, 0.0], vec![0.0; 2])?;
    /// assert_eq!(op.east(), &[-1.0, 0.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn east(&self) -> &[T] {
        &self.east
    }

    /// North couplings (also the south couplings of the north neighbours).
    ///
    /// ```
    /// # let grid = quintet::Grid::new(1, 2)?;
    /// let op = quintet::Symmetric5::new(grid, vec![2.0, 3.0], vec![0.0; 2], vec![-1.0, 0.0])?;
    /// assert_eq!(op.north(), &[-1.0, 0.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn north(&self) -> &[T] {
        &self.north
    }

    fn resurvey(&mut self) -> Result<(), Error> {
        let found = survey(self.grid, self.fixed.as_ref(), |i, j| self.coeffs(i, j))?;
        self.rows_sum_to_zero = found.rows_sum_to_zero;
        self.first_nonpositive = found.first_nonpositive.map(|(k, _)| (k, self.center[k]));
        Ok(())
    }
}

impl<T: Scalar> Stencil5<T> for Symmetric5<T> {
    fn grid(&self) -> Grid {
        self.grid
    }

    #[inline]
    fn coeffs(&self, i: usize, j: usize) -> Coeffs5<T> {
        let nx = self.grid.nx();
        let k = self.grid.index(i, j);
        Coeffs5 {
            center: self.center[k],
            west: if i > 0 { self.east[k - 1] } else { T::zero() },
            east: self.east[k],
            south: if j > 0 { self.north[k - nx] } else { T::zero() },
            north: self.north[k],
        }
    }

    fn fixed(&self) -> Option<&FixedCells> {
        self.fixed.as_ref()
    }

    fn apply_rows(&self, rows: Range<usize>, x: &[T], y: &mut [T]) {
        self.apply_rows_from(rows, 0, x, y);
    }

    fn apply_rows_from(&self, rows: Range<usize>, first: usize, x: &[T], y: &mut [T]) {
        let (nx, ny) = (self.grid.nx(), self.grid.ny());
        let zero = T::zero();
        for (j, y_row) in rows.zip(y.chunks_exact_mut(nx)) {
            let (c, e, n) = (
                &self.center[j * nx..][..nx],
                &self.east[j * nx..][..nx],
                &self.north[j * nx..][..nx],
            );
            // The south couplings of this row are the north couplings of the row below, which
            // the previous row's product just read: they come from cache, not memory.
            let s = if j > 0 {
                &self.north[(j - 1) * nx..][..nx]
            } else {
                n
            };
            let (south, row, north) = row_neighbourhood(x, first, nx, ny, j);
            row_product(
                |i| Coeffs5 {
                    center: c[i],
                    west: if i > 0 { e[i - 1] } else { zero },
                    east: e[i],
                    south: if j > 0 { s[i] } else { zero },
                    north: n[i],
                },
                south,
                row,
                north,
                y_row,
            );
        }
    }

    fn first_nonpositive_center(&self) -> Option<(usize, T)> {
        self.first_nonpositive
    }

    fn rows_sum_to_zero(&self) -> bool {
        self.rows_sum_to_zero
    }
}

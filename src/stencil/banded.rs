//! `Banded5`: a 5-point operator stored as five owned coefficient arrays.

use std::ops::Range;
use std::sync::atomic::{AtomicBool, Ordering};

use super::validate::Survey;
use super::{cast_scalar, check_fixed, survey};
use crate::blocks::Blocks;
use crate::operator::{check_len, row_neighbourhood, row_product, row_sums_to_zero};
use crate::operator::{Coeffs5, FixedCells, Stencil5};
use crate::scalar::{is_positive, to_f64};
use crate::space::Threaded;
use crate::{memory, Error, Grid, Scalar};

/// A 5-point operator stored as five coefficient arrays (center, west, east, south, north), one
/// entry per cell in grid order. Validated on construction: every coefficient finite and every
/// coupling towards a missing neighbour zero.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// // Steady conduction in a 50 x 40 plate with unit conductance between cells.
/// let grid = Grid::new(50, 40)?;
/// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// assert_eq!(op.center()[0], 4.0);
/// assert_eq!(op.west()[0], 0.0);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct Banded5<T> {
    grid: Grid,
    center: Vec<T>,
    west: Vec<T>,
    east: Vec<T>,
    south: Vec<T>,
    north: Vec<T>,
    fixed: Option<FixedCells>,
    first_nonpositive: Option<(usize, T)>,
    rows_sum_to_zero: bool,
}

impl<T: Scalar> Banded5<T> {
    /// An operator from five arrays of `grid.cells()` entries each.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) naming the array of the wrong length, [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite)
    /// naming the first non-finite coefficient, [`ErrorKind::OffGridCoupling`](crate::ErrorKind::OffGridCoupling) naming the first
    /// edge cell with a coupling towards a missing neighbour.
    ///
    /// ```
    /// use quintet::{Banded5, Grid};
    /// let grid = Grid::new(2, 1)?;
    /// let op = Banded5::new(grid, vec![2.0, 2.0], vec![0.0, -1.0], vec![-1.0, 0.0], vec![0.0; 2], vec![0.0; 2])?;
    /// assert_eq!(op.east(), &[-1.0, 0.0]);
    /// assert!(Banded5::new(grid, vec![2.0], vec![0.0; 2], vec![0.0; 2], vec![0.0; 2], vec![0.0; 2]).is_err());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(
        grid: Grid,
        center: Vec<T>,
        west: Vec<T>,
        east: Vec<T>,
        south: Vec<T>,
        north: Vec<T>,
    ) -> Result<Banded5<T>, Error> {
        let n = grid.cells();
        check_len("center coefficients", n, center.len())?;
        check_len("west coefficients", n, west.len())?;
        check_len("east coefficients", n, east.len())?;
        check_len("south coefficients", n, south.len())?;
        check_len("north coefficients", n, north.len())?;
        let mut op = Banded5 {
            grid,
            center,
            west,
            east,
            south,
            north,
            fixed: None,
            first_nonpositive: None,
            rows_sum_to_zero: false,
        };
        op.resurvey()?;
        Ok(op)
    }

    /// An operator whose row `(i, j)` is `f(i, j)`, evaluated once per cell in grid order.
    ///
    /// # Errors
    ///
    /// As for [`Banded5::new`].
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(10, 10)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(op.grid(), grid);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn from_fn(
        grid: Grid,
        mut f: impl FnMut(usize, usize) -> Coeffs5<T>,
    ) -> Result<Banded5<T>, Error> {
        let n = grid.cells();
        let mut bands: [Vec<T>; 5] = Default::default();
        for band in &mut bands {
            *band = memory::with_capacity("the coefficient bands", n)?;
        }
        for k in 0..n {
            let (i, j) = grid.coords(k);
            let c = f(i, j);
            for (band, v) in bands
                .iter_mut()
                .zip([c.center, c.west, c.east, c.south, c.north])
            {
                band.push(v);
            }
        }
        let [center, west, east, south, north] = bands;
        Banded5::new(grid, center, west, east, south, north)
    }

    /// An operator from the finite-volume form `a_P·φ_P = a_W·φ_W + a_E·φ_E + a_S·φ_S +
    /// a_N·φ_N + b`, whose neighbour coefficients are positive for diffusion. The result is
    /// `center = a_P`, `west = −a_W`, `east = −a_E`, `south = −a_S`, `north = −a_N`; the
    /// source `b` is the right-hand side unchanged.
    ///
    /// # Errors
    ///
    /// As for [`Banded5::new`].
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(2, 1)?;
    /// // Two cells joined by a conductance of 3, each also tied to a fixed-value boundary by 1.
    /// let op = Banded5::from_finite_volume(
    ///     grid, vec![4.0, 4.0], vec![0.0, 3.0], vec![3.0, 0.0], vec![0.0; 2], vec![0.0; 2])?;
    /// assert_eq!(op.east(), &[-3.0, 0.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn from_finite_volume(
        grid: Grid,
        a_p: Vec<T>,
        mut a_w: Vec<T>,
        mut a_e: Vec<T>,
        mut a_s: Vec<T>,
        mut a_n: Vec<T>,
    ) -> Result<Banded5<T>, Error> {
        for band in [&mut a_w, &mut a_e, &mut a_s, &mut a_n] {
            band.iter_mut().for_each(|v| *v = -*v);
        }
        Banded5::new(grid, a_p, a_w, a_e, a_s, a_n)
    }

    /// The same operator with the cells of `fixed` held at the values the caller puts in `x`.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::GridMismatch`](crate::ErrorKind::GridMismatch) if `fixed` was built for another grid.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(5, 5)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?
    ///     .with_fixed(FixedCells::new(grid, grid.edge_cells())?)?;
    /// assert_eq!(op.fixed_cells().map(|f| f.len()), Some(16));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn with_fixed(mut self, fixed: FixedCells) -> Result<Banded5<T>, Error> {
        check_fixed(self.grid, &fixed)?;
        self.fixed = Some(fixed);
        self.resurvey()?;
        Ok(self)
    }

    /// The same operator in another scalar type (for example `f32` for a mixed-precision
    /// inner solve), fixed cells included.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite) if a coefficient does not fit the new type (overflows to infinity).
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 4)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let single: Banded5<f32> = op.cast()?;
    /// assert_eq!(single.center()[0], 4.0f32);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn cast<U: Scalar>(&self) -> Result<Banded5<U>, Error> {
        // Converted a block at a time, on the threads of the pool (element by element, so the
        // bits do not depend on them; the new pages are first touched in parallel too), each
        // block tested for finite values while it is in cache (a pass of its own over the
        // copy would read it all again).
        let finite = AtomicBool::new(true);
        let n = self.grid.cells();
        let mut blocks = Blocks::<U>::new(n, Some(self.grid));
        let mut convert = |v: &[T]| -> Result<Vec<U>, Error> {
            let mut out = memory::zeroed("the converted bands", n)?;
            blocks.for_each(&Threaded, &mut out, |cells, out| {
                for (o, &e) in out.iter_mut().zip(&v[cells]) {
                    *o = cast_scalar::<T, U>(e);
                }
                if !all_finite(out) {
                    finite.store(false, Ordering::Relaxed);
                }
            });
            Ok(out)
        };
        // The source's lengths and fixed set were checked when it was built, so the copy is
        // surveyed once, with its fixed cells in place: rounding can make a coefficient
        // infinite, a center zero or a row sum vanish.
        let mut op = Banded5 {
            grid: self.grid,
            center: convert(&self.center)?,
            west: convert(&self.west)?,
            east: convert(&self.east)?,
            south: convert(&self.south)?,
            north: convert(&self.north)?,
            fixed: self.fixed.clone(),
            first_nonpositive: None,
            rows_sum_to_zero: false,
        };
        let finite = finite.into_inner();
        let found = match finite.then(|| op.survey_finite_bands()).flatten() {
            Some(found) => found,
            // As in `resurvey`: the survey cell by cell names the first cell at fault.
            None => survey(op.grid, op.fixed.as_ref(), |i, j| op.coeffs(i, j))?,
        };
        op.rows_sum_to_zero = found.rows_sum_to_zero;
        op.first_nonpositive = found.first_nonpositive.map(|(k, _)| (k, op.center[k]));
        Ok(op)
    }

    /// Center (diagonal) coefficients.
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// # let grid = Grid::new(2, 2)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(op.center(), &[4.0; 4]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn center(&self) -> &[T] {
        &self.center
    }

    /// Couplings towards the west neighbour.
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// # let grid = Grid::new(2, 1)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(op.west(), &[0.0, -1.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn west(&self) -> &[T] {
        &self.west
    }

    /// Couplings towards the east neighbour.
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// # let grid = Grid::new(2, 1)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(op.east(), &[-1.0, 0.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn east(&self) -> &[T] {
        &self.east
    }

    /// Couplings towards the south neighbour.
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// # let grid = Grid::new(1, 2)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(op.south(), &[0.0, -1.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn south(&self) -> &[T] {
        &self.south
    }

    /// Couplings towards the north neighbour.
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// # let grid = Grid::new(1, 2)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(op.north(), &[-1.0, 0.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn north(&self) -> &[T] {
        &self.north
    }

    /// Take the five arrays back, in the order center, west, east, south, north (to modify
    /// them and rebuild with [`Banded5::new`]).
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// # let grid = Grid::new(2, 1)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let [mut center, west, east, south, north] = op.into_bands();
    /// center[0] += 1.0;
    /// let op = Banded5::new(grid, center, west, east, south, north)?;
    /// assert_eq!(op.center(), &[5.0, 4.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn into_bands(self) -> [Vec<T>; 5] {
        [self.center, self.west, self.east, self.south, self.north]
    }

    /// Overwrite the five bands in place (`f` gets center, west, east, south, north), then
    /// validate them again. The bands must keep one entry per cell.
    pub(crate) fn refill<R>(&mut self, f: impl FnOnce([&mut Vec<T>; 5]) -> R) -> Result<R, Error> {
        let out = f([
            &mut self.center,
            &mut self.west,
            &mut self.east,
            &mut self.south,
            &mut self.north,
        ]);
        let n = self.grid.cells();
        for (what, band) in [
            ("center coefficients", &self.center),
            ("west coefficients", &self.west),
            ("east coefficients", &self.east),
            ("south coefficients", &self.south),
            ("north coefficients", &self.north),
        ] {
            check_len(what, n, band.len())?;
        }
        self.resurvey()?;
        Ok(out)
    }

    /// Replace the fixed cells in place.
    pub(crate) fn set_fixed(&mut self, fixed: FixedCells) -> Result<(), Error> {
        check_fixed(self.grid, &fixed)?;
        self.fixed = Some(fixed);
        self.resurvey()
    }

    fn resurvey(&mut self) -> Result<(), Error> {
        let found = match self.survey_bands() {
            Some(found) => found,
            // A coefficient is not finite or a coupling points off the grid: the survey cell
            // by cell names the first one.
            None => survey(self.grid, self.fixed.as_ref(), |i, j| self.coeffs(i, j))?,
        };
        self.rows_sum_to_zero = found.rows_sum_to_zero;
        self.first_nonpositive = found.first_nonpositive.map(|(k, _)| (k, self.center[k]));
        Ok(())
    }
}

/// Whether every entry of `band` is finite (a scan the compiler can vectorise).
fn all_finite<T: Scalar>(band: &[T]) -> bool {
    band.iter().fold(true, |all, v| all & v.is_finite()) // local: a flag
}

impl<T: Scalar> Banded5<T> {
    /// What [`survey`] finds, read from the bands directly (scans the compiler can vectorise),
    /// if every coefficient is finite and no coupling points off the grid; `None` otherwise.
    fn survey_bands(&self) -> Option<Survey> {
        let bands = [
            &self.center,
            &self.west,
            &self.east,
            &self.south,
            &self.north,
        ];
        if !bands.iter().all(|band| all_finite(band)) {
            return None;
        }
        self.survey_finite_bands()
    }

    /// [`survey_bands`](Self::survey_bands) of bands already known to be finite.
    fn survey_finite_bands(&self) -> Option<Survey> {
        let (nx, ny) = (self.grid.nx(), self.grid.ny());
        let zero = T::zero();
        let sides_clear =
            (0..ny).all(|j| self.west[j * nx] == zero && self.east[j * nx + nx - 1] == zero);
        let ends_clear = self.south[..nx].iter().all(|&v| v == zero)
            && self.north[(ny - 1) * nx..].iter().all(|&v| v == zero);
        if !(sides_clear && ends_clear) {
            return None;
        }
        let fixed = self.fixed.as_ref();
        let first_nonpositive = self
            .center
            .iter()
            .enumerate()
            .find(|&(k, &c)| !is_positive(c) && !fixed.is_some_and(|f| f.contains(k)))
            .map(|(k, &c)| (k, to_f64(c)));
        let rows_sum_to_zero = fixed.is_none_or(|f| f.is_empty())
            && (0..self.grid.cells()).all(|k| {
                row_sums_to_zero(Coeffs5 {
                    center: self.center[k],
                    west: self.west[k],
                    east: self.east[k],
                    south: self.south[k],
                    north: self.north[k],
                })
            });
        Some(Survey {
            first_nonpositive,
            rows_sum_to_zero,
        })
    }
}

impl<T: Scalar> Stencil5<T> for Banded5<T> {
    fn grid(&self) -> Grid {
        self.grid
    }

    #[inline]
    fn coeffs(&self, i: usize, j: usize) -> Coeffs5<T> {
        let k = self.grid.index(i, j);
        Coeffs5 {
            center: self.center[k],
            west: self.west[k],
            east: self.east[k],
            south: self.south[k],
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
        for (j, y_row) in rows.zip(y.chunks_exact_mut(nx)) {
            // Each band cut to exactly `nx` entries, so indexing below `nx` needs no checks.
            let (c, w, e, s, n) = (
                &self.center[j * nx..][..nx],
                &self.west[j * nx..][..nx],
                &self.east[j * nx..][..nx],
                &self.south[j * nx..][..nx],
                &self.north[j * nx..][..nx],
            );
            let (south, row, north) = row_neighbourhood(x, first, nx, ny, j);
            row_product(
                |i| Coeffs5 {
                    center: c[i],
                    west: w[i],
                    east: e[i],
                    south: s[i],
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

#[cfg(test)]
mod tests {
    use super::*;

    /// The band scans find what the survey cell by cell finds, and step aside (`None`) for
    /// the cases where the survey must name a cell.
    #[test]
    fn band_survey_agrees_with_cell_survey() {
        let grid = Grid::new(6, 5).unwrap();
        let neumann = |i: usize, j: usize| {
            let mut c = Coeffs5::laplacian(grid, i, j);
            c.center = -(c.west + c.east + c.south + c.north);
            c
        };
        let dirichlet = |i: usize, j: usize| {
            let mut c = Coeffs5::laplacian(grid, i, j);
            if (i, j) == (3, 2) || (i, j) == (0, 4) {
                c.center = -0.5; // non-positive: at a free cell, then at a fixed one
            }
            c
        };
        let fixed = FixedCells::new(grid, [grid.index(0, 4), grid.index(5, 0)]).unwrap();
        let cases = [
            Banded5::from_fn(grid, neumann).unwrap(),
            Banded5::from_fn(grid, dirichlet).unwrap(),
            Banded5::from_fn(grid, dirichlet)
                .unwrap()
                .with_fixed(fixed.clone())
                .unwrap(),
            Banded5::from_fn(grid, neumann)
                .unwrap()
                .with_fixed(fixed)
                .unwrap(),
        ];
        for op in &cases {
            let by_cell = survey(grid, op.fixed.as_ref(), |i, j| op.coeffs(i, j)).unwrap();
            assert_eq!(op.survey_bands(), Some(by_cell));
        }
        assert!(cases[0].survey_bands().unwrap().rows_sum_to_zero);
        assert_eq!(
            cases[1].survey_bands().unwrap().first_nonpositive,
            Some((grid.index(3, 2), -0.5))
        );
        // Left to the survey cell by cell: a coefficient that is not finite, a coupling off
        // the grid on each side.
        for (k, band) in [(7, 0), (12, 1), (17, 2), (3, 3), (26, 4)] {
            let mut op = cases[1].clone();
            let bands = [
                &mut op.center,
                &mut op.west,
                &mut op.east,
                &mut op.south,
                &mut op.north,
            ];
            bands[band][k] = if band == 0 { f64::NAN } else { -1.0 };
            assert_eq!(op.survey_bands(), None, "band {band}, cell {k}");
        }
    }
}

//! `Banded5ByColour`: a 5-point operator stored as five arrays whose rows hold their even
//! columns, then their odd ones.

use std::ops::Range;
use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};

use super::survey;
use super::validate::Survey;
use crate::blocks::{join, threads_for};
use crate::operator::{row_neighbourhood, row_product, row_sums_to_zero};
use crate::operator::{Coeffs5, FixedCells, Stencil5};
use crate::scalar::is_positive;
use crate::space::Threaded;
use crate::{memory, Error, Grid, Scalar};

/// A 5-point operator stored colour by colour: each row of each of the five coefficient arrays
/// holds the row's even columns, then its odd ones. It is what a single-precision multigrid
/// preconditioner reads on the fine grid: built from your `f64` operator in one pass (each
/// coefficient rounded as [`Banded5::cast`](crate::Banded5::cast) rounds it), it takes the place
/// of the natural `f32` copy, and a [`Multigrid`](crate::Multigrid) built on it reads its
/// coefficients in place instead of keeping a reordered copy of its own (20 bytes per cell
/// less, and one pass less over the operator at set-up).
///
/// Any other use sees an ordinary [`Stencil5`]: [`coeffs`](Stencil5::coeffs) and the products
/// are those of the natural copy, bit for bit.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(128, 128)?;
/// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let single = Banded5ByColour::from_stencil(&op)?;
/// let mg = Multigrid::new(&single, MultigridSettings::default())?;
/// let mut pcg = Pcg::new(SinglePrecision::new(single, mg));
/// let mut x = vec![0.0; grid.cells()];
/// let report = pcg.solve(&op, &vec![1.0; grid.cells()], &mut x)?;
/// assert!(report.iterations <= 8);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug, PartialEq)]
pub struct Banded5ByColour<T> {
    grid: Grid,
    /// Center, west, east, south, north, each row as its even columns then its odd ones.
    bands: [Vec<T>; 5],
    fixed: Option<FixedCells>,
    first_nonpositive: Option<(usize, T)>,
    rows_sum_to_zero: bool,
}

/// Where column `i` of a row sits in the row stored by colour (`evens` = the row's number of
/// even columns).
#[inline]
fn place(i: usize, evens: usize) -> usize {
    if i % 2 == 0 {
        i / 2
    } else {
        evens + i / 2
    }
}

/// `row` (natural order) as its even columns, then its odd ones, into `out`.
fn split_by_colour<T: Copy>(row: &[T], out: &mut [T]) {
    let evens = row.len().div_ceil(2);
    let (even, odd) = out.split_at_mut(evens);
    for ((pair, e), o) in row.chunks_exact(2).zip(even.iter_mut()).zip(odd) {
        (*e, *o) = (pair[0], pair[1]);
    }
    if row.len() % 2 == 1 {
        even[evens - 1] = row[row.len() - 1];
    }
}

/// Whether every entry of `v` is finite (a scan the compiler can vectorise).
fn all_finite<T: Scalar>(v: &[T]) -> bool {
    v.iter().fold(true, |all, x| all & x.is_finite()) // local: a flag
}

/// Whether every entry of `v` is positive (a scan the compiler can vectorise).
fn all_positive<T: Scalar>(v: &[T]) -> bool {
    v.iter().fold(true, |all, &x| all & is_positive(x)) // local: a flag
}

/// The coefficients at index `k` of the five arrays (center, west, east, south, north).
#[inline]
fn coeffs_at<T: Copy>([c, w, e, s, n]: [&[T]; 5], k: usize) -> Coeffs5<T> {
    Coeffs5 {
        center: c[k],
        west: w[k],
        east: e[k],
        south: s[k],
        north: n[k],
    }
}

/// Rows of the five arrays being filled.
pub(crate) type Piece<'a, T> = [&'a mut [T]; 5];

/// `f(rows, piece)` on (at most) `pieces` pieces of whole rows (`nx` wide), side by side.
pub(crate) fn in_pieces<T: Send>(
    piece: Piece<'_, T>,
    nx: usize,
    rows: Range<usize>,
    pieces: usize,
    f: &(impl Fn(Range<usize>, Piece<'_, T>) + Sync),
) {
    if pieces <= 1 || rows.len() < 2 {
        f(rows, piece);
        return;
    }
    let mid = rows.start + rows.len() / 2;
    let at = (mid - rows.start) * nx;
    let [c, w, e, s, n] = piece.map(|band| band.split_at_mut(at));
    let low = [c.0, w.0, e.0, s.0, n.0];
    let high = [c.1, w.1, e.1, s.1, n.1];
    let half = pieces / 2;
    join(
        true,
        || in_pieces(low, nx, rows.start..mid, half, f),
        || in_pieces(high, nx, mid..rows.end, pieces - half, f),
    );
}

impl<T: Scalar> Banded5ByColour<T> {
    /// The operator `op` (any scalar type), each coefficient converted to `T` as
    /// [`Banded5::cast`](crate::Banded5::cast) converts it, fixed cells included: one pass over
    /// `op`, in pieces of rows on the threads of the pool.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite) naming the first coefficient that is
    /// not finite in `T` (one that overflows when rounded, say);
    /// [`ErrorKind::OffGridCoupling`](crate::ErrorKind::OffGridCoupling) naming the first edge
    /// cell with a coupling towards a missing neighbour; [`ErrorKind::TooLarge`] if the arrays
    /// cannot be allocated.
    ///
    /// [`ErrorKind::TooLarge`]: crate::ErrorKind::TooLarge
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 3)?;
    /// let op: Banded5<f64> = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// let single: Banded5ByColour<f32> = Banded5ByColour::from_stencil(&op)?;
    /// assert_eq!(single.coeffs(1, 2), op.cast::<f32>()?.coeffs(1, 2));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn from_stencil<U: Scalar, S: Stencil5<U> + ?Sized>(
        op: &S,
    ) -> Result<Banded5ByColour<T>, Error> {
        let grid = op.grid();
        let (nx, ny, n) = (grid.nx(), grid.ny(), grid.cells());
        let mut bands: [Vec<T>; 5] = Default::default();
        for band in &mut bands {
            *band = memory::zeroed("the operator by colour", n)?;
        }
        let fixed = op.fixed();
        // Checked cell by cell as the rows are filled (so the arrays are not read again):
        // every coefficient finite and none towards a missing neighbour, the first free cell
        // whose center is not positive, and whether every row sums to zero.
        let clean = AtomicBool::new(true);
        let sums_vanish = AtomicBool::new(fixed.is_none_or(|f| f.is_empty()));
        let first_nonpositive = AtomicUsize::new(usize::MAX);
        let fill = |rows: Range<usize>, mut piece: Piece<'_, T>| {
            // Each row gathered in the natural order first (coefficients converted as they
            // are read), checked with loops the compiler can vectorise, then split by colour.
            let mut natural: [Vec<T>; 5] = Default::default();
            for row in &mut natural {
                row.resize(nx, T::zero());
            }
            let (mut clear, mut vanish) = (true, sums_vanish.load(Ordering::Relaxed));
            let mut nonpositive = usize::MAX;
            for (r, j) in rows.enumerate() {
                let [cr, wr, er, sr, nr] = &mut natural;
                for i in 0..nx {
                    let c: Coeffs5<T> = op.coeffs(i, j).cast();
                    (cr[i], wr[i], er[i], sr[i], nr[i]) =
                        (c.center, c.west, c.east, c.south, c.north);
                }
                let zero = T::zero();
                let read = [&cr[..], &wr[..], &er[..], &sr[..], &nr[..]];
                clear &= read.iter().all(|row| all_finite(row))
                    && wr[0] == zero
                    && er[nx - 1] == zero
                    && (j > 0 || sr.iter().all(|&v| v == zero))
                    && (j + 1 < ny || nr.iter().all(|&v| v == zero));
                if nonpositive == usize::MAX && !all_positive(cr) {
                    let free = |i: &usize| !fixed.is_some_and(|f| f.contains(i + nx * j));
                    if let Some(i) = (0..nx).filter(free).find(|&i| !is_positive(cr[i])) {
                        nonpositive = i + nx * j;
                    }
                }
                vanish = vanish && (0..nx).all(|i| row_sums_to_zero(coeffs_at(read, i)));
                for (band, row) in piece.iter_mut().zip(&natural) {
                    split_by_colour(row, &mut band[r * nx..][..nx]);
                }
            }
            if !clear {
                clean.store(false, Ordering::Relaxed);
            }
            if !vanish {
                sums_vanish.store(false, Ordering::Relaxed);
            }
            first_nonpositive.fetch_min(nonpositive, Ordering::Relaxed);
        };
        let pieces = threads_for(&Threaded, n).min(MAX_PIECES);
        let [c, w, e, s, no] = &mut bands;
        in_pieces([c, w, e, s, no], nx, 0..ny, pieces, &fill);
        let mut copy = Banded5ByColour {
            grid,
            bands,
            fixed: fixed.cloned(),
            first_nonpositive: None,
            rows_sum_to_zero: false,
        };
        let found = if clean.into_inner() {
            let first = first_nonpositive.into_inner();
            Survey {
                first_nonpositive: (first < n).then_some((first, 0.0)),
                rows_sum_to_zero: sums_vanish.into_inner(),
            }
        } else {
            // The survey cell by cell names the first cell at fault.
            survey(grid, copy.fixed.as_ref(), |i, j| copy.coeffs(i, j))?
        };
        copy.rows_sum_to_zero = found.rows_sum_to_zero;
        copy.first_nonpositive = found.first_nonpositive.map(|(k, _)| {
            let (i, j) = grid.coords(k);
            (k, copy.coeffs(i, j).center)
        });
        Ok(copy)
    }
}

/// At most this many pieces of rows are filled side by side.
const MAX_PIECES: usize = 16;

impl<T: Scalar> Stencil5<T> for Banded5ByColour<T> {
    fn grid(&self) -> Grid {
        self.grid
    }

    #[inline]
    fn coeffs(&self, i: usize, j: usize) -> Coeffs5<T> {
        let nx = self.grid.nx();
        let bands = self.bands.each_ref().map(Vec::as_slice);
        coeffs_at(bands, j * nx + place(i, nx.div_ceil(2)))
    }

    fn fixed(&self) -> Option<&FixedCells> {
        self.fixed.as_ref()
    }

    fn apply_rows(&self, rows: Range<usize>, x: &[T], y: &mut [T]) {
        self.apply_rows_from(rows, 0, x, y);
    }

    fn apply_rows_from(&self, rows: Range<usize>, first: usize, x: &[T], y: &mut [T]) {
        let (nx, ny) = (self.grid.nx(), self.grid.ny());
        let evens = nx.div_ceil(2);
        for (j, y_row) in rows.zip(y.chunks_exact_mut(nx)) {
            let bands = self.bands.each_ref().map(|band| &band[j * nx..][..nx]);
            let (south, row, north) = row_neighbourhood(x, first, nx, ny, j);
            row_product(
                |i| coeffs_at(bands, place(i, evens)),
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

    fn bands_by_colour(&self) -> Option<&[Vec<T>; 5]> {
        Some(&self.bands)
    }
}

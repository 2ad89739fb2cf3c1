//! `.npy` files of per-cell fields, through the `npyz` crate.
//!
//! The file holds a 2-D array of shape `(ny, nx)`, C order, little-endian `'<f8'` (`f64`) or
//! `'<f4'` (`f32`). Reading accepts either byte order and Fortran order too (the values are
//! put back in grid order), and nothing else.

use std::any::TypeId;
use std::fs::File;
use std::io::{self, BufReader, BufWriter};
use std::path::Path;

use npyz::WriterBuilder;

use crate::error::{Error, Location};
use crate::grid::Grid;
use crate::memory;
use crate::scalar::Scalar;

/// What the messages call the values.
const WHAT: &str = "field value";

/// The two element types a file can hold, chosen by `T` (a [`Scalar`] is `f64` or `f32`).
#[derive(Clone, Copy)]
enum Precision {
    F64,
    F32,
}

impl Precision {
    fn of<T: Scalar>() -> Precision {
        if TypeId::of::<T>() == TypeId::of::<f64>() {
            Precision::F64
        } else {
            Precision::F32
        }
    }

    /// The `.npy` type string written for this precision (little-endian, as NumPy writes on
    /// the common little-endian machines: common practice).
    fn descr(self) -> &'static str {
        match self {
            Precision::F64 => "<f8",
            Precision::F32 => "<f4",
        }
    }

    /// Bytes per value.
    fn bytes(self) -> u128 {
        match self {
            Precision::F64 => 8,
            Precision::F32 => 4,
        }
    }

    fn name(self) -> &'static str {
        match self {
            Precision::F64 => "f64",
            Precision::F32 => "f32",
        }
    }
}

/// Write a per-cell field to a `.npy` file at `path` (created or truncated): a 2-D array of
/// shape `(ny, nx)` in C order, element type `'<f8'` for `f64` and `'<f4'` for `f32`, so that
/// in NumPy `a[j, i] == values[i + nx·j]` (row `j` = north index, column `i` = east index).
///
/// Available with the `npy` feature.
///
/// # Errors
///
/// Checked before the file is touched: [`ErrorKind::LengthMismatch`] if `values` does not
/// have one entry per cell of `grid`; [`ErrorKind::NonFinite`] for a NaN or infinite value,
/// naming the first such cell as index and `(i, j)` (a file written here can always be read
/// back by [`read_npy`]). Then [`ErrorKind::Io`] if the file cannot be created or written (a
/// partly written file may be left behind). The error's [context](Error::context) names the
/// file.
///
/// # Example
///
/// ```
/// use quintet::{interop, Grid};
///
/// let grid = Grid::new(3, 2)?;
/// let head: Vec<f64> = (0..grid.cells()).map(|k| 10.0 + k as f64).collect();
/// let path = std::env::temp_dir().join(format!("quintet-doc-write-{}.npy", std::process::id()));
/// interop::write_npy(&path, grid, &head)?;
/// assert_eq!(interop::read_npy::<f64>(&path, grid)?, head);
/// # std::fs::remove_file(&path).ok();
/// # Ok::<(), quintet::Error>(())
/// ```
///
/// [`ErrorKind::LengthMismatch`]: crate::ErrorKind::LengthMismatch
/// [`ErrorKind::NonFinite`]: crate::ErrorKind::NonFinite
/// [`ErrorKind::Io`]: crate::ErrorKind::Io
pub fn write_npy<T: Scalar>(path: impl AsRef<Path>, grid: Grid, values: &[T]) -> Result<(), Error> {
    let path = path.as_ref();
    write(path, grid, values).map_err(|e| e.while_doing(format!("writing {}", path.display())))
}

/// Read a per-cell field from the `.npy` file at `path`, checking it against `grid`: the file
/// must hold a 2-D array of shape `(ny, nx)` of `f64` (`'<f8'` or `'>f8'`) when `T` is `f64`,
/// of `f32` (`'<f4'` or `'>f4'`) when `T` is `f32`, with every value finite. The values come
/// back in grid order, `x[i + nx·j] == a[j, i]`, whether the file is in C or Fortran order.
///
/// No conversion between element types is made: read an `f32` file as `f32` and widen it
/// yourself if you want `f64`.
///
/// Available with the `npy` feature.
///
/// # Errors
///
/// * [`ErrorKind::Io`]: the file cannot be opened or read (the operating system's message is
///   kept).
/// * [`ErrorKind::FileFormat`]: not a `.npy` file, another element type, an array that is not
///   2-D, or fewer values than the header promises.
/// * [`ErrorKind::GridMismatch`]: a 2-D array whose shape is not `(ny, nx)` (the message
///   says when it looks transposed).
/// * [`ErrorKind::NonFinite`]: a NaN or infinite value, naming the first such cell in grid
///   order as index and `(i, j)`.
/// * [`ErrorKind::TooLarge`]: the memory for the values is not granted.
///
/// The error's [context](Error::context) names the file.
///
/// # Example
///
/// ```
/// use quintet::{interop, ErrorKind, Grid};
///
/// let grid = Grid::new(4, 3)?;
/// let temperature = vec![293.15_f32; grid.cells()];
/// let path = std::env::temp_dir().join(format!("quintet-doc-read-{}.npy", std::process::id()));
/// interop::write_npy(&path, grid, &temperature)?;
///
/// assert_eq!(interop::read_npy::<f32>(&path, grid)?, temperature);
/// // The wrong element type or grid is an error, not a silent conversion.
/// assert_eq!(interop::read_npy::<f64>(&path, grid).unwrap_err().kind(), ErrorKind::FileFormat);
/// let other = Grid::new(3, 4)?;
/// assert_eq!(interop::read_npy::<f32>(&path, other).unwrap_err().kind(), ErrorKind::GridMismatch);
/// # std::fs::remove_file(&path).ok();
/// # Ok::<(), quintet::Error>(())
/// ```
///
/// [`ErrorKind::Io`]: crate::ErrorKind::Io
/// [`ErrorKind::FileFormat`]: crate::ErrorKind::FileFormat
/// [`ErrorKind::GridMismatch`]: crate::ErrorKind::GridMismatch
/// [`ErrorKind::NonFinite`]: crate::ErrorKind::NonFinite
/// [`ErrorKind::TooLarge`]: crate::ErrorKind::TooLarge
pub fn read_npy<T: Scalar>(path: impl AsRef<Path>, grid: Grid) -> Result<Vec<T>, Error> {
    let path = path.as_ref();
    read(path, Some(grid))
        .map(|(_, values)| values)
        .map_err(|e| e.while_doing(format!("reading {}", path.display())))
}

/// Read a per-cell field from the `.npy` file at `path` together with the grid its shape
/// gives: a 2-D array of shape `(ny, nx)` is a grid of `nx × ny` cells. Everything else is as
/// in [`read_npy`].
///
/// Available with the `npy` feature.
///
/// # Errors
///
/// As [`read_npy`], with no grid to mismatch; an array with an axis of length zero is
/// [`ErrorKind::InvalidGrid`], one with more cells than [`MAX_CELLS`] is
/// [`ErrorKind::TooLarge`].
///
/// # Example
///
/// ```
/// use quintet::{interop, Grid};
///
/// let grid = Grid::new(5, 2)?;
/// let path = std::env::temp_dir().join(format!("quintet-doc-grid-{}.npy", std::process::id()));
/// interop::write_npy(&path, grid, &vec![1.0_f64; grid.cells()])?;
///
/// let (found, values) = interop::read_npy_grid::<f64>(&path)?;
/// assert_eq!((found.nx(), found.ny()), (5, 2));
/// assert_eq!(values.len(), 10);
/// # std::fs::remove_file(&path).ok();
/// # Ok::<(), quintet::Error>(())
/// ```
///
/// [`ErrorKind::InvalidGrid`]: crate::ErrorKind::InvalidGrid
/// [`ErrorKind::TooLarge`]: crate::ErrorKind::TooLarge
/// [`MAX_CELLS`]: crate::MAX_CELLS
pub fn read_npy_grid<T: Scalar>(path: impl AsRef<Path>) -> Result<(Grid, Vec<T>), Error> {
    let path = path.as_ref();
    read(path, None).map_err(|e| e.while_doing(format!("reading {}", path.display())))
}

fn write<T: Scalar>(path: &Path, grid: Grid, values: &[T]) -> Result<(), Error> {
    if values.len() != grid.cells() {
        return Err(Error::length("field", grid.cells(), values.len()));
    }
    if let Some(k) = values.iter().position(|v| !v.is_finite()) {
        return Err(Error::non_finite(WHAT, Location::on(grid, k)));
    }
    let precision = Precision::of::<T>();
    let file = File::create(path).map_err(|e| Error::io(&e))?;
    let out = BufWriter::new(file);
    // A `Scalar` is `f64` or `f32`, so each conversion below is the identity.
    match precision {
        Precision::F64 => write_as(
            out,
            grid,
            precision,
            values.iter().map(|v| v.to_f64().unwrap_or(f64::NAN)),
        ),
        Precision::F32 => write_as(
            out,
            grid,
            precision,
            values.iter().map(|v| v.to_f32().unwrap_or(f32::NAN)),
        ),
    }
}

fn write_as<F: npyz::Serialize>(
    out: BufWriter<File>,
    grid: Grid,
    precision: Precision,
    values: impl Iterator<Item = F>,
) -> Result<(), Error> {
    let type_str: npyz::TypeStr = precision
        .descr()
        .parse()
        .map_err(|e| Error::file_format(format!("cannot describe the element type: {e}")))?;
    let shape = [grid.ny() as u64, grid.nx() as u64];
    let mut writer = npyz::WriteOptions::new()
        .dtype(npyz::DType::new_scalar(type_str))
        .shape(&shape)
        .writer(out)
        .begin_nd()
        .map_err(|e| Error::io(&e))?;
    writer.extend(values).map_err(|e| Error::io(&e))?;
    // `finish` checks the count against the shape and flushes the buffer.
    writer.finish().map_err(|e| Error::io(&e))
}

fn read<T: Scalar>(path: &Path, expected: Option<Grid>) -> Result<(Grid, Vec<T>), Error> {
    let file = File::open(path).map_err(|e| Error::io(&e))?;
    let file_bytes = file.metadata().map_err(|e| Error::io(&e))?.len();
    let npy = npyz::NpyFile::new(BufReader::new(file)).map_err(|e| header_error(&e))?;

    let (rows, cols) = match *npy.shape() {
        [rows, cols] => (rows, cols),
        ref other => {
            return Err(Error::file_format(format!(
                "the file holds an array of shape {}; a per-cell field needs 2 axes, (ny, nx)",
                tuple(other)
            )))
        }
    };
    let grid = match expected {
        Some(grid) if (rows, cols) == (grid.ny() as u64, grid.nx() as u64) => grid,
        Some(grid) => return Err(Error::field_shape(grid, (rows, cols))),
        None => {
            // A length beyond `usize` is beyond `MAX_CELLS` too; `Grid::new` says so.
            let nx = usize::try_from(cols).unwrap_or(usize::MAX);
            let ny = usize::try_from(rows).unwrap_or(usize::MAX);
            Grid::new(nx, ny)?
        }
    };
    let values = match Precision::of::<T>() {
        Precision::F64 => read_as::<f64, T, _>(npy, grid, file_bytes, Precision::F64)?,
        Precision::F32 => read_as::<f32, T, _>(npy, grid, file_bytes, Precision::F32)?,
    };
    if let Some(k) = values.iter().position(|v| !v.is_finite()) {
        return Err(Error::non_finite(WHAT, Location::on(grid, k)));
    }
    Ok((grid, values))
}

/// Read the values as `F` (the file's element type, equal to `T`) into grid order.
fn read_as<F, T, R>(
    npy: npyz::NpyFile<R>,
    grid: Grid,
    file_bytes: u64,
    precision: Precision,
) -> Result<Vec<T>, Error>
where
    F: npyz::Deserialize + Scalar,
    T: Scalar,
    R: io::Read,
{
    let found = npy.dtype().descr();
    let fortran = npy.order() == npyz::Order::Fortran;
    let reader = npy.data::<F>().map_err(|_| {
        Error::file_format(format!(
            "the file holds values of type {found}; {} values ('{}' in either byte order) were asked for",
            precision.name(),
            precision.descr()
        ))
    })?;
    let cells = grid.cells();
    // A header may promise more values than the file holds: say so before reserving memory
    // for them.
    let needed = (cells as u128) * precision.bytes();
    if needed > u128::from(file_bytes) {
        return Err(Error::file_format(format!(
            "the file has {file_bytes} bytes, fewer than the {needed} that {cells} values of {} need",
            precision.name()
        )));
    }
    let mut stored = memory::with_capacity("field", cells)?;
    for (n, value) in reader.enumerate() {
        let value = value.map_err(|e| data_error(&e, n, cells))?;
        // `F` and `T` are the same type, so the conversion is exact.
        stored.push(T::from(value).unwrap_or_else(T::nan));
    }
    if stored.len() != cells {
        return Err(Error::file_format(format!(
            "the file holds {} values, and its header promises {cells}",
            stored.len()
        )));
    }
    if !fortran {
        // C order stores row j (north) after row j − 1: entry k is cell k.
        return Ok(stored);
    }
    // Fortran order stores column i (east) after column i − 1: cell (i, j) is entry j + ny·i.
    let (nx, ny) = (grid.nx(), grid.ny());
    let mut values = memory::with_capacity("field", cells)?;
    values.extend((0..cells).map(|k| stored[k / nx + ny * (k % nx)]));
    Ok(values)
}

/// An error while reading the header: bad contents are a format error, the rest is I/O.
fn header_error(err: &io::Error) -> Error {
    match err.kind() {
        io::ErrorKind::InvalidData | io::ErrorKind::UnexpectedEof => {
            Error::file_format(format!("not a readable .npy file: {err}"))
        }
        _ => Error::io(err),
    }
}

/// An error while reading value `n` of `cells`: a file that ends early is a format error.
fn data_error(err: &io::Error, n: usize, cells: usize) -> Error {
    match err.kind() {
        io::ErrorKind::UnexpectedEof => Error::file_format(format!(
            "the file ends after {n} of the {cells} values its header promises"
        )),
        io::ErrorKind::InvalidData => {
            Error::file_format(format!("value {n} cannot be read: {err}"))
        }
        _ => Error::io(err),
    }
}

/// `shape` as NumPy prints it: `(6,)`, `(2, 3, 4)`, `()`.
fn tuple(shape: &[u64]) -> String {
    match shape {
        [one] => format!("({one},)"),
        _ => {
            let parts: Vec<String> = shape.iter().map(u64::to_string).collect();
            format!("({})", parts.join(", "))
        }
    }
}

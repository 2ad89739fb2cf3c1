//! Values given once for every cell ([`Field`]) or once for every target of a condition
//! ([`Profile`]): either one uniform value or one value each.

use crate::operator::check_len;
use crate::{Error, Grid};

/// A per-cell quantity: one value for every cell, or a vector of `grid.cells()` values in grid
/// order (`k = i + nx·j`). The unit is that of the quantity it stands for (see the table in
/// the [module docs](crate::model)).
///
/// `f64` and `Vec<f64>` convert into it, so `1e-4` or `vec![...]` can be passed wherever a
/// `Field` is asked for.
///
/// # Example
///
/// ```
/// use quintet::model::Field;
///
/// let uniform: Field = 2.5.into();
/// let zoned: Field = vec![1.0, 1.0, 10.0, 10.0].into();
/// assert_eq!(uniform.at(3), 2.5);
/// assert_eq!(zoned.at(2), 10.0);
/// ```
#[derive(Clone, Debug, PartialEq)]
pub enum Field {
    /// The same value in every cell.
    Uniform(f64),
    /// One value per cell, in grid order.
    PerCell(Vec<f64>),
}

impl Field {
    /// The value at cell `k` (for a [`Field::PerCell`] shorter than `k`, NaN; lengths are
    /// checked when a model is built, so this does not happen there).
    ///
    /// ```
    /// assert_eq!(quintet::model::Field::Uniform(3.0).at(1_000), 3.0);
    /// ```
    #[inline]
    pub fn at(&self, k: usize) -> f64 {
        match self {
            Field::Uniform(v) => *v,
            Field::PerCell(values) => values.get(k).copied().unwrap_or(f64::NAN),
        }
    }

    /// A field with the value `f(i, j)` at cell `(i, j)`.
    ///
    /// ```
    /// use quintet::{model::Field, Grid};
    /// let grid = Grid::new(3, 2)?;
    /// let k = Field::from_fn(grid, |i, _| if i < 2 { 1e-4 } else { 1e-6 });
    /// assert_eq!(k.at(grid.index(2, 1)), 1e-6);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn from_fn(grid: Grid, mut f: impl FnMut(usize, usize) -> f64) -> Field {
        Field::PerCell(
            (0..grid.cells())
                .map(|k| {
                    let (i, j) = grid.coords(k);
                    f(i, j)
                })
                .collect(),
        )
    }

    /// Check that a per-cell field has one value per cell of `grid`.
    pub(crate) fn check_len(&self, what: &'static str, grid: Grid) -> Result<(), Error> {
        match self {
            Field::Uniform(_) => Ok(()),
            Field::PerCell(values) => check_len(what, grid.cells(), values.len()),
        }
    }
}

impl From<f64> for Field {
    fn from(v: f64) -> Field {
        Field::Uniform(v)
    }
}

impl From<Vec<f64>> for Field {
    fn from(values: Vec<f64>) -> Field {
        Field::PerCell(values)
    }
}

/// The values of a condition along its targets: one value for all of them, or one each (in the
/// order of the cells along an edge, west to east or south to north, or in the order the
/// cells were listed).
///
/// # Example
///
/// ```
/// use quintet::model::Profile;
///
/// let level: Profile = 12.0.into();
/// let varying: Profile = vec![10.0, 11.0, 12.0].into();
/// assert_eq!(level.at(2), 12.0);
/// assert_eq!(varying.at(1), 11.0);
/// ```
#[derive(Clone, Debug, PartialEq)]
pub enum Profile {
    /// The same value at every target.
    Uniform(f64),
    /// One value per target, in target order.
    PerTarget(Vec<f64>),
}

impl Profile {
    /// The value at target number `n` (NaN past the end of a [`Profile::PerTarget`]).
    ///
    /// ```
    /// assert_eq!(quintet::model::Profile::PerTarget(vec![1.0, 2.0]).at(1), 2.0);
    /// ```
    #[inline]
    pub fn at(&self, n: usize) -> f64 {
        match self {
            Profile::Uniform(v) => *v,
            Profile::PerTarget(values) => values.get(n).copied().unwrap_or(f64::NAN),
        }
    }
}

impl From<f64> for Profile {
    fn from(v: f64) -> Profile {
        Profile::Uniform(v)
    }
}

impl From<Vec<f64>> for Profile {
    fn from(values: Vec<f64>) -> Profile {
        Profile::PerTarget(values)
    }
}

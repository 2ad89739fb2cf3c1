//! [`CapacityTerm`]: the storage term of a backward-Euler step, for a time loop of your own.

use crate::error::Location;
use crate::operator::check_len;
use crate::scalar::{is_positive, to_f64};
use crate::{Error, Grid, Scalar};

/// The storage term of one backward-Euler time step, `C/Δt` per cell, for a time loop you
/// write yourself around your own arrays.
///
/// With the heat capacity of each cell `C = ρ·c·V` (J/K; for groundwater, specific storage
/// times volume, m²) and the step `Δt`, backward Euler turns the steady balance
/// `a_P·φ_P = Σ a_nb·φ_nb + b` into
///
/// ```text
/// (a_P + C/Δt)·φ_P = Σ a_nb·φ_nb + b + (C/Δt)·φ_P_old
/// ```
///
/// [`add_to_center`](CapacityTerm::add_to_center) writes the new center `a_P + C/Δt` (once,
/// or whenever `Δt` changes), and [`add_to_rhs`](CapacityTerm::add_to_rhs) the new right-hand
/// side `b + (C/Δt)·φ_old` (every step), both into arrays you own: nothing is allocated, so a
/// step of your loop costs the solve and one pass over four arrays. The same term gives the
/// storage line of a step's budget ([`SystemBudget::storage`](crate::SystemBudget::storage)).
///
/// Backward Euler is first order in time and free of oscillations for any `Δt`; it is the
/// scheme of [`model::TimeScheme::BackwardEuler`](crate::model::TimeScheme::BackwardEuler).
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// // A row of 50 cells of 1 cm: steel (k = 45 W/(m·K), ρc = 3.6e6 J/(m³·K)) in a bar of
/// // 1 cm², the west end held at 100 °C from t = 0, the rest starting at 20 °C.
/// let grid = Grid::new(50, 1)?;
/// let n = grid.cells();
/// let (dx, area) = (0.01, 1e-4);
/// let g = 45.0 * area / dx; // conductance between neighbours, W/K
/// let a_w: Vec<f64> = (0..n).map(|i| if i > 0 { g } else { 0.0 }).collect();
/// let a_e: Vec<f64> = (0..n).map(|i| if i + 1 < n { g } else { 0.0 }).collect();
/// let zero = vec![0.0; n];
/// let a_p: Vec<f64> = (0..n).map(|k| a_w[k] + a_e[k]).collect();
/// let b = vec![0.0; n];
/// let heat_capacity = vec![3.6e6 * dx * area; n]; // J/K per cell
///
/// let storage = CapacityTerm::new(grid, &heat_capacity, 10.0)?; // Δt = 10 s
/// let mut center = vec![0.0; n];
/// storage.add_to_center(&a_p, &mut center)?;
/// let hot_end = FixedCells::new(grid, [0])?;
/// let op = Banded5View::from_finite_volume(grid, &center, &a_w, &a_e, &zero, &zero)?.with_fixed(&hot_end)?;
///
/// let mut solver = Pcg::new(Jacobi::new(&op)?);
/// let mut ws = Workspace::new();
/// let (mut t, mut rhs) = (vec![20.0; n], vec![0.0; n]);
/// t[0] = 100.0;
/// for _ in 0..60 {
///     storage.add_to_rhs(&b, &t, &mut rhs)?; // b + C/Δt·φ_old, from the current t
///     solver.solve_with(&op, &rhs, &mut t, &mut ws)?; // t becomes the new φ
/// }
/// assert!(t[1] > t[5] && t[5] > t[20] && t[20] > 20.0);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Copy, Debug)]
pub struct CapacityTerm<'a, T> {
    grid: Grid,
    capacity: &'a [T],
    dt: T,
}

impl<'a, T: Scalar> CapacityTerm<'a, T> {
    /// The term for cells of heat (or water) capacity `capacity` (one entry per cell, finite
    /// and ≥ 0) and the time step `dt` (finite and > 0, in the time unit of your flows).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) for a `capacity` of the
    /// wrong length, [`ErrorKind::InvalidProperty`](crate::ErrorKind::InvalidProperty) naming
    /// the first cell whose capacity is negative or not finite,
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) for a bad `dt`.
    ///
    /// ```
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 1)?;
    /// assert!(CapacityTerm::new(grid, &[1.0, 2.0, 0.0], 0.5).is_ok());
    /// let err = CapacityTerm::new(grid, &[1.0, -2.0, 0.0], 0.5).unwrap_err();
    /// assert_eq!((err.kind(), err.location().map(|at| at.cell)), (ErrorKind::InvalidProperty, Some(1)));
    /// assert_eq!(CapacityTerm::new(grid, &[1.0; 3], 0.0).unwrap_err().kind(), ErrorKind::InvalidSetting);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(grid: Grid, capacity: &'a [T], dt: T) -> Result<CapacityTerm<'a, T>, Error> {
        check_len("capacity", grid.cells(), capacity.len())?;
        if !(dt.is_finite() && is_positive(dt)) {
            return Err(Error::setting(
                "time step",
                to_f64(dt),
                "a finite value > 0",
            ));
        }
        if let Some(k) = capacity
            .iter()
            .position(|&c| !(c.is_finite() && c >= T::zero()))
        {
            return Err(Error::property(
                "capacity",
                Location::on(grid, k),
                to_f64(capacity[k]),
                "finite and >= 0",
            ));
        }
        Ok(CapacityTerm { grid, capacity, dt })
    }

    /// `C/Δt` of cell `k`, the coefficient added to its center.
    #[inline]
    pub(crate) fn rate(&self, k: usize) -> T {
        self.capacity[k] / self.dt
    }

    /// `out = center + C/Δt`, cell by cell: the center of the step operator, from the steady
    /// center `center` (the finite-volume `a_P`, or the operator's own center: the term is the
    /// same in both sign conventions). `center` and `out` may not be the same array; to
    /// update in place, keep the steady center and write the step center elsewhere.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) unless both arrays have
    /// one entry per cell.
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// let grid = Grid::new(2, 1)?;
    /// let term = CapacityTerm::new(grid, &[30.0, 6.0], 3.0)?;
    /// let mut center = vec![0.0; 2];
    /// term.add_to_center(&[1.0, 1.0], &mut center)?;
    /// assert_eq!(center, vec![11.0, 3.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn add_to_center(&self, center: &[T], out: &mut [T]) -> Result<(), Error> {
        let n = self.grid.cells();
        check_len("center", n, center.len())?;
        check_len("out", n, out.len())?;
        for ((o, &c), &cap) in out.iter_mut().zip(center).zip(self.capacity) {
            *o = c + cap / self.dt;
        }
        Ok(())
    }

    /// `out = b + (C/Δt)·φ_old`, cell by cell: the right-hand side of the step from the
    /// sources `b` and the solution at the start of the step. Allocates nothing.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) unless the three arrays
    /// have one entry per cell.
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// let grid = Grid::new(2, 1)?;
    /// let term = CapacityTerm::new(grid, &[30.0, 6.0], 3.0)?;
    /// let mut rhs = vec![0.0; 2];
    /// term.add_to_rhs(&[1.0, 0.0], &[2.0, 5.0], &mut rhs)?;
    /// assert_eq!(rhs, vec![21.0, 10.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn add_to_rhs(&self, b: &[T], phi_old: &[T], out: &mut [T]) -> Result<(), Error> {
        let n = self.grid.cells();
        check_len("b", n, b.len())?;
        check_len("phi_old", n, phi_old.len())?;
        check_len("out", n, out.len())?;
        for (((o, &bk), &old), &cap) in out.iter_mut().zip(b).zip(phi_old).zip(self.capacity) {
            *o = bk + cap / self.dt * old;
        }
        Ok(())
    }

    pub(crate) fn grid(&self) -> Grid {
        self.grid
    }
}

//! [`SteadySystem`]: an assembled steady model, ready for any driver, with its budget.

use super::assemble::{Assembly, Region};
use super::book::{Book, Forcing};
use super::budget::Budget;
use super::builder::SingularPolicy;
use crate::stencil::check_len;
use crate::{Banded5, Error, FixedCells, Grid, IterativeSolver, Report, Stencil5, Workspace};

/// Sources of a floating region must balance to this fraction of their total magnitude.
pub(crate) const BALANCE_TOLERANCE: f64 = 1e-6;

/// An assembled steady model: the symmetric operator `A` (a [`Banded5`] with its fixed cells),
/// the right-hand side `q` of `A·φ = q`, and the bookkeeping for the budget.
///
/// Row `k` of the operator is the balance of cell `k`'s control volume, in W or m³/s:
/// conduction to the neighbours through the face conductances, plus every exchange
/// conductance on the cell, equals the sources in the cell plus the exchanges' conductance ×
/// outside value. Prescribed cells and inactive cells are fixed cells of the operator. The
/// free part is symmetric positive definite whenever every connected region reaches a
/// prescribed value or an exchange, which [`Model::assemble`](super::Model::assemble) checks.
///
/// Use [`solve`](SteadySystem::solve) with any [`IterativeSolver`], or take
/// [`operator`](SteadySystem::operator) and [`rhs`](SteadySystem::rhs) to a driver directly
/// after [`prepare`](SteadySystem::prepare) has written the fixed values into `x`.
///
/// # Example
///
/// ```
/// use quintet::model::{Conductivity, Geometry, Model};
/// use quintet::prelude::*;
///
/// // A 1 m x 0.5 m steel plate (k = 45 W/(m·K)), 10 mm thick, west edge at 80 °C,
/// // east edge cooled by air at 20 °C with h = 15 W/(m²·K).
/// let geometry = Geometry::cell_centered(40, 20, 0.025, 0.025, 0.01)?;
/// let mut model = Model::new(geometry, Conductivity::isotropic(45.0))?;
/// model.prescribe_edge("hot end", Side::West, 80.0)?;
/// model.edge_exchange("air", Side::East, 15.0, 20.0)?;
/// let system = model.assemble()?;
/// check_symmetry(system.operator(), 1e-15)?;
///
/// let mut t = system.initial_solution(20.0);
/// let mut pcg = Pcg::new(Jacobi::new(system.operator())?);
/// system.solve(&mut pcg, &mut t, &mut Workspace::new())?;
/// assert!(t.iter().all(|&v| v > 20.0 && v < 80.0));
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct SteadySystem {
    operator: Banded5<f64>,
    rhs: Vec<f64>,
    book: Book,
    inactive: Vec<usize>,
    inactive_value: f64,
    regions: Vec<Region>,
    volumes: Vec<f64>,
    mean: f64,
}

impl SteadySystem {
    pub(crate) fn from_assembly(
        assembly: Assembly,
        policy: SingularPolicy,
    ) -> Result<SteadySystem, Error> {
        let Assembly {
            grid,
            bands,
            mut fixed,
            book,
            inactive,
            inactive_value,
            floating,
            volumes,
            ..
        } = assembly;
        let mean = match (policy, floating.first()) {
            (_, None) => 0.0,
            (SingularPolicy::Reject, Some(region)) => {
                let cell = region.cells[0];
                let (i, j) = grid.coords(cell);
                return Err(Error::FloatingRegion {
                    cell,
                    i,
                    j,
                    cells: region.cells.len(),
                });
            }
            (SingularPolicy::FixMean(mean), Some(_)) => {
                if !mean.is_finite() {
                    return Err(Error::InvalidSetting {
                        name: "fixed mean",
                        value: mean,
                        allowed: "a finite value",
                    });
                }
                // Pin one cell per region; its equation holds once the sources balance.
                fixed.extend(floating.iter().map(|r| r.cells[0]));
                mean
            }
        };
        let [center, west, east, south, north] = bands;
        let operator = Banded5::new(grid, center, west, east, south, north)?
            .with_fixed(FixedCells::new(grid, fixed)?)?;
        let mut system = SteadySystem {
            operator,
            rhs: vec![0.0; grid.cells()],
            book,
            inactive,
            inactive_value,
            regions: floating,
            volumes,
            mean,
        };
        system.refresh_rhs()?;
        Ok(system)
    }

    /// The operator: symmetric, with prescribed and inactive cells as fixed cells.
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side, Stencil5};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 3, 1.0, 1.0, 1.0)?, Conductivity::isotropic(2.0))?;
    /// # model.prescribe_edge("wall", Side::West, 0.0)?;
    /// let system = model.assemble()?;
    /// assert_eq!(system.operator().coeffs(1, 1).east, -2.0); // k·b·L/d = 2·1·1/1
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn operator(&self) -> &Banded5<f64> {
        &self.operator
    }

    /// The right-hand side (W or m³/s per cell; zero at fixed cells).
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_cells("end", [0], 0.0)?;
    /// model.point_source("heater", 2, 7.5)?;
    /// assert_eq!(model.assemble()?.rhs()[2], 7.5);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn rhs(&self) -> &[f64] {
        &self.rhs
    }

    /// The grid.
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 2, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_edge("wall", Side::West, 0.0)?;
    /// assert_eq!(model.assemble()?.grid().cells(), 6);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn grid(&self) -> Grid {
        self.operator.grid()
    }

    /// A solution vector to start from: prescribed values at prescribed cells, the inactive
    /// value at inactive cells, and `start` everywhere else.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.prescribe_cells("end", [0], 5.0)?;
    /// assert_eq!(model.assemble()?.initial_solution(1.0), vec![5.0, 1.0, 1.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn initial_solution(&self, start: f64) -> Vec<f64> {
        let mut x = vec![start; self.grid().cells()];
        self.write_fixed(&mut x);
        x
    }

    /// Write the prescribed and inactive values into `x` (the other cells keep their values, a
    /// warm start).
    ///
    /// # Errors
    ///
    /// [`Error::LengthMismatch`] unless `x` has one entry per cell.
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.prescribe_cells("end", [2], 5.0)?;
    /// let system = model.assemble()?;
    /// let mut x = vec![0.0; 3];
    /// system.prepare(&mut x)?;
    /// assert_eq!(x, vec![0.0, 0.0, 5.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn prepare(&self, x: &mut [f64]) -> Result<(), Error> {
        check_len("x", self.grid().cells(), x.len())?;
        self.write_fixed(x);
        Ok(())
    }

    /// Prepare `x` and solve with `solver`, using `ws` as scratch. For a problem assembled
    /// with [`SingularPolicy::FixMean`], each floating region is then shifted to the mean.
    ///
    /// # Errors
    ///
    /// [`Error::LengthMismatch`], and whatever the driver returns (the last iterate is then
    /// in `x`).
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side, Cg, Workspace};
    /// # let mut model = Model::new(Geometry::cell_centered(8, 8, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_edge("wall", Side::West, 0.0)?;
    /// # model.volumetric_source("q", 1.0)?;
    /// let system = model.assemble()?;
    /// let mut x = system.initial_solution(0.0);
    /// let report = system.solve(&mut Cg::default(), &mut x, &mut Workspace::new())?;
    /// assert!(report.converged());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn solve<S: IterativeSolver<f64>>(
        &self,
        solver: &mut S,
        x: &mut [f64],
        ws: &mut Workspace<f64>,
    ) -> Result<Report, Error> {
        self.prepare(x)?;
        let report = solver.solve_with(&self.operator, &self.rhs, x, ws)?;
        self.shift_regions(x);
        Ok(report)
    }

    /// The flow budget of solution `x`: one line per condition, in W or m³/s.
    ///
    /// # Errors
    ///
    /// [`Error::LengthMismatch`] unless `x` has one entry per cell.
    ///
    /// ```
    /// # use quintet::{model::{Conductivity, Geometry, Model}, Side, Cg, SolveOptions, Workspace};
    /// # let mut model = Model::new(Geometry::cell_centered(8, 8, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.prescribe_edge("wall", Side::West, 0.0)?;
    /// model.volumetric_source("generation", 1.0)?;
    /// let system = model.assemble()?;
    /// let mut x = system.initial_solution(0.0);
    /// let mut cg = Cg::default().with_options(SolveOptions::default().tolerance(1e-12));
    /// system.solve(&mut cg, &mut x, &mut Workspace::new())?;
    /// let budget = system.budget(&x)?;
    /// assert_eq!(budget.total_in, 64.0);
    /// assert!(budget.discrepancy_percent().abs() < 1e-8);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn budget(&self, x: &[f64]) -> Result<Budget, Error> {
        check_len("x", self.grid().cells(), x.len())?;
        Ok(self.book.steady_budget(x))
    }

    /// Change condition levels (outside values, prescribed values, rates) through a
    /// [`Forcing`] and rebuild the right-hand side; the operator is unchanged.
    ///
    /// # Errors
    ///
    /// Whatever `change` returns, and [`Error::UnbalancedSources`] if a floating region's
    /// sources no longer balance (the levels are changed all the same).
    ///
    /// ```
    /// # use quintet::model::{Conductivity, Geometry, Model};
    /// # let mut model = Model::new(Geometry::cell_centered(3, 1, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// # model.prescribe_cells("end", [0], 0.0)?;
    /// let well = model.point_source("well", 2, -1.0)?;
    /// let mut system = model.assemble()?;
    /// system.force(|f| f.set(well, -2.0))?;
    /// assert_eq!(system.rhs()[2], -2.0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn force(
        &mut self,
        change: impl FnOnce(&mut Forcing<'_>) -> Result<(), Error>,
    ) -> Result<(), Error> {
        let result = change(&mut Forcing {
            book: &mut self.book,
        });
        self.refresh_rhs()?;
        result
    }

    /// Number of floating regions whose mean is held by [`SingularPolicy::FixMean`].
    ///
    /// ```
    /// use quintet::model::{Conductivity, Geometry, Model, SingularPolicy};
    /// let mut model = Model::new(Geometry::cell_centered(3, 3, 1.0, 1.0, 1.0)?, Conductivity::isotropic(1.0))?;
    /// model.set_singular_policy(SingularPolicy::FixMean(0.0));
    /// assert_eq!(model.assemble()?.floating_regions(), 1);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn floating_regions(&self) -> usize {
        self.regions.len()
    }

    fn write_fixed(&self, x: &mut [f64]) {
        self.book.write_fixed(x);
        for &k in &self.inactive {
            x[k] = self.inactive_value;
        }
    }

    fn refresh_rhs(&mut self) -> Result<(), Error> {
        self.book.fill_rhs(&mut self.rhs);
        for region in &self.regions {
            let net: f64 = region.cells.iter().map(|&k| self.rhs[k]).sum();
            let total: f64 = region.cells.iter().map(|&k| self.rhs[k].abs()).sum();
            if net.abs() > BALANCE_TOLERANCE * total {
                let cell = region.cells[0];
                let (i, j) = self.grid().coords(cell);
                return Err(Error::UnbalancedSources {
                    cell,
                    i,
                    j,
                    net_inflow: net,
                    total,
                });
            }
        }
        Ok(())
    }

    fn shift_regions(&self, x: &mut [f64]) {
        for region in &self.regions {
            let (mut vx, mut v) = (0.0, 0.0);
            for &k in &region.cells {
                vx += self.volumes[k] * x[k];
                v += self.volumes[k];
            }
            let shift = self.mean - vx / v;
            for &k in &region.cells {
                x[k] += shift;
            }
        }
    }
}

//! Successive over-relaxation (SOR), lexicographic or red-black; ω = 1 is Gauss–Seidel.

use std::fmt;

use crate::iterate::{run, Breakdown, Context, Method, Requires, Residual, Step, Task};
use crate::iterate::{IterativeSolver, NameCache, SolveOptions, Workspace};
use crate::operator::Stencil5;
use crate::{Error, LinearOperator, Progress, Report, Scalar};

/// The order in which an SOR sweep visits the cells.
///
/// ```
/// assert_eq!(quintet::SweepOrder::default(), quintet::SweepOrder::Lexicographic);
/// assert_eq!(quintet::SweepOrder::RedBlack.to_string(), "red-black");
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Default)]
pub enum SweepOrder {
    /// Cell by cell in index order: row by row from the south, west to east in each row.
    #[default]
    Lexicographic,
    /// All cells with even `i + j` first, then all with odd `i + j` (a checkerboard).
    RedBlack,
}

impl fmt::Display for SweepOrder {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.pad(match self {
            SweepOrder::Lexicographic => "lexicographic",
            SweepOrder::RedBlack => "red-black",
        })
    }
}

/// Successive over-relaxation: each free cell in turn is set to
/// `x_k ← (1−ω)·x_k + ω·(b_k − Σ a_nb·x_nb) / a_k`, with the newest neighbour values.
///
/// `ω = 1` is Gauss–Seidel. For the model problem the best factor is
/// `ω_opt = 2/(1 + sin πh)`, and with it the sweep count grows as `h⁻¹` instead of Gauss–Seidel's
/// `h⁻²` (Young 1950); [`estimate_relaxation`](crate::estimate_relaxation) estimates it for a
/// symmetric operator (and answers ω = 1 for a diagonally dominant non-symmetric one, where
/// Young's formula does not hold). SOR needs positive centers, not symmetry. The residual is recomputed from `x`
/// after every sweep (one extra matrix–vector product), so the monitor sees true residuals.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(31, 31)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let omega = 2.0 / (1.0 + (std::f64::consts::PI / 32.0).sin());
/// let mut sor = Sor::new(omega)?.ordering(SweepOrder::RedBlack);
/// let mut x = vec![0.0; grid.cells()];
/// let report = sor.solve(&op, &vec![1.0; grid.cells()], &mut x)?;
/// assert!(report.iterations < 200);
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Sor {
    omega: f64,
    order: SweepOrder,
    /// Stopping rule (the residual refresh setting does not apply: SOR residuals are always
    /// true residuals).
    pub options: SolveOptions,
    name: NameCache,
}

impl Sor {
    /// SOR with relaxation factor `omega`, lexicographic order, default options.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) unless `0 < omega < 2` (outside that range SOR diverges for
    /// every symmetric positive definite system, by Kahan's theorem).
    ///
    /// ```
    /// assert!(quintet::Sor::new(1.5).is_ok());
    /// assert!(quintet::Sor::new(2.0).is_err());
    /// ```
    pub fn new(omega: f64) -> Result<Sor, Error> {
        if !(omega > 0.0 && omega < 2.0) {
            return Err(Error::setting(
                "relaxation factor omega",
                omega,
                "0 < omega < 2",
            ));
        }
        Ok(Sor {
            omega,
            order: SweepOrder::Lexicographic,
            options: SolveOptions::default(),
            name: NameCache::default(),
        })
    }

    /// Gauss–Seidel: SOR with `ω = 1`.
    ///
    /// ```
    /// assert_eq!(quintet::Sor::gauss_seidel().omega(), 1.0);
    /// ```
    pub fn gauss_seidel() -> Sor {
        Sor {
            omega: 1.0,
            order: SweepOrder::Lexicographic,
            options: SolveOptions::default(),
            name: NameCache::default(),
        }
    }

    /// The same driver sweeping in `order`.
    ///
    /// ```
    /// let sor = quintet::Sor::gauss_seidel().ordering(quintet::SweepOrder::RedBlack);
    /// assert_eq!(sor.order(), quintet::SweepOrder::RedBlack);
    /// ```
    pub fn ordering(mut self, order: SweepOrder) -> Sor {
        self.order = order;
        self.name = NameCache::default();
        self
    }

    /// The same driver with `options`.
    ///
    /// ```
    /// let sor = quintet::Sor::gauss_seidel().with_options(quintet::SolveOptions::default().tolerance(1e-6));
    /// assert_eq!(sor.options.tolerances.relative, 1e-6);
    /// ```
    pub fn with_options(mut self, options: SolveOptions) -> Sor {
        self.options = options;
        self
    }

    /// The relaxation factor ω.
    ///
    /// ```
    /// assert_eq!(quintet::Sor::new(1.7)?.omega(), 1.7);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn omega(&self) -> f64 {
        self.omega
    }

    /// The sweep order.
    ///
    /// ```
    /// assert_eq!(quintet::Sor::gauss_seidel().order(), quintet::SweepOrder::Lexicographic);
    /// ```
    pub fn order(&self) -> SweepOrder {
        self.order
    }
}

/// The report name of SOR with `omega` in `order`.
fn sor_name(omega: f64, order: SweepOrder) -> String {
    if omega == 1.0 {
        format!("Gauss-Seidel ({order})")
    } else {
        format!("SOR (omega = {omega:.4}, {order})")
    }
}

/// One SOR iteration: a sweep (or a red and a black half-sweep), then the true residual.
struct SorStep<'a, T> {
    stencil: &'a dyn Stencil5<T>,
    omega: T,
    order: SweepOrder,
}

impl<T: Scalar> Method<T> for SorStep<'_, T> {
    fn work_vectors(&self) -> usize {
        1
    }

    fn requires(&self) -> Requires {
        Requires::PositiveCenters
    }

    fn step(&mut self, cx: &mut Context<'_, T>, _rr: T) -> Result<Step<T>, Breakdown<T>> {
        let (op, omega) = (self.stencil, self.omega);
        let change = match self.order {
            SweepOrder::Lexicographic => sweep(op, cx.rhs, cx.x, omega, None),
            SweepOrder::RedBlack => {
                let red = sweep(op, cx.rhs, cx.x, omega, Some(0));
                red.max(sweep(op, cx.rhs, cx.x, omega, Some(1)))
            }
        };
        let rr = cx.blocks.residual_free(cx.space, cx.op, cx.rhs, cx.x, cx.r);
        Ok(Step {
            rr,
            change: Some(change),
            residual: Residual::Recomputed,
        })
    }
}

impl<T: Scalar> IterativeSolver<T> for Sor {
    /// # Errors
    ///
    /// [`ErrorKind::NeedsStencil`](crate::ErrorKind::NeedsStencil) if `op` is not a
    /// [`Stencil5`]; otherwise as for every [`IterativeSolver`].
    fn solve_observed(
        &mut self,
        op: &dyn LinearOperator<T>,
        rhs: &[T],
        x: &mut [T],
        ws: &mut Workspace<T>,
        observer: &mut dyn FnMut(&Progress<'_>),
    ) -> Result<Report, Error> {
        let omega = T::from(self.omega).ok_or_else(|| {
            Error::setting(
                "relaxation factor omega",
                self.omega,
                "a value representable in the scalar type",
            )
        })?;
        let stencil = op.as_stencil().ok_or_else(|| Error::needs_stencil("SOR"))?;
        let (w, order) = (self.omega, self.order);
        let name = self.name.get("", || sor_name(w, order));
        let mut step = SorStep {
            stencil,
            omega,
            order: self.order,
        };
        run(
            &mut step,
            &name,
            Task {
                op,
                rhs,
                x,
                ws,
                options: &self.options,
                observer,
            },
        )
    }

    fn options(&self) -> &SolveOptions {
        &self.options
    }

    fn options_mut(&mut self) -> &mut SolveOptions {
        &mut self.options
    }
}

/// One relaxation pass over the free cells, all of them (`colour = None`) or those with
/// `(i + j) % 2 == colour`. Returns the largest change.
pub(crate) fn sweep<T: Scalar, S: Stencil5<T> + ?Sized>(
    op: &S,
    b: &[T],
    x: &mut [T],
    omega: T,
    colour: Option<usize>,
) -> T {
    let grid = op.grid();
    let (nx, ny) = (grid.nx(), grid.ny());
    let fixed = op.fixed();
    let step = if colour.is_some() { 2 } else { 1 };
    let mut change = T::zero();
    for j in 0..ny {
        let first = colour.map_or(0, |c| (c + j) % 2);
        for i in (first..nx).step_by(step) {
            let k = j * nx + i;
            if fixed.is_some_and(|f| f.contains(k)) {
                continue;
            }
            let c = op.coeffs(i, j);
            let mut off = T::zero();
            if i > 0 {
                off = off + c.west * x[k - 1];
            }
            if i + 1 < nx {
                off = off + c.east * x[k + 1];
            }
            if j > 0 {
                off = off + c.south * x[k - nx];
            }
            if j + 1 < ny {
                off = off + c.north * x[k + nx];
            }
            let target = (b[k] - off) / c.center;
            let delta = omega * (target - x[k]);
            x[k] = x[k] + delta;
            change = change.max(delta.abs());
        }
    }
    change
}

//! What a solve hands back: the `Report`.

use std::fmt;
use std::time::Duration;

use crate::stop::{relative, StopReason};

/// The record of one solve: why it stopped, how far it got, and the residual history.
///
/// The solution itself is left in the caller's `x`. Residual norms are `‖b − A·x‖₂` over the
/// free cells, in `f64` whatever the scalar type; the final one is always a true residual,
/// recomputed from `x`, not a recursively updated one.
///
/// # Example
///
/// ```
/// use quintet::prelude::*;
///
/// let grid = Grid::new(32, 32)?;
/// let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
/// let rhs = vec![1.0; grid.cells()];
/// let mut x = vec![0.0; grid.cells()];
/// let report = Cg::default().solve(&op, &rhs, &mut x)?;
/// assert!(report.converged());
/// assert!(report.relative_residual() <= 1e-8);
/// assert_eq!(report.history.len(), report.iterations + 1);
/// println!("{report}");
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, PartialEq)]
#[non_exhaustive]
pub struct Report {
    /// The driver (and preconditioner) that ran, e.g. `"PCG + Jacobi"`.
    pub method: String,
    /// Why the solve stopped.
    pub reason: StopReason,
    /// Iterations done.
    pub iterations: usize,
    /// Final `‖r‖₂`, recomputed from `x`.
    pub residual_norm: f64,
    /// `‖r₀‖₂` of the initial guess.
    pub initial_residual_norm: f64,
    /// `‖b‖₂` of the system iterated on (free cells, fixed neighbours' contributions moved to
    /// the right-hand side).
    pub rhs_norm: f64,
    /// `‖r‖₂` after each iteration; `history[0]` is the initial residual.
    pub history: Vec<f64>,
    /// Wall-clock time of the iteration.
    pub elapsed: Duration,
}

impl Report {
    /// Whether the stop reason counts as convergence.
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// # let grid = Grid::new(4, 4)?;
    /// # let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// # let mut x = vec![0.0; 16];
    /// let report = Cg::default().solve(&op, &vec![1.0; 16], &mut x)?;
    /// assert!(report.converged());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn converged(&self) -> bool {
        self.reason.converged()
    }

    /// `‖r‖₂ / ‖b‖₂` at the end (relative to the initial residual when `‖b‖₂ = 0`).
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// # let grid = Grid::new(4, 4)?;
    /// # let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// # let mut x = vec![0.0; 16];
    /// let report = Cg::default().solve(&op, &vec![1.0; 16], &mut x)?;
    /// assert!(report.relative_residual() < 1e-8);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn relative_residual(&self) -> f64 {
        relative(
            self.residual_norm,
            self.rhs_norm,
            self.initial_residual_norm,
        )
    }

    /// `‖r‖₂ / ‖r₀‖₂` at the end.
    ///
    /// ```
    /// # use quintet::prelude::*;
    /// # let grid = Grid::new(4, 4)?;
    /// # let op = Banded5::from_fn(grid, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// # let mut x = vec![0.0; 16];
    /// let report = Cg::default().solve(&op, &vec![1.0; 16], &mut x)?;
    /// assert!(report.reduction() < 1e-8);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn reduction(&self) -> f64 {
        relative(self.residual_norm, self.initial_residual_norm, 0.0)
    }
}

impl fmt::Display for Report {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let verdict = if self.converged() {
            "converged"
        } else {
            "did not converge"
        };
        write!(
            f,
            "{}: {verdict} after {} iterations ({}); |r| = {:.3e}, |r|/|b| = {:.3e}, |r|/|r0| = {:.3e}, {:.3} s",
            self.method,
            self.iterations,
            self.reason,
            self.residual_norm,
            self.relative_residual(),
            self.reduction(),
            self.elapsed.as_secs_f64(),
        )
    }
}

/// Debug output with the history shortened to its ends, so that printing an error from a
/// long solve stays readable.
impl fmt::Debug for Report {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("Report")
            .field("method", &self.method)
            .field("reason", &self.reason)
            .field("iterations", &self.iterations)
            .field("residual_norm", &self.residual_norm)
            .field("initial_residual_norm", &self.initial_residual_norm)
            .field("rhs_norm", &self.rhs_norm)
            .field("history", &HistoryEnds(&self.history))
            .field("elapsed", &self.elapsed)
            .finish()
    }
}

/// A residual history printed as its first and last few entries.
struct HistoryEnds<'a>(&'a [f64]);

impl fmt::Debug for HistoryEnds<'_> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        const ENDS: usize = 3;
        let h = self.0;
        if h.len() <= 2 * ENDS + 1 {
            return f.debug_list().entries(h).finish();
        }
        write!(f, "[")?;
        for v in &h[..ENDS] {
            write!(f, "{v:e}, ")?;
        }
        write!(f, "... {} more ...", h.len() - 2 * ENDS)?;
        for v in &h[h.len() - ENDS..] {
            write!(f, ", {v:e}")?;
        }
        write!(f, "]")
    }
}

//! The grid transfers between a level and the next finer one: prolongation `P` from the stored
//! interpolation weights (see `level.rs` for how they are built) and restriction `R = Pᵀ`, one
//! fine row at a time.

use std::ops::Range;

use super::aggregate::{split, Axis};
use crate::Scalar;

/// The interpolation between a level and the next finer one, borrowed apart from the level's
/// vectors (`P` from its weights; restriction is `Pᵀ`).
pub(crate) struct Transfer<'a> {
    ax: Axis,
    ay: Axis,
    wx: &'a [f32],
    wy: &'a [f32],
    ncx: usize,
}

impl<'a> Transfer<'a> {
    /// The transfers of a level with axes `ax`, `ay`, fine-cell weights `wx`, `wy` and `ncx`
    /// coarse cells per row.
    pub(crate) fn new(
        ax: Axis,
        ay: Axis,
        wx: &'a [f32],
        wy: &'a [f32],
        ncx: usize,
    ) -> Transfer<'a> {
        Transfer {
            ax,
            ay,
            wx,
            wy,
            ncx,
        }
    }

    /// Prolongation weights of fine cell `(i, j)` (`k = i + nx·j`): coarse indices and weights
    /// of the four coarse cells it interpolates from.
    #[inline]
    pub(crate) fn stencil<T: Scalar>(&self, i: usize, j: usize, k: usize) -> [(usize, T); 4] {
        let (pj, qj) = (self.ay.parent(j), self.ay.neighbour(j));
        self.cell(i, pj * self.ncx, qj * self.ncx, self.wx[k], self.wy[k])
    }

    /// The stencil of fine cell `i` of a row whose coarse rows start at `p` (own) and `q`
    /// (neighbour), from its two stored weights.
    #[inline(always)]
    fn cell<T: Scalar>(&self, i: usize, p: usize, q: usize, wx: f32, wy: f32) -> [(usize, T); 4] {
        let (pi, qi) = (self.ax.parent(i), self.ax.neighbour(i));
        let ((ux, wx), (uy, wy)) = (split::<T>(widen(wx)), split::<T>(widen(wy)));
        [
            (p + pi, ux * uy),
            (p + qi, wx * uy),
            (q + pi, ux * wy),
            (q + qi, wx * wy),
        ]
    }

    /// `coarse_b += Pᵀ·r` for the cells `cols` of the fine row `j` (`r` that whole row's
    /// residual), cells where `!active(k)` left out; cells in order, each cell's four targets
    /// in the order of [`stencil`](Self::stencil). Distributed levels pass their own columns
    /// and a one-cell margin; the serial cycle all.
    #[inline]
    pub(crate) fn restrict_row<T: Scalar>(
        &self,
        j: usize,
        cols: Range<usize>,
        r: &[T],
        active: impl Fn(usize) -> bool,
        coarse_b: &mut [T],
    ) {
        let nx = r.len();
        let base = j * nx;
        let (p, q) = (
            self.ay.parent(j) * self.ncx,
            self.ay.neighbour(j) * self.ncx,
        );
        let (wx, wy) = (&self.wx[base..][..nx], &self.wy[base..][..nx]);
        let cells = r[cols.clone()]
            .iter()
            .zip(&wx[cols.clone()])
            .zip(&wy[cols.clone()]);
        for (i, ((&r, &wx), &wy)) in cols.zip(cells) {
            if !active(base + i) {
                continue;
            }
            for (kc, w) in self.cell::<T>(i, p, q, wx, wy) {
                coarse_b[kc] = coarse_b[kc] + w * r;
            }
        }
    }

    /// `x += P·coarse_x` on the cells `cols` of the fine row `j` (`x` that whole row), cells
    /// where `!active(k)` left out.
    #[inline]
    pub(crate) fn prolong_row<T: Scalar>(
        &self,
        j: usize,
        cols: Range<usize>,
        x: &mut [T],
        active: impl Fn(usize) -> bool,
        coarse_x: &[T],
    ) {
        let nx = x.len();
        let base = j * nx;
        let (p, q) = (
            self.ay.parent(j) * self.ncx,
            self.ay.neighbour(j) * self.ncx,
        );
        let (wx, wy) = (&self.wx[base..][..nx], &self.wy[base..][..nx]);
        let cells = x[cols.clone()]
            .iter_mut()
            .zip(&wx[cols.clone()])
            .zip(&wy[cols.clone()]);
        for (i, ((v, &wx), &wy)) in cols.zip(cells) {
            if !active(base + i) {
                continue;
            }
            let mut e = T::zero();
            for (kc, w) in self.cell::<T>(i, p, q, wx, wy) {
                e = e + w * coarse_x[kc];
            }
            *v = *v + e;
        }
    }
}

/// A stored `f32` weight in the level's scalar type (exact: `f32` widens to `f64` exactly).
#[inline(always)]
fn widen<T: Scalar>(w: f32) -> T {
    T::from(w).unwrap_or_else(T::zero)
}

//! The three passes of `Level::below` (level.rs; the arithmetic and its reasons are in that
//! module's notes) on one fine row at a time, over windows of the per-cell arrays, so that a
//! band of rows (setup_bands.rs) can work on its own rows:
//!
//! * pass 0 (`conductances`): conductances towards east and north, the row-sum excess, which
//!   aggregates carry an unknown, and the symmetry test against the row below;
//! * pass 1 (`weights`): interpolation weights, reading the conductances of rows `j − 2` to
//!   `j + 1`;
//! * pass 2 (`couplings`): the fine row's additions into the coarse rows (`j/2 − 1` and `j/2`
//!   for an even row, `j/2` and `j/2 + 1` for an odd one), reading rows `j − 1` to `j + 1`.
//!
//! Windows: the per-fine-cell arrays hold the fine rows from `first` on, the coarse flags and
//! rows the coarse rows from their own first row; cells are named by their indices on the
//! whole grid and shifted into the windows where they are read or written.

use super::aggregate::Axis;
use super::paths::{conductance, conductances_row, own_share, ratio, series, FineConductances};
use crate::operator::{FixedCells, Stencil5};
use crate::scalar::{lit, to_f64};
use crate::{Coeffs5, Scalar};
use std::marker::PhantomData;
use std::ops::Range;

/// Conductances and excess per fine cell, of the fine rows from `first` on (pass 0's output).
#[derive(Clone, Copy)]
pub(super) struct Found<'a, T> {
    pub(super) first: usize,
    pub(super) east: &'a [T],
    pub(super) north: &'a [T],
    pub(super) excess: &'a [T],
}

/// A window of coarse rows from `first` on.
pub(super) struct CoarseRows<'a, T> {
    pub(super) first: usize,
    pub(super) rows: &'a mut [Coeffs5<T>],
}

/// The fine level and the geometry the passes read.
pub(super) struct Sweep<'a, T, R: ?Sized> {
    pub(super) fine: &'a R,
    fixed: Option<&'a FixedCells>,
    pub(super) nx: usize,
    pub(super) ny: usize,
    pub(super) ncx: usize,
    pub(super) ax: Axis,
    pub(super) ay: Axis,
    rel_tol: f64,
    /// Rows whose cells are all active but perhaps the first and the last; a cell two rows
    /// and three columns from every inactive cell and from the edges takes the fast paths of
    /// `paths.rs` in passes 1 and 2.
    clear: Vec<bool>,
    _scalar: PhantomData<T>,
}

impl<'a, T: Scalar, R: Stencil5<T> + ?Sized> Sweep<'a, T, R> {
    /// The passes over `fine`, with pass 0 testing symmetry to `rel_tol` relative.
    pub(super) fn new(fine: &'a R, rel_tol: f64) -> Self {
        let g = fine.grid();
        let (nx, ny) = (g.nx(), g.ny());
        let fixed = fine.fixed();
        let mut clear = vec![true; ny];
        for &k in fixed.map_or(&[][..], |f| f.cells()) {
            let (i, j) = (k % nx, k / nx);
            if j < ny && i != 0 && i + 1 != nx {
                clear[j] = false;
            }
        }
        Sweep {
            fine,
            fixed,
            nx,
            ny,
            ncx: nx.div_ceil(2),
            ax: Axis { n: nx },
            ay: Axis { n: ny },
            rel_tol,
            clear,
            _scalar: PhantomData,
        }
    }

    /// Whether fine cell `k` is an unknown.
    #[inline]
    fn active_fine(&self, k: usize) -> bool {
        !self.fixed.is_some_and(|f| f.contains(k))
    }

    /// The symmetry test: two couplings differ by more than the relative tolerance. (Equal
    /// couplings never differ; `&` rather than `&&`, so that a loop of tests has no
    /// branches.)
    #[inline]
    fn differ(&self, a: T, b: T) -> bool {
        let (wide_a, wide_b) = (to_f64(a), to_f64(b));
        (a != b) & ((wide_a - wide_b).abs() > self.rel_tol * wide_a.abs().max(wide_b.abs()))
    }

    /// The columns of row `j` that take the fast paths of passes 1 and 2 (whole pairs of
    /// cells, from an odd column).
    fn fast_cols(&self, j: usize) -> Range<usize> {
        let (nx, ny) = (self.nx, self.ny);
        if nx >= 8 && j >= 2 && j + 2 < ny && self.clear[j - 2..=j + 2].iter().all(|&c| c) {
            3..3 + 2 * ((nx - 6) / 2)
        } else {
            0..0
        }
    }

    /// The eliminated north couplings of row `j` (zero at inactive cells): what pass 0 of
    /// row `j + 1` tests its south couplings against.
    pub(super) fn north_couplings(&self, j: usize, out: &mut [T]) {
        for (i, o) in out.iter_mut().enumerate().take(self.nx) {
            let active = self.active_fine(i + self.nx * j);
            *o = if active {
                self.fine.eliminated_coeffs(i, j).north
            } else {
                T::zero()
            };
        }
    }

    /// Half-cell conductance from fine cell `(i, j)` to its aggregate's centre along x (None:
    /// the aggregate is one active cell wide there, so the cell is the centre); `east` holds
    /// the rows from `first` on.
    #[inline]
    fn half_x(&self, east: &[T], first: usize, i: usize, j: usize) -> Option<T> {
        let nx = self.nx;
        let sib = if i % 2 == 0 { i + 1 } else { i - 1 };
        if sib >= nx || !self.active_fine(sib + nx * j) {
            return None;
        }
        Some(lit::<T>(2.0) * east[i.min(sib) + nx * (j - first)])
    }

    /// As [`half_x`](Self::half_x) along y.
    #[inline]
    fn half_y(&self, north: &[T], first: usize, i: usize, j: usize) -> Option<T> {
        let nx = self.nx;
        let sib = if j % 2 == 0 { j + 1 } else { j - 1 };
        if sib >= self.ny || !self.active_fine(i + nx * sib) {
            return None;
        }
        Some(lit::<T>(2.0) * north[i + nx * (j.min(sib) - first)])
    }

    /// Pass 0 on row `j`: conductances, excess, and which aggregates carry an unknown; cells
    /// 1 to nx − 2 of a clear row take the fast path. `east`, `north`, `excess` hold the
    /// rows from `first` on, `active` the coarse rows from `active_first` on; `north_below`
    /// holds the north couplings of row `j − 1` and gets row `j`'s. False if a pair of
    /// couplings differs.
    #[allow(clippy::too_many_arguments)]
    pub(super) fn conductances(
        &self,
        j: usize,
        first: usize,
        (east, north, excess): (&mut [T], &mut [T], &mut [T]),
        (active, active_first): (&mut [bool], usize),
        north_below: &mut [T],
        scratch: &mut [T],
    ) -> bool {
        let (nx, ax) = (self.nx, self.ax);
        let fast = if self.clear[j] && nx >= 3 {
            1..nx - 1
        } else {
            0..0
        };
        let row = nx * (j - first);
        let coarse_row = self.ncx * (self.ay.parent(j) - active_first);
        let mut east_before = T::zero();
        for span in [0..fast.start, fast.clone(), fast.end..nx] {
            if span == fast && !fast.is_empty() {
                let found = (
                    &mut east[row..row + nx],
                    &mut north[row..row + nx],
                    &mut excess[row..row + nx],
                );
                let near = (&mut east_before, &mut north_below[..]);
                let differ = |a, b| self.differ(a, b);
                if !conductances_row(self.fine, j, fast.clone(), differ, near, found, scratch) {
                    return false;
                }
                active[coarse_row + ax.parent(fast.start)..=coarse_row + ax.parent(fast.end - 1)]
                    .fill(true);
                continue;
            }
            for i in span {
                let k = row + i;
                if !self.active_fine(i + nx * j) {
                    (east_before, north_below[i]) = (T::zero(), T::zero());
                    continue;
                }
                active[ax.parent(i) + coarse_row] = true;
                let c = self.fine.eliminated_coeffs(i, j);
                if (i > 0 && self.differ(east_before, c.west))
                    || (j > 0 && self.differ(north_below[i], c.south))
                {
                    return false;
                }
                (east_before, north_below[i]) = (c.east, c.north);
                east[k] = conductance(c.east);
                north[k] = conductance(c.north);
                let sum = c.center + c.west + c.east + c.south + c.north;
                excess[k] = if sum > T::zero() { sum } else { T::zero() };
            }
        }
        true
    }

    /// Pass 1 on row `j`: interpolation weights towards the neighbouring aggregates, into
    /// `wx`, `wy` (windows from `found.first` on, like `found`).
    pub(super) fn weights(&self, j: usize, found: Found<'_, T>, wx: &mut [T], wy: &mut [T]) {
        let (nx, ny, ax, ay) = (self.nx, self.ny, self.ax, self.ay);
        let Found {
            first,
            east,
            north,
            excess,
        } = found;
        let fast = self.fast_cols(j);
        FineConductances::new(east, north, nx, self.ncx, first).weights(j, fast.clone(), wx, wy);
        for i in (0..fast.start).chain(fast.end..nx) {
            let (g, k) = (i + nx * j, i + nx * (j - first));
            if !self.active_fine(g) {
                continue;
            }
            let (ci, cj) = (ax.parent(i), ay.parent(j));
            // Missing or fixed neighbours of this cell: its row-sum excess is shared among
            // them as the conductance to a zero-valued ghost beyond each.
            let missing = [
                i == 0 || !self.active_fine(g - 1),
                i + 1 == nx || !self.active_fine(g + 1),
                j == 0 || !self.active_fine(g - nx),
                j + 1 == ny || !self.active_fine(g + nx),
            ];
            let m = missing.iter().filter(|&&b| b).count();
            let ghost = if m > 0 {
                excess[k] / T::from(m).unwrap_or_else(T::one)
            } else {
                T::zero()
            };
            if 2 * ci + 1 < nx {
                // Paired in x: interpolate towards the outward side.
                let (out_missing, face, far) = if i % 2 == 1 {
                    (
                        missing[1],
                        if i + 1 < nx { east[k] } else { T::zero() },
                        i + 1,
                    )
                } else {
                    (
                        missing[0],
                        if i > 0 { east[k - 1] } else { T::zero() },
                        i.wrapping_sub(1),
                    )
                };
                let own = self.half_x(east, first, i, j);
                wx[k] = if out_missing {
                    -series(own, ghost, None).0
                } else if ax.neighbour(i) != ci {
                    series(own, face, self.half_x(east, first, far, j)).0
                } else {
                    T::zero()
                };
            }
            if 2 * cj + 1 < ny {
                let (out_missing, face, far) = if j % 2 == 1 {
                    (
                        missing[3],
                        if j + 1 < ny { north[k] } else { T::zero() },
                        j + 1,
                    )
                } else {
                    (
                        missing[2],
                        if j > 0 { north[k - nx] } else { T::zero() },
                        j.wrapping_sub(1),
                    )
                };
                let own = self.half_y(north, first, i, j);
                wy[k] = if out_missing {
                    -series(own, ghost, None).0
                } else if ay.neighbour(j) != cj {
                    series(own, face, self.half_y(north, first, i, far)).0
                } else {
                    T::zero()
                };
            }
        }
    }

    /// Pass 2 on row `j`: its additions into the coarse couplings and centers, in the cells'
    /// order. Each fine line's series conductance across a coarse face goes to the coarse
    /// lines that interpolate that fine line, in the proportions of the interpolation (a
    /// lumped Galerkin product in the cross direction), so the coarse operator sees the
    /// energy of the interpolated corrections. `wx`, `wy` are windows like `found`; `active`
    /// holds the coarse rows from `active_first` on; every coarse row the fine row adds into
    /// must be inside `out`.
    #[allow(clippy::too_many_arguments)]
    pub(super) fn couplings(
        &self,
        j: usize,
        found: Found<'_, T>,
        (wx, wy): (&[T], &[T]),
        (active, active_first): (&[bool], usize),
        out: &mut CoarseRows<'_, T>,
        scratch: &mut [T],
    ) {
        let (nx, ny, ncx, ax, ay) = (self.nx, self.ny, self.ncx, self.ax, self.ay);
        let half: T = lit(0.5);
        let Found {
            first,
            east,
            north,
            excess,
        } = found;
        let cj = ay.parent(j);
        let (active_base, base) = (ncx * active_first, ncx * out.first);
        let on = |kc: usize, fb: usize| if active[kc - active_base] { kc } else { fb };
        // Row-sum excess `e` (storage, fixed neighbours) of cell `i`, reached from the
        // coarse centre through the mean half-cell resistance, spread like the
        // interpolation.
        let spread = |rows: &mut [Coeffs5<T>], i: usize, gx, gy, e: T| {
            let (k, ci) = (i + nx * (j - first), ax.parent(i));
            let kc = ci + ncx * cj;
            let resist = |g: Option<T>| g.map_or(T::zero(), |g| ratio(T::one(), g));
            let r = resist(gx).min(resist(gy));
            let contribution = ratio(e, T::one() + e * r);
            let (pi, qi, pj, qj) = (ci, ax.neighbour(i), cj, ay.neighbour(j));
            let (wxk, wyk) = (T::one() - own_share(wx[k]), T::one() - own_share(wy[k]));
            let (ux, uy) = (T::one() - wxk, T::one() - wyk);
            for (target, w) in [
                (pi + ncx * pj, ux * uy),
                (qi + ncx * pj, wxk * uy),
                (pi + ncx * qj, ux * wyk),
                (qi + ncx * qj, wxk * wyk),
            ] {
                let t = on(target, kc) - base;
                rows[t].center = rows[t].center + w * contribution;
            }
        };
        let cell = |rows: &mut [Coeffs5<T>], i: usize| {
            let (g, k) = (i + nx * j, i + nx * (j - first));
            if !self.active_fine(g) {
                return;
            }
            let ci = ax.parent(i);
            let kc = ci + ncx * cj;
            let (gx, gy) = (
                self.half_x(east, first, i, j),
                self.half_y(north, first, i, j),
            );
            if i + 1 < nx && ax.parent(i + 1) != ci {
                let t = series(gx, east[k], self.half_x(east, first, i + 1, j)).1;
                let own = half * (own_share(wy[k]) + own_share(wy[k + 1]));
                let qj = ay.neighbour(j);
                let (a, b) = (on(ci + ncx * qj, kc), on(ci + 1 + ncx * qj, kc + 1));
                let (a, b) = if a == kc || b == kc + 1 {
                    (kc, kc + 1)
                } else {
                    (a, b)
                };
                for (l, r, share) in [(kc, kc + 1, own), (a, b, T::one() - own)] {
                    rows[l - base].east = rows[l - base].east - t * share;
                    rows[r - base].west = rows[r - base].west - t * share;
                }
            }
            if j + 1 < ny && ay.parent(j + 1) != cj {
                let t = series(gy, north[k], self.half_y(north, first, i, j + 1)).1;
                let own = half * (own_share(wx[k]) + own_share(wx[k + nx]));
                let qi = ax.neighbour(i);
                let up = kc + ncx;
                let (a, b) = (on(qi + ncx * cj, kc), on(qi + ncx * (cj + 1), up));
                let (a, b) = if a == kc || b == up { (kc, up) } else { (a, b) };
                for (l, r, share) in [(kc, up, own), (a, b, T::one() - own)] {
                    rows[l - base].north = rows[l - base].north - t * share;
                    rows[r - base].south = rows[r - base].south - t * share;
                }
            }
            if excess[k] > T::zero() {
                spread(rows, i, gx, gy, excess[k]);
            }
        };
        // In row order: the first cells, the fast interior, the last cells.
        let rows = &mut *out.rows;
        let fast = self.fast_cols(j);
        (0..fast.start).for_each(|i| cell(rows, i));
        FineConductances::new(east, north, nx, ncx, first).couplings(
            j,
            fast.clone(),
            (wx, wy, excess),
            (rows, out.first, scratch),
            |rows, i, gx, gy, e| spread(rows, i, Some(gx), Some(gy), e),
        );
        (fast.end..nx).for_each(|i| cell(rows, i));
    }
}

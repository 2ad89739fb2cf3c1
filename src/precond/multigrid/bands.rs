//! The smoothing passes of a level over bands of rows side by side, one per thread (the
//! wavefront itself is in `smooth.rs`).
//!
//! A level is cut at even rows into bands, one per thread, and each band runs the
//! wavefront on its own rows, on its own slice of `x`. Half-sweep `h` of a row needs its
//! neighbours after half-sweep `h − 1` (or `h`, which changes only the other colour), so a row
//! `d` rows from a cut gets only its first `d` half-sweeps in the band's pass (the rows beside
//! the cut none, and no band reads across a cut). After both bands of a cut are done, the
//! cut's pass gives the rows within `2ν` of it their remaining half-sweeps, half-sweep by
//! half-sweep (`2ν(2ν + 1)` row updates, a few per cent of a band at the sizes where bands pay).
//! The restriction is computed by coarse row (a gather from the coarse row's four fine
//! residual rows, each coarse cell adding its terms in the order the row-by-row scatter adds
//! them): a band restricts the coarse rows whose fine rows it finished, the cut's pass those
//! beside the cut. Every cell thus gets the same expression from the same values, and every
//! coarse cell the same sum, whatever the bands — the bits do not depend on the thread count
//! (unit test `bands_tests.rs`: 1 to 6 bands, serial and side by side, bit for bit).

use super::smooth::{Phase, Rows};
use super::transfer::Transfer;
use crate::blocks::{join, threads_for};
use crate::operator::Stencil5;
use crate::space::Threaded;
use crate::{Grid, Scalar};

/// Rows of scratch each band needs: one for a row product, two for the restriction's terms,
/// and the residual rows of the coarse rows restricted at a cut (`4ν + 6`, which also covers a
/// band's ring of four).
pub(super) fn band_scratch_rows(sweeps: usize) -> usize {
    4 * sweeps + 9
}

/// Rows of the fine grid the smoother's scratch needs on `grid` (the fine level) for as many
/// bands as the current pool has threads, at most `max_bands` and as many as the grid has rows
/// for; one band without a cut needs seven.
pub(crate) fn scratch_rows(grid: Grid, sweeps: usize, max_bands: usize) -> usize {
    let bands = threads_for(&Threaded, usize::MAX)
        .min(max_bands)
        .min(grid.ny() / min_band_rows(sweeps));
    if bands > 1 {
        bands * band_scratch_rows(sweeps)
    } else {
        7
    }
}

/// Fewest rows of a band: the rows a cut's pass finishes reach `2ν` rows into each band, and
/// the coarse rows it restricts `2ν + 3`; a band keeps the two cuts' rows apart, and gives each
/// thread enough rows to pay for the hand-over.
fn min_band_rows(sweeps: usize) -> usize {
    (4 * sweeps + 8).max(32)
}

/// Rows `lo..hi` of a level of `ny` rows, smoothed by one thread. An edge of the band that is
/// not an edge of the grid is a cut: the rows next to it need the rows across it, so the
/// band's own pass leaves them behind by one half-sweep per row of distance, and the cut's
/// pass finishes them after both bands are done.
#[derive(Clone, Copy, Debug)]
struct Band {
    lo: usize,
    hi: usize,
    ny: usize,
    sweeps: usize,
}

impl Band {
    /// Rows from row `j` to the nearest cut (`usize::MAX` without one).
    fn distance(&self, j: usize) -> usize {
        let below = if self.lo > 0 { j - self.lo } else { usize::MAX };
        let above = if self.hi < self.ny {
            self.hi - 1 - j
        } else {
            usize::MAX
        };
        below.min(above)
    }

    /// Half-sweeps row `j` gets in the band's own pass.
    fn stages(&self, j: usize) -> usize {
        (2 * self.sweeps).min(self.distance(j))
    }

    /// Whether the band's own pass finishes row `j` and both its neighbours (its residual).
    fn residual_ready(&self, j: usize) -> bool {
        self.distance(j) > 2 * self.sweeps
    }
}

/// The grid transfer a phase runs with the smoothing.
enum Coarse<'t, 'c, T> {
    /// Restrict the residual into the coarse right-hand side (the coarse rows of the band's
    /// node, from coarse row `first`).
    Restrict {
        transfer: &'t Transfer<'t>,
        coarse_b: &'c mut [T],
        first: usize,
    },
    /// Add the prolongation of the coarse correction.
    Prolong {
        transfer: &'t Transfer<'t>,
        coarse_x: &'c [T],
    },
}

impl<'t, T> Coarse<'t, '_, T> {
    /// The transfer of the bands below and above a cut at fine row `m` (even): a restriction's
    /// coarse rows split at coarse row `m / 2`, borrowed from this one.
    fn split_at(&mut self, m: usize) -> (Coarse<'t, '_, T>, Coarse<'t, '_, T>) {
        match self {
            Coarse::Restrict {
                transfer,
                coarse_b,
                first,
            } => {
                let ncx = transfer.coarse_width();
                let (lower, upper) = coarse_b.split_at_mut((m / 2 - *first) * ncx);
                let lower = Coarse::Restrict {
                    transfer,
                    coarse_b: lower,
                    first: *first,
                };
                let upper = Coarse::Restrict {
                    transfer,
                    coarse_b: upper,
                    first: m / 2,
                };
                (lower, upper)
            }
            Coarse::Prolong { transfer, coarse_x } => {
                let (transfer, coarse_x) = (*transfer, &**coarse_x);
                (
                    Coarse::Prolong { transfer, coarse_x },
                    Coarse::Prolong { transfer, coarse_x },
                )
            }
        }
    }
}

impl<T: Scalar, R: Stencil5<T> + ?Sized + Sync> Rows<'_, T, R> {
    /// `ν` red-black sweeps from `x = 0` (red then black), then `coarse_b = Pᵀ·(b − A·x)` with
    /// the inactive cells left out, in one pass per band of rows. `scratch` holds seven rows
    /// of the level, or [`band_scratch_rows`]`(ν)` per band; with more than one band
    /// (`bands`, at most as many as the scratch holds, fewer on a short level) the bands run
    /// side by side when `parallel`. Every cell gets the same expression from the same values
    /// whatever the bands, so the bits do not depend on them.
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn pre_smooth_restrict(
        &self,
        x: &mut [T],
        scratch: &mut [T],
        sweeps: usize,
        bands: usize,
        parallel: bool,
        transfer: &Transfer<'_>,
        coarse_b: &mut [T],
    ) {
        let coarse = Coarse::Restrict {
            transfer,
            coarse_b,
            first: 0,
        };
        self.smooth(Phase::Pre, x, scratch, sweeps, bands, parallel, coarse);
    }

    /// `x += P·coarse_x` (inactive cells left out), then `ν` red-black sweeps (black then
    /// red, the mirror image of the pre-smoothing), in one pass per band of rows (as
    /// [`pre_smooth_restrict`](Self::pre_smooth_restrict)).
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn prolong_smooth(
        &self,
        x: &mut [T],
        scratch: &mut [T],
        sweeps: usize,
        bands: usize,
        parallel: bool,
        transfer: &Transfer<'_>,
        coarse_x: &[T],
    ) {
        let coarse = Coarse::Prolong { transfer, coarse_x };
        self.smooth(Phase::Post, x, scratch, sweeps, bands, parallel, coarse);
    }

    /// Both phases: the bands, then their cuts.
    #[allow(clippy::too_many_arguments)]
    fn smooth(
        &self,
        phase: Phase,
        x: &mut [T],
        scratch: &mut [T],
        sweeps: usize,
        bands: usize,
        parallel: bool,
        coarse: Coarse<'_, '_, T>,
    ) {
        let grid = self.op.grid();
        let (nx, ny) = (grid.nx(), grid.ny());
        let per_band = band_scratch_rows(sweeps) * nx;
        let bands = bands
            .min(scratch.len() / per_band)
            .min(ny / min_band_rows(sweeps))
            .max(1);
        let node = Node {
            lo: 0,
            hi: ny,
            bands,
        };
        self.node(phase, node, x, scratch, sweeps, parallel, coarse);
    }

    /// Rows `node.lo..node.hi` in `node.bands` bands: each half on its own (side by side
    /// when `parallel`), then the cut between them. `x` holds the node's rows, `scratch` its
    /// bands' scratch, a restriction the node's coarse rows.
    #[allow(clippy::too_many_arguments)]
    fn node(
        &self,
        phase: Phase,
        node: Node,
        x: &mut [T],
        scratch: &mut [T],
        sweeps: usize,
        parallel: bool,
        coarse: Coarse<'_, '_, T>,
    ) {
        let grid = self.op.grid();
        let (nx, ny) = (grid.nx(), grid.ny());
        let band = Band {
            lo: node.lo,
            hi: node.hi,
            ny,
            sweeps,
        };
        if node.bands <= 1 {
            self.band(phase, band, x, scratch, coarse);
            return;
        }
        let left = node.bands / 2;
        // The cut at an even row, so that a coarse row's own fine rows stay in one band.
        let m = (node.lo + (node.hi - node.lo) * left / node.bands) & !1;
        let per_band = band_scratch_rows(sweeps) * nx;
        let (x_lo, x_hi) = x.split_at_mut((m - node.lo) * nx);
        let (s_lo, s_hi) = scratch.split_at_mut(left * per_band);
        let lower = Node {
            lo: node.lo,
            hi: m,
            bands: left,
        };
        let upper = Node {
            lo: m,
            hi: node.hi,
            bands: node.bands - left,
        };
        let mut coarse = coarse;
        let (c_lo, c_hi) = coarse.split_at(m);
        join(
            parallel,
            || self.node(phase, lower, x_lo, s_lo, sweeps, parallel, c_lo),
            || self.node(phase, upper, x_hi, s_hi, sweeps, parallel, c_hi),
        );
        self.cut(phase, band, m, x, scratch, coarse);
    }

    /// One band's own pass: all half-sweeps travel down its rows together (see the module
    /// notes), each row only as far as [`Band::stages`] allows, with the prolongation one row
    /// ahead or the residual's restriction behind.
    fn band(
        &self,
        phase: Phase,
        band: Band,
        x: &mut [T],
        scratch: &mut [T],
        coarse: Coarse<'_, '_, T>,
    ) {
        let grid = self.op.grid();
        let nx = grid.nx();
        let (buf, rest) = scratch.split_at_mut(nx);
        let (terms, ring) = rest.split_at_mut(2 * nx);
        let ring = &mut ring[..4 * nx];
        let (lo, hi, sweeps) = (band.lo, band.hi, band.sweeps);
        let inactive = self.op.fixed().filter(|f| !f.is_empty());
        let (mut restrict, prolong_from) = match coarse {
            Coarse::Restrict {
                transfer,
                coarse_b,
                first,
            } => (Some((transfer, coarse_b, first)), None),
            Coarse::Prolong { transfer, coarse_x } => (None, Some((transfer, coarse_x))),
        };
        let prolong = |x: &mut [T], j: usize| {
            if let Some((transfer, coarse_x)) = prolong_from {
                self.prolong_row((transfer, inactive, coarse_x), x, lo, nx, j);
            }
        };
        if lo < hi {
            prolong(x, lo);
        }
        let at = |t: usize, back: usize| t.checked_sub(back).filter(|j| (lo..hi).contains(j));
        for t in lo..hi + 2 * sweeps {
            // The first sweep reads row t + 1 at this step.
            if t + 1 < hi {
                prolong(x, t + 1);
            }
            for s in 0..sweeps {
                for (h, back) in [(2 * s + 1, 2 * s), (2 * s + 2, 2 * s + 1)] {
                    if let Some(j) = at(t, back).filter(|&j| h <= band.stages(j)) {
                        self.half_sweep(phase, x, lo, buf, j, h);
                    }
                }
            }
            // The residual of row j needs rows j − 1 … j + 1 final: the last sweep's second
            // colour is on row t − 2ν + 1.
            let Some((transfer, out, first)) = &mut restrict else {
                continue;
            };
            let Some(j) = at(t, 2 * sweeps).filter(|&j| band.residual_ready(j)) else {
                continue;
            };
            self.residual_row(x, lo, j, buf, &mut ring[(j % 4) * nx..][..nx]);
            // Coarse rows whose last fine row is j, all of whose fine rows this pass finished.
            let ncx = transfer.coarse_width();
            for cj in j.saturating_sub(2) / 2..(j / 2 + 2).min(grid.ny().div_ceil(2)) {
                let rows = transfer.fine_rows_of(cj, grid.ny());
                if rows.is_empty()
                    || rows.end != j + 1
                    || rows.start < lo
                    || !band.residual_ready(rows.start)
                {
                    continue;
                }
                let ring = &*ring;
                transfer.restrict_gather(
                    cj,
                    grid.ny(),
                    |r| &ring[(r % 4) * nx..][..nx],
                    inactive,
                    terms,
                    &mut out[(cj - *first) * ncx..][..ncx],
                );
            }
        }
    }

    /// The pass of the cut at row `m` inside `band` (rows `band.lo..band.hi`, held by `x`),
    /// after both bands' own passes: the rows the bands left behind get their remaining
    /// half-sweeps, half-sweep by half-sweep (row `j` is `d` rows from the cut and had `d`
    /// of them); then the coarse rows next to the cut are restricted from residual rows
    /// computed in `scratch`.
    fn cut(
        &self,
        phase: Phase,
        band: Band,
        m: usize,
        x: &mut [T],
        scratch: &mut [T],
        coarse: Coarse<'_, '_, T>,
    ) {
        let grid = self.op.grid();
        let (nx, ny) = (grid.nx(), grid.ny());
        let (lo, sweeps) = (band.lo, band.sweeps);
        let (buf, rest) = scratch.split_at_mut(nx);
        let (terms, rows) = rest.split_at_mut(2 * nx);
        for h in 1..=2 * sweeps {
            for j in m - h..(m + h).min(band.hi) {
                self.half_sweep(phase, x, lo, buf, j, h);
            }
        }
        let Coarse::Restrict {
            transfer,
            coarse_b,
            first,
        } = coarse
        else {
            return;
        };
        // Coarse rows with a fine row within 2ν rows of the cut (rows m − 2ν − 1 … m + 2ν).
        let ncx = transfer.coarse_width();
        let c_first = (m / 2).saturating_sub(sweeps + 1);
        let c_last = (m / 2 + sweeps).min(ny.div_ceil(2) - 1);
        let r_first = transfer.fine_rows_of(c_first, ny).start;
        let r_end = transfer.fine_rows_of(c_last, ny).end;
        for j in r_first..r_end {
            self.residual_row(x, lo, j, buf, &mut rows[(j - r_first) * nx..][..nx]);
        }
        let inactive = self.op.fixed().filter(|f| !f.is_empty());
        let rows = &*rows;
        for cj in c_first..=c_last {
            transfer.restrict_gather(
                cj,
                ny,
                |r| &rows[(r - r_first) * nx..][..nx],
                inactive,
                terms,
                &mut coarse_b[(cj - first) * ncx..][..ncx],
            );
        }
    }
}

/// Rows `lo..hi` split into `bands` bands.
#[derive(Clone, Copy, Debug)]
struct Node {
    lo: usize,
    hi: usize,
    bands: usize,
}

#[cfg(test)]
#[path = "bands_tests.rs"]
mod tests;

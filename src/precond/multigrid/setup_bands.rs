//! The sweep of `Level::below` (level.rs) down the fine rows, in bands of rows side by side,
//! with the same bits as one sweep.
//!
//! A band of fine rows `[j0, j1)` (cut at even rows, so every coarse row belongs to one band)
//! does pass 0 on all its rows (its symmetry test on row `j0` against row `j0 − 1`'s
//! couplings, read again from the operator), pass 1 on the rows whose conductances it has
//! (`j0 + 2` to `j1 − 2`; all of them at the grid's ends) and pass 2 on the rows whose
//! weights it has (`j0 + 2` to `j1 − 3`), each pass trailing the one before by the lags of the
//! one sweep. Pass 2 of fine row `j` adds into coarse rows `j/2 − 1, j/2` (even `j`) or
//! `j/2, j/2 + 1` (odd `j`), so coarse row `c` gets the terms of fine rows `2c − 1` to
//! `2c + 2`, in that order; the band's pass 2 stays inside the band's own coarse rows, and
//! those whose fine rows it did not all take are finished at the cut.
//!
//! Pass 0's conductances and excess are read only a few rows behind it, so a band keeps them
//! for a window of rows that moves down with the passes ([`WINDOW_ROWS`]), not for all its
//! rows: a fine-sized array of each would be fresh memory, its pages faulted in and zeroed by
//! the operating system, for values that are in cache anyway when they are read.
//!
//! The cut's step at fine row `J`, after every band: pass 0 again on rows `J − 6` to `J + 5`
//! (the conductances that the cut's passes read; the bands' windows are gone), pass 1 on rows
//! `J − 1` to `J + 1`, then pass 2 on fine rows `J − 5` to `J + 4` into a zeroed window of
//! coarse rows `J/2 − 3` to `J/2 + 2`, whose four middle rows — the coarse rows those fine
//! rows are the only contributors of, their terms now added in the one sweep's order —
//! replace the bands' partial sums (the window's first and last rows take the additions meant
//! for rows the bands finish, and are dropped). Every coarse entry thus gets its terms in the
//! order of the one sweep, from the same values: the same bits (`setup_bands_tests.rs`, 1–6
//! bands, serial and side by side; windows that move against windows of a whole band).

use super::sweep::{CoarseRows, Found, Sweep};
use crate::blocks::join;
use crate::operator::Stencil5;
use crate::{Coeffs5, Scalar};
use std::sync::atomic::{AtomicBool, Ordering};

/// The fewest fine rows a band has (the cut's zones of two cuts must not meet).
pub(super) const MIN_BAND_ROWS: usize = 32;

/// Fine rows on each side of a cut that pass 2 redoes there (`J − 5` to `J + 4`).
const PASS2_CUT_ROWS: usize = 5;

// The fine rows that pass 2 redoes at two cuts never meet, and a band keeps rows of its own.
const _: () = assert!(MIN_BAND_ROWS > 2 * PASS2_CUT_ROWS);

/// Pass 1 trails pass 0 by this many rows, pass 2 trails it by `LAG2`: each pass then finds
/// the rows it reads already done (pass 1 on row j reads pass 0 up to row j + 1; pass 2 on
/// row j reads pass 1 up to row j + 1 and the coarse cells' activity up to fine row j + 3)
/// while they are still in cache.
const LAG1: usize = 2;
const LAG2: usize = 4;

/// Rows of pass 0's output a band's window holds. When pass 0 reaches the window's end, the
/// last [`HISTORY`] rows move to its start: pass 2, [`LAG2`] rows behind pass 0, reads one
/// row below its own, and pass 1 less far back. (32 rows of a 2000-cell-wide `f32` grid are
/// 0.77 MB for the three arrays; moving 6 rows of every 26 is a copy in cache.)
const WINDOW_ROWS: usize = 32;
const HISTORY: usize = LAG2 + 2;
const _: () = assert!(WINDOW_ROWS > HISTORY);

/// What the sweep builds: the coarse cells' activity, the coarse rows (before their centers
/// get the couplings' sum), and the interpolation weights per fine cell.
pub(super) struct Swept<T> {
    pub(super) active: Vec<bool>,
    pub(super) rows: Vec<Coeffs5<T>>,
    pub(super) wx: Vec<T>,
    pub(super) wy: Vec<T>,
}

/// The first row of each of (at most) `bands` bands of a grid of `ny` rows, and `ny`: even
/// rows, at least [`MIN_BAND_ROWS`] apart (one band if the grid is too short for two).
pub(super) fn cuts(ny: usize, bands: usize) -> Vec<usize> {
    let pairs = ny / 2;
    let bands = bands.min(pairs / (MIN_BAND_ROWS / 2)).max(1);
    let mut cuts: Vec<usize> = (0..bands).map(|b| 2 * (b * pairs / bands)).collect();
    cuts.push(ny);
    cuts
}

/// A band's rows of the per-fine-cell arrays and of the coarse flags, and the rows of its
/// window of pass 0's output.
struct Band<'a, T> {
    rows: std::ops::Range<usize>,
    window_rows: usize,
    wx: &'a mut [T],
    wy: &'a mut [T],
    active: &'a mut [bool],
}

/// The three passes over the fine rows of `sweep` in (at most) `bands` bands, side by side
/// when `parallel`; `None` when pass 0 finds two couplings that differ.
pub(super) fn sweep_in_bands<T: Scalar, R: Stencil5<T> + ?Sized>(
    sweep: &Sweep<'_, T, R>,
    bands: usize,
    parallel: bool,
) -> Option<Swept<T>> {
    sweep_with_windows(sweep, bands, parallel, WINDOW_ROWS)
}

/// [`sweep_in_bands`] with windows of `window_rows` rows (more than [`HISTORY`]).
pub(super) fn sweep_with_windows<T: Scalar, R: Stencil5<T> + ?Sized>(
    sweep: &Sweep<'_, T, R>,
    bands: usize,
    parallel: bool,
    window_rows: usize,
) -> Option<Swept<T>> {
    assert!(window_rows > HISTORY);
    let (nx, ny, ncx) = (sweep.nx, sweep.ny, sweep.ncx);
    let (n, nc) = (nx * ny, ncx * ny.div_ceil(2));
    let cuts = cuts(ny, bands);
    let mut wx = vec![T::zero(); n];
    let mut wy = vec![T::zero(); n];
    let mut active = vec![false; nc];
    let mut parts = Vec::with_capacity(cuts.len() - 1);
    {
        let (mut x, mut y, mut a) = (&mut wx[..], &mut wy[..], &mut active[..]);
        for pair in cuts.windows(2) {
            let (cells, coarse) = (
                nx * (pair[1] - pair[0]),
                ncx * (pair[1] - pair[0]).div_ceil(2),
            );
            parts.push(Band {
                rows: pair[0]..pair[1],
                window_rows: window_rows.min(pair[1] - pair[0]),
                wx: split_off(&mut x, cells),
                wy: split_off(&mut y, cells),
                active: split_off(&mut a, coarse),
            });
        }
    }
    let stop = AtomicBool::new(false);
    let coarse_rows = run(sweep, &mut parts, parallel, &stop, nc);
    drop(parts);
    let mut coarse_rows = coarse_rows.into_iter();
    let mut rows = coarse_rows.next()??;
    for more in coarse_rows {
        rows.extend_from_slice(&more?);
    }
    // The cuts, in turn: pass 0 on the rows their passes read, pass 1 on their rows, then
    // pass 2 on the fine rows of their coarse rows.
    let inner = &cuts[1..cuts.len() - 1];
    let span = 2 * PASS2_CUT_ROWS + 2;
    let (mut east, mut north, mut excess) = (
        vec![T::zero(); span * nx],
        vec![T::zero(); span * nx],
        vec![T::zero(); span * nx],
    );
    let mut north_below = vec![T::zero(); nx];
    let mut scratch = vec![T::zero(); 5 * nx];
    let mut window = vec![zero(); 6 * ncx];
    for &cut in inner {
        let first = cut - PASS2_CUT_ROWS - 1;
        sweep.north_couplings(first - 1, &mut north_below);
        for j in first..first + span {
            let found = (&mut east[..], &mut north[..], &mut excess[..]);
            // The same test on the same couplings as in the band: it passed there.
            let same = sweep.conductances(
                j,
                first,
                found,
                (&mut active, 0),
                &mut north_below,
                &mut scratch,
            );
            debug_assert!(same);
        }
        let found = Found {
            first,
            east: &east,
            north: &north,
            excess: &excess,
        };
        let (wx, wy) = (&mut wx[nx * first..], &mut wy[nx * first..]);
        for j in cut - 1..=cut + 1 {
            sweep.weights(j, found, wx, wy);
        }
        window.fill(zero());
        let mut out = CoarseRows {
            first: cut / 2 - 3,
            rows: &mut window,
        };
        for j in cut - PASS2_CUT_ROWS..cut + PASS2_CUT_ROWS {
            let weights = (&wx[..], &wy[..]);
            sweep.couplings(j, found, weights, (&active, 0), &mut out, &mut scratch);
        }
        rows[ncx * (cut / 2 - 2)..ncx * (cut / 2 + 2)].copy_from_slice(&window[ncx..5 * ncx]);
    }
    Some(Swept {
        active,
        rows,
        wx,
        wy,
    })
}

/// The first `len` entries of `v`, which keeps the rest.
fn split_off<'a, U>(v: &mut &'a mut [U], len: usize) -> &'a mut [U] {
    let (head, tail) = std::mem::take(v).split_at_mut(len);
    *v = tail;
    head
}

/// `finish(first, rows, flags, inverse)` on (at most) `pieces` consecutive pieces of the
/// coarse cells (`first` the index of a piece's first cell), side by side when `parallel`;
/// the first `Some` in the order of the pieces.
#[allow(clippy::type_complexity)]
pub(super) fn in_pieces<T: Scalar, F>(
    (rows, active, inverse): (&mut [Coeffs5<T>], &mut [bool], &mut [f32]),
    pieces: usize,
    parallel: bool,
    finish: &F,
) -> Option<usize>
where
    F: Fn(usize, &mut [Coeffs5<T>], &mut [bool], &mut [f32]) -> Option<usize> + Sync,
{
    fn go<T: Scalar, F>(
        first: usize,
        (rows, active, inverse): (&mut [Coeffs5<T>], &mut [bool], &mut [f32]),
        pieces: usize,
        parallel: bool,
        finish: &F,
    ) -> Option<usize>
    where
        F: Fn(usize, &mut [Coeffs5<T>], &mut [bool], &mut [f32]) -> Option<usize> + Sync,
    {
        if pieces <= 1 {
            return finish(first, rows, active, inverse);
        }
        let mid = rows.len() * (pieces / 2) / pieces;
        let (rows, high_rows) = rows.split_at_mut(mid);
        let (active, high_active) = active.split_at_mut(mid);
        let (inverse, high_inverse) = inverse.split_at_mut(mid);
        let (low, high) = join(
            parallel,
            || go(first, (rows, active, inverse), pieces / 2, parallel, finish),
            || {
                let high = (high_rows, high_active, high_inverse);
                go(first + mid, high, pieces - pieces / 2, parallel, finish)
            },
        );
        low.or(high)
    }
    go(0, (rows, active, inverse), pieces, parallel, finish)
}

/// A coarse row entry before any addition.
fn zero<T: Scalar>() -> Coeffs5<T> {
    Coeffs5 {
        center: T::zero(),
        ..Coeffs5::identity()
    }
}

/// Each band's coarse rows (`None` for a band that found differing couplings, or stopped
/// because another did), bands halved recursively between the two sides of a `join`.
fn run<T: Scalar, R: Stencil5<T> + ?Sized>(
    sweep: &Sweep<'_, T, R>,
    bands: &mut [Band<'_, T>],
    parallel: bool,
    stop: &AtomicBool,
    nc: usize,
) -> Vec<Option<Vec<Coeffs5<T>>>> {
    if let [band] = bands {
        return vec![one_band(sweep, band, stop, nc)];
    }
    let (low, high) = bands.split_at_mut(bands.len() / 2);
    let (mut low, high) = join(
        parallel,
        || run(sweep, low, parallel, stop, nc),
        || run(sweep, high, parallel, stop, nc),
    );
    low.extend(high);
    low
}

/// The three passes over one band, staggered; its coarse rows (the first band's with room
/// for all `nc` coarse cells, for the others to be appended).
fn one_band<T: Scalar, R: Stencil5<T> + ?Sized>(
    sweep: &Sweep<'_, T, R>,
    band: &mut Band<'_, T>,
    stop: &AtomicBool,
    nc: usize,
) -> Option<Vec<Coeffs5<T>>> {
    let (nx, ny, ncx) = (sweep.nx, sweep.ny, sweep.ncx);
    let Band {
        rows: fine_rows,
        window_rows,
        wx,
        wy,
        active,
    } = band;
    let (j0, j1) = (fine_rows.start, fine_rows.end);
    let (low_cut, high_cut) = (j0 > 0, j1 < ny);
    let pass1 = if low_cut { j0 + 2 } else { j0 }..if high_cut { j1 - 1 } else { j1 };
    let pass2 = if low_cut { j0 + 2 } else { j0 }..if high_cut { j1 - 2 } else { j1 };
    let (c0, len) = (j0 / 2, ncx * (j1 - j0).div_ceil(2));
    // The coarse rows, zeroed a coarse row at a time as pass 2 comes to them (while the
    // fresh memory is in cache, rather than in a pass of its own).
    let mut rows: Vec<Coeffs5<T>> = Vec::with_capacity(if j0 == 0 { nc } else { len });
    let mut north_below = vec![T::zero(); nx];
    if j0 > 0 {
        sweep.north_couplings(j0 - 1, &mut north_below);
    }
    let mut scratch = vec![T::zero(); 5 * nx];
    // Pass 0's output for the fine rows from `first` on.
    let size = nx * *window_rows;
    let (mut east, mut north, mut excess) = (
        vec![T::zero(); size],
        vec![T::zero(); size],
        vec![T::zero(); size],
    );
    let mut first = j0;
    for s in j0..j1 + LAG2 {
        if s < j1 {
            if stop.load(Ordering::Relaxed) {
                return None;
            }
            if s == first + *window_rows {
                let keep = nx * (*window_rows - HISTORY)..size;
                for v in [&mut east, &mut north, &mut excess] {
                    v.copy_within(keep.clone(), 0);
                }
                first = s - HISTORY;
            }
            let found = (&mut east[..], &mut north[..], &mut excess[..]);
            let flags = (&mut active[..], c0);
            if !sweep.conductances(s, first, found, flags, &mut north_below, &mut scratch) {
                stop.store(true, Ordering::Relaxed);
                return None;
            }
        }
        let found = Found {
            first,
            east: &east,
            north: &north,
            excess: &excess,
        };
        // The weights from the window's first row on.
        let at = nx * (first - j0);
        if let Some(j) = s.checked_sub(LAG1).filter(|j| pass1.contains(j)) {
            sweep.weights(j, found, &mut wx[at..], &mut wy[at..]);
        }
        if let Some(j) = s.checked_sub(LAG2).filter(|j| pass2.contains(j)) {
            // Pass 2 on row j adds into coarse rows up to j/2 + 1.
            rows.resize((ncx * (j / 2 + 2 - c0)).min(len), zero());
            let mut out = CoarseRows {
                first: c0,
                rows: &mut rows,
            };
            let weights = (&wx[at..], &wy[at..]);
            sweep.couplings(j, found, weights, (active, c0), &mut out, &mut scratch);
        }
    }
    rows.resize(len, zero());
    Some(rows)
}

#[cfg(test)]
#[path = "setup_bands_tests.rs"]
mod tests;

//! The lumped Galerkin coarse operator ([`CoarseOperator::LumpedGalerkin`]).

use std::ops::Range;

use super::aggregate::Axis;
use super::MAX_BANDS;
use crate::blocks::{join, threads_for};
use crate::operator::Stencil5;
use crate::scalar::lit;
use crate::space::Threaded;
use crate::{Coeffs5, Grid, Scalar};

#[cfg(doc)]
use super::CoarseOperator;

/// Fewest coarse rows a band of the product's passes takes (a band re-reads two fine rows on
/// each side and two coarse rows below).
const MIN_BAND_ROWS: usize = 16;

/// The Galerkin product `Pᵀ·A·P` (a 25-point stencil for this interpolation), lumped onto a
/// 5-point stencil, for the interpolation weights `weights(k) = (wx, wy)` of fine cell `k`
/// (as the level stores them, see `aggregate::split`). A positive entry is dropped and added to both diagonals (which can only
/// raise the energy). A negative entry `−g` between coarse cells `a` and `c` at offset
/// `(dx, dy)` is spread over the L-shaped lattice paths from `a` to `c` (one for a straight
/// offset, two otherwise), each edge of a path receiving `g·(dx² + dy²)/(|dx| + |dy|)` divided
/// by the number of paths: for a linear function this reproduces the energy of the dropped
/// entry exactly in every direction of the gradient for straight offsets, and on average over
/// directions for the others. A path through an inactive cell is replaced by the other; if
/// both are blocked the entry goes to both diagonals as `2g` (`(u_a − u_c)² ≤ 2u_a² + 2u_c²`).
pub(crate) fn galerkin_lumped<T: Scalar, R: Stencil5<T> + ?Sized>(
    fine: &R,
    ax: &Axis,
    ay: &Axis,
    weights: impl Fn(usize) -> (T, T) + Sync,
    grid: Grid,
    active: &[bool],
) -> Vec<Coeffs5<T>> {
    let bands = threads_for(&Threaded, fine.grid().cells()).min(MAX_BANDS);
    galerkin_in_bands(fine, (ax, ay, &weights), grid, active, bands)
}

/// [`galerkin_lumped`] with each pass cut into `bands` bands of coarse rows, side by side.
/// A band writes only its own coarse rows and visits the fine (or coarse) rows that reach them
/// in the order of one serial pass, so every sum is added in the same order for any `bands`.
fn galerkin_in_bands<T: Scalar, R: Stencil5<T> + ?Sized, W: Fn(usize) -> (T, T) + Sync>(
    fine: &R,
    (ax, ay, weights): (&Axis, &Axis, &W),
    grid: Grid,
    active: &[bool],
    bands: usize,
) -> Vec<Coeffs5<T>> {
    let (ncx, nc) = (grid.nx(), grid.cells());
    let product = Product::new(fine, (ax, ay, weights), grid, active);
    // Per coarse cell a: the entries (a, c) of the product for c at the offsets of the upper
    // half-plane (`upper_slot`), itself first; the product is symmetric, so each unordered
    // pair is summed once.
    let mut gal = vec![[T::zero(); 13]; nc];
    in_bands(
        0..grid.ny(),
        bands,
        &mut [&mut gal[..]],
        ncx,
        &|rows, out| {
            zero_first(&mut *out, [T::zero(); 13]);
            product.product_rows(rows, out[0]);
        },
    );
    // Per coarse cell: the conductance lumped onto its east and north edges, and what the
    // dropped or blocked pairs add to its diagonal.
    let mut east = vec![T::zero(); nc];
    let mut north = vec![T::zero(); nc];
    let mut diagonal = vec![T::zero(); nc];
    in_bands(
        0..grid.ny(),
        bands,
        &mut [&mut east[..], &mut north[..], &mut diagonal[..]],
        ncx,
        &|rows, out| {
            zero_first(&mut *out, T::zero());
            let [east, north, diagonal] = out else {
                unreachable!("three outputs")
            };
            product.lump_rows(&gal, rows, [east, north, diagonal]);
        },
    );
    (0..nc)
        .map(|a| {
            let (west, south) = (
                if a % ncx > 0 { east[a - 1] } else { T::zero() },
                if a >= ncx { north[a - ncx] } else { T::zero() },
            );
            Coeffs5 {
                center: gal[a][0] + diagonal[a] + east[a] + west + north[a] + south,
                west: -west,
                east: -east[a],
                south: -south,
                north: -north[a],
            }
        })
        .collect()
}

/// Write zeros over each of a band's outputs before the pass adds into them. The outputs come
/// zeroed from the allocator, but in untouched pages: a sum's first read would map the
/// shared zero page and its first write then fault again to copy it, which flushes the page
/// from the other threads' TLBs (an interrupt to every CPU the process runs on). Written
/// first, each page faults once, in the band's own thread. Measured on the contrast-10⁴
/// field at 2000²: these faults were a fifth of the hierarchy's set-up time.
pub(super) fn zero_first<E: Copy>(outputs: &mut [&mut [E]], zero: E) {
    for out in outputs.iter_mut() {
        out.fill(zero);
    }
}

/// A pass over a band of coarse rows, writing the band's part of each output.
pub(super) type BandPass<'a, E> = dyn Fn(Range<usize>, &mut [&mut [E]]) + Sync + 'a;

/// Run `pass(rows, outputs)` on `bands` bands of the coarse rows `rows`, each output cut at
/// the same rows (`ncx` entries per row): halves side by side on the pool, recursively.
pub(super) fn in_bands<E: Send>(
    rows: Range<usize>,
    bands: usize,
    outputs: &mut [&mut [E]],
    ncx: usize,
    pass: &BandPass<'_, E>,
) {
    if bands <= 1 || rows.len() < 2 * MIN_BAND_ROWS {
        pass(rows, outputs);
        return;
    }
    let mid = rows.start + rows.len() * (bands / 2) / bands;
    let mut low: Vec<&mut [E]> = Vec::with_capacity(outputs.len());
    let mut high: Vec<&mut [E]> = Vec::with_capacity(outputs.len());
    for out in outputs.iter_mut() {
        let (l, h) = std::mem::take(out).split_at_mut((mid - rows.start) * ncx);
        low.push(l);
        high.push(h);
    }
    join(
        true,
        || in_bands(rows.start..mid, bands / 2, &mut low, ncx, pass),
        || in_bands(mid..rows.end, bands - bands / 2, &mut high, ncx, pass),
    );
}

/// What both passes of the product read (the first pass is in `galerkin_rows.rs`).
pub(super) struct Product<'a, T, R: ?Sized, W> {
    pub(super) fine: &'a R,
    pub(super) ax: &'a Axis,
    pub(super) ay: &'a Axis,
    pub(super) weights: &'a W,
    pub(super) ncx: usize,
    pub(super) ncy: usize,
    pub(super) active: &'a [bool],
    offsets: Vec<PairOffset<T>>,
    /// Coarse rows whose cells are all active: a pair inside three such rows has every path
    /// open (a path stays in the box spanned by its two cells).
    pub(super) full_row: Vec<bool>,
}

impl<'a, T: Scalar, R: Stencil5<T> + ?Sized, W> Product<'a, T, R, W> {
    /// The product of `fine` with the interpolation `(ax, ay, weights)` onto the coarse
    /// `grid` whose cells `active` carry an unknown.
    pub(super) fn new(
        fine: &'a R,
        (ax, ay, weights): (&'a Axis, &'a Axis, &'a W),
        grid: Grid,
        active: &'a [bool],
    ) -> Self {
        let ncx = grid.nx();
        Product {
            fine,
            ax,
            ay,
            weights,
            ncx,
            ncy: grid.ny(),
            active,
            offsets: pair_offsets(),
            full_row: active.chunks(ncx).map(|r| r.iter().all(|&on| on)).collect(),
        }
    }
}

impl<T: Scalar, R: Stencil5<T> + ?Sized, W: Fn(usize) -> (T, T) + Sync> Product<'_, T, R, W> {
    /// The lumping of every pair into the edges and diagonals of the coarse rows `rows` (those
    /// rows only: `east`, `north`, `diagonal` start at row `rows.start`): the pairs whose first
    /// cell lies up to two rows below, in grid order.
    #[inline(never)]
    fn lump_rows(&self, gal: &[[T; 13]], rows: Range<usize>, out: [&mut &mut [T]; 3]) {
        let [east, north, diagonal] = out;
        let (east, north, diagonal): (&mut [T], &mut [T], &mut [T]) = (east, north, diagonal);
        let (ncx, ncy, active) = (self.ncx, self.ncy, self.active);
        let base = rows.start * ncx;
        let two: T = lit(2.0);
        let mine = base..rows.end * ncx;
        let add = |v: &mut [T], k: usize, h: T| {
            if mine.contains(&k) {
                v[k - base] = v[k - base] + h;
            }
        };
        let inner: Vec<InnerPair<T>> = self
            .offsets
            .iter()
            .map(|p| InnerPair::new(p, ncx))
            .collect();
        for cj in rows.start.saturating_sub(2)..rows.end {
            let all_open = self.full_row[cj..(cj + 3).min(ncy)]
                .iter()
                .all(|&full| full);
            // Every cell a pair from this row reaches (rows cj to cj + 2) exists, is active,
            // and is this band's: no test per pair but the two columns on each side.
            let inner_row = all_open && cj >= rows.start && cj + 2 < rows.end.min(ncy);
            for ci in 0..ncx {
                let a = ci + ncx * cj;
                if !active[a] {
                    continue;
                }
                if inner_row && ci >= 2 && ci + 2 < ncx {
                    let (gal_a, own) = (&gal[a], a - base);
                    for pair in &inner {
                        // The skips of the general path below, as selects: a zero `v` adds
                        // nothing, a positive one nothing to the edges.
                        let v = gal_a[pair.slot];
                        let (no_diagonal, no_edges) = (v == T::zero(), v >= T::zero());
                        let c = own + pair.to;
                        for d in [own, c] {
                            let sum = diagonal[d];
                            diagonal[d] = if no_diagonal { sum } else { sum + v };
                        }
                        // `/ count` as `· (1 / count)`: the same bits, count being 1 or 2.
                        let share = -v * pair.weight * pair.inverse_count;
                        // The edges of a pair's paths are distinct, so east and north apart.
                        for &off in pair.east() {
                            let edge = &mut east[own.wrapping_add_signed(off)];
                            *edge = if no_edges { *edge } else { *edge + share };
                        }
                        for &off in pair.north() {
                            let edge = &mut north[own.wrapping_add_signed(off)];
                            *edge = if no_edges { *edge } else { *edge + share };
                        }
                    }
                    continue;
                }
                for pair in &self.offsets {
                    let (ti, tj) = (ci as i64 + pair.dx, cj as i64 + pair.dy);
                    if ti < 0 || ti >= ncx as i64 || tj >= ncy as i64 {
                        continue;
                    }
                    let c = ti as usize + ncx * tj as usize;
                    let v = gal[a][pair.slot];
                    if v == T::zero() || !active[c] {
                        continue;
                    }
                    // Remove the pair's term from the diagonals (it contributed −v to each).
                    add(diagonal, a, v);
                    add(diagonal, c, v);
                    if v > T::zero() {
                        continue;
                    }
                    let gcond = -v;
                    let open = |p: &Path| {
                        p.steps().iter().all(|&(di, dj, along_x)| {
                            let from = (ci as i64 + di) as usize + ncx * (cj as i64 + dj) as usize;
                            active[from] && active[if along_x { from + 1 } else { from + ncx }]
                        })
                    };
                    let usable = [&pair.paths[0], &pair.paths[1]];
                    let usable = &usable[..pair.count];
                    let count = if all_open {
                        pair.count
                    } else {
                        usable.iter().filter(|p| open(p)).count()
                    };
                    if count == 0 {
                        add(diagonal, a, two * gcond);
                        add(diagonal, c, two * gcond);
                        continue;
                    }
                    let share = gcond * pair.weight / T::from(count).unwrap_or_else(T::one);
                    for p in usable.iter().filter(|p| all_open || open(p)) {
                        for &(di, dj, along_x) in p.steps() {
                            let from = (ci as i64 + di) as usize + ncx * (cj as i64 + dj) as usize;
                            add(if along_x { east } else { north }, from, share);
                        }
                    }
                }
            }
        }
    }
}

/// Index of the offset `(ox, oy)` (each in `−2..=2`) among the thirteen of the upper half-plane
/// with the origin (`oy > 0`, or `oy = 0` and `ox ≥ 0`), the origin first; `None` for the
/// others.
#[inline]
pub(super) fn upper_slot(ox: i64, oy: i64) -> Option<usize> {
    match oy {
        0 if ox >= 0 => Some(ox as usize),
        1 | 2 => Some((3 + 5 * (oy - 1) + ox + 2) as usize),
        _ => None,
    }
}

/// One of the twelve offsets `(dx, dy)` of a coarse pair in the upper half-plane (each
/// unordered pair once), with its `upper_slot`, the weight each path edge
/// receives per unit of conductance, and its L-shaped lattice paths (one for a straight
/// offset, two for a diagonal one).
struct PairOffset<T> {
    dx: i64,
    dy: i64,
    slot: usize,
    weight: T,
    paths: [Path; 2],
    count: usize,
}

/// A [`PairOffset`] for a first cell at least two columns from each side whose pairs are all
/// open: the offset of the second cell and of the east and north edges of its paths (in the
/// order of the paths, then of their steps) as index offsets on a coarse grid `ncx` cells
/// wide.
struct InnerPair<T> {
    slot: usize,
    to: usize,
    weight: T,
    /// `1 / count` of the paths, 1 or 1/2: exact, so multiplying by it is dividing by the
    /// count (both round the same real number).
    inverse_count: T,
    east: [isize; 4],
    east_len: usize,
    north: [isize; 4],
    north_len: usize,
}

impl<T: Scalar> InnerPair<T> {
    fn new(pair: &PairOffset<T>, ncx: usize) -> Self {
        let ncx = ncx as isize;
        let mut inner = InnerPair {
            slot: pair.slot,
            to: (pair.dx as isize + ncx * pair.dy as isize) as usize,
            weight: pair.weight,
            inverse_count: if pair.count == 2 { lit(0.5) } else { T::one() },
            east: [0; 4],
            east_len: 0,
            north: [0; 4],
            north_len: 0,
        };
        for path in &pair.paths[..pair.count] {
            for &(di, dj, along_x) in path.steps() {
                let off = di as isize + ncx * dj as isize;
                if along_x {
                    inner.east[inner.east_len] = off;
                    inner.east_len += 1;
                } else {
                    inner.north[inner.north_len] = off;
                    inner.north_len += 1;
                }
            }
        }
        inner
    }

    /// Offsets of the east edges of the paths (those of the x steps), in path order.
    #[inline]
    fn east(&self) -> &[isize] {
        &self.east[..self.east_len]
    }

    /// Offsets of the north edges of the paths, in path order.
    #[inline]
    fn north(&self) -> &[isize] {
        &self.north[..self.north_len]
    }
}

/// The twelve pair offsets, in the order the lumping visits them.
fn pair_offsets<T: Scalar>() -> Vec<PairOffset<T>> {
    let mut offsets = Vec::with_capacity(12);
    for dy in 0i64..=2 {
        for dx in -2i64..=2 {
            if dy == 0 && dx <= 0 {
                continue;
            }
            let weight = (dx * dx + dy * dy) as f64 / (dx.abs() + dy.abs()) as f64;
            offsets.push(PairOffset {
                dx,
                dy,
                slot: upper_slot(dx, dy).unwrap_or(0),
                weight: lit(weight),
                paths: [lattice_path(dx, dy, true), lattice_path(dx, dy, false)],
                count: if dx == 0 || dy == 0 { 1 } else { 2 },
            });
        }
    }
    offsets
}

/// A lattice path of at most four unit steps between coarse cells: per step the cell it leaves,
/// relative to the path's start (the lower of the two cells for a step towards −x), and
/// whether it runs along x.
struct Path {
    steps: [(i64, i64, bool); 4],
    len: usize,
}

impl Path {
    fn steps(&self) -> &[(i64, i64, bool)] {
        &self.steps[..self.len]
    }
}

/// The L-shaped path by the offset `(dx, dy)` (`dy ≥ 0`, at most two cells each way) from the
/// cell at `(0, 0)`: the x steps first when `x_first`, else the y steps first.
fn lattice_path(dx: i64, dy: i64, x_first: bool) -> Path {
    let mut path = Path {
        steps: [(0, 0, false); 4],
        len: 0,
    };
    let (mut i, mut j) = (0i64, 0i64);
    for along_x in [x_first, !x_first] {
        let moves = if along_x { dx.abs() } else { dy };
        for _ in 0..moves {
            path.steps[path.len] = if along_x {
                let next = i + dx.signum();
                let step = (i.min(next), j, true);
                i = next;
                step
            } else {
                j += 1;
                (i, j - 1, false)
            };
            path.len += 1;
        }
    }
    path
}

#[cfg(test)]
mod tests {
    use super::super::level::Level;
    use super::super::CoarseOperator;
    use super::*;
    use crate::testing::{band_cut_fields, Numbers};

    /// The passes in 2 to 6 bands of coarse rows, serial and on the pool, give the bits of one
    /// band, on fields with conductances over four decades, fixed cells (some on band cuts),
    /// storage, and odd and even sides.
    #[test]
    fn bands_give_the_bits_of_one_pass() {
        for op in band_cut_fields(&mut Numbers(5)) {
            let (nx, ny) = (op.grid().nx(), op.grid().ny());
            let level: Level<f64> = Level::below(&op, CoarseOperator::Upscaled).unwrap();
            let grid = level.op.grid;
            let active: Vec<bool> = (0..grid.cells())
                .map(|k| !level.op.inactive.contains(k))
                .collect();
            let weights = |k: usize| (f64::from(level.wx[k]), f64::from(level.wy[k]));
            let build = |bands| {
                galerkin_in_bands(&op, (&level.ax, &level.ay, &weights), grid, &active, bands)
                    .iter()
                    .map(|c| [c.center, c.west, c.east, c.south, c.north].map(f64::to_bits))
                    .collect::<Vec<_>>()
            };
            let one = build(1);
            for bands in 2..=6 {
                assert_eq!(one, build(bands), "{nx} x {ny}, {bands} bands");
            }
        }
    }
}

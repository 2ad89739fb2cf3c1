//! The first pass of the lumped Galerkin product (`galerkin.rs`): per fine cell, its row of
//! `A·P` on the 3 × 3 coarse cells around its aggregate, times its row of `P`, into the
//! upper-half-plane entries of the coarse rows of a band. `P`'s rows are computed once per
//! fine row and each target's entries come from a table, not a test per entry; every sum
//! takes the same terms in the same order as the cell-by-cell definition kept in the tests.

use std::ops::Range;

use super::aggregate::split;
use super::galerkin::Product;
use crate::operator::Stencil5;
use crate::{Coeffs5, Scalar};

impl<T: Scalar, R: Stencil5<T> + ?Sized, W: Fn(usize) -> (T, T) + Sync> Product<'_, T, R, W> {
    /// The product's entries of the coarse rows `rows` into `gal` (those rows only): the fine
    /// rows whose `P` rows reach them (`2·start − 1` to `2·end`; one more on each side is
    /// visited), in grid order. Per fine cell `k`: row `k` of `A·P` on the 3 × 3 coarse cells
    /// around `k`'s own aggregate (every neighbour's aggregates lie there), the neighbours in
    /// the order centre, west, east, south, north; then `P`'s row `k` times it into the rows
    /// of the product. The rows of `P` are computed once per fine row, into a ring of three.
    pub(super) fn product_rows(&self, rows: Range<usize>, gal: &mut [[T; 13]]) {
        let g = self.fine.grid();
        let (nx, ny, ncx, active) = (g.nx(), g.ny(), self.ncx, self.active);
        let (first, last) = (
            (2 * rows.start).saturating_sub(2),
            (2 * rows.end + 2).min(ny),
        );
        if first >= last {
            return;
        }
        let base = rows.start * ncx;
        let fixed = self.fine.fixed();
        let fine_active = |k: usize| !fixed.is_some_and(|f| f.contains(k));
        // Per fine column: its parent and neighbour aggregates.
        let cols: Vec<(usize, usize)> = (0..nx)
            .map(|i| (self.ax.parent(i), self.ax.neighbour(i)))
            .collect();
        // The rows of P of the fine rows j − 1, j, j + 1, at `j % 3`: the weights of the
        // coarse cells (parent x, parent y), (neighbour x, parent y), (parent x, neighbour y),
        // (neighbour x, neighbour y).
        let mut ring = vec![[T::zero(); 4]; 3 * nx];
        let fill = |ring: &mut [[T; 4]], j: usize| {
            let row = &mut ring[(j % 3) * nx..][..nx];
            for (i, p) in row.iter_mut().enumerate() {
                let (wx, wy) = (self.weights)(i + nx * j);
                let ((u1, w1), (u2, w2)) = (split(wx), split(wy));
                *p = [u1 * u2, w1 * u2, u1 * w2, w1 * w2];
            }
        };
        // Fine columns with the pattern of aggregates of a cell away from the ends.
        let canon_x: Vec<bool> = (0..nx)
            .map(|i| {
                let rel = |ii: usize| (cols[ii].0 + 1 - cols[i].0, cols[ii].1 + 1 - cols[i].0);
                i > 0 && i + 1 < nx && [rel(i - 1), rel(i), rel(i + 1)] == block_pattern(i % 2 == 1)
            })
            .collect();
        if first > 0 {
            fill(&mut ring, first - 1);
        }
        fill(&mut ring, first);
        for j in first..last {
            if j + 1 < ny {
                fill(&mut ring, j + 1);
            }
            let (pj, qj) = (self.ay.parent(j), self.ay.neighbour(j));
            // Rows of the 3 × 3 block (relative to pj − 1) of a fine row's parent and
            // neighbour aggregates.
            let rel_y = |jj: usize| {
                (
                    3 * (self.ay.parent(jj) + 1 - pj),
                    3 * (self.ay.neighbour(jj) + 1 - pj),
                )
            };
            let here = rel_y(j);
            let below = if j > 0 { rel_y(j - 1) } else { here };
            let above = if j + 1 < ny { rel_y(j + 1) } else { here };
            let ring_row = |jj: usize| &ring[(jj % 3) * nx..][..nx];
            let (p_here, p_below, p_above) = (
                ring_row(j),
                ring_row(j.saturating_sub(1)),
                ring_row((j + 1).min(ny - 1)),
            );
            // Every coarse cell in the rows pj − 1 to pj + 1 active: no test per entry.
            let open = self.full_row[pj.saturating_sub(1)..(pj + 2).min(self.ncy)]
                .iter()
                .all(|&full| full);
            // The coarse rows of k's own P row: which of them belong to this band.
            let mine_y = [rows.contains(&pj), rows.contains(&qj)];
            if !mine_y[0] && !mine_y[1] {
                continue;
            }
            let ty = [1, qj + 1 - pj];
            let canon_y = j > 0
                && j + 1 < ny
                && [below, here, above] == block_pattern(j % 2 == 1).map(|(a, b)| (3 * a, 3 * b));
            let fast_row = open && canon_y;
            for i in 0..nx {
                let k = i + nx * j;
                if !fine_active(k) {
                    continue;
                }
                let c = self.fine.eliminated_coeffs(i, j);
                let (pi, qi) = cols[i];
                if fast_row && canon_x[i] {
                    let p = [
                        p_here[i],
                        p_here[i - 1],
                        p_here[i + 1],
                        p_below[i],
                        p_above[i],
                    ];
                    let on = [
                        c.west != T::zero() && fine_active(k - 1),
                        c.east != T::zero() && fine_active(k + 1),
                        c.south != T::zero() && fine_active(k - nx),
                        c.north != T::zero() && fine_active(k + nx),
                    ];
                    let row_of = |ci: usize, sy: usize| {
                        let cj = if sy == 0 { pj } else { qj };
                        let a = ci + ncx * cj;
                        (mine_y[sy] && active[a]).then(|| a - base)
                    };
                    let targets = [row_of(pi, 0), row_of(qi, 0), row_of(pi, 1), row_of(qi, 1)];
                    match (i % 2 == 1, j % 2 == 1) {
                        (false, false) => interior_cell::<T, false, false>(&c, on, p, targets, gal),
                        (true, false) => interior_cell::<T, true, false>(&c, on, p, targets, gal),
                        (false, true) => interior_cell::<T, false, true>(&c, on, p, targets, gal),
                        (true, true) => interior_cell::<T, true, true>(&c, on, p, targets, gal),
                    }
                    continue;
                }
                let rel_x = |ii: usize| (cols[ii].0 + 1 - pi, cols[ii].1 + 1 - pi);
                let mut ap = [T::zero(); 9];
                let mut add =
                    |a: T, p: [T; 4], (x0, x1): (usize, usize), (y0, y1): (usize, usize)| {
                        for (slot, w2) in [y0 + x0, y0 + x1, y1 + x0, y1 + x1].into_iter().zip(p) {
                            ap[slot] = ap[slot] + a * w2;
                        }
                    };
                if c.center != T::zero() {
                    add(c.center, p_here[i], rel_x(i), here);
                }
                if i > 0 && c.west != T::zero() && fine_active(k - 1) {
                    add(c.west, p_here[i - 1], rel_x(i - 1), here);
                }
                if i + 1 < nx && c.east != T::zero() && fine_active(k + 1) {
                    add(c.east, p_here[i + 1], rel_x(i + 1), here);
                }
                if j > 0 && c.south != T::zero() && fine_active(k - nx) {
                    add(c.south, p_below[i], rel_x(i), below);
                }
                if j + 1 < ny && c.north != T::zero() && fine_active(k + nx) {
                    add(c.north, p_above[i], rel_x(i), above);
                }
                let tx = [1, qi + 1 - pi];
                let targets = [(0, 0), (1, 0), (0, 1), (1, 1)];
                for ((sx, sy), w1) in targets.into_iter().zip(p_here[i]) {
                    let (ci, cj) = (if sx == 0 { pi } else { qi }, if sy == 0 { pj } else { qj });
                    if !mine_y[sy] || w1 == T::zero() || !active[ci + ncx * cj] {
                        continue;
                    }
                    let row = &mut gal[ci + ncx * cj - base];
                    let entries = UPPER_ENTRIES[ty[sy]][tx[sx]].iter();
                    if open {
                        // A zero entry keeps the sum as it is (selected, not branched on).
                        for &(e, slot) in entries {
                            let (v, sum) = (ap[e], row[slot]);
                            row[slot] = if v == T::zero() { sum } else { sum + w1 * v };
                        }
                        continue;
                    }
                    for &(e, slot) in entries {
                        let v = ap[e];
                        if v == T::zero()
                            || !(open || active[(pi + e % 3 - 1) + ncx * (pj + e / 3 - 1)])
                        {
                            continue;
                        }
                        row[slot] = row[slot] + w1 * v;
                    }
                }
            }
        }
    }
}

/// Block positions (0 to 2 along one axis, from the own aggregate's predecessor) of the parent
/// and neighbour aggregates of the previous, own and next fine cells, for a fine cell away
/// from the ends of its axis, by its parity (the left cell of a pair looks back, the right
/// one forward).
const fn block_pattern(odd: bool) -> [(usize, usize); 3] {
    if odd {
        [(1, 0), (1, 2), (2, 1)]
    } else {
        [(0, 1), (1, 0), (1, 2)]
    }
}

/// One fine cell of [`Product::product_rows`] with [`block_pattern`] along both axes and its
/// 3 × 3 coarse cells all active: the sums of the general path, every block position known at
/// compile time. `p`: `P`'s rows of the own, west, east, south and north cells; `on`: whether
/// the west, east, south and north couplings count (nonzero, to an unknown); `targets`: the
/// row of `gal` of each coarse cell of the own `P` row, if this band's and active.
#[inline(always)]
fn interior_cell<T: Scalar, const XODD: bool, const YODD: bool>(
    c: &Coeffs5<T>,
    on: [bool; 4],
    p: [[T; 4]; 5],
    targets: [Option<usize>; 4],
    gal: &mut [[T; 13]],
) {
    let (x, y) = (block_pattern(XODD), block_pattern(YODD));
    let mut ap = [T::zero(); 9];
    let mut add = |a: T, w: [T; 4], (x0, x1): (usize, usize), (y0, y1): (usize, usize)| {
        let entries = [3 * y0 + x0, 3 * y0 + x1, 3 * y1 + x0, 3 * y1 + x1];
        for (e, w2) in entries.into_iter().zip(w) {
            ap[e] = ap[e] + a * w2;
        }
    };
    if c.center != T::zero() {
        add(c.center, p[0], x[1], y[1]);
    }
    if on[0] {
        add(c.west, p[1], x[0], y[1]);
    }
    if on[1] {
        add(c.east, p[2], x[2], y[1]);
    }
    if on[2] {
        add(c.south, p[3], x[1], y[0]);
    }
    if on[3] {
        add(c.north, p[4], x[1], y[2]);
    }
    // Targets in the order of the P row: (parent, parent), (neighbour, parent), (parent,
    // neighbour), (neighbour, neighbour).
    let (tx, ty) = ([1, x[1].1], [1, y[1].1]);
    for (t, (target, w1)) in targets.into_iter().zip(p[0]).enumerate() {
        let Some(r) = target else {
            continue;
        };
        if w1 == T::zero() {
            continue;
        }
        let row = &mut gal[r];
        for &(e, slot) in UPPER_ENTRIES[ty[t / 2]][tx[t % 2]].iter() {
            let (v, sum) = (ap[e], row[slot]);
            row[slot] = if v == T::zero() { sum } else { sum + w1 * v };
        }
    }
}

/// The entries of the 3 × 3 block of `A·P` (`e = 3·row + column`) that fall in the upper
/// half-plane of a target coarse cell at block position `(tx, ty)`, with their `upper_slot`,
/// in entry order.
struct UpperEntries {
    list: [(usize, usize); 9],
    len: usize,
}

impl UpperEntries {
    #[inline]
    fn iter(&self) -> std::slice::Iter<'_, (usize, usize)> {
        self.list[..self.len].iter()
    }
}

/// [`UpperEntries`] per target position, `[ty][tx]`.
const UPPER_ENTRIES: [[UpperEntries; 3]; 3] = upper_entries();

const fn upper_entries() -> [[UpperEntries; 3]; 3] {
    const EMPTY: UpperEntries = UpperEntries {
        list: [(0, 0); 9],
        len: 0,
    };
    let mut table = [
        [EMPTY, EMPTY, EMPTY],
        [EMPTY, EMPTY, EMPTY],
        [EMPTY, EMPTY, EMPTY],
    ];
    let mut ty = 0;
    while ty < 3 {
        let mut tx = 0;
        while tx < 3 {
            let mut e = 0;
            while e < 9 {
                let (ox, oy) = ((e % 3) as i64 - tx as i64, (e / 3) as i64 - ty as i64);
                // `upper_slot(ox, oy)`, which is not `const`.
                let slot = match oy {
                    0 if ox >= 0 => Some(ox as usize),
                    1 | 2 => Some((3 + 5 * (oy - 1) + ox + 2) as usize),
                    _ => None,
                };
                if let Some(slot) = slot {
                    let entries = &mut table[ty][tx];
                    entries.list[entries.len] = (e, slot);
                    entries.len += 1;
                }
                e += 1;
            }
            tx += 1;
        }
        ty += 1;
    }
    table
}

#[cfg(test)]
mod tests {
    use super::super::galerkin::upper_slot;
    use super::super::level::Level;
    use super::super::CoarseOperator;
    use super::*;
    use crate::testing::{diffusion, Numbers};
    use crate::Grid;

    impl<T: Scalar, R: Stencil5<T> + ?Sized, W: Fn(usize) -> (T, T) + Sync> Product<'_, T, R, W> {
        /// Row `k` (fine cell `(i, j)`) of `P`: coarse cell and weight of its four entries.
        #[inline]
        fn p_row(&self, i: usize, j: usize, k: usize) -> [(usize, usize, T); 4] {
            let (ax, ay) = (self.ax, self.ay);
            let (pi, qi, pj, qj) = (ax.parent(i), ax.neighbour(i), ay.parent(j), ay.neighbour(j));
            let (wx, wy) = (self.weights)(k);
            let ((u1, w1), (u2, w2)) = (split(wx), split(wy));
            [
                (pi, pj, u1 * u2),
                (qi, pj, w1 * u2),
                (pi, qj, u1 * w2),
                (qi, qj, w1 * w2),
            ]
        }

        /// [`Product::product_rows`] as it was first written, cell by cell: `P`'s row computed
        /// for each cell and each of its neighbours, the offset of every entry tested.
        fn product_rows_by_cell(&self, rows: Range<usize>, gal: &mut [[T; 13]]) {
            let g = self.fine.grid();
            let (nx, ny, ncx, active) = (g.nx(), g.ny(), self.ncx, self.active);
            let base = rows.start * ncx;
            let fixed = self.fine.fixed();
            let fine_active = |k: usize| !fixed.is_some_and(|f| f.contains(k));
            for j in (2 * rows.start).saturating_sub(2)..(2 * rows.end + 2).min(ny) {
                for i in 0..nx {
                    let k = i + nx * j;
                    if !fine_active(k) {
                        continue;
                    }
                    let c = self.fine.eliminated_coeffs(i, j);
                    let mut nbrs = [(i, j, k, c.center); 5];
                    let mut m = 1;
                    if i > 0 {
                        nbrs[m] = (i - 1, j, k - 1, c.west);
                        m += 1;
                    }
                    if i + 1 < nx {
                        nbrs[m] = (i + 1, j, k + 1, c.east);
                        m += 1;
                    }
                    if j > 0 {
                        nbrs[m] = (i, j - 1, k - nx, c.south);
                        m += 1;
                    }
                    if j + 1 < ny {
                        nbrs[m] = (i, j + 1, k + nx, c.north);
                        m += 1;
                    }
                    // Row k of A·P, on the 3 × 3 coarse cells around k's own aggregate (every
                    // neighbour's aggregates lie there), then P's row k times it into the product.
                    let (pi, pj) = (self.ax.parent(i), self.ay.parent(j));
                    let mut ap = [[T::zero(); 3]; 3];
                    for &(gi, gj, gk, a) in &nbrs[..m] {
                        if a == T::zero() || !fine_active(gk) {
                            continue;
                        }
                        for (di, dj, w2) in self.p_row(gi, gj, gk) {
                            let slot = &mut ap[dj + 1 - pj][di + 1 - pi];
                            *slot = *slot + a * w2;
                        }
                    }
                    for (ci, cj, w1) in self.p_row(i, j, k) {
                        if !rows.contains(&cj) || w1 == T::zero() || !active[ci + ncx * cj] {
                            continue;
                        }
                        let row = &mut gal[ci + ncx * cj - base];
                        for (dj, line) in ap.iter().enumerate() {
                            for (di, &v) in line.iter().enumerate() {
                                // The coarse cell (pi + di − 1, pj + dj − 1), at this offset from
                                // (ci, cj).
                                let (ox, oy) = (
                                    (pi + di) as i64 - 1 - ci as i64,
                                    (pj + dj) as i64 - 1 - cj as i64,
                                );
                                let Some(slot) = upper_slot(ox, oy) else {
                                    continue;
                                };
                                if v == T::zero() || !active[(pi + di - 1) + ncx * (pj + dj - 1)] {
                                    continue;
                                }
                                row[slot] = row[slot] + w1 * v;
                            }
                        }
                    }
                }
            }
        }
    }

    /// The pass gives the bits of the cell-by-cell definition, for the whole grid and for
    /// bands of rows (the cuts inside and at the ends), on fields with conductances over
    /// four decades, fixed cells (on the edges, inside, on band cuts), and odd and even sides.
    #[test]
    fn rows_give_the_bits_of_the_cell_by_cell_product() {
        let mut numbers = Numbers(11);
        for (nx, ny) in [(40, 60), (33, 59), (17, 30), (2, 9), (7, 1)] {
            let fixed: Vec<usize> = [0, nx + 3, 14 * nx + 5, 15 * nx, 20 * nx + 1, nx * ny - 1]
                .into_iter()
                .filter(|&k| k < nx * ny)
                .collect();
            let storage: Vec<f64> = (0..nx * ny).map(|_| numbers.next()).collect();
            let mut conductance = || 10f64.powf(4.0 * numbers.next() - 2.0);
            let op = diffusion(nx, ny, &mut conductance, &|k| storage[k], &fixed);
            let level: Level<f64> = Level::below(&op, CoarseOperator::Upscaled).unwrap();
            let grid: Grid = level.op.grid;
            let active: Vec<bool> = (0..grid.cells())
                .map(|k| !level.op.inactive.contains(k))
                .collect();
            let weights = |k: usize| (f64::from(level.wx[k]), f64::from(level.wy[k]));
            let product = Product::new(&op, (&level.ax, &level.ay, &weights), grid, &active);
            let (ncx, ncy) = (grid.nx(), grid.ny());
            let bits = |gal: Vec<[f64; 13]>| {
                gal.iter()
                    .map(|row| row.map(f64::to_bits))
                    .collect::<Vec<_>>()
            };
            for rows in [0..ncy, 0..ncy / 3, ncy / 3..ncy / 2 + 1, ncy / 2..ncy] {
                let mut fast = vec![[0.0; 13]; rows.len() * ncx];
                let mut reference = fast.clone();
                product.product_rows(rows.clone(), &mut fast);
                product.product_rows_by_cell(rows.clone(), &mut reference);
                assert_eq!(bits(fast), bits(reference), "{nx} x {ny}, rows {rows:?}");
            }
        }
    }
}

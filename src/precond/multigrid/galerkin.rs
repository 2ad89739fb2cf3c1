//! The lumped Galerkin coarse operator ([`CoarseOperator::LumpedGalerkin`]).

use super::aggregate::{split, Axis};
use crate::operator::Stencil5;
use crate::scalar::lit;
use crate::{Coeffs5, Grid, Scalar};

#[cfg(doc)]
use super::CoarseOperator;

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
    weights: impl Fn(usize) -> (T, T),
    grid: Grid,
    active: &[bool],
) -> Vec<Coeffs5<T>> {
    let g = fine.grid();
    let (nx, ny) = (g.nx(), g.ny());
    let (ncx, ncy, nc) = (grid.nx(), grid.ny(), grid.cells());
    let fixed = fine.fixed();
    let fine_active = |k: usize| !fixed.is_some_and(|f| f.contains(k));
    let p_row = |i: usize, j: usize, k: usize| -> [(usize, usize, T); 4] {
        let (pi, qi, pj, qj) = (ax.parent(i), ax.neighbour(i), ay.parent(j), ay.neighbour(j));
        let (wx, wy) = weights(k);
        let ((u1, w1), (u2, w2)) = (split(wx), split(wy));
        [
            (pi, pj, u1 * u2),
            (qi, pj, w1 * u2),
            (pi, qj, u1 * w2),
            (qi, qj, w1 * w2),
        ]
    };
    // Per coarse cell a: the entries (a, c) of the product for c at the offsets of the upper
    // half-plane (`upper_slot`), itself first; the product is symmetric, so each unordered
    // pair is summed once.
    let mut gal = vec![[T::zero(); 13]; nc];
    for j in 0..ny {
        for i in 0..nx {
            let k = i + nx * j;
            if !fine_active(k) {
                continue;
            }
            let c = fine.eliminated_coeffs(i, j);
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
            let (pi, pj) = (ax.parent(i), ay.parent(j));
            let mut ap = [[T::zero(); 3]; 3];
            for &(gi, gj, gk, a) in &nbrs[..m] {
                if a == T::zero() || !fine_active(gk) {
                    continue;
                }
                for (di, dj, w2) in p_row(gi, gj, gk) {
                    let slot = &mut ap[dj + 1 - pj][di + 1 - pi];
                    *slot = *slot + a * w2;
                }
            }
            for (ci, cj, w1) in p_row(i, j, k) {
                if w1 == T::zero() || !active[ci + ncx * cj] {
                    continue;
                }
                let row = &mut gal[ci + ncx * cj];
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
    // Per coarse cell: the conductance lumped onto its east and north edges, and what the
    // dropped or blocked pairs add to its diagonal.
    let mut east = vec![T::zero(); nc];
    let mut north = vec![T::zero(); nc];
    let mut diagonal = vec![T::zero(); nc];
    let two: T = lit(2.0);
    let offsets = pair_offsets::<T>();
    // Coarse rows whose cells are all active: a pair inside three such rows has every path
    // open (a path stays in the box spanned by its two cells).
    let full_row: Vec<bool> = active.chunks(ncx).map(|r| r.iter().all(|&on| on)).collect();
    for cj in 0..ncy {
        let all_open = full_row[cj..(cj + 3).min(ncy)].iter().all(|&full| full);
        for ci in 0..ncx {
            let a = ci + ncx * cj;
            if !active[a] {
                continue;
            }
            for pair in &offsets {
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
                diagonal[a] = diagonal[a] + v;
                diagonal[c] = diagonal[c] + v;
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
                    diagonal[a] = diagonal[a] + two * gcond;
                    diagonal[c] = diagonal[c] + two * gcond;
                    continue;
                }
                let share = gcond * pair.weight / T::from(count).unwrap_or_else(T::one);
                for p in usable.iter().filter(|p| all_open || open(p)) {
                    for &(di, dj, along_x) in p.steps() {
                        let from = (ci as i64 + di) as usize + ncx * (cj as i64 + dj) as usize;
                        let edge = if along_x { &mut east } else { &mut north };
                        edge[from] = edge[from] + share;
                    }
                }
            }
        }
    }
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

/// Index of the offset `(ox, oy)` (each in `−2..=2`) among the thirteen of the upper half-plane
/// with the origin (`oy > 0`, or `oy = 0` and `ox ≥ 0`), the origin first; `None` for the
/// others.
#[inline]
fn upper_slot(ox: i64, oy: i64) -> Option<usize> {
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

//! The lumped Galerkin coarse operator ([`CoarseOperator::LumpedGalerkin`]).

use super::aggregate::{split, Axis};
use crate::operator::Stencil5;
use crate::scalar::lit;
use crate::{Coeffs5, Grid, Scalar};

#[cfg(doc)]
use super::CoarseOperator;

/// The Galerkin product `Pᵀ·A·P` (a 25-point stencil for this interpolation), lumped onto a
/// 5-point stencil. A positive entry is dropped and added to both diagonals (which can only
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
    wx: &[T],
    wy: &[T],
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
        let ((u1, w1), (u2, w2)) = (split(wx[k]), split(wy[k]));
        [
            (pi, pj, u1 * u2),
            (qi, pj, w1 * u2),
            (pi, qj, u1 * w2),
            (qi, qj, w1 * w2),
        ]
    };
    let mut gal = vec![[T::zero(); 25]; nc];
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
            let pf = p_row(i, j, k);
            for &(gi, gj, gk, a) in &nbrs[..m] {
                if a == T::zero() || !fine_active(gk) {
                    continue;
                }
                let pg = p_row(gi, gj, gk);
                for &(ci, cj, w1) in &pf {
                    if w1 == T::zero() || !active[ci + ncx * cj] {
                        continue;
                    }
                    for &(di, dj, w2) in &pg {
                        if w2 == T::zero() || !active[di + ncx * dj] {
                            continue;
                        }
                        let d = (di + 2 - ci) + 5 * (dj + 2 - cj);
                        let slot = &mut gal[ci + ncx * cj][d];
                        *slot = *slot + w1 * a * w2;
                    }
                }
            }
        }
    }
    let zero = Coeffs5 {
        center: T::zero(),
        west: T::zero(),
        east: T::zero(),
        south: T::zero(),
        north: T::zero(),
    };
    let mut rows = vec![zero; nc];
    for (kc, row) in rows.iter_mut().enumerate() {
        row.center = gal[kc][12];
    }
    let half: T = lit(0.5);
    let two: T = lit(2.0);
    // Add conductance h to the edge from coarse (ai, aj) one step towards (+1,0) or (0,+1).
    let add_edge = |rows: &mut Vec<Coeffs5<T>>, ai: usize, aj: usize, east: bool, h: T| {
        let a = ai + ncx * aj;
        let b = if east { a + 1 } else { a + ncx };
        rows[a].center = rows[a].center + h;
        rows[b].center = rows[b].center + h;
        if east {
            rows[a].east = rows[a].east - h;
            rows[b].west = rows[b].west - h;
        } else {
            rows[a].north = rows[a].north - h;
            rows[b].south = rows[b].south - h;
        }
    };
    for cj in 0..ncy {
        for ci in 0..ncx {
            let a = ci + ncx * cj;
            if !active[a] {
                continue;
            }
            for dy in -2i64..=2 {
                for dx in -2i64..=2 {
                    // Each unordered pair once: offsets in the upper half-plane.
                    if dy < 0 || (dy == 0 && dx <= 0) {
                        continue;
                    }
                    let (ti, tj) = (ci as i64 + dx, cj as i64 + dy);
                    if ti < 0 || tj < 0 || ti >= ncx as i64 || tj >= ncy as i64 {
                        continue;
                    }
                    let (ti, tj) = (ti as usize, tj as usize);
                    let c = ti + ncx * tj;
                    let d_ac = ((dx + 2) + 5 * (dy + 2)) as usize;
                    let d_ca = ((2 - dx) + 5 * (2 - dy)) as usize;
                    let v = half * (gal[a][d_ac] + gal[c][d_ca]);
                    if v == T::zero() || !active[c] {
                        continue;
                    }
                    // Remove the pair's term from the diagonals (it contributed −v to each).
                    rows[a].center = rows[a].center + v;
                    rows[c].center = rows[c].center + v;
                    if v > T::zero() {
                        continue;
                    }
                    let gcond = -v;
                    let len = (dx.unsigned_abs() + dy.unsigned_abs()) as usize;
                    // The two L-shaped paths: x first, then y; y first, then x.
                    let path = |x_first: bool| -> Vec<(usize, usize, bool)> {
                        let mut steps = Vec::with_capacity(len);
                        let (mut i, mut j) = (ci as i64, cj as i64);
                        let sx = dx.signum();
                        let moves_x = (0..dx.unsigned_abs()).map(|_| true);
                        let moves_y = (0..dy.unsigned_abs()).map(|_| false);
                        let order: Vec<bool> = if x_first {
                            moves_x.chain(moves_y).collect()
                        } else {
                            moves_y.chain(moves_x).collect()
                        };
                        for mx in order {
                            if mx {
                                let ni = i + sx;
                                steps.push((i.min(ni) as usize, j as usize, true));
                                i = ni;
                            } else {
                                steps.push((i as usize, j as usize, false));
                                j += 1;
                            }
                        }
                        steps
                    };
                    let open = |steps: &[(usize, usize, bool)]| {
                        steps.iter().all(|&(i, j, east)| {
                            let b = if east {
                                (i + 1) + ncx * j
                            } else {
                                i + ncx * (j + 1)
                            };
                            active[i + ncx * j] && active[b]
                        })
                    };
                    let paths: Vec<Vec<(usize, usize, bool)>> = if dx == 0 || dy == 0 {
                        vec![path(true)]
                    } else {
                        vec![path(true), path(false)]
                    };
                    let usable: Vec<&Vec<(usize, usize, bool)>> =
                        paths.iter().filter(|p| open(p)).collect();
                    if usable.is_empty() {
                        rows[a].center = rows[a].center + two * gcond;
                        rows[c].center = rows[c].center + two * gcond;
                        continue;
                    }
                    let weight = (dx * dx + dy * dy) as f64 / len as f64;
                    let share =
                        gcond * lit::<T>(weight) / T::from(usable.len()).unwrap_or_else(T::one);
                    for p in usable {
                        for &(i, j, east) in p {
                            add_edge(&mut rows, i, j, east, share);
                        }
                    }
                }
            }
        }
    }
    rows
}

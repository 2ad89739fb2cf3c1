//! Coarse levels of a non-symmetric operator (upwinded advection–diffusion, say).
//!
//! The fine operator is split into its symmetric part `S = ½(A + Aᵀ)` and its skew part
//! `K = ½(A − Aᵀ)` (per pair of neighbours: `S` takes the mean of the two couplings, `K` half
//! their difference; the centers belong to `S`). The coarse level is then built in two steps:
//!
//! * **Symmetric part**: exactly as for a symmetric operator (the chosen
//!   [`CoarseOperator`](super::CoarseOperator) rule and the operator-dependent interpolation
//!   `P`), applied to `S`. A symmetric operator never comes here:
//!   [`Multigrid::new`](super::Multigrid::new) tests for symmetry (to a relative 10⁻¹⁰) first
//!   and keeps the symmetric construction for it.
//! * **Skew part**: the Galerkin product `Pᵀ·K·P` (restriction `R = Pᵀ`, as for the symmetric
//!   part), which reaches up to two coarse cells away, lumped onto the 5-point pattern: the
//!   entry between coarse cells `a` and `c` is moved onto every edge of the L-shaped lattice
//!   path(s) from `a` to `c` (shared equally between the two paths of a diagonal offset). A
//!   skew pair moved along a path keeps `ψᵀ·K·1` and `1ᵀ·K·φ` for every `ψ`, `φ`: the lumped
//!   skew part has exactly the row and column sums of the Galerkin one (what a constant state
//!   carries in and out of each coarse cell). A pair whose paths both cross a cell without an
//!   unknown adds its magnitude to both centers instead.
//! * **Hybrid differencing on the coarse grid**: a coarse edge with symmetric conductance `g`
//!   (coupling `−g`) and skew value `s` (`K[p, q] = s`, `K[q, p] = −s`) would get the couplings
//!   `−g + s` and `−g − s`, one of them positive once `|s| > g` (a coarse cell Péclet number
//!   above 2). Only then is the artificial diffusion `m = |s| − g` added (to both centers,
//!   subtracted from both couplings), which leaves the downstream coupling at 0 and the
//!   upstream one at `−2|s|`: central where that is an M-matrix, upwind where it is not — the
//!   idea of the hybrid scheme (Spalding 1972; Patankar 1980, §5.2). Every coarse operator of
//!   an M-matrix (couplings ≤ 0, positive centers) is again one, and Gauss–Seidel stays a
//!   smoother there. Measured on upwind advection–diffusion (standalone V(3,3), 64² and
//!   128², 10⁻⁸): the plain Galerkin skew part (no added diffusion) needs 7–8 cycles up to
//!   cell Péclet 1 and diverges from Péclet 10 on; full upwinding of every coarse edge
//!   converges everywhere but needs 10–16 cycles; the hybrid rule needs 7 up to Péclet 1 and
//!   9–15 at Péclet 10–100.
//!
//! The coarsest level is then solved by a banded LU factorisation (`direct::BandLu`).
//!
//! Both passes of the skew part (the Galerkin entries, then their lumping onto edges) run in
//! bands of coarse rows on the pool's threads, like `galerkin.rs`: a band adds only into its
//! own rows, visiting the cells that reach them in the serial order, so the bits do not
//! depend on the number of bands (unit test below; `setup_profile` fingerprints).

use std::marker::PhantomData;

use super::galerkin::{in_bands, zero_first};
use super::level::{active_cells, inverse_centers, Level};
use super::{CoarseOperator, MAX_BANDS};
use crate::blocks::threads_for;
use crate::operator::{FixedCells, Stencil5};
use crate::space::Threaded;
use crate::{Coeffs5, Error, Grid, Scalar};

/// The symmetric part `½(A + Aᵀ)` of `op`'s eliminated rows, as a stencil (built once per
/// level while the hierarchy is set up; never applied in a cycle).
pub(crate) struct SymmetricPart<'a, T, R: ?Sized> {
    op: &'a R,
    _scalar: PhantomData<T>,
}

impl<'a, T: Scalar, R: Stencil5<T> + ?Sized> SymmetricPart<'a, T, R> {
    pub(crate) fn new(op: &'a R) -> SymmetricPart<'a, T, R> {
        SymmetricPart {
            op,
            _scalar: PhantomData,
        }
    }
}

impl<T: Scalar, R: Stencil5<T> + ?Sized> Stencil5<T> for SymmetricPart<'_, T, R> {
    fn grid(&self) -> Grid {
        self.op.grid()
    }

    fn coeffs(&self, i: usize, j: usize) -> Coeffs5<T> {
        let g = self.op.grid();
        let (nx, ny) = (g.nx(), g.ny());
        let half: T = crate::scalar::lit(0.5);
        let mut c = self.op.eliminated_coeffs(i, j);
        if i > 0 {
            c.west = half * (c.west + self.op.eliminated_coeffs(i - 1, j).east);
        }
        if i + 1 < nx {
            c.east = half * (c.east + self.op.eliminated_coeffs(i + 1, j).west);
        }
        if j > 0 {
            c.south = half * (c.south + self.op.eliminated_coeffs(i, j - 1).north);
        }
        if j + 1 < ny {
            c.north = half * (c.north + self.op.eliminated_coeffs(i, j + 1).south);
        }
        c
    }

    fn fixed(&self) -> Option<&FixedCells> {
        self.op.fixed()
    }

    /// Already eliminated (identity rows at fixed cells, no couplings towards them).
    fn eliminated_coeffs(&self, i: usize, j: usize) -> Coeffs5<T> {
        self.coeffs(i, j)
    }
}

/// The level below the non-symmetric `fine` (see the module notes).
///
/// # Errors
///
/// As [`Level::below`].
pub(crate) fn below_nonsymmetric<T: Scalar, R: Stencil5<T> + ?Sized>(
    fine: &R,
    rule: CoarseOperator,
) -> Result<Level<T>, Error> {
    // The stiffening of the default rule is for symmetric operators (see `stiffen.rs`).
    let rule = match rule {
        CoarseOperator::LargerConductance => CoarseOperator::Upscaled,
        other => other,
    };
    let mut level = Level::below(&SymmetricPart::new(fine), rule)?;
    add_skew_part(&mut level, fine);
    Ok(level)
}

/// Index of offset `(dx, dy)` (each in `−2..=2`) in a 5 × 5 neighbourhood.
#[inline]
fn slot(dx: i64, dy: i64) -> usize {
    ((dx + 2) + 5 * (dy + 2)) as usize
}

/// Add the lumped, upwinded Galerkin skew part of `fine` to `level`'s coarse rows, its two
/// passes in bands of coarse rows on the pool's threads.
fn add_skew_part<T: Scalar, R: Stencil5<T> + ?Sized>(level: &mut Level<T>, fine: &R) {
    let bands = threads_for(&Threaded, fine.grid().cells()).min(MAX_BANDS);
    add_skew_part_in_bands(level, fine, bands);
}

/// [`add_skew_part`] with each pass cut into `bands` bands of coarse rows, side by side
/// (`galerkin::in_bands`). A band writes only its own coarse rows and visits the fine cells
/// (first pass) or coarse cells (second pass) that reach them in the order of one serial
/// pass, so every sum is added in the same order for any `bands`.
fn add_skew_part_in_bands<T: Scalar, R: Stencil5<T> + ?Sized>(
    level: &mut Level<T>,
    fine: &R,
    bands: usize,
) {
    let g = fine.grid();
    let (nx, ny) = (g.nx(), g.ny());
    let cg = level.op.grid;
    let (ncx, ncy, nc) = (cg.nx(), cg.ny(), cg.cells());
    let coarse_active: Vec<bool> = (0..nc).map(|k| !level.op.inactive.contains(k)).collect();
    let fine_active = active_cells(fine);
    let half: T = crate::scalar::lit(0.5);
    let coords = |kc: usize| ((kc % ncx) as i64, (kc / ncx) as i64);
    let built = &*level;
    // Galerkin skew entries, each unordered coarse pair once: `gal[a][slot(dx, dy)]` is
    // `K_c[a, c]` for `c = a + (dx, dy)` in the upper half-plane (`K_c[c, a]` is its negative).
    // A fine pair (k, l) adds into coarse rows j/2 − 1 to (j + 1)/2 + 1 of k's row j, so a
    // band of coarse rows [r0, r1) visits fine rows 2·r0 − 4 to 2·r1 + 1.
    let mut gal = vec![[T::zero(); 25]; nc];
    in_bands(0..ncy, bands, &mut [&mut gal[..]], ncx, &|rows, out| {
        zero_first(&mut *out, [T::zero(); 25]);
        let gal = &mut *out[0];
        let (base, mine) = (rows.start * ncx, rows.start * ncx..rows.end * ncx);
        let mut add_pair = |k: usize, l: usize, s: T| {
            let (i, j) = (k % nx, k / nx);
            let (il, jl) = (l % nx, l / nx);
            let pk = built.stencil(i, j, k);
            let pl = built.stencil(il, jl, l);
            for &(a, wa) in &pk {
                if wa == T::zero() || !coarse_active[a] {
                    continue;
                }
                for &(c, wc) in &pl {
                    if wc == T::zero() || !coarse_active[c] || a == c {
                        continue;
                    }
                    let ((ai, aj), (ci, cj)) = (coords(a), coords(c));
                    let (dx, dy) = (ci - ai, cj - aj);
                    let upper = dy > 0 || (dy == 0 && dx > 0);
                    let target = if upper { a } else { c };
                    if !mine.contains(&target) {
                        continue;
                    }
                    let v = wa * s * wc;
                    let entry = &mut gal[target - base];
                    if upper {
                        entry[slot(dx, dy)] = entry[slot(dx, dy)] + v;
                    } else {
                        entry[slot(-dx, -dy)] = entry[slot(-dx, -dy)] - v;
                    }
                }
            }
        };
        for j in (2 * rows.start).saturating_sub(4)..(2 * rows.end + 2).min(ny) {
            for i in 0..nx {
                let k = i + nx * j;
                if !fine_active(k) {
                    continue;
                }
                let here = fine.eliminated_coeffs(i, j);
                if i + 1 < nx && fine_active(k + 1) {
                    let s = half * (here.east - fine.eliminated_coeffs(i + 1, j).west);
                    if s != T::zero() {
                        add_pair(k, k + 1, s);
                    }
                }
                if j + 1 < ny && fine_active(k + nx) {
                    let s = half * (here.north - fine.eliminated_coeffs(i, j + 1).south);
                    if s != T::zero() {
                        add_pair(k, k + nx, s);
                    }
                }
            }
        }
    });
    // Lump onto the coarse edges: `east_skew[p]` is `K[p, p+1]`, `north_skew[p]` is
    // `K[p, p+ncx]`. A coarse pair (a, c) adds into rows aj to aj + 2 of a's row aj, so a
    // band visits the pairs of coarse rows r0 − 2 to r1 − 1.
    let mut east_skew = vec![T::zero(); nc];
    let mut north_skew = vec![T::zero(); nc];
    let mut extra_center = vec![T::zero(); nc];
    let open = |steps: &[(usize, bool, bool)]| {
        steps.iter().all(|&(p, east, _)| {
            let q = if east { p + 1 } else { p + ncx };
            coarse_active[p] && coarse_active[q]
        })
    };
    // Edges of the lattice path from `a` by `(dx, dy)`: (lower cell of the edge, along x,
    // traversed in the positive direction).
    let path = |a: usize, dx: i64, dy: i64, x_first: bool| {
        let mut out = [(0usize, false, false); 4];
        let mut count = 0;
        let (mut i, mut j) = coords(a);
        let moves = [(true, dx.unsigned_abs()), (false, dy.unsigned_abs())];
        let moves = if x_first { moves } else { [moves[1], moves[0]] };
        for (along_x, steps) in moves {
            for _ in 0..steps {
                if along_x {
                    let ni = i + dx.signum();
                    out[count] = (i.min(ni) as usize + ncx * j as usize, true, dx > 0);
                    i = ni;
                } else {
                    out[count] = (i as usize + ncx * j as usize, false, true);
                    j += 1;
                }
                count += 1;
            }
        }
        (out, count)
    };
    let gal = &gal;
    let outputs = &mut [
        &mut east_skew[..],
        &mut north_skew[..],
        &mut extra_center[..],
    ];
    in_bands(0..ncy, bands, outputs, ncx, &|rows, out| {
        zero_first(&mut *out, T::zero());
        let [east_skew, north_skew, extra_center] = out else {
            unreachable!("three outputs")
        };
        let (base, mine) = (rows.start * ncx, rows.start * ncx..rows.end * ncx);
        let add = |v: &mut [T], p: usize, h: T| {
            if mine.contains(&p) {
                v[p - base] = v[p - base] + h;
            }
        };
        for a in rows.start.saturating_sub(2) * ncx..rows.end * ncx {
            if !coarse_active[a] {
                continue;
            }
            let (ai, aj) = coords(a);
            for dy in 0i64..=2 {
                for dx in -2i64..=2 {
                    if dy == 0 && dx <= 0 {
                        continue;
                    }
                    let v = gal[a][slot(dx, dy)];
                    if v == T::zero() {
                        continue;
                    }
                    let (ci, cj) = (ai + dx, aj + dy);
                    if ci < 0 || ci >= ncx as i64 || cj >= ncy as i64 {
                        continue;
                    }
                    let c = ci as usize + ncx * cj as usize;
                    let candidates = if dx == 0 || dy == 0 {
                        [Some(path(a, dx, dy, true)), None]
                    } else {
                        [Some(path(a, dx, dy, true)), Some(path(a, dx, dy, false))]
                    };
                    let usable = candidates
                        .iter()
                        .flatten()
                        .filter(|(steps, m)| open(&steps[..*m]))
                        .count();
                    if usable == 0 {
                        add(extra_center, a, v.abs());
                        add(extra_center, c, v.abs());
                        continue;
                    }
                    let share = v / T::from(usable).unwrap_or_else(T::one);
                    for (steps, m) in candidates.iter().flatten() {
                        if !open(&steps[..*m]) {
                            continue;
                        }
                        for &(p, east, forward) in &steps[..*m] {
                            let signed = if forward { share } else { -share };
                            if east {
                                add(east_skew, p, signed);
                            } else {
                                add(north_skew, p, signed);
                            }
                        }
                    }
                }
            }
        }
    });
    // Upwind form of each coarse edge's skew value.
    let rows = &mut level.op.rows;
    for p in 0..nc {
        rows[p].center = rows[p].center + extra_center[p];
        for (s, east) in [(east_skew[p], true), (north_skew[p], false)] {
            if s == T::zero() {
                continue;
            }
            let q = if east { p + 1 } else { p + ncx };
            // The edge's symmetric conductance; only the excess of |s| over it needs the
            // artificial diffusion.
            let g = -(if east { rows[p].east } else { rows[p].north });
            let m = (s.abs() - g.max(T::zero())).max(T::zero());
            rows[p].center = rows[p].center + m;
            rows[q].center = rows[q].center + m;
            if east {
                rows[p].east = rows[p].east + s - m;
                rows[q].west = rows[q].west - s - m;
            } else {
                rows[p].north = rows[p].north + s - m;
                rows[q].south = rows[q].south - s - m;
            }
        }
    }
    level.inverse_centers = inverse_centers(&level.op.rows, |k| coarse_active[k]);
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::testing::{band_cut_fields, Numbers};
    use crate::Banded5;

    /// The skew part's two passes in 2 to 6 bands of coarse rows give the bits of one band, on
    /// non-symmetric fields (couplings over four decades, each west coupling scaled apart
    /// from its neighbour's east one), with fixed cells (some on band cuts), storage, and odd
    /// and even sides.
    #[test]
    fn bands_give_the_bits_of_one_pass() {
        let mut numbers = Numbers(11);
        for symmetric in band_cut_fields(&mut numbers) {
            let (nx, ny) = (symmetric.grid().nx(), symmetric.grid().ny());
            let skew: Vec<f64> = (0..nx * ny).map(|_| 0.5 + numbers.next()).collect();
            let grid = symmetric.grid();
            let op = Banded5::from_fn(grid, |i, j| {
                let mut c = symmetric.coeffs(i, j);
                (c.west, c.south) = (c.west * skew[i + nx * j], c.south * skew[i + nx * j]);
                c
            })
            .unwrap()
            .with_fixed(symmetric.fixed().unwrap().clone())
            .unwrap();
            let upscaled = CoarseOperator::Upscaled;
            let level: Level<f64> = Level::below(&SymmetricPart::new(&op), upscaled).unwrap();
            let mut one = level.clone();
            add_skew_part_in_bands(&mut one, &op, 1);
            for bands in 2..=6 {
                let mut cut = level.clone();
                add_skew_part_in_bands(&mut cut, &op, bands);
                // `Debug` prints every float exactly, the sign of a zero included.
                let bits = |l: &Level<f64>| format!("{:?} {:?}", l.op.rows, l.inverse_centers);
                assert_eq!(bits(&cut), bits(&one), "{nx} x {ny}, {bands} bands");
            }
        }
    }
}

//! A 5-point operator split over processes: each process keeps the coefficients of its own
//! block and, during a product, a one-cell halo of its neighbours' values.

use std::ops::Range;
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Arc, Mutex, PoisonError};

use super::layout::Layout;
use super::partition::Partition;
use super::space::ExactSpace;
use super::transport::HaloLink;
use crate::operator::{check_len, row_sums_to_zero};
use crate::scalar::is_positive;
use crate::space::{first_flagged, Combine, Space};
use crate::{Coeffs5, Error, FixedCells, LinearOperator, Location};

/// Directions, in the order of the neighbour and halo arrays.
const WEST: usize = 0;
const EAST: usize = 1;
const SOUTH: usize = 2;
const NORTH: usize = 3;
const SIDES: [&str; 4] = ["west", "east", "south", "north"];

/// The send and receive buffers of the halo exchange, one pair per side.
#[derive(Debug)]
struct Edges {
    send: [Vec<f64>; 4],
    recv: [Vec<f64>; 4],
}

/// A 5-point operator on a [`Partition`]: this process's rows only (`Coeffs5` with the usual
/// signs and numbering, `i`, `j` of the whole grid), a one-cell halo filled by a neighbour
/// exchange before every product, and fixed cells anywhere (also next to a block's edge).
///
/// Its vectors are the process's own cells ([`Partition::local_len`]); solve it with any
/// CG or PCG with [`DistributedJacobi`](super::DistributedJacobi) in the partition's workspace
/// ([`Partition::workspace`]). The product of one row adds its terms in
/// the order of every other operator of the crate (center, west, east, south, north), so it
/// equals the product of a [`Banded5`](crate::Banded5) with the same coefficients bit for bit.
///
/// ```
/// use quintet::distributed::{DistributedStencil, Partition, Processes};
/// use quintet::prelude::*;
///
/// let grid = Grid::new(40, 30)?;
/// let part = Partition::new(grid, Processes::single())?;
/// let op = DistributedStencil::from_fn(&part, |i, j| Coeffs5::laplacian(grid, i, j))?
///     .with_fixed(|i, _| i == 0)?;
/// let rhs = part.local_from_fn(|_, _| 1.0);
/// let mut x = vec![0.0; part.local_len()];
/// let report = Cg::default().solve_with(&op, &rhs, &mut x, &mut part.workspace(true))?;
/// assert!(report.converged());
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Debug)]
pub struct DistributedStencil {
    part: Partition,
    space: ExactSpace,
    /// center, west, east, south, north of the owned cells.
    bands: [Vec<f64>; 5],
    fixed: Option<FixedCells>,
    neighbours: [Option<usize>; 4],
    halo: [Vec<AtomicU64>; 4],
    edges: Mutex<Edges>,
}

impl DistributedStencil {
    /// This process's rows from `f(i, j)`, asked for the owned cells only. A collective call.
    ///
    /// # Errors
    ///
    /// The same on every process: [`ErrorKind::NonFinite`](crate::ErrorKind::NonFinite) or
    /// [`ErrorKind::OffGridCoupling`](crate::ErrorKind::OffGridCoupling) naming the first bad
    /// cell of the whole grid (whichever process owns it).
    ///
    /// ```
    /// use quintet::distributed::{DistributedStencil, Partition, Processes};
    /// use quintet::prelude::*;
    /// let grid = Grid::new(4, 4)?;
    /// let part = Partition::new(grid, Processes::single())?;
    /// let err = DistributedStencil::from_fn(&part, |i, j| {
    ///     let mut c = Coeffs5::laplacian(grid, i, j);
    ///     if (i, j) == (2, 3) { c.center = f64::NAN; }
    ///     c
    /// }).unwrap_err();
    /// assert_eq!(err.kind(), ErrorKind::NonFinite);
    /// assert_eq!(err.location().map(|at| at.cell), Some(14));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn from_fn(
        part: &Partition,
        f: impl Fn(usize, usize) -> Coeffs5<f64>,
    ) -> Result<DistributedStencil, Error> {
        let coeffs: Vec<Coeffs5<f64>> = part
            .owned()
            .1
            .flat_map(|j| part.owned().0.map(move |i| (i, j)))
            .map(|(i, j)| f(i, j))
            .collect();
        let band = |pick: fn(&Coeffs5<f64>) -> f64| coeffs.iter().map(pick).collect::<Vec<_>>();
        DistributedStencil::build(
            part,
            [
                band(|c| c.center),
                band(|c| c.west),
                band(|c| c.east),
                band(|c| c.south),
                band(|c| c.north),
            ],
        )
    }

    /// This process's rows from its slices of the five bands (owned cells, numbered
    /// `i + nx_local·j` from the block's south-west corner). A collective call.
    ///
    /// # Errors
    ///
    /// As [`from_fn`](DistributedStencil::from_fn), and
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) when a band does not
    /// have [`Partition::local_len`] entries (on every process, for the first process whose
    /// bands are wrong).
    ///
    /// ```
    /// use quintet::distributed::{DistributedStencil, Partition, Processes};
    /// use quintet::Grid;
    /// let part = Partition::new(Grid::new(3, 1)?, Processes::single())?;
    /// let op = DistributedStencil::from_bands(
    ///     &part, &[2.0; 3], &[0.0, -1.0, -1.0], &[-1.0, -1.0, 0.0], &[0.0; 3], &[0.0; 3])?;
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn from_bands(
        part: &Partition,
        center: &[f64],
        west: &[f64],
        east: &[f64],
        south: &[f64],
        north: &[f64],
    ) -> Result<DistributedStencil, Error> {
        let n = part.local_len();
        let given = [center, west, east, south, north];
        let wrong = given.iter().position(|b| b.len() != n);
        if part.processes().any_failed(wrong.is_some()).is_some() {
            let at = wrong.unwrap_or(0);
            let names = ["center", "west", "east", "south", "north"];
            return Err(Error::length(names[at], n, given[at].len())
                .while_doing("building a distributed stencil (some process's bands are wrong)"));
        }
        DistributedStencil::build(part, given.map(<[f64]>::to_vec))
    }

    fn build(part: &Partition, bands: [Vec<f64>; 5]) -> Result<DistributedStencil, Error> {
        let layout: &Layout = &part.layout;
        let (nxl, nyl) = layout.shape();
        let space = ExactSpace::new(Arc::clone(&part.layout), false);
        let (px, py, cx, cy) = (layout.px, layout.py, layout.cx, layout.cy);
        let neighbours = [
            (cx > 0).then(|| layout.rank_at(cx - 1, cy)),
            (cx + 1 < px).then(|| layout.rank_at(cx + 1, cy)),
            (cy > 0).then(|| layout.rank_at(cx, cy - 1)),
            (cy + 1 < py).then(|| layout.rank_at(cx, cy + 1)),
        ];
        let lengths = [nyl, nyl, nxl, nxl];
        let op = DistributedStencil {
            part: part.clone(),
            space,
            bands,
            fixed: None,
            neighbours,
            halo: lengths.map(|n| (0..n).map(|_| AtomicU64::new(0)).collect()),
            edges: Mutex::new(Edges {
                send: lengths.map(|n| vec![0.0; n]),
                recv: lengths.map(|n| vec![0.0; n]),
            }),
        };
        op.validate()?;
        Ok(op)
    }

    /// Every coefficient finite and no coupling off the whole grid, agreed by all processes.
    fn validate(&self) -> Result<(), Error> {
        let n = self.len();
        let (nxl, nyl) = self.part.layout.shape();
        // The problem of local entry k: (band, value), off-grid couplings as band + 5.
        let problem = |k: usize| -> Option<(usize, f64)> {
            let values = self.bands.each_ref().map(|b| b[k]);
            if let Some(b) = values.iter().position(|v| !v.is_finite()) {
                return Some((b, values[b]));
            }
            let (il, jl) = (k % nxl, k / nxl);
            let at_edge = [
                il == 0 && self.neighbours[WEST].is_none(),
                il + 1 == nxl && self.neighbours[EAST].is_none(),
                jl == 0 && self.neighbours[SOUTH].is_none(),
                jl + 1 == nyl && self.neighbours[NORTH].is_none(),
            ];
            (0..4)
                .find(|&s| at_edge[s] && values[s + 1] != 0.0)
                .map(|s| (s + 5, values[s + 1]))
        };
        let Some(k) = first_flagged(&self.space, n, |k| problem(k).is_some()) else {
            return Ok(());
        };
        let (what, value) = self.agree(k, |local| problem(local).unwrap_or((0, 0.0)));
        let at = self.part.location(k);
        Err(match what as usize {
            b @ 0..=4 => Error::non_finite(
                [
                    "center coefficient",
                    "west coefficient",
                    "east coefficient",
                    "south coefficient",
                    "north coefficient",
                ][b],
                at,
            ),
            s => Error::off_grid(at, SIDES[(s - 5).min(3)], value),
        })
    }

    /// The `(code, value)` that the owner of global cell `k` reports, on every process (one
    /// collective: only the owner adds its numbers, and the sums are exact).
    fn agree(&self, k: usize, report: impl Fn(usize) -> (usize, f64)) -> (f64, f64) {
        let n = self.len();
        let mine = (0..n).find(|&l| self.part.layout.global(l) == k);
        let (code, value) = mine.map_or((0.0, 0.0), |l| {
            let (c, v) = report(l);
            (c as f64, v)
        });
        let mut out = [0.0; 2];
        self.space
            .combine_f64(&[code, value], &[Combine::Sum, Combine::Sum], &mut out);
        (out[0], out[1])
    }

    /// The same operator with the cells where `is_fixed(i, j)` holds as fixed cells (their
    /// values are whatever `x` holds; see [`FixedCells`]).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::TooLarge`](crate::ErrorKind::TooLarge) if the list cannot be allocated.
    ///
    /// ```
    /// use quintet::distributed::{DistributedStencil, Partition, Processes};
    /// use quintet::prelude::*;
    /// let grid = Grid::new(5, 5)?;
    /// let part = Partition::new(grid, Processes::single())?;
    /// let op = DistributedStencil::from_fn(&part, |i, j| Coeffs5::laplacian(grid, i, j))?
    ///     .with_fixed(|i, j| i == 0 || j == 4)?;
    /// assert_eq!(op.fixed_cells().map(|f| f.len()), Some(9));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn with_fixed(
        mut self,
        is_fixed: impl Fn(usize, usize) -> bool,
    ) -> Result<DistributedStencil, Error> {
        let nx = self.part.grid().nx();
        let layout = &self.part.layout;
        let cells = (0..self.len()).filter(|&k| {
            let g = layout.global(k);
            is_fixed(g % nx, g / nx)
        });
        self.fixed = Some(FixedCells::of_len(self.len(), cells)?);
        Ok(self)
    }

    /// The partition this operator lives on.
    ///
    /// ```
    /// use quintet::distributed::{DistributedStencil, Partition, Processes};
    /// use quintet::prelude::*;
    /// let grid = Grid::new(3, 3)?;
    /// let part = Partition::new(grid, Processes::single())?;
    /// let op = DistributedStencil::from_fn(&part, |i, j| Coeffs5::laplacian(grid, i, j))?;
    /// assert_eq!(op.partition().grid(), grid);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn partition(&self) -> &Partition {
        &self.part
    }

    /// The five bands (center, west, east, south, north) of the owned cells.
    pub(crate) fn bands(&self) -> &[Vec<f64>; 5] {
        &self.bands
    }

    /// The center coefficients of the owned cells.
    pub(crate) fn centers(&self) -> &[f64] {
        &self.bands[0]
    }

    /// The value of global cell `k` in the halo filled by the last exchange, if `k` is next
    /// to this process's block across one of its edges.
    pub(crate) fn halo_cell(&self, k: usize) -> Option<f64> {
        let l = &self.part.layout;
        let (i, j) = (k % l.grid.nx(), k / l.grid.nx());
        let (side, at) = if l.j.contains(&j) && i + 1 == l.i.start {
            (WEST, j - l.j.start)
        } else if l.j.contains(&j) && i == l.i.end {
            (EAST, j - l.j.start)
        } else if l.i.contains(&i) && j + 1 == l.j.start {
            (SOUTH, i - l.i.start)
        } else if l.i.contains(&i) && j == l.j.end {
            (NORTH, i - l.i.start)
        } else {
            return None;
        };
        self.neighbours[side].map(|_| self.halo_value(side, at))
    }

    #[inline]
    fn halo_value(&self, side: usize, at: usize) -> f64 {
        f64::from_bits(self.halo[side][at].load(Ordering::Relaxed))
    }
}

impl LinearOperator<f64> for DistributedStencil {
    fn len(&self) -> usize {
        self.part.local_len()
    }

    fn apply_block(&self, cells: Range<usize>, x: &[f64], y: &mut [f64]) {
        let (nxl, nyl) = self.part.layout.shape();
        let [c, w, e, s, n] = &self.bands;
        let has = self.neighbours.map(|p| p.is_some());
        for (k, yk) in cells.zip(y.iter_mut()) {
            let (il, jl) = (k % nxl, k / nxl);
            let mut v = c[k] * x[k];
            if il > 0 {
                v += w[k] * x[k - 1];
            } else if has[WEST] {
                v += w[k] * self.halo_value(WEST, jl);
            }
            if il + 1 < nxl {
                v += e[k] * x[k + 1];
            } else if has[EAST] {
                v += e[k] * self.halo_value(EAST, jl);
            }
            if jl > 0 {
                v += s[k] * x[k - nxl];
            } else if has[SOUTH] {
                v += s[k] * self.halo_value(SOUTH, il);
            }
            if jl + 1 < nyl {
                v += n[k] * x[k + nxl];
            } else if has[NORTH] {
                v += n[k] * self.halo_value(NORTH, il);
            }
            *yk = v;
        }
    }

    fn exchange_halo(&self, x: &[f64]) {
        if self.neighbours.iter().all(Option::is_none) {
            return;
        }
        let (nxl, nyl) = self.part.layout.shape();
        let mut guard = self.edges.lock().unwrap_or_else(PoisonError::into_inner);
        let Edges { send, recv } = &mut *guard;
        for (jl, v) in send[WEST].iter_mut().enumerate() {
            *v = x[jl * nxl];
        }
        for (jl, v) in send[EAST].iter_mut().enumerate() {
            *v = x[jl * nxl + nxl - 1];
        }
        send[SOUTH].copy_from_slice(&x[..nxl]);
        send[NORTH].copy_from_slice(&x[(nyl - 1) * nxl..nyl * nxl]);
        // A value sent west is tagged WEST; the west neighbour's values come tagged EAST.
        let opposite = [EAST, WEST, NORTH, SOUTH];
        let [s0, s1, s2, s3] = &*send;
        let [r0, r1, r2, r3] = recv;
        let sends = [s0, s1, s2, s3];
        let mut recvs = [Some(r0), Some(r1), Some(r2), Some(r3)];
        let mut links: [Option<HaloLink<'_>>; 4] = [None, None, None, None];
        for side in 0..4 {
            let recv = recvs[side].take();
            if let (Some(peer), Some(recv)) = (self.neighbours[side], recv) {
                links[side] = Some(HaloLink {
                    peer,
                    send: sends[side],
                    recv,
                    send_tag: side as i32,
                    recv_tag: opposite[side] as i32,
                });
            }
        }
        self.part.layout.processes.transport.exchange(&mut links);
        let sides = self.halo.iter().zip(recv.iter()).zip(self.neighbours);
        for ((halo, values), peer) in sides {
            if peer.is_some() {
                for (h, &v) in halo.iter().zip(values) {
                    h.store(v.to_bits(), Ordering::Relaxed);
                }
            }
        }
    }

    fn fixed_cells(&self) -> Option<&FixedCells> {
        self.fixed.as_ref()
    }

    fn diagonal(&self, d: &mut [f64]) -> Result<bool, Error> {
        check_len("diagonal", self.len(), d.len())?;
        d.copy_from_slice(&self.bands[0]);
        Ok(true)
    }

    /// The first free cell of the whole grid whose center is not positive (a collective call:
    /// every process gets the same cell, named by its global number, and value).
    fn first_nonpositive_diagonal(&self) -> Option<(usize, f64)> {
        let fixed = self.fixed.as_ref();
        let c = &self.bands[0];
        let bad = |k: usize| !fixed.is_some_and(|f| f.contains(k)) && !is_positive(c[k]);
        let k = first_flagged(&self.space, self.len(), bad)?;
        let (_, value) = self.agree(k, |l| (0, c[l]));
        Some((k, value))
    }

    /// No fixed cell on any process and every row summing to zero (a collective call).
    fn constant_in_null_space(&self) -> bool {
        let none_fixed = self.fixed.as_ref().is_none_or(FixedCells::is_empty);
        let local = none_fixed
            && (0..self.len()).all(|k| {
                row_sums_to_zero(Coeffs5 {
                    center: self.bands[0][k],
                    west: self.bands[1][k],
                    east: self.bands[2][k],
                    south: self.bands[3][k],
                    north: self.bands[4][k],
                })
            });
        let mut out = [0.0];
        self.space
            .combine_f64(&[f64::from(u8::from(local))], &[Combine::Min], &mut out);
        out[0] == 1.0
    }

    fn cell_location(&self, k: usize) -> Location {
        self.part.location(k)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::distributed::Processes;
    use crate::{Banded5, Grid};

    #[test]
    fn one_process_product_equals_the_banded_product() {
        let grid = Grid::new(13, 9).unwrap();
        let f = |i: usize, j: usize| {
            let mut c = Coeffs5::laplacian(grid, i, j);
            c.center += 0.1 * ((i * 7 + j * 3) % 5) as f64;
            c.west *= 1.0 + 0.01 * i as f64;
            c
        };
        let part = Partition::new(grid, Processes::single()).unwrap();
        let op = DistributedStencil::from_fn(&part, f).unwrap();
        let banded = Banded5::from_fn(grid, f).unwrap();
        let x: Vec<f64> = (0..grid.cells()).map(|k| (k as f64 * 0.37).sin()).collect();
        let (mut a, mut b) = (vec![0.0; grid.cells()], vec![0.0; grid.cells()]);
        op.apply(&x, &mut a).unwrap();
        banded.apply(&x, &mut b).unwrap();
        assert_eq!(a, b);
    }
}

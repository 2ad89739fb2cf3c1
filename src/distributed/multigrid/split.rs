//! How one level of a distributed hierarchy lies on the processes: the split of its grid into
//! blocks (the fine split halved, rounding up, on every coarser level), each process's storage
//! window (its block and a margin), and the exchange that fills a margin from the neighbours.

use std::ops::Range;

use super::super::layout::{self, Layout};
use super::super::transport::{HaloLink, Transport};
use crate::{Error, Grid};

/// Cells kept around a block on every level: a coarse row or transfer weight depends on fine
/// cells at most a few cells away, so with this margin the rows a process builds for its own
/// coarse cells are those of the whole grid (checked bit for bit in the tests below).
pub(super) const MARGIN: usize = 8;

/// Directions, in the order of the links of [`Transport::exchange`].
const WEST: usize = 0;
const EAST: usize = 1;
const SOUTH: usize = 2;
const NORTH: usize = 3;
const OPPOSITE: [usize; 4] = [EAST, WEST, NORTH, SOUTH];

/// The split of one level's grid: process column `c` owns `i` in `xs[c]..xs[c + 1]`, process
/// row `r` owns `j` in `ys[r]..ys[r + 1]`.
#[derive(Clone, Debug, PartialEq, Eq)]
pub(super) struct Split {
    pub(super) grid: Grid,
    pub(super) xs: Vec<usize>,
    pub(super) ys: Vec<usize>,
}

impl Split {
    /// The partition's split of the fine grid.
    pub(super) fn of(layout: &Layout) -> Split {
        let (nx, ny) = (layout.grid.nx(), layout.grid.ny());
        Split {
            grid: layout.grid,
            xs: (0..=layout.px)
                .map(|c| layout::start(nx, layout.px, c))
                .collect(),
            ys: (0..=layout.py)
                .map(|c| layout::start(ny, layout.py, c))
                .collect(),
        }
    }

    /// The split of the next coarser level: a coarse cell (2 × 2 aggregate) belongs to the
    /// process that owns its first fine cell.
    pub(super) fn coarser(&self) -> Result<Split, Error> {
        let half = |v: &[usize]| v.iter().map(|s| s.div_ceil(2)).collect();
        Ok(Split {
            grid: Grid::new(self.grid.nx().div_ceil(2), self.grid.ny().div_ceil(2))?,
            xs: half(&self.xs),
            ys: half(&self.ys),
        })
    }

    /// The narrowest block side of any process.
    pub(super) fn smallest_side(&self) -> usize {
        let widths = self.xs.windows(2).map(|w| w[1] - w[0]);
        let heights = self.ys.windows(2).map(|w| w[1] - w[0]);
        widths.chain(heights).min().unwrap_or(0)
    }

    /// The block of the process at column `cx`, row `cy` of the process grid.
    pub(super) fn block(&self, cx: usize, cy: usize) -> (Range<usize>, Range<usize>) {
        (self.xs[cx]..self.xs[cx + 1], self.ys[cy]..self.ys[cy + 1])
    }

    /// The most cells any process owns.
    pub(super) fn largest_block(&self) -> usize {
        let widths = self.xs.windows(2).map(|w| w[1] - w[0]);
        let heights = self.ys.windows(2).map(|w| w[1] - w[0]);
        widths.max().unwrap_or(0) * heights.max().unwrap_or(0)
    }

    /// The processes in the grid: columns, rows.
    pub(super) fn processes(&self) -> (usize, usize) {
        (self.xs.len() - 1, self.ys.len() - 1)
    }
}

/// One process's storage on one level: the cells `i` × `j` of the level's grid (its block
/// `own_i` × `own_j` and up to `margin` cells around it, inside the grid), stored row after
/// row. The window starts at even `i` and `j`, so its 2 × 2 aggregates are the whole grid's.
#[derive(Clone, Debug)]
pub(super) struct Window {
    pub(super) i: Range<usize>,
    pub(super) j: Range<usize>,
    pub(super) own_i: Range<usize>,
    pub(super) own_j: Range<usize>,
}

impl Window {
    /// The window of block `(cx, cy)` of `split` with `margin` cells around it.
    pub(super) fn around(split: &Split, cx: usize, cy: usize, margin: usize) -> Window {
        let (own_i, own_j) = split.block(cx, cy);
        let (nx, ny) = (split.grid.nx(), split.grid.ny());
        let from = |s: usize| s.saturating_sub(margin) & !1;
        Window {
            i: from(own_i.start)..(own_i.end + margin).min(nx),
            j: from(own_j.start)..(own_j.end + margin).min(ny),
            own_i,
            own_j,
        }
    }

    /// The window as a grid of its own.
    pub(super) fn grid(&self) -> Result<Grid, Error> {
        Grid::new(self.i.len(), self.j.len())
    }

    /// Cells in the window.
    pub(super) fn cells(&self) -> usize {
        self.i.len() * self.j.len()
    }

    /// The window entry of cell `(i, j)` of the level's grid.
    #[inline]
    pub(super) fn at(&self, i: usize, j: usize) -> usize {
        (i - self.i.start) + self.i.len() * (j - self.j.start)
    }

    /// The owned columns and rows, in window coordinates.
    pub(super) fn own_local(&self) -> (Range<usize>, Range<usize>) {
        let (i0, j0) = (self.i.start, self.j.start);
        (
            self.own_i.start - i0..self.own_i.end - i0,
            self.own_j.start - j0..self.own_j.end - j0,
        )
    }

    /// The owned columns and rows and `extra` cells around them, clipped to the window, in
    /// window coordinates.
    pub(super) fn own_local_with(&self, extra: usize) -> (Range<usize>, Range<usize>) {
        let (ci, cj) = self.own_local();
        (
            ci.start.saturating_sub(extra)..(ci.end + extra).min(self.i.len()),
            cj.start.saturating_sub(extra)..(cj.end + extra).min(self.j.len()),
        )
    }

    /// Every owned cell, in block order (row after row): its window entry.
    pub(super) fn owned(&self) -> impl Iterator<Item = usize> + '_ {
        self.own_j
            .clone()
            .flat_map(move |j| self.own_i.clone().map(move |i| self.at(i, j)))
    }
}

/// The neighbour exchange that fills a window's margin, with its buffers (sized once).
#[derive(Debug)]
pub(super) struct Margins {
    /// The neighbours' ranks, west, east, south, north.
    peers: [Option<usize>; 4],
    send: [Vec<f64>; 4],
    recv: [Vec<f64>; 4],
}

impl Margins {
    /// The exchange of block `(cx, cy)` of `split`, for margins up to `MARGIN` cells.
    pub(super) fn new(split: &Split, layout: &Layout) -> Margins {
        let (px, py) = split.processes();
        let (cx, cy) = (layout.cx, layout.cy);
        let peers = [
            (cx > 0).then(|| layout.rank_at(cx - 1, cy)),
            (cx + 1 < px).then(|| layout.rank_at(cx + 1, cy)),
            (cy > 0).then(|| layout.rank_at(cx, cy - 1)),
            (cy + 1 < py).then(|| layout.rank_at(cx, cy + 1)),
        ];
        let (own_i, own_j) = split.block(cx, cy);
        let columns = MARGIN * own_j.len();
        let rows = MARGIN * (own_i.len() + 2 * MARGIN);
        let sizes = [columns, columns, rows, rows];
        Margins {
            peers,
            send: sizes.map(|n| vec![0.0; n]),
            recv: sizes.map(|n| vec![0.0; n]),
        }
    }

    /// Fill `width` (at most `MARGIN`, at most every block's side) cells of `data`'s margin
    /// around the block from the neighbours, corners included: first west and east along the
    /// block's rows, then south and north along the rows widened by the margins just filled.
    pub(super) fn fill(
        &mut self,
        transport: &dyn Transport,
        win: &Window,
        data: &mut [f64],
        width: usize,
    ) {
        if width == 0 || self.peers.iter().all(Option::is_none) {
            return;
        }
        let width = width.min(MARGIN);
        let (ci, cj) = win.own_local();
        let nx = win.i.len();
        // West and east: the block's rows, `width` columns.
        let rows = cj.clone();
        let out = [
            (rows.clone(), ci.start..ci.start + width),
            (rows.clone(), ci.end - width..ci.end),
        ];
        let into = [
            (rows.clone(), ci.start.wrapping_sub(width)..ci.start),
            (rows, ci.end..ci.end + width),
        ];
        self.swap(transport, [WEST, EAST], nx, &out, &into, data);
        // South and north: the block's columns and the margins just filled, `width` rows.
        let left = if self.peers[WEST].is_some() { width } else { 0 };
        let right = if self.peers[EAST].is_some() { width } else { 0 };
        let cols = ci.start - left..ci.end + right;
        let out = [
            (cj.start..cj.start + width, cols.clone()),
            (cj.end - width..cj.end, cols.clone()),
        ];
        let into = [
            (cj.start.wrapping_sub(width)..cj.start, cols.clone()),
            (cj.end..cj.end + width, cols),
        ];
        self.swap(transport, [SOUTH, NORTH], nx, &out, &into, data);
    }

    /// One exchange with the neighbours on `sides`: the cells `out[s]` (rows, columns) of
    /// `data` go to side `sides[s]`, what comes from it lands in `into[s]`.
    fn swap(
        &mut self,
        transport: &dyn Transport,
        sides: [usize; 2],
        nx: usize,
        out: &[(Range<usize>, Range<usize>); 2],
        into: &[(Range<usize>, Range<usize>); 2],
        data: &mut [f64],
    ) {
        let mut counts = [0; 4];
        for (s, &side) in sides.iter().enumerate() {
            if self.peers[side].is_some() {
                let (rows, cols) = out[s].clone();
                counts[side] = pack(data, nx, rows, cols, &mut self.send[side]);
            }
        }
        {
            let [r0, r1, r2, r3] = &mut self.recv;
            let mut recvs = [Some(r0), Some(r1), Some(r2), Some(r3)];
            let mut links: [Option<HaloLink<'_>>; 4] = [None, None, None, None];
            for side in sides {
                if let (Some(peer), Some(recv)) = (self.peers[side], recvs[side].take()) {
                    links[side] = Some(HaloLink {
                        peer,
                        send: &self.send[side][..counts[side]],
                        recv: &mut recv[..counts[side]],
                        send_tag: side as i32,
                        recv_tag: OPPOSITE[side] as i32,
                    });
                }
            }
            transport.exchange(&mut links);
        }
        for (s, &side) in sides.iter().enumerate() {
            if self.peers[side].is_some() {
                let (rows, cols) = into[s].clone();
                unpack(&self.recv[side][..counts[side]], nx, rows, cols, data);
            }
        }
    }
}

/// Copy the cells `rows` × `cols` of a window `nx` wide into `buf`, row after row; returns
/// the count.
fn pack(data: &[f64], nx: usize, rows: Range<usize>, cols: Range<usize>, buf: &mut [f64]) -> usize {
    let mut n = 0;
    for j in rows {
        let src = &data[j * nx..][cols.clone()];
        buf[n..n + src.len()].copy_from_slice(src);
        n += src.len();
    }
    n
}

/// The inverse of [`pack`].
fn unpack(buf: &[f64], nx: usize, rows: Range<usize>, cols: Range<usize>, data: &mut [f64]) {
    let mut n = 0;
    for j in rows {
        let dst = &mut data[j * nx..][cols.clone()];
        let len = dst.len();
        dst.copy_from_slice(&buf[n..n + len]);
        n += len;
    }
}

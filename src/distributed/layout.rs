//! The split one partition's operator, space and vectors share: the process grid, this
//! process's block of cells, and the block of every other process.

use std::ops::Range;

use super::processes::Processes;
use crate::Grid;

/// Start of part `c` of `n` cells cut into `parts` (the parts differ by at most one cell).
pub(crate) fn start(n: usize, parts: usize, c: usize) -> usize {
    c * n / parts
}

/// The split shared by a partition's operator, space and vectors.
#[derive(Debug)]
pub(crate) struct Layout {
    pub(crate) grid: Grid,
    pub(crate) px: usize,
    pub(crate) py: usize,
    /// This process's column and row in the process grid.
    pub(crate) cx: usize,
    pub(crate) cy: usize,
    /// The cells this process owns.
    pub(crate) i: Range<usize>,
    pub(crate) j: Range<usize>,
    pub(crate) processes: Processes,
}

impl Layout {
    /// Cells along i and j of this process's block.
    pub(crate) fn shape(&self) -> (usize, usize) {
        (self.i.len(), self.j.len())
    }

    /// The number of cells this process owns.
    pub(crate) fn local_len(&self) -> usize {
        self.i.len() * self.j.len()
    }

    /// The global cell of local entry `k`.
    pub(crate) fn global(&self, k: usize) -> usize {
        let nxl = self.i.len().max(1);
        let (il, jl) = (k % nxl, k / nxl);
        (self.i.start + il) + self.grid.nx() * (self.j.start + jl)
    }

    /// The rank of the process at column `cx`, row `cy` of the process grid.
    pub(crate) fn rank_at(&self, cx: usize, cy: usize) -> usize {
        cx + self.px * cy
    }

    /// The blocks of every process, rank after rank: (i range, j range).
    pub(crate) fn block_of(&self, rank: usize) -> (Range<usize>, Range<usize>) {
        let (cx, cy) = (rank % self.px, rank / self.px);
        let (nx, ny) = (self.grid.nx(), self.grid.ny());
        (
            start(nx, self.px, cx)..start(nx, self.px, cx + 1),
            start(ny, self.py, cy)..start(ny, self.py, cy + 1),
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn blocks_cover_the_grid_once_and_differ_by_at_most_one() {
        let grid = Grid::new(11, 7).unwrap();
        let layout = Layout {
            grid,
            px: 3,
            py: 2,
            cx: 0,
            cy: 0,
            i: 0..0,
            j: 0..0,
            processes: Processes::single(),
        };
        let mut seen = vec![0; grid.cells()];
        for r in 0..6 {
            let (i, j) = layout.block_of(r);
            assert!(i.len() >= 3 && i.len() <= 4 && j.len() >= 3 && j.len() <= 4);
            for jj in j {
                for ii in i.clone() {
                    seen[ii + 11 * jj] += 1;
                }
            }
        }
        assert!(seen.iter().all(|&s| s == 1));
    }
}

//! The split of one grid over a px × py grid of processes: which block of cells each process
//! owns, who its neighbours are, and the vectors and workspace of this process's block.

use std::ops::Range;
use std::sync::Arc;

use super::layout::{start, Layout};
use super::processes::Processes;
use super::space::ExactSpace;
use crate::{Error, Grid, Location, Workspace};

/// The process grid for `processes` on `grid`: the px × py with px·py = processes, px ≤ nx
/// and py ≤ ny that cuts the fewest faces (`(px − 1)·ny + (py − 1)·nx`); the first such px on
/// a tie.
fn choose(grid: Grid, processes: usize) -> Option<(usize, usize)> {
    (1..=processes)
        .filter(|px| processes % px == 0)
        .map(|px| (px, processes / px))
        .filter(|&(px, py)| px <= grid.nx() && py <= grid.ny())
        .min_by_key(|&(px, py)| (px - 1) * grid.ny() + (py - 1) * grid.nx())
}

/// One grid split over the processes: each owns a block of whole cells (the blocks differ by at
/// most one cell per direction) and reads a one-cell halo of its neighbours' cells through the
/// [`DistributedStencil`](super::DistributedStencil).
///
/// Process `r` sits at column `r mod px`, row `r / px` of the process grid. Its vectors hold
/// its own cells only, numbered `i + nx_local·j` from its block's south-west corner.
///
/// ```
/// use quintet::distributed::{Partition, Processes};
/// use quintet::Grid;
/// let grid = Grid::new(100, 40)?;
/// let part = Partition::new(grid, Processes::single())?;
/// assert_eq!(part.process_grid(), (1, 1));
/// assert_eq!(part.owned(), (0..100, 0..40));
/// # Ok::<(), quintet::Error>(())
/// ```
#[derive(Clone, Debug)]
pub struct Partition {
    pub(crate) layout: Arc<Layout>,
}

impl Partition {
    /// Split `grid` over `processes` with the process grid that cuts the fewest faces.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) (the same on every
    /// process) when no px × py with px ≤ nx and py ≤ ny gives every process at least one cell.
    ///
    /// ```
    /// use quintet::distributed::{Partition, Processes};
    /// use quintet::Grid;
    /// let part = Partition::new(Grid::new(8, 8)?, Processes::single())?;
    /// assert_eq!(part.local_len(), 64);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn new(grid: Grid, processes: Processes) -> Result<Partition, Error> {
        let (px, py) = choose(grid, processes.count()).ok_or_else(too_small)?;
        Partition::with_process_grid(grid, processes, px, py)
    }

    /// Split `grid` over `processes` as `px` columns × `py` rows of processes.
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) when `px·py` is not the
    /// number of processes, or `px > nx` or `py > ny` (a process would own no cell).
    ///
    /// ```
    /// use quintet::distributed::{Partition, Processes};
    /// use quintet::{ErrorKind, Grid};
    /// let err = Partition::with_process_grid(Grid::new(8, 8)?, Processes::single(), 2, 1).unwrap_err();
    /// assert_eq!(err.kind(), ErrorKind::InvalidSetting);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn with_process_grid(
        grid: Grid,
        processes: Processes,
        px: usize,
        py: usize,
    ) -> Result<Partition, Error> {
        if px * py != processes.count() {
            return Err(Error::setting(
                "process grid px·py",
                (px * py) as f64,
                "the number of processes",
            ));
        }
        if px == 0 || py == 0 || px > grid.nx() || py > grid.ny() {
            return Err(too_small());
        }
        let rank = processes.rank();
        let (cx, cy) = (rank % px, rank / px);
        let (nx, ny) = (grid.nx(), grid.ny());
        let layout = Layout {
            grid,
            px,
            py,
            cx,
            cy,
            i: start(nx, px, cx)..start(nx, px, cx + 1),
            j: start(ny, py, cy)..start(ny, py, cy + 1),
            processes,
        };
        Ok(Partition {
            layout: Arc::new(layout),
        })
    }

    /// The whole grid.
    ///
    /// ```
    /// # use quintet::distributed::{Partition, Processes};
    /// # let grid = quintet::Grid::new(5, 4)?;
    /// let part = Partition::new(grid, Processes::single())?;
    /// assert_eq!(part.grid(), grid);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn grid(&self) -> Grid {
        self.layout.grid
    }

    /// The process grid `(px, py)`.
    ///
    /// ```
    /// # use quintet::distributed::{Partition, Processes};
    /// let part = Partition::new(quintet::Grid::new(5, 4)?, Processes::single())?;
    /// assert_eq!(part.process_grid(), (1, 1));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn process_grid(&self) -> (usize, usize) {
        (self.layout.px, self.layout.py)
    }

    /// The processes.
    ///
    /// ```
    /// # use quintet::distributed::{Partition, Processes};
    /// let part = Partition::new(quintet::Grid::new(5, 4)?, Processes::single())?;
    /// assert_eq!(part.processes().rank(), 0);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn processes(&self) -> &Processes {
        &self.layout.processes
    }

    /// The cells this process owns: `(i range, j range)` in the whole grid.
    ///
    /// ```
    /// # use quintet::distributed::{Partition, Processes};
    /// let part = Partition::new(quintet::Grid::new(5, 4)?, Processes::single())?;
    /// assert_eq!(part.owned(), (0..5, 0..4));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn owned(&self) -> (Range<usize>, Range<usize>) {
        (self.layout.i.clone(), self.layout.j.clone())
    }

    /// The number of cells this process owns (the length of its vectors).
    ///
    /// ```
    /// # use quintet::distributed::{Partition, Processes};
    /// let part = Partition::new(quintet::Grid::new(5, 4)?, Processes::single())?;
    /// assert_eq!(part.local_len(), 20);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn local_len(&self) -> usize {
        self.layout.local_len()
    }

    /// This process's part of a field given for every cell `(i, j)` of the whole grid (only
    /// the owned cells are asked for).
    ///
    /// ```
    /// # use quintet::distributed::{Partition, Processes};
    /// let part = Partition::new(quintet::Grid::new(3, 2)?, Processes::single())?;
    /// assert_eq!(part.local_from_fn(|i, j| (i + 10 * j) as f64), vec![0.0, 1.0, 2.0, 10.0, 11.0, 12.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn local_from_fn(&self, f: impl Fn(usize, usize) -> f64) -> Vec<f64> {
        let l = &self.layout;
        l.j.clone()
            .flat_map(|j| l.i.clone().map(move |i| (i, j)))
            .map(|(i, j)| f(i, j))
            .collect()
    }

    /// This process's part of a whole-grid vector (`k = i + nx·j`).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) unless `whole` has one
    /// entry per cell of the grid.
    ///
    /// ```
    /// # use quintet::distributed::{Partition, Processes};
    /// let part = Partition::new(quintet::Grid::new(2, 2)?, Processes::single())?;
    /// assert_eq!(part.local_part(&[1.0, 2.0, 3.0, 4.0])?, vec![1.0, 2.0, 3.0, 4.0]);
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn local_part(&self, whole: &[f64]) -> Result<Vec<f64>, Error> {
        crate::operator::check_len("whole-grid vector", self.grid().cells(), whole.len())?;
        let nx = self.grid().nx();
        Ok(self.local_from_fn(|i, j| whole[i + nx * j]))
    }

    /// The whole-grid vector (`k = i + nx·j`) on process 0, `None` elsewhere: every process
    /// passes its part (a collective call).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::LengthMismatch`](crate::ErrorKind::LengthMismatch) unless `local` has
    /// [`local_len`](Partition::local_len) entries (checked on every process first, so that no
    /// process waits for another that failed).
    ///
    /// ```
    /// # use quintet::distributed::{Partition, Processes};
    /// let part = Partition::new(quintet::Grid::new(2, 2)?, Processes::single())?;
    /// assert_eq!(part.gather(&[1.0, 2.0, 3.0, 4.0])?, Some(vec![1.0, 2.0, 3.0, 4.0]));
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn gather(&self, local: &[f64]) -> Result<Option<Vec<f64>>, Error> {
        let l = &self.layout;
        let procs = &l.processes;
        if let Some(rank) = procs.any_failed(local.len() != l.local_len()) {
            let (i, j) = l.block_of(rank);
            return Err(Error::length(
                "local part of a gathered vector",
                i.len() * j.len(),
                if rank == procs.rank() { local.len() } else { 0 },
            ));
        }
        let size = procs.count();
        let counts: Vec<usize> = (0..size)
            .map(|r| {
                let (i, j) = l.block_of(r);
                i.len() * j.len()
            })
            .collect();
        if procs.rank() != 0 {
            procs.transport.gather(local, &counts, None);
            return Ok(None);
        }
        let mut blocks = vec![0.0; l.grid.cells()];
        procs.transport.gather(local, &counts, Some(&mut blocks));
        let nx = l.grid.nx();
        let mut whole = vec![0.0; l.grid.cells()];
        let mut at = 0;
        for r in 0..size {
            let (i, j) = l.block_of(r);
            for jj in j {
                whole[nx * jj + i.start..nx * jj + i.end]
                    .copy_from_slice(&blocks[at..at + i.len()]);
                at += i.len();
            }
        }
        Ok(Some(whole))
    }

    /// Where global cell `k` is, for error messages.
    pub(crate) fn location(&self, k: usize) -> Location {
        let nx = self.grid().nx();
        Location {
            cell: k,
            coords: Some((k % nx, k / nx)),
        }
    }

    /// The space of this partition's solves: exact sums over all processes (one collective
    /// per reduction), block work on rayon's pool when `threads` and the `parallel` feature
    /// allow it.
    ///
    /// ```
    /// # use quintet::distributed::{Partition, Processes};
    /// use quintet::space::Space;
    /// let part = Partition::new(quintet::Grid::new(4, 4)?, Processes::single())?;
    /// assert!(part.space(false).exact_sums());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn space(&self, threads: bool) -> Arc<dyn crate::space::Space> {
        Arc::new(ExactSpace::new(Arc::clone(&self.layout), threads))
    }

    /// A workspace for this partition's solves, in [`space(threads)`](Partition::space).
    ///
    /// ```
    /// # use quintet::distributed::{Partition, Processes};
    /// let part = Partition::new(quintet::Grid::new(4, 4)?, Processes::single())?;
    /// let ws = part.workspace(true);
    /// assert!(ws.space().exact_sums());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    pub fn workspace(&self, threads: bool) -> Workspace<f64> {
        Workspace::new().with_space(self.space(threads))
    }
}

/// The error for a grid with fewer cells per direction than processes.
fn too_small() -> Error {
    Error::setting(
        "processes for this grid",
        0.0,
        "a px × py process grid with px ≤ nx and py ≤ ny, px·py = the number of processes",
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_choice_cuts_the_fewest_faces() {
        let g = |nx, ny| Grid::new(nx, ny).unwrap();
        assert_eq!(choose(g(100, 100), 4), Some((2, 2)));
        assert_eq!(choose(g(400, 10), 4), Some((4, 1)));
        assert_eq!(choose(g(10, 400), 4), Some((1, 4)));
        assert_eq!(choose(g(100, 100), 3), Some((1, 3)));
        assert_eq!(choose(g(1, 3), 4), None);
        assert_eq!(choose(g(2, 2), 4), Some((2, 2)));
    }
}

//! The processes a distributed solve runs on: one process (no MPI), or MPI's world (feature
//! `mpi`). The rest of [`crate::distributed`] talks to them through three operations only: an
//! all-gather of integers (the reductions), a neighbour exchange of `f64` edges (the halo) and
//! a gather of `f64` blocks to the first process (results).

use std::sync::Arc;

use super::transport::{HaloLink, Transport};

/// The processes of a distributed solve.
///
/// [`Processes::single`] is one process without MPI: the same distributed operator, space and
/// reductions as on many processes, so its results are the bits every process count gives.
/// With the `mpi` feature, `Processes::mpi_world` starts MPI and spans every process that
/// `mpirun` started.
///
/// ```
/// use quintet::distributed::Processes;
/// let one = Processes::single();
/// assert_eq!((one.rank(), one.count()), (0, 1));
/// ```
#[derive(Clone, Debug)]
pub struct Processes {
    pub(crate) transport: Arc<dyn Transport>,
}

impl Processes {
    /// One process, no MPI.
    ///
    /// ```
    /// assert_eq!(quintet::distributed::Processes::single().count(), 1);
    /// ```
    pub fn single() -> Processes {
        Processes {
            transport: Arc::new(OneProcess),
        }
    }

    /// This process's number, from 0.
    ///
    /// ```
    /// assert_eq!(quintet::distributed::Processes::single().rank(), 0);
    /// ```
    pub fn rank(&self) -> usize {
        self.transport.rank()
    }

    /// The number of processes.
    ///
    /// ```
    /// assert_eq!(quintet::distributed::Processes::single().count(), 1);
    /// ```
    pub fn count(&self) -> usize {
        self.transport.size()
    }

    /// Start MPI (at most once per program) and span all its processes. MPI is finalised when
    /// the last clone of the returned value (and of every partition built on it) is dropped.
    /// Collectives are made from whichever thread runs a solve, one at a time (MPI's
    /// serialized threading level, checked).
    ///
    /// # Errors
    ///
    /// [`ErrorKind::InvalidSetting`](crate::ErrorKind::InvalidSetting) when MPI was started
    /// before, or its library cannot give serialized threading.
    ///
    /// ```no_run
    /// let procs = quintet::distributed::Processes::mpi_world()?;
    /// println!("process {} of {}", procs.rank(), procs.count());
    /// # Ok::<(), quintet::Error>(())
    /// ```
    #[cfg(feature = "mpi")]
    pub fn mpi_world() -> Result<Processes, crate::Error> {
        Ok(Processes {
            transport: Arc::new(super::mpi_world::MpiWorld::start()?),
        })
    }

    /// Agree on an outcome: `Err` everywhere if any process has one, the error of the lowest
    /// such rank (its message rebuilt on every process from its kind's words; see
    /// [`Partition`](super::Partition) for the cell-naming errors, which agree by cell).
    pub(crate) fn any_failed(&self, failed: bool) -> Option<usize> {
        let size = self.count();
        let mut recv = [0i64; 64];
        let flag = [i64::from(failed)];
        if size <= recv.len() {
            self.transport.all_gather(&flag, &mut recv[..size]);
            recv[..size].iter().position(|&f| f != 0)
        } else {
            let mut all = vec![0i64; size];
            self.transport.all_gather(&flag, &mut all);
            all.iter().position(|&f| f != 0)
        }
    }
}

/// One process: every collective is a copy.
#[derive(Debug)]
struct OneProcess;

impl Transport for OneProcess {
    fn rank(&self) -> usize {
        0
    }
    fn size(&self) -> usize {
        1
    }
    fn all_gather(&self, send: &[i64], recv: &mut [i64]) {
        recv[..send.len()].copy_from_slice(send);
    }
    fn exchange(&self, links: &mut [Option<HaloLink<'_>>; 4]) {
        // One process has no neighbours; a link to itself would be a copy.
        for link in links.iter_mut().flatten() {
            link.recv.copy_from_slice(link.send);
        }
    }
    fn gather(&self, send: &[f64], _counts: &[usize], recv: Option<&mut [f64]>) {
        if let Some(recv) = recv {
            recv[..send.len()].copy_from_slice(send);
        }
    }
}

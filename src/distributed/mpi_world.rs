//! MPI's world as the processes of a distributed solve (feature `mpi`), through the `mpi` crate.

use mpi::collective::{CommunicatorCollectives, Root};
use mpi::datatype::PartitionMut;
use mpi::environment::{Threading, Universe};
use mpi::point_to_point::{Destination, Source};
use mpi::request::{scope, Request};
use mpi::topology::{Communicator, SimpleCommunicator};
use mpi::Count;

use super::transport::{setup_error, HaloLink, Transport};
use crate::Error;

/// The started MPI environment (finalised when dropped) and this process's place in it.
pub(crate) struct MpiWorld {
    _universe: Universe,
    rank: usize,
    size: usize,
}

impl std::fmt::Debug for MpiWorld {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "MpiWorld {{ rank: {}, size: {} }}", self.rank, self.size)
    }
}

impl MpiWorld {
    pub(crate) fn start() -> Result<MpiWorld, Error> {
        let (universe, level) = mpi::initialize_with_threading(Threading::Serialized)
            .ok_or_else(|| setup_error("MPI start", "MPI started once per program"))?;
        if level < Threading::Serialized {
            return Err(setup_error(
                "MPI threading level",
                "an MPI library that supports serialized threading",
            ));
        }
        let world = universe.world();
        Ok(MpiWorld {
            rank: world.rank() as usize,
            size: world.size() as usize,
            _universe: universe,
        })
    }
}

/// The world communicator (a handle to `MPI_COMM_WORLD`, valid while the universe lives).
fn world() -> SimpleCommunicator {
    SimpleCommunicator::world()
}

impl Transport for MpiWorld {
    fn rank(&self) -> usize {
        self.rank
    }

    fn size(&self) -> usize {
        self.size
    }

    fn all_gather(&self, send: &[i64], recv: &mut [i64]) {
        world().all_gather_into(send, recv);
    }

    fn exchange(&self, links: &mut [Option<HaloLink<'_>>; 4]) {
        let world = world();
        scope(|sc| {
            let mut receives: [Option<Request<'_, [f64], _>>; 4] = [None, None, None, None];
            let mut sends: [Option<Request<'_, [f64], _>>; 4] = [None, None, None, None];
            let slots = receives.iter_mut().zip(sends.iter_mut());
            for ((receive, send), link) in slots.zip(links.iter_mut()) {
                if let Some(link) = link {
                    let peer = world.process_at_rank(link.peer as i32);
                    let values: &[f64] = link.send;
                    *receive = Some(peer.immediate_receive_into_with_tag(
                        sc,
                        &mut *link.recv,
                        link.recv_tag,
                    ));
                    *send = Some(peer.immediate_send_with_tag(sc, values, link.send_tag));
                }
            }
            for request in receives.into_iter().chain(sends).flatten() {
                request.wait();
            }
        });
    }

    fn gather(&self, send: &[f64], counts: &[usize], recv: Option<&mut [f64]>) {
        let world = world();
        let root = world.process_at_rank(0);
        match recv {
            Some(recv) => {
                let counts: Vec<Count> = counts.iter().map(|&c| c as Count).collect();
                let displs: Vec<Count> = counts
                    .iter()
                    .scan(0, |at, &c| {
                        let here = *at;
                        *at += c;
                        Some(here)
                    })
                    .collect();
                let mut partition = PartitionMut::new(recv, counts, displs);
                root.gather_varcount_into_root(send, &mut partition);
            }
            None => root.gather_varcount_into(send),
        }
    }
}

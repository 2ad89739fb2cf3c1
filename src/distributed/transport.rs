//! What a distributed solve needs from its processes: an all-gather of integers (the
//! reductions), a neighbour exchange of `f64` edges (the halo) and a gather of `f64` blocks to
//! the first process (results). One implementation per kind of [`Processes`](super::Processes):
//! one process (processes.rs), or MPI's world (mpi_world.rs, feature `mpi`).

use std::fmt;

use crate::Error;

/// One neighbour's part in a halo exchange: what goes to it and where its values land.
#[cfg_attr(not(feature = "mpi"), allow(dead_code))]
pub(crate) struct HaloLink<'a> {
    pub(crate) peer: usize,
    pub(crate) send: &'a [f64],
    pub(crate) recv: &'a mut [f64],
    /// The tag this process sends with (the direction the values travel).
    pub(crate) send_tag: i32,
    /// The tag the neighbour sends with.
    pub(crate) recv_tag: i32,
}

/// What a distributed solve needs from the processes (the one implementation behind each
/// [`Processes`]).
pub(crate) trait Transport: Send + Sync + fmt::Debug {
    fn rank(&self) -> usize;
    fn size(&self) -> usize;
    /// Every process's `send` (all of one length), rank after rank, into `recv` everywhere.
    fn all_gather(&self, send: &[i64], recv: &mut [i64]);
    /// Send and receive with up to four neighbours at once; returns when all arrived.
    fn exchange(&self, links: &mut [Option<HaloLink<'_>>; 4]);
    /// Every process's `send` (lengths `counts`), rank after rank, into `recv` on rank 0.
    fn gather(&self, send: &[f64], counts: &[usize], recv: Option<&mut [f64]>);
}

/// A typed error for a process set-up that cannot work.
#[cfg_attr(not(feature = "mpi"), allow(dead_code))]
pub(crate) fn setup_error(what: &'static str, allowed: &'static str) -> Error {
    Error::setting(what, 0.0, allowed)
}

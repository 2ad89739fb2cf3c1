//! The space of a partition: every sum exact over all processes, so that no result depends on
//! how the grid is split over processes or threads.
//!
//! A reduction takes this process's partials (one per entry: the workspace cuts the vectors of
//! a distributed operator per entry, see [`Space::exact_sums`]), adds the sums' columns into
//! exact accumulators, folds the maximum/minimum columns, and makes one collective: an
//! all-gather of the packed accumulators. Every process then merges the accumulators (integer
//! additions: the order cannot matter) and rounds each sum once. Maxima and minima are folded
//! in rank order and are independent of the split for any set without NaN.

use std::sync::{Arc, Mutex, PoisonError};

use super::exact::{ExactSum, PACKED};
use super::layout::Layout;
use crate::space::{Combine, Space};

/// The most columns one reduction combines (`space::total` works in chunks of 16).
const MAX_COLUMNS: usize = 16;

/// Words per column in the collective: an exact sum, or a value and whether it exists.
fn words(op: Combine) -> usize {
    match op {
        Combine::Sum => PACKED,
        Combine::Max | Combine::Min => 2,
    }
}

/// Exact sums over the processes of a partition.
#[derive(Debug)]
pub(crate) struct ExactSpace {
    layout: Arc<Layout>,
    threads: bool,
    /// The send and receive buffers of the collective, sized once.
    buffers: Mutex<(Vec<i64>, Vec<i64>)>,
}

impl ExactSpace {
    pub(crate) fn new(layout: Arc<Layout>, threads: bool) -> ExactSpace {
        let per = MAX_COLUMNS * PACKED;
        let size = layout.processes.count();
        ExactSpace {
            layout,
            threads,
            buffers: Mutex::new((vec![0; per], vec![0; per * size])),
        }
    }

    /// Combine column `c` of `len / width` blocks read through `get(index)` into `out`.
    fn combine(
        &self,
        len: usize,
        get: impl Fn(usize) -> f64,
        ops: &[Combine],
        mut out: impl FnMut(usize, f64),
    ) {
        let width = ops.len();
        assert!(
            width <= MAX_COLUMNS,
            "at most {MAX_COLUMNS} columns per reduction"
        );
        let blocks = len.checked_div(width).unwrap_or(0);
        let mut guard = self.buffers.lock().unwrap_or_else(PoisonError::into_inner);
        let (send, recv) = &mut *guard;
        let mut at = 0;
        for (c, &op) in ops.iter().enumerate() {
            let column = (0..blocks).map(|b| get(b * width + c));
            match op {
                Combine::Sum => {
                    let mut sum = ExactSum::default();
                    column.for_each(|v| sum.add(v));
                    sum.pack(&mut send[at..at + PACKED]);
                }
                Combine::Max | Combine::Min => {
                    let folded = column.reduce(|a, b| extreme(op, a, b)); // local: this space's combine
                    send[at] = folded.map_or(0, |v| v.to_bits() as i64);
                    send[at + 1] = i64::from(folded.is_some());
                }
            }
            at += words(op);
        }
        let size = self.layout.processes.count();
        let recv = &mut recv[..at * size];
        self.layout
            .processes
            .transport
            .all_gather(&send[..at], recv);
        let mut start = 0;
        for (c, &op) in ops.iter().enumerate() {
            let parts = (0..size).map(|r| &recv[r * at + start..r * at + start + words(op)]);
            let value = match op {
                Combine::Sum => {
                    let mut sum = ExactSum::default();
                    parts.for_each(|p| sum.merge_packed(p));
                    sum.round()
                }
                Combine::Max | Combine::Min => parts
                    .filter(|p| p[1] != 0)
                    .map(|p| f64::from_bits(p[0] as u64))
                    .reduce(|a, b| extreme(op, a, b)) // local: this space's combine
                    .unwrap_or(0.0),
            };
            out(c, value);
            start += words(op);
        }
    }
}

/// The exact totals over all `processes` of any number of sums (one collective): each
/// process's [`ExactSum`]s are packed, all-gathered and merged as integers, then rounded once,
/// so the totals do not depend on how the values were spread over the processes.
pub(crate) fn exact_totals(processes: &super::Processes, sums: &mut [ExactSum]) -> Vec<f64> {
    let width = sums.len() * PACKED;
    let mut send = vec![0i64; width];
    for (sum, out) in sums.iter_mut().zip(send.chunks_exact_mut(PACKED)) {
        sum.pack(out);
    }
    let size = processes.count();
    let mut recv = vec![0i64; width * size];
    processes.transport.all_gather(&send, &mut recv);
    (0..sums.len())
        .map(|c| {
            let mut total = ExactSum::default();
            for r in 0..size {
                let at = r * width + c * PACKED;
                total.merge_packed(&recv[at..at + PACKED]);
            }
            total.round()
        })
        .collect()
}

/// The larger or smaller of two values (NaN-ignoring, as `f64::max` and `f64::min`).
fn extreme(op: Combine, a: f64, b: f64) -> f64 {
    match op {
        Combine::Max => a.max(b),
        Combine::Min => a.min(b),
        Combine::Sum => a + b,
    }
}

impl Space for ExactSpace {
    fn threaded(&self) -> bool {
        self.threads && cfg!(feature = "parallel")
    }

    fn combine_f64(&self, partials: &[f64], ops: &[Combine], out: &mut [f64]) {
        self.combine(partials.len(), |k| partials[k], ops, |c, v| out[c] = v);
    }

    fn combine_f32(&self, partials: &[f32], ops: &[Combine], out: &mut [f32]) {
        self.combine(
            partials.len(),
            |k| f64::from(partials[k]),
            ops,
            |c, v| out[c] = v as f32,
        );
    }

    fn exact_sums(&self) -> bool {
        true
    }

    fn global_index(&self, local: usize) -> usize {
        self.layout.global(local)
    }

    fn global_len(&self, local: usize) -> usize {
        if local == self.layout.local_len() {
            self.layout.grid.cells()
        } else {
            local
        }
    }
}

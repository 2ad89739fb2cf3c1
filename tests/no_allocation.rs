//! Applying a preconditioner allocates nothing (a design rule of the crate; setup may allocate).
//! A counting global allocator sees every allocation of this test binary.

use std::alloc::{GlobalAlloc, Layout, System};
use std::sync::atomic::{AtomicUsize, Ordering};

use quintet::prelude::*;

struct Counting;

static ALLOCATIONS: AtomicUsize = AtomicUsize::new(0);

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        ALLOCATIONS.fetch_add(1, Ordering::SeqCst);
        // SAFETY: forwards the caller's layout unchanged to the system allocator.
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        // SAFETY: `ptr` came from `alloc` above with this layout.
        unsafe { System.dealloc(ptr, layout) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

fn allocations_during(f: impl FnOnce()) -> usize {
    let before = ALLOCATIONS.load(Ordering::SeqCst);
    f();
    ALLOCATIONS.load(Ordering::SeqCst) - before
}

#[test]
fn applying_allocates_nothing() {
    let grid = Grid::new(97, 64).unwrap();
    let fixed = FixedCells::new(grid, grid.edge_cells()).unwrap();
    let op = Banded5::from_fn(grid, |i, j| Coeffs5::<f64>::laplacian(grid, i, j))
        .unwrap()
        .with_fixed(fixed)
        .unwrap();
    let r: Vec<f64> = (0..grid.cells()).map(|k| (k % 7) as f64).collect();
    let mut z = vec![0.0; grid.cells()];
    let mut ssor = Ssor::new(&op, 1.4).unwrap();
    let mut ic = IncompleteCholesky::ic0(&op).unwrap();
    let mut mic = IncompleteCholesky::mic0(&op).unwrap();
    let mut sip = Sip::new(&op, SipSettings::default()).unwrap();
    let mut mg = Multigrid::new(&op, MultigridSettings::default()).unwrap();
    let list: [&mut dyn Preconditioner<f64>; 5] = [&mut ssor, &mut ic, &mut mic, &mut sip, &mut mg];
    for pre in list {
        let n = allocations_during(|| {
            for _ in 0..3 {
                pre.apply(&r, &mut z);
            }
        });
        assert_eq!(n, 0, "{} allocated {n} times", pre.name());
    }
}

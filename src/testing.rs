//! Helpers shared by the crate's unit tests.

use crate::{Banded5, Coeffs5, FixedCells, Grid};

/// A deterministic generator of numbers in `[0, 1)` (xorshift64, common practice).
pub(crate) struct Numbers(pub(crate) u64);

impl Numbers {
    /// The next number in `[0, 1)`.
    pub(crate) fn next(&mut self) -> f64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// A diffusion operator on `nx × ny` cells with face conductances from `conductance`,
/// a storage term `storage(k)` on the diagonal and the cells `fixed` fixed.
pub(crate) fn diffusion(
    nx: usize,
    ny: usize,
    conductance: &mut dyn FnMut() -> f64,
    storage: &dyn Fn(usize) -> f64,
    fixed: &[usize],
) -> Banded5<f64> {
    let grid = Grid::new(nx, ny).unwrap();
    let east: Vec<f64> = (0..grid.cells()).map(|_| conductance()).collect();
    let north: Vec<f64> = (0..grid.cells()).map(|_| conductance()).collect();
    let op = Banded5::from_fn(grid, |i, j| {
        let k = i + nx * j;
        // Face conductances; a face on the wall joins the zero value outside (Dirichlet)
        // through the cell's own east or north conductance.
        let faces = [
            (i > 0).then(|| east[k - 1]),
            (i + 1 < nx).then_some(east[k]),
            (j > 0).then(|| north[k - nx]),
            (j + 1 < ny).then_some(north[k]),
        ];
        let coupling = |f: Option<f64>| f.map_or(0.0, |g| -g);
        let wall = |f: Option<f64>, own: f64| f.unwrap_or(own);
        Coeffs5 {
            center: wall(faces[0], east[k])
                + wall(faces[1], east[k])
                + wall(faces[2], north[k])
                + wall(faces[3], north[k])
                + storage(k),
            west: coupling(faces[0]),
            east: coupling(faces[1]),
            south: coupling(faces[2]),
            north: coupling(faces[3]),
        }
    })
    .unwrap();
    op.with_fixed(FixedCells::new(grid, fixed.iter().copied()).unwrap())
        .unwrap()
}

/// Fields for the tests that cut a level's passes into bands of rows: on 40 × 200, 33 × 259
/// and 17 × 330 cells (odd and even sides, several bands of coarse rows), conductances over
/// four decades, a storage term, and fixed cells at corners, next to edges and on band cuts.
pub(crate) fn band_cut_fields(numbers: &mut Numbers) -> Vec<Banded5<f64>> {
    [(40, 200), (33, 259), (17, 330)]
        .into_iter()
        .map(|(nx, ny)| {
            let fixed = [0, nx + 3, 64 * nx + 5, 65 * nx, 130 * nx + 1, nx * ny - 1];
            let storage: Vec<f64> = (0..nx * ny).map(|_| numbers.next()).collect();
            let mut conductance = || 10f64.powf(4.0 * numbers.next() - 2.0);
            diffusion(nx, ny, &mut conductance, &|k| storage[k], &fixed)
        })
        .collect()
}

//! The row-wise transfers against their definition cell by cell: `P` from each fine cell's
//! four [`Transfer::stencil`] weights, `R = Pᵀ` as the scatter of those same products, on
//! widths and heights from 1 to 9 (odd sides, 1-wide aggregates), with and without inactive
//! cells and with negative stored weights (a cell cut off from its sibling). Both the vectorised
//! pairs and the general form must give the definition's bits.

use super::Transfer;
use crate::precond::multigrid::aggregate::Axis;
use crate::precond::multigrid::colour::split_row;
use crate::testing::Numbers;
use crate::FixedCells;

/// Random weights in [−0.3, 0.5), random inactive cells (about one in five) or none, and
/// random coarse and fine values, on `nx × ny`.
struct Case {
    nx: usize,
    ny: usize,
    wx: Vec<f32>,
    wy: Vec<f32>,
    inactive: Option<FixedCells>,
    values: Vec<f32>,
    coarse: Vec<f32>,
}

impl Case {
    fn new(nx: usize, ny: usize, with_inactive: bool, seed: u64) -> Case {
        let mut rng = Numbers(seed);
        let cells = nx * ny;
        let mut weight = |_| (rng.next() * 0.8 - 0.3) as f32;
        let wx = (0..cells).map(&mut weight).collect();
        let wy = (0..cells).map(&mut weight).collect();
        let inactive = with_inactive.then(|| {
            let picked: Vec<usize> = (0..cells).filter(|_| rng.next() < 0.2).collect();
            FixedCells::of_len(cells, picked).expect("cells in range")
        });
        let coarse_cells = nx.div_ceil(2) * ny.div_ceil(2);
        let values = (0..cells).map(|_| rng.next() as f32 - 0.5).collect();
        let coarse = (0..coarse_cells).map(|_| rng.next() as f32 - 0.5).collect();
        Case {
            nx,
            ny,
            wx,
            wy,
            inactive,
            values,
            coarse,
        }
    }

    fn transfer(&self) -> Transfer<'_> {
        let (ax, ay) = (Axis { n: self.nx }, Axis { n: self.ny });
        Transfer::new(ax, ay, &self.wx, &self.wy, self.nx.div_ceil(2))
    }

    fn active(&self, k: usize) -> bool {
        !self.inactive.as_ref().is_some_and(|f| f.contains(k))
    }

    /// Cell `(i, j)` after `x += P·coarse` by the definition: its value plus the sum of its
    /// four stencil products, unchanged at an inactive cell.
    fn prolonged(&self, transfer: &Transfer<'_>, i: usize, j: usize) -> f32 {
        let k = i + self.nx * j;
        let mut value = self.values[k];
        if self.active(k) {
            let mut e = 0.0f32;
            for (kc, w) in transfer.stencil::<f32>(i, j, k) {
                e += w * self.coarse[kc];
            }
            value += e;
        }
        value
    }
}

fn cases() -> impl Iterator<Item = Case> {
    let mut seed = 0x9e37_79b9_7f4a_7c15;
    (1..=9).flat_map(move |nx| {
        (1..=9).flat_map(move |ny| {
            [false, true].map(|with_inactive| {
                seed += 1;
                Case::new(nx, ny, with_inactive, seed)
            })
        })
    })
}

#[test]
fn prolongation_rows_match_the_cell_stencils_bit_for_bit() {
    for case in cases() {
        let transfer = case.transfer();
        let (nx, ny) = (case.nx, case.ny);
        let mut rows = case.values.clone();
        for (j, row) in rows.chunks_exact_mut(nx).enumerate() {
            transfer.prolong_row(j, 0..nx, row, case.inactive.as_ref(), &case.coarse);
        }
        for j in 0..ny {
            for i in 0..nx {
                let k = i + nx * j;
                assert_eq!(
                    rows[k].to_bits(),
                    case.prolonged(&transfer, i, j).to_bits(),
                    "cell ({i}, {j}) of {nx} x {ny}, inactive cells: {}",
                    case.inactive.is_some()
                );
            }
        }
    }
}

/// The prolongation on rows stored by colour (a row's even columns, then its odd ones) gives
/// every cell the definition's bits too, on the even widths of [`cases`] and on 64 × 5.
#[test]
fn prolongation_by_colour_matches_the_cell_stencils_bit_for_bit() {
    let wide = (0..4).map(|s| Case::new(64, 5, s % 2 == 1, 0x5eed_0000 + s));
    for case in cases().filter(|c| c.nx % 2 == 0).chain(wide) {
        let transfer = case.transfer();
        let (nx, ny, h) = (case.nx, case.ny, case.nx / 2);
        let mut rows = vec![0.0f32; nx * ny];
        let pairs = rows.chunks_exact_mut(nx).zip(case.values.chunks_exact(nx));
        for (j, (row, values)) in pairs.enumerate() {
            split_row(values, row);
            transfer.prolong_row_by_colour(j, row, case.inactive.as_ref(), &case.coarse);
        }
        for j in 0..ny {
            for i in 0..nx {
                let at = j * nx + if i % 2 == 0 { i / 2 } else { h + i / 2 };
                assert_eq!(
                    rows[at].to_bits(),
                    case.prolonged(&transfer, i, j).to_bits(),
                    "cell ({i}, {j}) of {nx} x {ny}, inactive cells: {}",
                    case.inactive.is_some()
                );
            }
        }
    }
}

#[test]
fn restriction_by_coarse_row_matches_the_scatter_bit_for_bit() {
    for case in cases() {
        let transfer = case.transfer();
        let (nx, ny) = (case.nx, case.ny);
        let (ncx, ncy) = (nx.div_ceil(2), ny.div_ceil(2));
        // The definition: every active fine cell adds its four products, rows and cells in
        // order.
        let mut expected = vec![0.0f32; ncx * ncy];
        for j in 0..ny {
            for i in 0..nx {
                let k = i + nx * j;
                if case.active(k) {
                    for (kc, w) in transfer.stencil::<f32>(i, j, k) {
                        expected[kc] += w * case.values[k];
                    }
                }
            }
        }
        let mut terms = vec![0.0f32; 2 * nx];
        let mut gathered = vec![0.0f32; ncx];
        for cj in 0..ncy {
            let residual = |j: usize| &case.values[j * nx..][..nx];
            let inactive = case.inactive.as_ref();
            transfer.restrict_gather(cj, ny, residual, inactive, &mut terms, &mut gathered);
            for (ci, v) in gathered.iter().enumerate() {
                assert_eq!(
                    v.to_bits(),
                    expected[ci + ncx * cj].to_bits(),
                    "coarse cell ({ci}, {cj}) of {nx} x {ny}, inactive cells: {}",
                    case.inactive.is_some()
                );
            }
        }
    }
}

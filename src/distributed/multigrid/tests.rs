//! The windows' coarse rows and transfer weights against the whole grid's, bit for bit.

use super::split::{Split, Window, MARGIN};
use crate::precond::multigrid::{Level, LevelOperator};
use crate::testing::Numbers;
use crate::{CoarseOperator, Coeffs5, FixedCells, Grid};

/// A symmetric eliminated operator with conductances over four orders of magnitude, storage
/// on some cells and inactive (fixed) cells scattered and in a block.
fn random_level(grid: Grid, seed: u64) -> LevelOperator<f64> {
    let mut g = Numbers(seed);
    let (nx, ny) = (grid.nx(), grid.ny());
    let n = grid.cells();
    let inactive: Vec<bool> = (0..n)
        .map(|k| {
            let (i, j) = grid.coords(k);
            g.next() < 0.05 || ((10..14).contains(&i) && (3..6).contains(&j))
        })
        .collect();
    let mut east = vec![0.0; n];
    let mut north = vec![0.0; n];
    for k in 0..n {
        let (i, j) = grid.coords(k);
        let cond = |g: &mut Numbers| 10f64.powf(4.0 * g.next() - 2.0);
        if i + 1 < nx && !inactive[k] && !inactive[k + 1] {
            east[k] = cond(&mut g);
        }
        if j + 1 < ny && !inactive[k] && !inactive[k + nx] {
            north[k] = cond(&mut g);
        }
    }
    let rows = (0..n)
        .map(|k| {
            if inactive[k] {
                return Coeffs5::identity();
            }
            let (i, j) = grid.coords(k);
            let west = if i > 0 { east[k - 1] } else { 0.0 };
            let south = if j > 0 { north[k - nx] } else { 0.0 };
            let storage = if g.next() < 0.1 { g.next() } else { 0.0 };
            Coeffs5 {
                center: west + east[k] + south + north[k] + storage + 1e-3,
                west: -west,
                east: -east[k],
                south: -south,
                north: -north[k],
            }
        })
        .collect();
    LevelOperator {
        grid,
        rows,
        inactive: FixedCells::new(grid, (0..n).filter(|&k| inactive[k])).unwrap(),
    }
}

/// The window's operator, cut from the whole level.
fn cut(whole: &LevelOperator<f64>, win: &Window) -> LevelOperator<f64> {
    let grid = win.grid().unwrap();
    let nx = whole.grid.nx();
    let mut rows = Vec::new();
    let mut inactive = Vec::new();
    for j in win.j.clone() {
        for i in win.i.clone() {
            rows.push(whole.rows[i + nx * j]);
            if whole.inactive.contains(i + nx * j) {
                inactive.push(win.at(i, j));
            }
        }
    }
    LevelOperator {
        grid,
        rows,
        inactive: FixedCells::new(grid, inactive).unwrap(),
    }
}

#[test]
fn window_coarse_rows_and_weights_are_the_whole_grids() {
    // Blocks of uneven sizes, odd and even starts, at MARGIN cells (the smallest a
    // distributed level allows) and more.
    for (nx, ny, seed) in [(37, 29, 1), (40, 33, 2), (53, 24, 3)] {
        let grid = Grid::new(nx, ny).unwrap();
        let whole = random_level(grid, seed);
        for rule in [
            CoarseOperator::Upscaled,
            CoarseOperator::LumpedGalerkin,
            CoarseOperator::LargerConductance,
        ] {
            let global = Level::below(&whole, rule).unwrap();
            let cnx = global.op.grid.nx();
            let xs = vec![0, MARGIN, 2 * MARGIN + 3, nx - MARGIN - 1, nx];
            let ys = vec![0, MARGIN + 1, ny - MARGIN, ny];
            let split = Split { grid, xs, ys };
            let coarse = split.coarser().unwrap();
            let (px, py) = split.processes();
            for (cx, cy) in (0..py).flat_map(|cy| (0..px).map(move |cx| (cx, cy))) {
                let win = Window::around(&split, cx, cy, MARGIN);
                let local = Level::below(&cut(&whole, &win), rule).unwrap();
                let (ci0, cj0) = (win.i.start / 2, win.j.start / 2);
                let lnx = local.op.grid.nx();
                let (oi, oj) = coarse.block(cx, cy);
                for (i, j) in oj.flat_map(|j| oi.clone().map(move |i| (i, j))) {
                    let a = global.op.rows[i + cnx * j];
                    let b = local.op.rows[(i - ci0) + lnx * (j - cj0)];
                    let bits = |c: Coeffs5<f64>| {
                        [c.center, c.west, c.east, c.south, c.north].map(f64::to_bits)
                    };
                    assert_eq!(
                        bits(a),
                        bits(b),
                        "coarse row ({i}, {j}), block ({cx}, {cy}), {rule:?}"
                    );
                    assert_eq!(
                        global.op.inactive.contains(i + cnx * j),
                        local.op.inactive.contains((i - ci0) + lnx * (j - cj0))
                    );
                }
                // Transfer weights of the owned fine cells and a two-cell margin (the
                // restriction reads them).
                let (wi, wj) = win.own_local_with(2);
                for (il, jl) in wj.flat_map(|j| wi.clone().map(move |i| (i, j))) {
                    let (i, j) = (win.i.start + il, win.j.start + jl);
                    let g = global.transfer().stencil::<f64>(i, j, i + nx * j);
                    let l = local.transfer().stencil::<f64>(il, jl, win.at(i, j));
                    for ((gk, gw), (lk, lw)) in g.into_iter().zip(l) {
                        let (lci, lcj) = (lk % lnx + ci0, lk / lnx + cj0);
                        if gw != 0.0 || lw != 0.0 {
                            assert_eq!((gk % cnx, gk / cnx), (lci, lcj), "fine ({i}, {j})");
                        }
                        assert_eq!(gw.to_bits(), lw.to_bits(), "weight of fine ({i}, {j})");
                    }
                }
            }
        }
    }
}

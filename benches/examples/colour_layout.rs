//! A layout study for the V-cycle's fine level, outside the library: one pre-smoothing pass
//! (ν = 3, six red-black half-sweeps travelling down the rows together, as `smooth.rs` runs
//! them) on `n × n` cells of `f32`, one thread, in three layouts:
//!
//! * `natural` — what the cycle does today: each half-sweep computes the whole row's product
//!   (the vectorised 5-point loop) and updates the cells of one colour from it;
//! * `strided` — the same arrays, the product and update at one colour's cells only (every
//!   other cell);
//! * `by colour` — each row stored as its even columns, then its odd columns (operator,
//!   `1/center`, right-hand side and `x`). With an even `nx` a row keeps its length. The cells
//!   of one colour in row `j` are the half of parity `(j + colour) % 2`; their west and east
//!   neighbours are the other half of the row, their south and north neighbours the same half
//!   of the rows beside it, at the same index. A half-sweep is then one contiguous loop.
//!
//! All three update the interior cells (the grid's edge rows and columns are left at zero)
//! with the same expression in the same order, `x + (b − A·x)/center` with the product summed
//! center, west, east, south, north; the program checks that they end with the same bits and
//! prints the time per cell of the pass (fastest of the rounds) and the ratios.
//!
//! `cargo run --release -p quintet-bench --example colour_layout -- 2000`

use std::time::Instant;

/// Operator bands, `1/center`, right-hand side, in one layout.
struct Level {
    nx: usize,
    ny: usize,
    center: Vec<f32>,
    west: Vec<f32>,
    east: Vec<f32>,
    south: Vec<f32>,
    north: Vec<f32>,
    inv: Vec<f32>,
    b: Vec<f32>,
}

impl Level {
    /// A varying diffusion operator (conductances between 0.5 and 1.5, a storage term).
    fn new(n: usize) -> Level {
        let cells = n * n;
        let g = |k: usize| 1.0 + 0.5 * ((k as f32) * 0.37).sin();
        let east: Vec<f32> = (0..cells).map(|k| -g(k)).collect();
        let north: Vec<f32> = (0..cells).map(|k| -g(k + 7)).collect();
        let west: Vec<f32> = (0..cells)
            .map(|k| if k % n > 0 { east[k - 1] } else { 0.0 })
            .collect();
        let south: Vec<f32> = (0..cells)
            .map(|k| if k >= n { north[k - n] } else { 0.0 })
            .collect();
        let center: Vec<f32> = (0..cells)
            .map(|k| 0.01 - (east[k] + north[k] + west[k] + south[k]))
            .collect();
        let inv = center.iter().map(|c| 1.3 / c).collect();
        let b = (0..cells).map(|k| ((k % 97) as f32) * 0.01).collect();
        Level {
            nx: n,
            ny: n,
            center,
            west,
            east,
            south,
            north,
            inv,
            b,
        }
    }

    /// The same level with each row stored by column parity.
    fn by_colour(&self) -> Level {
        let split = |v: &[f32]| {
            let mut out = vec![0.0; v.len()];
            for (row, out) in v.chunks_exact(self.nx).zip(out.chunks_exact_mut(self.nx)) {
                split_row(row, out);
            }
            out
        };
        Level {
            nx: self.nx,
            ny: self.ny,
            center: split(&self.center),
            west: split(&self.west),
            east: split(&self.east),
            south: split(&self.south),
            north: split(&self.north),
            inv: split(&self.inv),
            b: split(&self.b),
        }
    }

    /// The rows `range` of every band (`[center, west, east, south, north, inv, b]`).
    fn rows(&self, range: std::ops::Range<usize>) -> [&[f32]; 7] {
        [
            &self.center[range.clone()],
            &self.west[range.clone()],
            &self.east[range.clone()],
            &self.south[range.clone()],
            &self.north[range.clone()],
            &self.inv[range.clone()],
            &self.b[range],
        ]
    }
}

/// A row as its even columns, then its odd columns.
fn split_row(row: &[f32], out: &mut [f32]) {
    let h = row.len() / 2;
    for (m, pair) in row.chunks_exact(2).enumerate() {
        (out[m], out[h + m]) = (pair[0], pair[1]);
    }
}

/// `x` row `j` and the rows beside it: (south, row, north).
fn neighbourhood(x: &mut [f32], nx: usize, j: usize) -> (&[f32], &mut [f32], &[f32]) {
    let (below, rest) = x.split_at_mut(j * nx);
    let (row, above) = rest.split_at_mut(nx);
    (&below[(j - 1) * nx..], row, &above[..nx])
}

/// Today's half-sweep: the whole row's product into `buf`, then the colour's update.
fn natural(level: &Level, x: &mut [f32], buf: &mut [f32], j: usize, colour: usize) {
    let nx = level.nx;
    let [c, w, e, s, n, inv, b] = level.rows(j * nx..(j + 1) * nx);
    let (xs, row, xn) = neighbourhood(x, nx, j);
    let m = nx - 2;
    let (xw, xc, xe) = (&row[..m], &row[1..m + 1], &row[2..m + 2]);
    let (c, w, e, s, n) = (&c[1..], &w[1..], &e[1..], &s[1..], &n[1..]);
    let (xs, xn) = (&xs[1..], &xn[1..]);
    for (i, y) in buf[1..m + 1].iter_mut().enumerate() {
        *y = c[i] * xc[i] + w[i] * xw[i] + e[i] * xe[i] + s[i] * xs[i] + n[i] * xn[i];
    }
    let first = 1 + (j + colour + 1) % 2;
    for i in (first..nx - 1).step_by(2) {
        row[i] += (b[i] - buf[i]) * inv[i];
    }
}

/// Product and update at one colour's cells only, in the natural layout.
fn strided(level: &Level, x: &mut [f32], j: usize, colour: usize) {
    let nx = level.nx;
    let [c, w, e, s, n, inv, b] = level.rows(j * nx..(j + 1) * nx);
    let (xs, row, xn) = neighbourhood(x, nx, j);
    let first = 1 + (j + colour + 1) % 2;
    let pairs = (nx - 1 - first).div_ceil(2);
    let r = &mut row[first - 1..];
    for q in 0..pairs {
        let (k, i) = (2 * q, first + 2 * q);
        let (west, centre, east) = (r[k], r[k + 1], r[k + 2]);
        let sum = c[i] * centre + w[i] * west + e[i] * east + s[i] * xs[i] + n[i] * xn[i];
        r[k + 1] = centre + (b[i] - sum) * inv[i];
    }
}

/// The colour's half of row `j` in the by-colour layout, one contiguous loop.
fn by_colour(level: &Level, x: &mut [f32], j: usize, colour: usize) {
    let (nx, h) = (level.nx, level.nx / 2);
    let p = (j + colour) % 2;
    let own = j * nx + p * h;
    let [c, w, e, s, n, inv, b] = level.rows(own..own + h);
    let (xs, row, xn) = neighbourhood(x, nx, j);
    let (xs, xn) = (&xs[p * h..p * h + h], &xn[p * h..p * h + h]);
    let (evens, odds) = row.split_at_mut(h);
    // Interior cells: even columns 2..nx−2 (index m from 1, west odd m − 1, east odd m), odd
    // columns 1..nx−3 (index m to h − 2, west even m, east even m + 1).
    let (xc, other, lo) = if p == 0 {
        (&mut evens[1..], &odds[..], 1)
    } else {
        (&mut odds[..h - 1], &evens[..], 0)
    };
    let len = h - 1;
    let (xw, xe) = (&other[lo + p - 1..][..len], &other[lo + p..][..len]);
    let r = lo..lo + len;
    let (c, w, e, s, n, inv, b) = (
        &c[r.clone()],
        &w[r.clone()],
        &e[r.clone()],
        &s[r.clone()],
        &n[r.clone()],
        &inv[r.clone()],
        &b[r.clone()],
    );
    let (xs, xn) = (&xs[r.clone()], &xn[r]);
    for k in 0..len {
        let sum = c[k] * xc[k] + w[k] * xw[k] + e[k] * xe[k] + s[k] * xs[k] + n[k] * xn[k];
        xc[k] += (b[k] - sum) * inv[k];
    }
}

/// One pre-smoothing pass: at step `t`, sweep `s` does its first colour on row `t − 2s` and
/// its second on row `t − 2s − 1` (interior rows only).
fn pass(ny: usize, mut half_sweep: impl FnMut(usize, usize)) {
    let sweeps = 3;
    for t in 1..ny + 2 * sweeps {
        for s in 0..sweeps {
            for (colour, back) in [(0, 2 * s), (1, 2 * s + 1)] {
                if let Some(j) = t.checked_sub(back).filter(|&j| j >= 1 && j + 1 < ny) {
                    half_sweep(j, colour);
                }
            }
        }
    }
}

fn main() {
    let n: usize = std::env::args()
        .nth(1)
        .map_or(2000, |s| s.parse().expect("an even grid side"));
    assert!(n >= 4 && n % 2 == 0, "an even side of at least 4");
    let rounds = 10;
    let natural_level = Level::new(n);
    let split_level = natural_level.by_colour();
    let mut buf = vec![0.0f32; n];
    let mut x = vec![0.0f32; n * n];
    let mut time = |run: &mut dyn FnMut(&mut [f32])| {
        let mut best = f64::INFINITY;
        for _ in 0..rounds {
            x.fill(0.0);
            let t = Instant::now();
            run(&mut x);
            best = best.min(t.elapsed().as_secs_f64());
        }
        (best, x.clone())
    };
    let (t_natural, x_natural) = time(&mut |x| {
        pass(n, |j, colour| {
            natural(&natural_level, x, &mut buf, j, colour)
        })
    });
    let (t_strided, x_strided) =
        time(&mut |x| pass(n, |j, colour| strided(&natural_level, x, j, colour)));
    let (t_split, x_split) =
        time(&mut |x| pass(n, |j, colour| by_colour(&split_level, x, j, colour)));
    let mut expected = vec![0.0f32; n * n];
    for (row, out) in x_natural.chunks_exact(n).zip(expected.chunks_exact_mut(n)) {
        split_row(row, out);
    }
    let bits = |v: &[f32]| v.iter().map(|v| v.to_bits()).collect::<Vec<_>>();
    assert!(bits(&x_strided) == bits(&x_natural), "strided: other bits");
    assert!(bits(&x_split) == bits(&expected), "by colour: other bits");
    let per_cell = |t: f64| t / (n * n) as f64 * 1e9;
    println!(
        "{n}x{n}, one pre-smoothing pass (six half-sweeps), ns per cell: natural {:.2}, \
         strided {:.2}, by colour {:.2}; natural / by colour {:.2} (same bits)",
        per_cell(t_natural),
        per_cell(t_strided),
        per_cell(t_split),
        t_natural / t_split
    );
}

//! Isolines of a field given at the nodes of a rectangular (possibly uneven) point lattice, by
//! marching squares: each square of four neighbouring nodes is crossed by the level where the
//! values straddle it, linearly interpolated along the square's edges; a saddle square is
//! resolved by the mean of its four corners. Squares touching a NaN (inactive cell) are
//! skipped. Segments are then joined into polylines through the edges they share.

use std::collections::HashMap;

/// A polyline in the lattice's coordinates.
pub type Polyline = Vec<(f64, f64)>;

/// The isolines at `level` of `values` (`values[i + nx·j]` at `(x[i], y[j])`).
pub fn isolines(x: &[f64], y: &[f64], values: &[f64], level: f64) -> Vec<Polyline> {
    let (nx, ny) = (x.len(), y.len());
    assert_eq!(values.len(), nx * ny, "one value per lattice node");
    let v = |i: usize, j: usize| values[i + nx * j];
    // Edge ids: the edge from node (i, j) east is 2k, the one north is 2k + 1.
    let east = |i: usize, j: usize| 2 * (i + nx * j);
    let north = |i: usize, j: usize| 2 * (i + nx * j) + 1;
    let cross = |(xa, ya, va): (f64, f64, f64), (xb, yb, vb): (f64, f64, f64)| {
        let t = if vb != va {
            (level - va) / (vb - va)
        } else {
            0.5
        };
        (xa + t * (xb - xa), ya + t * (yb - ya))
    };

    let mut segments: Vec<[(usize, (f64, f64)); 2]> = Vec::new();
    for j in 0..ny.saturating_sub(1) {
        for i in 0..nx.saturating_sub(1) {
            let corners = [v(i, j), v(i + 1, j), v(i + 1, j + 1), v(i, j + 1)];
            if corners.iter().any(|c| c.is_nan()) {
                continue;
            }
            let above = corners.map(|c| c >= level);
            let sw = (x[i], y[j], corners[0]);
            let se = (x[i + 1], y[j], corners[1]);
            let ne = (x[i + 1], y[j + 1], corners[2]);
            let nw = (x[i], y[j + 1], corners[3]);
            // The square's edges: bottom, right, top, left, with their crossing points.
            let bottom = (above[0] != above[1]).then(|| (east(i, j), cross(sw, se)));
            let right = (above[1] != above[2]).then(|| (north(i + 1, j), cross(se, ne)));
            let top = (above[3] != above[2]).then(|| (east(i, j + 1), cross(nw, ne)));
            let left = (above[0] != above[3]).then(|| (north(i, j), cross(sw, nw)));
            match (bottom, right, top, left) {
                (Some(b), Some(r), Some(t), Some(l)) => {
                    // A saddle: the centre decides which pairs of corners are joined.
                    let centre_above = corners.iter().sum::<f64>() / 4.0 >= level;
                    if above[0] == centre_above {
                        // SW and NE are joined through the centre: cut off SE and NW.
                        segments.push([b, r]);
                        segments.push([t, l]);
                    } else {
                        segments.push([l, b]);
                        segments.push([r, t]);
                    }
                }
                (b, r, t, l) => {
                    let crossed: Vec<_> = [b, r, t, l].into_iter().flatten().collect();
                    if let [p, q] = crossed[..] {
                        segments.push([p, q]);
                    }
                }
            }
        }
    }
    join(segments)
}

/// Join segments that share an edge into polylines.
fn join(segments: Vec<[(usize, (f64, f64)); 2]>) -> Vec<Polyline> {
    let mut by_edge: HashMap<usize, Vec<usize>> = HashMap::new();
    for (n, s) in segments.iter().enumerate() {
        for (edge, _) in s {
            by_edge.entry(*edge).or_default().push(n);
        }
    }
    let mut used = vec![false; segments.len()];
    let mut lines = Vec::new();
    for start in 0..segments.len() {
        if used[start] {
            continue;
        }
        used[start] = true;
        let [a, b] = segments[start];
        let mut forward = vec![a.1, b.1];
        let mut back = Vec::new();
        // Walk on from each end until the line closes or leaves the lattice.
        for (edge, points) in [(b.0, &mut forward), (a.0, &mut back)] {
            let mut edge = edge;
            while let Some(&next) = by_edge[&edge].iter().find(|&&n| !used[n]) {
                used[next] = true;
                let [p, q] = segments[next];
                let (to, point) = if p.0 == edge { q } else { p };
                points.push(point);
                edge = to;
            }
        }
        back.reverse();
        back.extend(forward);
        lines.push(back);
    }
    lines
}

/// About `count` round levels between `lo` and `hi` (steps of 1, 2 or 5 times a power of ten),
/// strictly inside the range.
pub fn round_levels(lo: f64, hi: f64, count: usize) -> Vec<f64> {
    if hi.partial_cmp(&lo) != Some(std::cmp::Ordering::Greater) || count == 0 {
        return Vec::new();
    }
    let raw = (hi - lo) / count as f64;
    let power = 10f64.powf(raw.log10().floor());
    // The round step nearest to the raw one (so the count comes out within a factor 1.5).
    let step = [1.0, 2.0, 5.0, 10.0]
        .into_iter()
        .map(|m| m * power)
        .find(|s| *s >= raw / 1.5)
        .unwrap_or(10.0 * power);
    let mut level = (lo / step).floor() * step + step;
    let mut levels = Vec::new();
    while level < hi - 1e-9 * step {
        if level > lo + 1e-9 * step {
            levels.push(level);
        }
        level += step;
    }
    levels
}

/// How many decimals the labels of these (evenly spaced) levels need.
pub fn decimals_for(levels: &[f64]) -> usize {
    match levels {
        [a, b, ..] => {
            let step = (b - a).abs();
            if step >= 1.0 {
                0
            } else {
                (-step.log10()).ceil() as usize
            }
        }
        _ => 1,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_plane_gives_one_straight_line() {
        let x = [0.0, 1.0, 2.0, 3.0];
        let y = [0.0, 1.0, 2.0];
        let values: Vec<f64> = (0..12).map(|k| (k % 4) as f64).collect();
        let lines = isolines(&x, &y, &values, 1.5);
        assert_eq!(lines.len(), 1);
        assert_eq!(lines[0].len(), 3);
        assert!(lines[0].iter().all(|p| (p.0 - 1.5).abs() < 1e-12));
    }

    #[test]
    fn a_peak_gives_a_closed_ring() {
        let x: Vec<f64> = (0..5).map(f64::from).collect();
        let values: Vec<f64> = (0..25).map(|k| if k == 12 { 1.0 } else { 0.0 }).collect();
        let lines = isolines(&x, &x, &values, 0.5);
        assert_eq!(lines.len(), 1);
        assert_eq!(lines[0].first(), lines[0].last());
    }
}

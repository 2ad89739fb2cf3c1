//! The red-black Gauss–Seidel smoother and the residual, on any level.

use super::level::Rows;
use crate::Scalar;

/// One red-black Gauss–Seidel sweep on `x` for `A·x = b`: colour `first` (cells with
/// `(i + j) % 2 == first`), then the other.
pub(crate) fn red_black_sweep<T: Scalar, R: Rows<T>>(op: &R, b: &[T], x: &mut [T], first: usize) {
    let g = op.grid();
    let (nx, ny) = (g.nx(), g.ny());
    for colour in [first, 1 - first] {
        for j in 0..ny {
            let start = (colour + j) % 2;
            for i in (start..nx).step_by(2) {
                let k = i + nx * j;
                let c = op.row(i, j, k);
                let mut s = b[k];
                if i > 0 {
                    s = s - c.west * x[k - 1];
                }
                if i + 1 < nx {
                    s = s - c.east * x[k + 1];
                }
                if j > 0 {
                    s = s - c.south * x[k - nx];
                }
                if j + 1 < ny {
                    s = s - c.north * x[k + nx];
                }
                x[k] = s / c.center;
            }
        }
    }
}

/// `r = b − A·x` with the eliminated rows.
pub(crate) fn residual<T: Scalar, R: Rows<T>>(op: &R, b: &[T], x: &[T], r: &mut [T]) {
    let g = op.grid();
    let (nx, ny) = (g.nx(), g.ny());
    for j in 0..ny {
        for i in 0..nx {
            let k = i + nx * j;
            let c = op.row(i, j, k);
            let mut s = c.center * x[k];
            if i > 0 {
                s = s + c.west * x[k - 1];
            }
            if i + 1 < nx {
                s = s + c.east * x[k + 1];
            }
            if j > 0 {
                s = s + c.south * x[k - nx];
            }
            if j + 1 < ny {
                s = s + c.north * x[k + nx];
            }
            r[k] = b[k] - s;
        }
    }
}

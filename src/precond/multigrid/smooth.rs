//! The red-black Gauss–Seidel smoother and the residual, on any level.
//!
//! Cells of one colour do not couple to each other in a 5-point stencil, so updating all of
//! them at once from the current values of the other colour *is* the Gauss–Seidel half-sweep.
//! That lets every half-sweep run as a data-parallel pass: the level's row product gives
//! `A·x`, and each cell of the colour takes `x + (b − A·x)/center` (with `1/center` stored, and
//! zero at inactive cells so they keep their zero), written into a second buffer. A full sweep
//! goes `x → scratch → x`. Rows are cut into the fixed blocks of the level, so results do not
//! depend on the thread count.

use super::level::active_cells;
use crate::blocks::Blocks;
use crate::operator::Stencil5;
use crate::space::Space;
use crate::Scalar;

/// Half a sweep: `y` takes the Gauss–Seidel update of `x` at the cells of `colour`
/// (`(i + j) % 2 == colour`) and the value of `x` everywhere else. `inv` is `1/center`, zero at
/// inactive cells.
#[allow(clippy::too_many_arguments)]
fn half_sweep<T: Scalar, R: Stencil5<T> + ?Sized>(
    op: &R,
    inv: &[f32],
    b: &[T],
    x: &[T],
    y: &mut [T],
    colour: usize,
    blocks: &mut Blocks<T>,
    space: &dyn Space,
) {
    let nx = op.grid().nx();
    blocks.for_each(space, y, |cells, block| {
        let rows = cells.start / nx..cells.end / nx;
        op.apply_rows(rows.clone(), x, block);
        for (j, y_row) in rows.zip(block.chunks_exact_mut(nx)) {
            let base = j * nx;
            let (x_row, b_row, d_row) = (&x[base..][..nx], &b[base..][..nx], &inv[base..][..nx]);
            // Cells of the colour sit at i ≡ j + colour (mod 2): update those from the product
            // now in `y_row`, and give the others back their value from `x`.
            let first = (j + colour) % 2;
            for i in (first..nx).step_by(2) {
                y_row[i] = x_row[i] + (b_row[i] - y_row[i]) * widen(d_row[i]);
            }
            for i in (1 - first..nx).step_by(2) {
                y_row[i] = x_row[i];
            }
        }
    });
}

/// One red-black Gauss–Seidel sweep on `x` for `A·x = b`: colour `first` (cells with
/// `(i + j) % 2 == first`), then the other. `scratch` is overwritten. `x` must be zero at
/// inactive cells, and stays so.
#[allow(clippy::too_many_arguments)]
pub(crate) fn red_black_sweep<T: Scalar, R: Stencil5<T> + ?Sized>(
    op: &R,
    inv: &[f32],
    b: &[T],
    x: &mut [T],
    scratch: &mut [T],
    first: usize,
    blocks: &mut Blocks<T>,
    space: &dyn Space,
) {
    half_sweep(op, inv, b, x, scratch, first, blocks, space);
    half_sweep(op, inv, b, scratch, x, 1 - first, blocks, space);
}

/// `ν` pre-smoothing sweeps from `x = 0`, the result in `x` (`scratch` overwritten). The first
/// half-sweep needs no product: from zero, the cells of the first colour take `b/center`.
#[allow(clippy::too_many_arguments)]
pub(crate) fn smooth_from_zero<T: Scalar, R: Stencil5<T> + ?Sized>(
    op: &R,
    inv: &[f32],
    b: &[T],
    x: &mut [T],
    scratch: &mut [T],
    sweeps: usize,
    blocks: &mut Blocks<T>,
    space: &dyn Space,
) {
    let nx = op.grid().nx();
    blocks.for_each(space, scratch, |cells, block| {
        let rows = cells.start / nx..cells.end / nx;
        let (b, inv) = (&b[cells.clone()], &inv[cells]);
        for (jj, j) in rows.enumerate() {
            let first = j % 2;
            let at = jj * nx;
            let (y_row, b_row, d_row) = (&mut block[at..][..nx], &b[at..][..nx], &inv[at..][..nx]);
            for i in (first..nx).step_by(2) {
                y_row[i] = b_row[i] * widen(d_row[i]);
            }
            for i in (1 - first..nx).step_by(2) {
                y_row[i] = T::zero();
            }
        }
    });
    half_sweep(op, inv, b, scratch, x, 1, blocks, space);
    for _ in 1..sweeps {
        red_black_sweep(op, inv, b, x, scratch, 0, blocks, space);
    }
}

/// `r = b − A·x` with the eliminated rows, zero at inactive cells (`x` zero there).
pub(crate) fn residual<T: Scalar, R: Stencil5<T> + ?Sized>(
    op: &R,
    b: &[T],
    x: &[T],
    r: &mut [T],
    blocks: &mut Blocks<T>,
    space: &dyn Space,
) {
    let nx = op.grid().nx();
    let active = active_cells(op);
    blocks.for_each(space, r, |cells, block| {
        op.apply_rows(cells.start / nx..cells.end / nx, x, block);
        for ((ri, &bi), k) in block.iter_mut().zip(&b[cells.clone()]).zip(cells) {
            *ri = if active(k) { bi - *ri } else { T::zero() };
        }
    });
}

/// `v` in the level's scalar type.
#[inline(always)]
fn widen<T: Scalar>(v: f32) -> T {
    T::from(v).unwrap_or_else(T::zero)
}

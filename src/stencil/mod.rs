//! The 5-point operators: [`Banded5`] (five owned arrays), [`Banded5View`] (five borrowed
//! arrays), [`Symmetric5`] (three arrays, for symmetric operators) and [`ClosureStencil`]
//! (coefficients computed on the fly), all implementations of [`Stencil5`](crate::Stencil5),
//! with the checks that name a bad cell.
//!
//! Row `k` of `A·φ = q` reads
//!
//! ```text
//! center·φ_k + west·φ_{k−1} + east·φ_{k+1} + south·φ_{k−nx} + north·φ_{k+nx} = q_k
//! ```
//!
//! For diffusion (heat conduction, Darcy flow) the center is positive and the neighbour
//! couplings are zero or negative. The finite-volume form `a_P·φ_P = Σ a_nb·φ_nb + b`, with
//! positive neighbour coefficients, maps onto this by `center = a_P`, `west = −a_W`, …, `q = b`;
//! [`Banded5::from_finite_volume`] does exactly that on arrays it takes over, and
//! [`Banded5View::from_finite_volume`] on arrays you keep, flipping the signs as it reads.

mod banded;
mod by_colour;
mod closure;
mod symmetric;
mod validate;
mod view;

pub use banded::Banded5;
pub use by_colour::Banded5ByColour;
pub(crate) use by_colour::{in_pieces, Piece};
pub use closure::ClosureStencil;
pub use symmetric::Symmetric5;
pub use validate::check_symmetry;
pub(crate) use validate::survey;
pub use view::Banded5View;

use crate::operator::{check_shape, grid_shape, FixedCells};
use crate::{Error, Grid, Scalar};

/// `v` in another scalar type; NaN if it cannot be represented (validation then names it).
pub(crate) fn cast_scalar<T: Scalar, U: Scalar>(v: T) -> U {
    U::from(v).unwrap_or_else(U::nan)
}

/// `Err(GridMismatch)` naming `what` unless it was built for `found`, the grid `expected`.
pub(crate) fn check_grid(what: &'static str, expected: Grid, found: Grid) -> Result<(), Error> {
    check_shape(what, grid_shape(expected), grid_shape(found))
}

/// `Err(GridMismatch)` unless `fixed` is a set of cells of `grid`.
pub(crate) fn check_fixed(grid: Grid, fixed: &FixedCells) -> Result<(), Error> {
    match fixed.grid() {
        Some(g) => check_grid("the fixed-cell set", grid, g),
        None => check_shape(
            "the fixed-cell set",
            grid_shape(grid),
            crate::error::Shape {
                cells: fixed.total(),
                grid: None,
            },
        ),
    }
}

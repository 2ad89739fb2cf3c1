//! Aggregation geometry shared by the coarse operators and the transfers: which 2 × 2 aggregate
//! a fine cell belongs to along each axis, which aggregate it interpolates from, and how a
//! stored interpolation weight splits into the two shares.

use crate::Scalar;

/// Coarse-cell geometry along one axis: fine index → parent and neighbour aggregates.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Axis {
    pub(crate) n: usize,
}

impl Axis {
    /// The aggregate fine cell `i` belongs to.
    #[inline]
    pub(crate) fn parent(&self, i: usize) -> usize {
        i / 2
    }

    /// The aggregate fine cell `i` interpolates from besides its own: the left cell of a pair
    /// looks towards the previous aggregate, the right one towards the next; a 1-wide
    /// aggregate (last cell of an odd axis) and the cells at the ends have none (the parent
    /// is returned).
    #[inline]
    pub(crate) fn neighbour(&self, i: usize) -> usize {
        let p = i / 2;
        let paired = 2 * p + 1 < self.n;
        if !paired {
            p
        } else if i % 2 == 0 {
            p.saturating_sub(1)
        } else if p + 1 < self.n.div_ceil(2) {
            p + 1
        } else {
            p
        }
    }
}

/// Own and neighbour weights of a stored interpolation weight: `w ≥ 0` is the share of the
/// neighbouring aggregate; `w < 0` means the outward side is a zero-valued ghost (a grid edge or
/// fixed cells) with share `|w|`, so the cell keeps `1 − |w|` of its own aggregate and nothing
/// else.
#[inline]
pub(crate) fn split<T: Scalar>(w: T) -> (T, T) {
    if w < T::zero() {
        (T::one() + w, T::zero())
    } else {
        (T::one() - w, w)
    }
}

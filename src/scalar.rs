//! The floating-point types quintet computes in: `f64` and `f32`.

use crate::space::{Combine, Space};

/// The floating-point types quintet works in: `f64` and `f32` (sealed: no other type can
/// implement it, because every global reduction of a scalar type must have a route through
/// the [`Space`]).
///
/// ```
/// fn takes<T: quintet::Scalar>(_: T) {}
/// takes(1.0_f32);
/// takes(1.0_f64);
/// ```
pub trait Scalar:
    num_traits::Float + Send + Sync + std::fmt::Debug + 'static + sealed::Reduce
{
}

impl Scalar for f64 {}
impl Scalar for f32 {}

pub(crate) mod sealed {
    use super::{Combine, Space};

    /// How a scalar type reaches its reduction seam in a [`Space`].
    pub trait Reduce: Sized {
        /// Combine per-block partials (`blocks × ops.len()` values, block-major) into `out`.
        fn combine(space: &dyn Space, partials: &[Self], ops: &[Combine], out: &mut [Self]);
    }

    impl Reduce for f64 {
        fn combine(space: &dyn Space, partials: &[f64], ops: &[Combine], out: &mut [f64]) {
            space.combine_f64(partials, ops, out);
        }
    }

    impl Reduce for f32 {
        fn combine(space: &dyn Space, partials: &[f32], ops: &[Combine], out: &mut [f32]) {
            space.combine_f32(partials, ops, out);
        }
    }
}

/// Whether `v > 0` (false for NaN).
#[inline]
pub(crate) fn is_positive<T: Scalar>(v: T) -> bool {
    v > T::zero()
}

/// `v` as `f64` (NaN if it cannot be represented).
#[inline]
pub(crate) fn to_f64<T: Scalar>(v: T) -> f64 {
    v.to_f64().unwrap_or(f64::NAN)
}

/// `v` in the scalar type (every `f64` literal the crate uses is representable in `f32` and
/// `f64`; anything else becomes NaN, which validation then names).
#[inline]
pub(crate) fn lit<T: Scalar>(v: f64) -> T {
    T::from(v).unwrap_or_else(T::nan)
}

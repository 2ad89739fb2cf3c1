//! PCG's vector passes fused with a preconditioner's own, for a preconditioner that keeps
//! `z` (and a rounded `r`) in a form of its own: [`SinglePrecision`](super::SinglePrecision),
//! whose `z` is `f32`. The two hidden `Preconditioner` methods take these arguments, which
//! cannot be named outside the crate, so the hooks are not part of the public interface: a
//! preconditioner of the user's keeps the defaults (not offered) and PCG makes the passes
//! itself. Whatever a hook does must give the bits of those passes.

use crate::operator::LinearOperator;
use crate::space::Space;

/// After `M⁻¹`: `z` held at zero at the fixed cells of `op`, `ρ = r·z` returned and, if
/// `ρ > 0`, the direction updated, `p = z + (ρ/ρ₀)·p` with `previous = Some(ρ₀)`, `p = z`
/// with `None`.
pub struct DirectionPass<'a, T> {
    pub(crate) op: &'a dyn LinearOperator<T>,
    pub(crate) space: &'a dyn Space,
    pub(crate) r: &'a [T],
    /// `r` was rounded into the preconditioner by its [`UpdatePass`] and has not changed
    /// since, so it need not be read again before `M⁻¹`.
    pub(crate) rounded: bool,
    pub(crate) previous: Option<T>,
    pub(crate) p: &'a mut [T],
}

/// The end of the iteration: `x += α·p`, `r −= α·q`, returning the new `r·r` and the largest
/// change `|α|·max|p|`, with whatever the preconditioner keeps of `r` taken in the same pass.
pub struct UpdatePass<'a, T> {
    pub(crate) op: &'a dyn LinearOperator<T>,
    pub(crate) space: &'a dyn Space,
    pub(crate) alpha: T,
    pub(crate) p: &'a [T],
    pub(crate) q: &'a [T],
    pub(crate) x: &'a mut [T],
    pub(crate) r: &'a mut [T],
}

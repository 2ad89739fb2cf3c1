//! Fallible allocation of the per-cell arrays, so a grid too large for memory is a typed error
//! before anything is allocated, never an abort.

use crate::error::Error;

/// The most cells a [`Grid`](crate::Grid) may have: 2⁴⁰ (about 1.1·10¹²). Far beyond one
/// machine's memory (a `Banded5<f64>` alone takes 40 bytes per cell), it keeps every byte
/// count of the crate's arrays representable; arrays that would not fit in memory fail
/// earlier, when they are reserved ([`ErrorKind::TooLarge`](crate::ErrorKind::TooLarge)).
///
/// ```
/// assert_eq!(quintet::MAX_CELLS, 1 << 40);
/// ```
pub const MAX_CELLS: usize = 1 << 40;

/// An empty vector with room for `n` entries, or `TooLarge` naming `what` if the memory is
/// not granted.
pub(crate) fn with_capacity<T>(what: &'static str, n: usize) -> Result<Vec<T>, Error> {
    let mut v = Vec::new();
    v.try_reserve_exact(n)
        .map_err(|_| too_large::<T>(what, n))?;
    Ok(v)
}

/// `n` copies of `value`, or `TooLarge` naming `what` if the memory is not granted.
pub(crate) fn filled<T: Clone>(what: &'static str, n: usize, value: T) -> Result<Vec<T>, Error> {
    let mut v = with_capacity(what, n)?;
    v.resize(n, value);
    Ok(v)
}

/// Grow `v` to `n` copies of `value` (keeping nothing), allocating only if it is too small.
pub(crate) fn refill<T: Clone>(
    what: &'static str,
    v: &mut Vec<T>,
    n: usize,
    value: T,
) -> Result<(), Error> {
    v.clear();
    v.try_reserve_exact(n)
        .map_err(|_| too_large::<T>(what, n))?;
    v.resize(n, value);
    Ok(())
}

/// `n` zeros, allocated zeroed (the pages are mapped as the entries are first written, so
/// whoever writes them first touches them), or a typed error if they do not fit.
pub(crate) fn zeroed<T: Clone + num_traits::Zero>(
    what: &'static str,
    n: usize,
) -> Result<Vec<T>, Error> {
    // The reservation is the fallible check; `vec!` then allocates zeroed memory for the
    // float types. A check of 128 KiB or more reserves at least `CHECK_BYTES` (address
    // space only, never touched): glibc's allocator raises its threshold for mapping fresh
    // pages to the size of any mapped block freed below 32 MiB (mallopt(3),
    // M_MMAP_THRESHOLD), so freeing a smaller check would send the zeroed allocations that
    // follow to recycled memory that `vec!` must then clear on one thread (the README's
    // performance notes give the set-up times with and without).
    let size = std::mem::size_of::<T>().max(1);
    let check = if n.saturating_mul(size) >= 128 << 10 {
        n.max(CHECK_BYTES / size)
    } else {
        n
    };
    drop(with_capacity::<T>(what, check)?);
    Ok(vec![T::zero(); n])
}

/// The least a check of [`zeroed`] reserves (see there).
const CHECK_BYTES: usize = 64 << 20;

fn too_large<T>(what: &'static str, n: usize) -> Error {
    let bytes = n as u128 * std::mem::size_of::<T>() as u128;
    Error::too_large(what, n, bytes)
}

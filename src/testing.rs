//! Helpers shared by the crate's unit tests.

/// A deterministic generator of numbers in `[0, 1)` (xorshift64, common practice).
pub(crate) struct Numbers(pub(crate) u64);

impl Numbers {
    /// The next number in `[0, 1)`.
    pub(crate) fn next(&mut self) -> f64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        (self.0 >> 11) as f64 / (1u64 << 53) as f64
    }
}

//! Exact summation of `f64` values: a fixed-point accumulator wide enough for every finite
//! `f64`, rounded to the nearest `f64` once at the end.
//!
//! A finite `f64` is `m·2^(p − 1074)` with an integer `m < 2^53` and `0 ≤ p ≤ 2045`, so every
//! finite value is an integer multiple of `2^−1074`. The accumulator holds that integer in
//! 32-bit digits kept in `i64` limbs: a value adds its (at most three) shifted digits, with
//! room in each limb for 2^30 additions before the carries are propagated. Integer addition is
//! associative, so the exact sum of any set of values does not depend on the order they are
//! added in, nor on how they are grouped into accumulators that are merged later: the property
//! that makes sums independent of the number of threads and processes.

/// Limbs of 32 bits from `2^−1074` up: 64 cover the largest finite `f64` (`p + 53 ≤ 2098`
/// bits), the rest take the carries of up to 2^100 additions.
pub(crate) const LIMBS: usize = 68;

/// Additions between two carry propagations (each limb receives less than 2^32 per addition).
const ADDS_BEFORE_CARRY: u32 = 1 << 30;

/// The packed form has the limbs and one word of flags.
pub(crate) const PACKED: usize = LIMBS + 1;

const NAN: i64 = 1;
const POS_INF: i64 = 2;
const NEG_INF: i64 = 4;

/// The exact sum of the values added so far (non-finite values are remembered as flags).
#[derive(Clone, Debug)]
pub(crate) struct ExactSum {
    limbs: [i64; LIMBS],
    adds: u32,
    flags: i64,
}

impl Default for ExactSum {
    fn default() -> ExactSum {
        ExactSum {
            limbs: [0; LIMBS],
            adds: 0,
            flags: 0,
        }
    }
}

impl ExactSum {
    /// Add `v` exactly.
    #[inline]
    pub(crate) fn add(&mut self, v: f64) {
        if !v.is_finite() {
            self.flags |= if v.is_nan() {
                NAN
            } else if v > 0.0 {
                POS_INF
            } else {
                NEG_INF
            };
            return;
        }
        let bits = v.to_bits();
        let exponent = ((bits >> 52) & 0x7ff) as usize;
        let fraction = bits & ((1 << 52) - 1);
        let (m, p) = if exponent == 0 {
            (fraction, 0)
        } else {
            (fraction | (1 << 52), exponent - 1)
        };
        if m == 0 {
            return;
        }
        let (at, shift) = (p / 32, p % 32);
        let w = u128::from(m) << shift;
        let digits = [
            (w & 0xffff_ffff) as i64,
            ((w >> 32) & 0xffff_ffff) as i64,
            (w >> 64) as i64,
        ];
        let limbs = &mut self.limbs[at..at + 3];
        if bits >> 63 == 1 {
            for (l, d) in limbs.iter_mut().zip(digits) {
                *l -= d;
            }
        } else {
            for (l, d) in limbs.iter_mut().zip(digits) {
                *l += d;
            }
        }
        self.adds += 1;
        if self.adds >= ADDS_BEFORE_CARRY {
            self.carry();
        }
    }

    /// Propagate the carries: every limb but the top one in `[0, 2^32)`, the top one signed.
    fn carry(&mut self) {
        for k in 0..LIMBS - 1 {
            let c = self.limbs[k] >> 32;
            self.limbs[k] -= c << 32;
            self.limbs[k + 1] += c;
        }
        self.adds = 0;
    }

    /// Add another exact sum (packed by [`ExactSum::pack`]).
    pub(crate) fn merge_packed(&mut self, packed: &[i64]) {
        self.carry();
        for (l, &p) in self.limbs.iter_mut().zip(packed) {
            *l += p;
        }
        self.flags |= packed.get(LIMBS).copied().unwrap_or(0);
        self.carry();
    }

    /// The sum in [`PACKED`] words (carried limbs, flags), for a collective.
    pub(crate) fn pack(&mut self, out: &mut [i64]) {
        self.carry();
        out[..LIMBS].copy_from_slice(&self.limbs);
        out[LIMBS] = self.flags;
    }

    /// The exact sum rounded to the nearest `f64` (ties to even); NaN if a NaN or both
    /// infinities were added, an infinity if one was. In the subnormal range the result is
    /// rounded twice (still a fixed function of the exact sum).
    pub(crate) fn round(&self) -> f64 {
        if self.flags & NAN != 0 || self.flags & (POS_INF | NEG_INF) == POS_INF | NEG_INF {
            return f64::NAN;
        }
        if self.flags & POS_INF != 0 {
            return f64::INFINITY;
        }
        if self.flags & NEG_INF != 0 {
            return f64::NEG_INFINITY;
        }
        let mut s = self.clone();
        s.carry();
        let negative = s.limbs[LIMBS - 1] < 0;
        if negative {
            for l in s.limbs.iter_mut() {
                *l = -*l;
            }
            s.carry();
        }
        let Some(top) = s.limbs.iter().rposition(|&l| l != 0) else {
            return 0.0;
        };
        // The top three limbs (at least 65 significant bits when there are three) and a
        // sticky bit for anything below: `as f64` then rounds once, correctly.
        let low = top.saturating_sub(2);
        let mut v: u128 = 0;
        for k in (low..=top).rev() {
            v = (v << 32) | s.limbs[k] as u128;
        }
        if s.limbs[..low].iter().any(|&l| l != 0) {
            v |= 1;
        }
        let magnitude = scale(v as f64, low as i32 * 32 - 1074);
        if negative {
            -magnitude
        } else {
            magnitude
        }
    }
}

/// `v·2^e`, in steps that neither overflow nor underflow on the way.
fn scale(mut v: f64, mut e: i32) -> f64 {
    while e > 1000 {
        v *= 2f64.powi(1000);
        e -= 1000;
    }
    while e < -1000 {
        v *= 2f64.powi(-1000);
        e += 1000;
    }
    v * 2f64.powi(e)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn exact(values: &[f64]) -> f64 {
        let mut s = ExactSum::default();
        for &v in values {
            s.add(v);
        }
        s.round()
    }

    /// A small deterministic generator for the tests (xorshift, common practice).
    fn values(n: usize, seed: u64) -> Vec<f64> {
        let mut x = seed;
        (0..n)
            .map(|_| {
                x ^= x << 13;
                x ^= x >> 7;
                x ^= x << 17;
                let m = (x >> 11) as f64 / (1u64 << 53) as f64 - 0.5;
                m * 2f64.powi(((x % 200) as i32) - 100)
            })
            .collect()
    }

    #[test]
    fn two_values_round_as_ieee_addition() {
        // IEEE 754-2008, §4.3 and §5.4.1: `a + b` is the exact sum correctly rounded (to
        // nearest, ties to even), so the accumulator must agree with the hardware on pairs.
        let v = values(4000, 7);
        for pair in v.chunks_exact(2) {
            assert_eq!(
                exact(pair).to_bits(),
                (pair[0] + pair[1]).to_bits(),
                "{pair:?}"
            );
        }
        let tie = [1.0, f64::EPSILON / 2.0];
        assert_eq!(exact(&tie), 1.0 + f64::EPSILON / 2.0);
    }

    #[test]
    fn integer_sums_are_exact() {
        // Integers below 2^53 are exact in f64; their sum is checked in i128 (common practice).
        let ints: Vec<i64> = (0..5000).map(|k| (k * 7919 % 10007) - 5000).collect();
        let sum: i128 = ints.iter().map(|&k| i128::from(k) << 40).sum(); // local: test
        let as_f64: Vec<f64> = ints.iter().map(|&k| k as f64 * 2f64.powi(40)).collect();
        assert_eq!(exact(&as_f64), sum as f64);
        assert_eq!(exact(&[1e300, 1.0, -1e300]), 1.0);
        assert_eq!(
            exact(&[f64::MIN_POSITIVE / 4.0, -f64::MIN_POSITIVE / 8.0]),
            f64::MIN_POSITIVE / 8.0
        );
        assert_eq!(exact(&[f64::MAX, f64::MAX, -f64::MAX]), f64::MAX);
    }

    #[test]
    fn order_and_grouping_do_not_change_the_bits() {
        let v = values(10_000, 42);
        let forward = exact(&v);
        let mut reversed = v.clone();
        reversed.reverse();
        assert_eq!(forward.to_bits(), exact(&reversed).to_bits());
        // Three accumulators merged, as three processes would.
        let mut total = ExactSum::default();
        let mut packed = [0i64; PACKED];
        for part in v.chunks(3333) {
            let mut s = ExactSum::default();
            part.iter().for_each(|&x| s.add(x));
            s.pack(&mut packed);
            total.merge_packed(&packed);
        }
        assert_eq!(forward.to_bits(), total.round().to_bits());
    }

    #[test]
    fn non_finite_values_are_flagged() {
        assert!(exact(&[1.0, f64::NAN]).is_nan());
        assert_eq!(exact(&[1.0, f64::INFINITY]), f64::INFINITY);
        assert!(exact(&[f64::NEG_INFINITY, f64::INFINITY]).is_nan());
        assert_eq!(exact(&[]), 0.0);
    }
}

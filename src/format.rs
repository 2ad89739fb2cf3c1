//! Numbers for people: four significant digits, plain where that reads well, scientific
//! otherwise. Used by the budget tables and the messages that quote values.

use std::fmt;

/// `v` with four significant digits: plain notation for magnitudes from 10⁻³ to below 10⁵
/// (`0.9506`, `123.5`, `4000`), scientific otherwise (`9.506e-7`); `0` for zero.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct Sig4(pub(crate) f64);

impl fmt::Display for Sig4 {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let v = self.0;
        let text = if v == 0.0 {
            "0".to_string()
        } else if !v.is_finite() {
            format!("{v}")
        } else {
            let magnitude = v.abs().log10().floor();
            if (-3.0..5.0).contains(&magnitude) {
                let decimals = (3.0 - magnitude).max(0.0) as usize;
                format!("{v:.decimals$}")
            } else {
                format!("{v:.3e}")
            }
        };
        f.pad(&text)
    }
}

#[cfg(test)]
mod tests {
    use super::Sig4;

    #[test]
    fn four_significant_digits() {
        for (v, text) in [
            (0.9506426, "0.9506"),
            (123.456, "123.5"),
            (4000.0, "4000"),
            (12345.0, "12345"),
            (-0.0012346, "-0.001235"),
            (9.506426e-7, "9.506e-7"),
            (2.5e8, "2.500e8"),
            (0.0, "0"),
        ] {
            assert_eq!(Sig4(v).to_string(), text, "{v}");
        }
        assert_eq!(format!("{:>8}", Sig4(1.5)), "   1.500");
    }
}

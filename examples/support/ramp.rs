//! Colour ramps for field maps: piecewise-linear between a few colours, picked for these
//! examples (low values dark and cool, high values light or warm, ordered in lightness so the
//! map still reads in grey).

use plotters::style::RGBColor;

/// A colour ramp: stops at positions 0..=1 with their colours.
pub struct Ramp(&'static [(f64, (u8, u8, u8))]);

/// For temperatures: deep blue, teal, pale green, amber, brick red.
pub const TEMPERATURE: Ramp = Ramp(&[
    (0.0, (32, 38, 110)),
    (0.25, (34, 114, 170)),
    (0.5, (110, 186, 160)),
    (0.75, (238, 196, 84)),
    (1.0, (178, 36, 28)),
]);

/// For hydraulic heads: dark umber (low, drawn down) through sand to lake blue (high).
pub const HEAD: Ramp = Ramp(&[
    (0.0, (92, 52, 24)),
    (0.3, (176, 128, 70)),
    (0.55, (228, 214, 160)),
    (0.8, (120, 182, 206)),
    (1.0, (30, 84, 150)),
]);

/// For drawdowns: near white (none) through amber to deep red (largest).
pub const DRAWDOWN: Ramp = Ramp(&[
    (0.0, (250, 250, 244)),
    (0.35, (246, 204, 126)),
    (0.7, (218, 104, 52)),
    (1.0, (118, 22, 40)),
]);

impl Ramp {
    /// The colour at `t` (clamped to 0..=1; NaN gives light grey, for inactive cells).
    pub fn at(&self, t: f64) -> RGBColor {
        if t.is_nan() {
            return RGBColor(215, 215, 215);
        }
        let t = t.clamp(0.0, 1.0);
        let stops = self.0;
        let n = stops
            .windows(2)
            .position(|w| t <= w[1].0)
            .unwrap_or(stops.len() - 2);
        let ((t0, a), (t1, b)) = (stops[n], stops[n + 1]);
        let s = if t1 > t0 { (t - t0) / (t1 - t0) } else { 0.0 };
        let mix = |u: u8, v: u8| (u as f64 + s * (v as f64 - u as f64)).round() as u8;
        RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
    }
}

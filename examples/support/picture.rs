//! Field maps as PNG through plotters' bitmap backend: one coloured rectangle per cell,
//! labelled isolines, a colour scale, and whatever the caller overlays.

use std::path::Path;

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::contour::{isolines, Polyline};
use super::font::FAMILY;
use super::ramp::Ramp;
use super::Failure;

/// Width of every picture, in pixels.
pub const WIDTH: u32 = 800;
/// Width of the colour scale beside a map.
const SCALE_WIDTH: u32 = 120;

/// A chart in plain `f64` coordinates, as overlays on a map receive it.
pub type MapChart<'a, 'b> =
    ChartContext<'a, BitMapBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

/// Text of `size` pixels in the pictures' font.
pub fn text(size: u32) -> TextStyle<'static> {
    (FAMILY, size as f64).into_font().color(&BLACK)
}

/// A field to draw: cell faces and nodes in display units (mm, m, km), one value per cell
/// (NaN for cells to leave grey).
pub struct Map<'a> {
    /// Title above the map.
    pub title: String,
    /// Axis labels, with units.
    pub x_label: String,
    /// Axis labels, with units.
    pub y_label: String,
    /// Label of the colour scale, with units.
    pub scale_label: String,
    /// Cell faces along x (`nx + 1`) and y (`ny + 1`).
    pub x_faces: Vec<f64>,
    /// See `x_faces`.
    pub y_faces: Vec<f64>,
    /// Cell nodes along x (`nx`) and y (`ny`), where the values sit.
    pub x_nodes: Vec<f64>,
    /// See `x_nodes`.
    pub y_nodes: Vec<f64>,
    /// `values[i + nx·j]`.
    pub values: &'a [f64],
    /// The colour ramp.
    pub ramp: &'a Ramp,
    /// Isoline levels (drawn and labelled, and marked on the colour scale).
    pub levels: Vec<f64>,
    /// Decimals in the isoline labels.
    pub decimals: usize,
}

impl Map<'_> {
    /// Draw to `path`, then let `overlay` add markers and outlines in display units.
    ///
    /// # Errors
    ///
    /// Drawing or file errors.
    pub fn draw(
        &self,
        path: &Path,
        overlay: impl FnOnce(&mut MapChart<'_, '_>) -> Result<(), Failure>,
    ) -> Result<(), Failure> {
        let (x0, x1) = (self.x_faces[0], *self.x_faces.last().unwrap_or(&1.0));
        let (y0, y1) = (self.y_faces[0], *self.y_faces.last().unwrap_or(&1.0));
        let (lo, hi) = finite_range(self.values);
        // Keep the map's aspect ratio: plot width minus label areas, height to match.
        let (title_h, x_area, y_area, margin) = (40, 50, 70, 12);
        let plot_w = (WIDTH - SCALE_WIDTH - y_area - 2 * margin) as f64;
        let plot_h = (plot_w * (y1 - y0) / (x1 - x0)).clamp(150.0, 900.0);
        let height = plot_h as u32 + title_h + x_area + 2 * margin;

        let root = BitMapBackend::new(path, (WIDTH, height)).into_drawing_area();
        root.fill(&WHITE)?;
        let (main, scale) = root.split_horizontally(WIDTH - SCALE_WIDTH);
        let mut chart = ChartBuilder::on(&main)
            .caption(&self.title, text(19))
            .margin(margin)
            .x_label_area_size(x_area)
            .y_label_area_size(y_area)
            .build_cartesian_2d(x0..x1, y0..y1)?;
        let x_ticks = |v: &f64| tick(*v, x1 - x0);
        let y_ticks = |v: &f64| tick(*v, y1 - y0);
        chart
            .configure_mesh()
            .disable_mesh()
            .x_desc(&self.x_label)
            .y_desc(&self.y_label)
            .x_label_formatter(&x_ticks)
            .y_label_formatter(&y_ticks)
            .label_style(text(15))
            .axis_desc_style(text(16))
            .draw()?;

        let nx = self.x_nodes.len();
        let colour = |v: f64| self.ramp.at((v - lo) / (hi - lo).max(f64::MIN_POSITIVE));
        chart.draw_series(self.values.iter().enumerate().map(|(k, &v)| {
            let (i, j) = (k % nx, k / nx);
            Rectangle::new(
                [
                    (self.x_faces[i], self.y_faces[j]),
                    (self.x_faces[i + 1], self.y_faces[j + 1]),
                ],
                colour(v).filled(),
            )
        }))?;

        let lines: Vec<(f64, Vec<Polyline>)> = self
            .levels
            .iter()
            .map(|&level| {
                let lines = isolines(&self.x_nodes, &self.y_nodes, self.values, level);
                (level, lines)
            })
            .collect();
        // On grids finer than the picture, consecutive vertices of an isoline lie less than a
        // pixel apart, and the bitmap backend's one-pixel lines leave out the last pixel or
        // two of a segment that falls gently (a shallow isoline comes out dotted or dashed):
        // draw each line through vertices a few pixels apart, and once more through the
        // midpoints of its segments, whose middles cover the first pass's joints.
        let pixel = ((x1 - x0) / plot_w, (y1 - y0) / plot_h);
        for (_, polylines) in &lines {
            for line in polylines {
                let thinned = thin(line, pixel, 4.0);
                let mut shifted = Vec::with_capacity(thinned.len() + 1);
                shifted.extend(thinned.first().copied());
                shifted.extend(
                    thinned
                        .windows(2)
                        .map(|w| (0.5 * (w[0].0 + w[1].0), 0.5 * (w[0].1 + w[1].1))),
                );
                shifted.extend(thinned.last().copied());
                for path in [thinned, shifted] {
                    chart.draw_series(LineSeries::new(path, BLACK.stroke_width(1)))?;
                }
            }
        }
        // Label each isoline long enough to carry its value, at its middle.
        let min_len = 0.12 * ((x1 - x0).powi(2) + (y1 - y0).powi(2)).sqrt();
        for (level, polylines) in &lines {
            for line in polylines {
                if let Some(at) = midpoint(line, min_len) {
                    let label = format!("{level:.*}", self.decimals);
                    boxed_label(&mut chart, at, &label, 13)?;
                }
            }
        }
        overlay(&mut chart)?;
        // The scale spans the same rows of pixels as the map.
        let rows = chart.plotting_area().get_pixel_range().1;
        let (top, bottom) = (
            rows.start.max(0) as u32,
            height.saturating_sub(rows.end.max(0) as u32),
        );
        self.draw_scale(&scale, (lo, hi), (top, bottom))?;
        root.present()?;
        Ok(())
    }

    /// The colour scale: the ramp from `lo` to `hi`, isoline levels marked across it.
    fn draw_scale(
        &self,
        area: &DrawingArea<BitMapBackend<'_>, Shift>,
        (lo, hi): (f64, f64),
        (top, bottom): (u32, u32),
    ) -> Result<(), Failure> {
        let hi = if hi > lo { hi } else { lo + 1.0 };
        let mut bar = ChartBuilder::on(area)
            .margin_top(top)
            .margin_bottom(bottom)
            .margin_left(4)
            .margin_right(8)
            .set_label_area_size(LabelAreaPosition::Right, 66)
            .build_cartesian_2d(0.0..1.0, lo..hi)?;
        let ticks = |v: &f64| tick(*v, hi - lo);
        bar.configure_mesh()
            .disable_mesh()
            .disable_x_axis()
            .y_desc(&self.scale_label)
            .y_label_formatter(&ticks)
            .label_style(text(14))
            .axis_desc_style(text(16))
            .draw()?;
        let steps = 200;
        bar.draw_series((0..steps).map(|n| {
            let (a, b) = (n as f64 / steps as f64, (n + 1) as f64 / steps as f64);
            let (va, vb) = (lo + a * (hi - lo), lo + b * (hi - lo));
            Rectangle::new([(0.0, va), (1.0, vb)], self.ramp.at(a).filled())
        }))?;
        for &level in &self.levels {
            bar.draw_series(LineSeries::new(
                [(0.0, level), (1.0, level)],
                BLACK.stroke_width(1),
            ))?;
        }
        Ok(())
    }
}

/// Draw `label` in a white box centred on `at` (display units).
///
/// # Errors
///
/// Drawing errors.
pub fn boxed_label(
    chart: &mut MapChart<'_, '_>,
    at: (f64, f64),
    label: &str,
    size: u32,
) -> Result<(), Failure> {
    let style = text(size).pos(Pos::new(HPos::Center, VPos::Center));
    let (w, h) = chart.plotting_area().estimate_text_size(label, &style)?;
    let (w, h) = (w as i32 / 2 + 3, h as i32 / 2 + 2);
    chart.draw_series(std::iter::once(
        EmptyElement::at(at)
            + Rectangle::new([(-w, -h), (w, h)], WHITE.mix(0.85).filled())
            + Text::new(label.to_string(), (0, 0), style),
    ))?;
    Ok(())
}

/// A tick label for `v` on an axis spanning `span`: as few decimals as the span allows.
pub fn tick(v: f64, span: f64) -> String {
    let decimals = (-(span / 10.0).log10().floor()).max(0.0) as usize;
    format!("{v:.decimals$}")
}

/// The smallest and largest finite values (0..1 if there are none).
pub fn finite_range(values: &[f64]) -> (f64, f64) {
    let finite = values.iter().copied().filter(|v| v.is_finite());
    let lo = finite.clone().fold(f64::INFINITY, f64::min);
    let hi = finite.fold(f64::NEG_INFINITY, f64::max);
    if lo.is_finite() {
        (lo, hi)
    } else {
        (0.0, 1.0)
    }
}

/// The vertices of `line` at least `min_px` pixels apart (pixel size `pixel` in data units),
/// its ends always kept.
fn thin(line: &[(f64, f64)], pixel: (f64, f64), min_px: f64) -> Vec<(f64, f64)> {
    let mut kept: Vec<(f64, f64)> = Vec::with_capacity(line.len());
    for (n, &p) in line.iter().enumerate() {
        let far = kept
            .last()
            .is_none_or(|&(x, y)| ((p.0 - x) / pixel.0).hypot((p.1 - y) / pixel.1) >= min_px);
        if far || n + 1 == line.len() {
            kept.push(p);
        }
    }
    kept
}

/// The point halfway along `line`, if the line is at least `min_len` long.
fn midpoint(line: &[(f64, f64)], min_len: f64) -> Option<(f64, f64)> {
    let seg = |w: &[(f64, f64)]| ((w[1].0 - w[0].0).powi(2) + (w[1].1 - w[0].1).powi(2)).sqrt();
    let total: f64 = line.windows(2).map(seg).sum();
    if total < min_len {
        return None;
    }
    let mut walked = 0.0;
    for w in line.windows(2) {
        let s = seg(w);
        if walked + s >= total / 2.0 && s > 0.0 {
            let t = (total / 2.0 - walked) / s;
            return Some((
                w[0].0 + t * (w[1].0 - w[0].0),
                w[0].1 + t * (w[1].1 - w[0].1),
            ));
        }
        walked += s;
    }
    None
}

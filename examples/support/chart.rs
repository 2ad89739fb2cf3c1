//! Line charts as PNG through plotters' bitmap backend: linear or logarithmic axes, and a
//! legend either inside the plot or in columns below it (for many lines).

use std::path::Path;

use plotters::coord::ranged1d::{AsRangedCoord, ValueFormatter};
use plotters::prelude::*;

use super::font::FAMILY;
use super::picture::{text, tick, WIDTH};
use super::Failure;

/// Line colours, told apart by hue and lightness; past the end they repeat, dashed.
const LINE_COLOURS: [RGBColor; 8] = [
    RGBColor(20, 20, 20),
    RGBColor(200, 60, 30),
    RGBColor(30, 100, 190),
    RGBColor(40, 150, 70),
    RGBColor(150, 60, 170),
    RGBColor(220, 150, 20),
    RGBColor(0, 160, 170),
    RGBColor(140, 90, 50),
];

/// One line of a chart.
pub struct Curve {
    /// Legend text.
    pub label: String,
    /// The points, in chart units.
    pub points: Vec<(f64, f64)>,
}

/// Where the legend goes.
pub enum Legend {
    /// Inside the plot, at this corner.
    Inside(SeriesLabelPosition),
    /// Below the plot, in this many columns.
    Below(usize),
}

/// A line chart.
pub struct LineChart {
    /// Title above the chart.
    pub title: String,
    /// Axis labels, with units.
    pub x_label: String,
    /// Axis labels, with units.
    pub y_label: String,
    /// Range of the x axis (both ends positive for a logarithmic axis).
    pub x_range: (f64, f64),
    /// Range of the y axis (both ends positive for a logarithmic axis).
    pub y_range: (f64, f64),
    /// A logarithmic x axis.
    pub log_x: bool,
    /// A logarithmic y axis.
    pub log_y: bool,
    /// Height of the plot (title and axes included, legend below not), in pixels.
    pub height: u32,
    /// Where the legend goes.
    pub legend: Legend,
    /// The lines.
    pub curves: Vec<Curve>,
}

/// Whole decades around the positive values of `curves`, for a logarithmic axis.
pub fn decades(curves: &[Curve]) -> (f64, f64) {
    let values = || {
        curves
            .iter()
            .flat_map(|c| c.points.iter().map(|p| p.1))
            .filter(|v| v.is_finite() && *v > 0.0)
    };
    let lo = values().fold(f64::INFINITY, f64::min);
    let hi = values().fold(0.0, f64::max);
    if lo.is_finite() && hi > 0.0 {
        (
            10f64.powf(lo.log10().floor()),
            10f64.powf(hi.log10().ceil()),
        )
    } else {
        (1e-10, 1.0)
    }
}

fn colour(n: usize) -> RGBColor {
    LINE_COLOURS[n % LINE_COLOURS.len()]
}

fn dashed(n: usize) -> bool {
    n >= LINE_COLOURS.len()
}

/// The legend's sample line at `(x, y)` in pixels: solid, or with a gap for a dashed curve.
fn sample(n: usize, (x, y): (i32, i32)) -> impl Iterator<Item = PathElement<(i32, i32)>> {
    let gap = if dashed(n) { 6 } else { 0 };
    let style = colour(n).stroke_width(2);
    [
        PathElement::new(vec![(x, y), (x + 10, y)], style),
        PathElement::new(vec![(x + 10 + gap, y), (x + 24, y)], style),
    ]
    .into_iter()
}

impl LineChart {
    /// Draw to `path`.
    ///
    /// # Errors
    ///
    /// Drawing or file errors.
    pub fn draw(&self, path: &Path) -> Result<(), Failure> {
        const ROW: u32 = 22;
        let below = match self.legend {
            Legend::Below(columns) => {
                let rows = self.curves.len().div_ceil(columns.max(1)) as u32;
                rows * ROW + 16
            }
            Legend::Inside(_) => 0,
        };
        let root = BitMapBackend::new(path, (WIDTH, self.height + below)).into_drawing_area();
        root.fill(&WHITE)?;
        let (plot, legend_area) = root.split_vertically(self.height);
        let (x0, x1) = self.x_range;
        let (y0, y1) = self.y_range;
        match (self.log_x, self.log_y) {
            (false, false) => self.plot(&plot, x0..x1, y0..y1)?,
            (false, true) => self.plot(&plot, x0..x1, (y0..y1).log_scale())?,
            (true, false) => self.plot(&plot, (x0..x1).log_scale(), y0..y1)?,
            (true, true) => self.plot(&plot, (x0..x1).log_scale(), (y0..y1).log_scale())?,
        }
        if let Legend::Below(columns) = self.legend {
            let columns = columns.max(1);
            let width = (WIDTH as i32 - 100) / columns as i32;
            for (n, curve) in self.curves.iter().enumerate() {
                let (row, column) = (n / columns, n % columns);
                let at = (90 + column as i32 * width, 8 + row as i32 * ROW as i32);
                for piece in sample(n, at) {
                    legend_area.draw(&piece)?;
                }
                legend_area.draw(&Text::new(
                    curve.label.clone(),
                    (at.0 + 32, at.1 - 7),
                    text(14),
                ))?;
            }
        }
        root.present()?;
        Ok(())
    }

    fn plot<X, Y>(
        &self,
        area: &DrawingArea<BitMapBackend<'_>, plotters::coord::Shift>,
        x: X,
        y: Y,
    ) -> Result<(), Failure>
    where
        X: AsRangedCoord<Value = f64>,
        Y: AsRangedCoord<Value = f64>,
        X::CoordDescType: ValueFormatter<f64>,
        Y::CoordDescType: ValueFormatter<f64>,
    {
        let (x0, x1) = self.x_range;
        let (y0, y1) = self.y_range;
        let mut chart = ChartBuilder::on(area)
            .caption(&self.title, text(19))
            .margin(14)
            .margin_right(30)
            .x_label_area_size(50)
            .y_label_area_size(80)
            .build_cartesian_2d(x, y)?;
        let x_ticks = |v: &f64| {
            if self.log_x {
                format!("{v}")
            } else {
                tick(*v, x1 - x0)
            }
        };
        let y_ticks = |v: &f64| {
            if self.log_y {
                format!("{v:.0e}")
            } else {
                tick(*v, y1 - y0)
            }
        };
        chart
            .configure_mesh()
            .x_desc(&self.x_label)
            .y_desc(&self.y_label)
            .x_label_formatter(&x_ticks)
            .y_label_formatter(&y_ticks)
            .label_style(text(15))
            .axis_desc_style(text(16))
            .light_line_style(WHITE.mix(0.0))
            .draw()?;
        for (n, curve) in self.curves.iter().enumerate() {
            let style = colour(n).stroke_width(2);
            let points = curve.points.iter().copied();
            let series = if dashed(n) {
                chart.draw_series(DashedLineSeries::new(points, 8, 5, style))?
            } else {
                chart.draw_series(LineSeries::new(points, style))?
            };
            if let Legend::Inside(_) = self.legend {
                let gap = if dashed(n) { 6 } else { 0 };
                series.label(&curve.label).legend(move |(x, y)| {
                    EmptyElement::at((x, y))
                        + PathElement::new(vec![(0, 0), (10, 0)], style)
                        + PathElement::new(vec![(10 + gap, 0), (24, 0)], style)
                });
            }
        }
        if let Legend::Inside(position) = &self.legend {
            chart
                .configure_series_labels()
                .position(position.clone())
                .background_style(WHITE.mix(0.9))
                .border_style(BLACK)
                .label_font((FAMILY, 14.0).into_font())
                .draw()?;
        }
        Ok(())
    }
}

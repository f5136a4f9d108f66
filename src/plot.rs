//! SVG plots: stacked panels of time series sharing one time axis.

use crate::error::CliError;
use plotters::prelude::*;
use std::path::Path;

/// One line of a panel: a name for the legend, and (x, y) points.
pub struct Series {
    /// Legend text.
    pub name: String,
    /// Points; gaps in tracking show as gaps when `points_only`.
    pub points: Vec<(f64, f64)>,
    /// Draw dots instead of a line (residuals of sparse tracking).
    pub points_only: bool,
}

/// A panel: a y-axis label with its unit, and its series.
pub struct Panel {
    /// e.g. `R residual (m)`.
    pub y_label: String,
    /// The series.
    pub series: Vec<Series>,
}

const COLOURS: [RGBColor; 4] = [
    RGBColor(31, 100, 180),
    RGBColor(214, 94, 20),
    RGBColor(40, 150, 70),
    RGBColor(120, 60, 160),
];

/// Writes a stacked-panel SVG to `path` (through a temporary file and a rename).
pub fn write_panels(
    path: &Path,
    title: &str,
    x_label: &str,
    panels: &[Panel],
) -> Result<(), CliError> {
    let fail =
        |e: String| CliError::input(format!("{}: cannot draw the plot: {e}", path.display()));
    let height = 60 + 260 * panels.len() as u32;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (1000, height)).into_drawing_area();
        root.fill(&WHITE).map_err(|e| fail(e.to_string()))?;
        let root = root
            .titled(title, ("sans-serif", 22))
            .map_err(|e| fail(e.to_string()))?;
        let areas = root.split_evenly((panels.len().max(1), 1));
        let (mut x0, mut x1) = (f64::INFINITY, f64::NEG_INFINITY);
        for p in panels {
            for s in &p.series {
                for (x, _) in &s.points {
                    x0 = x0.min(*x);
                    x1 = x1.max(*x);
                }
            }
        }
        if !(x0.is_finite() && x1.is_finite()) || x1 <= x0 {
            x0 = 0.0;
            x1 = 1.0;
        }
        for (area, panel) in areas.iter().zip(panels) {
            let (mut y0, mut y1) = (f64::INFINITY, f64::NEG_INFINITY);
            for s in &panel.series {
                for (_, y) in &s.points {
                    if y.is_finite() {
                        y0 = y0.min(*y);
                        y1 = y1.max(*y);
                    }
                }
            }
            if !(y0.is_finite() && y1.is_finite()) {
                y0 = -1.0;
                y1 = 1.0;
            }
            let pad = ((y1 - y0) * 0.08).max(1e-12);
            let mut chart = ChartBuilder::on(area)
                .margin(12)
                .x_label_area_size(40)
                .y_label_area_size(80)
                .build_cartesian_2d(x0..x1, (y0 - pad)..(y1 + pad))
                .map_err(|e| fail(e.to_string()))?;
            let span = (y1 - y0).abs().max(y1.abs()).max(y0.abs());
            let exponent = !(1e-2..1e5).contains(&span);
            let fmt_y = move |v: &f64| {
                if exponent {
                    format!("{v:.2e}")
                } else {
                    format!("{v:.1}")
                }
            };
            chart
                .configure_mesh()
                .y_label_formatter(&fmt_y)
                .x_desc(x_label)
                .y_desc(panel.y_label.as_str())
                .label_style(("sans-serif", 14))
                .axis_desc_style(("sans-serif", 15))
                .draw()
                .map_err(|e| fail(e.to_string()))?;
            for (k, s) in panel.series.iter().enumerate() {
                let colour = COLOURS[k % COLOURS.len()];
                let drawn = if s.points_only {
                    chart.draw_series(s.points.iter().map(|p| Circle::new(*p, 2, colour.filled())))
                } else {
                    chart.draw_series(LineSeries::new(
                        s.points.iter().copied(),
                        colour.stroke_width(2),
                    ))
                }
                .map_err(|e| fail(e.to_string()))?;
                drawn.label(s.name.as_str()).legend(move |(x, y)| {
                    PathElement::new(vec![(x, y), (x + 18, y)], colour.stroke_width(3))
                });
            }
            chart
                .configure_series_labels()
                .background_style(WHITE.mix(0.85))
                .border_style(BLACK)
                .label_font(("sans-serif", 14))
                .draw()
                .map_err(|e| fail(e.to_string()))?;
        }
        root.present().map_err(|e| fail(e.to_string()))?;
    }
    propagator::ephemeris::write_atomically(path, svg.as_bytes()).map_err(CliError::input)
}

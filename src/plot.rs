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

/// A panel: a y-axis label with its unit, its series, and reference lines.
#[derive(Default)]
pub struct Panel {
    /// e.g. `R residual (m)`.
    pub y_label: String,
    /// The series.
    pub series: Vec<Series>,
    /// Horizontal dashed lines `(legend, y)`, e.g. the ±1σ noise band.
    pub levels: Vec<(String, f64)>,
    /// Vertical dashed lines `(legend, x)`, e.g. where the held-out part begins.
    pub marks: Vec<(String, f64)>,
}

/// A tick label: exact zero for values that are zero to rounding (no `-3.10e-25`),
/// scientific notation for very small or large spans.
fn tick_label(v: f64, span: f64) -> String {
    if v.abs() <= span * 1e-9 {
        return "0".into();
    }
    if (1e-2..1e5).contains(&span) {
        format!("{v:.1}")
    } else {
        format!("{v:.2e}")
    }
}

/// Width of the legend column beside each panel, px.
const LEGEND_PX: u32 = 230;

const COLOURS: [RGBColor; 5] = [
    RGBColor(31, 100, 180),
    RGBColor(214, 94, 20),
    RGBColor(40, 150, 70),
    RGBColor(120, 60, 160),
    RGBColor(150, 110, 20),
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
        let xs = x_range(panels);
        for (whole, panel) in areas.iter().zip(panels) {
            // The legend gets its own column, so it never covers the data.
            let (area, legend) = whole.split_horizontally(1000 - LEGEND_PX);
            let entries = draw_panel(&area, panel, xs, x_label).map_err(fail)?;
            draw_legend(&legend, &entries).map_err(fail)?;
        }
        root.present().map_err(|e| fail(e.to_string()))?;
    }
    propagator::ephemeris::write_atomically(path, svg.as_bytes()).map_err(CliError::input)
}

type Area<'a> = DrawingArea<SVGBackend<'a>, plotters::coord::Shift>;

/// A legend entry: name, colour, dashed.
type Entry = (String, RGBColor, bool);

/// The x range shared by every panel (0–1 when there is nothing to show).
fn x_range(panels: &[Panel]) -> (f64, f64) {
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
        (0.0, 1.0)
    } else {
        (x0, x1)
    }
}

/// The y range of a panel: its finite values and levels (−1–1 when there are none).
fn y_range(panel: &Panel) -> (f64, f64) {
    let (mut y0, mut y1) = (f64::INFINITY, f64::NEG_INFINITY);
    let levels = panel.levels.iter().map(|(_, y)| *y);
    let ys = panel
        .series
        .iter()
        .flat_map(|s| s.points.iter().map(|p| p.1));
    for y in ys.chain(levels) {
        if y.is_finite() {
            y0 = y0.min(y);
            y1 = y1.max(y);
        }
    }
    if !(y0.is_finite() && y1.is_finite()) {
        (-1.0, 1.0)
    } else {
        (y0, y1)
    }
}

/// One panel's axes, series, levels (grey, dashed) and marks (red, dashed); returns its
/// legend entries.
fn draw_panel(
    area: &Area,
    panel: &Panel,
    (x0, x1): (f64, f64),
    x_label: &str,
) -> Result<Vec<Entry>, String> {
    let e = |e: &dyn std::fmt::Display| e.to_string();
    let (y0, y1) = y_range(panel);
    let pad = ((y1 - y0) * 0.08).max(1e-12);
    let mut chart = ChartBuilder::on(area)
        .margin(12)
        .x_label_area_size(40)
        .y_label_area_size(80)
        .build_cartesian_2d(x0..x1, (y0 - pad)..(y1 + pad))
        .map_err(|x| e(&x))?;
    let span = (y1 - y0).abs().max(y1.abs()).max(y0.abs());
    let fmt_y = move |v: &f64| tick_label(*v, span);
    chart
        .configure_mesh()
        .y_label_formatter(&fmt_y)
        .x_desc(x_label)
        .y_desc(panel.y_label.as_str())
        .label_style(("sans-serif", 14))
        .axis_desc_style(("sans-serif", 15))
        .draw()
        .map_err(|x| e(&x))?;
    let mut entries: Vec<Entry> = Vec::new();
    for (k, s) in panel.series.iter().enumerate() {
        let colour = COLOURS[k % COLOURS.len()];
        if s.points_only {
            chart.draw_series(s.points.iter().map(|p| Circle::new(*p, 2, colour.filled())))
        } else {
            chart.draw_series(LineSeries::new(
                s.points.iter().copied(),
                colour.stroke_width(2),
            ))
        }
        .map_err(|x| e(&x))?;
        entries.push((s.name.clone(), colour, false));
    }
    let grey = RGBColor(90, 90, 90);
    for (name, y) in &panel.levels {
        chart
            .draw_series(DashedLineSeries::new(
                [(x0, *y), (x1, *y)],
                6,
                4,
                grey.stroke_width(1),
            ))
            .map_err(|x| e(&x))?;
        if !entries.iter().any(|(n, _, _)| n == name) {
            entries.push((name.clone(), grey, true));
        }
    }
    let red = RGBColor(190, 30, 45);
    for (name, x) in &panel.marks {
        chart
            .draw_series(DashedLineSeries::new(
                [(*x, y0 - pad), (*x, y1 + pad)],
                6,
                4,
                red.stroke_width(2),
            ))
            .map_err(|x| e(&x))?;
        entries.push((name.clone(), red, true));
    }
    Ok(entries)
}

/// The legend column: a line sample (dashed ones short) and the name of each entry.
fn draw_legend(legend: &Area, entries: &[Entry]) -> Result<(), String> {
    for (i, (name, colour, dashed)) in entries.iter().enumerate() {
        let y = 24 + 22 * i as i32;
        let line = if *dashed {
            PathElement::new(vec![(6, y), (12, y)], colour.stroke_width(2))
        } else {
            PathElement::new(vec![(6, y), (24, y)], colour.stroke_width(3))
        };
        legend.draw(&line).map_err(|e| e.to_string())?;
        legend
            .draw(&Text::new(
                name.clone(),
                (30, y - 7),
                ("sans-serif", 13).into_font().color(&BLACK),
            ))
            .map_err(|e| e.to_string())?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::tick_label;

    #[test]
    fn zero_to_rounding_is_labelled_zero() {
        assert_eq!(tick_label(-3.10e-25, 40.0), "0");
        assert_eq!(tick_label(20.0, 40.0), "20.0");
        assert_eq!(tick_label(2.5e-9, 1e-8), "2.50e-9");
        assert_eq!(tick_label(1e-26, 1e-8), "0");
    }
}

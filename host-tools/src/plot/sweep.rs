//! x-y sweep plots, e.g. peak motor terminal voltage against cable length, with vertical
//! marker lines (the critical length) and horizontal reference lines (2x the step).

use std::path::Path;

use plotters::coord::ranged1d::{AsRangedCoord, Ranged, ValueFormatter};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::style::{self, Entry, LEFT_MARGIN, X_LABEL_H, Y_LABEL_W};
use super::{decimate_indices, write_atomic, DrawResult, PlotError};

const WIDTH: u32 = 1000;
const PLOT_H: u32 = 540;
const RIGHT_MARGIN: u32 = 28;
/// Above this many points a series is drawn without point markers.
const MAX_MARKED_POINTS: usize = 120;

/// An x-y sweep plot.
#[derive(Clone, Debug)]
pub struct SweepPlot<'a> {
    /// Picture title.
    pub title: &'a str,
    /// x axis description with unit, e.g. "cable length (m)".
    pub x_label: &'a str,
    /// y axis description with unit, e.g. "peak voltage (V)".
    pub y_label: &'a str,
    /// Named series of (x, y) points.
    pub series: Vec<(&'a str, &'a [(f64, f64)])>,
    /// Vertical marker lines: x and label.
    pub x_markers: Vec<(f64, &'a str)>,
    /// Horizontal reference lines: y and label.
    pub y_markers: Vec<(f64, &'a str)>,
    /// Logarithmic x axis (all x must then be positive).
    pub log_x: bool,
    /// Points marked as failing a tolerance (drawn as large red rings), with the label
    /// of their legend entry.
    pub failed: (&'a str, Vec<(f64, f64)>),
}

fn check(path: &Path, plot: &SweepPlot) -> Result<(), PlotError> {
    if plot.series.iter().all(|(_, pts)| pts.is_empty()) {
        return Err(PlotError::data(path, format!("sweep '{}': no points", plot.title)));
    }
    for (name, pts) in &plot.series {
        if let Some(i) = pts.iter().position(|(x, y)| !(x.is_finite() && y.is_finite())) {
            return Err(PlotError::data(
                path,
                format!(
                    "sweep '{}', series '{name}': point {i} is ({}, {}) (must be finite)",
                    plot.title, pts[i].0, pts[i].1
                ),
            ));
        }
        if plot.log_x {
            if let Some(i) = pts.iter().position(|(x, _)| *x <= 0.0) {
                return Err(PlotError::data(
                    path,
                    format!("sweep '{}', series '{name}': point {i} has x = {} but the x axis is logarithmic (x must be > 0)", plot.title, pts[i].0),
                ));
            }
        }
    }
    for (v, name) in plot.x_markers.iter().chain(&plot.y_markers) {
        if !v.is_finite() {
            return Err(PlotError::data(
                path,
                format!("sweep '{}': marker '{name}' is at {v} (must be finite)", plot.title),
            ));
        }
    }
    if plot.log_x {
        if let Some((v, name)) = plot.x_markers.iter().find(|(v, _)| *v <= 0.0) {
            return Err(PlotError::data(
                path,
                format!(
                    "sweep '{}': marker '{name}' is at x = {v} but the x axis is logarithmic (x must be > 0)",
                    plot.title
                ),
            ));
        }
    }
    Ok(())
}

/// Rings around points that fail a tolerance.
const FAILED: style::Trace = style::Trace { colour: RGBColor(0xC8, 0x1E, 0x1E), width: 2, dash: None };

/// An x-y sweep plot, e.g. peak motor terminal voltage against cable length, with optional
/// vertical marker lines (e.g. the critical length) and horizontal reference lines (e.g. 2x
/// the step).
pub fn write_sweep(path: &Path, plot: &SweepPlot) -> Result<(), PlotError> {
    check(path, plot)?;
    let mut entries: Vec<Entry> =
        plot.series.iter().enumerate().map(|(i, (name, _))| (name.to_string(), style::sweep_trace(i))).collect();
    if !plot.failed.1.is_empty() {
        entries.push((plot.failed.0.to_string(), FAILED));
    }
    let x0 = (LEFT_MARGIN + Y_LABEL_W) as i32;
    let header = style::header_height(true, &entries, x0, WIDTH as i32) as u32;

    let (mut x_lo, mut x_hi, mut y_lo, mut y_hi) = (f64::INFINITY, f64::NEG_INFINITY, f64::INFINITY, f64::NEG_INFINITY);
    for &(x, y) in plot.series.iter().flat_map(|(_, pts)| pts.iter()) {
        (x_lo, x_hi, y_lo, y_hi) = (x_lo.min(x), x_hi.max(x), y_lo.min(y), y_hi.max(y));
    }
    for &(x, _) in &plot.x_markers {
        (x_lo, x_hi) = (x_lo.min(x), x_hi.max(x));
    }
    for &(y, _) in &plot.y_markers {
        (y_lo, y_hi) = (y_lo.min(y), y_hi.max(y));
    }
    let (y_lo, y_hi) = style::padded(y_lo, y_hi, 0.08);

    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, header + PLOT_H)).into_drawing_area();
        let drawn = root.fill(&style::PAPER).map_err(Into::into).and_then(|_| {
            style::draw_header(&root, Some(plot.title), &entries, x0)?;
            if plot.log_x {
                // A tenth of a decade of room on either side; a single x gets a decade.
                let (lo, hi) = if x_hi > x_lo { (x_lo / 1.12, x_hi * 1.12) } else { (x_lo / 3.0, x_lo * 3.0) };
                draw_chart(&root, header, plot, (lo..hi).log_scale(), lo..hi, y_lo..y_hi, |v| style::fmt_sig3(*v))
            } else {
                let (lo, hi) = style::padded(x_lo, x_hi, 0.03);
                let d = style::tick_decimals(hi - lo);
                draw_chart(&root, header, plot, lo..hi, lo..hi, y_lo..y_hi, move |v| style::fmt_num(*v, d))
            }
        });
        drawn.map_err(|e| PlotError::draw(path, e))?;
        root.present().map_err(|e| PlotError::draw(path, e))?;
    }
    let mut traces: Vec<_> = (0..plot.series.len()).map(style::sweep_trace).collect();
    traces.extend([style::X_MARKER, style::Y_MARKER]);
    write_atomic(path, &style::apply_dashes(&svg, &traces))
}

/// Draws the chart on an x axis of any kind (linear or logarithmic) spanning `x`.
fn draw_chart<XR, XC>(
    root: &DrawingArea<SVGBackend<'_>, Shift>,
    header: u32,
    plot: &SweepPlot,
    x_coord: XR,
    x: std::ops::Range<f64>,
    y: std::ops::Range<f64>,
    x_fmt: impl Fn(&f64) -> String,
) -> DrawResult
where
    XR: AsRangedCoord<CoordDescType = XC, Value = f64>,
    XC: Ranged<ValueType = f64> + ValueFormatter<f64>,
{
    let mut chart = ChartBuilder::on(root)
        .margin_top(header)
        .margin_left(LEFT_MARGIN)
        .margin_right(RIGHT_MARGIN)
        .margin_bottom(4)
        .x_label_area_size(X_LABEL_H)
        .y_label_area_size(Y_LABEL_W)
        .build_cartesian_2d(x_coord, y.clone())?;
    let yd = style::tick_decimals(y.end - y.start);
    style::ink_axes_with_grid(&mut chart.configure_mesh())
        .x_labels(12)
        .y_labels(8)
        .x_desc(plot.x_label)
        .y_desc(plot.y_label)
        .x_label_formatter(&x_fmt)
        .y_label_formatter(&|v| style::fmt_num(*v, yd))
        .draw()?;

    // Reference lines first, so the data is drawn over them; then their labels, so that no
    // line runs through a label.
    for &(xm, _) in &plot.x_markers {
        chart.draw_series(LineSeries::new(
            [(xm, y.start), (xm, y.end)],
            style::X_MARKER.colour.stroke_width(style::X_MARKER.width),
        ))?;
    }
    for &(ym, _) in &plot.y_markers {
        chart.draw_series(LineSeries::new(
            [(x.start, ym), (x.end, ym)],
            style::Y_MARKER.colour.stroke_width(style::Y_MARKER.width),
        ))?;
    }
    let label_style = style::font(style::TICK_PX).color(&style::INK);
    let plot_right = chart.backend_coord(&(x.end, y.start)).0;
    for (i, &(xm, name)) in plot.x_markers.iter().enumerate() {
        // Beside the top of the line, on whichever side has room; stacked per marker.
        let px = chart.backend_coord(&(xm, y.end)).0;
        let w = style::text_width(name, style::TICK_PX) as i32;
        let (dx, h) = if px + 6 + w <= plot_right { (6, HPos::Left) } else { (-6, HPos::Right) };
        let dy = 6 + 22 * i as i32;
        chart.draw_series(std::iter::once(
            EmptyElement::at((xm, y.end))
                + label_backing(name, (dx, dy), h, VPos::Top)
                + Text::new(name.to_string(), (dx, dy), label_style.pos(Pos::new(h, VPos::Top))),
        ))?;
    }
    for &(ym, name) in &plot.y_markers {
        // Above the right end of the line.
        chart.draw_series(std::iter::once(
            EmptyElement::at((x.end, ym))
                + label_backing(name, (-6, -4), HPos::Right, VPos::Bottom)
                + Text::new(name.to_string(), (-6, -4), label_style.pos(Pos::new(HPos::Right, VPos::Bottom))),
        ))?;
    }

    for (i, (_, pts)) in plot.series.iter().enumerate() {
        let trace = style::sweep_trace(i);
        let kept = decimate_indices(pts.len(), |k| pts[k].1, super::MAX_TRACE_POINTS);
        chart.draw_series(LineSeries::new(kept.iter().map(|&k| pts[k]), trace.colour.stroke_width(trace.width)))?;
        if pts.len() <= MAX_MARKED_POINTS {
            chart.draw_series(pts.iter().map(|&p| Circle::new(p, 3, trace.colour.filled())))?;
        }
    }
    chart.draw_series(plot.failed.1.iter().map(|&p| Circle::new(p, 8, FAILED.colour.stroke_width(FAILED.width))))?;
    Ok(())
}

/// A translucent white box behind a marker label at pixel offset `at` with the given
/// anchor, so that grid and marker lines do not run through the text.
pub(super) fn label_backing(text: &str, at: (i32, i32), h: HPos, v: VPos) -> Rectangle<(i32, i32)> {
    // The width estimate is crude; 15 % extra covers wide glyphs.
    let w = (style::text_width(text, style::TICK_PX) * 1.15).ceil() as i32;
    let th = style::TICK_PX as i32 + 2;
    let x0 = match h {
        HPos::Left => at.0,
        HPos::Center => at.0 - w / 2,
        HPos::Right => at.0 - w,
    };
    let y0 = match v {
        VPos::Top => at.1,
        VPos::Center => at.1 - th / 2,
        VPos::Bottom => at.1 - th,
    };
    Rectangle::new([(x0 - 3, y0 - 2), (x0 + w + 3, y0 + th + 2)], style::PAPER.mix(0.85).filled())
}

//! The view against distance: impedance along the plant from the port, with the port's
//! step response beneath on the same distance axis (an echo at time t after the edge comes
//! from x = v·t/2), and a readout of the largest discontinuities.

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::style::{self, Entry};
use super::{decimate_indices, write_atomic, DrawResult, PlotError};

const WIDTH: u32 = 1000;
const TOP_H: u32 = 430;
const BOTTOM_H: u32 = 300;
const READOUT_ROW: u32 = 20;
const X_LABEL_H: u32 = 48;
const Y_LABEL_W: u32 = 84;
const LEFT_MARGIN: u32 = 12;
const RIGHT_MARGIN: u32 = 28;

/// One discontinuity for the readout and its marker.
#[derive(Clone, Debug, PartialEq)]
pub struct Mark {
    /// Distance from the port, m.
    pub x: f64,
    /// Text, e.g. "10.00 m: 50.0 → 75.0 Ω, ρ = +0.200".
    pub text: String,
}

/// The profile picture.
#[derive(Clone, Debug)]
pub struct ProfilePlot<'a> {
    pub title: &'a str,
    /// Impedance of each thin layer: (distance m, ohm), drawn thin.
    pub layers: &'a [(f64, f64)],
    /// The uniform runs: (start m, end m, ohm), drawn as a bold staircase.
    pub runs: &'a [(f64, f64, f64)],
    /// Label of the runs' staircase, e.g. "extracted plant (fitted)".
    pub runs_label: &'a str,
    /// Largest discontinuities, largest first.
    pub marks: &'a [Mark],
    /// Port voltage against echo distance: named series of (m, V).
    pub responses: Vec<(&'a str, &'a [(f64, f64)])>,
}

fn check(path: &Path, p: &ProfilePlot) -> Result<(), PlotError> {
    if p.runs.is_empty() && p.layers.is_empty() {
        return Err(PlotError::data(path, "profile: no impedance to draw"));
    }
    let bad = p.layers.iter().any(|(x, z)| !(x.is_finite() && z.is_finite()))
        || p.runs.iter().any(|(a, b, z)| !(a.is_finite() && b.is_finite() && z.is_finite()))
        || p.responses.iter().any(|(_, s)| s.iter().any(|(x, v)| !(x.is_finite() && v.is_finite())));
    if bad {
        return Err(PlotError::data(path, "profile: a value is not finite"));
    }
    Ok(())
}

/// Write the profile picture to `path` (atomically).
pub fn write_profile(path: &Path, p: &ProfilePlot) -> Result<(), PlotError> {
    check(path, p)?;
    let x0 = (LEFT_MARGIN + Y_LABEL_W) as i32;
    let top_entries: Vec<Entry> = vec![
        ("impedance of each layer (peeled)".to_string(), style::EXTRA[4]),
        (p.runs_label.to_string(), style::EMULATED),
    ];
    let bottom_entries: Vec<Entry> =
        p.responses.iter().enumerate().map(|(i, (n, _))| (n.to_string(), style::sweep_trace(i + 1))).collect();
    let h1 = style::header_height(true, &top_entries, x0, WIDTH as i32) as u32;
    let h2 = style::header_height(true, &bottom_entries, x0, WIDTH as i32) as u32;
    let readout_h = 30 + READOUT_ROW * p.marks.len() as u32;
    let total = h1 + TOP_H + h2 + BOTTOM_H + readout_h;

    // Distance axis: the runs and the responses.
    let mut x_hi = p.runs.iter().map(|r| r.1).fold(0.0, f64::max);
    for (_, s) in &p.responses {
        x_hi = s.iter().map(|q| q.0).fold(x_hi, f64::max);
    }
    let x_hi = if x_hi > 0.0 { x_hi } else { 1.0 };
    // Impedance axis: from the runs (layers can spike at an open end; they are clipped).
    let z_max = p.runs.iter().map(|r| r.2).fold(0.0, f64::max).max(1.0);
    let z_hi = 1.3 * z_max;

    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, total)).into_drawing_area();
        let drawn = root.fill(&style::PAPER).map_err(Into::into).and_then(|_| {
            let (top, rest) = root.split_vertically(h1 + TOP_H);
            let (bottom, readout) = rest.split_vertically(h2 + BOTTOM_H);
            style::draw_header(&top, Some(p.title), &top_entries, x0)?;
            draw_impedance(&top, h1, p, x_hi, z_hi)?;
            style::draw_header(&bottom, Some("port voltage against echo distance x = v·t/2"), &bottom_entries, x0)?;
            draw_responses(&bottom, h2, p, x_hi)?;
            draw_readout(&readout, p, x0)
        });
        drawn.map_err(|e| PlotError::draw(path, e))?;
        root.present().map_err(|e| PlotError::draw(path, e))?;
    }
    let mut traces = vec![style::EXTRA[4], style::EMULATED, style::X_MARKER];
    traces.extend((0..p.responses.len()).map(|i| style::sweep_trace(i + 1)));
    write_atomic(path, &style::apply_dashes(&svg, &traces))
}

fn mesh<'a, DB: DrawingBackend>(
    chart: &mut ChartContext<
        'a,
        DB,
        Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>,
    >,
    x_desc: &str,
    y_desc: &str,
    x_span: f64,
    y_span: f64,
) -> DrawResult
where
    DB::ErrorType: 'static,
{
    let (xd, yd) = (style::tick_decimals(x_span), style::tick_decimals(y_span));
    style::ink_axes_with_grid(&mut chart.configure_mesh())
        .x_labels(12)
        .y_labels(8)
        .x_desc(x_desc)
        .y_desc(y_desc)
        .x_label_formatter(&|v| style::fmt_num(*v, xd))
        .y_label_formatter(&|v| style::fmt_num(*v, yd))
        .draw()?;
    Ok(())
}

fn draw_impedance(
    area: &DrawingArea<SVGBackend<'_>, Shift>,
    header: u32,
    p: &ProfilePlot,
    x_hi: f64,
    z_hi: f64,
) -> DrawResult {
    let mut chart = ChartBuilder::on(area)
        .margin_top(header)
        .margin_left(LEFT_MARGIN)
        .margin_right(RIGHT_MARGIN)
        .margin_bottom(4)
        .x_label_area_size(X_LABEL_H)
        .y_label_area_size(Y_LABEL_W)
        .build_cartesian_2d(0.0..x_hi, 0.0..z_hi)?;
    mesh(&mut chart, "distance from the port (m)", "impedance (Ω)", x_hi, z_hi)?;
    for (i, m) in p.marks.iter().enumerate() {
        chart.draw_series(LineSeries::new(
            [(m.x, 0.0), (m.x, z_hi)],
            style::X_MARKER.colour.stroke_width(style::X_MARKER.width),
        ))?;
        chart.draw_series(std::iter::once(
            EmptyElement::at((m.x, z_hi))
                + Text::new(
                    format!("{}", i + 1),
                    (4, 4),
                    style::font(style::TICK_PX).color(&style::INK).pos(Pos::new(HPos::Left, VPos::Top)),
                ),
        ))?;
    }
    let thin = style::EXTRA[4];
    let layers: Vec<(f64, f64)> = p.layers.iter().map(|&(x, z)| (x, z.min(z_hi))).collect();
    let kept = decimate_indices(layers.len(), |k| layers[k].1, super::MAX_TRACE_POINTS);
    chart.draw_series(LineSeries::new(kept.iter().map(|&k| layers[k]), thin.colour.stroke_width(1)))?;
    let mut stairs = Vec::with_capacity(2 * p.runs.len());
    for &(a, b, z) in p.runs {
        stairs.push((a, z.min(z_hi)));
        stairs.push((b, z.min(z_hi)));
    }
    chart.draw_series(LineSeries::new(stairs, style::EMULATED.colour.stroke_width(3)))?;
    Ok(())
}

fn draw_responses(area: &DrawingArea<SVGBackend<'_>, Shift>, header: u32, p: &ProfilePlot, x_hi: f64) -> DrawResult {
    let (mut lo, mut hi) = (0.0f64, 0.0f64);
    for (_, s) in &p.responses {
        for &(_, v) in s.iter() {
            (lo, hi) = (lo.min(v), hi.max(v));
        }
    }
    let (lo, hi) = style::padded(lo, hi.max(lo + 1e-9), 0.08);
    let mut chart = ChartBuilder::on(area)
        .margin_top(header)
        .margin_left(LEFT_MARGIN)
        .margin_right(RIGHT_MARGIN)
        .margin_bottom(4)
        .x_label_area_size(X_LABEL_H)
        .y_label_area_size(Y_LABEL_W)
        .build_cartesian_2d(0.0..x_hi, lo..hi)?;
    mesh(&mut chart, "echo distance (m)", "port voltage (V)", x_hi, hi - lo)?;
    for (i, (_, s)) in p.responses.iter().enumerate() {
        let t = style::sweep_trace(i + 1);
        let kept = decimate_indices(s.len(), |k| s[k].1, super::MAX_TRACE_POINTS);
        chart.draw_series(LineSeries::new(kept.iter().map(|&k| s[k]), t.colour.stroke_width(t.width)))?;
    }
    Ok(())
}

fn draw_readout(area: &DrawingArea<SVGBackend<'_>, Shift>, p: &ProfilePlot, x0: i32) -> DrawResult {
    let ink = style::font(style::TICK_PX).color(&style::INK).pos(Pos::new(HPos::Left, VPos::Top));
    area.draw(&Text::new(
        "largest discontinuities (distance, impedance before → after, reflection coefficient)".to_string(),
        (x0, 6),
        ink.clone(),
    ))?;
    for (i, m) in p.marks.iter().enumerate() {
        area.draw(&Text::new(
            format!("{}  {}", i + 1, m.text),
            (x0 + 8, 28 + i as i32 * READOUT_ROW as i32),
            ink.clone(),
        ))?;
    }
    Ok(())
}

//! Probe waveforms: the emulated trace and the exact reference overlaid, with the error
//! trace (emulated - reference) in its own panel beneath, one panel pair per probe.

use std::path::Path;

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::style::{self, Entry, Scale, Trace, LEFT_MARGIN, X_LABEL_H, Y_LABEL_W};
use super::{check_dt, check_finite, decimate, write_atomic, DrawResult, PlotError, Series};

/// Picture width in pixels.
const WIDTH: u32 = 1100;
/// Height of the overlay panel's plot region (below its header).
const MAIN_PLOT_H: u32 = 330;
/// Height of the error panel's plot region (below its header).
const ERROR_PLOT_H: u32 = 190;

/// The waveforms of one probe.
#[derive(Clone, Debug)]
pub struct WaveformPlot<'a> {
    /// Panel title, e.g. the probe name.
    pub title: &'a str,
    /// Sample interval in seconds.
    pub dt: f64,
    /// Time of the first sample in seconds (0 for a whole run; a window's start otherwise).
    pub t0: f64,
    /// Unit of the values: "V" or "A".
    pub unit: &'a str,
    /// The emulation's trace.
    pub emulated: Series<'a>,
    /// The exact reference trace.
    pub reference: Series<'a>,
    /// Further traces overlaid in the upper panel.
    pub extra: Vec<Series<'a>>,
    /// When the plot shows only a window of a longer comparison: the peak |emulated −
    /// reference| over all of it (the figure a verdict quotes), given in the error legend
    /// beside the peak of the part shown, so the picture never seems to contradict the text.
    pub whole_run_peak: Option<f64>,
}

/// Probe waveforms of the emulation and the exact reference overlaid, with the error trace
/// (emulated - reference) in a second panel beneath; x axis time with an engineering unit
/// chosen from the range (ns/µs/ms), y axis volts/amps. One panel pair per probe, stacked.
pub fn write_waveforms(path: &Path, plots: &[WaveformPlot]) -> Result<(), PlotError> {
    write_waveforms_marked(path, plots, &[])
}

/// [`write_waveforms`] with each scheduled event marked by a vertical line across both
/// panels of every probe, labelled in the upper panel.
pub fn write_waveforms_marked(
    path: &Path,
    plots: &[WaveformPlot],
    marks: &[super::EventMark],
) -> Result<(), PlotError> {
    if plots.is_empty() {
        return Err(PlotError::data(path, "no waveform plots given"));
    }
    let mut layouts = Vec::with_capacity(plots.len());
    for (k, p) in plots.iter().enumerate() {
        layouts.push(check_plot(path, k, p)?);
    }
    let height: u32 = layouts.iter().map(|l| l.height()).sum();
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, height)).into_drawing_area();
        draw_all(&root, plots, &layouts, marks).map_err(|e| PlotError::draw(path, e))?;
        root.present().map_err(|e| PlotError::draw(path, e))?;
    }
    let mut traces = vec![style::EMULATED, style::REFERENCE, style::ERROR];
    traces.extend(style::EXTRA);
    write_atomic(path, &style::apply_dashes(&svg, &traces))
}

/// Header heights of one probe's two panels.
struct Layout {
    main_header: u32,
    error_header: u32,
}

impl Layout {
    fn height(&self) -> u32 {
        self.main_header + MAIN_PLOT_H + self.error_header + ERROR_PLOT_H
    }
}

/// Legend entries of the upper panel, in drawing order.
fn main_entries(p: &WaveformPlot) -> Vec<Entry> {
    let mut e =
        vec![(p.emulated.label.to_string(), style::EMULATED), (p.reference.label.to_string(), style::REFERENCE)];
    for (i, s) in p.extra.iter().enumerate() {
        e.push((s.label.to_string(), extra_trace(i)));
    }
    e
}

fn extra_trace(i: usize) -> Trace {
    style::EXTRA[i % style::EXTRA.len()]
}

/// Checks one probe's data and lays out its headers.
fn check_plot(path: &Path, k: usize, p: &WaveformPlot) -> Result<Layout, PlotError> {
    let what = |s: &Series| format!("waveform plot {k} ('{}'), series '{}'", p.title, s.label);
    check_dt(path, &format!("waveform plot {k} ('{}')", p.title), p.dt)?;
    for s in [&p.emulated, &p.reference].into_iter().chain(p.extra.iter()) {
        check_finite(path, &what(s), s.values)?;
    }
    for s in [&p.emulated, &p.reference] {
        if s.values.is_empty() {
            return Err(PlotError::data(path, format!("{}: no samples", what(s))));
        }
    }
    let x0 = (LEFT_MARGIN + Y_LABEL_W) as i32;
    Ok(Layout {
        main_header: style::header_height(true, &main_entries(p), x0, WIDTH as i32) as u32,
        error_header: style::header_height(false, &error_entries(p, 0.0), x0, WIDTH as i32) as u32,
    })
}

/// The error trace emulated - reference over the samples both traces have.
fn error_trace(p: &WaveformPlot) -> Vec<f64> {
    p.emulated.values.iter().zip(p.reference.values).map(|(e, r)| e - r).collect()
}

/// The error panel's single legend entry, with the peak error in it.
fn error_entries(p: &WaveformPlot, peak: f64) -> Vec<Entry> {
    let figure = |v: f64| {
        let s = Scale::for_magnitude(v);
        format!("{} {}{}", style::fmt_sig3(v / s.factor), s.prefix, p.unit)
    };
    let peaks = match p.whole_run_peak {
        Some(run) => format!("peak |error| {} in the window shown, {} over the whole run", figure(peak), figure(run)),
        None => format!("peak |error| {}", figure(peak)),
    };
    let label = format!("error: {} − {} ({peaks})", p.emulated.label, p.reference.label);
    vec![(label, style::ERROR)]
}

fn max_abs(values: &[f64]) -> f64 {
    values.iter().fold(0.0, |m, v| m.max(v.abs()))
}

fn min_max<'v>(traces: impl Iterator<Item = &'v [f64]>) -> (f64, f64) {
    traces.flatten().fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &v| (lo.min(v), hi.max(v)))
}

fn draw_all(
    root: &DrawingArea<SVGBackend<'_>, Shift>,
    plots: &[WaveformPlot],
    layouts: &[Layout],
    marks: &[super::EventMark],
) -> DrawResult {
    root.fill(&style::PAPER)?;
    let mut rest = root.clone();
    for (p, l) in plots.iter().zip(layouts) {
        let (main, below) = rest.split_vertically(l.main_header + MAIN_PLOT_H);
        let (err, below) = below.split_vertically(l.error_header + ERROR_PLOT_H);
        draw_probe(&main, &err, p, l, marks)?;
        rest = below;
    }
    Ok(())
}

/// One probe: the overlay panel and the error panel, sharing the time axis.
fn draw_probe(
    main: &DrawingArea<SVGBackend<'_>, Shift>,
    err_area: &DrawingArea<SVGBackend<'_>, Shift>,
    p: &WaveformPlot,
    l: &Layout,
    marks: &[super::EventMark],
) -> DrawResult {
    let x0 = (LEFT_MARGIN + Y_LABEL_W) as i32;
    let n = std::iter::once(p.emulated.values.len())
        .chain(std::iter::once(p.reference.values.len()))
        .chain(p.extra.iter().map(|s| s.values.len()))
        .max()
        .unwrap_or(1);
    let t_end = p.t0 + (n.max(2) - 1) as f64 * p.dt;
    let ts = Scale::for_time(t_end);
    let x_range = p.t0 / ts.factor..t_end / ts.factor;
    let time_desc = format!("time ({}s)", ts.prefix);

    // Upper panel: traces in their own engineering unit.
    let all = [p.emulated.values, p.reference.values].into_iter().chain(p.extra.iter().map(|s| s.values));
    let (lo, hi) = min_max(all);
    let vs = Scale::for_magnitude(lo.abs().max(hi.abs()));
    let (y_lo, y_hi) = style::padded(lo / vs.factor, hi / vs.factor, 0.06);
    style::draw_header(main, Some(p.title), &main_entries(p), x0)?;
    let value_desc = format!("{} ({}{})", style::quantity(p.unit), vs.prefix, p.unit);
    let mut chart = panel(main, l.main_header, x_range.clone(), y_lo..y_hi, &time_desc, &value_desc)?;
    let mut series: Vec<(&Series, Trace)> = p.extra.iter().enumerate().map(|(i, s)| (s, extra_trace(i))).collect();
    // The dashed reference goes on top of the solid emulated trace so both stay visible
    // where they coincide.
    series.push((&p.emulated, style::EMULATED));
    series.push((&p.reference, style::REFERENCE));
    for (s, trace) in series {
        let pts = decimate(s.values, p.dt, super::MAX_TRACE_POINTS);
        chart.draw_series(LineSeries::new(
            pts.into_iter().map(|(t, v)| ((p.t0 + t) / ts.factor, v / vs.factor)),
            trace.colour.stroke_width(trace.width),
        ))?;
    }

    let in_range = |m: &&super::EventMark| m.at / ts.factor >= x_range.start && m.at / ts.factor <= x_range.end;
    let shown: Vec<&super::EventMark> = marks.iter().filter(in_range).collect();
    let right_edge = f64::from(chart.plotting_area().get_pixel_range().0.end);
    let spans: Vec<(f64, f64)> = shown
        .iter()
        .map(|m| {
            (f64::from(chart.backend_coord(&(m.at / ts.factor, y_hi)).0), style::text_width(&m.label, style::TICK_PX))
        })
        .collect();
    for (m, (row, left_of_line)) in shown.iter().zip(place_labels(&spans, right_edge)) {
        let x = m.at / ts.factor;
        chart.draw_series(LineSeries::new([(x, y_lo), (x, y_hi)], style::INK.stroke_width(2)))?;
        // Anchored in the chart's own coordinates (a label placed by backend pixels on
        // `main` was shifted down by the panel's offset for every probe after the first).
        let (h, dx) = if left_of_line { (HPos::Right, -LABEL_GAP) } else { (HPos::Left, LABEL_GAP) };
        let dy = 2 + row as i32 * (style::TICK_PX as i32 + 4);
        let font = style::font(style::TICK_PX).color(&style::INK).pos(Pos::new(h, VPos::Top));
        chart.draw_series(std::iter::once(EmptyElement::at((x, y_hi)) + Text::new(m.label.clone(), (dx, dy), font)))?;
    }

    // Lower panel: the error with its own scale, around a zero line.
    let err = error_trace(p);
    let peak = max_abs(&err);
    let es = Scale::for_magnitude(peak);
    let (e_lo, e_hi) = min_max(std::iter::once(err.as_slice()));
    let (e_lo, e_hi) = style::padded(e_lo.min(0.0) / es.factor, e_hi.max(0.0) / es.factor, 0.08);
    style::draw_header(err_area, None, &error_entries(p, peak), x0)?;
    let err_desc = format!("error ({}{})", es.prefix, p.unit);
    let mut chart = panel(err_area, l.error_header, x_range.clone(), e_lo..e_hi, &time_desc, &err_desc)?;
    chart.draw_series(LineSeries::new([(x_range.start, 0.0), (x_range.end, 0.0)], style::ZERO_LINE.stroke_width(1)))?;
    for m in marks.iter().filter(in_range) {
        let x = m.at / ts.factor;
        chart.draw_series(LineSeries::new([(x, e_lo), (x, e_hi)], style::INK.stroke_width(2)))?;
    }
    let pts = decimate(&err, p.dt, super::MAX_TRACE_POINTS);
    chart.draw_series(LineSeries::new(
        pts.into_iter().map(|(t, v)| ((p.t0 + t) / ts.factor, v / es.factor)),
        style::ERROR.colour.stroke_width(style::ERROR.width),
    ))?;
    Ok(())
}

type Chart<'a, 'b> = ChartContext<'a, SVGBackend<'b>, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

/// A time-axis panel below a header of `header` pixels, with its mesh drawn.
fn panel<'a, 'b>(
    area: &'a DrawingArea<SVGBackend<'b>, Shift>,
    header: u32,
    x: std::ops::Range<f64>,
    y: std::ops::Range<f64>,
    x_desc: &str,
    y_desc: &str,
) -> DrawResult<Chart<'a, 'b>> {
    let mut chart = ChartBuilder::on(area)
        .margin_top(header)
        .margin_left(LEFT_MARGIN)
        .margin_right(28)
        .margin_bottom(4)
        .x_label_area_size(X_LABEL_H)
        .y_label_area_size(Y_LABEL_W)
        .build_cartesian_2d(x.clone(), y.clone())?;
    let xd = style::tick_decimals(x.end - x.start);
    let yd = style::tick_decimals(y.end - y.start);
    style::ink_axes_with_grid(&mut chart.configure_mesh())
        .x_labels(12)
        .y_labels(10)
        .x_desc(x_desc)
        .y_desc(y_desc)
        .x_label_formatter(&|v| style::fmt_num(*v, xd))
        .y_label_formatter(&|v| style::fmt_num(*v, yd))
        .draw()?;
    Ok(chart)
}

/// Pixels between an event's line and its label.
const LABEL_GAP: i32 = 4;

/// Where each event label goes, given each line's pixel x and its label's width: (row,
/// whether the label sits left of its line). A label goes right of its line unless it
/// would run past `right_edge`; each takes the first row in which it overlaps no label
/// placed before it, so events close in time never print over each other.
pub(crate) fn place_labels(spans: &[(f64, f64)], right_edge: f64) -> Vec<(usize, bool)> {
    let gap = f64::from(LABEL_GAP);
    let mut rows: Vec<Vec<(f64, f64)>> = vec![];
    spans
        .iter()
        .map(|&(x, w)| {
            let left_of_line = x + gap + w > right_edge;
            let extent = if left_of_line { (x - gap - w, x) } else { (x, x + gap + w) };
            let free = |row: &Vec<(f64, f64)>| row.iter().all(|&(a, b)| extent.1 + gap <= a || b + gap <= extent.0);
            let row = match rows.iter().position(free) {
                Some(r) => r,
                None => {
                    rows.push(vec![]);
                    rows.len() - 1
                }
            };
            if let Some(r) = rows.get_mut(row) {
                r.push(extent);
            }
            (row, left_of_line)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::place_labels;

    #[test]
    fn event_labels_close_in_time_stack_instead_of_overlapping() {
        // Three events 100 px apart with 300 px labels on a 1000 px plot (the verify picture
        // of a plant with events at 10, 20 and 30 µs printed all three over each other).
        let rows = place_labels(&[(100.0, 300.0), (200.0, 300.0), (300.0, 300.0)], 1000.0);
        assert_eq!(rows, vec![(0, false), (1, false), (2, false)]);
        // Far apart: one row.
        assert_eq!(place_labels(&[(100.0, 300.0), (600.0, 300.0)], 1000.0), vec![(0, false), (0, false)]);
        // Near the right edge a label goes left of its line, and still avoids the others.
        let rows = place_labels(&[(300.0, 400.0), (900.0, 400.0)], 1000.0);
        assert_eq!(rows, vec![(0, false), (1, true)]);
        assert_eq!(place_labels(&[(950.0, 100.0)], 1000.0), vec![(0, true)]);
    }
}

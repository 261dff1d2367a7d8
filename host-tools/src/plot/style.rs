//! The tidewire plot look: palette, font sizes, engineering units and the SVG finishing pass.
//!
//! Kept in one place so that the waveform, lattice and sweep pictures share one look and a
//! colour or size is changed once.

use plotters::chart::MeshStyle;
use plotters::coord::ranged1d::Ranged;
use plotters::coord::Shift;
use plotters::prelude::DrawingBackend;
use plotters::prelude::{DrawingArea, PathElement, SVGBackend, Text};
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::{Color, FontDesc, FontStyle, IntoFont, RGBColor};

use super::DrawResult;
pub(crate) use crate::si::Scale;

/// Height of the x axis area under a plot region (tick labels and axis description).
pub(crate) const X_LABEL_H: u32 = 52;
/// Width of the y axis area left of a plot region: with [`LEFT_MARGIN`], its left edge.
pub(crate) const Y_LABEL_W: u32 = 84;
/// Margin left of the y axis area.
pub(crate) const LEFT_MARGIN: u32 = 12;

/// Plotters' SVG backend writes `font-size = size / 1.24` (it reserves line spacing in the
/// size it is given), so a label meant to be N px tall on screen is requested at N * 1.24.
const SVG_FONT_SCALE: f64 = 1.24;

/// Pixel height of tick labels and legend entries.
pub(crate) const TICK_PX: f64 = 14.0;
/// Pixel height of axis descriptions ("time (µs)").
pub(crate) const DESC_PX: f64 = 16.0;
/// Pixel height of panel titles.
pub(crate) const TITLE_PX: f64 = 18.0;

/// Page background.
pub(crate) const PAPER: RGBColor = RGBColor(255, 255, 255);
/// Axis lines, tick labels and texts.
pub(crate) const INK: RGBColor = RGBColor(0x2B, 0x2B, 0x2B);
/// Major grid lines.
pub(crate) const GRID_MAJOR: RGBColor = RGBColor(0xDC, 0xDF, 0xE3);
/// Minor grid lines.
pub(crate) const GRID_MINOR: RGBColor = RGBColor(0xF0, 0xF1, 0xF3);
/// The zero line in error panels.
pub(crate) const ZERO_LINE: RGBColor = RGBColor(0x9C, 0x9C, 0x9C);
/// Vertical marker lines (critical length, segment boundaries).
pub(crate) const MARKER_X: RGBColor = RGBColor(0x4E, 0x4E, 0x58);
/// Horizontal reference lines (2x the step).
pub(crate) const MARKER_Y: RGBColor = RGBColor(0x7A, 0x6A, 0x52);

/// A trace's colour, stroke width and optional SVG dash pattern.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Trace {
    pub colour: RGBColor,
    pub width: u32,
    pub dash: Option<&'static str>,
}

/// The emulated trace: solid, deep cobalt.
pub(crate) const EMULATED: Trace = Trace { colour: RGBColor(0x1D, 0x4F, 0x91), width: 2, dash: None };
/// The exact reference: dashed, warm amber, drawn over the emulated trace.
pub(crate) const REFERENCE: Trace = Trace { colour: RGBColor(0xE0, 0x8A, 0x1E), width: 2, dash: Some("8 5") };
/// The error trace (emulated - reference), in its own panel.
pub(crate) const ERROR: Trace = Trace { colour: RGBColor(0xA1, 0x1D, 0x5C), width: 2, dash: None };
/// Further traces (extra probes, sweep series), each with its own dash so that they stay
/// apart in grey-scale print too.
pub(crate) const EXTRA: [Trace; 5] = [
    Trace { colour: RGBColor(0x2E, 0x8B, 0x6E), width: 2, dash: Some("2 3") },
    Trace { colour: RGBColor(0x7B, 0x4B, 0xA6), width: 2, dash: Some("10 3 2 3") },
    Trace { colour: RGBColor(0x8A, 0x5A, 0x2B), width: 2, dash: Some("4 4") },
    Trace { colour: RGBColor(0x3C, 0x8D, 0xB8), width: 2, dash: Some("12 4") },
    Trace { colour: RGBColor(0x5A, 0x5A, 0x5A), width: 2, dash: Some("1 3") },
];
/// Sweep series: solid first, then the extra styles.
pub(crate) fn sweep_trace(i: usize) -> Trace {
    match i {
        0 => EMULATED,
        1 => REFERENCE,
        n => EXTRA[(n - 2) % EXTRA.len()],
    }
}

/// Style of vertical marker lines.
pub(crate) const X_MARKER: Trace = Trace { colour: MARKER_X, width: 1, dash: Some("6 4") };
/// Style of horizontal reference lines.
pub(crate) const Y_MARKER: Trace = Trace { colour: MARKER_Y, width: 1, dash: Some("3 3") };

/// A sans-serif font whose rendered height is `px` pixels in the SVG.
/// The house look of a chart's axes: tick labels, axis descriptions and the axis lines in ink.
pub(crate) fn ink_axes<'m, 'a, 'b, X: Ranged, Y: Ranged, DB: DrawingBackend>(
    mesh: &'m mut MeshStyle<'a, 'b, X, Y, DB>,
) -> &'m mut MeshStyle<'a, 'b, X, Y, DB> {
    mesh.label_style(font(TICK_PX).color(&INK))
        .axis_desc_style(font(DESC_PX).color(&INK))
        .axis_style(INK.stroke_width(1))
}

/// [`ink_axes`] with the house grid: major and minor lines, at most four minor per major.
pub(crate) fn ink_axes_with_grid<'m, 'a, 'b, X: Ranged, Y: Ranged, DB: DrawingBackend>(
    mesh: &'m mut MeshStyle<'a, 'b, X, Y, DB>,
) -> &'m mut MeshStyle<'a, 'b, X, Y, DB> {
    ink_axes(mesh)
        .max_light_lines(4)
        .bold_line_style(GRID_MAJOR.stroke_width(1))
        .light_line_style(GRID_MINOR.stroke_width(1))
}

pub(crate) fn font(px: f64) -> FontDesc<'static> {
    ("sans-serif", px * SVG_FONT_SCALE).into_font()
}

/// Estimated width in pixels of `text` at `px`, the same crude estimate plotters uses for
/// layout without a font stack (0.7 em per character, em = size / 1.24^2).
pub(crate) fn text_width(text: &str, px: f64) -> f64 {
    0.7 * px / SVG_FONT_SCALE * text.chars().count() as f64
}

/// The quantity name shown on a value axis for a unit symbol.
pub(crate) fn quantity(unit: &str) -> &'static str {
    match unit {
        "V" => "voltage",
        "A" => "current",
        "W" => "power",
        "Ω" | "ohm" => "impedance",
        _ => "value",
    }
}

/// Decimal places for tick labels on an axis spanning `span` (about ten ticks).
pub(crate) fn tick_decimals(span: f64) -> usize {
    if !(span.is_finite() && span > 0.0) {
        return 0;
    }
    let step = span / 10.0;
    (-step.log10().floor()).clamp(0.0, 9.0) as usize
}

/// A number with `decimals` places, trailing zeros and a negative zero removed.
pub(crate) fn fmt_num(v: f64, decimals: usize) -> String {
    let mut s = format!("{v:.decimals$}");
    if s.contains('.') {
        while s.ends_with('0') {
            s.pop();
        }
        if s.ends_with('.') {
            s.pop();
        }
    }
    if s == "-0" {
        s = "0".to_string();
    }
    s
}

/// A number with three significant digits, for log axes whose ticks span decades.
pub(crate) fn fmt_sig3(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return fmt_num(v, 0);
    }
    let decimals = (2.0 - v.abs().log10().floor()).clamp(0.0, 12.0) as usize;
    fmt_num(v, decimals)
}

/// `[lo, hi]` padded by `frac` of the span; a flat range is opened to a visible band.
pub(crate) fn padded(lo: f64, hi: f64, frac: f64) -> (f64, f64) {
    let span = hi - lo;
    if span > 0.0 && span.is_finite() {
        (lo - frac * span, hi + frac * span)
    } else {
        let half = if lo.abs() > 0.0 { lo.abs() * 0.1 } else { 1.0 };
        (lo - half, lo + half)
    }
}

/// The SVG finishing pass: plotters has no dash styles in its SVG output, so each
/// `<polyline>` whose stroke is one of `traces`' colours gets that trace's
/// `stroke-dasharray`. Every trace colour in one picture is distinct, so the match is exact;
/// legend samples carry the trace colour and so get the same dash.
pub(crate) fn apply_dashes(svg: &str, traces: &[Trace]) -> String {
    let mut out = String::with_capacity(svg.len() + 1024);
    let mut rest = svg;
    while let Some(start) = rest.find("<polyline ") {
        out.push_str(&rest[..start]);
        let tag_end = rest[start..].find("/>").map_or(rest.len(), |e| start + e);
        let tag = &rest[start..tag_end];
        out.push_str(tag);
        let dash = traces.iter().find_map(|t| {
            let key = format!("stroke=\"#{:02X}{:02X}{:02X}\"", t.colour.0, t.colour.1, t.colour.2);
            if tag.contains(&key) {
                t.dash
            } else {
                None
            }
        });
        out.push_str(" stroke-linejoin=\"round\"");
        if let Some(d) = dash {
            out.push_str(" stroke-dasharray=\"");
            out.push_str(d);
            out.push('"');
        }
        rest = &rest[tag_end..];
    }
    out.push_str(rest);
    out
}

/// Legend sample line length, gap between entries and row height, in pixels.
const SAMPLE_PX: i32 = 34;
const ENTRY_GAP: i32 = 26;
const ROW_PX: i32 = 22;
/// Top of the title line.
const HEADER_TOP: i32 = 8;

/// One legend entry: its label and the style of its trace.
pub(crate) type Entry = (String, Trace);

/// Where each legend entry goes: `(x, row)` for entries laid left to right from `x0`,
/// wrapping before `x_max`.
fn legend_layout(entries: &[Entry], x0: i32, x_max: i32) -> Vec<(i32, i32)> {
    let mut out = Vec::with_capacity(entries.len());
    let (mut x, mut row) = (x0, 0);
    for (label, _) in entries {
        let w = SAMPLE_PX + 8 + text_width(label, TICK_PX).ceil() as i32;
        if x > x0 && x + w > x_max {
            x = x0;
            row += 1;
        }
        out.push((x, row));
        x += w + ENTRY_GAP;
    }
    out
}

/// Height in pixels of a header with an optional title and a legend in `width` pixels.
pub(crate) fn header_height(has_title: bool, entries: &[Entry], x0: i32, width: i32) -> i32 {
    let rows = legend_layout(entries, x0, width - 10).last().map_or(0, |&(_, r)| r + 1);
    let title = if has_title { TITLE_PX as i32 + 12 } else { 0 };
    HEADER_TOP + title + rows * ROW_PX + 6
}

/// Draws a panel header: the title at the top left, then the legend as rows of
/// "sample line + label" starting at `x0` (the plot's left edge). The legend sits above the
/// plot, so it never hides data.
pub(crate) fn draw_header(
    area: &DrawingArea<SVGBackend<'_>, Shift>,
    title: Option<&str>,
    entries: &[Entry],
    x0: i32,
) -> DrawResult {
    let width = area.dim_in_pixel().0 as i32;
    let mut y = HEADER_TOP;
    if let Some(t) = title {
        area.draw(&Text::new(
            t.to_string(),
            (x0, y),
            font(TITLE_PX).style(FontStyle::Bold).color(&INK).pos(Pos::new(HPos::Left, VPos::Top)),
        ))?;
        y += TITLE_PX as i32 + 12;
    }
    for ((label, trace), (x, row)) in entries.iter().zip(legend_layout(entries, x0, width - 10)) {
        let yc = y + row * ROW_PX + ROW_PX / 2;
        area.draw(&PathElement::new(vec![(x, yc), (x + SAMPLE_PX, yc)], trace.colour.stroke_width(trace.width + 1)))?;
        area.draw(&Text::new(
            label.clone(),
            (x + SAMPLE_PX + 8, yc),
            font(TICK_PX).color(&INK).pos(Pos::new(HPos::Left, VPos::Center)),
        ))?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn engineering_scale_keeps_numbers_between_1_and_1000() {
        assert_eq!(Scale::for_magnitude(0.0042).prefix, "m");
        assert_eq!(Scale::for_magnitude(4.2).prefix, "");
        assert_eq!(Scale::for_magnitude(999.0).prefix, "");
        assert_eq!(Scale::for_magnitude(1200.0).prefix, "k");
        assert_eq!(Scale::for_magnitude(0.0).prefix, "");
        // Rounding noise just under a decade still reads in the larger unit.
        assert_eq!(Scale::for_time(0.999_999_999_9e-6).prefix, "µ");
        assert_eq!(Scale::for_time(999.5e-9).prefix, "n");
        assert_eq!(Scale::for_time(5e-3).prefix, "m");
        // Time never goes past seconds.
        assert_eq!(Scale::for_time(5000.0).prefix, "");
    }

    #[test]
    fn numbers_lose_trailing_zeros_and_negative_zero() {
        assert_eq!(fmt_num(2.50, 2), "2.5");
        assert_eq!(fmt_num(3.0, 1), "3");
        assert_eq!(fmt_num(-0.0001, 2), "0");
        assert_eq!(fmt_num(120.0, 0), "120");
        assert_eq!(fmt_sig3(0.25), "0.25");
        assert_eq!(fmt_sig3(1000.0), "1000");
        assert_eq!(fmt_sig3(1.3667), "1.37");
        assert_eq!(tick_decimals(1.2), 1);
        assert_eq!(tick_decimals(500.0), 0);
    }

    #[test]
    fn dashes_go_only_to_polylines_of_dashed_trace_colours() {
        let svg = "<svg>\n<polyline fill=\"none\" stroke=\"#E08A1E\" points=\"1,2 3,4 \"/>\n\
                   <polyline fill=\"none\" stroke=\"#1D4F91\" points=\"1,2 \"/>\n\
                   <line stroke=\"#E08A1E\"/>\n</svg>\n";
        let out = apply_dashes(svg, &[EMULATED, REFERENCE]);
        assert_eq!(out.matches("stroke-dasharray=\"8 5\"").count(), 1);
        assert!(out.contains("stroke=\"#E08A1E\" points=\"1,2 3,4 \" stroke-linejoin"));
        assert_eq!(out.matches("<polyline").count(), 2);
        assert!(out.ends_with("<line stroke=\"#E08A1E\"/>\n</svg>\n"));
    }
}

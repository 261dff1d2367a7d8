//! The lattice view: voltage along a path of segments as a distance-versus-time colour map,
//! with a diverging colour scale around 0 V, a labelled colour bar, and the segment and node
//! boundaries marked and named along the distance axis.
//!
//! A travelling wave shows as a slanted stripe whose slope is the propagation velocity;
//! reflections show as stripes that turn at the boundaries.

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::style::{self, Scale, LEFT_MARGIN, X_LABEL_H, Y_LABEL_W};
use super::{check_dt, write_atomic, DrawResult, PlotError};

/// Colour levels on each side of zero; the map uses 2 * LEVELS + 1 colours.
pub const LEVELS: i32 = 12;
/// Most cells along distance and along time.
const MAX_CELLS_X: usize = 300;
const MAX_CELLS_T: usize = 200;
/// Most rectangles in the SVG (about 85 bytes each), which keeps a map under ~1.3 MB;
/// a busier map is binned coarser.
const MAX_RECTS: usize = 15_000;

const WIDTH: u32 = 1100;
const HEIGHT: u32 = 780;
/// Width of the colour bar column on the right.
const BAR_W: u32 = 150;
const HEADER_H: u32 = 44;
/// Room above the map for up to three rows of boundary names.
const NAME_ROWS: i32 = 3;
const NAME_ROW_PX: i32 = 20;

/// A distance-versus-time map of the voltage along a path.
#[derive(Clone, Debug)]
pub struct LatticeMap<'a> {
    /// Picture title.
    pub title: &'a str,
    /// Time between rows in seconds.
    pub dt: f64,
    /// Time of the first row in seconds (0 for a whole run; a window's start otherwise).
    pub t0: f64,
    /// Positions of the columns along the path in metres, strictly increasing.
    pub positions: &'a [f64],
    /// `values[t][x]`: voltage at row (time sample) t and column x, in volts.
    pub values: &'a [Vec<f64>],
    /// Segment and node boundaries: position in metres and name.
    pub boundaries: &'a [(f64, &'a str)],
}

/// Signed colour level of `v` on a scale whose extremes are `±vmax`:
/// round(v / vmax * LEVELS), clamped to ±LEVELS. Rounding half away from zero makes the
/// level of -v exactly minus the level of v, so the map is symmetric around 0 V.
pub fn diverging_level(v: f64, vmax: f64) -> i32 {
    if !(vmax.is_finite() && vmax > 0.0 && v.is_finite()) {
        return 0;
    }
    ((v / vmax).clamp(-1.0, 1.0) * LEVELS as f64).round() as i32
}

/// Colour stops from zero outward: negative values run through blues, positive through
/// reds. The two sides are matched in relative luminance at each stop (0.92, 0.38, 0.052),
/// so equal magnitudes look equally strong whatever their sign.
const NEUTRAL: (u8, u8, u8) = (246, 246, 243);
const NEG: [(u8, u8, u8); 2] = [(120, 172, 206), (22, 64, 122)];
const POS: [(u8, u8, u8); 2] = [(228, 146, 96), (124, 29, 24)];

/// The RGB colour of a signed level (clamped to ±LEVELS); level 0 is the neutral colour.
pub fn level_colour(level: i32) -> (u8, u8, u8) {
    let level = level.clamp(-LEVELS, LEVELS);
    let w = level.unsigned_abs() as f64 / LEVELS as f64;
    let stops = if level < 0 { NEG } else { POS };
    let lerp = |a: (u8, u8, u8), b: (u8, u8, u8), f: f64| {
        let c = |x: u8, y: u8| (x as f64 + (y as f64 - x as f64) * f).round() as u8;
        (c(a.0, b.0), c(a.1, b.1), c(a.2, b.2))
    };
    if w <= 0.5 {
        lerp(NEUTRAL, stops[0], w / 0.5)
    } else {
        lerp(stops[0], stops[1], (w - 0.5) / 0.5)
    }
}

/// The map binned into cells: edges along distance and time, and each cell's level.
struct Grid {
    x_edges: Vec<f64>,
    t_edges: Vec<f64>,
    levels: Vec<Vec<i32>>,
}

impl Grid {
    /// Rectangles after merging runs of equal level along each row.
    fn rect_count(&self) -> usize {
        self.levels.iter().map(|row| 1 + row.windows(2).filter(|w| w[0] != w[1]).count()).sum()
    }
}

/// Edges of `n` samples at `coord(i)` grouped into `bins` bins: halfway between neighbouring
/// samples, and the outer edges at the first and last sample.
fn bin_edges(n: usize, bins: usize, coord: impl Fn(usize) -> f64) -> (Vec<f64>, Vec<usize>) {
    let starts: Vec<usize> = (0..=bins).map(|b| b * n / bins).collect();
    let edges = starts
        .iter()
        .map(|&s| match s {
            0 => coord(0),
            s if s >= n => coord(n - 1),
            s => 0.5 * (coord(s - 1) + coord(s)),
        })
        .collect();
    (edges, starts)
}

/// Bins the map to at most `bx` x `bt` cells; each cell takes the sample of greatest
/// magnitude in it, so fronts and peaks survive the binning.
fn bin(map: &LatticeMap, vmax: f64, bx: usize, bt: usize) -> Grid {
    let nx = map.positions.len();
    let nt = map.values.len();
    let (x_edges, xs) = bin_edges(nx, bx.min(nx), |i| map.positions[i]);
    let (t_edges, ts) = bin_edges(nt, bt.min(nt), |i| map.t0 + i as f64 * map.dt);
    let levels = ts
        .windows(2)
        .map(|tw| {
            xs.windows(2)
                .map(|xw| {
                    let mut peak = 0.0f64;
                    for row in &map.values[tw[0]..tw[1]] {
                        for &v in &row[xw[0]..xw[1]] {
                            if v.abs() > peak.abs() {
                                peak = v;
                            }
                        }
                    }
                    diverging_level(peak, vmax)
                })
                .collect()
        })
        .collect();
    Grid { x_edges, t_edges, levels }
}

fn check(path: &Path, map: &LatticeMap) -> Result<(), PlotError> {
    check_dt(path, &format!("lattice '{}'", map.title), map.dt)?;
    let nx = map.positions.len();
    if nx < 2 || map.values.len() < 2 {
        return Err(PlotError::data(
            path,
            format!(
                "lattice '{}': needs at least 2 positions and 2 time rows, got {} and {}",
                map.title,
                nx,
                map.values.len()
            ),
        ));
    }
    for (i, w) in map.positions.windows(2).enumerate() {
        if !(w[0].is_finite() && w[1].is_finite() && w[1] > w[0]) {
            return Err(PlotError::data(
                path,
                format!(
                    "lattice '{}': positions must be finite and strictly increasing, but position {} is {} m and position {} is {} m",
                    map.title, i, w[0], i + 1, w[1]
                ),
            ));
        }
    }
    for (t, row) in map.values.iter().enumerate() {
        if row.len() != nx {
            return Err(PlotError::data(
                path,
                format!("lattice '{}': row {t} has {} values, expected {nx} (one per position)", map.title, row.len()),
            ));
        }
        if let Some(x) = row.iter().position(|v| !v.is_finite()) {
            return Err(PlotError::data(
                path,
                format!("lattice '{}': value at row {t}, column {x} is {} (must be finite)", map.title, row[x]),
            ));
        }
    }
    if let Some((p, name)) = map.boundaries.iter().find(|(p, _)| !p.is_finite()) {
        return Err(PlotError::data(
            path,
            format!("lattice '{}': boundary '{name}' is at {p} m (must be finite)", map.title),
        ));
    }
    Ok(())
}

/// Distance-versus-time map (lattice view) of the voltage along a path of segments: rows =
/// time samples, columns = positions (metres); colour map diverging around 0 with a
/// labelled colour bar, segment/node boundaries marked and named on the distance axis.
pub fn write_lattice(path: &Path, map: &LatticeMap) -> Result<(), PlotError> {
    write_lattice_marked(path, map, &[])
}

/// [`write_lattice`] with each scheduled event marked by a line across the map at its time,
/// labelled at the map's left edge.
pub fn write_lattice_marked(path: &Path, map: &LatticeMap, marks: &[super::EventMark]) -> Result<(), PlotError> {
    check(path, map)?;
    let vmax = map.values.iter().flatten().fold(0.0f64, |m, v| m.max(v.abs()));
    let (mut bx, mut bt) = (MAX_CELLS_X, MAX_CELLS_T);
    let mut grid = bin(map, vmax, bx, bt);
    while grid.rect_count() > MAX_RECTS && (bx > 16 || bt > 16) {
        bx = (bx * 3 / 4).max(16);
        bt = (bt * 3 / 4).max(16);
        grid = bin(map, vmax, bx, bt);
    }
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, HEIGHT)).into_drawing_area();
        draw(&root, map, &grid, vmax, marks).map_err(|e| PlotError::draw(path, e))?;
        root.present().map_err(|e| PlotError::draw(path, e))?;
    }
    write_atomic(path, &style::apply_dashes(&svg, &[style::X_MARKER]))
}

fn rgb(level: i32) -> RGBColor {
    let (r, g, b) = level_colour(level);
    RGBColor(r, g, b)
}

fn draw(
    root: &DrawingArea<SVGBackend<'_>, Shift>,
    map: &LatticeMap,
    grid: &Grid,
    vmax: f64,
    marks: &[super::EventMark],
) -> DrawResult {
    root.fill(&style::PAPER)?;
    let x0 = (LEFT_MARGIN + Y_LABEL_W) as i32;
    style::draw_header(root, Some(map.title), &[], x0)?;
    let (map_area, bar_area) = root.split_horizontally(WIDTH - BAR_W);
    let name_rows = (map.boundaries.len() as i32).min(NAME_ROWS);
    let top = HEADER_H + (name_rows * NAME_ROW_PX) as u32 + 10;

    // Distance in m, or km for long plants.
    let last = map.positions[map.positions.len() - 1];
    let ds = if map.positions[0].abs().max(last.abs()) >= 1e3 {
        Scale { factor: 1e3, prefix: "k" }
    } else {
        Scale { factor: 1.0, prefix: "" }
    };
    let t_end = map.t0 + (map.values.len() - 1) as f64 * map.dt;
    let ts = Scale::for_time(t_end);
    let x_range = map.positions[0] / ds.factor..last / ds.factor;
    let t_range = map.t0 / ts.factor..t_end / ts.factor;
    let mut chart = ChartBuilder::on(&map_area)
        .margin_top(top)
        .margin_left(LEFT_MARGIN)
        .margin_right(16)
        .margin_bottom(4)
        .x_label_area_size(X_LABEL_H)
        .y_label_area_size(Y_LABEL_W)
        .build_cartesian_2d(x_range.clone(), t_range.clone())?;
    let xd = style::tick_decimals(x_range.end - x_range.start);
    let td = style::tick_decimals(t_range.end - t_range.start);
    style::ink_axes(&mut chart.configure_mesh())
        .disable_mesh()
        .x_labels(12)
        .y_labels(10)
        .x_desc(format!("distance ({}m)", ds.prefix))
        .y_desc(format!("time ({}s)", ts.prefix))
        .x_label_formatter(&|v| style::fmt_num(*v, xd))
        .y_label_formatter(&|v| style::fmt_num(*v, td))
        .draw()?;

    // Cells, with runs of equal level along a row merged into one rectangle.
    let cells = grid.levels.iter().enumerate().flat_map(|(ti, row)| {
        let (t_lo, t_hi) = (grid.t_edges[ti] / ts.factor, grid.t_edges[ti + 1] / ts.factor);
        let mut runs = Vec::new();
        let mut start = 0;
        for xi in 1..=row.len() {
            if xi == row.len() || row[xi] != row[start] {
                let (x_lo, x_hi) = (grid.x_edges[start] / ds.factor, grid.x_edges[xi] / ds.factor);
                runs.push(Rectangle::new([(x_lo, t_lo), (x_hi, t_hi)], rgb(row[start]).filled()));
                start = xi;
            }
        }
        runs
    });
    chart.draw_series(cells)?;

    // Boundaries: a dashed line across the map and the name above it, staggered in rows so
    // that close neighbours do not overlap.
    let mut row_end = [i32::MIN; NAME_ROWS as usize];
    let mut bounds: Vec<&(f64, &str)> = map.boundaries.iter().collect();
    bounds.sort_by(|a, b| a.0.total_cmp(&b.0));
    for &&(p, name) in &bounds {
        let x = p / ds.factor;
        if x < x_range.start || x > x_range.end {
            continue;
        }
        chart.draw_series(LineSeries::new(
            [(x, t_range.start), (x, t_range.end)],
            style::X_MARKER.colour.stroke_width(style::X_MARKER.width),
        ))?;
        let (px, py) = chart.backend_coord(&(x, t_range.end));
        let w = style::text_width(name, style::TICK_PX).ceil() as i32;
        let left = (px - w / 2).clamp(2, WIDTH as i32 - BAR_W as i32 - w - 2);
        let row = row_end[..name_rows as usize]
            .iter()
            .position(|&end| left > end + 6)
            .unwrap_or_else(|| (0..name_rows as usize).min_by_key(|&r| row_end[r]).unwrap_or(0));
        row_end[row] = left + w;
        let y = py - 4 - row as i32 * NAME_ROW_PX;
        root.draw(&Text::new(
            name.to_string(),
            (left, y),
            style::font(style::TICK_PX).color(&style::INK).pos(Pos::new(HPos::Left, VPos::Bottom)),
        ))?;
        // A short tick from the name down to the map edge ties the name to its line.
        root.draw(&PathElement::new(vec![(px, y + 1), (px, py)], style::INK.stroke_width(1)))?;
    }

    for m in marks.iter().filter(|m| m.at / ts.factor >= t_range.start && m.at / ts.factor <= t_range.end) {
        let t = m.at / ts.factor;
        chart.draw_series(LineSeries::new([(x_range.start, t), (x_range.end, t)], style::INK.stroke_width(2)))?;
        let (px, py) = chart.backend_coord(&(x_range.start, t));
        // A light box behind the label: on the map's dark levels black text was unreadable.
        root.draw(&super::sweep::label_backing(&m.label, (px + 4, py - 2), HPos::Left, VPos::Bottom))?;
        root.draw(&Text::new(
            m.label.clone(),
            (px + 4, py - 2),
            style::font(style::TICK_PX).color(&style::INK).pos(Pos::new(HPos::Left, VPos::Bottom)),
        ))?;
    }

    draw_colour_bar(&bar_area, top, vmax)
}

/// The colour bar: one band per level, labelled in volts (engineering unit) on the right.
fn draw_colour_bar(area: &DrawingArea<SVGBackend<'_>, Shift>, top: u32, vmax: f64) -> DrawResult {
    let vs = Scale::for_magnitude(vmax);
    let top_v = if vmax > 0.0 { vmax / vs.factor } else { 1.0 };
    let mut bar = ChartBuilder::on(area)
        .margin_top(top)
        .margin_left(8)
        .margin_right(4)
        .margin_bottom(4 + X_LABEL_H)
        .set_label_area_size(LabelAreaPosition::Right, 80)
        .build_cartesian_2d(0.0..1.0, -top_v..top_v)?;
    let d = style::tick_decimals(2.0 * top_v);
    style::ink_axes(&mut bar.configure_mesh())
        .disable_mesh()
        .disable_x_axis()
        .y_labels(9)
        .y_desc(format!("voltage ({}V)", vs.prefix))
        .y_label_formatter(&|v| style::fmt_num(*v, d))
        .draw()?;
    let step = top_v / LEVELS as f64;
    bar.draw_series((-LEVELS..=LEVELS).map(|k| {
        let lo = ((k as f64 - 0.5) * step).max(-top_v);
        let hi = ((k as f64 + 0.5) * step).min(top_v);
        Rectangle::new([(0.0, lo), (1.0, hi)], rgb(k).filled())
    }))?;
    bar.draw_series(std::iter::once(Rectangle::new([(0.0, -top_v), (1.0, top_v)], style::INK.stroke_width(1))))?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn binning_caps_cells_and_keeps_the_peak() {
        let positions: Vec<f64> = (0..1000).map(|i| i as f64 * 0.5).collect();
        let mut values = vec![vec![0.0; 1000]; 450];
        values[333][777] = -4.0; // a single-sample dip
        values[10][3] = 1.0;
        let map = LatticeMap { title: "t", dt: 1e-9, t0: 0.0, positions: &positions, values: &values, boundaries: &[] };
        let grid = bin(&map, 4.0, MAX_CELLS_X, MAX_CELLS_T);
        assert_eq!(grid.levels.len(), MAX_CELLS_T);
        assert!(grid.levels.iter().all(|r| r.len() == MAX_CELLS_X));
        let flat: Vec<i32> = grid.levels.iter().flatten().copied().collect();
        assert!(flat.contains(&-LEVELS), "the dip was binned away");
        assert!(flat.contains(&diverging_level(1.0, 4.0)));
        // Edges span the path and the record exactly.
        assert_eq!(grid.x_edges.first(), Some(&0.0));
        assert_eq!(grid.x_edges.last(), Some(&499.5));
        assert_eq!(grid.t_edges.last(), Some(&(449.0 * 1e-9)));
        // Two rows hold a non-zero cell, three runs each; every other row is one run.
        assert_eq!(grid.rect_count(), MAX_CELLS_T - 2 + 2 * 3);
    }
}

//! The view against distance: the data of the profile picture and its readout of the
//! largest discontinuities, for `extract` and for any plant probed at its drive.

use super::load::EndLoad;
use super::merge::Run;
use super::peel::Profile;
use super::plant_out::eng;
use crate::plot::{write_profile, Mark, PlotError, ProfilePlot};
use std::path::Path;

/// A step of impedance along the line: where, from what to what, and its reflection
/// coefficient k = (Z_after − Z_before)/(Z_after + Z_before) for a wave going away from
/// the port.
#[derive(Debug, Clone, PartialEq)]
pub struct Discontinuity {
    pub x: f64,
    pub z_before: f64,
    /// The impedance after, or what the end is ("open", "short", "100 pF").
    pub after: String,
    pub k: f64,
}

fn k_of(a: f64, b: f64) -> f64 {
    (b - a) / (b + a)
}

/// Every discontinuity from the source through the runs to the load, largest |k| first.
pub fn discontinuities(rs: f64, lines: &[Run], load: Option<EndLoad>) -> Vec<Discontinuity> {
    let mut d = Vec::new();
    let mut before = rs;
    for r in lines {
        d.push(Discontinuity { x: r.start, z_before: before, after: eng(r.z, "Ω"), k: k_of(before, r.z) });
        before = r.z;
    }
    let end = lines.last().map_or(0.0, |r| r.end);
    if let Some(load) = load {
        let (after, k) = match load {
            EndLoad::Open => ("open".to_string(), 1.0),
            EndLoad::Short => ("short".to_string(), -1.0),
            EndLoad::Resistor(r) => (eng(r, "Ω"), k_of(before, r)),
            // A capacitor reflects −1 at first, +1 once charged; a parallel RC ends at R.
            EndLoad::Capacitor(c) => (format!("{} (−1 at first, then +1)", eng(c, "F")), -1.0),
            EndLoad::ParallelRc { r, c } => (format!("{} ∥ {}", eng(r, "Ω"), eng(c, "F")), -1.0),
        };
        d.push(Discontinuity { x: end, z_before: before, after, k });
    }
    d.sort_by(|a, b| b.k.abs().total_cmp(&a.k.abs()));
    d
}

/// What goes into one profile picture.
pub struct View<'a> {
    pub title: &'a str,
    pub profile: &'a Profile,
    pub rs: f64,
    pub lines: &'a [Run],
    pub load: Option<EndLoad>,
    pub runs_label: &'a str,
    /// Port voltages (name, values per sample), drawn against echo distance.
    pub responses: Vec<(&'a str, &'a [f64])>,
    /// Sample interval and the time the EMF's edge starts, s; propagation speed, m/s.
    pub dt: f64,
    pub start: f64,
    pub velocity: f64,
    /// How many discontinuities the readout lists.
    pub readout: usize,
}

/// Write the picture of `v` to `path`.
pub fn write_view(path: &Path, v: &View) -> Result<(), PlotError> {
    let p = v.profile;
    let layers: Vec<(f64, f64)> =
        p.z.iter()
            .enumerate()
            .filter(|(j, _)| *j >= p.origin)
            .map(|(j, z)| ((j - p.origin) as f64 * p.layer + 0.5 * p.layer, *z))
            .collect();
    let runs: Vec<(f64, f64, f64)> = v.lines.iter().map(|r| (r.start, r.end, r.z)).collect();
    let marks: Vec<Mark> = discontinuities(v.rs, v.lines, v.load)
        .into_iter()
        .take(v.readout)
        .map(|d| Mark {
            x: d.x,
            text: format!("{}: {} → {}, ρ = {:+.3}", eng(d.x, "m"), eng(d.z_before, "Ω"), d.after, d.k),
        })
        .collect();
    let series: Vec<Vec<(f64, f64)>> = v
        .responses
        .iter()
        .map(|(_, s)| {
            s.iter()
                .enumerate()
                .map(|(k, &y)| (0.5 * v.velocity * (k as f64 * v.dt - v.start), y))
                .filter(|(x, _)| *x >= 0.0)
                .collect()
        })
        .collect();
    let plot = ProfilePlot {
        title: v.title,
        layers: &layers,
        runs: &runs,
        runs_label: v.runs_label,
        marks: &marks,
        responses: v.responses.iter().zip(&series).map(|((n, _), s)| (*n, s.as_slice())).collect(),
    };
    write_profile(path, &plot)
}

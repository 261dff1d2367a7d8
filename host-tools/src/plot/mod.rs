//! SVG pictures of emulation results: probe waveforms against the exact reference, the
//! distance-versus-time (lattice) map of a path, and x-y sweeps.
//!
//! The pictures take plain `f64` data and use only the crate's file writer and SI
//! formatter. They are drawn with `plotters`' SVG backend without any font stack: the SVG
//! holds `<text>` elements and the viewer renders the glyphs, while plotters lays labels out
//! with its built-in width estimate. Every file is written atomically (`crate::files`), and
//! long traces are thinned with a min/max-per-bucket decimation that keeps edges and peaks,
//! so files stay small.

mod lattice;
mod profile;
mod style;
mod sweep;
mod waveforms;

pub use lattice::{diverging_level, level_colour, write_lattice, write_lattice_marked, LatticeMap, LEVELS};
pub use profile::{write_profile, Mark, ProfilePlot};
pub use sweep::{write_sweep, SweepPlot};
pub use waveforms::{write_waveforms, write_waveforms_marked, WaveformPlot};

/// A scheduled event marked on a picture: a line across the time axis at `at` seconds,
/// labelled.
#[derive(Debug, Clone, PartialEq)]
pub struct EventMark {
    pub at: f64,
    pub label: String,
}

use std::path::{Path, PathBuf};

/// Most points drawn per trace; beyond this a trace is decimated.
pub const MAX_TRACE_POINTS: usize = 4000;

/// One named trace sampled every `dt` seconds from t = 0.
#[derive(Clone, Copy, Debug)]
pub struct Series<'a> {
    /// Legend label.
    pub label: &'a str,
    /// Samples; sample `i` is at time `i * dt`.
    pub values: &'a [f64],
}

/// Why a picture could not be written; every variant names the file.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum PlotError {
    /// Creating, writing or renaming the file failed.
    #[error("cannot write plot {}: {source}", path.display())]
    Io {
        /// The picture's path.
        path: PathBuf,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
    /// The drawing library refused to draw.
    #[error("cannot draw plot {}: {message}", path.display())]
    Draw {
        /// The picture's path.
        path: PathBuf,
        /// What the drawing library said.
        message: String,
    },
    /// The data cannot be drawn (empty, non-finite, mismatched lengths...).
    #[error("bad data for plot {}: {message}", path.display())]
    Data {
        /// The picture's path.
        path: PathBuf,
        /// What is wrong, naming the series or field.
        message: String,
    },
}

impl PlotError {
    fn data(path: &Path, message: impl Into<String>) -> PlotError {
        PlotError::Data { path: path.to_path_buf(), message: message.into() }
    }

    fn draw(path: &Path, err: impl std::fmt::Display) -> PlotError {
        PlotError::Draw { path: path.to_path_buf(), message: err.to_string() }
    }
}

/// The result type of the internal drawing functions; plotters' errors box into it.
type DrawResult<T = ()> = Result<T, Box<dyn std::error::Error>>;

/// Indices of the samples to draw when `n` samples are thinned to at most `max_points`.
///
/// The first and last samples are always kept; the rest is cut into buckets and each bucket
/// keeps its smallest and its largest sample, in time order. So every peak and every edge
/// of the full trace is still drawn, and the global minimum and maximum are exact.
pub fn decimate_indices(n: usize, value_at: impl Fn(usize) -> f64, max_points: usize) -> Vec<usize> {
    let max_points = max_points.max(4);
    if n <= max_points {
        return (0..n).collect();
    }
    let buckets = (max_points - 2) / 2;
    let inner = n - 2;
    let mut kept = Vec::with_capacity(max_points);
    kept.push(0);
    for b in 0..buckets {
        let lo = 1 + b * inner / buckets;
        let hi = 1 + (b + 1) * inner / buckets;
        if lo >= hi {
            continue;
        }
        let (mut imin, mut imax) = (lo, lo);
        for i in lo..hi {
            let v = value_at(i);
            if v < value_at(imin) {
                imin = i;
            }
            if v > value_at(imax) {
                imax = i;
            }
        }
        let (first, second) = if imin <= imax { (imin, imax) } else { (imax, imin) };
        kept.push(first);
        if second != first {
            kept.push(second);
        }
    }
    kept.push(n - 1);
    kept
}

/// `(time, value)` points of a trace sampled at `dt`, thinned to at most `max_points` with
/// [`decimate_indices`] (global minimum and maximum kept).
pub fn decimate(values: &[f64], dt: f64, max_points: usize) -> Vec<(f64, f64)> {
    decimate_indices(values.len(), |i| values[i], max_points).into_iter().map(|i| (i as f64 * dt, values[i])).collect()
}

/// An error naming the first non-finite sample of `values`, if any.
fn check_finite(path: &Path, what: &str, values: &[f64]) -> Result<(), PlotError> {
    match values.iter().position(|v| !v.is_finite()) {
        Some(i) => Err(PlotError::data(path, format!("{what}: sample {i} is {} (must be finite)", values[i]))),
        None => Ok(()),
    }
}

/// An error unless `dt` is a positive finite sample interval.
fn check_dt(path: &Path, what: &str, dt: f64) -> Result<(), PlotError> {
    if dt.is_finite() && dt > 0.0 {
        Ok(())
    } else {
        Err(PlotError::data(path, format!("{what}: dt = {dt} s (must be positive and finite)")))
    }
}

/// Writes `contents` to `path` with the crate's atomic writer ([`crate::files`]), so
/// readers see the old file or the new one, never a half-written one.
fn write_atomic(path: &Path, contents: &str) -> Result<(), PlotError> {
    if path.file_name().is_none() {
        return Err(PlotError::data(path, "the path names no file"));
    }
    crate::files::write_atomic(path, contents.as_bytes())
        .map_err(|source| PlotError::Io { path: path.to_path_buf(), source })
}

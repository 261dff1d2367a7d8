//! `tidewire sweep`: the command around `crate::analysis::sweep` (arguments, table, SVG).
use super::{io_failure, Failure};
use crate::analysis::sweep::{rise_of, sweep, SweepError};
use crate::compile::ProfileKind;
use crate::plant::load_plant;
use crate::plot::{write_sweep, SweepPlot};
use std::path::Path;

#[allow(clippy::too_many_arguments)]
pub(super) fn run(
    path: &Path,
    segment: &str,
    probe: &str,
    from: f64,
    to: f64,
    steps: usize,
    svg: Option<&Path>,
    profile: ProfileKind,
) -> Result<i32, Failure> {
    let plant = load_plant(path)?;
    let file = path.display().to_string();
    let bad = |m: String| Failure { code: 2, message: format!("error: {m}") };
    let si = plant.segments.iter().position(|s| s.name == segment).ok_or_else(|| {
        bad(format!(
            "{file}: no segment named \"{segment}\" (segments: {})",
            plant.segments.iter().map(|s| s.name.as_str()).collect::<Vec<_>>().join(", ")
        ))
    })?;
    let pi = plant.probes.iter().position(|p| p.name == probe).ok_or_else(|| {
        bad(format!(
            "{file}: no probe named \"{probe}\" (probes: {})",
            plant.probes.iter().map(|p| p.name.as_str()).collect::<Vec<_>>().join(", ")
        ))
    })?;
    if !(from > 0.0 && to > from && steps >= 2) {
        return Err(bad("--from must be > 0, --to above it, and --steps at least 2".into()));
    }
    let lengths: Vec<f64> = (0..steps).map(|k| from * (to / from).powf(k as f64 / (steps - 1) as f64)).collect();
    let pts = sweep(&plant, &file, si, pi, &lengths, profile).map_err(|e| match e {
        SweepError::Plant(e) => Failure::from(e),
        SweepError::Run(e) => Failure { code: 2, message: format!("error: {e}") },
    })?;
    let v = plant.cables[plant.segments[si].cable].velocity;
    let lc = rise_of(&plant).map(|r| v * r / 2.0);
    println!("== sweep: {} ==  peak of \"{probe}\" against the length of \"{segment}\"", plant.name);
    if let Some(lc) = lc {
        println!("   critical length l_c = v·t_rise/2 = {lc:.2} m (v = {:.3e} m/s)", v);
    }
    println!("   {:>10}  {:>12}", "length", "peak / step");
    for p in &pts {
        println!("   {:>8.2} m  {:>12.3}", p.length, p.peak_ratio);
    }
    if let Some(out) = svg {
        let xy: Vec<(f64, f64)> = pts.iter().map(|p| (p.length, p.peak_ratio)).collect();
        let title = format!("{}: peak at \"{probe}\" against cable length", plant.name);
        let mut x_markers = vec![];
        if let Some(lc) = lc {
            x_markers.push((lc, "critical length v·t_rise/2"));
        }
        let plot = SweepPlot {
            title: &title,
            x_label: "cable length (m)",
            y_label: "peak / drive step",
            series: vec![("tidewire core", &xy)],
            x_markers,
            y_markers: vec![(2.0, "2 × step"), (1.0, "1 × step")],
            log_x: true,
        };
        write_sweep(out, &plot).map_err(|e| io_failure(out, e))?;
        println!("wrote {}", out.display());
    }
    Ok(0)
}

//! The view against distance for any plant with a voltage probe at its drive: the exact
//! reference's response to a unit step through the drive's resistance, peeled and merged
//! as `extract` does with a capture (`verify` and `simulate` draw it with `--profile-svg`).

use super::view::{write_view, View};
use super::{lossless_cable, merge, profile_of, Capture, Options};
use crate::plant::{Drive, Plant, ProbeKind, Waveform};
use crate::reference::{exact_response, ExactOptions};
use std::path::Path;

/// Draw the profile view of `plant` to `path`; `file` names the plant in messages.
pub fn write_plant_profile(plant: &Plant, file: &str, path: &Path) -> Result<(), String> {
    let (node, rs) = match plant.drive {
        Drive::Source { node, rs, .. } => (node, rs),
        Drive::Rig { node, dut_resistance, .. } => (node, dut_resistance),
    };
    let Some(probe) = plant.probes.iter().position(|p| p.kind == ProbeKind::Voltage(node)) else {
        return Err(format!(
            "{file}: --profile-svg needs a voltage probe at the drive node '{}'; add [[probe]] node = \"{}\"",
            plant.nodes[node].name, plant.nodes[node].name
        ));
    };
    // The distance axis runs at the speed of the first cable at the drive.
    let Some(seg) = plant.segments.iter().find(|s| s.from == node || s.to == node) else {
        return Err(format!("{file}: the drive node has no segment"));
    };
    let cable = &plant.cables[seg.cable];
    let dt = 1.0 / plant.sample_rate;
    let samples = ((plant.duration / dt).ceil() as usize).clamp(64, super::capture::MAX_SAMPLES);
    // Enough quiet samples before the step for the edge finder (it looks at the first 8).
    let lead = 24;
    let mut step = plant.clone();
    step.events.clear();
    step.probes = vec![plant.probes[probe].clone()];
    step.drive = Drive::Source { node, emf: Waveform::Step { amplitude: 1.0, delay: lead as f64 * dt, rise: 0.0 }, rs };
    let run = exact_response(&step, &ExactOptions { samples, wrap_level: ExactOptions::DEFAULT_WRAP_LEVEL })
        .map_err(|e| format!("{file}: the exact reference failed: {e}"))?;
    let volts = run.traces.into_iter().next().map(|t| t.values).unwrap_or_default();
    let cap = Capture { file: file.into(), t0: 0.0, dt, places: vec![(0, 0); volts.len()], volts };
    let opts = Options {
        rs,
        emf: 1.0,
        cable: lossless_cable(cable.velocity_factor()),
        preset: None,
        rise: Some(0.0),
        tolerance: 0.03,
        smooth: Some(0.0),
        refine: 0,
    };
    let (edge, _, profile) = profile_of(&cap, &opts).map_err(|e| e.to_string())?;
    let runs = merge::merge(&profile.z, profile.layer, profile.origin, opts.tolerance, 3);
    let title =
        format!("{}: seen from '{}' (distance at {}'s speed)", plant.name, plant.probes[probe].name, cable.name);
    let view = View {
        title: &title,
        profile: &profile,
        rs,
        lines: &runs,
        load: None,
        runs_label: "uniform runs (merged at 3 %)",
        responses: vec![("exact reference, 1 V step", &edge.volts)],
        dt,
        start: edge.start,
        velocity: cable.velocity,
        readout: 5,
    };
    write_view(path, &view).map_err(|e| e.to_string())
}

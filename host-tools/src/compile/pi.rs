//! Short segments between two nodes as pi sections: C'l/2 at each end node, and the series
//! branch R'l + L'l between them (the core's `Junction::Branch`, port resistance 2L'l/T).
//!
//! A segment below [`super::MIN_FRACTIONAL_DELAY`] samples is otherwise a delay line of
//! whole samples (its delay rounded, from 0.5 samples up) or, below
//! [`super::LUMP_BELOW_SAMPLES`], lumped with its two nodes joined and its inductance
//! neglected. The pi section keeps the nodes apart and models L, C and R; it is chosen when
//! its stated error ([`error`]) is the smaller of the two.
//!
//! Where it applies (else the segment keeps its other model): its two ends are different
//! nodes, each with at least one other segment of at least `MIN_FRACTIONAL_DELAY` samples
//! (the node keeps a delay line, so the core has a line end to read it at, and joins no
//! other lumped piece), neither end in another pi section (a core node takes part in at
//! most one series branch), neither end shorted, switched by an event, nor the rig port; and
//! the segment has no choke, break or current probe (the core reads currents at line ends,
//! and a lumped piece has none).
use super::lumped::{load_admittance, LineAtEdge, LumpPlan};
use super::model_error::timing_error;
use super::MIN_FRACTIONAL_DELAY;
use crate::plant::{Drive, EventAction, Load, Plant, ProbeKind};
use num_complex::Complex64;

/// Whether segment `si` may be a pi section, with the plant nodes already in one (`used`).
pub fn fits(plant: &Plant, si: usize, dt: f64, used: &[usize]) -> bool {
    let seg = &plant.segments[si];
    if seg.from == seg.to || seg.inline.is_some() {
        return false;
    }
    if plant.events.iter().any(|e| matches!(e.action, EventAction::Break { segment, .. } if segment == si)) {
        return false;
    }
    if plant.probes.iter().any(|p| matches!(p.kind, ProbeKind::Current(s, _) if s == si)) {
        return false;
    }
    let samples = |k: usize| {
        let s = &plant.segments[k];
        s.length / plant.cables[s.cable].velocity / dt
    };
    [seg.from, seg.to].into_iter().all(|node| {
        let others: Vec<usize> = (0..plant.segments.len())
            .filter(|&k| k != si && (plant.segments[k].from == node || plant.segments[k].to == node))
            .collect();
        let rig = matches!(plant.drive, Drive::Rig { node: d, .. } if d == node);
        let switched = plant.events.iter().any(|e| matches!(e.action, EventAction::SetLoad(n, _) if n == node));
        !others.is_empty()
            && others.iter().all(|&k| samples(k) >= MIN_FRACTIONAL_DELAY)
            && !used.contains(&node)
            && plant.nodes[node].load != Load::Short
            && !rig
            && !switched
    })
}

/// The edge the choice is judged at: the drive's (`model_error::judged_rise`), or two
/// samples, the sharpest edge a sampled plant shows, when the plant has scheduled events (a
/// load switched or a cable broken changes instantly, not at the drive's rise). Measured with
/// `tidewire verify` on the patch-cord plant of `tests/plants/pi-section.toml` with a 1.1 m
/// cord: chosen at the drive's 40 ns edge the pi section kept the run within 2.1 % of the
/// step without the event, and after the far load switched the run was off by 8.9 % (far
/// end) and 15.9 % (panel). That sharp switch is hard for every model here (with whole-sample
/// runs, the cord as a line: 7.4 % at the panel after it), so this is the cautious choice.
pub fn judge(plant: &Plant, dt: f64) -> f64 {
    if plant.events.is_empty() {
        super::model_error::judged_rise(plant, dt)
    } else {
        2.0 * dt
    }
}

/// Admittance to return at `node` seen from segment `si`: the other segments as their Z0,
/// the node's load and the drive's resistance (at angular frequency `w`).
fn side_admittance(plant: &Plant, node: usize, si: usize, w: f64) -> Complex64 {
    let mut y = Complex64::new(0.0, 0.0);
    for (k, s) in plant.segments.iter().enumerate() {
        if k != si && (s.from == node || s.to == node) {
            y += 1.0 / plant.cables[s.cable].z0;
        }
    }
    y += load_admittance(&plant.nodes[node].load, w).unwrap_or(Complex64::new(1e12, 0.0));
    match plant.drive {
        Drive::Source { node: d, rs, .. } if d == node => y += 1.0 / rs,
        Drive::Rig { node: d, dut_resistance, .. } if d == node => y += 1.0 / dut_resistance,
        _ => {}
    }
    y
}

/// The relative error of segment `si` as a pi section at the drive's bandwidth
/// f = 0.35/rise [practice], against the exact line (telegrapher's equations [closed form],
/// γ = sqrt((R' + jωL')·jωC'), Zc = sqrt((R' + jωL')/(jωC')), θ = γ·l):
/// the exact chain matrix is [cosh θ, Zc sinh θ; sinh θ / Zc, cosh θ], the pi section's is
/// [1 + ZY/2, Z; Y(1 + ZY/4), 1 + ZY/2] with Z = (R' + jωL')·l, Y = jωC'·l. The figure is
/// the transfer from one end's voltage to the other's, loaded by the far side's admittance
/// Y_b (the other segments as Z0, the load, the drive): V_a/V_b = A + B·Y_b for either
/// matrix, |(A + B·Y_b)_pi − (A + B·Y_b)_exact| / |(A + B·Y_b)_exact|, taken the worse way
/// round. To leading order it is of third order in ωτ (the pi section matches the line's
/// expansion through θ²), where a whole-sample line is off by the rounding of its delay.
pub fn error(plant: &Plant, si: usize, rise: f64) -> f64 {
    let seg = &plant.segments[si];
    let LineAtEdge { w, z_series, y_shunt, zc, theta } = LineAtEdge::of(plant, si, rise);
    let (z, y) = (z_series * seg.length, y_shunt * seg.length);
    let (a_x, b_x) = (theta.cosh(), zc * theta.sinh());
    let (a_p, b_p) = (1.0 + z * y / 2.0, z);
    let one_way = |far: usize| {
        let yb = side_admittance(plant, far, si, w);
        let exact = a_x + b_x * yb;
        let pi = a_p + b_p * yb;
        (pi - exact).norm() / exact.norm()
    };
    one_way(seg.to).max(one_way(seg.from))
}

/// The stated error of the whole-sample delay line segment `si` would otherwise be: its
/// delay rounded (never below one sample) moves the edge by Δt, which on a linear ramp of
/// 10–90 % time `rise` is |Δt|·0.8/rise of the step [closed form] (as `model_error`
/// states it for every delay line).
pub fn line_error(plant: &Plant, si: usize, dt: f64, rise: f64) -> f64 {
    let seg = &plant.segments[si];
    let samples = seg.length / plant.cables[seg.cable].velocity / dt;
    timing_error((samples.round().max(1.0) - samples) * dt, rise)
}

/// The pi sections of `plan`: (segment, from class, to class).
pub fn sections(plant: &Plant, plan: &LumpPlan) -> Vec<(usize, usize, usize)> {
    (0..plant.segments.len())
        .filter(|&s| plan.lumped[s] == Some(super::LumpKind::Pi))
        .map(|s| (s, plan.class_of[plant.segments[s].from], plan.class_of[plant.segments[s].to]))
        .collect()
}

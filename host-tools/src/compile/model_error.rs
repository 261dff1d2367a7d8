//! The model error of every segment and reactive element at the drive's edge, the marks
//! against the plant's tolerances, and the shortest drive edge the plant honours at its
//! rate. Static figures (closed forms and a scalar recursion): nothing here runs the network.
//!
//! Every figure is a fraction of the step a node sees, at the drive's 10–90 % rise time
//! `rise` (a sampled drive has no edge faster than two samples, so `rise` is at least 2·T):
//!
//! * delay line: an edge displaced by the rounding error Δt on a linear ramp of full length
//!   rise/0.8 moves the voltage by |Δt|·0.8/rise of the step [closed form]; also marked when
//!   |Δt| exceeds the arrival tolerance;
//! * lumped segment: [`super::lumped::lump_error`] at f = 0.35/rise;
//! * reactive element (bilinear capacitor at a node whose Thevenin resistance is R, time
//!   constant τ = (R + R_series)·C): the largest difference between the sampled exact
//!   first-order response to the ramp and the bilinear recursion, computed by running both
//!   over the edge at four sub-sample phases ([`bilinear_ramp_error`]).
use super::lumped::{lump_error, LumpPlan};
use super::report::{ReactiveError, SegmentModel};
use super::Compiled;
use crate::plant::{Drive, Plant, Waveform};
use tidewire_core::{Drive as CoreDrive, ElementKind, Junction, Shunt};

/// The drive's 10–90 % rise time, if its waveform has one.
pub fn drive_rise(plant: &Plant) -> Option<f64> {
    let w = match &plant.drive {
        Drive::Source { emf, .. } => emf,
        Drive::Rig { stimulus, .. } => stimulus,
    };
    match w {
        Waveform::Step { rise, .. } | Waveform::Pulse { rise, .. } | Waveform::Pwm { rise, .. } => Some(*rise),
        Waveform::Samples(_) => None,
    }
}

/// The edge the figures are judged at: the drive's rise, at least two samples.
pub fn judged_rise(plant: &Plant, dt: f64) -> f64 {
    drive_rise(plant).unwrap_or(0.0).max(2.0 * dt)
}

/// A timing error `dt_error` (seconds, either sign) on a linear ramp of 10–90 % time `rise`
/// moves the voltage by |dt_error|·0.8/rise of the step [closed form].
pub fn timing_error(dt_error: f64, rise: f64) -> f64 {
    dt_error.abs() * 0.8 / rise
}

/// Largest error (fraction of the node's step) of a bilinear capacitor port at a node of
/// time constant `tau_samples` (τ/T) against the exact first-order response, for a linear
/// ramp of 10–90 % time `rise_samples`, over four sub-sample phases of the ramp's start.
///
/// Exact: y(t) = r(t) − r(t − F) with F = rise/0.8 and r(t) = (t − τ(1 − e^(−t/τ)))/F for
/// t > 0 [closed form]. Discrete: the bilinear transform of 1/(1 + sτ),
/// y[n] = g·(x[n] + x[n−1]) + p·y[n−1], p = (2τ − T)/(2τ + T), g = (1 − p)/2.
/// Beyond 200 samples of rise the error scales as 1/rise (it is proportional to the ramp's
/// slope), so longer ramps are not run.
pub fn bilinear_ramp_error(tau_samples: f64, rise_samples: f64) -> f64 {
    const LONGEST: f64 = 200.0;
    if rise_samples > LONGEST {
        return bilinear_ramp_error(tau_samples, LONGEST) * LONGEST / rise_samples;
    }
    let tau = tau_samples.max(1e-9);
    let full = (rise_samples / 0.8).max(1e-9);
    let r = |t: f64| if t <= 0.0 { 0.0 } else { (t - tau * (1.0 - (-t / tau).exp())) / full };
    let exact = |t: f64| r(t) - r(t - full);
    let p = (2.0 * tau - 1.0) / (2.0 * tau + 1.0);
    let g = (1.0 - p) / 2.0;
    // Long enough for the ramp and for the slower of the two responses to settle.
    let settle = (tau * 40.0).max(40.0 / (1.0 - p.abs()).max(1e-3)).min(20_000.0);
    let n = (full + settle).ceil() as usize + 2;
    let mut worst = 0.0f64;
    for off in [0.0, 0.25, 0.5, 0.75] {
        let (mut px, mut py) = (0.0, 0.0);
        for k in 0..n {
            let t = k as f64 - off;
            let x = (t / full).clamp(0.0, 1.0);
            let y = g * (x + px) + p * py;
            worst = worst.max((y - exact(t)).abs());
            (px, py) = (x, y);
        }
    }
    worst
}

/// Resistance a node junction's element sees: its line ends, its shunt and the drive's
/// source resistance in parallel (ohms; infinite when nothing is there).
fn node_resistance(c: &Compiled, j: u16) -> f64 {
    let net = &c.net;
    let mut g: f64 = net
        .lines
        .iter()
        .map(|l| (u32::from(l.a == j) + u32::from(l.b == j)) as f64 * 1000.0 / l.z_milliohm as f64)
        .sum();
    match net.junctions.get(j as usize) {
        Some(Junction::Node { shunt: Shunt::Resistor { milliohm } }) => g += 1000.0 / *milliohm as f64,
        Some(Junction::Node { shunt: Shunt::Short }) => return 0.0,
        _ => {}
    }
    if let CoreDrive::Source { junction, milliohm } = net.drive {
        if junction == j {
            g += 1000.0 / milliohm as f64;
        }
    }
    1.0 / g
}

/// Fill the model, error and mark of every segment, the reactive elements' errors, and the
/// shortest edge the plant honours.
pub(super) fn fill(c: &mut Compiled, plant: &Plant, lump: &LumpPlan) {
    let dt = c.dt;
    let rise = judged_rise(plant, dt);
    let tol = plant.tolerances;
    // Per segment: its error as a function of the rise (for the mark and the shortest edge).
    let seg_error = |si: usize, error_s: f64, rise: f64| -> f64 {
        match lump.lumped[si] {
            Some(kind) => lump_error(plant, si, kind, rise),
            None => timing_error(error_s, rise),
        }
    };
    let mut reactive = vec![];
    for e in c.net.elements.iter() {
        if e.kind != ElementKind::Capacitor {
            continue;
        }
        // Port T/(2C) in milliohms: C = T/(2·port).
        let cap = dt / (2.0 * e.port_milliohm as f64 / 1000.0);
        let r = node_resistance(c, e.junction) + e.series_milliohm as f64 / 1000.0;
        let tau = r * cap;
        let node = c
            .node_junction
            .iter()
            .enumerate()
            .filter(|(_, j)| **j == e.junction)
            .map(|(n, _)| plant.nodes[n].name.as_str())
            .collect::<Vec<_>>()
            .join("+");
        let error = if tau.is_finite() { bilinear_ramp_error(tau / dt, rise / dt) } else { 0.0 };
        reactive.push(ReactiveError {
            node,
            capacitance: cap,
            resistance: r,
            tau,
            error,
            exceeds: error > tol.max_error,
        });
    }
    for (si, t) in c.report.segments.iter_mut().enumerate() {
        t.model = match lump.lumped[si] {
            Some(kind) => SegmentModel::Lumped(kind),
            None => SegmentModel::DelayLine,
        };
        if matches!(lump.lumped[si], Some(super::LumpKind::Series | super::LumpKind::Pi)) {
            // The series-inductor junction or the pi section's branch carries the piece's resistance.
            t.r_dropped = None;
        }
        t.model_error = seg_error(si, t.error_s, rise);
        let late = lump.lumped[si].is_none() && t.error_s.abs() > tol.arrival_samples * dt;
        t.exceeds = t.model_error > tol.max_error || late;
    }
    // The shortest edge: the smallest rise at which every figure is within max_error
    // (each falls as the rise grows), found by bisection on a log scale between 2 samples
    // and 10^7 samples.
    let ok = |rise: f64| {
        let segs = c.report.segments.iter().enumerate().all(|(si, t)| seg_error(si, t.error_s, rise) <= tol.max_error);
        let els =
            reactive.iter().all(|r| !r.tau.is_finite() || bilinear_ramp_error(r.tau / dt, rise / dt) <= tol.max_error);
        segs && els
    };
    let (mut lo, mut hi) = (2.0 * dt, 1e7 * dt);
    let shortest = if ok(lo) {
        Some(lo)
    } else if !ok(hi) {
        None
    } else {
        for _ in 0..50 {
            let mid = (lo * hi).sqrt();
            if ok(mid) {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        Some(hi)
    };
    c.report.reactive = reactive;
    c.report.judged_rise = rise;
    c.report.shortest_edge = shortest;
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bilinear_ramp_error_falls_with_the_rise_and_matches_a_slow_ramp() {
        // A slow ramp through a first-order lag: the bilinear transform keeps the lag's
        // low-frequency delay τ exactly, so the error is small and falls as 1/rise.
        let e5 = bilinear_ramp_error(1.0 / 3.0, 5.0);
        let e20 = bilinear_ramp_error(1.0 / 3.0, 20.0);
        assert!(e20 < e5 / 3.0, "{e5} {e20}");
        assert!(e20 < 0.005, "{e20}");
        // A step (rise well under a sample) into τ = T/3 is far from the samples.
        assert!(bilinear_ramp_error(1.0 / 3.0, 0.01) > 0.2);
    }
}

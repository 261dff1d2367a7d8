//! The exact floating-point reference of a plant, independent of the delay-line model.
//!
//! Each segment is a uniform line two-port from the telegrapher's equations
//! ([`line`]), the whole plant is solved by nodal analysis at each complex frequency
//! ([`nodal`]), and the time response comes from numerical Laplace inversion by the damped
//! FFT ([`laplace`]). [`dc_operating_point`] gives the settled state ([`dc`]).
//!
//! The drive is an EMF behind a resistance ([`Drive::Source`](crate::plant::Drive), or a
//! rig's device under test: stimulus behind `dut_resistance`). Every transfer function is
//! per volt of that EMF. Between scheduled [`events`](crate::plant::Plant::events) the
//! plant is linear and time-invariant; the events themselves are followed stage by stage
//! by the compensation method ([`events`]), so the reference covers the whole run.

mod band_edge;
mod check;
mod dc;
mod error;
mod events;
mod laplace;
pub mod line;
mod nodal;
mod sparse;

pub use error::ReferenceError;
pub use line::{segment_s21, DIELECTRIC_REF_HZ};

use crate::plant::{Plant, ProbeKind};
use num_complex::Complex64;

/// Options of an exact time-response run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExactOptions {
    /// Number of output samples n at the plant's sample rate.
    pub samples: usize,
    /// Wrap-around level q = exp(−sigma·N·dt) of the Laplace inversion (0 < q < 1).
    pub wrap_level: f64,
}

impl ExactOptions {
    /// Default wrap level of the inversion.
    pub const DEFAULT_WRAP_LEVEL: f64 = 1e-9;
    /// Longest run: the inversion keeps 8·samples complex values per probe in memory.
    pub const MAX_SAMPLES: usize = 1 << 20;

    /// Options covering the plant's `duration` at its sample rate, default wrap level.
    pub fn for_plant(plant: &Plant) -> ExactOptions {
        let n = (plant.duration * plant.sample_rate).ceil();
        let samples = if n.is_finite() && n >= 1.0 { n as usize } else { 1 };
        ExactOptions { samples, wrap_level: Self::DEFAULT_WRAP_LEVEL }
    }
}

/// One probe's time response.
#[derive(Debug, Clone, PartialEq)]
pub struct Trace {
    /// The probe's name.
    pub name: String,
    /// "V" for a voltage probe, "A" for a current probe.
    pub unit: &'static str,
    /// Value at t = k·dt for k < samples.
    pub values: Vec<f64>,
}

/// The exact time response of a plant.
#[derive(Debug, Clone, PartialEq)]
pub struct ExactRun {
    /// Sample period, s.
    pub dt: f64,
    /// One trace per `plant.probes`, in the same order.
    pub traces: Vec<Trace>,
    /// The sampled drive EMF, V.
    pub drive: Vec<f64>,
    /// Damping of the Laplace inversion, 1/s.
    pub sigma: f64,
    /// Error bound of the inversion, as a fraction of the drive's peak: every value of every
    /// trace is within `wrap_bound · max|drive|` (volts read as the trace's unit) of the
    /// band-limited response to the sampled drive. It adds the wrap-around copies (assuming
    /// the response past the record of N >= 8·samples is no larger than within it, as for a
    /// passive plant), the rounding magnified by the undamping, and the computed band-edge
    /// term (the ringing of edges off the sample grid, see `laplace`).
    pub wrap_bound: f64,
}

/// The exact response of every probe of `plant` to its drive, sampled at the plant's rate.
///
/// The drive's EMF is sampled at dt = 1/sample_rate (`Waveform::sample`) and that sequence
/// is the input, so the result compares sample for sample with a discrete-time emulator.
pub fn exact_response(plant: &Plant, opts: &ExactOptions) -> Result<ExactRun, ReferenceError> {
    check::check_plant(plant)?;
    if plant.probes.is_empty() {
        return Err(ReferenceError::NoProbes);
    }
    if opts.samples == 0 {
        return Err(ReferenceError::NoSamples);
    }
    if opts.samples > ExactOptions::MAX_SAMPLES {
        return Err(ReferenceError::BadOption {
            name: "samples",
            value: opts.samples as f64,
            expected: "at most 1048576 samples (the inversion record is 8 times longer)",
        });
    }
    if !(opts.wrap_level > 0.0 && opts.wrap_level < 1.0) {
        return Err(ReferenceError::BadOption {
            name: "wrap_level",
            value: opts.wrap_level,
            expected: "a number between 0 and 1, such as 1e-9",
        });
    }
    if !(plant.sample_rate.is_finite() && plant.sample_rate > 0.0) {
        return Err(ReferenceError::invalid(
            format!("plant '{}'", plant.name),
            Default::default(),
            "sample_rate",
            format!("must be a positive number of hertz, got {}", plant.sample_rate),
        ));
    }
    let dt = 1.0 / plant.sample_rate;
    let drive = check::thevenin(plant).emf.sample(dt, opts.samples);
    let plan = laplace::Plan::new(opts.samples, dt, opts.wrap_level);
    let drive_peak = drive.iter().fold(0.0, |p: f64, v| p.max(v.abs()));
    let (values, wrap_bound) = if plant.events.is_empty() {
        let network = nodal::Network::new(plant);
        let one = Complex64::new(1.0, 0.0);
        let inverted = laplace::invert(&plan, &drive, dt, plant.probes.len(), |s| {
            let sol = network.solve(s, one, &[], &[])?;
            Ok(plant.probes.iter().map(|p| sol.probe(plant, p.kind)).collect())
        })?;
        // The relative bound of the plan applies to each trace's peak over the record and the
        // band-edge term is absolute; express both against the drive's peak so that one number
        // covers every trace.
        let largest = inverted.record_peaks.iter().fold(0.0, |p: f64, v| p.max(*v));
        let scale = if drive_peak > 0.0 { (largest / drive_peak).max(1.0) } else { 1.0 };
        let edge = inverted.edge_peaks.iter().fold(0.0, |p: f64, v| p.max(*v));
        (inverted.values, plan.wrap_bound() * scale + if drive_peak > 0.0 { edge / drive_peak } else { 0.0 })
    } else {
        let (values, absolute) = events::staged_response(plant, &plan, dt, &drive)?;
        (values, if drive_peak > 0.0 { absolute / drive_peak } else { absolute })
    };
    let traces = plant
        .probes
        .iter()
        .zip(values)
        .map(|(p, values)| Trace {
            name: p.name.clone(),
            unit: match p.kind {
                ProbeKind::Voltage(_) => "V",
                ProbeKind::Current(..) => "A",
            },
            values,
        })
        .collect();
    Ok(ExactRun { dt, traces, drive, sigma: plan.sigma, wrap_bound })
}

/// Node voltages at DC for drive EMF `emf` (segments are their loop resistance, lossless
/// ones perfect conductors, capacitors open), V, in `plant.nodes` order.
pub fn dc_operating_point(plant: &Plant, emf: f64) -> Result<Vec<f64>, ReferenceError> {
    check::check_plant(plant)?;
    dc::node_voltages(plant, emf)
}

/// Node voltages at DC (as [`dc_operating_point`]) of the plant as it is after every
/// scheduled event that falls inside a run of `samples` samples: the state a drive that
/// settles to `emf` leads to. Breaks leave both sides open; node indices keep their meaning.
pub fn dc_operating_point_after_events(plant: &Plant, emf: f64, samples: usize) -> Result<Vec<f64>, ReferenceError> {
    check::check_plant(plant)?;
    let after = events::final_plant(plant, 1.0 / plant.sample_rate, samples)?;
    dc::node_voltages(&after, emf)
}

/// Transfer from drive EMF to probe `probe` at complex frequency `s` (V/V or A/V).
///
/// At s = 0 this is the DC operating point per volt; elsewhere the exact nodal solution.
pub fn transfer(plant: &Plant, probe: usize, s: Complex64) -> Result<Complex64, ReferenceError> {
    check::check_plant(plant)?;
    let kind = plant
        .probes
        .get(probe)
        .ok_or(ReferenceError::ProbeOutOfRange { index: probe, count: plant.probes.len() })?
        .kind;
    if !(s.re.is_finite() && s.im.is_finite()) {
        return Err(ReferenceError::NonFinite { sigma: s.re, f_hz: s.im / (2.0 * std::f64::consts::PI) });
    }
    if s == Complex64::new(0.0, 0.0) {
        return Ok(Complex64::new(dc::probe_values(plant, 1.0)?[probe], 0.0));
    }
    Ok(nodal::solve(plant, s)?.probe(plant, kind))
}

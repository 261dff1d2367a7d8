//! One parameter of the plant varied — a segment's length, a node's load resistance or a
//! cable's characteristic impedance — and at each value the peak of one probe from the
//! fixed-point core beside the exact reference, with the plant's tolerances judged at each
//! point. Points run in parallel (rayon); each is a whole compile + core run + exact run.
use crate::compile::ProfileKind;
use crate::host_core::{run_core, RunError};
use crate::plant::{Load, Plant, PlantError};
use crate::reference::{exact_response, ExactOptions, ReferenceError};
use rayon::prelude::*;

/// What a sweep varies.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Parameter {
    /// The length of segment k, m.
    Length(usize),
    /// The load of node k becomes a resistor of the swept value, ohms.
    LoadResistance(usize),
    /// The characteristic impedance of cable k, ohms.
    CableImpedance(usize),
}

impl Parameter {
    /// Unit symbol of the swept value.
    pub fn unit(self) -> &'static str {
        match self {
            Parameter::Length(_) => "m",
            Parameter::LoadResistance(_) | Parameter::CableImpedance(_) => "Ω",
        }
    }

    /// The plant with the parameter set to `value`.
    pub fn apply(self, plant: &Plant, value: f64) -> Plant {
        let mut p = plant.clone();
        match self {
            Parameter::Length(k) => p.segments[k].length = value,
            Parameter::LoadResistance(k) => p.nodes[k].load = Load::Resistor(value),
            Parameter::CableImpedance(k) => p.cables[k].z0 = value,
        }
        p
    }
}

/// One point of a sweep: the swept value, the probe's peak over the run from the core and
/// from the exact reference (multiples of the drive's step), and the verdict there.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepPoint {
    pub value: f64,
    pub peak_ratio: f64,
    pub exact_peak_ratio: f64,
    /// Largest |core − exact| of the probe, fraction of the drive's step.
    pub max_error: f64,
    /// Within the plant's `max_error` and `rms_error` tolerances at this point.
    pub pass: bool,
}

/// Why a sweep stopped.
#[derive(Debug, thiserror::Error)]
pub enum SweepError {
    /// The plant at one of the values does not compile.
    #[error(transparent)]
    Plant(#[from] PlantError),
    /// The host core could not run it.
    #[error(transparent)]
    Run(#[from] RunError),
    /// The exact reference could not be computed.
    #[error(transparent)]
    Reference(#[from] ReferenceError),
}

/// The drive's 10–90 % rise time, if its waveform has one.
pub fn rise_of(plant: &Plant) -> Option<f64> {
    crate::compile::model_error::drive_rise(plant)
}

/// Run the sweep: `parameter` at each of `values`, the peak of probe `probe`.
pub fn sweep(
    plant: &Plant,
    file: &str,
    parameter: Parameter,
    probe: usize,
    values: &[f64],
    profile: ProfileKind,
) -> Result<Vec<SweepPoint>, SweepError> {
    // Limits before work: the plant at each end of the range (a length sets the storage) is
    // laid out and checked against the host runner before any point runs.
    for &v in [values.first(), values.last()].into_iter().flatten() {
        super::sense::fits_host_runner(&parameter.apply(plant, v), file, profile)?;
    }
    values
        .par_iter()
        .map(|&value| {
            let p = parameter.apply(plant, value);
            let (c, _) = super::prepare(&p, file, profile)?;
            let r = run_core(&c, c.samples, &[], &|_| {})?;
            let ex = exact_response(&p, &ExactOptions { samples: c.samples.max(1), ..ExactOptions::for_plant(&p) })?;
            let step = c.host_drive.emf().iter().fold(0.0f64, |m, x| m.max(x.abs())).max(f64::MIN_POSITIVE);
            let core = &r.recording.probes[probe];
            let exact = &ex.traces[probe].values;
            let peak = |x: &[f64]| x.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            let (max_error, rms_error) = errors(core, exact);
            let tol = p.tolerances;
            Ok(SweepPoint {
                value,
                peak_ratio: peak(core) / step,
                exact_peak_ratio: peak(exact) / step,
                max_error: max_error / step,
                pass: max_error <= tol.max_error * step && rms_error <= tol.rms_error * step,
            })
        })
        .collect()
}

/// Largest and RMS |a − b| over the common length.
fn errors(a: &[f64], b: &[f64]) -> (f64, f64) {
    let n = a.len().min(b.len()).max(1);
    let (max, sq) =
        a.iter().zip(b).fold((0.0f64, 0.0f64), |(m, s), (x, y)| (m.max((x - y).abs()), s + (x - y) * (x - y)));
    (max, (sq / n as f64).sqrt())
}

//! One segment's length varied, the peak of one probe from the fixed-point core at each
//! length — for example the motor terminal voltage against cable length, beside the
//! critical length l_c = v·t_rise/2 of the drive's edge.
use crate::compile::ProfileKind;
use crate::host_core::{run_core, RunError};
use crate::plant::{Drive, Plant, PlantError, Waveform};

/// One point of a sweep: length (m) and the probe's peak over the run, as a multiple of the
/// drive's step.
pub struct SweepPoint {
    pub length: f64,
    pub peak_ratio: f64,
}

/// Why a sweep stopped.
#[derive(Debug, thiserror::Error)]
pub enum SweepError {
    /// The plant at one of the lengths does not compile.
    #[error(transparent)]
    Plant(#[from] PlantError),
    /// The host core could not run it.
    #[error(transparent)]
    Run(#[from] RunError),
}

/// The drive's 10–90 % rise time, if its waveform has one.
pub fn rise_of(plant: &Plant) -> Option<f64> {
    let w = match &plant.drive {
        Drive::Source { emf, .. } => emf,
        Drive::Rig { stimulus, .. } => stimulus,
    };
    match w {
        Waveform::Step { rise, .. } | Waveform::Pulse { rise, .. } | Waveform::Pwm { rise, .. } => Some(*rise),
        Waveform::Samples(_) => None,
    }
}

/// Run the sweep: segment `segment` at each of `lengths`, the peak of probe `probe`.
pub fn sweep(
    plant: &Plant,
    file: &str,
    segment: usize,
    probe: usize,
    lengths: &[f64],
    profile: ProfileKind,
) -> Result<Vec<SweepPoint>, SweepError> {
    let mut out = vec![];
    for &len in lengths {
        let mut p = plant.clone();
        p.segments[segment].length = len;
        let (c, _) = super::prepare(&p, file, profile)?;
        let r = run_core(&c, c.samples, &[], &|_| {})?;
        let step = c.host_drive.emf().iter().fold(0.0f64, |m, x| m.max(x.abs()));
        let peak = r.recording.probes[probe].iter().fold(0.0f64, |m, x| m.max(x.abs()));
        out.push(SweepPoint { length: len, peak_ratio: peak / step });
    }
    Ok(out)
}

//! The working-point check of `verify`: does the core settle where the physics does?
//!
//! After the plant's own run the core keeps its drive at the final value (a step's level, a
//! pulse's zero, a sample list's last value; a rig's device EMF likewise) for [`hold_samples`]
//! more samples, and every output code is watched over the second half of that hold: the
//! drive's output code and each probe's I/O code (`Profile::to_code` of the probe's raw
//! integer: truncated toward zero, saturated to i16). The exact response of a plant whose
//! paths all have loss settles to a constant, so any band left there is the fixed-point
//! arithmetic's: a limit cycle around the working point (`docs/firmware.md`, "Constant drive").
//! With a zero final drive the same check is the zero-input property: every code at 0.
//!
//! The band is judged against the plant's final-value tolerance, as codes (tolerance × drive
//! step / volts per code), and never tighter than [`FEW_CODES`]: a rig sees codes, and a
//! band inside the final-value tolerance is one the plant's author has accepted. A PWM drive
//! never holds a value: no check.
use crate::compile::{Compiled, ProfileKind};
use crate::host_core::{run_core_with, RunError, SampleOut};
use crate::plant::Tolerances;
use serde::Serialize;
use tidewire_core::{Narrow, Profile, Wide};

/// The band, in codes, that the check always accepts: "a few codes" [practice].
pub const FEW_CODES: u32 = 4;

/// The hold after a run of `run` samples: 16 runs, at least 2^16 and at most 2^20 samples
/// (a lightly damped plant's slowest mode must have died out in the exact response; the
/// second half is watched).
pub fn hold_samples(run: usize) -> usize {
    run.saturating_mul(16).clamp(1 << 16, 1 << 20)
}

/// One output over the watched half of the hold.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HoldOutput {
    /// `drive` (the drive's output code) or the probe's name.
    pub name: String,
    /// Lowest and highest code seen, and the last one.
    pub low: i16,
    pub high: i16,
    pub last: i16,
    /// high − low, codes.
    pub band: u32,
    pub pass: bool,
}

/// The check's figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HoldFigures {
    /// The drive's final EMF (V) held after the run.
    pub emf: f64,
    /// Samples held after the run, and how many of the last ones were watched.
    pub held: usize,
    pub watched: usize,
    /// The band accepted, codes (see the module notes).
    pub limit: u32,
    pub outputs: Vec<HoldOutput>,
}

impl HoldFigures {
    pub fn pass(&self) -> bool {
        self.outputs.iter().all(|o| o.pass)
    }

    /// The widest band, codes.
    pub fn widest(&self) -> u32 {
        self.outputs.iter().map(|o| o.band).max().unwrap_or(0)
    }
}

/// Run the check (`None` for a drive that never holds a value).
pub fn check(c: &Compiled, settles_to_dc: bool, tol: &Tolerances, step: f64) -> Result<Option<HoldFigures>, RunError> {
    if !settles_to_dc {
        return Ok(None);
    }
    let held = hold_samples(c.samples);
    let total = c.samples.saturating_add(held);
    let from = total - held / 2;
    let shift = u32::from(c.net.io_shift);
    let n_out = 1 + c.net.probes.len();
    let (mut low, mut high, mut last) = (vec![i16::MAX; n_out], vec![i16::MIN; n_out], vec![0i16; n_out]);
    let mut sink = |s: SampleOut<'_>| -> Result<(), RunError> {
        if s.n >= from {
            // The drive's code first, then each probe's I/O code.
            let codes = std::iter::once(s.drive_out).chain(s.raw.iter().map(|&r| to_code(c.profile, r, shift)));
            for (k, code) in codes.enumerate() {
                low[k] = low[k].min(code);
                high[k] = high[k].max(code);
                last[k] = code;
            }
        }
        Ok(())
    };
    run_core_with(c, total, &[], &mut sink)?;
    let vpc = f64::from(c.net.volts_per_code);
    let allowed = (tol.final_error * step / vpc).floor();
    let limit = if allowed.is_finite() && allowed > f64::from(FEW_CODES) {
        allowed.min(f64::from(u16::MAX)) as u32
    } else {
        FEW_CODES
    };
    let names = std::iter::once("drive".to_string()).chain(c.probe_names.iter().map(|(n, _)| n.clone()));
    let outputs = names
        .zip(low.iter().zip(&high).zip(&last))
        .map(|(name, ((&lo, &hi), &la))| {
            let band = (i32::from(hi) - i32::from(lo)).max(0) as u32;
            HoldOutput { name, low: lo, high: hi, last: la, band, pass: band <= limit }
        })
        .collect();
    Ok(Some(HoldFigures {
        emf: c.host_drive.emf().last().copied().unwrap_or(0.0),
        held,
        watched: held / 2,
        limit,
        outputs,
    }))
}

/// A probe's raw integer as the I/O code the core outputs: the profile's own `to_code`
/// (trunc(raw / 2^shift) toward zero, saturated to i16).
fn to_code(profile: ProfileKind, raw: i32, shift: u32) -> i16 {
    match profile {
        ProfileKind::Wide => <Wide as Profile>::to_code(raw, shift),
        ProfileKind::Narrow => <Narrow as Profile>::to_code(raw, shift),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn codes_truncate_toward_zero_and_saturate() {
        let w = |raw| to_code(ProfileKind::Wide, raw, 12);
        assert_eq!(w(4095), 0);
        assert_eq!(w(4096), 1);
        assert_eq!(w(-4095), 0);
        assert_eq!(w(-8193), -2);
        assert_eq!(w(i32::MAX), i16::MAX, "2^19 codes saturate");
        assert_eq!(w(i32::MIN), i16::MIN);
        assert_eq!(to_code(ProfileKind::Wide, i32::MAX, 0), i16::MAX);
        assert_eq!(to_code(ProfileKind::Wide, i32::MIN, 0), i16::MIN);
        assert_eq!(to_code(ProfileKind::Narrow, i32::MAX, 0), i16::MAX);
        assert_eq!(to_code(ProfileKind::Narrow, i32::MIN, 0), i16::MIN);
        assert_eq!(to_code(ProfileKind::Narrow, -7, 0), -7);
    }

    #[test]
    fn the_hold_is_sixteen_runs_within_its_bounds() {
        assert_eq!(hold_samples(10), 1 << 16);
        assert_eq!(hold_samples(10_000), 160_000);
        assert_eq!(hold_samples(10_000_000), 1 << 20);
    }
}

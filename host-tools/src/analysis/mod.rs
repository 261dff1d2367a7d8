//! The analysis stage: every figure about a compiled plant that needs a run.
//!
//! [`crate::compile`] is a pure stage (plant → network in samples plus its static facts).
//! This stage takes its output and runs things on it:
//!
//! * the fixed-point scale, chosen from the f64 twin's largest wave for the plant's own
//!   drive (`scale.rs`);
//! * the DC operating point from the exact reference, and the coefficients the core really
//!   chose, by loading the network into the host core (`checks.rs`);
//! * the sample budget on microcontrollers ([`budget`]);
//! * a segment's length swept, with the host core at each length ([`sweep`]);
//! * the least sample rate at which verify passes ([`rate_search`]).
//!
//! Imports flow one way: `analysis` → `compile`, `twin`, `host_core`, `reference`; none of
//! those import `analysis`.
pub mod budget;
mod checks;
pub mod rate_search;
mod scale;
pub mod sense;
pub mod sweep;

use crate::compile::{compile, Compiled, ProfileKind};
use crate::plant::{Plant, PlantError};

/// Figures that need a run: scale and headroom, DC point, coefficient error, warnings.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Analysis {
    /// Node name and DC voltage for the drive's final EMF.
    pub dc: Vec<(String, f64)>,
    pub peak_emf: f64,
    pub peak_wave: f64,
    pub peak_probe_voltage: f64,
    /// Largest wave the profile holds at the chosen scale, V.
    pub wave_range: f64,
    /// wave_range / peak_wave.
    pub headroom: f64,
    /// Largest relative error of a line impedance after weight quantization.
    pub max_impedance_error: f64,
    pub warnings: Vec<String>,
}

/// Analyse a compiled plant: set its fixed-point scale and return the run figures.
pub fn analyse(c: &mut Compiled, plant: &Plant, file: &str) -> Result<Analysis, PlantError> {
    let mut a = Analysis::default();
    sense::capacity(c, plant, file)?;
    scale::choose(c, plant, file, &mut a)?;
    sense::after_scale(c, plant, file, &mut a)?;
    checks::fill(c, plant, file, &mut a)?;
    Ok(a)
}

/// Compile `plant` for `profile` and analyse it: a configuration ready to load, with its
/// fixed-point scale, and the figures that needed a run.
pub fn prepare(plant: &Plant, file: &str, profile: ProfileKind) -> Result<(Compiled, Analysis), PlantError> {
    sense::before_fits(plant, file, profile)?;
    let mut c = compile(plant, file, profile)?;
    let a = analyse(&mut c, plant, file)?;
    Ok((c, a))
}

//! The plant file exactly as written: serde structures with the byte span of every value.
//!
//! Nothing here checks meaning; `deny_unknown_fields` everywhere makes a misspelt key a
//! located error instead of a silently ignored one. Values that may be a number or a
//! quantity string (or a load that may be a word or a table) stay `toml::Value` so the
//! reader can explain what it expected instead of serde's generic type message.

use std::collections::BTreeMap;

use serde::Deserialize;
use toml::{Spanned, Value};

/// A value kept with its span; interpreted later.
pub type Raw = Spanned<Value>;
/// A string kept with its span.
pub type Text = Spanned<String>;

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawFile {
    pub plant: Spanned<RawHeader>,
    #[serde(default)]
    pub cable: BTreeMap<Text, Spanned<RawCable>>,
    #[serde(default)]
    pub node: BTreeMap<Text, Spanned<RawNode>>,
    #[serde(default)]
    pub segment: Vec<Spanned<RawSegment>>,
    pub drive: Option<Spanned<RawDrive>>,
    #[serde(default)]
    pub probe: Vec<Spanned<RawProbe>>,
    pub verify: Option<Spanned<RawVerify>>,
    #[serde(default)]
    pub event: Vec<Spanned<RawEvent>>,
    pub lattice: Option<Spanned<RawLattice>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawHeader {
    pub name: Text,
    pub sample_rate: Raw,
    pub duration: Raw,
    #[serde(default)]
    pub notes: Vec<String>,
    /// "fitted" (default) or "constant": whether lossy cable runs get Zc(s) networks.
    pub characteristic_impedance: Option<Text>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawCable {
    pub preset: Option<Text>,
    pub impedance: Option<Raw>,
    pub velocity_factor: Option<Raw>,
    pub delay: Option<Raw>,
    pub inductance: Option<Raw>,
    pub capacitance: Option<Raw>,
    pub resistance: Option<Raw>,
    pub loss: Option<Spanned<Vec<Spanned<RawLossPoint>>>>,
    pub loss_coefficients: Option<Spanned<RawLossCoefficients>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawLossPoint {
    pub at: Raw,
    pub attenuation: Raw,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawLossCoefficients {
    pub conductor: Option<Raw>,
    pub dielectric: Option<Raw>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawNode {
    pub load: Option<Raw>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawSegment {
    pub name: Option<Text>,
    pub from: Text,
    pub to: Text,
    pub cable: Text,
    pub length: Raw,
    pub inline: Option<Spanned<RawInline>>,
}

/// `inline = { inductance = "4.7 uH", resistance = "0.2 ohm", at = "12 m" }`
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawInline {
    pub inductance: Raw,
    pub resistance: Option<Raw>,
    pub at: Raw,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawWaveform {
    pub step: Option<Raw>,
    pub pulse: Option<Raw>,
    pub pwm: Option<Raw>,
    pub period: Option<Raw>,
    pub duty: Option<Raw>,
    pub dead_time: Option<Raw>,
    pub samples: Option<Text>,
    pub rise: Option<Raw>,
    pub delay: Option<Raw>,
    pub width: Option<Raw>,
}

/// Both drive kinds in one table; the reader checks which fields belong to which kind.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawDrive {
    pub kind: Text,
    pub node: Text,
    // kind = "source"
    pub resistance: Option<Raw>,
    pub waveform: Option<Spanned<RawWaveform>>,
    // kind = "rig"
    pub reference: Option<Raw>,
    pub adc_full_scale: Option<Raw>,
    pub dac_full_scale: Option<Raw>,
    pub latency: Option<Raw>,
    pub stimulus: Option<Spanned<RawWaveform>>,
    pub device_resistance: Option<Raw>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawProbe {
    pub name: Option<Text>,
    pub node: Option<Text>,
    pub segment: Option<Text>,
    pub end: Option<Text>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawVerify {
    pub max_error: Option<Raw>,
    pub rms_error: Option<Raw>,
    pub final_error: Option<Raw>,
    pub arrival: Option<Raw>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawEvent {
    pub at: Raw,
    pub node: Option<Text>,
    pub load: Option<Raw>,
    pub segment: Option<Text>,
    pub break_at: Option<Raw>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RawLattice {
    pub path: Spanned<Vec<Text>>,
}

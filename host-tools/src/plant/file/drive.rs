//! `[drive]`: what excites the plant (a test source or a rig port).

use std::path::Path;

use toml::Spanned;

use super::locate::Source;
use super::raw::{Raw, RawDrive};
use super::topology::Topology;
use super::values::{positive, quantity, waveform, written};
use crate::plant::error::PlantError;
use crate::plant::model::Drive;
use crate::plant::units::UnitKind;

/// The one `[drive]` table, of kind `"source"` or `"rig"`.
pub fn drive(
    src: &Source,
    raw: &Spanned<RawDrive>,
    topo: &Topology,
    base_dir: &Path,
    sample_rate: f64,
) -> Result<Drive, PlantError> {
    let d = raw.get_ref();
    let node = topo.node(src, &d.node, "drive.node")?;
    let source_only: [(&str, bool, Option<std::ops::Range<usize>>); 2] = [
        ("resistance", d.resistance.is_some(), d.resistance.as_ref().map(|r| r.span())),
        ("waveform", d.waveform.is_some(), d.waveform.as_ref().map(|r| r.span())),
    ];
    let rig_only = [
        ("reference", d.reference.as_ref().map(|r| r.span())),
        ("adc_full_scale", d.adc_full_scale.as_ref().map(|r| r.span())),
        ("dac_full_scale", d.dac_full_scale.as_ref().map(|r| r.span())),
        ("latency", d.latency.as_ref().map(|r| r.span())),
        ("stimulus", d.stimulus.as_ref().map(|r| r.span())),
        ("device_resistance", d.device_resistance.as_ref().map(|r| r.span())),
    ];
    let misplaced = |field: &str, span: std::ops::Range<usize>, kind: &str, other: &str| {
        src.error(
            span,
            format!("drive.{field}"),
            format!("`{field}` belongs to kind = \"{other}\", not kind = \"{kind}\""),
            format!("remove `{field}`, or set kind = \"{other}\""),
        )
    };
    let need = |value: &Option<Raw>, field: &str, example: &str| -> Result<Raw, PlantError> {
        value.clone().ok_or_else(|| {
            src.error(
                raw.span(),
                "drive",
                format!("kind = \"{}\" needs `{field}`", d.kind.get_ref()),
                format!("add {field} = {example}"),
            )
        })
    };
    match d.kind.get_ref().as_str() {
        "source" => {
            if let Some((field, Some(span))) = rig_only.into_iter().find(|(_, s)| s.is_some()) {
                return Err(misplaced(field, span, "source", "rig"));
            }
            let r = need(&d.resistance, "resistance", "\"50 ohm\"")?;
            let rs = positive(src, &r, UnitKind::Resistance, "drive.resistance", "resistance")?;
            let Some(w) = &d.waveform else {
                return Err(src.error(
                    raw.span(),
                    "drive",
                    "kind = \"source\" needs `waveform`",
                    "add waveform = { step = \"5 V\", rise = \"10 ns\" }",
                ));
            };
            let emf = waveform(src, w, "drive.waveform", base_dir, sample_rate)?;
            Ok(Drive::Source { node, emf, rs })
        }
        "rig" => {
            if let Some((field, _, Some(span))) = source_only.into_iter().find(|(_, g, _)| *g) {
                return Err(misplaced(field, span, "rig", "source"));
            }
            let pos = |v: &Option<Raw>, field: &str, kind: UnitKind, ex: &str, what: &str| {
                let r = need(v, field, ex)?;
                positive(src, &r, kind, &format!("drive.{field}"), what)
            };
            let r_ref = pos(&d.reference, "reference", UnitKind::Resistance, "\"120 ohm\"", "reference")?;
            let adc = pos(&d.adc_full_scale, "adc_full_scale", UnitKind::Voltage, "\"5 V\"", "ADC full scale")?;
            let dac = pos(&d.dac_full_scale, "dac_full_scale", UnitKind::Voltage, "\"10 V\"", "DAC full scale")?;
            let dut = pos(
                &d.device_resistance,
                "device_resistance",
                UnitKind::Resistance,
                "\"10 ohm\"",
                "device resistance",
            )?;
            let lat = need(&d.latency, "latency", "2")?;
            let latency = latency(src, &lat)?;
            let Some(w) = &d.stimulus else {
                return Err(src.error(
                    raw.span(),
                    "drive",
                    "kind = \"rig\" needs `stimulus` (the device-under-test model for host runs)",
                    "add stimulus = { step = \"2 V\", rise = \"20 ns\" }",
                ));
            };
            let stimulus = waveform(src, w, "drive.stimulus", base_dir, sample_rate)?;
            Ok(Drive::Rig {
                node,
                r_ref,
                adc_full_scale: adc,
                dac_full_scale: dac,
                latency,
                stimulus,
                dut_resistance: dut,
            })
        }
        other => Err(src.error(
            d.kind.span(),
            "drive.kind",
            format!("unknown drive kind \"{other}\""),
            "use kind = \"source\" (a test source) or kind = \"rig\" (a rig port)",
        )),
    }
}

/// The rig's ADC-to-DAC latency: a whole number of samples.
fn latency(src: &Source, raw: &Raw) -> Result<u32, PlantError> {
    let x = quantity(src, raw, UnitKind::Dimensionless, "drive.latency")?;
    if x >= 0.0 && x.fract() == 0.0 && x <= 100_000.0 {
        Ok(x as u32)
    } else {
        Err(src.error(
            raw.span(),
            "drive.latency",
            format!("latency must be a whole number of samples from 0 to 100000, got {}", written(raw)),
            "give the rig's ADC-to-DAC latency in samples, e.g. latency = 2",
        ))
    }
}

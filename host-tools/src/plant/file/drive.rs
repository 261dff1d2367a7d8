//! `[drive]`, `[[probe]]`, `[verify]` and `[[event]]`: what excites the plant, what is
//! measured, how closely, and what changes while it runs.

use std::path::Path;

use toml::{Spanned, Value};

use super::locate::Source;
use super::raw::{Raw, RawDrive, RawEvent, RawProbe, RawVerify};
use super::topology::Topology;
use super::values::{load, non_negative, positive, quantity, waveform, written};
use crate::plant::error::PlantError;
use crate::plant::model::{Drive, End, Event, EventAction, Probe, ProbeKind, Span, Tolerances};
use crate::plant::units::{self, UnitKind};

/// The one `[drive]` table, of kind `"source"` or `"rig"`.
pub fn drive(src: &Source, raw: &Spanned<RawDrive>, topo: &Topology, base_dir: &Path) -> Result<Drive, PlantError> {
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
            let emf = waveform(src, w, "drive.waveform", base_dir)?;
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
            let stimulus = waveform(src, w, "drive.stimulus", base_dir)?;
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

/// `[[probe]]` entries: a node voltage, or the current into a segment at one end.
pub fn probes(src: &Source, raw: &[Spanned<RawProbe>], topo: &Topology) -> Result<Vec<Probe>, PlantError> {
    let mut out: Vec<Probe> = Vec::with_capacity(raw.len());
    let mut lines: Vec<usize> = Vec::new();
    for (i, p) in raw.iter().enumerate() {
        let r = p.get_ref();
        let label = r.name.as_ref().map_or_else(|| format!("{}", i + 1), |n| n.get_ref().clone());
        let path = |f: &str| format!("probe[{label}].{f}");
        let (kind, default_name) = match (&r.node, &r.segment) {
            (Some(node), None) => {
                if let Some(end) = &r.end {
                    return Err(src.error(
                        end.span(),
                        path("end"),
                        "`end` is only for a current probe on a segment",
                        "remove `end`, or probe `segment = ..` instead of `node = ..`",
                    ));
                }
                let id = topo.node(src, node, &path("node"))?;
                (ProbeKind::Voltage(id), node.get_ref().clone())
            }
            (None, Some(seg)) => {
                let id = topo.segment(src, seg, &path("segment"))?;
                let Some(end) = &r.end else {
                    return Err(src.error(
                        seg.span(),
                        path("end"),
                        "a current probe needs `end = \"from\"` or `end = \"to\"`",
                        "say at which end of the segment the current is measured",
                    ));
                };
                let e = match end.get_ref().as_str() {
                    "from" => End::From,
                    "to" => End::To,
                    other => {
                        return Err(src.error(
                            end.span(),
                            path("end"),
                            format!("unknown end \"{other}\""),
                            "use end = \"from\" or end = \"to\"",
                        ))
                    }
                };
                (ProbeKind::Current(id, e), format!("{} {} current", seg.get_ref(), end.get_ref()))
            }
            _ => {
                return Err(src.error(
                    p.span(),
                    format!("probe[{label}]"),
                    "a probe needs exactly one of `node` or `segment`",
                    "write node = \"plc\" for a voltage, or segment = \"..\" with end = \"from\"",
                ))
            }
        };
        let name = r.name.as_ref().map_or(default_name, |n| n.get_ref().clone());
        let (line, _) = src.line_column(p.span().start);
        if let Some(j) = out.iter().position(|q| q.name == name) {
            let span = r.name.as_ref().map_or(p.span(), |n| n.span());
            return Err(src.error(
                span,
                path("name"),
                format!("duplicate probe name \"{name}\" (first used on line {})", lines[j]),
                "give each probe a unique `name`",
            ));
        }
        lines.push(line);
        out.push(Probe { name, kind });
    }
    Ok(out)
}

/// `[verify]` tolerances over the defaults; `arrival` in samples or as a time.
pub fn tolerances(src: &Source, raw: Option<&Spanned<RawVerify>>, sample_rate: f64) -> Result<Tolerances, PlantError> {
    let mut t = Tolerances::default();
    let Some(raw) = raw else { return Ok(t) };
    let v = raw.get_ref();
    for (value, slot, name) in [
        (&v.max_error, &mut t.max_error, "max_error"),
        (&v.rms_error, &mut t.rms_error, "rms_error"),
        (&v.final_error, &mut t.final_error, "final_error"),
    ] {
        let Some(value) = value else { continue };
        let field = format!("verify.{name}");
        let x = non_negative(src, value, UnitKind::Fraction, &field, name)?;
        if x > 1.0 {
            return Err(src.error(
                value.span(),
                field,
                format!("{name} {} is more than 100 % of the drive step", written(value)),
                "tolerances are fractions of the step: write \"5 %\" or 0.05",
            ));
        }
        *slot = x;
    }
    if let Some(a) = &v.arrival {
        t.arrival_samples = arrival(src, a, sample_rate)?;
    }
    Ok(t)
}

/// `"1 sample"`, `"2 samples"` or a time such as `"5 ns"` (converted at the sample rate).
fn arrival(src: &Source, raw: &Raw, sample_rate: f64) -> Result<f64, PlantError> {
    let field = "verify.arrival";
    let bad = |message: String| src.error(raw.span(), field, message, "write e.g. arrival = \"1 sample\" or \"5 ns\"");
    let Value::String(s) = raw.get_ref() else {
        return Err(bad(format!("arrival needs a unit, got {}", written(raw))));
    };
    let t = s.trim();
    let samples = if let Some(n) = t.strip_suffix("samples").or_else(|| t.strip_suffix("sample")) {
        units::parse_quantity(n, UnitKind::Dimensionless).map_err(|e| bad(e.to_string()))?
    } else {
        units::parse_quantity(t, UnitKind::Time).map_err(|e| bad(e.to_string()))? * sample_rate
    };
    if samples >= 0.0 {
        Ok(samples)
    } else {
        Err(bad(format!("arrival tolerance must not be negative, got {}", written(raw))))
    }
}

/// `[[event]]` entries, sorted by time (stable, so equal times keep file order).
pub fn events(src: &Source, raw: &[Spanned<RawEvent>], topo: &Topology) -> Result<Vec<Event>, PlantError> {
    let mut out = Vec::with_capacity(raw.len());
    for (i, e) in raw.iter().enumerate() {
        let r = e.get_ref();
        let path = |f: &str| format!("event[{}].{f}", i + 1);
        let at = non_negative(src, &r.at, UnitKind::Time, &path("at"), "event time")?;
        let action = match (&r.node, &r.load, &r.segment, &r.break_at) {
            (Some(node), Some(l), None, None) => {
                let id = topo.node(src, node, &path("node"))?;
                EventAction::SetLoad(id, load(src, l, &path("load"))?)
            }
            (None, None, Some(seg), Some(b)) => {
                let id = topo.segment(src, seg, &path("segment"))?;
                let d = positive(src, b, UnitKind::Length, &path("break_at"), "break distance")?;
                let len = topo.segments[id].length;
                if d >= len {
                    return Err(src.error(
                        b.span(),
                        path("break_at"),
                        format!("break at {} is not inside segment \"{}\" ({len} m long)", written(b), seg.get_ref()),
                        "give a distance from the segment's `from` end, between 0 and its length",
                    ));
                }
                EventAction::Break { segment: id, distance: d }
            }
            _ => {
                return Err(src.error(
                    e.span(),
                    format!("event[{}]", i + 1),
                    "an event is either `node` + `load`, or `segment` + `break_at`",
                    "write e.g. node = \"tap3\", load = \"open\"  or  segment = \"a-b\", break_at = \"12 m\"",
                ))
            }
        };
        let (line, column) = src.line_column(e.span().start);
        out.push(Event { at, action, span: Span { line, column } });
    }
    out.sort_by(|a, b| a.at.total_cmp(&b.at));
    Ok(out)
}

//! Results for machines: `verify --json` and `inspect --json`. The schema is documented in
//! `docs/json-output.md`; its `schema` field names the version, bumped on any change that
//! renames or removes a field (new fields may appear without a bump).
use crate::analysis::Analysis;
use crate::compile::zc_enforce::Decision;
use crate::compile::{Compiled, CoreAction};
use crate::plant::{EventAction, Plant};
use crate::verify::Verification;
use serde_json::{json, Value};

/// Schema names and versions.
pub const VERIFY_SCHEMA: &str = "tidewire-verify/1";
pub const INSPECT_SCHEMA: &str = "tidewire-inspect/1";

/// A float as JSON: finite values as numbers, anything else as null (JSON has no inf/NaN).
fn num(x: f64) -> Value {
    if x.is_finite() {
        json!(x)
    } else {
        Value::Null
    }
}

fn opt(x: Option<f64>) -> Value {
    x.map_or(Value::Null, num)
}

/// The run's scheduled events, in plant-file order, each with the sample it acts before.
fn events(plant: &Plant, c: &Compiled, v: Option<&Verification>) -> Vec<Value> {
    plant
        .events
        .iter()
        .zip(c.events.iter().map(Some).chain(std::iter::repeat(None)))
        .map(|(e, ce)| {
            let (kind, target) = match &e.action {
                EventAction::SetLoad(n, _) => ("set-load", plant.nodes.get(*n).map(|n| n.name.clone())),
                EventAction::Break { segment, .. } => ("break", plant.segments.get(*segment).map(|s| s.name.clone())),
            };
            let sample = ce.map(|c| c.sample);
            let core_kind = ce.map(|c| match c.action {
                CoreAction::SetShunt(..) => "shunt",
                CoreAction::Break(_) => "break",
            });
            let mut o = json!({
                "kind": kind,
                "target": target,
                "time_s": num(e.at),
                "sample": sample,
                "core_action": core_kind,
                "junction": ce.map(|c| match c.action {
                    CoreAction::SetShunt(j, _) | CoreAction::Break(j) => j,
                }),
                "core_call": ce.map(|c| super::inspect::core_call(&c.action)),
            });
            if let Some(v) = v {
                // Whether the exact reference covers the run after this event (the verify
                // module states how far it compares; after that only the twin is compared).
                o["compared_with_exact_after"] = json!(sample.is_some_and(|s| s < v.exact_samples));
                // Core − exact figures from this event to the next (or the end), per probe,
                // where the verify module compared them.
                if let Some(f) = sample.and_then(|s| v.events.iter().find(|f| f.sample == s)) {
                    o["after"] = json!({
                        "compared_samples": f.compared,
                        "action": f.action,
                        "probes": f.probes.iter().map(|p| json!({
                            "name": p.name,
                            "unit": p.unit,
                            "max_error": num(p.max_error),
                            "rms_error": num(p.rms_error),
                            "pass_max": p.pass_max,
                            "pass_rms": p.pass_rms,
                        })).collect::<Vec<_>>(),
                    });
                }
            }
            o
        })
        .collect()
}

/// `verify --json`: the verdict, the figures of each probe and the events.
pub fn verify_json(plant: &Plant, c: &Compiled, v: &Verification, file: &str, pass: bool) -> Value {
    let t = &v.tolerances;
    let settles = plant.drive.settles_to_dc();
    let probes: Vec<Value> = v
        .probes
        .iter()
        .map(|p| {
            json!({
                "name": p.name,
                "unit": p.unit,
                "norm": num(p.norm),
                "compared_samples": v.exact_samples.min(v.samples),
                "max_error": num(p.max_error),
                "rms_error": num(p.rms_error),
                "max_error_fraction": num(p.max_error / p.norm),
                "rms_error_fraction": num(p.rms_error / p.norm),
                "arithmetic_error": num(p.arithmetic_error),
                "model_error": num(p.model_error),
                "zc_model_error": opt(p.zc_model_error),
                "arrival": {
                    "core_samples": opt(p.arrival_core),
                    "exact_samples": opt(p.arrival_exact),
                },
                "final_value": {
                    "checked": settles && p.final_check.judged(),
                    "against": p.final_check,
                    "core": num(p.final_core),
                    "expected": num(p.final_expected),
                    "error_fraction": num((p.final_core - p.final_expected) / p.norm),
                },
                "settling_s": { "to_1_percent": opt(p.settle_1), "to_5_percent": opt(p.settle_5) },
                "overshoot_fraction": num(p.overshoot),
                "undershoot_fraction": num(p.undershoot),
                "pass": {
                    "max_error": p.pass_max,
                    "rms_error": p.pass_rms,
                    "arrival": p.pass_arrival,
                    "final_value": if settles && p.final_check.judged() { json!(p.pass_final) } else { Value::Null },
                },
                "verdict": if super::verify_cmd::probe_pass(p, settles) { "pass" } else { "fail" },
            })
        })
        .collect();
    json!({
        "schema": VERIFY_SCHEMA,
        "verdict": if pass { "pass" } else { "fail" },
        "plant": plant.name,
        "file": file,
        "profile": c.profile.name(),
        "sample_period_s": num(c.dt),
        "samples": v.samples,
        "exact_samples": v.exact_samples,
        "drive_step": num(v.step),
        "drive_settles_to_dc": settles,
        "tolerances": {
            "max_error_fraction": num(t.max_error),
            "rms_error_fraction": num(t.rms_error),
            "final_error_fraction": num(t.final_error),
            "arrival_samples": num(t.arrival_samples),
        },
        "probes": probes,
        "events": events(plant, c, Some(v)),
        "working_point": v.hold.as_ref().map(|h| json!({
            "emf": num(h.emf),
            "held_samples": h.held,
            "watched_samples": h.watched,
            "limit_codes": h.limit,
            "outputs": h.outputs,
            "pass": h.pass(),
        })),
    })
}

/// `inspect --json`: per segment the model and its timing error, the fixed point, warnings.
pub fn inspect_json(plant: &Plant, c: &Compiled, a: &Analysis, file: &str) -> Value {
    let r = &c.report;
    let segments: Vec<Value> = r
        .segments
        .iter()
        .map(|t| {
            json!({
                "name": t.name,
                "cable": t.cable,
                "length_m": num(t.length),
                "z0_ohm": num(t.z0),
                "delay_exact_s": num(t.tau),
                "delay_samples": t.delay,
                "fraction_samples": t.fraction.map(|f| num(f.realised)),
                "timing_error_s": num(t.error_s),
                "timing_error_fraction": num(t.error_s / t.tau),
                "timing_error_at_edge_s": num(t.edge_error_s(c.dt)),
                "edge_hz": t.fraction.map(|f| num(f.edge_hz)),
                "magnitude_error": t.fraction.map(|f| num(f.magnitude_error)),
                "loop_resistance_ohm": num(t.r_total),
                "sections": t.sections,
                "resistance_dropped": t.r_dropped.is_some(),
                "resistance_dropped_why": t.r_dropped,
                "loss_fit_error_db": opt(t.loss_fit_db),
                "loss_at_0_4_fs_db": num(t.loss_edge_db),
                "dispersion_s": num(t.dispersion_s),
                "dispersion_samples": t.dispersion_samples,
                "model": t.model_key(),
                "model_error_fraction": num(t.model_error),
                "exceeds_tolerance": t.exceeds,
            })
        })
        .collect();
    let reflections: Vec<Value> =
        r.reflections.iter().map(|g| json!({ "node": g.node, "segment": g.segment, "gamma": num(g.gamma) })).collect();
    let reactive: Vec<Value> = r
        .reactive
        .iter()
        .map(|e| {
            json!({
                "node": e.node,
                "capacitance_f": num(e.capacitance),
                "resistance_ohm": num(e.resistance),
                "tau_s": num(e.tau),
                "error_fraction": num(e.error),
                "exceeds_tolerance": e.exceeds,
            })
        })
        .collect();
    let dc: Vec<Value> = a.dc.iter().map(|(n, v)| json!({ "node": n, "volts": num(*v) })).collect();
    let zc: Vec<Value> = r
        .zc
        .iter()
        .map(|z| {
            json!({
                "cable": z.cable,
                "z_inf_ohm": num(z.z_inf),
                "sections": z.sections.iter().map(|(r, tau)| json!({ "ohm": num(*r), "tau_s": num(*tau) })).collect::<Vec<_>>(),
                "band_hz": [num(z.band.0), num(z.band.1)],
                "zc_at_band_edges_ohm": [num(z.zc_edges.0), num(z.zc_edges.1)],
                "fit_error_fraction": num(z.max_rel_error),
                "run_by_core": r.zc_runs.iter().any(|run| run.compiled && r.zc.get(run.fit) == Some(z)),
            })
        })
        .collect();
    let zc_runs: Vec<Value> = r
        .zc_runs
        .iter()
        .map(|run| {
            let (e, reason) = match &run.decision {
                Decision::Network(e) => (Some(e), None),
                Decision::Refused { reason, best } => (best.as_ref(), Some(reason.clone())),
            };
            json!({
                "segment": plant.segments.get(run.segment).map(|x| x.name.clone()),
                "cable": r.zc.get(run.fit).map(|z| z.cable.clone()),
                "lines": run.lines,
                "network": reason.is_none(),
                "in_core_network": run.compiled,
                "refused_because": reason,
                "section_scales": e.map(|e| e.scales.iter().map(|x| num(*x)).collect::<Vec<_>>()),
                "z_inf_ohm": e.map(|e| num(e.z_inf)),
                "z_p_ohm": e.map(|e| num(f64::from(e.z_p_milliohm) / 1000.0)),
                "fit_error_fraction": e.map(|e| num(e.max_rel_error)),
                "constant_port_error_fraction": num(run.constant_error),
                "least_margin": e.map(|e| num(e.margin.0)),
                "least_margin_frequency_hz": e.map(|e| num(e.margin.1)),
            })
        })
        .collect();
    // The least margin over the networks the runs get.
    let least = r
        .zc_runs
        .iter()
        .filter_map(|run| match &run.decision {
            Decision::Network(e) => Some((e.margin.0, e.margin.1, run.lines.first().copied().unwrap_or(0))),
            Decision::Refused { .. } => None,
        })
        .min_by(|a, b| a.0.total_cmp(&b.0));
    json!({
        "schema": INSPECT_SCHEMA,
        "plant": plant.name,
        "file": file,
        "profile": c.profile.name(),
        "sample_rate_hz": num(1.0 / c.dt),
        "samples": c.samples,
        "segments": segments,
        "reflections": reflections,
        "reactive": reactive,
        "zc_fits": zc,
        "zc_runs": zc_runs,
        "zc_passivity_margin": least.map(|(m, f, line)| json!({ "margin": num(m), "frequency_hz": num(f), "line": line })),
        "judged_rise_s": num(r.judged_rise),
        "shortest_edge_s": opt(r.shortest_edge),
        "dc_point": dc,
        "fixed_point": {
            "volts_per_code": num(c.net.volts_per_code as f64),
            "io_shift": c.net.io_shift,
            "volts_per_lsb": num(c.volts_per_lsb()),
            "peak_wave_v": num(a.peak_wave),
            "wave_range_v": num(a.wave_range),
            "headroom": num(a.headroom),
            "max_impedance_error": num(a.max_impedance_error),
        },
        "storage": { "ports": r.ports, "junctions": r.junctions, "memory_waves": r.memory_waves },
        "events": events(plant, c, None),
        "notes": r.notes,
        "warnings": a.warnings,
    })
}

/// The JSON text as written to a file (pretty, with a final newline).
pub fn to_bytes(v: &Value) -> Vec<u8> {
    let mut b = serde_json::to_vec_pretty(v).unwrap_or_default();
    b.push(b'\n');
    b
}

//! `tidewire inspect`: what the compiled emulation will be, in the engineer's units.
use super::{load_and_prepare, Failure};
use crate::analysis::Analysis;
use crate::compile::zc_enforce::Decision;
use crate::compile::{Compiled, ProfileKind};
use crate::plant::Plant;
use std::fmt::Write as _;
use std::path::Path;

/// Drive EMF above which the report carries the high-voltage caution (the upper bound of
/// extra-low voltage, 50 V AC / 120 V DC, rounded down to one figure [practice]).
pub const CAUTION_VOLTS: f64 = 50.0;

/// The caution printed for plants with high-voltage drives.
pub const CAUTION: &str = "CAUTION: this plant models a high-voltage drive. tidewire only computes; a rig that \
connects to drive outputs, mains or other hazardous voltages must be designed, built and operated by qualified \
people under your local electrical codes and licensed practice (isolation, enclosures, interlocks, discharge). \
Never attach a low-voltage rig port directly to such a circuit.";

use crate::si::format as eng;

/// The report as text.
pub fn report_text(plant: &Plant, c: &Compiled, a: &Analysis, file: &str) -> String {
    let r = &c.report;
    let mut s = String::new();
    let _ = writeln!(s, "== {} ==  [{}]", plant.name, file);
    let _ = writeln!(
        s,
        "   profile {} | sample rate {} | sample {} | run {} samples ({})",
        c.profile.name(),
        eng(1.0 / c.dt, "Hz"),
        eng(c.dt, "s"),
        c.samples,
        eng(c.samples as f64 * c.dt, "s")
    );
    if a.peak_emf >= CAUTION_VOLTS {
        let _ = writeln!(s, "\n!! {CAUTION}");
    }
    for n in &r.notes {
        let _ = writeln!(s, "   note: {n}");
    }
    let _ = writeln!(
        s,
        "\n-- segments: model, delay on the sample grid, model error at a {} edge (!! = over the tolerance)",
        eng(r.judged_rise, "s")
    );
    let _ = writeln!(
        s,
        "   {:<18} {:<20} {:>9} {:>7} {:>11} {:>11} {:>22} {:>10} {:>4}  {:<22} {:>8}",
        "segment", "cable", "length", "Z0", "tau", "delay", "timing error", "R loop", "sec", "model", "error"
    );
    for t in &r.segments {
        let delay = match &t.fraction {
            Some(f) => format!("{}+{:.3}", t.delay, f.realised),
            None => t.delay.to_string(),
        };
        let lumped = t.model != crate::compile::SegmentModel::DelayLine;
        let timing = if lumped {
            format!("{:>22}", "(no line)")
        } else {
            format!("{:>12} ({:>+6.2} %)", eng(t.error_s, "s"), 100.0 * t.error_s / t.tau)
        };
        let _ = writeln!(
            s,
            "   {:<18} {:<20} {:>7.2} m {:>7.1} {:>11} {:>11} {} {:>8.3} Ω {:>4}  {:<22} {:>6.2} %{}{}",
            t.name,
            t.cable,
            t.length,
            t.z0,
            eng(t.tau, "s"),
            delay,
            timing,
            t.r_total,
            t.sections,
            t.model_name(),
            100.0 * t.model_error,
            if t.exceeds { " !!" } else { "" },
            t.r_dropped.filter(|_| !lumped).map(|why| format!("  (R dropped: {why})")).unwrap_or_default()
        );
    }
    if r.segments.iter().any(|t| t.model != crate::compile::SegmentModel::DelayLine) {
        let _ = writeln!(
            s,
            "   lumped: a segment under {} samples of delay is its capacitance C'·l at a node (a stub's end load moved to its tap, \
             the two nodes of a piece joined; its inductance and resistance neglected), or its inductance L'·l with its resistance \
             (a stub shorted at its end; a piece between two equal lines, marked series L); the error column says what that costs",
            crate::compile::LUMP_BELOW_SAMPLES
        );
    }
    if !r.reactive.is_empty() {
        let _ = writeln!(s, "\n-- capacitors at nodes (bilinear ports): error against the exact first-order response");
        for e in &r.reactive {
            let _ = writeln!(
                s,
                "   {:<24} {:>10} through {:>10}  tau {:>10} ({:.2} samples)  error {:>6.2} % of the node's step{}",
                e.node,
                eng(e.capacitance, "F"),
                eng(e.resistance, "Ω"),
                eng(e.tau, "s"),
                e.tau / c.dt,
                100.0 * e.error,
                if e.exceeds { " !!" } else { "" }
            );
        }
    }
    match r.shortest_edge {
        Some(edge) => {
            let _ = writeln!(
                s,
                "   shortest drive edge (10-90 %) this plant honours at {}: {} (every model error above within {:.2} %)",
                eng(1.0 / c.dt, "Hz"),
                eng(edge, "s"),
                100.0 * plant.tolerances.max_error
            );
        }
        None => {
            let _ = writeln!(
                s,
                "   no drive edge up to 10^7 samples keeps every model error above within {:.2} %",
                100.0 * plant.tolerances.max_error
            );
        }
    }
    if r.segments.iter().any(|t| t.fraction.is_some()) {
        let _ = writeln!(
            s,
            "\n-- fractional delays (model: delay line + fraction; first-order allpass on the arriving waves)"
        );
        for t in &r.segments {
            let Some(f) = &t.fraction else {
                let how = if t.delay == 0 { "no delay line" } else { "whole samples" };
                let _ = writeln!(s, "   {:<18} {} ({how})", t.name, t.model_name());
                continue;
            };
            let _ = writeln!(
                s,
                "   {:<18} fraction {:.4} sample(s): timing error {} at low frequency, {} at {} (drive bandwidth), magnitude error {:.1e}",
                t.name,
                f.wanted,
                eng(t.error_s, "s"),
                eng(t.edge_error_s(c.dt), "s"),
                eng(f.edge_hz, "Hz"),
                f.magnitude_error
            );
        }
    }
    if r.segments.iter().any(|t| t.loss_fit_db.is_some()) {
        let _ = writeln!(
            s,
            "\n-- frequency-dependent loss (filters in the lines, fitted over fs/10^4 .. 0.4 fs; !! = the fit error as an amplitude error exceeds the max-error tolerance)"
        );
        for t in r.segments.iter().filter(|t| t.loss_fit_db.is_some()) {
            let fit_db = t.loss_fit_db.unwrap_or(0.0);
            // A gain error of d dB is an amplitude error of 10^(d/20) − 1 [closed form].
            let over = 10f64.powf(fit_db.abs() / 20.0) - 1.0 > plant.tolerances.max_error;
            let _ = writeln!(
                s,
                "   {:<18} loss at 0.4 fs {:>7.2} dB   largest fit error {:.3} dB{}   in-band extra delay {} (+{} samples)",
                t.name,
                t.loss_edge_db,
                fit_db,
                if over { " !!" } else { "" },
                eng(t.dispersion_s, "s"),
                t.dispersion_samples
            );
        }
    }
    if !r.zc.is_empty() {
        let _ = writeln!(
            s,
            "\n-- characteristic impedance Zc(s) of lossy cables (without R_dc), fitted as Z_inf + parallel RC sections"
        );
        for z in &r.zc {
            let _ = writeln!(
                s,
                "   {:<18} |Zc| {:.1} Ω at {} .. {:.1} Ω at {}   Z_inf {:.2} Ω + {} sections   largest fit error {:.3} %",
                z.cable,
                z.zc_edges.0,
                eng(z.band.0, "Hz"),
                z.zc_edges.1,
                eng(z.band.1, "Hz"),
                z.z_inf,
                z.sections.len(),
                100.0 * z.max_rel_error
            );
        }
        let _ = writeln!(
            s,
            "   per cable run, the network after passivity enforcement (margin (L − P)/(L + P) >= {} on every line: docs/zc-model.md):",
            crate::compile::zc_enforce::SAFETY
        );
        for run in &r.zc_runs {
            let name = plant.segments.get(run.segment).map_or("?", |x| x.name.as_str());
            let lines = run.lines.len();
            match &run.decision {
                Decision::Network(e) => {
                    let _ = writeln!(
                        s,
                        "   segment {name:<12} Zc network on {lines} line(s): sections ×[{}], Z_p {:.3} Ω   Zc error {:.3} % (constant port {:.3} %)   least margin {:+.2e} at {}{}",
                        crate::compile::zc_enforce::scales_text(&e.scales),
                        f64::from(e.z_p_milliohm) / 1000.0,
                        100.0 * e.max_rel_error,
                        100.0 * run.constant_error,
                        e.margin.0,
                        eng(e.margin.1, "Hz"),
                        if run.compiled { "" } else { "   (not in the core's network yet)" }
                    );
                }
                Decision::Refused { reason, .. } => {
                    let _ = writeln!(s, "   segment {name:<12} no Zc network: {reason}");
                }
            }
        }
        if r.zc_runs.iter().any(|x| !x.compiled) {
            let _ = writeln!(
                s,
                "   (runs not in the core's network keep the constant Z0; the f64 twin and verify's \"with Zc(s)\" run the networks: docs/zc-model.md)"
            );
        }
    }
    let _ = writeln!(s, "\n-- reflection coefficient for a wave arriving at a node on a segment (resistive parts)");
    for g in &r.reflections {
        let _ = writeln!(s, "   {:<14} <- {:<18} Γ = {:+.4}", g.node, g.segment, g.gamma);
    }
    if !a.dc.is_empty() {
        let _ = writeln!(s, "\n-- DC operating point, drive at its final value");
        for (n, v) in &a.dc {
            let _ = writeln!(s, "   {:<14} {}", n, eng(*v, "V"));
        }
    }
    let _ = writeln!(s, "\n-- fixed point");
    let _ = writeln!(
        s,
        "   one I/O code = {}, waves carry {} more fraction bits (one wave LSB = {})",
        eng(c.net.volts_per_code as f64, "V"),
        c.net.io_shift,
        eng(c.volts_per_lsb(), "V")
    );
    let _ = writeln!(
        s,
        "   largest wave {} (f64 twin, this drive); wave range {}; headroom x{:.1}",
        eng(a.peak_wave, "V"),
        eng(a.wave_range, "V"),
        a.headroom
    );
    let _ = writeln!(
        s,
        "   largest line impedance error from weight quantization: {:.2e} (relative)",
        a.max_impedance_error
    );
    let worst = r
        .segments
        .iter()
        .filter(|t| t.model == crate::compile::SegmentModel::DelayLine)
        .map(|t| (t.error_s / t.tau).abs())
        .fold(0.0, f64::max);
    let _ = writeln!(s, "   largest delay quantization error: {:.3} % of a segment's delay", 100.0 * worst);
    let _ = writeln!(s, "\n-- storage and work per sample");
    let wide_kb = r.ram_bytes(ProfileKind::Wide) as f64 / 1024.0;
    let narrow_kb = r.ram_bytes(ProfileKind::Narrow) as f64 / 1024.0;
    let _ = writeln!(
        s,
        "   {} line ends (port updates per sample), {} junctions, {} waves of delay storage",
        r.ports, r.junctions, r.memory_waves
    );
    let _ = writeln!(s, "   RAM about {wide_kb:.1} KiB (wide) / {narrow_kb:.1} KiB (narrow), generic form");
    // The specialised form keeps its rings in three spans (no sample copies memory at the
    // window's wrap), so its delay memory is about three times the generic form's.
    match crate::emit::specialised_memory_waves(&c.network(), c.profile) {
        Some(w) => {
            let bytes = w.saturating_mul(c.profile.wave_bytes() as u64);
            let _ = writeln!(
                s,
                "   specialised form ({}): {w} waves of delay memory, {:.1} KiB",
                c.profile.name(),
                bytes as f64 / 1024.0
            );
        }
        None => {
            let _ =
                writeln!(s, "   specialised form: not available for this plant (`tidewire compile --rust` says why)");
        }
    }
    for b in crate::analysis::budget::budgets(r.ports, r.junctions, 1.0 / c.dt) {
        let _ = writeln!(s, "   {b}");
    }
    if !c.events.is_empty() {
        for b in crate::analysis::budget::event_budgets(r.ports) {
            let _ = writeln!(s, "   {b}");
        }
        events_text(&mut s, plant, c);
    }
    for w in &a.warnings {
        let _ = writeln!(s, "\n!! warning: {w}");
    }
    s
}

/// The plant's events as the firmware makes them: the sample each acts before and the call
/// on the solver (`PlantStep::set_shunt` / `set_broken`), with the junction number that the
/// image and the emitted Rust source use, which the plant file never names.
fn events_text(s: &mut String, plant: &Plant, c: &Compiled) {
    let _ = writeln!(
        s,
        "\n-- events: applied between two samples, before the sample named (junction numbers as in the image and `compile --rust`)"
    );
    for (e, ce) in plant.events.iter().zip(&c.events) {
        let what = match &e.action {
            crate::plant::EventAction::SetLoad(n, _) => {
                format!("node {}: new load", plant.nodes.get(*n).map_or("?", |n| n.name.as_str()))
            }
            crate::plant::EventAction::Break { segment, distance } => format!(
                "segment {} breaks {} from its from end",
                plant.segments.get(*segment).map_or("?", |s| s.name.as_str()),
                eng(*distance, "m")
            ),
        };
        let _ = writeln!(s, "   sample {:>8} ({}): {what:<52} {}", ce.sample, eng(e.at, "s"), core_call(&ce.action));
    }
}

/// The solver call that applies `action`, as firmware writes it.
pub(super) fn core_call(action: &crate::compile::CoreAction) -> String {
    match action {
        crate::compile::CoreAction::SetShunt(j, shunt) => format!("set_shunt({j}, Shunt::{shunt:?})"),
        crate::compile::CoreAction::Break(j) => format!("set_broken({j}, true)"),
    }
}

pub(super) fn run(path: &Path, json: Option<&Path>, profile: ProfileKind) -> Result<i32, Failure> {
    let named: Vec<(&str, &Path)> = json.map(|p| ("--json", p)).into_iter().collect();
    let batch = super::outputs::guard(path, &named)?;
    let (plant, c, a) = load_and_prepare(path, profile)?;
    let file = path.display().to_string();
    if let Some(p) = json {
        let doc = super::json::inspect_json(&plant, &c, &a, &file);
        crate::files::write_atomic(p, &super::json::to_bytes(&doc)).map_err(|e| super::io_failure(p, e))?;
    }
    let written = super::outputs::commit(batch)?;
    print!("{}", report_text(&plant, &c, &a, &file));
    for p in written {
        println!("wrote {}", p.display());
    }
    Ok(0)
}

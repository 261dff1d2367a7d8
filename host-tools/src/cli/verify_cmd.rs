//! `tidewire verify`: figures, pictures, verdict.
use super::compile_cmd::progress;
use super::simulate::probes_csv;
use super::window::Window;
use super::{io_failure, load_and_prepare, Failure};
use crate::compile::{Compiled, ProfileKind};
use crate::plant::Plant;
use crate::plot::{write_lattice_marked, write_waveforms_marked, EventMark, LatticeMap, Series, WaveformPlot};
use crate::verify::{lattice, verify, Traces, Verification};
use std::fmt::Write as _;
use std::ops::Range;
use std::path::Path;

fn ok(b: bool) -> &'static str {
    if b {
        "ok"
    } else {
        "FAIL"
    }
}

use crate::si::format as si;

/// A probe's verdict: the final-value check counts only when the drive settles to DC
/// (a periodic drive ends at some point of its period, not at a final value).
pub(crate) fn probe_pass(p: &crate::verify::ProbeFigures, settles: bool) -> bool {
    p.pass_max && p.pass_rms && p.pass_arrival && (p.pass_final || !settles)
}

/// The run's verdict (see [`probe_pass`]).
pub(crate) fn run_pass(plant: &Plant, v: &Verification) -> bool {
    v.probes.iter().all(|p| probe_pass(p, plant.drive.settles_to_dc())) && v.hold.as_ref().is_none_or(|h| h.pass())
}

/// The verdict as text.
pub fn verdict_text(plant: &Plant, c: &Compiled, v: &Verification) -> String {
    let t = &v.tolerances;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "== verify: {} ==  core ({}) against the exact reference and the f64 twin",
        plant.name,
        c.profile.name()
    );
    let _ = writeln!(
        s,
        "   drive step {}; {} samples; exact reference over the first {} (Laplace wrap bound {:.1e} of the step)",
        si(v.step, "V"),
        v.samples,
        v.exact_samples,
        v.wrap_bound
    );
    if v.exact_samples < v.samples {
        let _ = writeln!(
            s,
            "   the exact reference cannot follow this plant's events (two breaks of one segment): after the first one, only the twin is compared"
        );
    } else if !v.events.is_empty() {
        let _ = writeln!(
            s,
            "   scheduled events followed in the exact reference (compensation method): figures cover the whole run"
        );
    }
    let mut fails = 0;
    for p in &v.probes {
        let u = p.unit;
        let pct = |x: f64| 100.0 * x / p.norm;
        let _ = writeln!(s, "\n-- {} [{}]   (% of {})", p.name, u, si(p.norm, u));
        let _ = writeln!(
            s,
            "   error vs exact   max {} ({:.3} %), rms {} ({:.3} %)   limits {:.2} % / {:.2} %   {} / {}",
            si(p.max_error, u),
            pct(p.max_error),
            si(p.rms_error, u),
            pct(p.rms_error),
            100.0 * t.max_error,
            100.0 * t.rms_error,
            ok(p.pass_max),
            ok(p.pass_rms)
        );
        let _ = writeln!(
            s,
            "   split            arithmetic (core - twin) {}, model (twin - exact) {}",
            si(p.arithmetic_error, u),
            si(p.model_error, u)
        );
        if let Some(z) = p.zc_model_error {
            let _ = writeln!(
                s,
                "   with Zc(s)       model with the compiler's passivity-enforced Zc networks (twin - exact) {} ({:.3} %): this compile kept the constant port (docs/zc-model.md)",
                si(z, u),
                pct(z)
            );
        }
        let f = |x: Option<f64>| x.map_or("none".to_string(), |v| format!("{v:.2}"));
        let _ = writeln!(
            s,
            "   first edge       core {} samples, exact {} samples   limit {} samples   {}",
            f(p.arrival_core),
            f(p.arrival_exact),
            t.arrival_samples,
            ok(p.pass_arrival)
        );
        if p.final_check == crate::verify::FinalCheck::Unsettled {
            let _ = writeln!(
                s,
                "   final value      not judged: the exact reference is not yet within {:.2} % of its DC point at the end of the run (lengthen the duration to check it); core {}, exact {} ({:+.3} %)",
                100.0 * t.final_error,
                si(p.final_core, u),
                si(p.final_expected, u),
                pct(p.final_core - p.final_expected),
            );
        } else if p.final_check == crate::verify::FinalCheck::NonePeriodic {
            let _ = writeln!(
                s,
                "   final value      not checked: the drive is periodic (PWM) and never settles; core {}, exact {}",
                si(p.final_core, u),
                si(p.final_expected, u)
            );
        } else {
            let against = match p.final_check {
                crate::verify::FinalCheck::DcPoint => "DC point",
                crate::verify::FinalCheck::TwinEnd => "twin at the end",
                _ => "exact at the end",
            };
            let _ = writeln!(
                s,
                "   final value      core {}, {against} {} ({:+.3} %)   limit {:.2} %   {}",
                si(p.final_core, u),
                si(p.final_expected, u),
                pct(p.final_core - p.final_expected),
                100.0 * t.final_error,
                ok(p.pass_final)
            );
        }
        let st = |x: Option<f64>| x.map_or("not settled".to_string(), |v| si(v, "s"));
        let _ = writeln!(
            s,
            "   settling         to 1 %: {}, to 5 %: {} after the drive edge",
            st(p.settle_1),
            st(p.settle_5)
        );
        let _ =
            writeln!(s, "   overshoot        {:+.2} %, undershoot {:.2} %", 100.0 * p.overshoot, 100.0 * p.undershoot);
        if !probe_pass(p, plant.drive.settles_to_dc()) {
            fails += 1;
        }
    }
    for e in &v.events {
        let _ = writeln!(
            s,
            "\n-- event at {} (sample {}): {}; core vs exact over the next {} samples",
            si(e.at, "s"),
            e.sample,
            e.action,
            e.compared
        );
        for (p, f) in e.probes.iter().zip(&v.probes) {
            let _ = writeln!(
                s,
                "   {:<16} max {} ({:.3} %), rms {} ({:.3} %)   {} / {}",
                p.name,
                si(p.max_error, p.unit),
                100.0 * p.max_error / f.norm,
                si(p.rms_error, p.unit),
                100.0 * p.rms_error / f.norm,
                ok(p.pass_max),
                ok(p.pass_rms)
            );
            if !(p.pass_max && p.pass_rms) {
                fails += 1;
            }
        }
    }
    if let Some(h) = &v.hold {
        fails += hold_text(&mut s, c, h);
    }
    if fails == 0 {
        let _ = writeln!(s, "\n== PASS: {} probes within tolerance", v.probes.len());
    } else {
        let _ = writeln!(s, "\n== FAIL: {fails} figure group(s) outside tolerance (probes and after-event windows)");
    }
    s
}

/// The working-point check's lines; returns the number of outputs outside their band.
fn hold_text(s: &mut String, c: &Compiled, h: &crate::verify::hold::HoldFigures) -> usize {
    let _ = writeln!(
        s,
        "\n-- working point: drive held at {} for {} more samples; output codes over the last {}",
        si(h.emf, "V"),
        h.held,
        h.watched
    );
    for o in &h.outputs {
        let _ = writeln!(
            s,
            "   {:<16} codes {} .. {} (band {}, last {})   limit {}   {}",
            o.name,
            o.low,
            o.high,
            o.band,
            o.last,
            h.limit,
            ok(o.pass)
        );
    }
    if h.widest() > crate::verify::hold::FEW_CODES {
        let _ = writeln!(
            s,
            "   more than {} codes: the {} profile's rounding holds a limit cycle around this working point (its waves keep {} bits below the code)",
            crate::verify::hold::FEW_CODES,
            c.profile.name(),
            c.profile.io_shift()
        );
    }
    h.outputs.iter().filter(|o| !o.pass).count()
}

/// The events inside the run, as picture marks.
fn event_marks(v: &Verification) -> Vec<EventMark> {
    v.events
        .iter()
        .enumerate()
        .map(|(i, e)| EventMark { at: e.at, label: format!("event {}: {}", i + 1, e.action) })
        .collect()
}

/// `values[window]`, cut to what `values` holds.
fn cut<'v>(values: &'v [f64], window: &Range<usize>) -> &'v [f64] {
    let end = window.end.min(values.len());
    values.get(window.start.min(end)..end).unwrap_or(&[])
}

/// Write the waveform picture of the samples in `window`. Its error panels show core −
/// exact, the quantity of the verdict's "error vs exact"; when the window is part of the
/// run, each also gives that probe's whole-run peak (`v`), the figure the verdict quotes.
pub(crate) fn write_svg(
    path: &Path,
    c: &Compiled,
    v: &Verification,
    tr: &Traces,
    window: &Range<usize>,
) -> Result<(), Failure> {
    let shown = window.start..window.end.min(tr.exact_len);
    let partial = shown != (0..tr.exact_len);
    let marks = event_marks(v);
    let plots: Vec<WaveformPlot> = c
        .probe_names
        .iter()
        .enumerate()
        .map(|(k, (name, unit))| WaveformPlot {
            title: name,
            dt: c.dt,
            t0: shown.start as f64 * c.dt,
            unit,
            emulated: Series { label: "tidewire core", values: cut(&tr.core.recording.probes[k], &shown) },
            reference: Series { label: "exact reference", values: cut(&tr.exact[k], &shown) },
            extra: vec![],
            whole_run_peak: partial.then(|| v.probes.get(k).map_or(0.0, |p| p.max_error)),
        })
        .collect();
    write_waveforms_marked(path, &plots, &marks).map_err(|e| io_failure(path, e))
}

/// Write the lattice picture.
pub(crate) fn write_lattice_svg(
    path: &Path,
    plant: &Plant,
    c: &Compiled,
    lp: &lattice::Path,
    tr: &Traces,
    marks: &[EventMark],
    window: &Range<usize>,
) -> Result<(), Failure> {
    let (positions, values) = lattice::map(c, lp, &tr.core.recording.line_a);
    let names: Vec<(f64, &str)> = lp.boundaries.iter().map(|(x, n)| (*x, n.as_str())).collect();
    let title = format!("{}: voltage along the path (tidewire core)", plant.name);
    let end = window.end.min(values.len());
    let rows = values.get(window.start.min(end)..end).unwrap_or(&[]);
    let t0 = window.start as f64 * c.dt;
    let map = LatticeMap { title: &title, dt: c.dt, t0, positions: &positions, values: rows, boundaries: &names };
    write_lattice_marked(path, &map, marks).map_err(|e| io_failure(path, e))
}

/// Run verify and write the requested files; returns (verification, lattice path).
pub(crate) fn verify_and_write(
    plant: &Plant,
    c: &Compiled,
    file: &str,
    svg: Option<&Path>,
    lat: Option<&Path>,
    csv: Option<&Path>,
    window: Option<Window>,
) -> Result<Verification, Failure> {
    // The window is checked against the run before any work.
    let shown = match window {
        Some(w) => w.samples(c.dt, c.samples)?,
        None => 0..c.samples,
    };
    let lp = lattice::layout(plant, c);
    let record: Vec<u16> = match (&lp, lat) {
        (Some(p), Some(_)) => p.lines.iter().map(|l| l.0).collect(),
        _ => vec![],
    };
    let pb = progress(c.samples, "verify");
    let (mut v, tr) = verify(plant, file, c, &record, &|k| pb.set_position(k as u64))?;
    pb.finish_and_clear();
    v.hold_check(plant, file, c)?;
    if let Some(p) = svg {
        write_svg(p, c, &v, &tr, &shown)?;
    }
    if let (Some(p), Some(lp)) = (lat, &lp) {
        write_lattice_svg(p, plant, c, lp, &tr, &event_marks(&v), &shown)?;
    }
    if let Some(p) = csv {
        let bytes = probes_csv(
            &c.probe_names,
            c.dt,
            &[("core", &tr.core.recording.probes), ("twin", &tr.twin.probes), ("exact", &tr.exact)],
        )
        .map_err(|e| io_failure(p, e))?;
        crate::emit::write_atomic(p, &bytes).map_err(|e| io_failure(p, e))?;
    }
    Ok(v)
}

/// Where `verify` writes.
pub(super) struct VerifyOutputs<'a> {
    pub svg: Option<&'a Path>,
    pub lattice: Option<&'a Path>,
    pub csv: Option<&'a Path>,
    pub json: Option<&'a Path>,
    /// The part of the run the pictures show (default: all of it).
    pub window: Option<Window>,
}

/// Most samples `verify` compares: it holds the core, twin and exact traces of every probe
/// in memory, and the exact reference's cost grows with the run; checked before any work.
pub const MAX_VERIFY_SAMPLES: u64 = 10_000_000;

pub(super) fn run(
    path: &Path,
    out: VerifyOutputs<'_>,
    samples: Option<u64>,
    profile: ProfileKind,
) -> Result<i32, Failure> {
    let named: Vec<(&str, &Path)> =
        [("--svg", out.svg), ("--lattice", out.lattice), ("--csv", out.csv), ("--json", out.json)]
            .into_iter()
            .filter_map(|(k, p)| p.map(|p| (k, p)))
            .collect();
    let batch = super::outputs::guard(path, &named)?;
    if let Some(n) = samples {
        if n == 0 || n > MAX_VERIFY_SAMPLES {
            return Err(Failure {
                code: 2,
                message: format!(
                    "error: --samples {n}: verify compares from 1 to {MAX_VERIFY_SAMPLES} samples (it holds every \
                     trace in memory)\n  hint: use e.g. --samples {}, or `simulate` for longer runs (it streams)",
                    n.clamp(1, MAX_VERIFY_SAMPLES)
                ),
            });
        }
    }
    let (plant, mut c, _) = load_and_prepare(path, profile)?;
    if let Some(n) = samples {
        c.samples = n as usize;
    } else if c.samples as u64 > MAX_VERIFY_SAMPLES {
        return Err(Failure {
            code: 2,
            message: format!(
                "error: {}: the plant's duration is {} samples; verify compares at most {MAX_VERIFY_SAMPLES}\n  \
                 hint: pass --samples {MAX_VERIFY_SAMPLES} (or fewer), or shorten `duration`",
                path.display(),
                c.samples
            ),
        });
    }
    let file = path.display().to_string();
    let v = verify_and_write(&plant, &c, &file, out.svg, out.lattice, out.csv, out.window)?;
    let pass = run_pass(&plant, &v);
    if let Some(p) = out.json {
        let doc = super::json::verify_json(&plant, &c, &v, &file, pass);
        crate::files::write_atomic(p, &super::json::to_bytes(&doc)).map_err(|e| io_failure(p, e))?;
    }
    let written = super::outputs::commit(batch)?;
    print!("{}", verdict_text(&plant, &c, &v));
    for p in written {
        println!("wrote {}", p.display());
    }
    Ok(if pass { 0 } else { 1 })
}

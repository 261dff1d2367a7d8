//! `tidewire extract`: from a step response captured at a plant's driven port to a plant
//! file that has the same driving-point response.
//!
//! The steps, one module each: read and check the capture ([`capture`]); find the edge,
//! remove the offset and deconvolve the edge into the port's impulse response ([`edge`]);
//! peel the layers of the reflection response into an impedance profile ([`peel`]); merge
//! the profile into uniform segments ([`merge`]); identify the far end's load ([`load`]);
//! write the plant file ([`plant_out`]); run the plant back through the exact reference
//! and the core and compare with the capture ([`roundtrip`]).
pub mod capture;
pub mod denoise;
pub mod edge;
pub mod load;
pub mod merge;
pub mod peel;
pub mod plant_out;
pub mod plant_view;
pub mod refine;
pub mod roundtrip;
pub mod view;

pub use capture::{parse_capture, read_capture, Capture};

use crate::plant::{parse_plant, CableType, Plant, PlantError, Waveform, C0};
use load::{EndLoad, Tail};
use merge::Run;
use peel::Profile;
use roundtrip::{distance, exact_port, model_plant, Frame, RoundTrip};
use std::path::Path;

/// Most runs whose lines still move in the quick fit that compares candidate ends.
const MAX_LINES_IN_SHORT_FIT: usize = 6;

/// How to read the capture and build the plant.
#[derive(Debug, Clone, PartialEq)]
pub struct Options {
    /// Source resistance behind the EMF, ohm.
    pub rs: f64,
    /// EMF step, V.
    pub emf: f64,
    /// The cable the plant is made of: a preset (with its loss) or a lossless line of the
    /// given velocity factor; every run overrides the impedance.
    pub cable: CableType,
    /// Name of the preset, when `cable` is one.
    pub preset: Option<String>,
    /// 10–90 % rise of the EMF, s (None: measured on the capture's first edge).
    pub rise: Option<f64>,
    /// Merge tolerance, relative (0.03 = 3 %).
    pub tolerance: f64,
    /// Gaussian smoothing of the impulse response in samples (None: from the edge, and the
    /// noise taken out when there is any; Some: exactly this, and no noise handling).
    pub smooth: Option<f64>,
    /// Most Levenberg–Marquardt steps of the final fit (0: keep the peeled values).
    pub refine: usize,
}

/// Everything extraction found, and the plant it wrote.
#[derive(Debug, Clone, PartialEq)]
pub struct Extraction {
    pub edge: edge::Edge,
    /// Smoothing used, samples (σ).
    pub smooth: f64,
    pub profile: Profile,
    /// Uniform runs of the profile, all of them.
    pub runs: Vec<Run>,
    /// The runs kept as lines, and the load at their end.
    pub lines: Vec<Run>,
    pub load: EndLoad,
    /// The fit of the runs and the load to the whole capture.
    pub refined: refine::Refined,
    /// The plant file's text and the plant the project's loader reads from it.
    pub text: String,
    pub plant: Plant,
    pub roundtrip: RoundTrip,
}

/// A failure that is not the capture's fault (the reference or compiler refused).
fn internal(cap: &Capture, what: &str, e: String) -> PlantError {
    PlantError {
        file: cap.file.clone(),
        line: 0,
        column: 0,
        field: String::new(),
        message: format!("{what}: {e}"),
        hint: "report this with the capture".into(),
    }
}

/// The profile of `cap` (edge, impulse response, peeling), with loss compensation.
pub fn profile_of(cap: &Capture, opts: &Options) -> Result<(edge::Edge, f64, Profile), PlantError> {
    let edge = edge::find_edge(cap, opts.emf, opts.rise)?;
    // A slow edge carries nothing above its own bandwidth: smooth to its scale. Noise is
    // taken out before (total variation) and in (Wiener) the deconvolution instead.
    let by_rise = 0.3 * edge.rise / 0.8 / cap.dt;
    let smooth = opts.smooth.unwrap_or(by_rise);
    let profile = compensated(cap, opts, &edge, smooth)?;
    Ok((edge, smooth, profile))
}

/// Peel with `edge`, and divide out the loss drift when the cable is lossy.
fn compensated(cap: &Capture, opts: &Options, edge: &edge::Edge, smooth: f64) -> Result<Profile, PlantError> {
    let noisy = is_noisy(edge, opts);
    let quiet = if noisy {
        edge::Edge { volts: denoise::tv_denoise(&edge.volts, TV_WEIGHT * edge.noise), ..edge.clone() }
    } else {
        edge.clone()
    };
    let mut p = peel_capture(&quiet, opts, cap.dt, smooth, noisy);
    if opts.cable.r_per_m > 0.0 || opts.cable.loss.is_some() {
        let drift = loss_drift(cap, edge, opts, smooth, noisy)?;
        for (j, z) in p.z.iter_mut().enumerate() {
            if let Some(g) = drift.get(j) {
                *z /= g;
            }
        }
    }
    Ok(p)
}

/// Noise above this fraction of the step (rms of one sample) is taken out before peeling.
const NOISY: f64 = 5e-4;
/// The total-variation weight, in noise rms: a flat stretch of white noise keeps no false
/// step while its partial sums stay under λ, i.e. for about (6/2)² ≈ 9 samples at 2σ and
/// far longer in the typical case; echoes of a few % of the step and more survive.
const TV_WEIGHT: f64 = 6.0;

/// Whether the noise is taken out: only when the caller left the smoothing to the
/// capture (a computed response, as the plant views use, has no noise to take out).
fn is_noisy(edge: &edge::Edge, opts: &Options) -> bool {
    opts.smooth.is_none() && edge.noise >= NOISY * opts.emf.abs()
}

/// Peel the capture in `edge`. The port's own step is taken out of the impulse response
/// as the reflection against Rs is formed (r = 2h − δ); when `spread` (a noisy capture)
/// it is taken out as smoothed as the rest of h, so that the smoothing leaves no false
/// layers at the port for the noise to act on.
fn peel_capture(edge: &edge::Edge, opts: &Options, dt: f64, smooth: f64, spread: bool) -> Profile {
    let lead = (4.0 * smooth).ceil() as usize;
    let h = edge::impulse_response(edge, opts.emf, dt, smooth, lead);
    // The record ends before the response does: the last samples before the end carry the
    // truncation of the deconvolution; keep those the record fully covers.
    let keep = h.len().saturating_sub((edge.start / dt).ceil() as usize + 1 + lead);
    let mut r: Vec<f64> = h[..keep].iter().map(|x| 2.0 * x).collect();
    if spread {
        let g = edge::smoothing_kernel(edge.volts.len(), smooth, lead);
        for (x, gk) in r.iter_mut().zip(g) {
            *x -= gk;
        }
    } else if let Some(r0) = r.get_mut(lead) {
        *r0 -= 1.0;
    }
    peel::peel(&r, opts.rs, opts.cable.velocity * dt / 2.0, lead)
}

/// The profile a uniform, endless run of the lossy cable shows, relative to its impedance:
/// the loss makes a matched lossy line look like a rising impedance. Made with the exact
/// reference and removed from the capture's profile by division.
fn loss_drift(
    cap: &Capture,
    edge: &edge::Edge,
    opts: &Options,
    smooth: f64,
    spread: bool,
) -> Result<Vec<f64>, PlantError> {
    let n = edge.volts.len();
    let length = 1.1 * opts.cable.velocity * cap.dt / 2.0 * n as f64;
    let frame = frame(cap, opts, edge);
    let z0 = opts.cable.z0;
    let plant = model_plant(&frame, &[Run { start: 0.0, end: length, z: z0 }], EndLoad::Resistor(z0));
    let v = exact_port(&plant, n).map_err(|e| internal(cap, "the exact reference failed on the loss model", e))?;
    let e2 = edge::Edge { volts: v, ..edge.clone() };
    let p = peel_capture(&e2, opts, cap.dt, smooth, spread);
    Ok(p.z.iter().map(|z| z / z0).collect())
}

fn frame(cap: &Capture, opts: &Options, edge: &edge::Edge) -> Frame {
    Frame {
        cable: opts.cable.clone(),
        rs: opts.rs,
        emf: Waveform::Step { amplitude: opts.emf, delay: edge.start, rise: edge.rise },
        sample_rate: 1.0 / cap.dt,
        samples: cap.volts.len(),
    }
}

/// The velocity factor's cable: lossless, impedance set per run.
pub fn lossless_cable(velocity_factor: f64) -> CableType {
    CableType {
        name: "extracted".into(),
        z0: 50.0,
        velocity: velocity_factor * C0,
        r_per_m: 0.0,
        loss: None,
        source: "extract".into(),
    }
}

/// Extract a plant from `cap`; `how` are the comment lines the plant file starts with,
/// `out_name` names it in errors.
pub fn extract(cap: &Capture, opts: &Options, how: Vec<String>, out_name: &str) -> Result<Extraction, PlantError> {
    let (edge, smooth, profile) = profile_of(cap, opts)?;
    let layer = profile.layer;
    let persist = 3 + (2.0 * smooth).round() as usize;
    let runs = merge::merge(&profile.z, layer, profile.origin, opts.tolerance, persist);
    if runs.is_empty() {
        return Err(cap.error_at(
            edge.first,
            "the capture leaves no profile after the edge",
            "capture longer after the step",
        ));
    }
    let ending = load::effective_ending(&runs, profile.ending, layer, profile.origin);
    let (mut lines, _end) = load::lines_before_end(&runs, ending, layer, profile.origin);
    if lines.is_empty() {
        lines = vec![runs[0]];
    }
    let n = cap.volts.len();
    let tail_len = (n / 20).max(1);
    let tail = Tail {
        settled: edge.volts[n - tail_len..].iter().sum::<f64>() / tail_len as f64,
        emf: opts.emf,
        rs: opts.rs,
        r_per_m: opts.cable.r_per_m,
        s_per_m: 1.0 / opts.cable.velocity,
        dt: cap.dt,
        record: n as f64 * cap.dt,
    };
    let fr = frame(cap, opts, &edge);
    let target = &edge.volts;
    let cost = |lines: &[Run], load: EndLoad| -> Result<f64, PlantError> {
        let v = exact_port(&model_plant(&fr, lines, load), n)
            .map_err(|e| internal(cap, "the exact reference failed", e))?;
        Ok(distance(&v, target).1)
    };
    let mut best: Option<(Vec<Run>, EndLoad, f64)> = None;
    for (cand_lines, cand) in load::candidates(&runs, &lines, ending, &tail) {
        let z_last = cand_lines.last().map_or(opts.rs, |r| r.z);
        let fitted = match cand {
            EndLoad::Capacitor(c0) | EndLoad::ParallelRc { c: c0, .. } => {
                // ln C within a decade of the starting value, or between a tenth of a
                // sample and the whole record per Z of the last run.
                let (lo, hi) = if c0.is_finite() {
                    ((c0 / 10.0).ln(), (c0 * 10.0).ln())
                } else {
                    ((0.1 * cap.dt / z_last).ln(), (tail.record / z_last).ln())
                };
                let mut err = None;
                let make = |lc: f64| match cand {
                    EndLoad::ParallelRc { r, .. } => EndLoad::ParallelRc { r, c: lc.exp() },
                    _ => EndLoad::Capacitor(lc.exp()),
                };
                let lc = load::golden(lo, hi, 16, |lc| match cost(&cand_lines, make(lc)) {
                    Ok(e) => e,
                    Err(e) => {
                        err = Some(e);
                        f64::INFINITY
                    }
                });
                if let Some(e) = err {
                    return Err(e);
                }
                make(lc)
            }
            other => other,
        };
        // Each candidate gets a short fit of its own (the edge and the runs move with the
        // load; the runs only when few, to bound the time), then the best goes on to the
        // full fit.
        let short = refine::refine(
            &fr,
            &cand_lines,
            fitted,
            target,
            1.05 * layer,
            opts.refine.min(3),
            cand_lines.len() <= MAX_LINES_IN_SHORT_FIT,
        )
        .map_err(|e| internal(cap, "the exact reference failed while fitting", e))?;
        // What the noise cannot explain: the rms beyond the capture's own noise.
        let e = (short.rms_after.powi(2) - edge.noise.powi(2)).max(0.0).sqrt();
        // A later (more complex) candidate must be clearly better (10 %) to be kept.
        if best.as_ref().is_none_or(|b| e < 0.9 * b.2) {
            best = Some((cand_lines, fitted, e));
        }
    }
    let (lines, load) = match best {
        Some((l, ld, _)) if !l.is_empty() => (l, ld),
        _ => (lines, EndLoad::Open),
    };
    // The compiler needs every segment at least half a sample long: one layer.
    // Many runs (a branched plant's equivalent line) get fewer steps: each step costs a
    // reference run per parameter, and peeling has already placed them well.
    let steps = if lines.len() > MAX_LINES_IN_SHORT_FIT { opts.refine.min(3) } else { opts.refine };
    let refined = refine::refine(&fr, &lines, load, target, 1.05 * layer, steps, true)
        .map_err(|e| internal(cap, "the exact reference failed while fitting", e))?;
    let (tidied, tidy_load) = load::tidy(&refined.lines, refined.load, opts.tolerance / 2.0);
    let refined = if tidied.len() < refined.lines.len() || tidy_load != refined.load {
        let f = Frame {
            emf: Waveform::Step { amplitude: opts.emf, delay: refined.delay, rise: refined.rise },
            ..fr.clone()
        };
        refine::refine(&f, &tidied, tidy_load, target, 1.05 * layer, 4, true)
            .map_err(|e| internal(cap, "the exact reference failed while fitting", e))?
    } else {
        refined
    };
    // The refit after tidying can still drive an open end's resistor up: write it open.
    let (lines, load) = (refined.lines.clone(), load::open_if_huge(&refined.lines, refined.load));
    let header = plant_out::Header {
        name: &format!(
            "extracted from {}",
            Path::new(&cap.file).file_name().map_or(cap.file.clone(), |f| f.to_string_lossy().into_owned())
        ),
        how,
        sample_rate: 1.0 / cap.dt,
        duration: n as f64 * cap.dt,
        velocity_factor: opts.cable.velocity / C0,
        preset: opts.preset.as_deref(),
        rs: opts.rs,
        emf: opts.emf,
        rise: refined.rise,
        delay: refined.delay,
    };
    let text = plant_out::plant_text(&header, &lines, load);
    // The profile shown is peeled again with the fitted edge: the edge read off the
    // samples is only as good as a sampled ramp's corners.
    let fitted_edge = edge::Edge { start: refined.delay, rise: refined.rise, ..edge.clone() };
    let profile = compensated(cap, opts, &fitted_edge, smooth)?;
    let plant = parse_plant(&text, out_name, Path::new("."))?;
    let exact =
        exact_port(&plant, n).map_err(|e| internal(cap, "the exact reference failed on the extracted plant", e))?;
    let (m, r) = distance(&exact, target);
    let core = roundtrip::core_port(&plant, out_name, n).map(|v| {
        let (cm, cr) = distance(&v, target);
        (v, cm / opts.emf.abs(), cr / opts.emf.abs())
    });
    let roundtrip = RoundTrip { exact, exact_max: m / opts.emf.abs(), exact_rms: r / opts.emf.abs(), core };
    Ok(Extraction { edge, smooth, profile, runs, lines, load, refined, text, plant, roundtrip })
}

//! Refinement: the merged runs and the load, fitted to the capture as a whole.
//!
//! Peeling gives each run's impedance and boundaries from the first arrival of each echo;
//! noise and the band limit leave them slightly off, and a branched plant's equivalent
//! line is only approximately a few uniform runs. So the runs' ln Z and lengths and the
//! load's values are fitted to the whole capture by Levenberg–Marquardt least squares
//! (the project's one implementation, `compile::loss::levenberg_marquardt_with`: Jacobian
//! by forward differences, damping on the diagonal of JᵀJ), with the exact reference as
//! the model. The runs' count and order stay as peeling found them.

use super::load::EndLoad;
use super::merge::Run;
use super::roundtrip::{exact_port, model_plant, Frame};
use crate::compile::loss::levenberg_marquardt_with;
use crate::plant::Waveform;

/// Fitted runs and load, and the rms residual before and after, V.
#[derive(Debug, Clone, PartialEq)]
pub struct Refined {
    pub lines: Vec<Run>,
    pub load: EndLoad,
    /// The EMF step's start and 10–90 % rise, s (fitted too when the rise is not zero: a
    /// ramp's corners are hard to read on a sampled edge).
    pub delay: f64,
    pub rise: f64,
    pub rms_before: f64,
    pub rms_after: f64,
    pub iterations: usize,
}

/// Bounds that keep a fit step inside what the reference accepts: impedances and
/// resistances in ohm, capacitances in farad.
const Z_MIN: f64 = 1e-2;
const Z_MAX: f64 = 1e7;
const C_MIN: f64 = 1e-16;
const C_MAX: f64 = 1e-2;

fn pack(lines: &[Run], load: EndLoad) -> Vec<f64> {
    let mut p: Vec<f64> = Vec::new();
    for r in lines {
        p.push(r.z.ln());
        p.push(r.length());
    }
    match load {
        EndLoad::Resistor(r) => p.push(r.ln()),
        EndLoad::Capacitor(c) => p.push(c.ln()),
        EndLoad::ParallelRc { r, c } => {
            p.push(r.ln());
            p.push(c.ln());
        }
        EndLoad::Open | EndLoad::Short => {}
    }
    p
}

fn unpack(p: &[f64], count: usize, load: EndLoad, min_len: f64) -> (Vec<Run>, EndLoad) {
    let mut lines = Vec::with_capacity(count);
    let mut x = 0.0;
    for i in 0..count {
        let len = p[2 * i + 1].max(min_len);
        lines.push(Run { start: x, end: x + len, z: p[2 * i].exp().clamp(Z_MIN, Z_MAX) });
        x += len;
    }
    let rest = &p[2 * count..];
    let load = match load {
        EndLoad::Resistor(_) => EndLoad::Resistor(rest[0].exp().clamp(Z_MIN, Z_MAX)),
        EndLoad::Capacitor(_) => EndLoad::Capacitor(rest[0].exp().clamp(C_MIN, C_MAX)),
        EndLoad::ParallelRc { .. } => {
            EndLoad::ParallelRc { r: rest[0].exp().clamp(Z_MIN, Z_MAX), c: rest[1].exp().clamp(C_MIN, C_MAX) }
        }
        other => other,
    };
    (lines, load)
}

fn step_of(frame: &Frame) -> (f64, f64, f64) {
    match frame.emf {
        Waveform::Step { amplitude, delay, rise } => (amplitude, delay, rise),
        _ => (0.0, 0.0, 0.0),
    }
}

/// Fit `lines` and `load` to `target` (the capture without offset), at most `max_iter`
/// Levenberg–Marquardt steps. Lengths stay at least `min_len` m (the compiler's half sample).
/// With `fit_lines` false only the load and the edge move (a quick fit to compare ends).
pub fn refine(
    frame: &Frame,
    lines: &[Run],
    load: EndLoad,
    target: &[f64],
    min_len: f64,
    max_iter: usize,
    fit_lines: bool,
) -> Result<Refined, String> {
    let n = target.len();
    let count = lines.len();
    let (emf, delay0, rise0) = step_of(frame);
    let fit_edge = rise0 > 0.0;
    let edge_of = |p: &[f64]| -> (f64, f64) {
        if fit_edge {
            let e = &p[p.len() - 2..];
            (e[0].max(0.0), e[1].max(1e-3 / frame.sample_rate))
        } else {
            (delay0, rise0)
        }
    };
    let residual = |p: &[f64]| -> Result<Vec<f64>, String> {
        let (l, ld) = unpack(p, count, load, min_len);
        let (delay, rise) = edge_of(p);
        let f = Frame { emf: Waveform::Step { amplitude: emf, delay, rise }, ..frame.clone() };
        let v = exact_port(&model_plant(&f, &l, ld), n)?;
        Ok((0..n).map(|k| v.get(k).copied().unwrap_or(0.0) - target[k]).collect())
    };
    let mut p = pack(lines, load);
    if fit_edge {
        p.extend([delay0, rise0]);
    }
    let rms = |r: &[f64]| (r.iter().map(|e| e * e).sum::<f64>() / n as f64).sqrt();
    let rms_before = rms(&residual(&p)?);
    // Only the free parameters move: with `fit_lines` false the runs stay put.
    let first_free = if fit_lines { 0 } else { 2 * count };
    let full = |q: &[f64]| -> Vec<f64> {
        let mut all = p.clone();
        all[first_free..].copy_from_slice(q);
        all
    };
    let len = p.len();
    // Steps: 1e-4 in ln Z, ln R, ln C; 1 mm (or 0.1 % of it) in a length; a hundredth of
    // a sample in the edge's start and rise.
    let h_of = |j: usize, x: f64| -> f64 {
        let i = j + first_free;
        if fit_edge && i + 2 >= len {
            0.01 / frame.sample_rate
        } else if i < 2 * count && i % 2 == 1 {
            (1e-3 * x).max(1e-3)
        } else {
            1e-4
        }
    };
    let iterations = if first_free < len {
        let (q, taken) =
            levenberg_marquardt_with(&|q: &[f64]| residual(&full(q)), p[first_free..].to_vec(), max_iter, &h_of)?;
        p = full(&q);
        taken
    } else {
        0
    };
    let r = residual(&p)?;
    let (delay, rise) = edge_of(&p);
    let end = if fit_edge { p.len() - 2 } else { p.len() };
    let (lines, load) = unpack(&p[..end], count, load, min_len);
    Ok(Refined { lines, load, delay, rise, rms_before, rms_after: rms(&r), iterations })
}

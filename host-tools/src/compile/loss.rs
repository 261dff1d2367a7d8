//! Loss filter design: the frequency-dependent part of a cable's propagation, fitted with a
//! cascade of first-order attenuating shelves that the core runs inside the line.
//!
//! Target: H(f) = exp(−(γ(j2πf) − j2πf/v)·ℓ) for the cable without its DC resistance (the
//! compiler lumps that as series resistors), γ = sqrt(Z·Y) with the skin-effect and
//! dielectric terms of the exact reference (`reference::line`). The pure delay ℓ/v stays in
//! the delay line. The causal loss terms are minimum-phase, so a minimum-phase fit of the
//! magnitude also carries the dispersion.
//!
//! Model: section k is H_k(z) = g_k(1 − b_k z⁻¹)/(1 − a_k z⁻¹), g_k = (1 − a_k)/(1 − b_k),
//! 0 <= b_k < a_k < 1: unity gain at DC, monotone attenuation up to Nyquist, so |H| <= 1
//! everywhere. The pole and zero frequencies are fitted to the target's dB attenuation over
//! [fs/10⁴, 0.4·fs] (log-spaced), then quantized exactly as the core does and
//! checked again. The fit is Levenberg–Marquardt on the dB residuals.
use crate::plant::CableType;
use crate::reference::line::{series_impedance, shunt_admittance};
use num_complex::Complex64;
use std::f64::consts::PI;
use tidewire_core::{LineLoss, MAX_LOSS_SECTIONS};

/// A designed loss filter for one line, with its fit error.
#[derive(Debug, Clone, PartialEq)]
pub struct LossDesign {
    pub loss: LineLoss,
    /// Largest |fitted − target| attenuation over the band, dB (quantized coefficients).
    pub max_error_db: f64,
    /// Target attenuation at the top of the band, dB.
    pub edge_loss_db: f64,
    /// Largest |H| of the quantized filter over the whole band up to Nyquist (<= 1).
    pub peak_gain: f64,
    /// Phase delay of the cable beyond length/v that the filter does not carry, in samples
    /// (median over 0.01·fs .. 0.2·fs): the lossy dielectric and the conductors' internal
    /// inductance slow the waves in band. The compiler adds it, rounded, to the line's delay.
    pub extra_delay: f64,
}

/// Phase (rad) of the target exp(−(γ − j2πf/v)·ℓ) at f, without R_dc.
fn target_phase(cable: &CableType, length: f64, f: f64) -> f64 {
    let mut c = cable.clone();
    c.r_per_m = 0.0;
    let s = Complex64::new(0.0, 2.0 * PI * f);
    let gamma = (series_impedance(&c, s) * shunt_admittance(&c, s)).sqrt();
    -(gamma.im - 2.0 * PI * f / c.velocity) * length
}

/// Below this target attenuation at the band edge no filter is worth running, dB.
pub const NEGLIGIBLE_DB: f64 = 0.01;

fn band(fs: f64) -> Vec<f64> {
    let (lo, hi) = (fs * 1e-4, 0.4 * fs);
    (0..64).map(|i| lo * (hi / lo).powf(i as f64 / 63.0)).collect()
}

/// Whether `length` metres of `cable` at `fs` get a loss filter: the same test [`design`]
/// starts with, without the fit (for sizing a network before any fit runs).
pub fn gets_filter(cable: &CableType, length: f64, fs: f64) -> bool {
    cable.loss.is_some() && band(fs).last().is_some_and(|f| target_db(cable, length, *f) >= NEGLIGIBLE_DB)
}

/// Target attenuation (dB, positive) of `length` metres of `cable` at `f`, without R_dc.
pub fn target_db(cable: &CableType, length: f64, f: f64) -> f64 {
    let mut c = cable.clone();
    c.r_per_m = 0.0;
    let s = Complex64::new(0.0, 2.0 * PI * f);
    let gamma = (series_impedance(&c, s) * shunt_admittance(&c, s)).sqrt();
    // |exp(−γℓ)| = exp(−Re γ·ℓ)
    20.0 / std::f64::consts::LN_10 * gamma.re * length
}

/// Attenuation (dB) of shelves (a_k, b_k) at f for sample rate fs.
pub fn model_db(sections: &[(f64, f64)], f: f64, fs: f64) -> f64 {
    let z1 = Complex64::from_polar(1.0, -2.0 * PI * f / fs);
    sections
        .iter()
        .map(|&(a, b)| {
            let g = (1.0 - a) / (1.0 - b);
            let h = g * (1.0 - b * z1) / (1.0 - a * z1);
            -20.0 * h.norm().log10()
        })
        .sum()
}

/// Levenberg–Marquardt on residuals r(x), with a forward-difference Jacobian.
fn levenberg_marquardt(r: &dyn Fn(&[f64]) -> Vec<f64>, x: Vec<f64>, iters: usize) -> Vec<f64> {
    let ok = |v: &[f64]| -> Result<Vec<f64>, std::convert::Infallible> { Ok(r(v)) };
    match levenberg_marquardt_with(&ok, x, iters, &|_, xj| 1e-6 * xj.abs().max(1.0)) {
        Ok((x, _)) => x,
        Err(never) => match never {},
    }
}

/// Residuals of a fit at a point, or why they could not be computed.
pub type Residuals<'a, E> = dyn Fn(&[f64]) -> Result<Vec<f64>, E> + 'a;

/// Levenberg–Marquardt on residuals r(x) that may fail, with a forward-difference
/// Jacobian of step `h_of(j, x_j)` for parameter j; at most `iters` steps, damping
/// λ·(1 + JᵀJ_jj) on the diagonal. A failure at the current point is returned; a trial
/// step that fails counts as a step that did not improve. Returns x and the steps taken.
/// Shared with the extraction's fit (`extract/refine.rs`).
pub fn levenberg_marquardt_with<E>(
    r: &Residuals<'_, E>,
    mut x: Vec<f64>,
    iters: usize,
    h_of: &dyn Fn(usize, f64) -> f64,
) -> Result<(Vec<f64>, usize), E> {
    use nalgebra::{DMatrix, DVector};
    let n = x.len();
    let cost = |v: &[f64]| v.iter().map(|e| e * e).sum::<f64>();
    let mut res = r(&x)?;
    let mut c = cost(&res);
    let mut lambda = 1e-3;
    let mut taken = 0;
    for _ in 0..iters {
        let m = res.len();
        let mut jac = DMatrix::<f64>::zeros(m, n);
        for j in 0..n {
            let h = h_of(j, x[j]);
            let mut xp = x.clone();
            xp[j] += h;
            let rp = r(&xp)?;
            for i in 0..m {
                jac[(i, j)] = (rp[i] - res[i]) / h;
            }
        }
        let rv = DVector::from_vec(res.clone());
        let jt = jac.transpose();
        let g = &jt * &rv;
        let jtj = &jt * &jac;
        let mut improved = false;
        for _ in 0..12 {
            let mut a = jtj.clone();
            for k in 0..n {
                a[(k, k)] += lambda * (1.0 + jtj[(k, k)]);
            }
            let Some(step) = a.lu().solve(&(-&g)) else {
                lambda *= 10.0;
                continue;
            };
            let xn: Vec<f64> = x.iter().zip(step.iter()).map(|(a, b)| a + b).collect();
            let Ok(rn) = r(&xn) else {
                lambda *= 10.0;
                continue;
            };
            let cn = cost(&rn);
            if cn.is_finite() && cn < c {
                x = xn;
                res = rn;
                c = cn;
                lambda = (lambda * 0.3).max(1e-12);
                improved = true;
                break;
            }
            lambda *= 10.0;
        }
        if !improved {
            break;
        }
        taken += 1;
    }
    Ok((x, taken))
}

fn shelves(x: &[f64], fs: f64) -> Vec<(f64, f64)> {
    x.chunks(2)
        .map(|p| {
            let fp = p[0].exp().clamp(1e-9 * fs, 0.49 * fs);
            let a = (-2.0 * PI * fp / fs).exp();
            let t = 1.0 / (1.0 + (-p[1]).exp());
            (a, a - (a + 0.99) * t.clamp(1e-9, 1.0))
        })
        .collect()
}

/// The core's quantization of a designed filter at `frac` coefficient bits, as
/// (a, g, gb) fractions of one per section: the core's own
/// `tidewire_core::quantize::loss_section`.
pub fn quantized(loss: &LineLoss, frac: u32) -> Vec<(f64, f64, f64)> {
    let one = (1u64 << frac) as f64;
    (0..loss.sections as usize)
        .map(|k| {
            // The designer only emits attenuating shelves, which the quantization accepts; a
            // refused section would be refused again by the core's check, so pass-through here.
            let (a, g, gb) = tidewire_core::quantize::loss_section(loss.poles[k] as i64, loss.zeros[k] as i64, frac)
                .unwrap_or((0, 1 << frac, 0));
            (a as f64 / one, g as f64 / one, gb as f64 / one)
        })
        .collect()
}

/// |H| of the quantized filter at f: Π |g − gb·z⁻¹| / |1 − a·z⁻¹|.
pub fn quantized_gain(q: &[(f64, f64, f64)], f: f64, fs: f64) -> f64 {
    let z1 = Complex64::from_polar(1.0, -2.0 * PI * f / fs);
    q.iter().map(|&(a, g, gb)| ((g - gb * z1) / (1.0 - a * z1)).norm()).product()
}

/// Largest attenuation error, dB at the band edge, that designing a line's filter for a
/// nearby grid length instead of its own length may add (half a grid step of the cable's
/// loss). Well under the fit's own error (0.1 dB over 100 m of Category 5e), so that the
/// fit runs once per cable type and grid length, not once per line.
pub const GRID_DB: f64 = 0.005;

/// Length grid of the loss fits of `cable` at `fs`: the step, metres, over which the
/// target attenuation at the band edge (0.4·fs) changes by 2·[`GRID_DB`]. `None` for a
/// cable without loss. A line of length ℓ gets the filter designed for
/// ℓ_g = round(ℓ/step)·step: |α(f)·(ℓ − ℓ_g)| <= GRID_DB at the edge, less below it
/// (the attenuation α(f)·ℓ in dB is linear in the length and grows with f).
pub fn grid_step(cable: &CableType, fs: f64) -> Option<f64> {
    cable.loss?;
    let per_m = target_db(cable, 1.0, 0.4 * fs);
    (per_m.is_finite() && per_m > 0.0).then(|| 2.0 * GRID_DB / per_m)
}

impl LossDesign {
    /// This design used on `length` metres of `cable` (it was fitted for a nearby grid
    /// length): the fit error and the edge attenuation against that length's own target.
    pub fn measured_on(mut self, cable: &CableType, length: f64, fs: f64, frac: u32) -> LossDesign {
        let freqs = band(fs);
        let qz = quantized(&self.loss, frac);
        self.max_error_db = freqs
            .iter()
            .map(|f| (-20.0 * quantized_gain(&qz, *f, fs).log10() - target_db(cable, length, *f)).abs())
            .fold(0.0, f64::max);
        self.edge_loss_db = freqs.last().map_or(0.0, |f| target_db(cable, length, *f));
        self
    }
}

std::thread_local! {
    /// Loss fits run on this thread (see [`fits_run_on_this_thread`]).
    static FITS_RUN: std::cell::Cell<usize> = const { std::cell::Cell::new(0) };
}

/// How many loss fits [`design`] has run on the calling thread: lets a test show that a
/// plant refused for its size ran none (compiling runs them on the caller's thread).
pub fn fits_run_on_this_thread() -> usize {
    FITS_RUN.with(|n| n.get())
}

/// Design the loss filter of line `line`, `length` metres of `cable`, at sample rate `fs`
/// for a profile with `frac` coefficient bits. `None` if the loss is negligible.
pub fn design(cable: &CableType, length: f64, fs: f64, line: u16, frac: u32) -> Option<LossDesign> {
    cable.loss?;
    let freqs = band(fs);
    let target: Vec<f64> = freqs.iter().map(|f| target_db(cable, length, *f)).collect();
    let edge = *target.last()?;
    if edge < NEGLIGIBLE_DB {
        return None;
    }
    FITS_RUN.with(|k| k.set(k.get() + 1));
    let n = MAX_LOSS_SECTIONS;
    let (lo, hi) = (freqs[0], freqs[freqs.len() - 1]);
    let residuals = |x: &[f64]| -> Vec<f64> {
        let sh = shelves(x, fs);
        freqs.iter().zip(&target).map(|(f, t)| model_db(&sh, *f, fs) - t).collect()
    };
    // Starts: poles log-spaced over the band; zeros placed so that each shelf's step matches
    // the target's local slope over its share of the band (a staircase along the curve), or
    // close to their poles; the best fit of the starts wins.
    let ratio = (hi / lo).powf(1.0 / n as f64);
    let slope_start: Vec<f64> = (0..n)
        .flat_map(|k| {
            let f0 = lo * ratio.powi(k as i32);
            let f1 = f0 * ratio;
            let step_db = (target_db(cable, length, f1) - target_db(cable, length, f0)).max(1e-4);
            let fz = (f0 * 10f64.powf(step_db / 20.0)).min(0.45 * fs);
            let a = (-2.0 * PI * f0 / fs).exp();
            let b = (-2.0 * PI * fz / fs).exp().min(a - 1e-9);
            // invert b = a − (a + 0.99)·t
            let t = ((a - b) / (a + 0.99)).clamp(1e-6, 1.0 - 1e-6);
            [f0.ln(), (t / (1.0 - t)).ln()]
        })
        .collect();
    let near_start: Vec<f64> = (0..n).flat_map(|k| [(lo * ratio.powf(k as f64 + 0.5)).ln(), -4.0]).collect();
    let cost = |x: &[f64]| residuals(x).iter().map(|e| e * e).sum::<f64>();
    let x = [slope_start, near_start]
        .into_iter()
        .map(|x0| levenberg_marquardt(&residuals, x0, 300))
        .min_by(|a, b| cost(a).total_cmp(&cost(b)))
        .unwrap_or_default();
    let sh = shelves(&x, fs);
    let mut loss = LineLoss {
        line,
        sections: n as u8,
        poles: [0; MAX_LOSS_SECTIONS],
        zeros: [0; MAX_LOSS_SECTIONS],
        allpass: None,
        zc: None,
    };
    for (k, (a, b)) in sh.iter().enumerate() {
        let q = (1u64 << 30) as f64;
        let step = 1i64 << (30 - frac);
        // The core rounds the pole to `frac` bits (`quantize::loss_section`): at least one
        // LSB there, so that it stays a pole (a > 0). The zero only has to stay below the
        // pole in Q30: the quantization derives the zero from the shelf depth and keeps it
        // at or below the quantized pole whatever the width.
        let pole = ((a * q).floor() as i64).clamp(step, (1 << 30) - 1);
        let zero = ((b * q).floor() as i64).clamp(-(1 << 30) + 1, pole - 1);
        loss.poles[k] = pole as u32;
        loss.zeros[k] = zero as i32;
    }
    let qz = quantized(&loss, frac);
    let max_error_db = freqs
        .iter()
        .zip(&target)
        .map(|(f, t)| (-20.0 * quantized_gain(&qz, *f, fs).log10() - t).abs())
        .fold(0.0, f64::max);
    let peak_gain = (0..=400).map(|i| quantized_gain(&qz, 0.5 * fs * i as f64 / 400.0, fs)).fold(0.0, f64::max);
    let mut lag: Vec<f64> = (0..32)
        .map(|i| {
            let f = 0.01 * fs * (20f64).powf(i as f64 / 31.0);
            let z1 = Complex64::from_polar(1.0, -2.0 * PI * f / fs);
            let filt: f64 = qz.iter().map(|&(a, g, gb)| ((g - gb * z1) / (1.0 - a * z1)).arg()).sum();
            (filt - target_phase(cable, length, f)) / (2.0 * PI * f) * fs
        })
        .collect();
    lag.sort_by(f64::total_cmp);
    let extra_delay = lag[lag.len() / 2];
    Some(LossDesign { loss, max_error_db, edge_loss_db: edge, peak_gain, extra_delay })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quantized_shelves_never_gain() {
        let loss = LineLoss {
            line: 0,
            sections: 2,
            poles: [900_000_000, 1_000_000_000, 0, 0, 0, 0],
            zeros: [-500_000_000, 999_000_000, 0, 0, 0, 0],
            allpass: None,
            zc: None,
        };
        for frac in [14, 30] {
            let q = quantized(&loss, frac);
            for i in 0..=100 {
                assert!(quantized_gain(&q, 0.5 * i as f64 / 100.0, 1.0) <= 1.0 + 1e-12);
            }
        }
    }

    #[test]
    fn quantized_shelves_are_dc_exact_and_fall_from_one() {
        // Poles from a fraction of an LSB to many LSB below one at 14 bits (where the old
        // rule lost about 10 % of DC gain per section), and across the unit interval; zeros
        // from just below the pole to −0.9. At 14 and 30 bits: g − gb = one − a in integers
        // (DC gain exactly 1), and |H| never rises with frequency, so it stays <= H(1) = 1.
        let step14 = 1i64 << 16;
        let mut poles: Vec<i64> = [1, 2, 3, 5, 11, 40, 300].iter().map(|k| (1 << 30) - k * step14 / 2).collect();
        poles.extend([(1 << 30) - 1, 1_000_000_000, 600_000_000, 50_000_000, step14]);
        for pole in poles {
            for zero in [pole - 1, pole - 1000, pole - step14, pole - 7 * step14, pole / 2, 0, -900_000_000] {
                for frac in [14u32, 30] {
                    let Some((a, g, gb)) = tidewire_core::quantize::loss_section(pole, zero, frac) else {
                        panic!("pole {pole} zero {zero} at {frac} bits refused");
                    };
                    let one = 1i64 << frac;
                    assert_eq!(g - gb, one - a, "pole {pole} zero {zero} at {frac} bits: not DC-exact");
                    assert!(a < one && g > 0 && gb <= a, "pole {pole} zero {zero}: ({a}, {g}, {gb})");
                    let q = [(a as f64 / one as f64, g as f64 / one as f64, gb as f64 / one as f64)];
                    let gains: Vec<f64> = (0..=200).map(|i| quantized_gain(&q, 0.5 * i as f64 / 200.0, 1.0)).collect();
                    assert!(
                        (gains[0] - 1.0).abs() < 1e-9,
                        "pole {pole} zero {zero} at {frac} bits: H(1) = {}",
                        gains[0]
                    );
                    assert!(
                        gains.windows(2).all(|w| w[1] <= w[0] + 1e-12),
                        "pole {pole} zero {zero} at {frac} bits: |H| rises"
                    );
                }
            }
        }
    }
}

#[cfg(test)]
mod fit_tests {
    use super::*;

    #[test]
    fn cat5e_loss_fits_within_a_tenth_of_a_db_and_never_gains() {
        // 100 m of the Cat 5e preset (loss fitted to the TIA-568 insertion-loss formula
        // [memory for the formula]) at 250 MHz: the filter follows the cable's exact
        // attenuation within 0.1 dB over fs/10^4 .. 0.4 fs, and its quantized gain stays
        // at or below 1 up to Nyquist, in both profiles. The narrow profile's 14-bit
        // coefficients place the lowest poles (1 − 6e-5, one LSB) only coarsely, but the
        // DC-exact quantization keeps each section's DC and high-frequency gains, so only
        // the corners move (it was held to 1.5 dB before that rule); `inspect` reports the
        // figure for each plant.
        let c = crate::plant::presets::find("cat5e").unwrap();
        for (frac, limit) in [(14, 0.1), (30, 0.1)] {
            let d = design(&c, 100.0, 250e6, 0, frac).unwrap();
            eprintln!("frac {frac}: fit error {} dB", d.max_error_db);
            assert!(d.max_error_db < limit, "frac {frac}: fit error {} dB", d.max_error_db);
            assert!(d.peak_gain <= 1.0 + 1e-12, "frac {frac}: gain {}", d.peak_gain);
            assert!(d.edge_loss_db > 20.0 && d.edge_loss_db < 23.0, "22 dB at 100 MHz: {}", d.edge_loss_db);
        }
        // Designed for a grid length and used on a line half a grid step longer, the fit
        // error against the line's own target grows by at most GRID_DB (the attenuation in
        // dB is linear in length and largest at the band edge [closed form]).
        let step = grid_step(&c, 250e6).unwrap();
        let d = design(&c, 100.0, 250e6, 0, 30).unwrap();
        let used = d.clone().measured_on(&c, 100.0 + 0.5 * step, 250e6, 30);
        assert!(used.max_error_db <= d.max_error_db + GRID_DB + 1e-9, "{} vs {}", used.max_error_db, d.max_error_db);
        // The figures are the line's own: its edge loss is GRID_DB above the grid length's.
        assert!((used.edge_loss_db - d.edge_loss_db - GRID_DB).abs() < 1e-9, "{}", used.edge_loss_db);
        // A lossless cable gets no filter.
        let mut lossless = c.clone();
        lossless.loss = None;
        assert!(design(&lossless, 100.0, 250e6, 0, 30).is_none());
    }
}

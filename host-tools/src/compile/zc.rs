//! The characteristic impedance Zc(s) of a lossy cable, fitted with a low-order rational
//! function that a network of resistors and capacitors realises passively.
//!
//! Target: Zc(s) = sqrt(Z(s)/Y(s)) of the cable *without its DC resistance*, the same line
//! the loss filter (`loss.rs`) models: the compiler lumps R_dc in series junctions along the
//! segment, which already gives the ladder its low-frequency rise, and the skin effect
//! (R_skin(s) = 2·Z0·k_c·sqrt(s/π)) and the lossy dielectric are what a constant port
//! impedance misses. Zc rises above its high-frequency value as the frequency falls, slowly
//! (the skin term grows as s^(−1/2) against sL'), so a 100 m Category 5e pair looks about
//! 25 % above 100 ohm a microsecond after an edge.
//!
//! Model (Foster form, J. Marti 1982): Zc(s) ≈ Z_inf + Σ_i R_i/(1 + s·τ_i), τ_i = R_i·C_i,
//! every R_i, C_i > 0 (a resistor in series with parallel RC sections: positive real, so
//! passively realisable). The parameters are fitted in their logarithms (so they stay
//! positive) by Levenberg–Marquardt on the complex relative error, evaluated at the
//! bilinear-transform frequency s = (2/T)·j·tan(ωT/2): the fitted function is the one a
//! wave-digital realisation with bilinear capacitors runs, so the stated error is the
//! realised one, warping included.
//!
//! Band: from f_lo = max(1/duration, fs·[`LOWEST_BAND_FRACTION`]) (the slowest change a run
//! shows) to 0.4·fs, log-spaced. Below f_lo the fit tends to its DC value Z_inf + Σ R_i
//! while the cable's Zc keeps rising; that does not move the DC operating point in the
//! realisation the docs describe (`docs/zc-model.md`: the wave sent into the line is the node
//! voltage minus the arriving wave, so a line whose propagation has DC gain 1 is a wire at
//! DC whatever its Zc network).
use super::loss::levenberg_marquardt_with;
use crate::plant::CableType;
use crate::reference::line::{series_impedance, shunt_admittance};
use num_complex::Complex64;
use std::f64::consts::PI;

/// Parallel RC sections of a fit.
pub const ZC_SECTIONS: usize = 4;

/// The lowest band edge as a fraction of the sample rate (a run of 10^5 samples and more
/// fits down to fs·10⁻⁵, where the fitted time constants stay below 10^5 samples).
pub const LOWEST_BAND_FRACTION: f64 = 1e-5;

/// Points of the fit band.
const BAND_POINTS: usize = 64;

/// A fitted Zc(s) of one cable type at one sample rate and band.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ZcFit {
    /// The cable type's name.
    pub cable: String,
    /// Z_inf, ohms: the high-frequency resistance in series with the sections.
    pub z_inf: f64,
    /// Sections (R_i ohms, τ_i = R_i·C_i seconds), by increasing τ.
    pub sections: Vec<(f64, f64)>,
    /// Band of the fit, Hz.
    pub band: (f64, f64),
    /// Largest |Zc_fit − Zc|/|Zc| over the band (bilinear frequencies).
    pub max_rel_error: f64,
    /// |Zc| of the cable at the low and high band edges, ohms (how far it rises).
    pub zc_edges: (f64, f64),
}

impl ZcFit {
    /// The fit at frequency `f` as the bilinear realisation at sample rate `fs` runs it.
    pub fn at(&self, f: f64, fs: f64) -> Complex64 {
        model(self.z_inf, &self.sections, bilinear_s(f, fs))
    }

    /// Per section, the wave-digital one-port of the bilinear parallel RC at sample
    /// period `dt`: (port resistance r = R‖(T/2C), emitted-wave factor k = r/(T/2C)).
    /// The section emits b = k·s (s: the capacitor's state) whatever arrives at its port
    /// (its port is reflection-free), so series sections add without a delay-free loop.
    pub fn wave_sections(&self, dt: f64) -> Vec<(f64, f64)> {
        self.sections
            .iter()
            .map(|&(r, tau)| {
                let rc = dt * r / (2.0 * tau); // T/(2C) with C = τ/R
                let port = r * rc / (r + rc);
                (port, port / rc)
            })
            .collect()
    }
}

/// The analog frequency the bilinear transform maps `f` to, as s = j·(2/T)·tan(πf/fs).
fn bilinear_s(f: f64, fs: f64) -> Complex64 {
    Complex64::new(0.0, 2.0 * fs * (PI * f / fs).tan())
}

fn model(z_inf: f64, sections: &[(f64, f64)], s: Complex64) -> Complex64 {
    sections.iter().fold(Complex64::new(z_inf, 0.0), |z, &(r, tau)| z + r / (1.0 + s * tau))
}

/// Zc(j2πf) of `cable` without its DC resistance, ohms.
pub fn target(cable: &CableType, f: f64) -> Complex64 {
    let mut c = cable.clone();
    c.r_per_m = 0.0;
    let s = Complex64::new(0.0, 2.0 * PI * f);
    (series_impedance(&c, s) / shunt_admittance(&c, s)).sqrt()
}

/// The fit band for sample rate `fs` and a run of `duration` seconds.
pub fn band(fs: f64, duration: f64) -> (f64, f64) {
    let lo = (1.0 / duration).max(fs * LOWEST_BAND_FRACTION).min(0.01 * fs);
    (lo, 0.4 * fs)
}

/// Fit Zc(s) of `cable` over `band` (Hz) at sample rate `fs`. `None` for a cable without
/// frequency-dependent loss (its Zc is Z0 at every frequency once R_dc is lumped).
pub fn fit(cable: &CableType, fs: f64, band: (f64, f64)) -> Option<ZcFit> {
    cable.loss?;
    let (lo, hi) = band;
    if !(lo > 0.0 && hi > lo && hi < 0.5 * fs) {
        return None;
    }
    let freqs: Vec<f64> = (0..BAND_POINTS).map(|i| lo * (hi / lo).powf(i as f64 / (BAND_POINTS - 1) as f64)).collect();
    let tgt: Vec<Complex64> = freqs.iter().map(|f| target(cable, *f)).collect();
    let unpack = |x: &[f64]| -> (f64, Vec<(f64, f64)>) {
        let sections = x[1..].chunks(2).map(|p| (p[0].exp(), p[1].exp())).collect();
        (x[0].exp(), sections)
    };
    let residuals = |x: &[f64]| -> Result<Vec<f64>, std::convert::Infallible> {
        let (z_inf, sections) = unpack(x);
        Ok(freqs
            .iter()
            .zip(&tgt)
            .flat_map(|(f, t)| {
                let e = (model(z_inf, &sections, bilinear_s(*f, fs)) - t) / t.norm();
                [e.re, e.im]
            })
            .collect())
    };
    let (z_lo, z_hi) = (tgt[0].norm(), tgt[BAND_POINTS - 1].norm());
    // Start: Z_inf at the top of the band, the rise shared equally, time constants
    // log-spaced over the band.
    let mut x0 = vec![(tgt[BAND_POINTS - 1].re.max(1e-3)).ln()];
    let rise = ((z_lo - z_hi) / ZC_SECTIONS as f64).max(1e-6 * z_hi);
    for k in 0..ZC_SECTIONS {
        let f = lo * (hi / lo).powf((k as f64 + 0.5) / ZC_SECTIONS as f64);
        x0.extend([rise.ln(), (1.0 / (2.0 * PI * f)).ln()]);
    }
    let (x, _) = match levenberg_marquardt_with(&residuals, x0, 400, &|_, _| 1e-6) {
        Ok(v) => v,
        Err(never) => match never {},
    };
    let (z_inf, mut sections) = unpack(&x);
    sections.sort_by(|a, b| a.1.total_cmp(&b.1));
    let max_rel_error = freqs
        .iter()
        .zip(&tgt)
        .map(|(f, t)| (model(z_inf, &sections, bilinear_s(*f, fs)) - t).norm() / t.norm())
        .fold(0.0, f64::max);
    let ok = z_inf.is_finite() && sections.iter().all(|(r, t)| r.is_finite() && *r > 0.0 && t.is_finite() && *t > 0.0);
    ok.then(|| ZcFit { cable: cable.name.clone(), z_inf, sections, band, max_rel_error, zc_edges: (z_lo, z_hi) })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cat5e_zc_rises_at_low_frequency_and_fits_within_a_percent() {
        // 100 m Cat 5e at 100 MS/s over a 4 us run (band 250 kHz .. 40 MHz). The skin term
        // gives Zc ≈ Z0·sqrt(1 + 2·k_c·v/sqrt(π·s)) [closed form from Zc = sqrt(Z/Y) with
        // R = 2·Z0·k_c·sqrt(s/π)], |Zc| well above 100 ohm at 250 kHz.
        let c = crate::plant::presets::find("cat5e").unwrap();
        let fs = 100e6;
        let f = fit(&c, fs, band(fs, 4e-6)).unwrap();
        let k_c = c.loss.unwrap().k_c;
        let s = Complex64::new(0.0, 2.0 * PI * f.band.0);
        let closed = (c.z0 * (1.0 + 2.0 * k_c * c.velocity / (PI * s).sqrt()).sqrt()).norm();
        // The dielectric term (capacitance up by about 1 % at 250 kHz) takes a little off.
        assert!((f.zc_edges.0 / closed - 1.0).abs() < 0.015, "{:?} vs {closed}", f.zc_edges);
        assert!(f.zc_edges.0 > 110.0 && f.zc_edges.1 < 102.0, "{:?}", f.zc_edges);
        assert!(f.max_rel_error < 0.01, "fit error {}", f.max_rel_error);
        assert!(f.sections.iter().all(|(r, t)| *r > 0.0 && *t > 0.0));
        // Positive real at every frequency up to Nyquist (each section's real part is > 0).
        for i in 0..=200 {
            assert!(f.at(0.499 * fs * i as f64 / 200.0, fs).re > 0.0);
        }
        // The wave-digital one-ports: r = R‖(T/2C) < R, 0 < k < 1.
        for ((r, _), (port, k)) in f.sections.iter().zip(f.wave_sections(1.0 / fs)) {
            assert!(port > 0.0 && port < *r && k > 0.0 && k < 1.0);
        }
        // A cable without frequency-dependent loss gets no network.
        let mut lossless = c.clone();
        lossless.loss = None;
        assert!(fit(&lossless, fs, band(fs, 4e-6)).is_none());
    }
}

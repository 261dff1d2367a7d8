//! Sub-sample delays: the design of a line's fractional-delay allpass and its remaining error.
//!
//! A segment's delay D = τ/T (samples) is realised as whole samples N in the line rings plus
//! a first-order Thiran allpass H(z) = (a + z⁻¹)/(1 + a·z⁻¹), a = (1 − d)/(1 + d), on the
//! wave arriving at either end of one of its lines (Laakso, Välimäki, Karjalainen, Laine,
//! "Splitting the unit delay", IEEE Signal Processing Magazine 13(1), 1996): its group delay
//! is d at low frequency and falls slowly towards Nyquist. The core runs it as the normalised
//! lattice y = a·x + c·s, s' = c·x − a·s, c = sqrt(1 − a²) (Gray & Markel 1973), with a and c
//! truncated toward zero so that a_q² + c_q² <= 1 (passive, see the core's
//! `configure/passive.rs`). Quantized, the section is
//! H_q(z) = (a_q + k·z⁻¹)/(1 + a_q·z⁻¹) with k = a_q² + c_q² <= 1.
//!
//! The fraction d is kept in [0.5, 1.5): the pole −a then lies within |a| <= 1/3, and the
//! group delay stays flat over most of the band (for d near 0 the pole nears −1 and the
//! section rings at Nyquist).
use std::f64::consts::PI;
use tidewire_core::Allpass;

/// Smallest fraction d the compiler puts in an allpass; d < 1.5 at the top.
pub const MIN_FRACTION: f64 = 0.5;
/// A residual below this many samples counts as whole: the line stays a plain delay. It is
/// above the coefficient quantization's own delay error in the narrow profile
/// (|∂d/∂a| <= 2.3 for |a| <= 1/3 times 2^-14 is 1.4·10⁻⁴ sample).
pub const WHOLE_TOLERANCE: f64 = 1e-3;

/// The allpass for a fraction d in [0.5, 1.5), coefficients in Q30, truncated toward zero
/// and with a² + c² <= 2^60 checked in integers (f64's square root may round up).
pub fn design(d: f64) -> Allpass {
    let q = (1u64 << 30) as f64;
    let a = (1.0 - d) / (1.0 + d);
    let c = (1.0 - a * a).max(0.0).sqrt();
    let a30 = (a * q).trunc() as i32;
    let mut c30 = (c * q).floor() as u32;
    let norm = |c: u32| i128::from(a30) * i128::from(a30) + i128::from(c) * i128::from(c);
    while c30 > 0 && norm(c30) > 1i128 << 60 {
        c30 -= 1;
    }
    Allpass { a: a30, c: c30 }
}

/// The realised section at `frac` bits (the profile's `LOSS_FRAC`): (a_q, k = a_q² + c_q²)
/// as reals, from the one quantization the core uses.
pub fn quantized(ap: Allpass, frac: u32) -> (f64, f64) {
    let (aq, cq) = tidewire_core::quantize::allpass(ap.a, ap.c, frac).unwrap_or((0, 0));
    let one = (1u64 << frac) as f64;
    let (a, c) = (aq as f64 / one, cq as f64 / one);
    (a, a * a + c * c)
}

/// Group delay in samples of c0 + c1·e^(−jω): (c1² + c0·c1·cos ω)/(c0² + 2·c0·c1·cos ω + c1²).
fn tap_delay(c0: f64, c1: f64, w: f64) -> f64 {
    let cw = w.cos();
    (c1 * c1 + c0 * c1 * cw) / (c0 * c0 + 2.0 * c0 * c1 * cw + c1 * c1)
}

/// Group delay in samples of the quantized section (a, k) at ω (radians per sample).
pub fn group_delay(a: f64, k: f64, w: f64) -> f64 {
    tap_delay(a, k, w) - tap_delay(1.0, a, w)
}

/// What the fractional part of a segment's delay leaves as error.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FractionTiming {
    /// The fraction asked for, samples (in [0.5, 1.5)).
    pub wanted: f64,
    /// Group delay of the quantized section at low frequency, samples.
    pub realised: f64,
    /// The frequency the edge error is taken at: 0.35/rise time of the drive, at most 0.4·fs.
    pub edge_hz: f64,
    /// Group delay of the quantized section at `edge_hz`, samples.
    pub at_edge: f64,
    /// 1 − sqrt(a_q² + c_q²): how far the quantized lattice is from lossless.
    pub magnitude_error: f64,
}

/// The timing of the quantized section for fraction `d` at `frac` bits; `edge_hz` is the
/// drive's bandwidth (clamped to 0.4·fs) and `dt` the sample period.
pub fn timing(d: f64, frac: u32, edge_hz: f64, dt: f64) -> FractionTiming {
    let (a, k) = quantized(design(d), frac);
    let edge_hz = edge_hz.min(0.4 / dt);
    FractionTiming {
        wanted: d,
        realised: group_delay(a, k, 0.0),
        edge_hz,
        at_edge: group_delay(a, k, 2.0 * PI * edge_hz * dt),
        magnitude_error: 1.0 - k.sqrt(),
    }
}

/// The drive's bandwidth 0.35/t_r from its 10–90 % rise time [practice]; an ideal step or
/// a sampled waveform gives 0.4·fs (the band the compiler fits the loss filters over).
pub fn drive_bandwidth(plant: &crate::plant::Plant, dt: f64) -> f64 {
    use crate::plant::{Drive, Waveform};
    let w = match &plant.drive {
        Drive::Source { emf, .. } => emf,
        Drive::Rig { stimulus, .. } => stimulus,
    };
    let rise = match w {
        Waveform::Step { rise, .. } | Waveform::Pulse { rise, .. } | Waveform::Pwm { rise, .. } => *rise,
        Waveform::Samples(_) => 0.0,
    };
    if rise > 0.0 {
        (0.35 / rise).min(0.4 / dt)
    } else {
        0.4 / dt
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn design_delays_by_the_fraction_at_low_frequency() {
        // Thiran order 1: group delay at DC is exactly d (Laakso et al. 1996) [closed form].
        for d in [0.5, 0.73, 1.0, 1.25, 1.49] {
            let t = timing(d, 30, 1.0, 1.0);
            assert!((t.realised - d).abs() < 1e-8, "d {d}: {}", t.realised);
            assert!(t.magnitude_error >= 0.0 && t.magnitude_error < 1e-8);
            let n = timing(d, 14, 1.0, 1.0);
            assert!((n.realised - d).abs() < 4e-4, "narrow d {d}: {}", n.realised);
        }
    }

    #[test]
    fn coefficients_are_passive_and_the_pole_is_inside() {
        for i in 0..1000 {
            let d = 0.5 + i as f64 / 1000.0;
            let ap = design(d);
            let n = i128::from(ap.a).pow(2) + i128::from(ap.c).pow(2);
            assert!(n <= 1 << 60);
            assert!(3 * ap.a.unsigned_abs() <= 1 << 30);
        }
    }

    #[test]
    fn group_delay_matches_the_phase_slope() {
        // τ(ω) = −dφ/dω of H(e^jω) = (a + k e^−jω)/(1 + a e^−jω), by central differences.
        let (a, k) = (0.2, 0.999);
        let phase = |w: f64| {
            let z = num_complex::Complex64::from_polar(1.0, -w);
            ((a + k * z) / (1.0 + a * z)).arg()
        };
        for w in [0.1, 0.5, 1.0, 2.0] {
            let h = 1e-6;
            let num = -(phase(w + h) - phase(w - h)) / (2.0 * h);
            assert!((num - group_delay(a, k, w)).abs() < 1e-6, "{w}: {num} vs {}", group_delay(a, k, w));
        }
    }
}

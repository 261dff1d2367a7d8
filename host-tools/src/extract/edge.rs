//! The incident edge: DC offset, noise, where the step starts and how fast it rises, and
//! the deconvolution that turns the capture into the port's impulse response.
//!
//! Waves at the port are taken against the source resistance Rs: with EMF e behind Rs and
//! port voltage v, the wave sent into the plant is a = (v + Rs·i)/2 = e/2 and the wave
//! coming back is b = (v − Rs·i)/2 = v − e/2. So the plant's reflection impulse response
//! r (against Rs) follows from the capture's response h to a unit EMF impulse:
//! r = 2·h − δ. h itself is found by deconvolving the capture by the modelled EMF edge
//! (a linear ramp of 10–90 % time `rise`, as the plant files define a step), in the
//! frequency domain, regularised (Tikhonov floor, Wiener noise-to-signal term) so that the
//! zeros of the ramp's spectrum do not lift the noise.

use super::capture::Capture;
use crate::plant::PlantError;
use num_complex::Complex64;
use rustfft::FftPlanner;

/// Where and how the step arrives, and the capture with its offset removed.
#[derive(Debug, Clone, PartialEq)]
pub struct Edge {
    /// The DC offset before the edge, V (removed from `volts`).
    pub offset: f64,
    /// Noise of one sample (robust estimate), V.
    pub noise: f64,
    /// Time the EMF ramp starts, s from the first sample.
    pub start: f64,
    /// 10–90 % rise of the EMF, s (0: a step within one sample).
    pub rise: f64,
    /// Index of the first sample beyond the noise.
    pub first: usize,
    /// The capture minus its offset, V.
    pub volts: Vec<f64>,
}

fn median(mut v: Vec<f64>) -> f64 {
    if v.is_empty() {
        return 0.0;
    }
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

/// Robust noise of one sample: the median absolute second difference, scaled for Gaussian
/// noise (MAD/0.6745, and √6 for the second difference of three samples). Sparse echoes
/// and the straight parts of ramps do not move it; a capture's own slopes barely do.
pub fn noise_of(v: &[f64]) -> f64 {
    let d: Vec<f64> = v.windows(3).map(|w| (w[2] - 2.0 * w[1] + w[0]).abs()).collect();
    median(d) / 0.6745 / 6f64.sqrt()
}

/// Find the edge of a step of EMF `emf` in `cap`; `rise` overrides the measured rise.
pub fn find_edge(cap: &Capture, emf: f64, rise: Option<f64>) -> Result<Edge, PlantError> {
    let v = &cap.volts;
    let head = median(v[..8.min(v.len())].to_vec());
    // The noise from the whole record: echoes are sparse, so the median hardly sees them
    // (the few samples before the edge would give a poorer estimate).
    let noise = noise_of(v);
    let threshold = (6.0 * noise).max(0.01 * emf.abs());
    let Some(first) = v.iter().position(|x| (x - head).abs() > threshold) else {
        return Err(cap.error_at(
            0,
            format!("no step edge: the voltage never moves more than {threshold:.3e} V from its first value"),
            "capture the port while the step is applied, and check --emf",
        ));
    };
    if (v[first] - head) * emf < 0.0 {
        return Err(cap.error_at(
            first,
            "the first edge goes the other way than the EMF's sign".to_string(),
            "check the sign of --emf and of the probe",
        ));
    }
    // Offset: the samples before the edge, leaving two for a slow start of the ramp.
    let offset = if first > 4 { v[..first - 2].iter().sum::<f64>() / (first - 2) as f64 } else { 0.0 };
    let volts: Vec<f64> = v.iter().map(|x| x - offset).collect();
    // The first plateau p1 = emf·Z1/(Rs + Z1): a few samples past the edge.
    let after = |k: usize| volts.get(k).copied();
    let mut top = first;
    while let (Some(a), Some(b)) = (after(top), after(top + 1)) {
        // Still rising by more than the noise and 2 % of the step so far.
        if (b - a) * emf.signum() > (3.0 * noise).max(0.02 * a.abs()) {
            top += 1;
        } else {
            break;
        }
    }
    let p1 = volts[top];
    if volts.len() < top + super::capture::MIN_SAMPLES / 2 {
        return Err(cap.error_at(
            first,
            "the capture ends right after the edge".to_string(),
            "capture at least until the echoes of the far end have come back",
        ));
    }
    let crossing = |level: f64| -> f64 {
        let mut k = first.saturating_sub(2);
        while k < top && (volts[k + 1] - level) * emf.signum() < 0.0 {
            k += 1;
        }
        let (a, b) = (volts[k], volts[(k + 1).min(top)]);
        if k >= top || (b - a).abs() < 1e-300 {
            k as f64
        } else {
            k as f64 + (level - a) / (b - a)
        }
    };
    let (t10, t50, t90) = (crossing(0.1 * p1), crossing(0.5 * p1), crossing(0.9 * p1));
    let measured = (t90 - t10) * cap.dt;
    // A step within one sample reads as 0.8 samples of 10–90 % from linear interpolation;
    // anything up to one sample is taken as an ideal step.
    let rise = rise.unwrap_or(if measured <= 1.01 * cap.dt { 0.0 } else { measured });
    let start = t50 * cap.dt - 0.5 * rise / 0.8;
    let start = if rise == 0.0 { (t50.floor() + 0.5) * cap.dt } else { start };
    Ok(Edge { offset, noise, start: start.max(0.0), rise, first, volts })
}

/// The EMF per volt, sampled as the plant files sample a step (ramp of full length rise/0.8).
pub fn unit_edge(edge: &Edge, dt: f64, n: usize) -> Vec<f64> {
    crate::plant::Waveform::Step { amplitude: 1.0, delay: edge.start, rise: edge.rise }.sample(dt, n)
}

/// The port's response to a unit EMF impulse: h with the capture equal to emf·(h ∗ edge).
/// Gaussian smoothing of `smooth` samples (σ) regularises noisy captures; it spreads the
/// first sample to negative times too, so the result starts `lead` samples before t = 0.
pub fn impulse_response(edge: &Edge, emf: f64, dt: f64, smooth: f64, lead: usize) -> Vec<f64> {
    let n = edge.volts.len();
    let e = unit_edge(edge, dt, n);
    let diff = |x: &[f64]| -> Vec<f64> { (0..x.len()).map(|k| x[k] - if k > 0 { x[k - 1] } else { 0.0 }).collect() };
    let dv: Vec<f64> = diff(&edge.volts).into_iter().map(|x| x / emf).collect();
    let de = diff(&e);
    let m = (2 * n).next_power_of_two();
    let mut planner = FftPlanner::<f64>::new();
    let fwd = planner.plan_fft_forward(m);
    let inv = planner.plan_fft_inverse(m);
    let pad = |x: &[f64]| -> Vec<Complex64> {
        let mut b: Vec<Complex64> = x.iter().map(|&r| Complex64::new(r, 0.0)).collect();
        b.resize(m, Complex64::new(0.0, 0.0));
        b
    };
    let (mut fv, mut fe) = (pad(&dv), pad(&de));
    fwd.process(&mut fv);
    fwd.process(&mut fe);
    // H = DV·conj(DE) / (|DE|² + λ): the delay of the edge cancels here, so h is causal
    // from sample 0 whatever the edge's start.
    //
    // λ is a floor (Tikhonov) raised, for a ramp, to the Wiener filter's noise-to-signal
    // ratio N/S (N. Wiener, "Extrapolation, Interpolation, and Smoothing of Stationary Time
    // Series", 1949): the first difference of white noise of σ (per volt of EMF) has the
    // power n·σ²·|1 − e^{−iω}|² = 2n·σ²·(1 − cos ω) in an n-sample transform, and h is at
    // least the port's own step of about ½ (power ¼) in every bin, so N/S ≤ 8n·σ²·(1 − cos ω).
    // The ramp's spectrum has zeros that would otherwise lift the noise there by up to
    // 1/(2√λ). An ideal step (|DE| = 1) lifts nothing and keeps the plain floor.
    let floor: f64 = if edge.rise > 0.0 { 1e-4 } else { 1e-6 };
    let sigma = edge.noise / emf.abs();
    for k in 0..m {
        let f = if k <= m / 2 { k as f64 } else { k as f64 - m as f64 } / m as f64;
        let w = 2.0 * std::f64::consts::PI * f;
        let lambda = if edge.rise > 0.0 { floor.max(8.0 * n as f64 * sigma * sigma * (1.0 - w.cos())) } else { floor };
        let g = if smooth > 0.0 { (-(w * smooth).powi(2) / 2.0).exp() } else { 1.0 };
        fv[k] = fv[k] * fe[k].conj() / (fe[k].norm_sqr() + lambda) * g;
    }
    inv.process(&mut fv);
    let lead = lead.min(m - n);
    fv[m - lead..].iter().chain(&fv[..n]).map(|c| c.re / m as f64).collect()
}

/// The smoothing kernel [`impulse_response`] applies, as samples −`lead`..=`lead`: the
/// inverse transform of the same Gaussian on the same grid, so that a smoothed impulse
/// (the port's own step in h) can be taken out exactly.
pub fn smoothing_kernel(n: usize, smooth: f64, lead: usize) -> Vec<f64> {
    let m = (2 * n).next_power_of_two();
    (-(lead as i64)..=lead as i64)
        .map(|k| {
            if smooth <= 0.0 {
                return if k == 0 { 1.0 } else { 0.0 };
            }
            (0..m)
                .map(|j| {
                    let f = if j <= m / 2 { j as f64 } else { j as f64 - m as f64 } / m as f64;
                    let w = 2.0 * std::f64::consts::PI * f;
                    (-(w * smooth).powi(2) / 2.0).exp() * (w * k as f64).cos()
                })
                .sum::<f64>()
                / m as f64
        })
        .collect()
}

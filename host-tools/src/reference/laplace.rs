//! Time response by numerical Laplace inversion: the damped FFT.
//!
//! The input is a sequence x[k] at period dt (k < n), held at its last value after n (a
//! step stays a step; zero padding would add an edge at n whose band-limited ringing
//! reaches back into the output). With a record of N samples and damping sigma:
//!
//! ```text
//! x_d[k] = x[k]·exp(−sigma·k·dt)                 (k < N)
//! X      = FFT(x_d)
//! s_k    = sigma + j·2·pi·k/(N·dt)               (k <= N/2; upper bins by H(conj s) = conj H(s))
//! y[m]   = IFFT(X·H(s_k))[m] · exp(sigma·m·dt)
//! ```
//!
//! This is the discrete-time system whose frequency response is H on the band |w| < pi/dt,
//! driven by the samples x[k]; delays that fall on the sample grid come out exact. The
//! periodic convolution of the FFT adds copies of the response shifted by p·N samples,
//! each weighted by q^p with q = exp(−sigma·N·dt) after the undamping, so sigma is chosen
//! as ln(1/q)/(N·dt) for the requested wrap level q. The Nyquist bin stands for both +pi/dt
//! and −pi/dt and takes Re H there, so the output is real.
//!
//! Where x·H has content at the band edge (an ideal step reaching a node off the sample
//! grid), the band-limited response rings and the undamping multiplies that ringing by
//! up to exp(sigma·n·dt) = q^(−n/N). N >= 8·n keeps that factor below q^(−1/8) (13 for
//! q = 1e-9), and the distance to the sigma-free band-limited response is computed
//! ([`band_edge`]) and reported with the wrap bound.

use super::band_edge;
use num_complex::Complex64;
use rayon::prelude::*;
use realfft::RealFftPlanner;
use std::f64::consts::PI;

/// Record length and damping of one inversion.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Plan {
    /// FFT length N (power of two, >= 8·n).
    pub n_fft: usize,
    /// Damping sigma, 1/s.
    pub sigma: f64,
    /// Input samples n.
    pub n: usize,
    /// Wrap weight q = exp(−sigma·N·dt).
    pub q: f64,
}

impl Plan {
    /// Record length as a multiple of the output length (see the module notes).
    pub const RECORD_FACTOR: usize = 8;

    /// The plan for `n` samples at period `dt` and wrap level `q` (0 < q < 1).
    pub fn new(n: usize, dt: f64, q: f64) -> Plan {
        let n_fft = (Self::RECORD_FACTOR * n).max(2).next_power_of_two();
        let sigma = (1.0 / q).ln() / (n_fft as f64 * dt);
        Plan { n_fft, sigma, n, q }
    }

    /// Relative error bound of the first n outputs: the wrap-around copies, q/(1 − q) of
    /// the largest response magnitude in the record (assuming the response past the record
    /// is no larger, as for a passive plant under a held input), plus the rounding of the
    /// FFTs amplified by the undamping exp(sigma·(n−1)·dt) = q^(−(n−1)/N).
    pub fn wrap_bound(&self) -> f64 {
        let rounding = 16.0 * f64::EPSILON * (self.n_fft as f64).log2();
        let undamp = self.q.powf(-((self.n.max(1) - 1) as f64) / self.n_fft as f64);
        self.q / (1.0 - self.q) + rounding * undamp
    }

    /// The complex frequency of bin k (0 <= k <= N/2) at period `dt`.
    pub fn s(&self, k: usize, dt: f64) -> Complex64 {
        Complex64::new(self.sigma, 2.0 * PI * k as f64 / (self.n_fft as f64 * dt))
    }
}

/// The inverted responses: n samples per channel, and each channel's largest magnitude
/// over the first half of the record (the response itself, including N/2 − n samples
/// under the held input; the second half holds the next period's precursors).
pub(crate) struct Inverted {
    pub values: Vec<Vec<f64>>,
    pub record_peaks: Vec<f64>,
    /// Largest band-edge term per channel (distance from the sigma-free band-limited
    /// response, see `band_edge`), in the channel's unit.
    pub edge_peaks: Vec<f64>,
}

/// Bins solved per parallel task (large enough to amortize the task, small enough to
/// balance two to many cores).
const BINS_PER_TASK: usize = 2048;

/// Responses of `channels` outputs to input `x` (length n of the plan).
///
/// `h(s)` returns the transfer of every channel at s; it is called for the N/2 + 1 bins in
/// parallel (rayon), and an error from any call stops the inversion. Memory: the half
/// spectrum times H for every channel (16 bytes per bin and channel) plus one channel's
/// real record at a time; the input is damped into a real FFT and never held twice.
pub(crate) fn invert<E: Send>(
    plan: &Plan,
    x: &[f64],
    dt: f64,
    channels: usize,
    h: impl Fn(Complex64) -> Result<Vec<Complex64>, E> + Sync,
) -> Result<Inverted, E> {
    let big = plan.n_fft;
    let half = big / 2;
    // The input is held at its last value past n: a step stays a step, so the record has no
    // artificial edge at n whose band-limited ringing would reach back into the output.
    let last = x.last().copied().unwrap_or(0.0);
    // Each plan keeps twiddles of about the record's size, so the forward plan is dropped
    // before the inverse one is made (they never live together).
    let spectrum = {
        let forward = RealFftPlanner::<f64>::new().plan_fft_forward(big);
        let mut damped: Vec<f64> =
            (0..big).map(|k| x.get(k).copied().unwrap_or(last) * (-plan.sigma * k as f64 * dt).exp()).collect();
        let mut spectrum = forward.make_output_vec();
        // Lengths match by construction (planner of length `big`), so this cannot fail.
        let _ = forward.process(&mut damped, &mut spectrum);
        spectrum
    };
    // Per channel, the products X(s_k)·H_c(s_k); bins 0 and N/2 take Re H (see the module
    // notes). Each task fills one run of bins in every channel.
    let mut products = vec![vec![Complex64::new(0.0, 0.0); half + 1]; channels];
    let mut tasks: Vec<Vec<&mut [Complex64]>> = Vec::new();
    for channel in products.iter_mut() {
        for (t, chunk) in channel.chunks_mut(BINS_PER_TASK).enumerate() {
            if tasks.len() <= t {
                tasks.push(Vec::with_capacity(channels));
            }
            tasks[t].push(chunk);
        }
    }
    tasks.into_par_iter().enumerate().try_for_each(|(task, mut chunks)| {
        for i in 0..chunks.first().map_or(0, |c| c.len()) {
            let k = task * BINS_PER_TASK + i;
            let hk = h(plan.s(k, dt))?;
            for (c, chunk) in chunks.iter_mut().enumerate() {
                let hc = hk.get(c).copied().unwrap_or_default();
                chunk[i] =
                    if k == 0 || k == half { Complex64::new(spectrum[k].re * hc.re, 0.0) } else { spectrum[k] * hc };
            }
        }
        Ok(())
    })?;
    drop(spectrum);
    let rule = band_edge::edge_rule(plan.sigma);
    let mut edge = vec![Vec::with_capacity(rule.len()); channels];
    for &(r, _) in &rule {
        let hk = h(Complex64::new(r, PI / dt))?;
        for (c, e) in edge.iter_mut().enumerate() {
            e.push(hk.get(c).copied().unwrap_or_default().im);
        }
    }
    let n = x.len();
    let mut inverted = Inverted { values: Vec::new(), record_peaks: Vec::new(), edge_peaks: Vec::new() };
    let inverse = RealFftPlanner::<f64>::new().plan_fft_inverse(big);
    let mut output = inverse.make_output_vec();
    for mut input in products {
        // Bins 0 and N/2 are real by construction, so the inverse cannot refuse them; the
        // channel's products are consumed in place.
        let _ = inverse.process(&mut input, &mut output);
        drop(input);
        let undamped = |m: usize| output[m] / big as f64 * (plan.sigma * m as f64 * dt).exp();
        // The end of the record holds the band-limited precursors of the next period,
        // magnified by the undamping; the first half is the response itself.
        inverted.record_peaks.push((0..half).fold(0.0, |p: f64, m| p.max(undamped(m).abs())));
        inverted.values.push((0..n).map(undamped).collect());
    }
    drop((output, inverse));
    for im_h in edge {
        let edge = band_edge::correction(x, big, dt, &rule, &im_h);
        inverted.edge_peaks.push(edge.iter().fold(0.0, |p, v| p.max(v.abs())));
    }
    Ok(inverted)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn damping_meets_the_wrap_level() {
        // [closed form] exp(−sigma·N·dt) = q by the choice of sigma.
        let plan = Plan::new(300, 1e-9, 1e-9);
        assert_eq!(plan.n_fft, 4096);
        let q = (-plan.sigma * plan.n_fft as f64 * 1e-9).exp();
        assert!((q - 1e-9).abs() < 1e-21);
        assert!(plan.wrap_bound() > 1e-9 && plan.wrap_bound() < 2e-9);
    }

    #[test]
    fn on_grid_delay_and_gain_come_out_exact() {
        // [closed form] H(s) = 0.3·exp(−7·s·dt) is y[m] = 0.3·x[m − 7].
        let dt = 1e-8;
        let x: Vec<f64> = (0..100).map(|k| ((k * 37) % 11) as f64 - 5.0).collect();
        let plan = Plan::new(x.len(), dt, 1e-9);
        let y = invert::<()>(&plan, &x, dt, 1, |s| Ok(vec![0.3 * (-7.0 * s * dt).exp()])).unwrap().values;
        // Held at its last value past n, the input wraps back with weight q: the bound.
        let tol = plan.wrap_bound() * 0.3 * 5.0 * 1.01;
        assert!(tol < 2e-9);
        for m in 0..x.len() {
            let want = if m >= 7 { 0.3 * x[m - 7] } else { 0.0 };
            assert!((y[0][m] - want).abs() <= tol, "sample {m}: {} vs {want}", y[0][m]);
        }
    }

    #[test]
    fn first_order_lag_matches_its_discrete_equivalent_at_low_frequency() {
        // [closed form] a first-order lag 1/(1 + s·tau) with tau >> dt settles to the
        // step's value with time constant tau: y(t) ~ 1 − exp(−t/tau).
        let dt = 1e-9;
        let tau = 200e-9;
        let x = vec![1.0; 2000];
        let plan = Plan::new(x.len(), dt, 1e-9);
        let y = invert::<()>(&plan, &x, dt, 1, |s| Ok(vec![1.0 / (1.0 + s * tau)])).unwrap().values;
        for m in [100usize, 400, 1999] {
            let want = 1.0 - (-(m as f64) * dt / tau).exp();
            assert!((y[0][m] - want).abs() < 5e-3, "sample {m}: {} vs {want}", y[0][m]);
        }
    }
}

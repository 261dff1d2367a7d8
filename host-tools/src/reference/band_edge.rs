//! The band-edge term of the damped FFT, removed so the result does not depend on sigma.
//!
//! The damped FFT integrates H along Re s = sigma over the band |Im s| < pi/dt. The
//! discrete impulse response it yields, g_sigma[j] = (dt/2·pi·j)∫ H(s)·exp(s·j·dt) ds on
//! that segment, differs from the band-limited response on the jω axis, g_0[j], because H
//! is not periodic in frequency. H is analytic in the strip 0 <= Re s <= sigma (a passive,
//! causal plant), so by Cauchy's theorem on the rectangle between the two segments only its
//! horizontal edges at Im s = ±pi/dt remain, and with H(conj s) = conj H(s):
//!
//! ```text
//! g_sigma[j] − g_0[j] = (dt/pi)·(−1)^j·∫_0^sigma Im H(r + j·pi/dt)·exp(r·j·dt) dr
//! ```
//!
//! The integrand is smooth in r, so a 16-point Gauss–Legendre rule is exact to rounding for
//! the record lengths used. Subtracting x * (g_sigma − g_0) leaves the response of the
//! discrete-time system whose frequency response is H(jω) on |ω| < pi/dt, whatever sigma.
//! Without it the band-limited ringing (Gibbs) of an off-grid edge would be multiplied by
//! up to exp(sigma·n·dt) and change with the record length.

use num_complex::Complex64;
use rustfft::FftPlanner;
use std::f64::consts::PI;

/// Number of Gauss–Legendre points on the band edge.
pub(crate) const EDGE_POINTS: usize = 16;

/// Gauss–Legendre nodes and weights on [0, 1] (Newton iteration on P_n).
pub(crate) fn gauss_legendre(n: usize) -> Vec<(f64, f64)> {
    (0..n)
        .map(|i| {
            // Initial guess (Tricomi), then Newton on the Legendre polynomial P_n.
            let mut x = (PI * (i as f64 + 0.75) / (n as f64 + 0.5)).cos();
            let mut dp = 1.0;
            for _ in 0..100 {
                let (mut p0, mut p1) = (1.0, x);
                for k in 2..=n {
                    let p2 = ((2 * k - 1) as f64 * x * p1 - (k - 1) as f64 * p0) / k as f64;
                    p0 = p1;
                    p1 = p2;
                }
                dp = n as f64 * (x * p1 - p0) / (x * x - 1.0);
                let step = p1 / dp;
                x -= step;
                if step.abs() < 1e-16 {
                    break;
                }
            }
            let w = 2.0 / ((1.0 - x * x) * dp * dp);
            ((1.0 - x) / 2.0, w / 2.0)
        })
        .collect()
}

/// The points r on [0, sigma] and weights of the band-edge integral.
pub(crate) fn edge_rule(sigma: f64) -> Vec<(f64, f64)> {
    gauss_legendre(EDGE_POINTS).into_iter().map(|(x, w)| (x * sigma, w * sigma)).collect()
}

/// The term x * (g_sigma − g_0) for outputs m < n, from the input held over the record
/// (`x_held`, N samples) and Im H at the edge points (`im_h[i]` at `rule[i]`).
pub(crate) fn correction(x_held: &[f64], n: usize, dt: f64, rule: &[(f64, f64)], im_h: &[f64]) -> Vec<f64> {
    let big = x_held.len();
    // Offsets j from −(N−1) to n−1 are the ones that reach outputs m < n.
    let span = big - 1 + n;
    let dg = |j: i64| -> f64 {
        let sum: f64 = rule.iter().zip(im_h).map(|(&(r, w), &im)| w * im * (r * j as f64 * dt).exp()).sum();
        let sign = if j.rem_euclid(2) == 0 { 1.0 } else { -1.0 };
        dt / PI * sign * sum
    };
    let len = (big + span).next_power_of_two();
    let mut a: Vec<Complex64> = (0..len).map(|k| Complex64::new(if k < big { x_held[k] } else { 0.0 }, 0.0)).collect();
    let mut b: Vec<Complex64> = (0..len)
        .map(|i| {
            let v = if i < span { dg(i as i64 - (big as i64 - 1)) } else { 0.0 };
            Complex64::new(v, 0.0)
        })
        .collect();
    let mut planner = FftPlanner::<f64>::new();
    let forward = planner.plan_fft_forward(len);
    forward.process(&mut a);
    forward.process(&mut b);
    let mut c: Vec<Complex64> = a.iter().zip(&b).map(|(p, q)| p * q).collect();
    planner.plan_fft_inverse(len).process(&mut c);
    // conv[m + N − 1] = sum_k x[k]·dg[m − k].
    (0..n).map(|m| c[m + big - 1].re / len as f64).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gauss_legendre_integrates_polynomials_and_exponentials() {
        // [closed form] a 16-point rule is exact for degree 31; ∫_0^1 exp(5x) dx = (e^5 − 1)/5.
        let rule = gauss_legendre(16);
        let w_sum: f64 = rule.iter().map(|p| p.1).sum();
        assert!((w_sum - 1.0).abs() < 1e-14);
        let x31: f64 = rule.iter().map(|&(x, w)| w * x.powi(31)).sum();
        assert!((x31 - 1.0 / 32.0).abs() < 1e-14);
        let e: f64 = rule.iter().map(|&(x, w)| w * (5.0 * x).exp()).sum();
        assert!((e - (5f64.exp() - 1.0) / 5.0).abs() < 1e-12);
    }
}

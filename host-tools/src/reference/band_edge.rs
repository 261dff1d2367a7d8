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

use realfft::RealFftPlanner;
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

/// The term x * (g_sigma − g_0) for outputs m < n, for the input `x` (n samples) held at
/// its last value over a record of `big` samples, and Im H at the edge points (`im_h[i]`
/// at `rule[i]`).
///
/// With dg[j] = (dt/pi)·sum_i w_i·Im H_i·rho_i^j, rho_i = −exp(r_i·dt), the sum splits into
/// the first n inputs (an FFT convolution over offsets −(n−1)..n−1, memory O(n)) and the
/// held tail k = n..big−1, whose offsets form a geometric series per rule point:
/// sum_{j=a..b} rho^j = (rho^(b+1) − rho^a)/(rho − 1). So the record length never enters
/// the memory, only the time of 16 closed forms per output.
pub(crate) fn correction(x: &[f64], big: usize, dt: f64, rule: &[(f64, f64)], im_h: &[f64]) -> Vec<f64> {
    let n = x.len();
    if n == 0 {
        return Vec::new();
    }
    let coef: Vec<(f64, f64)> = rule.iter().zip(im_h).map(|(&(r, w), &im)| (r, dt / PI * w * im)).collect();
    // rho^j = (−1)^j·exp(r·j·dt), for any integer j.
    let pow = |r: f64, j: i64| -> f64 {
        let sign = if j.rem_euclid(2) == 0 { 1.0 } else { -1.0 };
        sign * (r * j as f64 * dt).exp()
    };
    let dg = |j: i64| -> f64 { coef.iter().map(|&(r, c)| c * pow(r, j)).sum() };
    // Offsets j = i − (n − 1) for i < 2n − 1 reach outputs m < n from inputs k < n.
    let span = 2 * n - 1;
    let len = (n + span).next_power_of_two();
    let mut planner = RealFftPlanner::<f64>::new();
    let forward = planner.plan_fft_forward(len);
    let inverse = planner.plan_fft_inverse(len);
    let mut a: Vec<f64> = (0..len).map(|k| x.get(k).copied().unwrap_or(0.0)).collect();
    let mut b: Vec<f64> = (0..len).map(|i| if i < span { dg(i as i64 - (n as i64 - 1)) } else { 0.0 }).collect();
    let mut fa = forward.make_output_vec();
    let mut fb = forward.make_output_vec();
    // Buffer lengths come from the planner, so these cannot fail.
    let _ = forward.process(&mut a, &mut fa);
    let _ = forward.process(&mut b, &mut fb);
    drop((a, b));
    for (p, q) in fa.iter_mut().zip(&fb) {
        *p *= q;
    }
    drop(fb);
    if let Some(v) = fa.first_mut() {
        v.im = 0.0;
    }
    if let Some(v) = fa.last_mut() {
        v.im = 0.0;
    }
    let mut conv = inverse.make_output_vec();
    let _ = inverse.process(&mut fa, &mut conv);
    let last = x[n - 1];
    (0..n)
        .map(|m| {
            // conv[m + n − 1] = sum_{k<n} x[k]·dg[m − k]; the held tail adds
            // last·sum_{j = m−big+1 .. m−n} dg[j].
            let head = conv[m + n - 1] / len as f64;
            let (lo, hi) = (m as i64 - big as i64 + 1, m as i64 - n as i64);
            let tail: f64 = if hi < lo {
                0.0
            } else {
                coef.iter()
                    .map(|&(r, c)| {
                        let rho = -(r * dt).exp();
                        c * (pow(r, hi + 1) - pow(r, lo)) / (rho - 1.0)
                    })
                    .sum()
            };
            head + last * tail
        })
        .collect()
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

    #[test]
    fn split_correction_equals_the_direct_sum_over_the_held_record() {
        // [closed form] sum_{k<big} x_held[k]·dg[m − k], summed term by term.
        let (dt, big) = (1e-9, 256usize);
        let x: Vec<f64> = (0..20).map(|k| ((k * 7) % 5) as f64 - 1.0).collect();
        let rule = edge_rule(2.0e7);
        let im_h: Vec<f64> = (0..rule.len()).map(|i| 0.1 + 0.01 * i as f64).collect();
        let dg = |j: i64| -> f64 {
            let s: f64 = rule.iter().zip(&im_h).map(|(&(r, w), &im)| w * im * (r * j as f64 * dt).exp()).sum();
            dt / PI * if j.rem_euclid(2) == 0 { 1.0 } else { -1.0 } * s
        };
        let got = correction(&x, big, dt, &rule, &im_h);
        for (m, g) in got.iter().enumerate() {
            let want: f64 = (0..big).map(|k| x.get(k).copied().unwrap_or(x[19]) * dg(m as i64 - k as i64)).sum();
            assert!((g - want).abs() < 1e-12 * (1.0 + want.abs()), "m {m}: {g} vs {want}");
        }
    }
}

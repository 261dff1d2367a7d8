//! Edge-preserving denoising of the capture: total-variation (TV) denoising.
//!
//! A step into a plant of uniform runs gives a port voltage that is piecewise constant
//! between echoes (piecewise smooth with a capacitive end or a slow edge), so the capture
//! is denoised by the solution x of
//!
//!   minimise ½·Σ (y_k − x_k)² + λ·Σ |x_{k+1} − x_k|,
//!
//! which keeps the echoes' steps and flattens the noise between them (L. I. Rudin,
//! S. Osher and E. Fatemi, "Nonlinear total variation based noise removal algorithms",
//! Physica D 60, 1992). The one-dimensional problem is solved exactly, in one pass, by
//! L. Condat's direct algorithm ("A direct algorithm for 1-D total variation denoising",
//! IEEE Signal Processing Letters 20(11), 2013), written out below.
//!
//! λ is set from the noise: a flat stretch of L samples of white noise of σ keeps no false
//! step while its partial sums stay under λ (they grow as σ·√L).

/// TV denoising of `y` with weight `lambda` (≥ 0), by Condat's direct algorithm.
pub fn tv_denoise(y: &[f64], lambda: f64) -> Vec<f64> {
    let n = y.len();
    let mut x = vec![0.0; n];
    if n == 0 {
        return x;
    }
    if lambda <= 0.0 || !lambda.is_finite() {
        x.copy_from_slice(y);
        return x;
    }
    // k: current sample; k0: start of the current segment; kminus/kplus: last sample
    // where the lower/upper candidate value was pinned. vmin/vmax: candidate values of
    // the segment if it ends in a jump down/up; umin/umax: the running dual values.
    let (mut k, mut k0, mut kminus, mut kplus) = (0usize, 0usize, 0usize, 0usize);
    let mut vmin = y[0] - lambda;
    let mut vmax = y[0] + lambda;
    let mut umin = lambda;
    let mut umax = -lambda;
    let twol = 2.0 * lambda;
    loop {
        if k == n - 1 {
            if umin < 0.0 {
                x[k0..=kminus].fill(vmin);
                k = kminus + 1;
                k0 = k;
                kminus = k;
                vmin = y[k];
                umin = lambda;
                umax = y[k] + lambda - vmax;
            } else if umax > 0.0 {
                x[k0..=kplus].fill(vmax);
                k = kplus + 1;
                k0 = k;
                kplus = k;
                vmax = y[k];
                umax = -lambda;
                umin = y[k] - lambda - vmin;
            } else {
                vmin += umin / (k - k0 + 1) as f64;
                x[k0..=k].fill(vmin);
                return x;
            }
            continue;
        }
        umin += y[k + 1] - vmin;
        umax += y[k + 1] - vmax;
        if umin < -lambda {
            // A jump down after kminus.
            x[k0..=kminus].fill(vmin);
            k = kminus + 1;
            k0 = k;
            kminus = k;
            kplus = k;
            vmin = y[k];
            vmax = y[k] + twol;
            umin = lambda;
            umax = -lambda;
        } else if umax > lambda {
            // A jump up after kplus.
            x[k0..=kplus].fill(vmax);
            k = kplus + 1;
            k0 = k;
            kminus = k;
            kplus = k;
            vmin = y[k] - twol;
            vmax = y[k];
            umin = lambda;
            umax = -lambda;
        } else {
            k += 1;
            let len = (k - k0 + 1) as f64;
            if umin >= lambda {
                vmin += (umin - lambda) / len;
                umin = lambda;
                kminus = k;
            }
            if umax <= -lambda {
                vmax += (umax + lambda) / len;
                umax = -lambda;
                kplus = k;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The optimality conditions of TV denoising [closed form, from the problem's dual]:
    /// with s_k = Σ_{i≤k} (y_i − x_i), |s_k| ≤ λ everywhere, s_{n−1} = 0, and
    /// s_k = −λ·sign(x_{k+1} − x_k) wherever x jumps.
    fn check_optimal(y: &[f64], x: &[f64], lambda: f64) {
        let mut s = 0.0;
        for k in 0..y.len() {
            s += y[k] - x[k];
            let tol = 1e-9 * (1.0 + lambda);
            if k + 1 < y.len() {
                assert!(s.abs() <= lambda + tol, "|s_{k}| = {} > {lambda}", s.abs());
                let d = x[k + 1] - x[k];
                if d.abs() > 1e-12 {
                    assert!((s + lambda * d.signum()).abs() < tol, "s_{k} = {s} at a jump of {d}");
                }
            } else {
                assert!(s.abs() < tol, "the last partial sum {s} is not 0");
            }
        }
    }

    #[test]
    fn tv_solution_meets_the_optimality_conditions() {
        let mut state = 12345u64;
        let mut rnd = || {
            state = state.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            ((state >> 11) as f64 / (1u64 << 53) as f64) - 0.5
        };
        for &lambda in &[0.01, 0.1, 0.5, 3.0] {
            let y: Vec<f64> = (0..300).map(|k| if (k / 40) % 2 == 0 { 0.0 } else { 1.0 } + 0.2 * rnd()).collect();
            let x = tv_denoise(&y, lambda);
            check_optimal(&y, &x, lambda);
        }
    }

    #[test]
    fn a_large_weight_gives_the_mean_and_a_clean_step_keeps_its_edge() {
        let y = [1.0, 3.0, 2.0, 6.0];
        assert!(tv_denoise(&y, 100.0).iter().all(|v| (v - 3.0).abs() < 1e-12));
        // A clean step of 1 between two runs of 10: the step shrinks by 2λ/10 [closed form
        // of the optimality conditions: each side moves by λ/10].
        let y: Vec<f64> = (0..20).map(|k| if k < 10 { 0.0 } else { 1.0 }).collect();
        let x = tv_denoise(&y, 0.5);
        assert!((x[0] - 0.05).abs() < 1e-12 && (x[19] - 0.95).abs() < 1e-12, "{x:?}");
    }
}

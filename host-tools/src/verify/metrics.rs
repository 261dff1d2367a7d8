//! Figures of one probe trace against another: error, arrival, final value, settling,
//! overshoot.

/// Largest and RMS difference of `a − b` over their common length.
pub fn errors(a: &[f64], b: &[f64]) -> (f64, f64) {
    let n = a.len().min(b.len());
    if n == 0 {
        return (0.0, 0.0);
    }
    let (mut max, mut sq) = (0.0f64, 0.0f64);
    for k in 0..n {
        let d = a[k] - b[k];
        max = max.max(d.abs());
        sq += d * d;
    }
    (max, (sq / n as f64).sqrt())
}

/// First time (in samples, linearly interpolated) at which |x − x[0]| reaches `level`.
pub fn arrival(x: &[f64], level: f64) -> Option<f64> {
    let x0 = *x.first()?;
    let mut prev = 0.0;
    for (k, v) in x.iter().enumerate() {
        let d = (v - x0).abs();
        if d >= level {
            if k == 0 || d == prev {
                return Some(k as f64);
            }
            return Some(k as f64 - 1.0 + (level - prev) / (d - prev));
        }
        prev = d;
    }
    None
}

/// Samples after `start` until `x` stays within ±band of `target` for good (None if it
/// is still outside at the end of the run).
pub fn settling(x: &[f64], target: f64, band: f64, start: usize) -> Option<usize> {
    let last_out = x.iter().rposition(|v| (v - target).abs() > band);
    match last_out {
        None => Some(0),
        Some(k) if k + 1 >= x.len() => None,
        Some(k) => Some((k + 1).saturating_sub(start)),
    }
}

/// Peak overshoot above and undershoot below the final value `target`, as fractions of
/// `norm`, for a trace moving towards `target` (sign-aware: for a negative target the roles
/// swap).
pub fn overshoot(x: &[f64], target: f64, norm: f64) -> (f64, f64) {
    if norm <= 0.0 || x.is_empty() {
        return (0.0, 0.0);
    }
    let s = if target < 0.0 { -1.0 } else { 1.0 };
    let max = x.iter().map(|v| s * v).fold(f64::NEG_INFINITY, f64::max);
    // Undershoot: going below the start value (0) in the direction opposite to the target.
    let min = x.iter().map(|v| s * v).fold(f64::INFINITY, f64::min);
    (((max - s * target) / norm).max(0.0), ((-min) / norm).max(0.0))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn figures_of_a_simple_trace() {
        let x = [0.0, 0.0, 0.5, 1.2, 0.9, 1.02, 1.0, 1.0];
        assert_eq!(errors(&x, &x), (0.0, 0.0));
        let (m, r) = errors(&[1.0, 1.0], &[0.0, 2.0]);
        assert_eq!((m, r), (1.0, 1.0));
        assert!((arrival(&x, 0.25).unwrap() - 1.5).abs() < 1e-12);
        assert_eq!(arrival(&[0.0; 4], 0.1), None);
        assert_eq!(settling(&x, 1.0, 0.05, 0), Some(5)); // last outside is 0.9 at index 4
        assert_eq!(settling(&x, 1.0, 0.01, 0), Some(6));
        let (o, u) = overshoot(&x, 1.0, 1.0);
        assert!((o - 0.2).abs() < 1e-12 && u == 0.0);
        let (o, u) = overshoot(&[0.0, -0.1, 0.5], 0.5, 1.0);
        assert!(o == 0.0 && (u - 0.1).abs() < 1e-12);
    }
}

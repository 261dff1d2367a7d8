//! Fitting the two-term loss model to attenuation given at a few frequencies.
//!
//! Model (see [`LossModel`]): alpha(f) = k_c·sqrt(f) + k_d·f in Np/m, with k_c the
//! conductor (skin-effect) term and k_d the dielectric term, both >= 0 for a passive cable.
//! The fit is linear least squares in (k_c, k_d) over the given points, constrained to
//! non-negative coefficients: when the free optimum has a negative term, the better of the
//! two one-term fits is taken (for two unknowns that is the exact non-negative optimum).
//! One point, or points all at one frequency, give pure conductor loss.

use crate::plant::model::LossModel;

/// Why a set of loss points cannot be fitted.
#[derive(Debug, Clone, PartialEq)]
pub enum FitError {
    /// No points at all.
    Empty,
    /// A frequency that is zero, negative or not finite (index into the points).
    BadFrequency(usize),
    /// An attenuation that is negative or not finite (index into the points).
    BadAttenuation(usize),
}

/// Fit k_c, k_d to `(frequency Hz, attenuation Np/m)` points by non-negative least squares.
pub fn fit_loss(points: &[(f64, f64)]) -> Result<LossModel, FitError> {
    if points.is_empty() {
        return Err(FitError::Empty);
    }
    for (i, &(f, a)) in points.iter().enumerate() {
        if !(f.is_finite() && f > 0.0) {
            return Err(FitError::BadFrequency(i));
        }
        if !(a.is_finite() && a >= 0.0) {
            return Err(FitError::BadAttenuation(i));
        }
    }
    // Scale frequency to x = f / f_max so both basis functions are O(1): well conditioned.
    let f_max = points.iter().fold(0.0_f64, |m, p| m.max(p.0));
    let basis = |f: f64| ((f / f_max).sqrt(), f / f_max);
    let (mut s11, mut s12, mut s22, mut b1, mut b2) = (0.0, 0.0, 0.0, 0.0, 0.0);
    for &(f, a) in points {
        let (u, w) = basis(f);
        s11 += u * u;
        s12 += u * w;
        s22 += w * w;
        b1 += u * a;
        b2 += w * a;
    }
    let det = s11 * s22 - s12 * s12;
    // Coefficients in the scaled basis; converted to per-Hz units at the end.
    let (c, d) = if det > 1e-12 * s11 * s22 {
        let c = (b1 * s22 - b2 * s12) / det;
        let d = (s11 * b2 - s12 * b1) / det;
        if c >= 0.0 && d >= 0.0 {
            (c, d)
        } else {
            better_single_term(points, &basis, (b1 / s11, b2 / s22))
        }
    } else {
        // All points at one frequency: only the conductor term is determined.
        (b1 / s11, 0.0)
    };
    Ok(LossModel { k_c: c / f_max.sqrt(), k_d: d / f_max })
}

/// The one-term fit (conductor only or dielectric only) with the smaller squared residual.
fn better_single_term(
    points: &[(f64, f64)],
    basis: &dyn Fn(f64) -> (f64, f64),
    (c_only, d_only): (f64, f64),
) -> (f64, f64) {
    let residual = |c: f64, d: f64| -> f64 {
        points
            .iter()
            .map(|&(f, a)| {
                let (u, w) = basis(f);
                (c * u + d * w - a).powi(2)
            })
            .sum()
    };
    if residual(c_only, 0.0) <= residual(0.0, d_only) {
        (c_only, 0.0)
    } else {
        (0.0, d_only)
    }
}

/// Attenuation of a loss model at frequency `f` Hz, Np/m.
pub fn alpha(loss: &LossModel, f: f64) -> f64 {
    loss.k_c * f.sqrt() + loss.k_d * f
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exact_two_term_data_is_recovered() {
        // Points generated from a known model [closed form]: the fit must return it.
        let truth = LossModel { k_c: 2.0e-6, k_d: 3.0e-11 };
        let pts: Vec<(f64, f64)> = [1e6, 1e7, 1e8, 5e8].iter().map(|&f| (f, alpha(&truth, f))).collect();
        let fit = fit_loss(&pts).unwrap();
        assert!((fit.k_c / truth.k_c - 1.0).abs() < 1e-9, "{fit:?}");
        assert!((fit.k_d / truth.k_d - 1.0).abs() < 1e-9, "{fit:?}");
    }

    #[test]
    fn one_point_is_pure_conductor_loss() {
        let fit = fit_loss(&[(1e8, 0.02)]).unwrap();
        assert_eq!(fit.k_d, 0.0);
        assert!((alpha(&fit, 1e8) - 0.02).abs() < 1e-15);
    }

    #[test]
    fn loss_falling_with_frequency_clamps_to_non_negative_terms() {
        // Unconstrained least squares would give k_d < 0 here; a passive cable cannot.
        let fit = fit_loss(&[(1e6, 0.01), (1e8, 0.05), (4e8, 0.06)]).unwrap();
        assert!(fit.k_c >= 0.0 && fit.k_d >= 0.0, "{fit:?}");
        assert!(fit.k_c > 0.0);
    }

    #[test]
    fn bad_points_are_rejected() {
        assert_eq!(fit_loss(&[]), Err(FitError::Empty));
        assert_eq!(fit_loss(&[(1e6, 0.1), (0.0, 0.1)]), Err(FitError::BadFrequency(1)));
        assert_eq!(fit_loss(&[(1e6, -0.1)]), Err(FitError::BadAttenuation(0)));
        assert_eq!(fit_loss(&[(f64::NAN, 0.1)]), Err(FitError::BadFrequency(0)));
    }
}

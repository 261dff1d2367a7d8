//! One uniform line segment as an exact two-port, from the telegrapher's equations.
//!
//! Per metre the line has a series impedance Z(s) and a shunt admittance Y(s):
//!
//! * Z(s) = R_dc + R_skin(s) + s·L'
//! * Y(s) = s·C' + Y_d(s)
//!
//! with gamma = sqrt(Z·Y) and Zc = sqrt(Z/Y). A length l between its `from` end (1) and its
//! `to` end (2) obeys, with currents counted *into* the line at each end,
//!
//! ```text
//! i1 = Y11·v1 + Y12·v2,   i2 = Y12·v1 + Y11·v2,
//! Y11 = coth(gamma·l) / Zc,   Y12 = −1 / (Zc·sinh(gamma·l)).
//! ```
//!
//! Written with x = gamma·l and the totals Zl = Z·l, Yl = Y·l (so x² = Zl·Yl and
//! 1/Zc = x/Zl): Y11 = x·coth(x)/Zl and Y12 = −x·csch(x)/Zl. Both x·coth(x) and x·csch(x)
//! are even in x, so the branch of the square root cannot change the result.
//!
//! Loss continuations (the [`LossModel`](crate::plant::LossModel) gives attenuation
//! alpha(f) = k_c·sqrt(f) + k_d·f on the jω axis, in the small-loss sense
//! alpha = R/(2·Z0) + G·Z0/2):
//!
//! * Conductor: R_skin(s) = 2·Z0·k_c·sqrt(s/pi) (principal root). On s = j·2·pi·f this is
//!   2·Z0·k_c·sqrt(f)·(1 + j): its real part is exactly the resistance 2·Z0·k_c·sqrt(f)
//!   that alpha_c = R/(2·Z0) asks for, and the internal reactance equals it (the classic
//!   skin-effect surface impedance). It is analytic and positive-real for Re s > 0.
//! * Dielectric: Y_d(s) = −(2·k_d/(pi²·Z0))·s·ln(s/w_ref), w_ref = 2·pi·[`DIELECTRIC_REF_HZ`].
//!   On s = j·2·pi·f its real part is exactly G(f) = 2·k_d·f/Z0, and its imaginary part is
//!   the Kramers–Kronig partner of a constant loss tangent tan(delta) = k_d·v/pi: the
//!   capacitance becomes C'·(1 − (2·tan(delta)/pi)·ln(f/f_ref)), nominal at f_ref. This is
//!   analytic for Re s > 0 (so the time response is causal and does not depend on the
//!   damping of the Laplace inversion) and passive for |s| < w_ref·exp(pi/(2·tan(delta))),
//!   which is far beyond any sample rate for real cables.

use crate::plant::CableType;
use num_complex::Complex64;
use std::f64::consts::PI;

/// Frequency at which the lossy dielectric's capacitance equals the nominal C', Hz.
///
/// The plant model gives Z0 and v "at high frequency"; 1 GHz is above the band of every
/// plant the emulator runs, so the nominal values hold at the top of the band.
pub const DIELECTRIC_REF_HZ: f64 = 1e9;

/// Below this |gamma·l| the even functions use their Taylor series (error < 1e-17).
const SERIES_LIMIT: f64 = 0.02;

/// Above this Re(gamma·l), coth and csch use exp(−2·gamma·l), which cannot overflow.
const EXP_FORM_LIMIT: f64 = 1.0;

/// Series impedance per metre Z(s) = R_dc + 2·Z0·k_c·sqrt(s/pi) + s·L', ohm/m.
pub fn series_impedance(cable: &CableType, s: Complex64) -> Complex64 {
    let mut z = Complex64::new(cable.r_per_m, 0.0) + s * cable.l_per_m();
    if let Some(loss) = cable.loss {
        if loss.k_c != 0.0 {
            z += 2.0 * cable.z0 * loss.k_c * (s / PI).sqrt();
        }
    }
    z
}

/// Shunt admittance per metre Y(s) = s·C' − (2·k_d/(pi²·Z0))·s·ln(s/w_ref), S/m.
pub fn shunt_admittance(cable: &CableType, s: Complex64) -> Complex64 {
    let mut y = s * cable.c_per_m();
    if let Some(loss) = cable.loss {
        // s·ln(s) tends to 0 at s = 0; the guard only avoids ln(0).
        if loss.k_d != 0.0 && s != Complex64::new(0.0, 0.0) {
            let w_ref = 2.0 * PI * DIELECTRIC_REF_HZ;
            y -= 2.0 * loss.k_d / (PI * PI * cable.z0) * s * (s / w_ref).ln();
        }
    }
    y
}

/// Nodal admittances of a symmetric, reciprocal two-port: Y22 = Y11 and Y21 = Y12.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TwoPort {
    /// Current into the line at an end per volt at that end, S.
    pub y11: Complex64,
    /// Current into the line at an end per volt at the other end, S.
    pub y12: Complex64,
}

/// The two-port of `length` metres of `cable` at complex frequency `s` (s ≠ 0 unless the
/// cable has DC resistance).
pub fn two_port(cable: &CableType, length: f64, s: Complex64) -> TwoPort {
    let zl = series_impedance(cable, s) * length;
    let yl = shunt_admittance(cable, s) * length;
    let (x_coth, x_csch) = even_functions(zl * yl);
    TwoPort { y11: x_coth / zl, y12: -x_csch / zl }
}

/// x·coth(x) and x·csch(x) for x² = `x2`, accurate for small |x| and safe for large Re x.
pub(crate) fn even_functions(x2: Complex64) -> (Complex64, Complex64) {
    let x = x2.sqrt(); // principal root: Re x >= 0
    if x.norm() < SERIES_LIMIT {
        // x·coth x = 1 + x²/3 − x⁴/45 + 2x⁶/945; x·csch x = 1 − x²/6 + 7x⁴/360 − 31x⁶/15120.
        let x4 = x2 * x2;
        let x6 = x4 * x2;
        let coth = 1.0 + x2 / 3.0 - x4 / 45.0 + x6 * (2.0 / 945.0);
        let csch = 1.0 - x2 / 6.0 + x4 * (7.0 / 360.0) - x6 * (31.0 / 15120.0);
        (coth, csch)
    } else if x.re > EXP_FORM_LIMIT {
        // With e = exp(−2x), |e| < exp(−2): coth x = (1 + e)/(1 − e), csch x = 2·exp(−x)/(1 − e).
        let e1 = (-x).exp();
        let e2 = e1 * e1;
        let one = Complex64::new(1.0, 0.0);
        (x * (one + e2) / (one - e2), x * 2.0 * e1 / (one - e2))
    } else {
        // Moderate Re x: cosh and sinh cannot overflow and are accurate component-wise.
        let sinh = x.sinh();
        (x * x.cosh() / sinh, x / sinh)
    }
}

/// S21 of one segment between two `z_ref` terminations at frequency `f` Hz (s = j·2·pi·f).
///
/// With the chain (ABCD) parameters A = D = cosh x, B = Zc·sinh x, C = sinh x / Zc:
/// S21 = 2 / (A + B/z + C·z + D). Multiplying through by 2·exp(−x) gives the form used,
/// S21 = 4·exp(−x) / (2·(1 + E) + (Zc/z + z/Zc)·(1 − E)) with E = exp(−2x), which stays
/// finite for any loss. At f = 0 the segment is its DC resistance in series. Negative
/// frequencies follow from S21(−f) = conj S21(f). Non-finite inputs give NaN.
pub fn segment_s21(cable: &CableType, length: f64, f: f64, z_ref: f64) -> Complex64 {
    if f == 0.0 {
        let r = cable.r_per_m * length;
        return Complex64::new(2.0 * z_ref / (2.0 * z_ref + r), 0.0);
    }
    let s = Complex64::new(0.0, 2.0 * PI * f.abs());
    let zl = series_impedance(cable, s) * length;
    let yl = shunt_admittance(cable, s) * length;
    let x = (zl * yl).sqrt();
    let zc = zl / x;
    let e1 = (-x).exp();
    let e2 = e1 * e1;
    let one = Complex64::new(1.0, 0.0);
    let mismatch = zc / z_ref + z_ref / zc;
    let s21 = 4.0 * e1 / (2.0 * (one + e2) + mismatch * (one - e2));
    if f < 0.0 {
        s21.conj()
    } else {
        s21
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plant::LossModel;

    fn cable(z0: f64, velocity: f64, r_per_m: f64, loss: Option<LossModel>) -> CableType {
        CableType { name: "test".into(), z0, velocity, r_per_m, loss, source: "unit test".into() }
    }

    fn close(a: Complex64, b: Complex64, rel: f64) -> bool {
        (a - b).norm() <= rel * b.norm().max(1e-300)
    }

    #[test]
    fn lossless_two_port_on_the_jw_axis_equals_the_classic_abcd_form() {
        // [closed form] lossless line: A = D = cos(bl), B = j·Z0·sin(bl), C = j·sin(bl)/Z0;
        // Y11 = D/B, Y12 = −1/B. Frequencies span the series, direct and near-resonance cases.
        let c = cable(75.0, 2.0e8, 0.0, None);
        let length = 13.0;
        for f in [1.0e3, 4.0e4, 1.0e6, 7.3e6, 3.1e7, 2.2e8] {
            let w = 2.0 * PI * f;
            let bl = w * length / c.velocity;
            let b = Complex64::new(0.0, c.z0 * bl.sin());
            let tp = two_port(&c, length, Complex64::new(0.0, w));
            assert!(close(tp.y11, Complex64::new(bl.cos(), 0.0) / b, 1e-9), "Y11 at {f} Hz");
            assert!(close(tp.y12, -1.0 / b, 1e-9), "Y12 at {f} Hz");
        }
    }

    #[test]
    fn lossy_two_port_matches_textbook_coth_and_csch_where_both_are_safe() {
        // [closed form] Y11 = coth(gamma l)/Zc, Y12 = −csch(gamma l)/Zc, evaluated directly,
        // at lengths that put Re(gamma l) on both sides of the exp-form switch.
        let c = cable(100.0, 2.0e8, 0.2, Some(LossModel { k_c: 2.3e-6, k_d: 2.6e-11 }));
        let s = Complex64::new(3.0e6, 2.0 * PI * 5.0e7);
        for length in [0.3, 40.0, 400.0, 900.0, 2000.0] {
            let z = series_impedance(&c, s);
            let y = shunt_admittance(&c, s);
            let gamma = (z * y).sqrt();
            let zc = (z / y).sqrt();
            let x = gamma * length;
            let tp = two_port(&c, length, s);
            assert!(close(tp.y11, x.cosh() / x.sinh() / zc, 1e-10), "Y11 at {length} m");
            assert!(close(tp.y12, -1.0 / (x.sinh() * zc), 1e-10), "Y12 at {length} m");
        }
    }

    #[test]
    fn coth_form_is_finite_for_very_large_gamma_l() {
        // [closed form] for Re(gamma l) -> infinity, Y11 -> 1/Zc and Y12 -> 0; cosh and sinh
        // themselves overflow beyond Re x ~ 710, the exp(−2x) form must not.
        let c = cable(50.0, 2.0e8, 5.0, None);
        let s = Complex64::new(1.0e3, 2.0 * PI * 1.0e9);
        let length = 2.0e5;
        let tp = two_port(&c, length, s);
        let zc = (series_impedance(&c, s) / shunt_admittance(&c, s)).sqrt();
        let x = (series_impedance(&c, s) * shunt_admittance(&c, s)).sqrt() * length;
        assert!(x.re > 1000.0, "the case must be beyond cosh overflow, Re x = {}", x.re);
        assert!(close(tp.y11, 1.0 / zc, 1e-12));
        assert!(tp.y12.norm().is_finite() && tp.y12.norm() < 1e-300);
        let s21 = segment_s21(&c, length, 1.0e9, 50.0);
        assert!(s21.norm().is_finite() && s21.norm() < 1e-300);
    }

    #[test]
    fn series_and_direct_forms_agree_at_the_switch() {
        // [closed form] the Taylor series and cosh/sinh describe the same function.
        for arg in [0.0, 0.7, 1.6, 3.0] {
            let below = Complex64::from_polar(SERIES_LIMIT * (1.0 - 1e-12), arg);
            let above = Complex64::from_polar(SERIES_LIMIT * (1.0 + 1e-12), arg);
            let (cb, sb) = even_functions(below * below);
            let (ca, sa) = even_functions(above * above);
            assert!(close(cb, ca, 1e-14) && close(sb, sa, 1e-14), "arg {arg}");
        }
    }

    #[test]
    fn loss_continuations_keep_the_real_part_convention() {
        // [closed form] Re R_skin(j2πf) = 2·Z0·k_c·sqrt(f) with equal internal reactance;
        // Re Y_d(j2πf) = 2·k_d·f/Z0 (so alpha = R/(2Z0) + G·Z0/2 = k_c·sqrt f + k_d·f).
        let loss = LossModel { k_c: 2.0e-6, k_d: 3.0e-11 };
        let c = cable(100.0, 2.0e8, 0.0, Some(loss));
        for f in [1.0e5, 1.0e7, 3.0e8] {
            let s = Complex64::new(0.0, 2.0 * PI * f);
            let r_skin = series_impedance(&c, s) - s * c.l_per_m();
            let want = 2.0 * c.z0 * loss.k_c * f.sqrt();
            assert!((r_skin.re - want).abs() <= 1e-12 * want, "R at {f}");
            assert!((r_skin.im - want).abs() <= 1e-12 * want, "X_int at {f}");
            let g = shunt_admittance(&c, s).re;
            let want_g = 2.0 * loss.k_d * f / c.z0;
            assert!((g - want_g).abs() <= 1e-9 * want_g, "G at {f}");
        }
        // Nominal capacitance at the reference frequency.
        let s = Complex64::new(0.0, 2.0 * PI * DIELECTRIC_REF_HZ);
        let c_eff = shunt_admittance(&c, s).im / s.im;
        assert!((c_eff - c.c_per_m()).abs() <= 1e-12 * c.c_per_m());
    }

    #[test]
    fn matched_lossless_s21_is_a_pure_delay() {
        // [closed form] S21 = exp(−j·w·l/v) for a lossless line between Z0 terminations.
        let c = cable(120.0, 1.9e8, 0.0, None);
        for f in [1.0e3, 2.5e6, 9.0e7] {
            let s21 = segment_s21(&c, 37.0, f, 120.0);
            let want = Complex64::from_polar(1.0, -2.0 * PI * f * 37.0 / c.velocity);
            assert!(close(s21, want, 1e-10), "S21 at {f} Hz");
            assert!(close(segment_s21(&c, 37.0, -f, 120.0), want.conj(), 1e-10));
        }
        // [closed form] at DC a lossy segment is its series resistance between terminations.
        let r = cable(50.0, 2.0e8, 0.1, None);
        assert!((segment_s21(&r, 100.0, 0.0, 50.0).re - 100.0 / 110.0).abs() < 1e-15);
    }
}

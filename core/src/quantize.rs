//! Coefficient quantization shared by the core and the host tools, so that the host's f64
//! twin, the compiler's checks and the solver use the very same integers.

/// One loss section's coefficients at `frac` fraction bits, from its pole `a` and zero `b`
/// in Q30 (`pole` = a·2^30, `zero` = b·2^30): returns `(a_q, g, gb)` as integers of
/// one = 2^frac, the section being H(z) = (g − gb·z⁻¹)/(one − a_q·z⁻¹).
///
/// The rule is **DC-exact**: g − gb = one − a_q, so H(1) = 1 in exact arithmetic and a
/// constant wave passes unchanged (the DC operating point follows Ohm's law however coarse
/// the pole is: at 14 bits a pole a few LSB below one used to lose ~10 % per section).
///
/// * a_q = round(a·2^frac), at most one − 1: the pole, hence the section's corner
///   ω_p ≈ 1 − a, moves by at most half an LSB (rounding, not flooring, halves the corner's
///   error where 1 − a is a few LSB);
/// * g = round(one·(1 − a)/(1 − b)) from the Q30 design (at least 1): g/one is the
///   section's gain at z → ∞ (its first impulse-response sample), and with the DC rule the
///   gain at Nyquist, (2g − one + a_q)/(one + a_q), stays within 1/(2·one) of the design's
///   whatever a_q's rounding: the shelf keeps its depth, only its corners move with a_q;
/// * gb = g − (one − a_q), from the DC rule.
///
/// Attenuating: the effective zero gb/g is at or below the pole a_q/one exactly when
/// gb <= a_q (gb·one <= a_q·g ⇔ gb·(one − a_q) <= a_q·(one − a_q)), i.e. g <= one, which
/// g's rounding keeps because b < a. Then |H(e^jω)|² = (g/one)²·(1 − 2β·cos ω + β²)/
/// (1 − 2α·cos ω + α²) (α = a_q/one, β = gb/g) has d/d(cos ω) ∝ (α − β)(1 − αβ) >= 0:
/// |H| falls monotonically from H(1) = 1. The loader checks these conditions again from the
/// integers (`configure::passive::loss_ok`).
///
/// `None` for `frac` > 30 or a section outside −2^30 < `zero` < `pole` < 2^30. Within those
/// ranges (1 − a)·2^frac < 2^61 and 1 − b is in [1, 2^31]: every step is exact (checked
/// arithmetic all the same, so no input can panic or wrap).
pub fn loss_section(pole: i64, zero: i64, frac: u32) -> Option<(i64, i64, i64)> {
    if pole >= 1 << 30 || zero >= pole || zero <= -(1 << 30) {
        return None;
    }
    let gap = 30u32.checked_sub(frac)?;
    let one = 1i64.checked_shl(frac)?;
    // Round half up: (pole + 2^(gap−1)) >> gap (gap = 0: no rounding).
    let half = 1i64.checked_shl(gap)?.checked_shr(1)?;
    let a = pole.checked_add(half)?.checked_shr(gap)?.min(one.checked_sub(1)?);
    // g = round(num/den), num = (2^30 − pole)·one, den = 2^30 − zero > 0.
    let (num, den) = ((1i64 << 30).checked_sub(pole)?.checked_shl(frac)?, (1i64 << 30).checked_sub(zero)?);
    let g = num.checked_mul(2)?.checked_add(den)?.checked_div(den.checked_mul(2)?)?.max(1);
    let gb = g.checked_sub(one.checked_sub(a)?)?;
    Some((a, g, gb))
}

/// A fractional-delay allpass's lattice coefficients at `frac` fraction bits, from Q30
/// (`a` = a·2^30, `c` = c·2^30): both truncated toward zero, so |a_q| <= |a| and c_q <= c and
/// a_q² + c_q² <= a² + c². Returns `(a_q, c_q)`; `None` for `frac` > 30.
pub fn allpass(a: i32, c: u32, frac: u32) -> Option<(i32, u32)> {
    let gap = 30u32.checked_sub(frac)?;
    // Truncation toward zero of a signed value: shift the magnitude.
    let mag = a.unsigned_abs().checked_shr(gap)?;
    let aq = i32::try_from(mag).ok()?;
    let aq = if a < 0 { aq.checked_neg()? } else { aq };
    Some((aq, c.checked_shr(gap)?))
}

/// One Zc(s) section's coefficients at `frac` fraction bits, from Q30 (`k` = k·2^30,
/// `rho` = ρ·2^30; see [`crate::ZcNetwork`]): both truncated toward zero (so k_q <= k and
/// ρ_q <= ρ). Returns `(k_q, ρ_q)`; `None` for `frac` > 30. The loader checks the ranges.
pub fn zc_section(k: u32, rho: u32, frac: u32) -> Option<(u32, u32)> {
    let gap = 30u32.checked_sub(frac)?;
    Some((k.checked_shr(gap)?, rho.checked_shr(gap)?))
}

//! Coefficient quantization shared by the core and the host tools, so that the host's f64
//! twin, the compiler's checks and the solver use the very same integers.

/// One loss section's coefficients at `frac` fraction bits, from its pole `a` and zero `b`
/// in Q30 (`pole` = a·2^30, `zero` = b·2^30): returns `(a_q, g, gb)` as integers of
/// 2^frac, the section being `y[n] = g·x[n] − gb·x[n−1] + a_q·y[n−1]` (all over 2^frac).
///
/// * a_q = floor(a·2^frac), b_q = floor(b·2^frac): b only moves away from a;
/// * g = floor((1 − a_q)/(1 − b_q)) and gb = ceil(g·b_q): the DC gain (g − gb)/(1 − a_q)
///   is at most 1 and the effective zero gb/g stays at or above b_q, so the quantized
///   section still only attenuates.
///
/// `None` for `frac` > 30 or a section outside −2^30 < `zero` < `pole` < 2^30. Within those
/// ranges (one − a)·one < 2^60 and one − b is in [1, 2^31]: every step is exact (checked
/// arithmetic all the same, so no input can panic or wrap).
pub fn loss_section(pole: i64, zero: i64, frac: u32) -> Option<(i64, i64, i64)> {
    if pole >= 1 << 30 || zero >= pole || zero <= -(1 << 30) {
        return None;
    }
    let gap = 30u32.checked_sub(frac)?;
    let one = 1i64.checked_shl(frac)?;
    let (a, b) = (pole.checked_shr(gap)?, zero.checked_shr(gap)?);
    let g = one.checked_sub(a)?.checked_shl(frac)?.checked_div(one.checked_sub(b)?)?;
    let gb_exact = g.checked_mul(b)?;
    let gb = gb_exact.checked_div_euclid(one)?.checked_add(i64::from(gb_exact.checked_rem_euclid(one)? != 0))?;
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

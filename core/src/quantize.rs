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
/// Valid for `frac` <= 30 and −2^30 < `zero` < `pole` < 2^30 (the core refuses other
/// sections before calling this): then 0 <= g <= 2^frac and every product fits an i64.
pub fn loss_section(pole: i64, zero: i64, frac: u32) -> (i64, i64, i64) {
    let one = 1i64 << frac;
    let a = pole >> (30 - frac);
    let b = zero >> (30 - frac);
    let g = ((one - a) << frac) / (one - b).max(1);
    let gb = (g * b).div_euclid(one) + ((g * b).rem_euclid(one) != 0) as i64;
    (a, g, gb)
}

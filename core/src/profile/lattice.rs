//! The fractional-delay allpass of both profiles: the normalised (Gray–Markel) lattice
//! y = a·x + c·s, s' = c·x − a·s, a lossless two-port between the arriving wave x and the
//! stored value s (H(z) = Y/X = (a + z⁻¹)/(1 + a·z⁻¹), a first-order Thiran allpass).
//!
//! Passivity: the matrix M = [[a, c], [c, −a]] is symmetric with M² = (a² + c²)·I, so its
//! norm is sqrt(a² + c²), and `load` checks a² + c² <= 2^(2F) from the integers
//! (`configure/passive.rs`). The exact outputs then satisfy y² + s'² <= x² + s²; each is
//! truncated toward zero and saturated, which only lowers its magnitude, so
//! y_q² + s'_q² <= x² + s²: the section sends on and keeps at most what arrived and what it
//! kept.
use super::arith::Acc;
use super::{sat_i16, trunc_sat64, trunc_shr32, Profile, Wide};

/// Wide: |a|, c <= 2^30 (checked at load) and |x|, |s| <= 2^31, so each product is at most
/// 2^61 and each sum of two at most 2^62: exact in i64.
#[inline(always)]
pub(super) fn wide(x: i32, s: i32, a: i32, c: u32) -> (i32, i32) {
    let (ax, a_s) = (i64::from(a).wrapping_mul(i64::from(x)), i64::from(a).wrapping_mul(i64::from(s)));
    let t = |n: i64| trunc_sat64(n, Wide::LOSS_FRAC);
    (t(ax.wrapping_add(<i64 as Acc>::mul(c, s))), t(<i64 as Acc>::mul(c, x).wrapping_sub(a_s)))
}

/// Narrow: |a|, c <= 2^14 (checked at load) and |x|, |s| <= 2^15, so each product is at most
/// 2^29 and each sum of two at most 2^30: exact in i32 (16x16->32 products only).
#[inline(always)]
pub(super) fn narrow(x: i16, s: i16, a: i32, c: u32) -> (i16, i16) {
    let (x, s, c) = (x as i32, s as i32, c as i32);
    let t = |n: i32| sat_i16(trunc_shr32(n, super::Narrow::LOSS_FRAC));
    (t(a.wrapping_mul(x).wrapping_add(c.wrapping_mul(s))), t(c.wrapping_mul(x).wrapping_sub(a.wrapping_mul(s))))
}

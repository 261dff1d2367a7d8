//! Number profiles: the fixed-point formats of waves, weights and products.
//!
//! Two profiles run behind one generic solver:
//!
//! | profile | wave | node weights | accumulator | reciprocal | for |
//! |---|---|---|---|---|---|
//! | [`Wide`] | `i32` | sum <= 2^30 | `i64` | 32-bit, split into two 32x32->64 products | Cortex-M4 class |
//! | [`Narrow`] | `i16` | sum <= 2^14 | `i32` | 16-bit, split into two 16x16->32 products | Cortex-M0 class |
//!
//! `Narrow` never forms a 64-bit product, so it needs only the M0's 32x32->32 multiply.
//!
//! Rounding rule (passivity, see the crate docs): every outgoing quantity is computed from
//! exact double-width sums and quantized once by truncating its magnitude (toward zero), then
//! saturated. Both steps never increase a magnitude and never flip a sign.

/// One number profile. Implemented by [`Wide`] and [`Narrow`] only.
pub trait Profile: Copy + 'static + sealed::Sealed {
    /// A travelling wave (voltage units, `2^-io_shift` I/O codes per LSB).
    type Wave: Copy + Default + PartialEq + core::fmt::Debug + Into<i32>;
    /// The zero wave (usable in `const` contexts).
    const ZERO: Self::Wave;
    /// Name for reports.
    const NAME: &'static str;
    /// log2 of the largest allowed sum of port and source weights at one node.
    const WEIGHT_BITS: u32;
    /// Width of the node reciprocal and of the halves its product is split into.
    const RECIP_BITS: u32;
    /// Fractional bits of the series-junction coefficients.
    const SERIES_FRAC: u32;
    /// Largest `io_shift` the wave range leaves room for.
    const MAX_IO_SHIFT: u8;

    /// Node voltage v = trunc((2·Σ g_k·b_k + g_src·e) / total), from the reciprocal
    /// (`recip`, `shift`) of `total` and one exact correction step against `corr` (= total,
    /// or 0 where the quotient is known to be below one LSB).
    fn node_voltage(
        b: &[Self::Wave],
        g: &[u32],
        e: Self::Wave,
        g_src: u32,
        recip: u32,
        shift: u32,
        corr: u64,
    ) -> Self::Wave;
    /// a = sat(v − b).
    fn sub(v: Self::Wave, b: Self::Wave) -> Self::Wave;
    /// a = sat(−b).
    fn neg(b: Self::Wave) -> Self::Wave;
    /// Series two-port: x = b1 − b2, y_k = trunc(c_k·x / 2^SERIES_FRAC),
    /// a1 = sat(b1 − y1), a2 = sat(b2 + y2).
    fn series(b1: Self::Wave, b2: Self::Wave, c1: u32, c2: u32) -> (Self::Wave, Self::Wave);
    /// Input code to wave: sat(code · 2^shift).
    fn from_code(code: i16, shift: u32) -> Self::Wave;
    /// Wave (or a sum of two waves, as i32) to output code: sat(trunc(x / 2^shift)).
    fn to_code(x: i32, shift: u32) -> i16;
    /// a + b or a − b, for probes, as i32 (saturating in [`Wide`]).
    fn sum(a: Self::Wave, b: Self::Wave) -> i32;
    fn diff(a: Self::Wave, b: Self::Wave) -> i32;
}

mod sealed {
    pub trait Sealed {}
    impl Sealed for super::Wide {}
    impl Sealed for super::Narrow {}
}

/// 32-bit waves, 64-bit accumulators (Cortex-M4 class: `SMULL`/`UMULL`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Wide;

/// 16-bit waves, 32-bit accumulators, no 64-bit products (Cortex-M0 class).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Narrow;

/// Branch-free conditional negation: returns `m` with the sign of `s` (s = 0 or −1 mask).
#[inline(always)]
fn apply_sign64(m: i64, mask: i64) -> i64 {
    (m ^ mask).wrapping_sub(mask)
}
#[inline(always)]
fn apply_sign32(m: i32, mask: i32) -> i32 {
    (m ^ mask).wrapping_sub(mask)
}
#[inline(always)]
fn sat_i16(x: i32) -> i16 {
    x.clamp(i16::MIN as i32, i16::MAX as i32) as i16
}

impl Profile for Wide {
    type Wave = i32;
    const ZERO: i32 = 0;
    const NAME: &'static str = "wide (32-bit waves)";
    const WEIGHT_BITS: u32 = 30;
    const RECIP_BITS: u32 = 32;
    const SERIES_FRAC: u32 = 30;
    const MAX_IO_SHIFT: u8 = 15;

    #[inline(always)]
    fn node_voltage(b: &[i32], g: &[u32], e: i32, g_src: u32, recip: u32, shift: u32, corr: u64) -> i32 {
        // |Σ g·b| <= 2^30 · 2^31, so 2·Σ + g_src·e < 2^63: exact in i64.
        let mut acc: i64 = 0;
        for (bk, gk) in b.iter().zip(g.iter()) {
            acc = acc.wrapping_add((*gk as i64).wrapping_mul(*bk as i64));
        }
        let acc = acc.wrapping_shl(1).wrapping_add((g_src as i64).wrapping_mul(e as i64));
        let mask = acc >> 63;
        let mag = acc.unsigned_abs();
        // mag · recip / 2^32 from two 32x32->64 products; each step floors (toward zero on
        // the magnitude), so the result never exceeds the exact quotient.
        let hi = mag >> 32;
        let lo = mag & 0xFFFF_FFFF;
        let r = recip as u64;
        let q = hi.wrapping_mul(r).wrapping_add(lo.wrapping_mul(r) >> 32).wrapping_shr(shift);
        // q <= floor(mag/total) <= q + 1 (for any v within the wave range): one exact step.
        // The true remainder mag − q·total lies in [0, 2·total) ⊂ [0, 2^64), so wrapping
        // arithmetic gives it exactly; adding 1 only when it reaches `total` keeps q <= floor.
        let rem = mag.wrapping_sub(q.wrapping_mul(corr));
        let q = q + ((rem >= corr) & (corr != 0)) as u64;
        let v = apply_sign64(q as i64, mask);
        v.clamp(i32::MIN as i64, i32::MAX as i64) as i32
    }
    #[inline(always)]
    fn sub(v: i32, b: i32) -> i32 {
        v.saturating_sub(b)
    }
    #[inline(always)]
    fn neg(b: i32) -> i32 {
        b.saturating_neg()
    }
    #[inline(always)]
    fn series(b1: i32, b2: i32, c1: u32, c2: u32) -> (i32, i32) {
        let x = (b1 as i64).wrapping_sub(b2 as i64); // |x| < 2^32
        let mask = x >> 63;
        let m = x.unsigned_abs(); // c < 2^31, so m·c < 2^63
        let y1 = apply_sign64((m.wrapping_mul(c1 as u64) >> Self::SERIES_FRAC) as i64, mask);
        let y2 = apply_sign64((m.wrapping_mul(c2 as u64) >> Self::SERIES_FRAC) as i64, mask);
        let a1 = (b1 as i64).wrapping_sub(y1);
        let a2 = (b2 as i64).wrapping_add(y2);
        (
            a1.clamp(i32::MIN as i64, i32::MAX as i64) as i32,
            a2.clamp(i32::MIN as i64, i32::MAX as i64) as i32,
        )
    }
    #[inline(always)]
    fn from_code(code: i16, shift: u32) -> i32 {
        (code as i32).wrapping_shl(shift) // shift <= 15 keeps |code·2^shift| < 2^31
    }
    #[inline(always)]
    fn to_code(x: i32, shift: u32) -> i16 {
        let mask = x >> 31;
        let m = apply_sign32((x.unsigned_abs().wrapping_shr(shift)) as i32, mask);
        sat_i16(m)
    }
    #[inline(always)]
    fn sum(a: i32, b: i32) -> i32 {
        a.saturating_add(b)
    }
    #[inline(always)]
    fn diff(a: i32, b: i32) -> i32 {
        a.saturating_sub(b)
    }
}

impl Profile for Narrow {
    type Wave = i16;
    const ZERO: i16 = 0;
    const NAME: &'static str = "narrow (16-bit waves)";
    const WEIGHT_BITS: u32 = 14;
    const RECIP_BITS: u32 = 16;
    const SERIES_FRAC: u32 = 14;
    const MAX_IO_SHIFT: u8 = 0;

    #[inline(always)]
    fn node_voltage(b: &[i16], g: &[u32], e: i16, g_src: u32, recip: u32, shift: u32, corr: u64) -> i16 {
        // |Σ g·b| <= 2^14 · 2^15, so 2·Σ + g_src·e <= 2^30: exact in i32.
        let mut acc: i32 = 0;
        for (bk, gk) in b.iter().zip(g.iter()) {
            acc = acc.wrapping_add((*gk as i32).wrapping_mul(*bk as i32));
        }
        let acc = acc.wrapping_shl(1).wrapping_add((g_src as i32).wrapping_mul(e as i32));
        let mask = acc >> 31;
        let mag = acc.unsigned_abs();
        // Two 16x16->32 products: hi·r < 2^31, lo·r < 2^32.
        let hi = mag >> 16;
        let lo = mag & 0xFFFF;
        let q = hi.wrapping_mul(recip).wrapping_add(lo.wrapping_mul(recip) >> 16).wrapping_shr(shift);
        // Exact correction as in `Wide`; `corr` < 2^31 here (0 for larger totals, whose
        // quotient is below one LSB anyway).
        let corr = corr as u32;
        let rem = mag.wrapping_sub(q.wrapping_mul(corr));
        let q = q + ((rem >= corr) & (corr != 0)) as u32;
        let v = apply_sign32(q as i32, mask);
        sat_i16(v)
    }
    #[inline(always)]
    fn sub(v: i16, b: i16) -> i16 {
        v.saturating_sub(b)
    }
    #[inline(always)]
    fn neg(b: i16) -> i16 {
        b.saturating_neg()
    }
    #[inline(always)]
    fn series(b1: i16, b2: i16, c1: u32, c2: u32) -> (i16, i16) {
        let x = (b1 as i32).wrapping_sub(b2 as i32); // |x| < 2^16
        let mask = x >> 31;
        let m = x.unsigned_abs(); // c < 2^15, so m·c < 2^31
        let y1 = apply_sign32((m.wrapping_mul(c1) >> Self::SERIES_FRAC) as i32, mask);
        let y2 = apply_sign32((m.wrapping_mul(c2) >> Self::SERIES_FRAC) as i32, mask);
        (sat_i16((b1 as i32).wrapping_sub(y1)), sat_i16((b2 as i32).wrapping_add(y2)))
    }
    #[inline(always)]
    fn from_code(code: i16, _shift: u32) -> i16 {
        code
    }
    #[inline(always)]
    fn to_code(x: i32, _shift: u32) -> i16 {
        sat_i16(x)
    }
    #[inline(always)]
    fn sum(a: i16, b: i16) -> i32 {
        a as i32 + b as i32
    }
    #[inline(always)]
    fn diff(a: i16, b: i16) -> i32 {
        a as i32 - b as i32
    }
}

/// Reciprocal of a node's total weight: `recip = floor(2^(RECIP_BITS + shift) / total)` with
/// `recip` in [2^(RECIP_BITS−1), 2^RECIP_BITS). Rounding down keeps |v_q| <= |v_exact|.
/// Returns `None` when `total < 2` (the format cannot hold it). A total so large that the
/// shift would leave the word yields `(0, 0)`: the node voltage is then exactly 0, which
/// is below the exact value in magnitude (a near short).
pub fn reciprocal(total: u64, recip_bits: u32) -> Option<(u32, u32)> {
    if total < 2 {
        return None;
    }
    let n = 63 - total.leading_zeros(); // 2^n <= total < 2^(n+1), n >= 1
    let mut p = recip_bits + n;
    let mut r = (1u128 << p) / total as u128;
    if r >> recip_bits != 0 {
        // total is a power of two: 2^p/total = 2^recip_bits does not fit; one bit less.
        p -= 1;
        r = (1u128 << p) / total as u128;
    }
    let shift = p - recip_bits;
    // The accumulator magnitude product is < 2^(2·RECIP_BITS); a shift past that is zero.
    if shift >= 2 * recip_bits || shift >= 64 {
        return Some((0, 0));
    }
    Some((r as u32, shift))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reciprocal_is_rounded_down_and_normalized() {
        for &t in &[2u64, 3, 5, 7, 1000, 1 << 20, (1 << 30) + 12345, u64::MAX / 3] {
            for bits in [16u32, 32] {
                let (r, s) = reciprocal(t, bits).unwrap();
                if r == 0 {
                    continue;
                }
                assert!(r >> (bits - 1) == 1, "normalized: t={t} bits={bits} r={r}");
                let p = bits + s;
                // r <= 2^p / t < r + 1
                assert!((r as u128) * t as u128 <= 1u128 << p);
                assert!((r as u128 + 1) * t as u128 > 1u128 << p);
            }
        }
        assert_eq!(reciprocal(1, 32), None);
    }

    #[test]
    fn node_voltage_never_exceeds_exact_quotient() {
        // Exact: v = (2 Σ g b + g_src e) / total, total = Σ g + g_src (+ shunt).
        let cases: &[(&[i32], &[u32], i32, u32, u64)] = &[
            (&[1000, -999], &[3, 5], 0, 0, 8),
            (&[i32::MAX, i32::MAX], &[1 << 29, 1 << 29], 0, 0, 1 << 30),
            (&[-7, 13, 2], &[1234567, 7654321, 99], 5, 77, 1234567 + 7654321 + 99 + 77 + 1000),
        ];
        for &(b, g, e, gs, total) in cases {
            let (r, s) = reciprocal(total, 32).unwrap();
            let v = Wide::node_voltage(b, g, e, gs, r, s, total) as i128;
            let num: i128 =
                2 * b.iter().zip(g).map(|(b, g)| *b as i128 * *g as i128).sum::<i128>()
                    + gs as i128 * e as i128;
            let exact = num as f64 / total as f64;
            assert!((v as f64).abs() <= exact.abs() + 1e-9, "v={v} exact={exact}");
            assert!(v == 0 || (v > 0) == (exact > 0.0));
            let clamped = exact.clamp(i32::MIN as f64, i32::MAX as f64);
            assert!((clamped - v as f64).abs() < 1.0, "v={v} exact={exact}");
        }
    }

    #[test]
    fn narrow_node_voltage_matches_exact_within_one_lsb() {
        let b: [i16; 3] = [12000, -32768, 517];
        let g = [5000u32, 7000, 4000];
        let total = 16000u64 + 1;
        let (r, s) = reciprocal(total, 16).unwrap();
        let v = Narrow::node_voltage(&b, &g, 0, 0, r, s, total) as f64;
        let exact = 2.0 * (12000.0 * 5000.0 - 32768.0 * 7000.0 + 517.0 * 4000.0) / total as f64;
        assert!(v.abs() <= exact.abs());
        assert!((v - exact).abs() < 1.0, "v={v} exact={exact}");
    }

    #[test]
    fn exactly_divisible_sums_give_exact_quotients() {
        // A matched load: one line of weight g and a shunt of the same weight, total 2g.
        // v = 2·g·b / 2g = b exactly, so the reflected wave v − b is exactly zero.
        for g in [3u32, 1000, 123_456_789, (1 << 29) + 7] {
            let t = 2 * g as u64;
            let (r, s) = reciprocal(t, 32).unwrap();
            for b in [1i32, -1, 7, 1 << 20, -(1 << 30), i32::MAX] {
                assert_eq!(Wide::node_voltage(&[b], &[g], 0, 0, r, s, t), b);
            }
        }
        for g in [3u32, 1000, 8191] {
            let t = 2 * g as u64;
            let (r, s) = reciprocal(t, 16).unwrap();
            for b in [1i16, -1, 7, 12345, i16::MIN, i16::MAX] {
                assert_eq!(Narrow::node_voltage(&[b], &[g], 0, 0, r, s, t), b);
            }
        }
    }

    #[test]
    fn series_truncates_toward_zero() {
        // c = 1/2 exactly: y = x/2 truncated toward zero.
        let half = 1u32 << (Wide::SERIES_FRAC - 1);
        assert_eq!(Wide::series(3, 0, half, half), (2, 1));
        assert_eq!(Wide::series(-3, 0, half, half), (-2, -1));
        let half = 1u32 << (Narrow::SERIES_FRAC - 1);
        assert_eq!(Narrow::series(-3, 0, half, half), (-2, -1));
    }

    #[test]
    fn codes_round_toward_zero_and_saturate() {
        assert_eq!(Wide::to_code(-4097, 12), -1);
        assert_eq!(Wide::to_code(4097, 12), 1);
        assert_eq!(Wide::to_code(i32::MAX, 0), i16::MAX);
        assert_eq!(Wide::from_code(-3, 12), -3 * 4096);
        assert_eq!(Narrow::to_code(70000, 0), i16::MAX);
    }
}

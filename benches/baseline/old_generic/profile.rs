//! (Frozen copy of `core/src/profile.rs` at c696084, see `mod.rs`; unit tests trimmed.)
//!
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

    /// Parallel node: with the exact node voltage v = (2·Σ g_k·b_k + g_src·e) / total,
    /// every outgoing wave is a_k = trunc(v − b_k) (toward zero), saturated.
    ///
    /// The quotient is formed once from the reciprocal (`recip`, `shift`) of `total` and made
    /// exact by two correction steps against `total` (floor and "remainder nonzero"); each
    /// port then costs a subtraction and a conditional increment. Truncating each outgoing
    /// wave of the exact node means |a_k| <= |a_k,exact|, so the node can only lose energy.
    // The hot path takes the node's few coefficients as plain arguments (registers), not a
    // struct behind a pointer.
    #[allow(clippy::too_many_arguments)]
    fn node_scatter(
        b: &[Self::Wave],
        g: &[u32],
        a: &mut [Self::Wave],
        e: Self::Wave,
        g_src: u32,
        recip: u32,
        shift: u32,
        total: u64,
    );
    /// Series two-port between lines of equal impedance, coefficient c = 2Z/(2Z + R) in
    /// `SERIES_FRAC` fractional bits (c <= 1): x = b1 − b2, a1 = trunc(b1 − c·x),
    /// a2 = trunc(b2 + c·x), each truncated toward zero from its exact value, saturated.
    fn series(b1: Self::Wave, b2: Self::Wave, c: u32) -> (Self::Wave, Self::Wave);
    /// a = sat(v − b) (rig port: a = v − b with v the measured pin voltage).
    fn sub(v: Self::Wave, b: Self::Wave) -> Self::Wave;
    /// a = sat(−b) (exact short).
    fn neg(b: Self::Wave) -> Self::Wave;
    /// Largest total node weight the profile's division handles (larger shunts are capped
    /// there, which changes a near-short by less than 2^-15 of its reflection).
    const TOTAL_MAX: u64;
    /// Reactance adaptor: a_c = trunc(b + μ·(a − b)) toward zero from its exact value, μ in
    /// `SERIES_FRAC` fractional bits (μ <= 1), negated when `negate` (an inductor).
    fn adapt(b: Self::Wave, a: Self::Wave, mu: u32, negate: bool) -> Self::Wave;
    /// Fractional bits of loss-filter coefficients in this profile.
    const LOSS_FRAC: u32;
    /// One first-order loss section: y = trunc(g·x − gb·x1 + a·y1) toward zero, saturated
    /// (coefficients in `LOSS_FRAC` bits, all < 1). With x = 0 the output shrinks strictly,
    /// so a section cannot sustain a limit cycle.
    fn loss_section(x: Self::Wave, x1: Self::Wave, y1: Self::Wave, g: u32, gb: i32, a: u32) -> Self::Wave;
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
pub struct Wide;

/// 16-bit waves, 32-bit accumulators, no 64-bit products (Cortex-M0 class).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
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

/// floor(mag / total) and (remainder != 0) as 0/1, for mag < 2^63, total < 2^62.5.
///
/// The estimate mag·recip/2^(32+shift), from two 32x32->64 products with floors, is at most
/// 2 below the floor for quotients up to 2^32 (the wave range); two exact steps fix it. The
/// true remainder mag − q·total lies in [0, 3·total) ⊂ [0, 2^64), so wrapping arithmetic
/// gives it exactly.
#[inline(always)]
fn floor_div64(mag: u64, recip: u32, shift: u32, total: u64) -> (u64, u64) {
    let r = recip as u64;
    let hi = mag >> 32;
    let lo = mag & 0xFFFF_FFFF;
    let mut q = hi.wrapping_mul(r).wrapping_add(lo.wrapping_mul(r) >> 32).wrapping_shr(shift);
    let mut rem = mag.wrapping_sub(q.wrapping_mul(total));
    for _ in 0..2 {
        let step = (rem >= total) as u64;
        q = q.wrapping_add(step);
        rem = rem.wrapping_sub(total & step.wrapping_neg());
    }
    (q, (rem != 0) as u64)
}

/// The 32-bit twin of [`floor_div64`] for mag < 2^31, total < 2^30, using only 16x16->32
/// products (Cortex-M0 `MULS`).
#[inline(always)]
fn floor_div32(mag: u32, recip: u32, shift: u32, total: u32) -> (u32, u32) {
    let hi = mag >> 16;
    let lo = mag & 0xFFFF;
    let mut q = hi.wrapping_mul(recip).wrapping_add(lo.wrapping_mul(recip) >> 16).wrapping_shr(shift);
    let mut rem = mag.wrapping_sub(q.wrapping_mul(total));
    for _ in 0..2 {
        let step = (rem >= total) as u32;
        q = q.wrapping_add(step);
        rem = rem.wrapping_sub(total & step.wrapping_neg());
    }
    (q, (rem != 0) as u32)
}

impl Profile for Wide {
    type Wave = i32;
    const ZERO: i32 = 0;
    const NAME: &'static str = "wide (32-bit waves)";
    const WEIGHT_BITS: u32 = 30;
    const RECIP_BITS: u32 = 32;
    const SERIES_FRAC: u32 = 30;
    const MAX_IO_SHIFT: u8 = 15;
    const TOTAL_MAX: u64 = 1 << 62;
    const LOSS_FRAC: u32 = 30;

    #[inline(always)]
    fn node_scatter(b: &[i32], g: &[u32], a: &mut [i32], e: i32, g_src: u32, recip: u32, shift: u32, total: u64) {
        // |Σ g·b| <= 2^30 · 2^31 with Σ g + g_src <= 2^30, so 2·Σ + g_src·e <= 2^62: exact.
        let mut acc: i64 = 0;
        for (bk, gk) in b.iter().zip(g.iter()) {
            acc = acc.wrapping_add((*gk as i64).wrapping_mul(*bk as i64));
        }
        let acc = acc.wrapping_shl(1).wrapping_add((g_src as i64).wrapping_mul(e as i64));
        let (q, nz) = floor_div64(acc.unsigned_abs(), recip, shift, total);
        // floor(acc/total): q for acc >= 0, −(q + nz) for acc < 0.
        let neg = (acc < 0) as u64;
        let fl = apply_sign64(q.wrapping_add(nz & neg) as i64, -(neg as i64));
        for (ak, bk) in a.iter_mut().zip(b.iter()) {
            // v − b = (fl − b) + frac, frac > 0 iff nz: truncation toward zero adds 1 to a
            // negative integer part when there is a fraction.
            let m = fl.wrapping_sub(*bk as i64);
            let t = m.wrapping_add(((m < 0) as u64 & nz) as i64);
            *ak = t.clamp(i32::MIN as i64, i32::MAX as i64) as i32;
        }
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
    fn series(b1: i32, b2: i32, c: u32) -> (i32, i32) {
        // |x| < 2^32 and c <= 2^30: |c·x| <= 2^62; |b·2^30| <= 2^61: exact in i64.
        let x = (b1 as i64).wrapping_sub(b2 as i64);
        let cx = (c as i64).wrapping_mul(x);
        let n1 = (b1 as i64).wrapping_shl(Self::SERIES_FRAC).wrapping_sub(cx);
        let n2 = (b2 as i64).wrapping_shl(Self::SERIES_FRAC).wrapping_add(cx);
        let t = |n: i64| {
            let m = apply_sign64((n.unsigned_abs() >> Self::SERIES_FRAC) as i64, n >> 63);
            m.clamp(i32::MIN as i64, i32::MAX as i64) as i32
        };
        (t(n1), t(n2))
    }
    #[inline(always)]
    fn loss_section(x: i32, x1: i32, y1: i32, g: u32, gb: i32, a: u32) -> i32 {
        // Each product < 2^30·2^31 = 2^61; three of them < 2^63: exact in i64.
        let n = (g as i64)
            .wrapping_mul(x as i64)
            .wrapping_sub((gb as i64).wrapping_mul(x1 as i64))
            .wrapping_add((a as i64).wrapping_mul(y1 as i64));
        let m = apply_sign64((n.unsigned_abs() >> Self::LOSS_FRAC) as i64, n >> 63);
        m.clamp(i32::MIN as i64, i32::MAX as i64) as i32
    }
    #[inline(always)]
    fn adapt(b: i32, a: i32, mu: u32, negate: bool) -> i32 {
        // |b·2^30| <= 2^61, |μ·(a − b)| <= 2^30·2^32: exact in i64.
        let n = (b as i64)
            .wrapping_shl(Self::SERIES_FRAC)
            .wrapping_add((mu as i64).wrapping_mul((a as i64).wrapping_sub(b as i64)));
        let m = apply_sign64((n.unsigned_abs() >> Self::SERIES_FRAC) as i64, n >> 63);
        let m = if negate { m.wrapping_neg() } else { m };
        m.clamp(i32::MIN as i64, i32::MAX as i64) as i32
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
    const TOTAL_MAX: u64 = (1 << 30) - 1;
    const LOSS_FRAC: u32 = 14;

    #[inline(always)]
    fn node_scatter(b: &[i16], g: &[u32], a: &mut [i16], e: i16, g_src: u32, recip: u32, shift: u32, total: u64) {
        // |Σ g·b| <= 2^14 · 2^15 with Σ g + g_src <= 2^14, so 2·Σ + g_src·e <= 2^30: exact.
        let mut acc: i32 = 0;
        for (bk, gk) in b.iter().zip(g.iter()) {
            acc = acc.wrapping_add((*gk as i32).wrapping_mul(*bk as i32));
        }
        let acc = acc.wrapping_shl(1).wrapping_add((g_src as i32).wrapping_mul(e as i32));
        let (q, nz) = floor_div32(acc.unsigned_abs(), recip, shift, total as u32);
        let neg = (acc < 0) as u32;
        let fl = apply_sign32(q.wrapping_add(nz & neg) as i32, -(neg as i32));
        for (ak, bk) in a.iter_mut().zip(b.iter()) {
            let m = fl.wrapping_sub(*bk as i32);
            *ak = sat_i16(m.wrapping_add(((m < 0) as u32 & nz) as i32));
        }
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
    fn series(b1: i16, b2: i16, c: u32) -> (i16, i16) {
        // |x| < 2^16 and c <= 2^14: |c·x| <= 2^30; |b·2^14| <= 2^29: exact in i32.
        let x = (b1 as i32).wrapping_sub(b2 as i32);
        let cx = (c as i32).wrapping_mul(x);
        let n1 = (b1 as i32).wrapping_shl(Self::SERIES_FRAC).wrapping_sub(cx);
        let n2 = (b2 as i32).wrapping_shl(Self::SERIES_FRAC).wrapping_add(cx);
        let t = |n: i32| sat_i16(apply_sign32((n.unsigned_abs() >> Self::SERIES_FRAC) as i32, n >> 31));
        (t(n1), t(n2))
    }
    #[inline(always)]
    fn loss_section(x: i16, x1: i16, y1: i16, g: u32, gb: i32, a: u32) -> i16 {
        // Each product < 2^14·2^15 = 2^29; three of them < 2^31: exact in i32.
        let n = (g as i32)
            .wrapping_mul(x as i32)
            .wrapping_sub(gb.wrapping_mul(x1 as i32))
            .wrapping_add((a as i32).wrapping_mul(y1 as i32));
        sat_i16(apply_sign32((n.unsigned_abs() >> Self::LOSS_FRAC) as i32, n >> 31))
    }
    #[inline(always)]
    fn adapt(b: i16, a: i16, mu: u32, negate: bool) -> i16 {
        // |b·2^14| <= 2^29, |μ·(a − b)| <= 2^14·2^16: exact in i32.
        let n = (b as i32)
            .wrapping_shl(Self::SERIES_FRAC)
            .wrapping_add((mu as i32).wrapping_mul((a as i32).wrapping_sub(b as i32)));
        let m = apply_sign32((n.unsigned_abs() >> Self::SERIES_FRAC) as i32, n >> 31);
        sat_i16(if negate { m.wrapping_neg() } else { m })
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

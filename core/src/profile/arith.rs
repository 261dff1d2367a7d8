//! The fixed-point arithmetic both profiles share, written once.
//!
//! [`Acc`] is a profile's double-width accumulator (`i64` for [`super::Wide`]'s `i32` waves,
//! `i32` for [`super::Narrow`]'s `i16` waves) with the few primitives whose code differs by
//! width: coefficient products and the exact node division. [`junction_rules`] writes every
//! junction rule once over it; both profiles expand it inside their `impl Profile`, so the two
//! run the same formulas and differ only in widths and fraction bits.
//!
//! Range rule: every wrapping operation is exact because its operands are bounded by the
//! profile's documented ranges (weights and coefficients are checked at load); each rule
//! states its bound next to its sums. `core/tests/oracle.rs` checks every operation against
//! the same formula in i128.

/// A profile's double-width accumulator. Implemented for `i64` (waves `i32`) and `i32`
/// (waves `i16`) only.
pub(crate) trait Acc: Sized {
    /// The wave type this accumulator holds exactly.
    type W;
    /// c·w exactly, for a coefficient c < 2^31 (`i64`: one 32x32->64 `SMULL`) or c <= 2^15
    /// (`i32`: one `MULS`, |c·w| < 2^31).
    fn mul(c: u32, w: Self::W) -> Self;
    /// c·(x − y) exactly, for c <= 2^30 (`i64`: two 32x32 products, since x − y needs 33
    /// bits) or c <= 2^14 (`i32`: one product of the 17-bit difference).
    fn mul_diff(c: u32, x: Self::W, y: Self::W) -> Self;
    /// The series junction's numerators b1·2^f − c·(b1 − b2) and b2·2^f + c·(b1 − b2),
    /// exactly, for c <= 2^f with 2^f·2^(wave bits + 1) within the accumulator (see
    /// `Profile::series`).
    fn series_num(c: u32, f: u32, b1: Self::W, b2: Self::W) -> (Self, Self);
    /// A loss section's n = g·x − gb·x1 + a·y1 + r1 exactly (ranges in `loss_section`; the
    /// residue 0 <= r1 < 2^LOSS_FRAC). The order of the sum differs by width, not its value.
    #[allow(clippy::too_many_arguments)]
    fn loss_sum(g: u32, x: Self::W, gb: i32, x1: Self::W, a: u32, y1: Self::W, r1: Self::W) -> Self;
    /// The node quotient of the cheap rule (see `Profile::node_scatter`):
    /// q = floor(|acc|·recip / 2^(RECIP_BITS+shift)) (< |acc|/total for acc != 0, by the
    /// reciprocal's rounding), capped at 2^31 − 1 (a smaller |v'| is as passive, and the
    /// node's floor −q − 1 then fits an i32), and nz = (acc != 0) as 0/1: the node voltage
    /// v' = sign·(q + ε) always has a fraction when acc != 0.
    /// `z` is the node's [`super::veil`] (used by the exact narrow division's flags).
    fn quotient_abs(acc: Self, recip: u32, shift: u32, total: u64, z: i32) -> (i32, i32);
    /// One outgoing wave from the node's floor fl = floor(v') and nz: trunc(v' − b) toward
    /// zero, v' − b = (fl − b) + fraction, saturated. Wide saturates first, s = sat(fl − b),
    /// then adds 1 where s < 0 and nz: one instruction on the M4 (`QSUB`) instead of a 64-bit
    /// clamp; where fl − b is below the wave range the result is MIN + nz, still no larger in
    /// magnitude than v' − b. Narrow adds first and saturates after (exact in i32).
    /// `z` is the node's [`super::veil`] (hides Narrow's saturation flag).
    fn port(fl: i32, b: Self::W, nz: i32, z: i32) -> Self::W;
    /// floor(|acc| / total) and (remainder != 0) as 0/1, from the node's reciprocal (see
    /// [`super::reciprocal`]) and two exact correction steps.
    fn floor_div_abs(acc: Self, recip: u32, shift: u32, total: u64) -> (Self, Self);
    /// [`Acc::floor_div_abs`] for quotients below 5 times the wave range (six correction
    /// steps, see [`super::floor_div64`]): the series branch's outputs before saturation.
    fn floor_div_abs_wide(acc: Self, recip: u32, shift: u32, total: u64) -> (Self, Self);
}

impl Acc for i64 {
    type W = i32;
    #[inline(always)]
    fn mul(c: u32, w: i32) -> i64 {
        // c < 2^31 (validated at load): the cast to i32 keeps its value, so this is one
        // 32x32->64 signed multiply.
        i64::from(c as i32).wrapping_mul(i64::from(w))
    }
    #[inline(always)]
    fn mul_diff(c: u32, x: i32, y: i32) -> i64 {
        // Two 32x32 products (each <= 2^61) instead of a 32x64 one.
        Self::mul(c, x).wrapping_sub(Self::mul(c, y))
    }
    #[inline(always)]
    fn series_num(c: u32, f: u32, b1: i32, b2: i32) -> (i64, i64) {
        // The same integers regrouped as (2^f − c)·b1 + c·b2 and c·b1 + (2^f − c)·b2: four
        // 32x32 multiply-accumulates (`SMULL`/`SMLAL`), where the difference form needed two
        // products, two 64-bit shifts and two 64-bit adds. 0 <= 2^f − c <= 2^f = 2^30 < 2^31
        // (c <= 2^f is checked at load), each product <= 2^61 and each sum <= 2^62.
        // Where a 64-bit product is itself several 32-bit ones (ARMv6-M), the difference
        // form with two products is cheaper and gives the same integers.
        #[cfg(tidewire_no_long_mul)]
        {
            let cx = Self::mul_diff(c, b1, b2);
            (i64::from(b1).wrapping_shl(f).wrapping_sub(cx), i64::from(b2).wrapping_shl(f).wrapping_add(cx))
        }
        #[cfg(not(tidewire_no_long_mul))]
        {
            let k = (1u32 << f).wrapping_sub(c);
            (Self::mul(k, b1).wrapping_add(Self::mul(c, b2)), Self::mul(c, b1).wrapping_add(Self::mul(k, b2)))
        }
    }
    #[inline(always)]
    fn loss_sum(g: u32, x: i32, gb: i32, x1: i32, a: u32, y1: i32, r1: i32) -> i64 {
        // The residue first and zero-extended (r1 >= 0, so the same value): the sum starts
        // from it with a known zero high word, three `SMLAL`s on the M4, where adding it last
        // took an add and an add-with-carry of its sign word (about 1.4 instructions per
        // section fewer on the 85-port plant).
        i64::from(r1 as u32)
            .wrapping_add(Self::mul(g, x))
            .wrapping_sub(i64::from(gb).wrapping_mul(i64::from(x1)))
            .wrapping_add(Self::mul(a, y1))
    }
    #[inline(always)]
    fn quotient_abs(acc: i64, recip: u32, shift: u32, _total: u64, _z: i32) -> (i32, i32) {
        // q < |v| <= 2^32, so its low word is all of it and the cap is one 32-bit compare
        // (a 64-bit cap took about ten instructions per node on the M4). The bound: with
        // |b_k|, |e| <= 2^31, |acc| <= (2·Σ g_k + g_src)·2^31, and the node's total is at
        // least Σ g_k + g_src (the port weights and the source; the shunt only adds, and
        // `TOTAL_MAX` caps it far above them), so |v| = |acc|/total <= 2^32; q < |v|
        // whenever acc != 0 (the reciprocal's strict rounding) and q = 0 when acc = 0.
        let q = super::quotient64(acc.unsigned_abs(), recip, shift) as u32;
        (q.min(i32::MAX as u32) as i32, (acc != 0) as i32)
    }
    #[inline(always)]
    fn port(fl: i32, b: i32, nz: i32, _z: i32) -> i32 {
        let s = fl.saturating_sub(b);
        // s < 0 adds nz (0 or 1): no overflow. The sign as 0/1 (a logical shift) and-ed with
        // nz: on the M4 `and` with a shifted operand and an `add`, where the sign mask
        // (s >> 31) & nz became a compare and a conditional add (one instruction per port more).
        s.wrapping_add(((s as u32 >> 31) as i32) & nz)
    }
    #[inline(always)]
    fn floor_div_abs(acc: i64, recip: u32, shift: u32, total: u64) -> (i64, i64) {
        // |acc| <= 2^62 and total >= 2: q < 2^61, exact as i64.
        let (q, nz) = super::floor_div64::<2>(acc.unsigned_abs(), recip, shift, total);
        (q as i64, nz as i64)
    }
    #[inline(always)]
    fn floor_div_abs_wide(acc: i64, recip: u32, shift: u32, total: u64) -> (i64, i64) {
        // |acc| < 2^63 and the quotient < 5·2^31 (`branch_series`): exact as i64.
        let (q, nz) = super::floor_div64::<6>(acc.unsigned_abs(), recip, shift, total);
        (q as i64, nz as i64)
    }
}

impl Acc for i32 {
    type W = i16;
    #[inline(always)]
    fn mul(c: u32, w: i16) -> i32 {
        (c as i32).wrapping_mul(i32::from(w))
    }
    #[inline(always)]
    fn mul_diff(c: u32, x: i16, y: i16) -> i32 {
        // |x − y| < 2^16 and c <= 2^14: one product < 2^30.
        (c as i32).wrapping_mul(i32::from(x).wrapping_sub(i32::from(y)))
    }
    #[inline(always)]
    fn series_num(c: u32, f: u32, b1: i16, b2: i16) -> (i32, i32) {
        // The difference form: one product of the 17-bit difference (c <= 2^14), where the
        // regrouped form of `i64` would take four `MULS` on the Cortex-M0.
        let cx = Self::mul_diff(c, b1, b2);
        (i32::from(b1).wrapping_shl(f).wrapping_sub(cx), i32::from(b2).wrapping_shl(f).wrapping_add(cx))
    }
    #[inline(always)]
    fn loss_sum(g: u32, x: i16, gb: i32, x1: i16, a: u32, y1: i16, r1: i16) -> i32 {
        // The residue last: first on the Cortex-M0 it cost 10 instructions per sample more on
        // the 34-port plant.
        Self::mul(g, x)
            .wrapping_sub(gb.wrapping_mul(i32::from(x1)))
            .wrapping_add(Self::mul(a, y1))
            .wrapping_add(i32::from(r1))
    }
    #[inline(always)]
    fn quotient_abs(acc: i32, recip: u32, shift: u32, total: u64, z: i32) -> (i32, i32) {
        // Narrow divides exactly (see `super::floor_div32`): q <= 2^29, below the cap; as
        // `floor_div_abs`, with the node's veil.
        let (q, nz) = super::floor_div32_veiled::<2>(acc.unsigned_abs(), recip, shift, total as u32, z);
        (q as i32, nz as i32)
    }
    #[inline(always)]
    fn floor_div_abs(acc: i32, recip: u32, shift: u32, total: u64) -> (i32, i32) {
        // |acc| <= 2^30 and total < 2^30 (the narrow node budget): q < 2^29.
        let (q, nz) = super::floor_div32::<2>(acc.unsigned_abs(), recip, shift, total as u32);
        (q as i32, nz as i32)
    }
    #[inline(always)]
    fn floor_div_abs_wide(acc: i32, recip: u32, shift: u32, total: u64) -> (i32, i32) {
        // |acc| < 2^31 and the quotient < 5·2^15 (`branch_series`).
        let (q, nz) = super::floor_div32::<6>(acc.unsigned_abs(), recip, shift, total as u32);
        (q as i32, nz as i32)
    }
    #[inline(always)]
    fn port(fl: i32, b: i16, nz: i32, z: i32) -> i16 {
        // |fl| <= 2^29 + 1 and |b| <= 2^15: the difference and the increment are exact in
        // i32, so Narrow truncates the exact value and then saturates (the exact node's
        // outputs, bit for bit as before the Wide rule changed).
        // The sign as 0/1 (logical shift) and-ed with the 0/1 nz: a sign mask (m >> 31) & nz
        // is turned into a select by LLVM, a conditional branch on ARMv6-M.
        let m = fl.wrapping_sub(i32::from(b));
        super::sat_i16_veiled(m.wrapping_add(((m as u32 >> 31) as i32) & nz), z)
    }
}

/// A node's numerator N = 2·(init + Σ g_k·b_k) + g_src·e in the accumulator `A`, exactly
/// (each rule states its range), written once for the node and both ends of a series branch
/// (`init` is 0, or the branch's link term G·r). A macro, not a function, so that every rule
/// keeps the plain integer code the firmware figures were measured on.
macro_rules! node_numerator {
    ($A:ty, $b:expr, $g:expr, $e:expr, $g_src:expr, $init:expr) => {{
        let mut acc: $A = $init;
        for (bk, gk) in $b.iter().zip($g.iter()) {
            acc = acc.wrapping_add(<$A as Acc>::mul(*gk, *bk));
        }
        acc.wrapping_shl(1).wrapping_add(<$A as Acc>::mul($g_src, $e))
    }};
}
pub(crate) use node_numerator;

/// The junction rules, written once: expanded inside `impl Profile for Wide` (accumulator
/// `i64`, `trunc_shr64`, `sat64_to_i32`) and `impl Profile for Narrow` (`i32`,
/// `trunc_shr32`, `sat_i16`) as the trait's own method bodies. (Written as generic functions
/// over the accumulator, the same formulas compiled to 125 instead of 110 instructions per
/// port-update on the M4: the optimizer turned the one-compare saturation into a two-compare
/// 64-bit clamp and a product into 64x64. As method bodies with plain integer operations it
/// emits the hand-written code, instruction for instruction.)
///
/// Each rule forms its outgoing quantities exactly in the accumulator (ranges argued per
/// rule; the coefficient bounds are checked at load) and quantizes each once: truncated
/// toward zero, then saturated to a wave.
macro_rules! junction_rules {
    ($acc:ty, $trunc:ident, $sat:ident, $trunc_sat:ident, $floor_sat:ident) => {
        #[inline(always)]
        fn node_scatter(
            b: &[Self::Wave],
            g: &[u32],
            a: &mut [Self::Wave],
            e: Self::Wave,
            g_src: u32,
            recip: u32,
            shift: u32,
            total: u64,
        ) {
            // Σ g + g_src <= 2^WEIGHT_BITS (node budget), so the numerator
            // 2·Σ g_k·b_k + g_src·e is exact (i64: <= 2^62; i32: <= 2^30).
            type A = $acc;
            let acc = $crate::profile::arith::node_numerator!(A, b, g, e, g_src, 0);
            // q = |floor(v')| for N > 0 (|floor(v')| − 1 for N < 0), nz = [N != 0]: v' =
            // sign(N)·(q + ε) has the floor q for N > 0 and −(q + 1) for N < 0, by the
            // branch-free negation (x ^ mask) − mask.
            // One veil for the node's flags (`profile::veil`; the constant 0 off ARMv6-M). Only
            // the exact (narrow) node has flags to hide: the wide node's `quotient_abs` and
            // `port` ignore it, and an unused `black_box` would still run.
            let z = if Self::EXACT_NODE { $crate::profile::veil() } else { 0 };
            let (q, nz) = <A as Acc>::quotient_abs(acc, recip, shift, total, z);
            let neg = (acc < 0) as i32;
            let mask = neg.wrapping_neg();
            // q + 1 <= 2^31: wrapping, (2^31 ^ −1) + 1 is −2^31 exactly.
            let fl = (q.wrapping_add(nz & neg) ^ mask).wrapping_sub(mask);
            for (ak, bk) in a.iter_mut().zip(b.iter()) {
                *ak = <A as Acc>::port(fl, *bk, nz, z);
            }
        }

        #[inline(always)]
        fn series(b1: Self::Wave, b2: Self::Wave, c: u32) -> (Self::Wave, Self::Wave) {
            // |c·x| <= 2^f·2^(wave bits + 1), |b·2^f| below the same: exact in the
            // accumulator (i64: <= 2^62; i32: <= 2^30).
            type A = $acc;
            let (n1, n2) = <A as Acc>::series_num(c, Self::SERIES_FRAC, b1, b2);
            let t = |n: A| $trunc_sat(n, Self::SERIES_FRAC);
            (t(n1), t(n2))
        }

        #[inline(always)]
        fn series_l(
            b1: Self::Wave,
            b2: Self::Wave,
            s: Self::Wave,
            c: u32,
            rho: u32,
        ) -> (Self::Wave, Self::Wave, Self::Wave) {
            // i64 (f = 29): c·(b1 − b2) <= 2^61, rho·s <= 2^60, so 2y + s·2^29 < 2^63;
            // i32 (f = 13): c·(b1 − b2) < 2^29, rho·s <= 2^28, so 2y + s·2^13 < 2^31.
            type A = $acc;
            let y = <A as Acc>::mul_diff(c, b1, b2).wrapping_add(<A as Acc>::mul(rho, s));
            let t = |n: A| $trunc_sat(n, Self::CHOKE_FRAC);
            (
                t(A::from(b1).wrapping_shl(Self::CHOKE_FRAC).wrapping_sub(y)),
                t(A::from(b2).wrapping_shl(Self::CHOKE_FRAC).wrapping_add(y)),
                t(y.wrapping_shl(1).wrapping_sub(A::from(s).wrapping_shl(Self::CHOKE_FRAC))),
            )
        }

        #[inline(always)]
        fn loss_section(
            x: Self::Wave,
            x1: Self::Wave,
            y1: Self::Wave,
            r1: Self::Wave,
            g: u32,
            gb: i32,
            a: u32,
        ) -> (Self::Wave, Self::Wave) {
            // n = g·x − gb·x1 + a·y1 + r1 exactly (the exact output plus the last residue, in
            // units of 1/one); y = floor(n/one) (an arithmetic shift), r = n − y·one in
            // [0, one) (the low bits).
            //
            // Why not y = trunc(g·x − gb·x1 + a·y1) toward zero: under a constant x that rule
            // holds any y with (one − a)·(x − y) < one, up to one/(one − a) LSB below x (the
            // first-order recursion's dead band: hundreds of LSB where one − a is a few LSB
            // at 14 bits). Here, DC-exact (g − gb = one − a, checked at load) and with the
            // residue fed back (first-order error feedback: the quantization error reaches
            // the output through (1 − z⁻¹)/(1 − a·z⁻¹), zero at DC), under a constant x with
            // x1 = x: y − x = floor(w/one) for w = a·(y1 − x) + r1, and
            // w' = w − (one − a)·floor(w/one). From w >= one, w' >= a·w/one >= 0 and w' < w;
            // from w < 0, w < w' < one − a. So w enters [0, one) and stays there, where
            // floor(w/one) = 0: y = x exactly, no limit cycle. With every wave zero, n = r1 <
            // one gives y = 0 and r = r1: a plant at rest stays at rest, and the zero-input
            // decay of the waves is the same argument with x = 0.
            //
            // Ranges (g <= one, |gb| <= g, a < one, 0 <= r1 < one: checked at load and kept by
            // this rule): |g·x|, |gb·x1|, |a·y1| <= 2^f·2^(wave bits − 1) each, so
            // |n| < 3·2^(f + wave bits − 1) + 2^f (i64, f = 30: < 2^63; i32, f = 14: < 2^31)
            // whatever the wrapping order; r < 2^f fits a wave (2^30 < 2^31, 2^14 < 2^15).
            type A = $acc;
            let n = <A as Acc>::loss_sum(g, x, gb, x1, a, y1, r1);
            let low = (1 as A).wrapping_shl(Self::LOSS_FRAC).wrapping_sub(1);
            // The low bits as a wave (< 2^f, so the cast keeps the value).
            ($floor_sat(n, Self::LOSS_FRAC), (n & low) as Self::Wave)
        }

        #[inline(always)]
        fn zc_pre(
            b: Self::Wave,
            s: &[Self::Wave; $crate::network::MAX_ZC_SECTIONS],
            k: &[u32; $crate::network::MAX_ZC_SECTIONS],
            n: usize,
        ) -> (Self::Wave, Self::Wave) {
            // 0 <= k_i < 2^f (checked at load) and |s_i| <= 2^(wave bits − 1): each product
            // < 2^(f + wave bits − 1), four of them < 2^(f + wave bits + 1) (i64: < 2^63;
            // i32: < 2^31): the sum is exact.
            type A = $acc;
            let mut acc: A = 0;
            for (si, ki) in s.iter().zip(k.iter()).take(n) {
                acc = acc.wrapping_add(<A as Acc>::mul(*ki, *si));
            }
            let c = $trunc_sat(acc, Self::LOSS_FRAC);
            // Two waves: exact in the accumulator, then saturated.
            (c, $sat(A::from(b).wrapping_add(A::from(c))))
        }

        #[inline(always)]
        fn zc_post(
            ap: Self::Wave,
            bp: Self::Wave,
            c: Self::Wave,
            s: &mut [Self::Wave; $crate::network::MAX_ZC_SECTIONS],
            pole: &[i32; $crate::network::MAX_ZC_SECTIONS],
            rho: &[u32; $crate::network::MAX_ZC_SECTIONS],
            n: usize,
        ) -> Self::Wave {
            // |2k − 1| < 2^f and 0 < ρ < 2^f (checked at load): |(2k − 1)·s| < 2^(f + W − 1)
            // and |ρ·(a_p − b_p)| < 2^(f + W) (two products in `mul_diff`), so the sum is
            // below 2^(f + W + 1) (i64: W = 32, f = 30: < 2^63; i32: W = 16, f = 14: < 2^31).
            type A = $acc;
            for ((si, pi), ri) in s.iter_mut().zip(pole.iter()).zip(rho.iter()).take(n) {
                let acc = A::from(*pi).wrapping_mul(A::from(*si)).wrapping_add(<A as Acc>::mul_diff(*ri, ap, bp));
                *si = $trunc_sat(acc, Self::LOSS_FRAC);
            }
            $sat(A::from(ap).wrapping_add(A::from(c)))
        }

        #[inline(always)]
        fn adapt(b: Self::Wave, a: Self::Wave, mu: u32, negate: bool) -> Self::Wave {
            // |b·2^f| and |μ·(a − b)| <= 2^f·2^(wave bits + 1) (μ <= 1, checked at load).
            type A = $acc;
            // b·2^f + μ·(a − b): the second numerator of the series form with b1 = a, b2 = b.
            let (_, n) = <A as Acc>::series_num(mu, Self::SERIES_FRAC, a, b);
            let m = $trunc(n, Self::SERIES_FRAC);
            $sat(if negate { m.wrapping_neg() } else { m })
        }

        // One copy per profile, not one per solver: the branch pass is not the hot loop of
        // most plants, and every firmware's generic solver carries it.
        #[inline(never)]
        fn branch_open(
            b: &[Self::Wave],
            g: &[u32],
            e: Self::Wave,
            g_src: u32,
            recip: u32,
            shift: u32,
            total: u64,
        ) -> Self::Wave {
            // Σ g_k + g_src <= total/2 <= 2^(WEIGHT_BITS − 1): the numerator is exact as in
            // `node_scatter` (i64: <= 2^61; i32: <= 2^29), |w| <= max(|b|, |e|/2).
            type A = $acc;
            let acc = $crate::profile::arith::node_numerator!(A, b, g, e, g_src, 0);
            let (q, _) = <A as Acc>::floor_div_abs(acc, recip, shift, total);
            // trunc toward zero = sign(acc)·floor(|acc|/total), by (x ^ mask) − mask.
            let mask = ((acc < 0) as A).wrapping_neg();
            $sat((q ^ mask).wrapping_sub(mask))
        }

        // One copy per profile, not one per solver: the branch pass is not the hot loop of
        // most plants, and every firmware's generic solver carries it.
        #[inline(never)]
        fn branch_series(
            wa: Self::Wave,
            wb: Self::Wave,
            s: Self::Wave,
            na: u32,
            nb: u32,
            nl: u32,
            recip: u32,
            shift: u32,
            n: u32,
        ) -> (Self::Wave, Self::Wave, Self::Wave) {
            // Bounds (checked at load): n_a, n_b, n_l <= 2^(WEIGHT_BITS − 1), n <= 2^WEIGHT_BITS,
            // n >= n_a + n_b + n_l. Each numerator n·w − 2·n_k·x is, regrouped,
            // (n − 2n_k)·w_k ± 2n_k·(w_j ± s) with |n − 2n_k| <= n: at most
            // 2^WB·2^(W−1) + 2^WB·2^W < 2^(WB + W + 1) (i64: WB = 30, W = 32: < 2^63;
            // i32: WB = 14, W = 16: < 2^31), so the wrapping sums below are exact whatever
            // the intermediate order. The quotient is below |w_k| + 2·|w_j ± s| < 5·2^(W−1),
            // which `floor_div_abs_wide` divides exactly.
            type A = $acc;
            let out = |w: Self::Wave, k: u32, sign_neg: bool| -> Self::Wave {
                // n·w − 2k·(wa − wb − s) for r_a; n·w + 2k·(...) for r_b and a_L.
                let kx = <A as Acc>::mul(k, wa)
                    .wrapping_sub(<A as Acc>::mul(k, wb))
                    .wrapping_sub(<A as Acc>::mul(k, s))
                    .wrapping_shl(1);
                let nw = <A as Acc>::mul(n, w);
                let num = if sign_neg { nw.wrapping_sub(kx) } else { nw.wrapping_add(kx) };
                let (q, _) = <A as Acc>::floor_div_abs_wide(num, recip, shift, u64::from(n));
                let mask = ((num < 0) as A).wrapping_neg();
                $sat((q ^ mask).wrapping_sub(mask))
            };
            (out(wa, na, true), out(wb, nb, false), out(s, nl, false))
        }

        // One copy per profile, not one per solver: the branch pass is not the hot loop of
        // most plants, and every firmware's generic solver carries it.
        #[inline(never)]
        fn branch_node(
            b: &[Self::Wave],
            g: &[u32],
            a: &mut [Self::Wave],
            e: Self::Wave,
            g_src: u32,
            link: u32,
            r: Self::Wave,
            recip: u32,
            shift: u32,
            total: u64,
        ) {
            // The exact N = 2·Σ g_k·b_k + g_src·e + link·r (as in `node_scatter`, weights <=
            // total) and its floor fl = floor(N/total), with nz = (remainder != 0).
            type A = $acc;
            let acc = $crate::profile::arith::node_numerator!(A, b, g, e, g_src, <A as Acc>::mul(link, r));
            let (q, nz) = <A as Acc>::floor_div_abs(acc, recip, shift, total);
            let neg = (acc < 0) as A;
            let mask = neg.wrapping_neg();
            let fl = (q.wrapping_add(nz & neg) ^ mask).wrapping_sub(mask);
            for (ak, bk) in a.iter_mut().zip(b.iter()) {
                // As `node_scatter`: v − b = (fl − b) + frac, truncated toward zero.
                let m = fl.wrapping_sub(A::from(*bk));
                *ak = $sat(m.wrapping_add(((m < 0) as A) & nz));
            }
        }
    };
}
pub(crate) use junction_rules;

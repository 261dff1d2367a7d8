//! Number profiles: the fixed-point formats of waves, weights and products.
//!
//! Two profiles run behind one generic solver:
//!
//! | profile | wave | node weights | accumulator | reciprocal | for |
//! |---|---|---|---|---|---|
//! | [`Wide`] | `i32` | sum <= 2^30 | `i64` | 32-bit, split into two 32x32->64 products | Cortex-M4 class |
//! | [`Narrow`] | `i16` | sum <= 2^14 | `i32` | 16-bit, two 16x16->32 products, exact division | Cortex-M0 class |
//!
//! `Narrow` never forms a 64-bit product, so it needs only the M0's 32x32->32 multiply.
//!
//! Rounding rule (passivity, see the crate docs): every outgoing quantity is computed from
//! exact double-width sums and quantized once by truncating its magnitude (toward zero), then
//! saturated. Both steps never increase a magnitude and never flip a sign.

mod arith;
use arith::Acc;

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
    /// Whether the node divides exactly (floor and remainder test by correction steps,
    /// [`Narrow`]) or runs the rule without correction steps ([`Wide`]); see
    /// [`Self::node_scatter`]. Selects the reciprocal's rounding ([`reciprocal`]).
    const EXACT_NODE: bool;
    /// Fractional bits of the series-junction coefficients.
    const SERIES_FRAC: u32;
    /// Largest `io_shift` the wave range leaves room for.
    const MAX_IO_SHIFT: u8;
    /// The `io_shift` the compiler gives this profile's plants: the fraction bits a wave
    /// keeps below one I/O code. A deviation of a few LSB that circulates round a working
    /// point (truncation's dead band) then stays within a code or two of every output
    /// (`core/tests/settle.rs` measures it). [`Wide`]: 12 (codes of 16 bits from
    /// 32-bit waves, 2^19 codes of wave range). [`Narrow`]: 4 (codes of 12 bits from 16-bit
    /// waves, the resolution of the converters such parts carry).
    const IO_SHIFT: u8;
    /// Whether the solver runs nodes of 1 to 3 ports through fixed-size arrays (unrolled).
    /// Only [`Wide`]: unrolled, the [`Narrow`] node's compares (correction steps, saturation)
    /// become ARMv6-M branches whose count depends on the data (the firmware's two-stimulus
    /// check finds it; branch-free masks for either alone did not remove it).
    const FIXED_NODES: bool;

    /// Parallel node. With N = 2·Σ g_k·b_k + g_src·e (exact), the exact node voltage is
    /// v = N/total. [`Narrow`] (`EXACT_NODE`) uses v itself (floor and remainder test by two
    /// correction steps, `floor_div32`). [`Wide`] runs the rule without correction steps
    /// described here: it uses a v' strictly between 0 and v (v' = 0 when N = 0) that is never
    /// an integer. Every outgoing wave is a_k = trunc(v' − b_k) (toward zero), saturated.
    ///
    /// v' is known only through q = floor(|N|·recip / 2^(RECIP_BITS+shift)), one product and
    /// no correction step: the reciprocal is rounded so that recip/2^(RECIP_BITS+shift) <
    /// 1/total strictly ([`reciprocal`]), so 0 <= q < |v| when N != 0, and
    /// v' = sign(N)·(q + ε) with 0 < ε <= |v| − q. Its floor is q (N > 0) or −q − 1 (N < 0)
    /// and it has a fraction, so a_k = m + (1 if m < 0) with m = floor(v') − b_k: the arithmetic
    /// needs q and the sign of N, never ε itself. Two details keep the per-port work in one
    /// word: q is capped at 2^31 − 1 (a smaller |v'| is as passive), and each port saturates
    /// m first and then adds the 1 (s = sat(m), a_k = s + 1 if s < 0 and N != 0), which where
    /// m is below the wave range gives MIN + 1, no larger in magnitude than v' − b_k.
    ///
    /// Passivity, for every v' between 0 and v (the shunt a port of weight g_sh with b = 0,
    /// the source one of weight g_src with b = e/2, T = total):
    /// Σ_j g_j·(v' − b_j)² = Σ_j g_j·b_j² − T·v'·(v − v') <= Σ_j g_j·b_j², and truncating
    /// each kept port toward zero (|a_k| <= |v' − b_k|) only lowers the left side. So no
    /// junction adds energy, whatever the topology (loops included: the stored energy is the
    /// sum of the lines' energies). When N != 0, T·v'·(v − v') > 0, so the lines' energy
    /// (an integer, Σ g·a²) drops by at least 1: a step is lossless only where N = 0, and
    /// there a_k = −b_k exactly as with the exact node voltage (see the crate docs).
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
    /// Energy: a1² + a2² = b1² + b2² − 2y·(x − y) for a1 = b1 − y, a2 = b2 + y, which is
    /// <= b1² + b2² for y = c·x; truncation only lowers each |a| (`core/tests/oracle.rs`).
    fn series(b1: Self::Wave, b2: Self::Wave, c: u32) -> (Self::Wave, Self::Wave);
    /// a = sat(v − b) (rig port: a = v − b with v the measured pin voltage).
    fn sub(v: Self::Wave, b: Self::Wave) -> Self::Wave;
    /// a = sat(−b) (exact short).
    fn neg(b: Self::Wave) -> Self::Wave;
    /// A stored i32 back to a wave (values stored came from waves, so no clipping happens).
    fn wave_from_i32(x: i32) -> Self::Wave;
    /// Largest total node weight the profile's division handles (larger shunts are capped
    /// there, which changes a near-short by less than 2^-15 of its reflection).
    const TOTAL_MAX: u64;
    /// Reactance adaptor: a_c = trunc(b + μ·(a − b)) toward zero from its exact value, μ in
    /// `SERIES_FRAC` fractional bits (μ <= 1), negated when `negate` (an inductor).
    ///
    /// Energy: the element (a reactance of port resistance R_p behind R_s; the node's port
    /// R_1 = R_p + R_s, μ = R_p/R_1) stores b²/R_p and receives (a² − b²)/R_1 in a sample, so
    /// a new state b' is passive iff b'² <= (1 − μ)·b² + μ·a². The exact b' = (1 − μ)·b + μ·a
    /// meets it (convexity) and truncation toward zero only lowers |b'| (`core/tests/oracle.rs`
    /// checks the inequality). Quantizing only the increment, b + trunc(μ·(a − b)), does not
    /// meet it where |a| < |b| (b = 100, a = 99, μ = 1/2 keeps b' = 100); the passive
    /// increment rounding (toward whichever of a and b is smaller in magnitude) is this rule
    /// itself wherever a and b have one sign, as at every working point (docs/firmware.md).
    fn adapt(b: Self::Wave, a: Self::Wave, mu: u32, negate: bool) -> Self::Wave;
    /// Fractional bits of loss-filter coefficients in this profile.
    const LOSS_FRAC: u32;
    /// One first-order loss section with error feedback: with n = g·x − gb·x1 + a·y1 + r1
    /// (the exact output plus the last residue r1), returns y = floor(n), saturated, and the
    /// new residue r = n − floor(n) in [0, 1) (as a wave of 2^−`LOSS_FRAC` units). Coefficients in
    /// `LOSS_FRAC` bits, g <= 1, |gb| <= g, 0 < a < 1, DC-exact g − gb = 1 − a: checked at
    /// load. The residue carried into the next sample shapes the quantization error by
    /// (1 − z⁻¹)/(1 − a·z⁻¹): no error at DC, no drift on the section's slow tail. Under a
    /// constant x the section settles on y = x exactly; with every wave zero it stays at zero
    /// (d = r1 < 1), so the residue alone never makes a wave (see `profile/arith.rs`).
    fn loss_section(
        x: Self::Wave,
        x1: Self::Wave,
        y1: Self::Wave,
        r1: Self::Wave,
        g: u32,
        gb: i32,
        a: u32,
    ) -> (Self::Wave, Self::Wave);
    /// The pre-step of a line end's Zc(s) network ([`crate::ZcNetwork`], node-wave form), after
    /// the arrival filter: c = trunc(Σ k_i·s_i) over the first `n` sections (one exact sum,
    /// one truncation toward zero, saturated; k_i in `LOSS_FRAC` bits) and the wave the
    /// junction sees, b_p = sat(b + c). Returns (c, b_p).
    fn zc_pre(
        b: Self::Wave,
        s: &[Self::Wave; crate::network::MAX_ZC_SECTIONS],
        k: &[u32; crate::network::MAX_ZC_SECTIONS],
        n: usize,
    ) -> (Self::Wave, Self::Wave);
    /// The post-step of a line end's Zc(s) network, after the junction: with d = a_p − b_p,
    /// every section's state becomes s_i' = trunc((2k_i − 1)·s_i + ρ_i·d) (one exact sum, one
    /// truncation toward zero, saturated; `pole[i]` = 2k_i − 1 and ρ_i in `LOSS_FRAC` bits),
    /// and the wave sent into the line is sat(a_p + c).
    fn zc_post(
        ap: Self::Wave,
        bp: Self::Wave,
        c: Self::Wave,
        s: &mut [Self::Wave; crate::network::MAX_ZC_SECTIONS],
        pole: &[i32; crate::network::MAX_ZC_SECTIONS],
        rho: &[u32; crate::network::MAX_ZC_SECTIONS],
        n: usize,
    ) -> Self::Wave;
    /// Fractional bits of the series-inductor coefficients (c, rho < 1).
    const CHOKE_FRAC: u32;
    /// Series inductor with its state kept in voltage scale: s = −(2Z/R_L)·b_L, so a large
    /// inductor does not need a huge wave. y = c·(b1 − b2) + rho·s exactly, then
    /// a1 = trunc(b1 − y), a2 = trunc(b2 + y), s' = trunc(2y − s), each toward zero from its
    /// exact value and saturated (c = 2Z/ΣR, rho = R_L/ΣR, c + rho <= 1 keeps it passive).
    ///
    /// Energy: the state's weight against the lines' is rho/(2c) = R_L/(4Z) (b_L²/R_L with
    /// s = −(2Z/R_L)·b_L). For outputs b1 − y, b2 + y, 2y − s the energy changes by
    /// (2/c)·((c + rho)·y² − y·y_e), y_e = c·(b1 − b2) + rho·s: 0 at y = 0 and
    /// (2/c)·y_e²·(c + rho − 1) <= 0 at y = y_e; truncating each output toward zero only
    /// lowers it (`core/tests/oracle.rs` checks 2c·(a1² + a2²) + rho·s'² <= 2c·(b1² + b2²) + rho·s²).
    fn series_l(
        b1: Self::Wave,
        b2: Self::Wave,
        s: Self::Wave,
        c: u32,
        rho: u32,
    ) -> (Self::Wave, Self::Wave, Self::Wave);
    /// Input code to wave: sat(code · 2^shift).
    fn from_code(code: i16, shift: u32) -> Self::Wave;
    /// Wave (or a sum of two waves, as i32) to output code: sat(trunc(x / 2^shift)).
    fn to_code(x: i32, shift: u32) -> i16;
    /// a + b or a − b, for probes, as i32 (saturating in [`Wide`]).
    fn sum(a: Self::Wave, b: Self::Wave) -> i32;
    /// a − b as i32 (saturating in [`Wide`]): a current probe's raw read-out.
    fn diff(a: Self::Wave, b: Self::Wave) -> i32;
    /// Series branch, stage 1 (a node's link port, reflection-free): the wave the node sends
    /// into the branch, w = trunc((2·Σ g_k·b_k + g_src·e) / total) toward zero, saturated,
    /// where `total` = 2G is the node's weight with its link port (G: ports, source and
    /// shunt). w is half the node's open-circuit voltage and does not depend on the wave
    /// coming back from the branch (the port's weight is the sum of all others).
    #[allow(clippy::too_many_arguments)]
    fn branch_open(
        b: &[Self::Wave],
        g: &[u32],
        e: Self::Wave,
        g_src: u32,
        recip: u32,
        shift: u32,
        total: u64,
    ) -> Self::Wave;
    /// Series branch, stage 2 (the series adaptor, the tree's root): with x = w_a − w_b − s
    /// (s = b_L, the inductor's wave) and the integer port numbers n_a, n_b, n_l (each
    /// proportional to its port resistance; the resistor takes the rest of `n` = Σ n), the
    /// waves back r_a = w_a − 2·n_a·x/n, r_b = w_b + 2·n_b·x/n and the wave into the inductor
    /// a_L = s + 2·n_l·x/n, each from its exact value truncated toward zero, saturated.
    #[allow(clippy::too_many_arguments)]
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
    ) -> (Self::Wave, Self::Wave, Self::Wave);
    /// Series branch, stage 3: a node with its link port (weight `link` = G, incoming wave r)
    /// as [`Self::node_scatter`]: v = (2·Σ g_k·b_k + g_src·e + 2·G·r) / total (total = 2G),
    /// a_k = trunc(v − b_k) toward zero, saturated.
    #[allow(clippy::too_many_arguments)]
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
    );
    /// Fractional-delay allpass (lattice, state s, coefficients in `LOSS_FRAC` bits): (y, s') =
    /// (trunc(a·x + c·s), trunc(c·x − a·s)), saturated; passive for a² + c² <= 1 (`lattice.rs`).
    fn allpass(x: Self::Wave, s: Self::Wave, a: i32, c: u32) -> (Self::Wave, Self::Wave);
}

mod lattice;
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

mod scalar;
pub(crate) use scalar::veil;
use scalar::*;

impl Profile for Wide {
    type Wave = i32;
    const ZERO: i32 = 0;
    const NAME: &'static str = "wide (32-bit waves)";
    const WEIGHT_BITS: u32 = 30;
    const RECIP_BITS: u32 = 32;
    const EXACT_NODE: bool = false;
    const SERIES_FRAC: u32 = 30;
    const MAX_IO_SHIFT: u8 = 15;
    const IO_SHIFT: u8 = 12;
    const FIXED_NODES: bool = true;
    const TOTAL_MAX: u64 = 1 << 62;
    const LOSS_FRAC: u32 = 30;
    const CHOKE_FRAC: u32 = 29;

    #[inline(always)]
    fn sub(v: i32, b: i32) -> i32 {
        v.saturating_sub(b)
    }
    #[inline(always)]
    fn neg(b: i32) -> i32 {
        b.saturating_neg()
    }
    #[inline(always)]
    fn wave_from_i32(x: i32) -> i32 {
        x
    }
    #[inline(always)]
    fn from_code(code: i16, shift: u32) -> i32 {
        (code as i32).wrapping_shl(shift) // shift <= 15 keeps |code·2^shift| < 2^31
    }
    #[inline(always)]
    fn to_code(x: i32, shift: u32) -> i16 {
        sat_i16(trunc_shr32_dyn(x, shift))
    }
    #[inline(always)]
    fn sum(a: i32, b: i32) -> i32 {
        a.saturating_add(b)
    }
    #[inline(always)]
    fn diff(a: i32, b: i32) -> i32 {
        a.saturating_sub(b)
    }

    arith::junction_rules!(i64, trunc_shr64, sat64_to_i32, trunc_sat64, floor_sat64);
    #[inline(always)]
    fn allpass(x: i32, s: i32, a: i32, c: u32) -> (i32, i32) {
        lattice::wide(x, s, a, c)
    }
}

impl Profile for Narrow {
    type Wave = i16;
    const ZERO: i16 = 0;
    const NAME: &'static str = "narrow (16-bit waves)";
    const WEIGHT_BITS: u32 = 14;
    const RECIP_BITS: u32 = 16;
    const EXACT_NODE: bool = true;
    const SERIES_FRAC: u32 = 14;
    const MAX_IO_SHIFT: u8 = 8;
    const IO_SHIFT: u8 = 4;
    const FIXED_NODES: bool = false;
    const TOTAL_MAX: u64 = (1 << 30) - 1;
    const LOSS_FRAC: u32 = 14;
    const CHOKE_FRAC: u32 = 13;

    #[inline(always)]
    fn sub(v: i16, b: i16) -> i16 {
        // The value of `v.saturating_sub(b)`, through `sat_i16` (branch-free on ARMv6-M).
        sat_i16(i32::from(v).wrapping_sub(i32::from(b)))
    }
    #[inline(always)]
    fn neg(b: i16) -> i16 {
        // The value of `b.saturating_neg()`, through `sat_i16` (branch-free on ARMv6-M).
        sat_i16(i32::from(b).wrapping_neg())
    }
    #[inline(always)]
    fn wave_from_i32(x: i32) -> i16 {
        sat_i16(x)
    }
    #[inline(always)]
    fn from_code(code: i16, shift: u32) -> i16 {
        sat_i16((code as i32).wrapping_shl(shift)) // shift <= 8 keeps |code·2^shift| < 2^31
    }
    #[inline(always)]
    fn to_code(x: i32, shift: u32) -> i16 {
        sat_i16(trunc_shr32_dyn(x, shift))
    }
    #[inline(always)]
    fn sum(a: i16, b: i16) -> i32 {
        (a as i32).wrapping_add(b as i32) // two i16: exact in i32
    }
    #[inline(always)]
    fn diff(a: i16, b: i16) -> i32 {
        (a as i32).wrapping_sub(b as i32) // two i16: exact in i32
    }

    arith::junction_rules!(i32, trunc_shr32, sat_i16, trunc_sat32, floor_sat32);
    #[inline(always)]
    fn allpass(x: i16, s: i16, a: i32, c: u32) -> (i16, i16) {
        lattice::narrow(x, s, a, c)
    }
}

/// Reciprocal of a node's total weight: `shift = floor(log2 total)` (one less for a
/// power-of-two total when not strict) and `recip` in [2^(RECIP_BITS−1), 2^RECIP_BITS).
///
/// * `strict` ([`Wide`]'s node rule, [`Profile::node_scatter`]):
///   `recip = floor((2^(RECIP_BITS + shift) − 1) / total)`, so recip·total <
///   2^(RECIP_BITS+shift) **strictly**, also for a power-of-two total: the node quotient
///   q = floor(|N|·recip / 2^(RECIP_BITS+shift)) is then strictly below |N|/total for N != 0.
/// * not strict ([`Narrow`]'s exact node, corrected afterwards):
///   `recip = floor(2^(RECIP_BITS + shift) / total)`, rounded down.
///
/// Returns `None` when `total < 2` (the format cannot hold it). A total so large that the
/// shift would leave the word yields `(0, 0)`: q is then always 0 (a near short; strictly
/// below |v|, and corrected to the exact floor where the profile corrects).
pub fn reciprocal(total: u64, recip_bits: u32, strict: bool) -> Option<(u32, u32)> {
    if total < 2 {
        return None;
    }
    let n = 63u32.saturating_sub(total.leading_zeros()); // 2^n <= total < 2^(n+1), n >= 1
    let mut p = recip_bits.checked_add(n)?; // <= 32 + 63 < 128
                                            // (2^p − 1)/total < 2^p/2^n = 2^recip_bits, and >= 2^(recip_bits−1) for total < 2^(n+1).
    let mut r = div_pow2(p, strict, total)?;
    if r.checked_shr(recip_bits)? != 0 {
        // Not strict and total a power of two: 2^p/total = 2^recip_bits does not fit.
        p = p.checked_sub(1)?;
        r = div_pow2(p, strict, total)?;
    }
    let shift = p.checked_sub(recip_bits)?;
    // The accumulator magnitude product is < 2^(2·RECIP_BITS); a shift past that is zero.
    if shift >= recip_bits.saturating_mul(2) || shift >= 64 {
        return Some((0, 0));
    }
    Some((u32::try_from(r).ok()?, shift))
}

/// floor((2^p − strict) / total), p < 128: in 64 bits where 2^p fits them, as it does for
/// every node whose total is below 2^(64 − recip_bits). The same quotient as in 128 bits; a
/// 128-bit division is a long software routine on a microcontroller, and `set_shunt` runs
/// between two samples of a running plant (`docs/firmware.md`, "Events between samples").
fn div_pow2(p: u32, strict: bool, total: u64) -> Option<u128> {
    if p < 64 {
        let num = 1u64.checked_shl(p)?.checked_sub(u64::from(strict))?;
        return num.checked_div(total).map(u128::from);
    }
    1u128.checked_shl(p)?.checked_sub(u128::from(strict))?.checked_div(u128::from(total))
}

#[cfg(test)]
mod tests;

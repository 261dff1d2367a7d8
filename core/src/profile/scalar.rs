//! Scalar helpers of the profiles: branch-free sign and saturation, truncating shifts, the
//! reciprocal quotient and the floor division with its correction steps (each an exact
//! operation on integers, checked against i128 in `tests.rs` and `core/tests/oracle.rs`).

/// [`trunc_shr32`] for a shift known only at run time (the generic solver's I/O shift, once
/// per output code): x plus 2^shift − 1 where x < 0, shifted arithmetically. Branch-free on
/// ARMv6-M, where `unsigned_abs` (an abs) had become a conditional branch on the output path.
#[inline(always)]
pub(super) fn trunc_shr32_dyn(x: i32, shift: u32) -> i32 {
    // The sign mask opaque (ARMv6-M): with a run-time shift LLVM turned the `and` with it
    // into a select, a conditional branch there.
    let bias = opaque(x >> 31) & (1u32.wrapping_shl(shift).wrapping_sub(1) as i32);
    x.wrapping_add(bias).wrapping_shr(shift)
}

/// `x` itself, but opaque to the optimizer on targets without a conditional select
/// (`tidewire_no_cond_select`, set by `core/build.rs` for ARMv6-M). There LLVM turns a mask
/// it can prove to be a compare result (`x >> 31`, `(x | −x) >> 31`) back into a select, and
/// a select into a conditional branch, so the instruction count of `step` would depend on the
/// data. Hiding the mask (`core::hint::black_box`: one store and one load) keeps the
/// and/or form. Elsewhere (Cortex-M4: IT blocks, `SSAT`; x86-64: `CMOV`) the select is
/// branch-free and cheaper, so the value passes through untouched.
#[inline(always)]
pub(crate) fn opaque<T>(x: T) -> T {
    #[cfg(tidewire_no_cond_select)]
    {
        core::hint::black_box(x)
    }
    #[cfg(not(tidewire_no_cond_select))]
    {
        x
    }
}

/// A zero the optimizer cannot see through on ARMv6-M ([`opaque`]`(0)`), the plain constant
/// 0 elsewhere. A flag or-ed with it (`flag | z`) is as opaque as `opaque(flag)`: LLVM no
/// longer knows it is 0/1, so it cannot turn the mask it becomes into a select. Why: each
/// `black_box` on ARMv6-M is a store to the stack, the slot's address in a register for the
/// empty `asm!` (often itself spilled and reloaded) and a load back, and its memory clobber
/// orders every load and store around it; a node of the 34-port narrow plant ran 14 of them
/// (681 of the step's 4113 instructions, 504 of its 1212 stack accesses). One veil per node,
/// or-ed into each flag, costs one `ORRS` per flag (`docs/firmware.md`, "Register spills in
/// the narrow node"). Where the target has a conditional select, z is the constant 0 and
/// every `| z` folds away (the M4 and host code is unchanged).
#[inline(always)]
pub(crate) fn veil() -> i32 {
    opaque(0)
}

/// `x` saturated to i16, the value of `x.clamp(i16::MIN, i16::MAX)`: the clamp (`SSAT` on
/// the M4, `CMOV` on x86-64) where the target has a conditional select, else
/// [`sat_i16_masked`].
#[inline(always)]
pub(super) fn sat_i16(x: i32) -> i16 {
    #[cfg(not(tidewire_no_cond_select))]
    {
        x.clamp(i16::MIN as i32, i16::MAX as i32) as i16
    }
    #[cfg(tidewire_no_cond_select)]
    {
        sat_i16_masked(x)
    }
}

/// [`sat_i16`] without a conditional branch on ARMv6-M (compiled and tested on every target,
/// run only where `tidewire_no_cond_select` is set). x fits iff bits 31..15 all equal, i.e.
/// iff (x >> 15) == (x >> 31). That test as 0/1 is branch-free on ARMv6-M (a carry trick,
/// `SUBS`/`SBCS`); a 0/−1 mask LLVM can see to come from it is not (it is lowered as a
/// select), so the 0/1 flag goes through [`opaque`] and is negated after: m = −1 where x
/// does not fit. The limit is s ^ MAX: MAX for x >= 0 (s = 0), MIN for x < 0 (s = −1,
/// −1 ^ 0x7FFF = −0x8000); x ^ ((x ^ lim) & m) picks lim where m = −1, x where m = 0.
#[cfg_attr(not(any(tidewire_no_cond_select, test)), allow(dead_code))]
#[inline(always)]
pub(super) fn sat_i16_masked(x: i32) -> i16 {
    // The flag itself hidden: or-ed with a fresh veil it costs two instructions more where
    // there is no node-wide veil to share (measured on the loss filters).
    sat_i16_hiding(x, opaque)
}

/// [`sat_i16`] with the fit flag hidden by a caller's [`veil`] `z` (0 at run time) instead of
/// its own [`opaque`]: on ARMv6-M [`sat_i16_masked`]'s value with one `ORRS` in place of a
/// `black_box`; elsewhere the clamp.
#[inline(always)]
pub(super) fn sat_i16_veiled(x: i32, z: i32) -> i16 {
    #[cfg(not(tidewire_no_cond_select))]
    {
        let _ = z;
        x.clamp(i16::MIN as i32, i16::MAX as i32) as i16
    }
    #[cfg(tidewire_no_cond_select)]
    {
        sat_i16_hiding(x, |f| f | z)
    }
}

/// The masked saturation of [`sat_i16_masked`], with the 0/1 flag passed through `hide`
/// ([`opaque`], or an or with a [`veil`]) before it becomes the mask.
#[cfg_attr(not(any(tidewire_no_cond_select, test)), allow(dead_code))]
#[inline(always)]
pub(super) fn sat_i16_hiding(x: i32, hide: impl FnOnce(i32) -> i32) -> i16 {
    let s = x >> 31;
    let m = hide(((x >> 15) != s) as i32).wrapping_neg();
    let lim = s ^ i32::from(i16::MAX);
    (x ^ ((x ^ lim) & m)) as i16
}

/// `t` saturated to i32, the same value as `t.clamp(i32::MIN, i32::MAX)`: t fits exactly when
/// its high word is the sign extension of its low word; otherwise the sign of the high word
/// picks MAX (0 ^ MAX) or MIN (−1 ^ MAX). One compare and a conditional select on Thumb-2,
/// where the 64-bit clamp takes two 64-bit compares.
#[inline(always)]
pub(super) fn sat64_to_i32(t: i64) -> i32 {
    let lo = t as i32;
    let hi = (t >> 32) as i32;
    if hi == lo >> 31 {
        lo
    } else {
        (hi >> 31) ^ i32::MAX
    }
}

/// floor(n / 2^f) as an i32, saturated toward zero, for 1 <= f <= 31: exactly the floor
/// where it fits an i32; where it does not, a value of the same sign, no larger in magnitude
/// than the floor and within 2^(32 − f) − 1 of the i32 limit (the low bits of the word pair
/// stay as they are). The floor fits iff the high word h = n >> 32 lies in
/// [−2^(f−1), 2^(f−1)), so the high word alone is clamped there (one `SSAT` on the M4) and the
/// result is (h << (32 − f)) | (low word >> f): three instructions where the exact 64-bit
/// saturation [`sat64_to_i32`] of the shifted value took six (a compare and a conditional
/// select over both words). Saturation happens only at the edge of the wave range, where
/// every rule only needs |result| <= |exact| (the passive bound), which this keeps.
#[inline(always)]
pub(super) fn floor_sat64(n: i64, f: u32) -> i32 {
    let hi = (n >> 32) as i32;
    let lim = 1i32.wrapping_shl(f.wrapping_sub(1));
    // max then min, not `clamp` (which can panic on a reversed range): lim >= 1.
    let hs = hi.max(lim.wrapping_neg()).min(lim.wrapping_sub(1));
    ((hs as u32).wrapping_shl(32u32.wrapping_sub(f)) | (n as u32).wrapping_shr(f)) as i32
}

/// trunc(n / 2^f) toward zero as an i32, saturated as in [`floor_sat64`], for |n| < 2^63 − 2^f
/// and 1 <= f <= 31: the floor of the biased n of [`trunc_shr64`].
#[inline(always)]
pub(super) fn trunc_sat64(n: i64, f: u32) -> i32 {
    let bias = ((n >> 63) as u64).checked_shr(64u32.wrapping_sub(f)).unwrap_or(0) as i64;
    floor_sat64(n.wrapping_add(bias), f)
}

/// floor(n / 2^f) saturated to i16 (the narrow counterpart of [`floor_sat64`]: exact clamp).
#[inline(always)]
pub(super) fn floor_sat32(n: i32, f: u32) -> i16 {
    sat_i16(n.wrapping_shr(f))
}

/// trunc(n / 2^f) toward zero saturated to i16 (exact clamp).
#[inline(always)]
pub(super) fn trunc_sat32(n: i32, f: u32) -> i16 {
    sat_i16(trunc_shr32(n, f))
}

/// trunc(n / 2^f) toward zero, for |n| < 2^63 and f < 63: the same value as
/// sign(n)·(|n| >> f). A negative n gets 2^f − 1 added before the arithmetic shift (which
/// floors), so the shift rounds it up, toward zero; n < 0 cannot overflow by the addition.
#[inline(always)]
pub(super) fn trunc_shr64(n: i64, f: u32) -> i64 {
    // 2^f − 1 for n < 0, else 0: the sign mask shifted down logically (see `trunc_shr32`).
    let bias = ((n >> 63) as u64).checked_shr(64u32.wrapping_sub(f)).unwrap_or(0) as i64;
    n.wrapping_add(bias).wrapping_shr(f)
}

/// trunc(n / 2^f) toward zero, f < 32: the same value as sign(n)·(|n| >> f), by the biased
/// arithmetic shift of [`trunc_shr64`] (for n < 0 the bias cannot overflow).
#[inline(always)]
pub(super) fn trunc_shr32(n: i32, f: u32) -> i32 {
    // 2^f − 1 for n < 0, else 0: the sign mask shifted down logically (no compare, so no
    // branch on ARMv6-M).
    let bias = ((n >> 31) as u32).checked_shr(32u32.wrapping_sub(f)).unwrap_or(0) as i32;
    n.wrapping_add(bias).wrapping_shr(f)
}

/// The node quotient of the cheap rule: q = floor(mag·recip / 2^(32+shift)), the product
/// split into two 32x32->64 products (each floored). No correction step: with
/// recip < 2^(32+shift)/total strictly ([`reciprocal`]), q < mag/total = |v| whenever
/// mag > 0, which is all the node rule needs (see [`Profile::node_scatter`]). For
/// mag < 2^63 and recip < 2^32: hi·recip < 2^63 and the sum < 2^64, exact in u64.
#[inline(always)]
pub(super) fn quotient64(mag: u64, recip: u32, shift: u32) -> u64 {
    let r = recip as u64;
    let hi = mag >> 32;
    let lo = mag & 0xFFFF_FFFF;
    hi.wrapping_mul(r).wrapping_add(lo.wrapping_mul(r) >> 32).wrapping_shr(shift)
}

/// floor(mag / total) and (remainder != 0) as 0/1, for mag < 2^63, total < 2^62.5.
///
/// The estimate mag·recip/2^(32+shift), from two 32x32->64 products with floors, is below
/// the floor by less than q/2^31 + 2 (recip >= 2^31 misses 2^(32+shift)/total by less than
/// one, and two floors lose less than one each): at most 2 for quotients up to 2^32 (the
/// wave range), fixed by STEPS = 2 exact steps; at most 6 for quotients below 5·2^31 (the
/// series branch, `Profile::branch_series`), STEPS = 6. The true remainder mag − q·total
/// lies in [0, (STEPS + 1)·total) ⊂ [0, 2^64), so wrapping arithmetic gives it exactly.
#[inline(always)]
pub(super) fn floor_div64<const STEPS: usize>(mag: u64, recip: u32, shift: u32, total: u64) -> (u64, u64) {
    let r = recip as u64;
    let hi = mag >> 32;
    let lo = mag & 0xFFFF_FFFF;
    let mut q = hi.wrapping_mul(r).wrapping_add(lo.wrapping_mul(r) >> 32).wrapping_shr(shift);
    let mut rem = mag.wrapping_sub(q.wrapping_mul(total));
    for _ in 0..STEPS {
        let step = (rem >= total) as u64;
        q = q.wrapping_add(step);
        rem = rem.wrapping_sub(total & step.wrapping_neg());
    }
    (q, (rem != 0) as u64)
}

/// floor(mag / total) and (remainder != 0) as 0/1 for [`Narrow`]'s exact node, mag < 2^31,
/// total < 2^30, using only 16x16->32 products (Cortex-M0 `MULS`). The estimate
/// mag·recip/2^(16+shift), from two products with floors and the reciprocal rounded down
/// ([`reciprocal`] with `strict = false`), is at most 2 below the floor; STEPS exact steps fix
/// it (2 for quotients up to 2^16, 6 below 5·2^15, the series branch; the true remainder
/// mag − q·total lies in [0, (STEPS + 1)·total)).
///
/// Why Narrow keeps the exact node: DC accuracy with its 16-bit reciprocal. Without
/// correction steps (as [`Wide`] runs it) the node sends up to one LSB less per pass; when the
/// narrow LSB was one I/O code that moved the packaging line's DC trunk current by 0.05 % of
/// its peak, past the plant's 0.20 % tolerance (`tidewire verify ... --profile narrow`:
/// +0.216 % against +0.157 %), and a 31-bit reciprocal from four products cost more on the
/// M0 than the correction steps save. Not measured again since the narrow waves gained 4 bits
/// below the code (`Profile::IO_SHIFT`), which make that LSB a sixteenth of a code.
#[inline(always)]
pub(super) fn floor_div32<const STEPS: usize>(mag: u32, recip: u32, shift: u32, total: u32) -> (u32, u32) {
    floor_div32_veiled::<STEPS>(mag, recip, shift, total, veil())
}

/// [`floor_div32`] with its flags and `total` hidden by a caller's [`veil`] `z` (0 at run
/// time): one veil per node instead of one `black_box` per correction step.
#[inline(always)]
pub(super) fn floor_div32_veiled<const STEPS: usize>(
    mag: u32,
    recip: u32,
    shift: u32,
    total: u32,
    z: i32,
) -> (u32, u32) {
    let z = z as u32;
    let hi = mag >> 16;
    let lo = mag & 0xFFFF;
    let mut q = hi.wrapping_mul(recip).wrapping_add(lo.wrapping_mul(recip) >> 16).wrapping_shr(shift);
    let mut rem = mag.wrapping_sub(q.wrapping_mul(total));
    // Veiled on ARMv6-M: with a known total (the specialised form) LLVM turns the sign test
    // below back into a compare with a constant, and a compare into a branch there.
    let total = total | z;
    for _ in 0..STEPS {
        // rem >= total as 0/1 from a sign bit (a compare becomes a branch on ARMv6-M):
        // 0 <= rem <= mag < 2^31 (q is never above the floor) and total < 2^30, so
        // rem − total is exact as an i32, negative iff rem < total. The flag is hidden from
        // the optimizer before it becomes the mask −1/0 (else a select, a branch there).
        let step = (1 ^ (rem.wrapping_sub(total) >> 31)) | z;
        q = q.wrapping_add(step);
        rem = rem.wrapping_sub(total & step.wrapping_neg());
    }
    (q, (rem != 0) as u32)
}

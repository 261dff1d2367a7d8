//! The hold rule at **open nodes** (no shunt, no source) of the exact node, paid for by the
//! node's own truncation loss: it lets a constant drive settle where the deviation from the
//! working point circulates through taps and impedance steps that have no shunt to pay for
//! the shunt-node hold ([`super::Profile::node_scatter_held`]).
//!
//! ## Why
//! Around a working point every outgoing wave of a node has one sign, so truncation toward
//! zero rounds them all the same way: for small deviations the node acts as if it quantized
//! v, a lossless reflection of the deviation, and in a lightly damped plant the deviation
//! wanders by tens of LSB for ever. Found by measurement on the packaging-line example
//! (narrow): holding the previous outgoing wave at its open trunk nodes takes the band from
//! [6, 28, 21, 19, 6] codes to 0, while holding at the fractional-delay lattices (even with
//! an exact state) or at the series resistors leaves it at 15-32 codes
//! (`core/tests/packaging_line.rs`, docs/firmware.md "Constant drive (item 8)").
//!
//! ## The rule and its energy argument
//! Take an open node: ports k of weights g_k, T = Σ g_k, N = 2·Σ g_k·b_k, σ = sign(N). In the
//! frame b'_k = σ·b_k the exact voltage is v' = q + r/T, q = floor(|N|/T), remainder
//! r ∈ [0, T). Each port's exact outgoing wave is u_k = m_k + r/T with m_k = q − b'_k; the
//! plain rule sends trunc(u_k) toward zero: m_k where m_k >= 0, m_k + 1 where m_k < 0 and
//! r > 0. The exact node is lossless (Σ g_k·u_k² = Σ g_k·b_k²), and against it
//!
//! * all ports at the floor m_k: Σ g_k·(m_k² − u_k²) = −(r/T)·(2·Σ g_k·m_k + r) = −q·r,
//!   because Σ g_k·m_k = q·T − |N|/2 = (q·T − r)/2;
//! * one port at the ceiling m_k + 1 instead of the floor adds g_k·(2·m_k + 1)
//!   (negative where m_k < 0: the plain rule's truncation of those ports only removes more).
//!
//! So the node may send the ceiling m_k + 1 (away from zero) at ports with m_k >= 0 and still
//! leave no more energy in the lines than arrived, as long as those ports' costs
//! Σ g_k·(2·m_k + 1) stay within q·r. The rule: while the drive is on (e != 0) and r > 0, a port
//! with m_k >= 0 whose previous outgoing wave (`a[k]` on entry, in the σ frame) is m_k + 1
//! keeps it if its cost fits the budget left (ports in order, the budget q·r lowered by each
//! cost paid); every other port gets the plain trunc(u_k). A deviation below one LSB is then
//! absorbed instead of reflected, and the plant locks onto a fixed point.
//!
//! Passivity: the held node's lines receive Σ g_k·b_k² − q·r + (costs paid) + (the plain
//! rule's negative terms) <= Σ g_k·b_k²: no junction adds energy, so the crate's passive bound
//! holds unchanged. With e = 0 the plain rule runs, so the zero-input argument (every node
//! lossless only where N = 0) is untouched.
//!
//! ## Range and data independence (narrow only)
//! Only the exact node knows r ([`super::Narrow`], `EXACT_NODE`; the wide node's v' is not
//! known to the LSB), so only it runs the rule ([`super::hold_threshold`] selects it for open
//! nodes of exact profiles). T <= 2^14 and |b| <= 2^15: |N| <= 2^30, q <= 2^16, r < 2^14, so the
//! budget q·r < 2^30; m_k ∈ [−2^15, 2^16 + 2^15]. The cost is formed as g_k·(2·p − 1) from the
//! previous wave p = σ·a_k (|p| <= 2^15, so |cost| < 2^30 + 2^14): where the port can hold,
//! p = m_k + 1 >= 1 and this is g_k·(2·m_k + 1) ∈ [0, 2^30), so budget − cost is exact;
//! elsewhere its wrapped sign bit does not matter (the test p − m_k − 1 = 0 fails). Every
//! condition is a sign bit of a small difference (as in the shunt-node hold), and-ed into
//! one flag that is or-ed with the node's [`super::veil`] (one `black_box` per node) before
//! it becomes a mask, so the Cortex-M0 runs the same instructions whatever the waves.
use super::{floor_div32_veiled, node_flag, sat_i16_veiled, veil};

/// `hold_min` value that selects the open-node rule in [`super::Profile::node_scatter_held`]
/// (as a shunt-node threshold it would mean "never hold": q never reaches it).
pub const OPEN_HOLD: u32 = u32::MAX;

/// The open-node hold for the exact 16-bit node (see the module docs): a node without shunt
/// and source (`total` = Σ g), driven when e != 0. `a` holds the previous outgoing waves on
/// entry and the new ones on return.
#[inline(always)]
pub(super) fn narrow_open(b: &[i16], g: &[u32], a: &mut [i16], e: i16, recip: u32, shift: u32, total: u64) {
    // N = 2·Σ g_k·b_k, exact in i32: Σ g_k = total <= 2^14 (node budget), |b| <= 2^15.
    let mut acc: i32 = 0;
    for (bk, gk) in b.iter().zip(g.iter()) {
        acc = acc.wrapping_add((*gk as i32).wrapping_mul(i32::from(*bk)));
    }
    let acc = acc.wrapping_shl(1);
    // T <= 2^14 (narrow node budget, checked at load).
    let t = total as u32;
    // σ as a 0/−1 mask: x ^ mask − mask is σ·x, branch-free. |N| is formed with it too
    // (`unsigned_abs` next to the mask became a conditional branch on ARMv6-M).
    // One veil for the whole node (`scalar::veil`): every flag below is or-ed with it.
    let z = veil();
    let mask = (((acc as u32 >> 31) as i32) | z).wrapping_neg();
    let flip = |x: i32| (x ^ mask).wrapping_sub(mask);
    let mag = flip(acc) as u32; // |N| <= 2^30
    let (q, nz) = floor_div32_veiled::<2>(mag, recip, shift, t, z);
    // r = |N| − q·T exactly (q is the exact floor): in [0, T).
    let r = mag.wrapping_sub(q.wrapping_mul(t)) as i32;
    let (q, nz) = (q as i32, nz as i32);
    // floor(v) in the real frame, as `Acc::port` wants it: q for N >= 0, −q − 1 for N < 0
    // with a remainder (nz), −q without.
    let fl = flip(q).wrapping_sub(nz & mask & 1);
    let e = i32::from(e);
    // Node-wide flag, negative iff driven (e != 0) and r > 0; hidden so the optimizer cannot
    // unswitch the port loop on it (a branch on data; `scalar::node_flag`).
    let node = node_flag((e | e.wrapping_neg()) & r.wrapping_neg(), z);
    let mut budget = q.wrapping_mul(r); // q·r < 2^30
    for (ak, (bk, gk)) in a.iter_mut().zip(b.iter().zip(g.iter())) {
        let m = q.wrapping_sub(flip(i32::from(*bk)));
        // The plain rule's wave: trunc(v − b_k) toward zero, saturated.
        let plain = {
            let d = fl.wrapping_sub(i32::from(*bk));
            sat_i16_veiled(d.wrapping_add(((d as u32 >> 31) as i32) & nz), z)
        };
        // The previous wave in the σ frame; veiled on ARMv6-M so LLVM keeps the sign tests.
        let prev = i32::from(*ak) | z;
        let p = flip(prev);
        let cost = (*gk as i32).wrapping_mul(p.wrapping_shl(1).wrapping_sub(1));
        let d = p.wrapping_sub(m).wrapping_sub(1);
        let left = budget.wrapping_sub(cost);
        // Held iff driven, r > 0, m >= 0, p = m + 1 and the cost fits: the sign bit of
        // node & !(m | d | −d | left).
        let any_neg = m | d | d.wrapping_neg() | left;
        let keep = ((((node & !any_neg) >> 31) & 1) | z).wrapping_neg();
        budget = budget.wrapping_sub(cost & keep);
        let plain = i32::from(plain);
        // Both candidates are waves, so the cast is exact.
        *ak = (plain ^ ((plain ^ prev) & keep)) as i16;
    }
}

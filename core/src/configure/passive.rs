//! The last phase of `load` (and of `set_shunt`): every quantized junction is checked to be
//! passive, from its integer coefficients, instead of being assumed so from how they were
//! computed. A network that fails is refused ([`crate::BuildError::NotPassive`]).
//!
//! Conditions, per junction kind (waves a, b; weights g; with E = 0 the source is a port of
//! weight g_src):
//! * **node**: every port weight g_k >= 1; Σ g_k + g_src <= 2^WEIGHT_BITS (the accumulator
//!   2·Σ g_k·b_k + g_src·e is exact and |v| < 2·max|b|); total >= Σ g_k + g_src (the shunt
//!   conductance is >= 0, which is exactly the condition for Σ g_k·a_k² <= Σ g_k·b_k² of the
//!   exact node); total <= `TOTAL_MAX`; and the reciprocal is the one [`reciprocal`] gives
//!   for that total (rounded down and normalized, the premise of the two-step exact
//!   division). Then every a_k is the exact value truncated toward zero, so the quantized
//!   node is passive too.
//! * **series** (equal impedances): 0 <= c <= 1, since a1² + a2² = b1² + b2² − 2c(1 − c)·x².
//! * **series inductor**: c + rho <= 1 (the three-port series adaptor with a non-negative
//!   extra resistance).
//! * **series branch between nodes** (a wave-digital tree, Fettweis, "Wave digital filters:
//!   theory and practice", Proc. IEEE 74(2), 1986): each linked node is a parallel adaptor
//!   with a link port of weight G equal to the sum of its others (total = 2G), so the link's
//!   outgoing wave w does not depend on the wave coming back (reflection-free: no delay-free
//!   loop). The series adaptor (root) has ports proportional to n_a, n_b (the links), n_l
//!   (the inductor) and n − n_a − n_b − n_l >= 0 (the resistor); it is lossless with those
//!   port resistances when n_a : n_b = 1/G_a : 1/G_b, checked exactly as n_a·G_a = n_b·G_b,
//!   so each link is one port seen with one resistance from both sides and no power is
//!   created across it. Every adaptor's outgoing waves are formed from its exact value and
//!   truncated toward zero, then saturated: |out_q| <= |out_exact| per port, so each
//!   adaptor's outgoing pseudo-power is at most its exact (lossless or lossy) value, the
//!   inductor (b_L[n] = −a_L[n − 1]) is lossless, and so the whole tree is passive. Ranges:
//!   2G <= 2^WB at each node, n_a, n_b, n_l, n_r <= 2^(WB − 1), n <= 2^WB (the bounds
//!   `Profile::branch_series` argues with), and the reciprocal of n is the one [`reciprocal`]
//!   gives.
//! * **element adaptor**: 0 <= μ <= 1.
//! * **loss section** H(z) = (g − gb·z⁻¹)/(1 − a·z⁻¹): 0 < a < 1, g > 0, −g <= gb,
//!   g − gb = 1 − a exactly (DC gain exactly 1, so the DC operating point is Ohm's law's)
//!   and gb <= a, which with the DC rule is the effective zero gb/g at or below the pole a
//!   (gb·1 <= a·g ⇔ gb·(1 − a) <= a·(1 − a)) and g <= 1. Then with α = a, β = gb/g,
//!   |H(e^jω)|² = g²·(1 − 2β·cos ω + β²)/(1 − 2α·cos ω + α²) has d/d(cos ω) ∝
//!   (α − β)(1 − αβ) >= 0 (αβ <= α² < 1 for β >= 0, < 0 otherwise): |H| falls
//!   monotonically from H(1) = 1. (The section's output is floored with its residue fed
//!   back, `Profile::loss_section`, so a constant wave passes exactly too.)
//! * **fractional-delay allpass** (normalised lattice y = a·x + c·s, s' = c·x − a·s):
//!   a_q² + c_q² <= 2^(2F) with F = `LOSS_FRAC`, c_q > 0, and |a_q| <= 2^(F−1). The first
//!   makes the matrix M = [[a, c], [c, −a]] (symmetric, M² = (a² + c²)·I) of norm
//!   sqrt(a² + c²) <= 1, so the exact outputs satisfy y² + s'² <= x² + s²; each output is
//!   then truncated toward zero and saturated, which only lowers its magnitude, so
//!   y_q² + s'_q² <= x² + s²: outgoing plus stored energy never exceeds incoming plus
//!   stored. With x = 0, |s'_q| = |trunc(a·s)| < |s| for s ≠ 0 (|a| < 1): the state alone
//!   decays to zero. The bound on |a| keeps the pole −a well inside the unit circle (the
//!   compiler uses |a| <= 1/3, fractions d in [0.5, 1.5)).

use crate::network::MAX_LOSS_SECTIONS;
use crate::profile::{reciprocal, Profile};
use crate::solver::{JunctionRt, LossRt, Mode};

/// A node record with the sum and smallest of its port weights (without the source).
pub(crate) fn node_ok<P: Profile>(rt: &JunctionRt, port_sum: u64, port_min: u64) -> bool {
    let JunctionRt::Node { count, g_src, g_ports, recip, shift, total, mode, short, broken, .. } = *rt else {
        return false;
    };
    let Some(with_src) = port_sum.checked_add(u64::from(g_src)) else {
        return false;
    };
    let coefficients = port_min >= 1
        && with_src == g_ports
        && with_src <= 1u64 << P::WEIGHT_BITS
        && total >= with_src
        && total <= P::TOTAL_MAX;
    // Linked nodes (series branch ends) divide exactly in both profiles (`branch_node`), so
    // their reciprocal is rounded down, not strictly below.
    let division =
        short || reciprocal(total, P::RECIP_BITS, !P::EXACT_NODE && mode != Mode::Linked) == Some((recip, shift));
    if mode == Mode::Linked {
        // One end of a series branch: total = 2G with G >= Σ g_k + g_src (its shunt >= 0),
        // 2G within the budget (the numerator with the link port stays exact).
        let linked = total % 2 == 0 && total / 2 >= with_src && total <= 1u64 << P::WEIGHT_BITS;
        return port_min >= 1 && with_src == g_ports && linked && !short && !broken && division;
    }
    let mode_ok = mode == super::mode_of(short, broken, super::lone_open(count, g_src, g_ports, total, short));
    coefficients && division && mode_ok
}

/// A series branch record with the records of its two nodes (see the module docs).
pub(crate) fn branch_ok<P: Profile>(rt: &JunctionRt, node_a: &JunctionRt, node_b: &JunctionRt) -> bool {
    let JunctionRt::Branch { a, b, na, nb, nl, n, recip, shift, .. } = *rt else {
        return false;
    };
    let link = |r: &JunctionRt| match *r {
        JunctionRt::Node { mode: Mode::Linked, total, .. } => Some(u128::from(total / 2)),
        _ => None,
    };
    let (Some(ga), Some(gb)) = (link(node_a), link(node_b)) else {
        return false;
    };
    let half = 1u128 << P::WEIGHT_BITS.saturating_sub(1);
    let (na, nb, nl, n) = (u128::from(na), u128::from(nb), u128::from(nl), u128::from(n));
    // Every operand < 2^64: products and sums exact in u128.
    a != b
        && na >= 1
        && nb >= 1
        && na.saturating_mul(ga) == nb.saturating_mul(gb)
        && na <= half
        && nb <= half
        && nl <= half
        && n.saturating_sub(na.saturating_add(nb).saturating_add(nl)) <= half
        && n >= na.saturating_add(nb).saturating_add(nl)
        && n <= 1u128 << P::WEIGHT_BITS
        && u64::try_from(n).ok().and_then(|n| reciprocal(n, P::RECIP_BITS, false)) == Some((recip, shift))
}

/// A series, series-inductor or rig record.
pub(crate) fn two_port_ok<P: Profile>(rt: &JunctionRt) -> bool {
    match *rt {
        JunctionRt::Series { c, .. } => u64::from(c) <= 1u64 << P::SERIES_FRAC,
        JunctionRt::SeriesL { c, rho, .. } => u64::from(c).saturating_add(u64::from(rho)) <= 1u64 << P::CHOKE_FRAC,
        JunctionRt::Rig { .. } => true,
        JunctionRt::Node { .. } | JunctionRt::Unused | JunctionRt::Branch { .. } => false,
    }
}

/// A reactive element's adaptor coefficient.
pub(crate) fn element_ok<P: Profile>(mu: u32) -> bool {
    u64::from(mu) <= 1u64 << P::SERIES_FRAC
}

/// Every section of one loss filter.
pub(crate) fn loss_ok<P: Profile>(l: &LossRt<P::Wave>) -> bool {
    let one = 1i64 << P::LOSS_FRAC;
    let n = (l.sections as usize).min(MAX_LOSS_SECTIONS);
    l.sections as usize == n
        && (n >= 1 || l.ap)
        && (!l.ap || allpass_ok::<P>(l.ap_a, l.ap_c))
        && l.g.iter().zip(l.gb.iter()).zip(l.a.iter()).take(n).all(|((g, gb), a)| {
            let (g, gb, a) = (i64::from(*g), i64::from(*gb), i64::from(*a));
            // Every operand is a u32 or i32, so each difference is < 2^33: exact in i64
            // (saturating only to satisfy the lint). DC-exact, zero at or below the pole
            // (module docs); g <= one follows from the two.
            let dc_exact = g.saturating_sub(gb) == one.saturating_sub(a);
            a > 0 && a < one && g > 0 && gb >= g.saturating_neg() && gb <= a && dc_exact
        })
}

/// A fractional-delay allpass's integer lattice coefficients (see the module docs).
pub(crate) fn allpass_ok<P: Profile>(a: i32, c: u32) -> bool {
    let (a, c) = (i128::from(a), i128::from(c));
    let one = 1i128 << P::LOSS_FRAC;
    // |a|, c < 2^32: squares < 2^64, exact in i128 (saturating only for the lint).
    c > 0
        && a.saturating_mul(2).abs() <= one
        && a.saturating_mul(a).saturating_add(c.saturating_mul(c)) <= one.saturating_mul(one)
}

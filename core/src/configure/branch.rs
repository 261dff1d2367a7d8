//! Series branches between nodes ([`Junction::Branch`]): which nodes they link, the node
//! weights with the link port, and the series adaptor's integer port numbers.
//!
//! A linked node with weight G (its ports, source and shunt) gets a link port of weight G
//! (reflection-free), so its record divides by total = 2G. The series adaptor's ports are
//! the two links (resistances 1/G_a, 1/G_b in the weight unit), the inductor (R_L) and the
//! resistor (R). Its coefficients 2·n_k/n need only the ratios of the port resistances, so
//! with K = G_a·G_b/2^c: n_a = G_b, n_b = G_a exactly (the links' ratio must be exact: a
//! port of the adaptor whose resistance differed from the node's link weight would not
//! conserve power across the connection), n_l = round(R_L·K) (any n_l >= 0 is a lossless
//! inductor of port resistance n_l/K: L changes by under half a unit of n_l), and
//! n_r = floor(R·K) (a resistor rounded down stays a resistor). All in u128: R < 2^32 and
//! G_a·G_b < 2^60.

use super::shape::Shape;
use super::weights::{node_sum, weight};
use crate::error::BuildError;
use crate::network::{Junction, Network, Shunt};
use crate::profile::{reciprocal, Profile};
use crate::solver::{JunctionRt, Mode};

/// The branch junction that links node `j`, if any.
pub(crate) fn branch_of(net: &Network<'_>, j: usize) -> Option<usize> {
    net.junctions.iter().position(|x| match *x {
        Junction::Branch { a, b, .. } => a as usize == j || b as usize == j,
        _ => false,
    })
}

/// The integer numbers of branch junction `j` at shift k: (G_a, G_b, n_a, n_b, n_l, n), or
/// `None` when it is not a branch or a number leaves the profile's budget: 2·G <= 2^WB at
/// each node, n_a, n_b, n_l, n_r <= 2^(WB − 1) and n <= 2^WB (the ranges
/// `Profile::branch_series` and `Profile::branch_node` argue with).
pub(crate) fn numbers<P: Profile>(
    net: &Network<'_>,
    shape: &Shape,
    j: usize,
    k: u32,
) -> Option<(u64, u64, u32, u32, u32, u32)> {
    let Some(Junction::Branch { a, b, port_milliohm, milliohm }) = net.junctions.get(j).copied() else {
        return None;
    };
    let half = 1u128 << P::WEIGHT_BITS.saturating_sub(1);
    let ga = linked_weight(net, shape, a as usize, k);
    let gb = linked_weight(net, shape, b as usize, k);
    if ga == 0 || gb == 0 || ga > half || gb > half {
        return None;
    }
    let c = super::TOP.saturating_sub(k);
    // R < 2^32, G_a·G_b <= 2^(2·WB − 2) <= 2^58: the products fit u128 exactly.
    let kk = ga.checked_mul(gb)?;
    let nl = (u128::from(port_milliohm).checked_mul(kk)?.checked_add(1u128 << c.checked_sub(1)?)?) >> c;
    let nr = u128::from(milliohm).checked_mul(kk)? >> c;
    let n = ga.checked_add(gb)?.checked_add(nl)?.checked_add(nr)?;
    if nl > half || nr > half || n > 1u128 << P::WEIGHT_BITS {
        return None;
    }
    Some((
        u64::try_from(ga).ok()?,
        u64::try_from(gb).ok()?,
        u32::try_from(gb).ok()?,
        u32::try_from(ga).ok()?,
        u32::try_from(nl).ok()?,
        u32::try_from(n).ok()?,
    ))
}

/// G of a linked node: Σ of its port weights, its source weight and its shunt weight.
pub(crate) fn linked_weight(net: &Network<'_>, shape: &Shape, j: usize, k: u32) -> u128 {
    let shunt = match net.junctions.get(j) {
        Some(Junction::Node { shunt: Shunt::Resistor { milliohm } }) => u128::from(weight(u64::from(*milliohm), k)),
        _ => 0,
    };
    node_sum(net, shape, j, k).saturating_add(shunt)
}

/// The first branch whose numbers leave the budget at shift k, if any.
pub(crate) fn first_misfit<P: Profile>(net: &Network<'_>, shape: &Shape, k: u32) -> Option<usize> {
    (0..net.junctions.len())
        .filter(|j| matches!(net.junctions.get(*j), Some(Junction::Branch { .. })))
        .find(|j| numbers::<P>(net, shape, *j, k).is_none())
}

/// Make a node record (with its shunt applied) one end of a series branch: its weight G
/// (ports, source, shunt) gets a link port of the same weight, so it divides by 2G.
pub(crate) fn link_node<P: Profile>(rt: &mut JunctionRt) -> Option<()> {
    let JunctionRt::Node { recip, shift, total, mode, .. } = rt else {
        return None;
    };
    let two_g = total.checked_mul(2)?;
    (*recip, *shift) = reciprocal(two_g, P::RECIP_BITS, false)?;
    *total = two_g;
    *mode = Mode::Linked;
    Some(())
}

/// A node record that is one end of a series branch (not reconfigurable: its weight is part
/// of the branch's coefficients).
pub(crate) fn is_linked(rt: &JunctionRt) -> bool {
    matches!(rt, JunctionRt::Node { mode: Mode::Linked, .. })
}

/// The run-time record of node `n` that branch junction `j` links, built as `load` builds
/// it (for `configure::check`, which keeps no records).
pub(crate) fn node_record<P: Profile>(
    net: &Network<'_>,
    shape: &Shape,
    j: usize,
    n: u16,
    k: u32,
) -> Result<JunctionRt, BuildError> {
    let n = n as usize;
    let first = (0..n).map(|jj| super::ports_at(net, jj)).fold(0usize, usize::saturating_add);
    let junc = net.junctions.get(n).copied().ok_or(BuildError::BadBranch { junction: j as u16 })?;
    let (sum, _) = super::port_weights(net, n, k);
    super::junction_record::<P>(net, shape, n, junc, first, super::ports_at(net, n), sum, k)
}

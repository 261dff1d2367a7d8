//! Phase 2 of `load`: the weight unit. Every line gets one integer conductance
//! g = floor(2^c / Z0[mΩ]) shared by both of its ends, element ports g = floor(2^c / (R_p + R_s)),
//! a source g_src = floor(2^c / R_s), with one exponent c for the whole network chosen as large
//! as the profile's per-node budget allows: Σ g + g_src <= 2^WEIGHT_BITS at every scattering
//! node, which keeps the node's double-width accumulator exact (see `Profile::node_scatter`).
//!
//! All sums are formed in `u128` (at most 2^17 ports of at most 2^62 each cannot overflow),
//! so no description can wrap them; a node whose quantized weights leave its range (a weight
//! that vanishes next to much larger ones) is refused, never truncated.

use super::shape::Shape;
use crate::error::BuildError;
use crate::network::Network;
use crate::profile::Profile;

/// Largest exponent of the weight unit: floor(2^62 / Z) fits a u64 for Z >= 1 mΩ.
pub(crate) const TOP: u32 = 62;

/// floor(2^TOP / milliohm) (0, refused earlier anyway, is treated as 1).
pub(crate) fn w_top(milliohm: u64) -> u64 {
    (1u64 << TOP).checked_div(milliohm).unwrap_or(1u64 << TOP)
}

/// An element's port resistance plus its series resistor (< 2^33: exact in u64).
pub(crate) fn element_milliohm(e: &crate::network::Element) -> u64 {
    u64::from(e.port_milliohm).saturating_add(u64::from(e.series_milliohm))
}

/// The weight of resistance `milliohm` at exponent c = TOP − k.
pub(crate) fn weight(milliohm: u64, k: u32) -> u64 {
    w_top(milliohm).checked_shr(k).unwrap_or(0)
}

/// Every port weight of scattering node `j` at shift k, then the source weight (0 if none).
fn node_weights<'a>(net: &'a Network<'_>, shape: &'a Shape, j: usize, k: u32) -> impl Iterator<Item = u64> + 'a {
    let ends = net
        .lines
        .iter()
        .flat_map(move |l| core::iter::repeat_n(weight(u64::from(l.z_milliohm), k), super::shape::ends_of(l, j)));
    let elems =
        net.elements.iter().filter(move |e| e.junction as usize == j).map(move |e| weight(element_milliohm(e), k));
    let src = shape.src.filter(|s| s.0 == j).map(|s| weight(u64::from(s.1), k));
    ends.chain(elems).chain(src)
}

/// Σ g + g_src at node `j`, exact.
pub(crate) fn node_sum(net: &Network<'_>, shape: &Shape, j: usize, k: u32) -> u128 {
    node_weights(net, shape, j, k).map(u128::from).sum()
}

/// Choose the shift k (exponent c = TOP − k) and check every scattering node's weights at it:
/// the sum within the budget and no port or source weight quantized to zero (a port of zero
/// weight would be an open circuit the plant does not have; a source of zero weight would
/// disconnect the drive). Returns k.
pub(crate) fn shift<P: Profile>(net: &Network<'_>, shape: &Shape) -> Result<u32, BuildError> {
    let budget = 1u128 << P::WEIGHT_BITS;
    let nodes = || (0..net.junctions.len()).filter(|j| shape.is_scatter_node(net, *j));
    let mut k = 0u32;
    // A series branch's nodes and port numbers have their own budget (`branch::numbers`).
    let fits = |k: u32| {
        nodes().all(|j| node_sum(net, shape, j, k) <= budget)
            && super::branch::first_misfit::<P>(net, shape, k).is_none()
    };
    while k < TOP && !fits(k) {
        k = k.saturating_add(1);
    }
    if let Some(j) = super::branch::first_misfit::<P>(net, shape, k) {
        return Err(BuildError::CoefficientOutOfRange { junction: j as u16 });
    }
    for j in nodes() {
        let junction = j as u16; // j < 2^16 (shape check)
        if node_sum(net, shape, j, k) > budget || node_weights(net, shape, j, k).any(|g| g == 0) {
            return Err(BuildError::CoefficientOutOfRange { junction });
        }
    }
    Ok(k)
}

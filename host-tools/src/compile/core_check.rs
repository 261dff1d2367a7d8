//! The compiled network through the core's own load checks (shape, weight unit, passivity of
//! every quantized junction), so a plant the core would refuse is refused here with the
//! plant-file location of the junction concerned, before anything is written.

use super::{err, Compiled, ProfileKind};
use crate::plant::{Plant, PlantError, Span};
use tidewire_core::{BuildError, Narrow, Profile, Wide};

/// Run `tidewire_core::configure::check` for the compiled profile.
///
/// The core refuses `LineLoss::zc` until it runs Zc(s) networks, so a network compiled with
/// them (`CompileOptions::zc_networks`) is checked with them set aside: the junctions with
/// the lines' Z_p, the loss filters, but not the networks (their passivity is the
/// compiler's, `zc_enforce.rs`). When the core takes them, check the network as it is.
pub(crate) fn check(c: &Compiled, plant: &Plant, file: &str) -> Result<(), PlantError> {
    let mut net = c.net.clone();
    if net.losses.iter().any(|l| l.zc.is_some()) {
        net.losses.retain(|l| l.sections > 0 || l.allpass.is_some());
        for l in net.losses.iter_mut() {
            l.zc = None;
        }
    }
    let r = match c.profile {
        ProfileKind::Wide => tidewire_core::configure::check::<Wide>(&net.network()),
        ProfileKind::Narrow => tidewire_core::configure::check::<Narrow>(&net.network()),
    };
    r.map(|_| ()).map_err(|e| located(c, plant, file, e))
}

/// Where a core junction comes from: a plant node, or the segment one of its lines belongs to.
fn place(c: &Compiled, plant: &Plant, junction: u16) -> (Span, String) {
    if let Some(n) = c.node_junction.iter().position(|j| *j == junction) {
        if let Some(node) = plant.nodes.get(n) {
            return (node.span, format!("node.{}", node.name));
        }
    }
    let seg = c.segment_pieces.iter().position(|pieces| {
        pieces.iter().any(|p| c.net.lines.get(p.line as usize).is_some_and(|l| l.a == junction || l.b == junction))
    });
    match seg.and_then(|s| plant.segments.get(s)) {
        Some(s) => (s.span, format!("segment[{}]", s.name)),
        None => (Span::default(), "plant".to_string()),
    }
}

fn located(c: &Compiled, plant: &Plant, file: &str, e: BuildError) -> PlantError {
    let junction = match e {
        BuildError::CoefficientOutOfRange { junction } | BuildError::NotPassive { junction } => Some(junction),
        _ => None,
    };
    let Some(j) = junction else {
        return err(
            file,
            Span::default(),
            "plant",
            format!("the core refuses the compiled network: {e}"),
            "this is a compiler fault for a plant file that parsed: please report it with the plant file",
        );
    };
    let (span, field) = place(c, plant, j);
    let bits = match c.profile {
        ProfileKind::Wide => <Wide as Profile>::WEIGHT_BITS,
        ProfileKind::Narrow => <Narrow as Profile>::WEIGHT_BITS,
    };
    err(
        file,
        span,
        field,
        format!(
            "the impedances meeting here span too wide a range for the {} profile's integer weights \
             (one conductance quantizes to zero next to the others, or the node would not be passive): {e}",
            c.profile.name()
        ),
        format!(
            "bring the impedances at this node closer together: this profile resolves a conductance down to \
             about 1/{} of the node's total (source and load resistances, cable impedances)",
            1u64 << bits
        ),
    )
}

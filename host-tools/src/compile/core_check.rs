//! The compiled network through the core's own load checks (shape, weight unit, passivity of
//! every quantized junction), so a plant the core would refuse is refused here with the
//! plant-file location of the junction concerned, before anything is written.

use super::{err, Compiled, ProfileKind};
use crate::plant::{Plant, PlantError, Span};
use tidewire_core::{BuildError, Narrow, Profile, Wide};

/// Run `tidewire_core::configure::check` for the compiled profile, on the network as it is
/// emitted (Zc(s) networks included: their passivity margin is the loader's to check).
pub(crate) fn check(c: &Compiled, plant: &Plant, file: &str) -> Result<(), PlantError> {
    let r = match c.profile {
        ProfileKind::Wide => tidewire_core::configure::check::<Wide>(&c.net.network()),
        ProfileKind::Narrow => tidewire_core::configure::check::<Narrow>(&c.net.network()),
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
    let zc_line = match e {
        BuildError::ZcNotPassive { line } | BuildError::ZcOnRigLine { line } => Some(line),
        BuildError::BadZc { loss } => c.net.losses.get(loss as usize).map(|l| l.line),
        _ => None,
    };
    if let Some(line) = zc_line {
        // The compiler gates every Zc(s) network on the loader's own checks
        // (`zc_enforce::core_accepts`), so this is a compiler fault: located at the segment.
        let at = c.net.lines.get(line as usize).map(|l| place(c, plant, l.a));
        let (span, field) = at.unwrap_or((Span::default(), "plant".to_string()));
        return err(
            file,
            span,
            field,
            format!("the core refuses this cable run's Zc(s) network: {e}"),
            "this is a compiler fault for a plant file that parsed: please report it with the plant file",
        );
    }
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

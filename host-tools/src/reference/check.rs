//! Checks on a [`Plant`] before any physics: every index points at an item and every value
//! the line and load models use is finite and of the right sign.

use super::ReferenceError;
use crate::plant::{Drive, Load, Plant, ProbeKind, Span, Waveform};

/// The drive reduced to what the circuit sees: an EMF behind a resistance at a node.
///
/// A rig port is modelled by its device under test: `stimulus` EMF behind `dut_resistance`
/// at the rig node. The rig's reference resistor is part of the emulator's hardware, not of
/// the physical circuit the emulator stands in for, so it does not appear here.
pub(crate) struct Thevenin<'a> {
    pub node: usize,
    pub emf: &'a Waveform,
    pub resistance: f64,
}

/// The drive of `plant` as a Thevenin source.
pub(crate) fn thevenin(plant: &Plant) -> Thevenin<'_> {
    match &plant.drive {
        Drive::Source { node, emf, rs } => Thevenin { node: *node, emf, resistance: *rs },
        Drive::Rig { node, stimulus, dut_resistance, .. } => {
            Thevenin { node: *node, emf: stimulus, resistance: *dut_resistance }
        }
    }
}

fn positive(value: f64) -> bool {
    value.is_finite() && value > 0.0
}

fn non_negative(value: f64) -> bool {
    value.is_finite() && value >= 0.0
}

/// Check every item the references use; the first problem found is returned.
pub(crate) fn check_plant(plant: &Plant) -> Result<(), ReferenceError> {
    let bad = |item: String, span: Span, field: &'static str, message: String| {
        Err(ReferenceError::invalid(item, span, field, message))
    };
    for cable in &plant.cables {
        let item = format!("cable '{}'", cable.name);
        let none = Span::default();
        if !positive(cable.z0) {
            return bad(item, none, "z0", format!("must be a positive number of ohms, got {}", cable.z0));
        }
        if !positive(cable.velocity) {
            return bad(item, none, "velocity", format!("must be a positive speed, got {}", cable.velocity));
        }
        if !non_negative(cable.r_per_m) {
            return bad(item, none, "r_per_m", format!("must be >= 0 ohm/m, got {}", cable.r_per_m));
        }
        if let Some(loss) = cable.loss {
            if !non_negative(loss.k_c) || !non_negative(loss.k_d) {
                return bad(item, none, "loss", format!("k_c and k_d must be >= 0, got {} and {}", loss.k_c, loss.k_d));
            }
        }
    }
    let nodes = plant.nodes.len();
    for seg in &plant.segments {
        let item = format!("segment '{}'", seg.name);
        if seg.from >= nodes || seg.to >= nodes {
            return bad(
                item,
                seg.span,
                "from/to",
                format!("node {} or {} does not exist ({} nodes)", seg.from, seg.to, nodes),
            );
        }
        if seg.cable >= plant.cables.len() {
            return bad(item, seg.span, "cable", format!("cable {} does not exist", seg.cable));
        }
        if !positive(seg.length) {
            return bad(item, seg.span, "length", format!("must be > 0 m, got {}", seg.length));
        }
    }
    for node in &plant.nodes {
        let item = format!("node '{}'", node.name);
        let (r, c) = match node.load {
            Load::Open | Load::Short => (1.0, 1.0),
            Load::Resistor(r) => (r, 1.0),
            Load::Capacitor(c) => (1.0, c),
            Load::SeriesRc { r, c } | Load::ParallelRc { r, c } => (r, c),
        };
        if !positive(r) {
            return bad(item, node.span, "load", format!("resistance must be > 0 ohm, got {r}"));
        }
        if !positive(c) {
            return bad(item, node.span, "load", format!("capacitance must be > 0 F, got {c}"));
        }
    }
    let drive = thevenin(plant);
    if drive.node >= nodes {
        return bad(
            "drive".into(),
            Span::default(),
            "node",
            format!("node {} does not exist ({} nodes)", drive.node, nodes),
        );
    }
    if !positive(drive.resistance) {
        return bad(
            "drive".into(),
            Span::default(),
            "resistance",
            format!("the source resistance must be > 0 ohm, got {}", drive.resistance),
        );
    }
    for probe in &plant.probes {
        let item = format!("probe '{}'", probe.name);
        match probe.kind {
            ProbeKind::Voltage(n) if n >= nodes => {
                return bad(item, Span::default(), "node", format!("node {n} does not exist"));
            }
            ProbeKind::Current(s, _) if s >= plant.segments.len() => {
                return bad(item, Span::default(), "segment", format!("segment {s} does not exist"));
            }
            _ => {}
        }
    }
    Ok(())
}

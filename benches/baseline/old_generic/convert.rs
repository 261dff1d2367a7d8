//! Today's `tidewire_core::Network` in the description of the frozen baseline (`mod.rs`).
//!
//! The old core knew lines, nodes with open, short and resistive shunts, series resistors
//! between lines of equal impedance, capacitor and inductor elements (with their series
//! resistor), loss filters of 1 to 6 first-order sections, a test source and a rig port with
//! latency, and voltage and current probes. Everything that came later has no counterpart
//! there and is refused, never approximated: a series inductor (choke), a series branch
//! between two nodes, a fractional-delay allpass, a Zc(s) network, a loss entry without
//! sections, and any variant today's core adds after this file was written.
//!
//! The loss coefficients are carried over as given (poles and zeros in Q30); the old `load`
//! quantizes them its own way, as it did then.

use super::network as old;
use tidewire_core as now;

/// A network in the old description, owning its tables ([`Self::view`] borrows them).
#[derive(Debug, Clone)]
pub struct OldNetwork {
    lines: Vec<old::Line>,
    junctions: Vec<old::Junction>,
    elements: Vec<old::Element>,
    losses: Vec<old::LineLoss>,
    drive: old::Drive,
    probes: Vec<old::Probe>,
    io_shift: u8,
    volts_per_code: f32,
}

impl OldNetwork {
    /// The borrowed view the old `Solver::load` takes.
    pub fn view(&self) -> old::Network<'_> {
        old::Network {
            lines: &self.lines,
            junctions: &self.junctions,
            elements: &self.elements,
            losses: &self.losses,
            drive: self.drive,
            probes: &self.probes,
            io_shift: self.io_shift,
            volts_per_code: self.volts_per_code,
        }
    }
}

/// What the old core cannot represent, and where it is in today's network.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Unsupported {
    /// Junction `index` is a kind the old core did not have (choke, series branch, newer).
    Junction { index: usize },
    /// Element `index` is of a kind the old core did not have.
    Element { index: usize },
    /// Loss entry `index` has an allpass, a Zc(s) network or no loss section.
    Loss { index: usize },
    /// A shunt kind the old core did not have, at junction `index`.
    Shunt { index: usize },
    /// A drive kind the old core did not have.
    Drive,
    /// Probe `index` is of a kind the old core did not have.
    Probe { index: usize },
}

fn shunt(s: now::Shunt, index: usize) -> Result<old::Shunt, Unsupported> {
    Ok(match s {
        now::Shunt::Open => old::Shunt::Open,
        now::Shunt::Short => old::Shunt::Short,
        now::Shunt::Resistor { milliohm } => old::Shunt::Resistor { milliohm },
        _ => return Err(Unsupported::Shunt { index }),
    })
}

fn side(s: now::Side) -> old::Side {
    match s {
        now::Side::A => old::Side::A,
        now::Side::B => old::Side::B,
    }
}

/// `net` in the old description, or what in it the old core cannot represent. Line
/// impedances, delays and indices are copied unchanged; what the old `load` refuses (for
/// example a series resistor between lines of different impedance) it still refuses.
pub fn from_core(net: &now::Network<'_>) -> Result<OldNetwork, Unsupported> {
    let lines =
        net.lines.iter().map(|l| old::Line { z_milliohm: l.z_milliohm, delay: l.delay, a: l.a, b: l.b }).collect();
    let junctions = net
        .junctions
        .iter()
        .enumerate()
        .map(|(index, j)| match *j {
            now::Junction::Node { shunt: s } => Ok(old::Junction::Node { shunt: shunt(s, index)? }),
            now::Junction::Series { milliohm } => Ok(old::Junction::Series { milliohm }),
            _ => Err(Unsupported::Junction { index }),
        })
        .collect::<Result<_, _>>()?;
    let elements = net
        .elements
        .iter()
        .enumerate()
        .map(|(index, e)| {
            let kind = match e.kind {
                now::ElementKind::Capacitor => old::ElementKind::Capacitor,
                now::ElementKind::Inductor => old::ElementKind::Inductor,
                _ => return Err(Unsupported::Element { index }),
            };
            Ok(old::Element {
                junction: e.junction,
                kind,
                port_milliohm: e.port_milliohm,
                series_milliohm: e.series_milliohm,
            })
        })
        .collect::<Result<_, _>>()?;
    let losses = net
        .losses
        .iter()
        .enumerate()
        .map(|(index, l)| {
            if l.allpass.is_some() || l.zc.is_some() || l.sections == 0 {
                return Err(Unsupported::Loss { index });
            }
            Ok(old::LineLoss { line: l.line, sections: l.sections, poles: l.poles, zeros: l.zeros })
        })
        .collect::<Result<_, _>>()?;
    let drive = match net.drive {
        now::Drive::None => old::Drive::None,
        now::Drive::Source { junction, milliohm } => old::Drive::Source { junction, milliohm },
        now::Drive::Rig { junction, latency } => old::Drive::Rig { junction, latency },
        _ => return Err(Unsupported::Drive),
    };
    let probes = net
        .probes
        .iter()
        .enumerate()
        .map(|(index, p)| {
            let kind = match p.kind {
                now::ProbeKind::Voltage => old::ProbeKind::Voltage,
                now::ProbeKind::Current => old::ProbeKind::Current,
                _ => return Err(Unsupported::Probe { index }),
            };
            Ok(old::Probe { kind, line: p.line, side: side(p.side) })
        })
        .collect::<Result<_, _>>()?;
    Ok(OldNetwork {
        lines,
        junctions,
        elements,
        losses,
        drive,
        probes,
        io_shift: net.io_shift,
        volts_per_code: net.volts_per_code,
    })
}

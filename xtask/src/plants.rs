//! The test plants the firmware runs, built from tidewire-core types directly.
//!
//! A [`TestPlant`] owns its tables, so a plant from any source can join the list: one built
//! here, or (later) one from the host compiler through [`TestPlant::from_network`].

use tidewire_core::{Drive, Element, Junction, Line, LineLoss, Network, Probe, ProbeKind, Shunt, Side, MAX_PROBES};

/// A network with owned tables.
#[derive(Debug, Clone)]
pub struct TestPlant {
    pub name: String,
    pub lines: Vec<Line>,
    pub junctions: Vec<Junction>,
    pub elements: Vec<Element>,
    pub losses: Vec<LineLoss>,
    pub drive: Drive,
    pub probes: Vec<Probe>,
    pub io_shift: u8,
    pub volts_per_code: f32,
}

impl TestPlant {
    /// The borrowed view the core and the writers take.
    pub fn network(&self) -> Network<'_> {
        Network {
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

    /// Copy any network (for example a host-compiled plant) into a test plant.
    #[allow(dead_code)] // the hook for `tidewire_host::compile` output, not yet used
    pub fn from_network(name: &str, net: &Network<'_>) -> Self {
        TestPlant {
            name: name.into(),
            lines: net.lines.to_vec(),
            junctions: net.junctions.to_vec(),
            elements: net.elements.to_vec(),
            losses: net.losses.to_vec(),
            drive: net.drive,
            probes: net.probes.to_vec(),
            io_shift: net.io_shift,
            volts_per_code: net.volts_per_code,
        }
    }

    /// Solver ports: line ends and reactive one-ports.
    pub fn ports(&self) -> usize {
        2 * self.lines.len() + self.elements.len()
    }
}

/// Trunk half-segment delays, drop delays (samples) and drop impedances (ohms) of the bus.
const TRUNK_DELAYS: [u32; 10] = [12, 45, 30, 88, 17, 64, 25, 140, 40, 10];
const DROP_DELAYS: [u32; 5] = [23, 61, 150, 37, 290];
const DROP_OHMS: [u32; 5] = [75, 120, 50, 90, 150];
/// Delay of the last trunk line into the far-end termination.
const END_DELAY: u32 = 37;

/// A field bus: a 100 Ω trunk from a 50 Ω source, `taps` taps, a 300 Ω far end.
///
/// Each tap adds 3 lines (6 ports): two trunk halves joined by a 1.5 Ω series junction (the
/// lumped conductor resistance of that span), then a tap node with a drop line whose far end
/// is, in turn, matched, open, 10 Ω, shorted, or twice its impedance. The last trunk line
/// adds 2 ports, so `taps` = 0, 1, 5 give 2, 8 and 32 ports.
pub fn bus(name: &str, taps: usize, io_shift: u8) -> TestPlant {
    const MOHM: u32 = 1000;
    let trunk_z = 100 * MOHM;
    let mut lines = Vec::new();
    let mut junctions = vec![Junction::Node { shunt: Shunt::Open }];
    let mut probes = vec![Probe { kind: ProbeKind::Current, line: 0, side: Side::A }];
    let mut at: u16 = 0; // the trunk node the next segment starts from
    fn add_junction(junctions: &mut Vec<Junction>, j: Junction) -> u16 {
        junctions.push(j);
        (junctions.len() - 1) as u16
    }
    for t in 0..taps {
        let d = |k: usize| TRUNK_DELAYS[k % TRUNK_DELAYS.len()];
        let series = add_junction(&mut junctions, Junction::Series { milliohm: 1500 });
        lines.push(Line { z_milliohm: trunk_z, delay: d(2 * t), a: at, b: series });
        let tap = add_junction(&mut junctions, Junction::Node { shunt: Shunt::Open });
        lines.push(Line { z_milliohm: trunk_z, delay: d(2 * t + 1), a: series, b: tap });
        let z = DROP_OHMS[t % 5] * MOHM;
        let end = match t % 5 {
            0 => Shunt::Resistor { milliohm: z },
            1 => Shunt::Open,
            2 => Shunt::Resistor { milliohm: 10 * MOHM },
            3 => Shunt::Short,
            _ => Shunt::Resistor { milliohm: 2 * z },
        };
        let drop_end = add_junction(&mut junctions, Junction::Node { shunt: end });
        lines.push(Line { z_milliohm: z, delay: DROP_DELAYS[t % 5], a: tap, b: drop_end });
        if probes.len() < MAX_PROBES - 1 {
            probes.push(Probe { kind: ProbeKind::Voltage, line: (lines.len() - 1) as u16, side: Side::B });
        }
        at = tap;
    }
    let far = add_junction(&mut junctions, Junction::Node { shunt: Shunt::Resistor { milliohm: 300 * MOHM } });
    lines.push(Line { z_milliohm: trunk_z, delay: END_DELAY, a: at, b: far });
    probes.push(Probe { kind: ProbeKind::Voltage, line: (lines.len() - 1) as u16, side: Side::B });
    TestPlant {
        name: name.into(),
        lines,
        junctions,
        elements: Vec::new(),
        losses: Vec::new(),
        drive: Drive::Source { junction: 0, milliohm: 50 * MOHM },
        probes,
        io_shift,
        volts_per_code: 1.0 / 4096.0,
    }
}

/// The profiles a plant is generated for, with the `io_shift` each one uses.
pub const PROFILES: [(&str, u8); 2] = [("wide", 4), ("narrow", 0)];

/// Every test plant for one profile: module name (`p<ports>_<profile>`) and plant.
pub fn test_plants(profile: &str, io_shift: u8) -> Vec<TestPlant> {
    // A host-compiled plant goes here as well, e.g.
    // `TestPlant::from_network(&format!("c_{profile}"), &compiled.network())`.
    [0usize, 1, 5]
        .iter()
        .map(|&taps| {
            let ports = 2 + 6 * taps;
            bus(&format!("p{ports}_{profile}"), taps, io_shift)
        })
        .collect()
}

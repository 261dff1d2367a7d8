//! The test plants the firmware runs, built from tidewire-core types directly.
//!
//! A [`TestPlant`] owns its tables, so a plant from any source can join the list: one built
//! here, or (later) one from the host compiler through [`TestPlant::from_network`].

use tidewire_core::{
    Allpass, Drive, Element, ElementKind, Junction, Line, LineLoss, Network, Probe, ProbeKind, Shunt, Side, ZcNetwork,
    MAX_LOSS_SECTIONS, MAX_PROBES,
};

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

/// A field bus as real plants are built: a 100 Ω trunk from a **rig port** (latency 2
/// samples) into a 300 Ω far end, `taps` taps, and what real plants use on the way.
///
/// Each tap adds two trunk halves joined by a series junction, a tap node and a drop line
/// whose far end is, in turn: matched; a receiver's input capacitance (a bilinear capacitor
/// element, one more port); 10 Ω; shorted; an AC termination R + C (an element with a series
/// resistor, one more port). The series junction is the lumped conductor resistance (1.5 Ω),
/// except at every third tap a choke (a series inductor of port resistance 200 Ω with its
/// 1.5 Ω winding resistance). The first trunk line and every drop line carry a loss filter
/// (two first-order sections). Ports: line ends and elements ([`TestPlant::ports`]), so
/// `taps` = 0, 1, 5 and 13 give the 2-, 8-, 34- and 85-port plants of [`test_plants`].
pub fn bus(name: &str, taps: usize, io_shift: u8) -> TestPlant {
    const MOHM: u32 = 1000;
    let trunk_z = 100 * MOHM;
    let mut lines = Vec::new();
    let mut junctions = vec![Junction::Node { shunt: Shunt::Open }];
    let mut probes = vec![Probe { kind: ProbeKind::Current, line: 0, side: Side::A }];
    let mut elements = Vec::new();
    let mut losses = vec![loss(0)];
    let mut at: u16 = 0; // the trunk node the next segment starts from
    fn add_junction(junctions: &mut Vec<Junction>, j: Junction) -> u16 {
        junctions.push(j);
        (junctions.len() - 1) as u16
    }
    for t in 0..taps {
        let d = |k: usize| TRUNK_DELAYS[k % TRUNK_DELAYS.len()];
        let joint = if t % 3 == 2 {
            Junction::SeriesInductor { port_milliohm: 200 * MOHM, milliohm: 1500 }
        } else {
            Junction::Series { milliohm: 1500 }
        };
        let series = add_junction(&mut junctions, joint);
        lines.push(Line { z_milliohm: trunk_z, delay: d(2 * t), a: at, b: series });
        let tap = add_junction(&mut junctions, Junction::Node { shunt: Shunt::Open });
        lines.push(Line { z_milliohm: trunk_z, delay: d(2 * t + 1), a: series, b: tap });
        let z = DROP_OHMS[t % 5] * MOHM;
        let end = match t % 5 {
            0 => Shunt::Resistor { milliohm: z },
            2 => Shunt::Resistor { milliohm: 10 * MOHM },
            3 => Shunt::Short,
            _ => Shunt::Open,
        };
        let drop_end = add_junction(&mut junctions, Junction::Node { shunt: end });
        match t % 5 {
            // Receiver input capacitance: port resistance T/(2C) = 250 Ω.
            1 => elements.push(Element {
                junction: drop_end,
                kind: ElementKind::Capacitor,
                port_milliohm: 250 * MOHM,
                series_milliohm: 0,
            }),
            // AC termination: the drop's impedance in series with a capacitor of port 50 Ω.
            4 => elements.push(Element {
                junction: drop_end,
                kind: ElementKind::Capacitor,
                port_milliohm: 50 * MOHM,
                series_milliohm: z,
            }),
            _ => {}
        }
        lines.push(Line { z_milliohm: z, delay: DROP_DELAYS[t % 5], a: tap, b: drop_end });
        losses.push(loss((lines.len() - 1) as u16));
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
        elements,
        losses,
        drive: Drive::Rig { junction: 0, latency: 2 },
        probes,
        io_shift,
        volts_per_code: 1.0 / 4096.0,
    }
}

/// A two-section loss filter for `line` (poles and zeros in Q30: a gentle high-frequency
/// roll-off of the kind the compiler fits to a cable's skin-effect loss).
fn loss(line: u16) -> LineLoss {
    let q30 = |x: f64| (x * (1u64 << 30) as f64) as i64;
    let mut poles = [0u32; MAX_LOSS_SECTIONS];
    let mut zeros = [0i32; MAX_LOSS_SECTIONS];
    poles[0] = q30(0.60) as u32;
    zeros[0] = q30(0.55) as i32;
    poles[1] = q30(0.90) as u32;
    zeros[1] = q30(0.88) as i32;
    LineLoss { line, sections: 2, poles, zeros, allpass: None, zc: None }
}

/// The same plant with a fractional delay on every line (the first-order allpass lattice of
/// `LineLoss::allpass` on both ends, after the loss sections where a line has them), so
/// the firmware's no-panic link check and instruction counts cover it: the difference to
/// the plant without fractions is the cost of its fractional line ends. Fractions d from
/// 0.55 to 1.45 (a = (1 − d)/(1 + d), c = sqrt(1 − a²), Q30, truncated toward zero).
pub fn with_fractions(mut p: TestPlant) -> TestPlant {
    for line in 0..p.lines.len() as u16 {
        let d = 0.55 + 0.9 * (line as f64 * 0.37).fract();
        let a = (1.0 - d) / (1.0 + d);
        let q30 = (1u64 << 30) as f64;
        let mut c = ((1.0 - a * a).sqrt() * q30).floor() as u32;
        let a = (a * q30).trunc() as i32;
        while i128::from(a).pow(2) + i128::from(c).pow(2) > 1i128 << 60 {
            c -= 1;
        }
        let ap = Some(Allpass { a, c });
        match p.losses.iter_mut().find(|l| l.line == line) {
            Some(l) => l.allpass = ap,
            None => p.losses.push(LineLoss {
                line,
                sections: 0,
                poles: [0; MAX_LOSS_SECTIONS],
                zeros: [0; MAX_LOSS_SECTIONS],
                allpass: ap,
                zc: None,
            }),
        }
    }
    p
}

/// The same plant with a series branch (R + L) between its tap node and its far-end node
/// (`Junction::Branch`: port resistance 150 Ω, 2 Ω in series), so the firmware's no-panic
/// link check and instruction counts cover the branch pass: the difference to the plant
/// without it is the cost of one branch (its two nodes scatter through it).
pub fn with_branch(mut p: TestPlant) -> TestPlant {
    const MOHM: u32 = 1000;
    let far = (p.junctions.len() - 1) as u16;
    // The tap of a one-tap bus: the node after the first series junction.
    let tap = 2;
    p.junctions.push(Junction::Branch { a: tap, b: far, port_milliohm: 150 * MOHM, milliohm: 2 * MOHM });
    p
}

/// The same plant with a Zc(s) network ([`ZcNetwork`], node-wave form) at both ends of every
/// lossy line except the rig port's (the core does not run one there), so the firmware's
/// no-panic link check and instruction counts cover the Zc pre- and post-steps: the
/// difference to the plant without it is the cost of its Zc line ends. Two sections
/// (k = 1/2 and 4/5, ρ = 1/100 and 1/200, Q30): small enough that the two-section loss
/// filter of [`loss`] pays for their phase, so the load-time passivity margin is >= 0.
pub fn with_zc(mut p: TestPlant) -> TestPlant {
    let q30 = |x: f64| (x * (1u64 << 30) as f64) as u32;
    let rig_line = match p.drive {
        Drive::Rig { junction, .. } => p.lines.iter().position(|l| l.a == junction || l.b == junction),
        _ => None,
    };
    for l in p.losses.iter_mut().filter(|l| l.sections > 0 && Some(l.line as usize) != rig_line) {
        l.zc = Some(ZcNetwork { sections: 2, k: [q30(0.5), q30(0.8), 0, 0], rho: [q30(0.01), q30(0.005), 0, 0] });
    }
    p
}

/// The profiles a plant is generated for, with the `io_shift` each one uses.
pub const PROFILES: [(&str, u8); 2] = [("wide", 4), ("narrow", 0)];

/// Every test plant for one profile: module name (`p<ports>_<profile>`) and plant.
pub fn test_plants(profile: &str, io_shift: u8) -> Vec<TestPlant> {
    // A host-compiled plant goes here as well, e.g.
    // `TestPlant::from_network(&format!("c_{profile}"), &compiled.network())`.
    // 2, 8, 34 and 85 ports (which of them the M0 runs: `gen::fits_m0`).
    // Then the 8-port plant with a fraction on every line (`p8f_<profile>`, 8 fractional
    // line ends), and with a series branch (`p8b_<profile>`).
    let mut plants: Vec<TestPlant> = [0usize, 1, 5, 13]
        .iter()
        .map(|&taps| {
            let mut p = bus("", taps, io_shift);
            p.name = format!("p{}_{profile}", p.ports());
            p
        })
        .collect();
    let mut f = with_fractions(bus("", 1, io_shift));
    f.name = format!("p{}f_{profile}", f.ports());
    plants.push(f);
    // And the 8-port plant with a series branch between two of its nodes (`p8b_<profile>`).
    let mut b = with_branch(bus("", 1, io_shift));
    b.name = format!("p{}b_{profile}", b.ports());
    plants.push(b);
    // And the 8-port plant with a Zc(s) network on its lossy drop line (`p8z_<profile>`, 2
    // Zc line ends).
    let mut z = with_zc(bus("", 1, io_shift));
    z.name = format!("p{}z_{profile}", z.ports());
    plants.push(z);
    plants
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_zc_plant_has_zc_ends_and_both_loaders_accept_it() {
        for (profile, shift) in PROFILES {
            let p = with_zc(bus("", 1, shift));
            assert_eq!(p.losses.iter().filter(|l| l.zc.is_some()).count(), 1);
            let ok = if profile == "wide" {
                tidewire_core::configure::check::<tidewire_core::Wide>(&p.network()).is_ok()
            } else {
                tidewire_core::configure::check::<tidewire_core::Narrow>(&p.network()).is_ok()
            };
            assert!(ok, "{profile}: {:?}", tidewire_core::configure::check::<tidewire_core::Wide>(&p.network()));
        }
    }
}

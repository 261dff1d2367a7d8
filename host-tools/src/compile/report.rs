//! The static facts of a compiled plant: timing error per segment, reflection coefficients
//! and storage. Figures that need a run (scale, DC point, coefficient error) are the
//! analysis stage's (`crate::analysis`).
use super::Compiled;
use crate::plant::{Drive as PlantDrive, Load, Plant};

/// Timing of one segment.
#[derive(Debug, Clone, PartialEq)]
pub struct SegmentTiming {
    pub name: String,
    pub cable: String,
    pub length: f64,
    pub z0: f64,
    /// Exact one-way delay, s.
    pub tau: f64,
    /// Quantized delay, samples.
    pub delay: u32,
    /// delay·T − tau, s.
    pub error_s: f64,
    /// Loop resistance, ohm.
    pub r_total: f64,
    /// Lumped sections.
    pub sections: usize,
    /// Why the resistance could not be placed, if it was not (`segments::DROPPED_*`: a
    /// segment of one sample, or a resistance below the core's 1 mΩ).
    pub r_dropped: Option<&'static str>,
    /// Largest error of the loss filters' fit over [fs/10⁴, 0.4·fs], dB (None: no loss).
    pub loss_fit_db: Option<f64>,
    /// Frequency-dependent loss of the whole segment at 0.4·fs, dB.
    pub loss_edge_db: f64,
    /// In-band delay beyond length/v from the lossy cable, s, and the whole samples added
    /// to the lines for it.
    pub dispersion_s: f64,
    pub dispersion_samples: u32,
}

/// Reflection coefficient seen by a wave arriving at a node on one segment.
#[derive(Debug, Clone, PartialEq)]
pub struct Reflection {
    pub node: String,
    pub segment: String,
    /// Gamma = (Z_rest − Z0)/(Z_rest + Z0), Z_rest = everything else at the node in parallel
    /// (resistive parts; a capacitor counts as open, the value before the edge).
    pub gamma: f64,
}

/// The compile report: static facts only.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Report {
    pub segments: Vec<SegmentTiming>,
    pub reflections: Vec<Reflection>,
    pub ports: usize,
    pub junctions: usize,
    /// Delay storage, waves.
    pub memory_waves: usize,
    pub notes: Vec<String>,
}

impl Report {
    /// Solver RAM for this network, bytes (approximate): delay storage plus per-port state
    /// (wide: 4-byte waves, about 30 bytes per port; narrow: 2-byte waves, about 26).
    pub fn ram_bytes(&self, profile: super::ProfileKind) -> usize {
        match profile {
            super::ProfileKind::Wide => self.memory_waves * 4 + self.ports * 30,
            super::ProfileKind::Narrow => self.memory_waves * 2 + self.ports * 26,
        }
    }
}

fn parallel(zs: &[f64]) -> f64 {
    let g: f64 = zs.iter().map(|z| if z.is_infinite() { 0.0 } else { 1.0 / z }).sum();
    if g == 0.0 {
        f64::INFINITY
    } else {
        1.0 / g
    }
}

fn load_r(load: &Load) -> f64 {
    match *load {
        Load::Open | Load::Capacitor(_) | Load::SeriesRc { .. } => f64::INFINITY,
        Load::Short => 0.0,
        Load::Resistor(r) | Load::ParallelRc { r, .. } => r,
    }
}

pub(super) fn fill(c: &mut Compiled, plant: &Plant) {
    let r = &mut c.report;
    r.notes = plant.notes.clone();
    for (ni, node) in plant.nodes.iter().enumerate() {
        let segs: Vec<usize> = (0..plant.segments.len())
            .filter(|s| plant.segments[*s].from == ni || plant.segments[*s].to == ni)
            .collect();
        let mut base = vec![load_r(&node.load)];
        match &plant.drive {
            PlantDrive::Source { node: n, rs, .. } if *n == ni => base.push(*rs),
            PlantDrive::Rig { node: n, dut_resistance, .. } if *n == ni => base.push(*dut_resistance),
            _ => {}
        }
        for &s in &segs {
            let mut rest = base.clone();
            rest.extend(segs.iter().filter(|o| **o != s).map(|o| plant.cables[plant.segments[*o].cable].z0));
            let zr = parallel(&rest);
            let z0 = plant.cables[plant.segments[s].cable].z0;
            let gamma = if zr.is_infinite() { 1.0 } else { (zr - z0) / (zr + z0) };
            r.reflections.push(Reflection { node: node.name.clone(), segment: plant.segments[s].name.clone(), gamma });
        }
    }
    let (ports, juncs, mem) = crate::emit::capacities(&c.network());
    let r = &mut c.report;
    r.ports = ports;
    r.junctions = juncs;
    r.memory_waves = mem;
}

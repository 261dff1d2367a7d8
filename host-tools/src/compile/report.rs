//! What `inspect` tells an engineer about a compiled plant: timing error per segment,
//! reflection coefficients, the DC operating point, coefficient error, storage and work.
use super::Compiled;
use crate::plant::{Drive as PlantDrive, Load, Plant, PlantError};

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
    /// The resistance could not be placed (segment of one sample).
    pub r_dropped: bool,
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

/// The compile report.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Report {
    pub segments: Vec<SegmentTiming>,
    pub reflections: Vec<Reflection>,
    /// Node name and DC voltage for the drive's final EMF.
    pub dc: Vec<(String, f64)>,
    pub peak_emf: f64,
    pub peak_wave: f64,
    pub peak_probe_voltage: f64,
    /// Largest wave the profile holds at the chosen scale, V.
    pub wave_range: f64,
    /// wave_range / peak_wave.
    pub headroom: f64,
    /// Largest relative error of a line impedance after weight quantization.
    pub max_impedance_error: f64,
    pub ports: usize,
    pub junctions: usize,
    /// Delay storage, waves.
    pub memory_waves: usize,
    pub warnings: Vec<String>,
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

pub(super) fn fill(c: &mut Compiled, plant: &Plant, file: &str) -> Result<(), PlantError> {
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
    let e_final = match &c.host_drive {
        super::HostDrive::Source { emf } | super::HostDrive::Rig { emf, .. } => emf.last().copied().unwrap_or(0.0),
    };
    if let Ok(v) = crate::reference::dc_operating_point(plant, e_final) {
        r.dc = plant.nodes.iter().map(|n| n.name.clone()).zip(v).collect();
    }
    let (ports, juncs, mem) = crate::emit::capacities(&c.network());
    let r = &mut c.report;
    r.ports = ports;
    r.junctions = juncs;
    r.memory_waves = mem;
    if ports > crate::run::HOST_PORTS || juncs > crate::run::HOST_JUNCTIONS || mem > crate::run::HOST_MEMORY {
        return Err(super::err(
            file,
            Default::default(),
            "plant",
            format!("plant needs {ports} line ends, {juncs} junctions, {mem} waves of delay storage; the host tier holds {}, {}, {}", crate::run::HOST_PORTS, crate::run::HOST_JUNCTIONS, crate::run::HOST_MEMORY),
            "lower the sample rate or shorten the plant",
        ));
    }
    let cr = crate::run::run_core(c, 0, &[], &|_| {}).map_err(|e| {
        super::err(
            file,
            Default::default(),
            "plant",
            e.to_string(),
            "this is a compiler limitation; please report the plant",
        )
    })?;
    c.report.max_impedance_error = c
        .lines
        .iter()
        .zip(&cr.effective_z)
        .map(|(l, ze)| (ze / (l.z_milliohm as f64 / 1000.0) - 1.0).abs())
        .fold(0.0, f64::max);
    Ok(())
}

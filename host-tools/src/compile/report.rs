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
    /// Whole samples of the delay (in the line rings, without the samples added for
    /// dispersion).
    pub delay: u32,
    /// The realised one-way delay at low frequency minus the wanted one (tau plus the lossy
    /// cable's in-band extra delay), s.
    pub error_s: f64,
    /// The fractional part, when the segment has one (model "delay line + fraction").
    pub fraction: Option<super::fraction::FractionTiming>,
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
    /// Which model the segment got.
    pub model: SegmentModel,
    /// The model's error at the drive's edge, fraction of the step (`model_error.rs`).
    pub model_error: f64,
    /// The error exceeds the plant's tolerance (max_error, or arrival for a delay line).
    pub exceeds: bool,
}

/// Which model a segment got.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SegmentModel {
    /// Delay lines of whole samples (with lumped resistance and loss filters).
    DelayLine,
    /// Lumped elements: shorter than [`super::LUMP_BELOW_SAMPLES`], or a pi section below
    /// `MIN_FRACTIONAL_DELAY` samples where it states less error.
    Lumped(super::LumpKind),
}

impl SegmentModel {
    /// Name in reports and JSON.
    pub fn name(self) -> &'static str {
        match self {
            SegmentModel::DelayLine => "delay line",
            SegmentModel::Lumped(super::LumpKind::Stub { .. }) => "lumped stub",
            SegmentModel::Lumped(super::LumpKind::Joined) => "lumped, nodes joined",
            SegmentModel::Lumped(super::LumpKind::Series) => "lumped series L",
            SegmentModel::Lumped(super::LumpKind::Pi) => "lumped pi (C/2, R+L, C/2)",
        }
    }

    /// Key in JSON documents.
    pub fn key(self) -> &'static str {
        match self {
            SegmentModel::DelayLine => "delay_line",
            SegmentModel::Lumped(super::LumpKind::Stub { .. }) => "lumped_stub",
            SegmentModel::Lumped(super::LumpKind::Joined) => "lumped_joined",
            SegmentModel::Lumped(super::LumpKind::Series) => "lumped_series",
            SegmentModel::Lumped(super::LumpKind::Pi) => "lumped_pi",
        }
    }
}

/// A bilinear capacitor at a node and its error at the drive's edge.
#[derive(Debug, Clone, PartialEq)]
pub struct ReactiveError {
    /// The plant node(s) of its junction, joined by "+".
    pub node: String,
    /// F.
    pub capacitance: f64,
    /// Resistance it charges through (node's lines, shunt, source, its series R), ohm.
    pub resistance: f64,
    /// Time constant, s.
    pub tau: f64,
    /// Largest error against the exact first-order response, fraction of the node's step.
    pub error: f64,
    pub exceeds: bool,
}

impl SegmentTiming {
    /// The model's name in reports: [`SegmentModel::name`], or "delay line + fraction" for a
    /// delay line with a fractional section.
    pub fn model_name(&self) -> &'static str {
        match (&self.fraction, self.model) {
            (Some(_), SegmentModel::DelayLine) => "delay line + fraction",
            (_, m) => m.name(),
        }
    }

    /// The model's key in JSON documents: [`SegmentModel::key`], or `delay_line_fraction`.
    pub fn model_key(&self) -> &'static str {
        match (&self.fraction, self.model) {
            (Some(_), SegmentModel::DelayLine) => "delay_line_fraction",
            (_, m) => m.key(),
        }
    }

    /// Group-delay error at the drive's bandwidth (`fraction.edge_hz`), s: the realised
    /// delay there minus the wanted one (equal to `error_s` without a fraction).
    pub fn edge_error_s(&self, dt: f64) -> f64 {
        match &self.fraction {
            Some(f) => self.error_s + (f.at_edge - f.realised) * dt,
            None => self.error_s,
        }
    }
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
    /// Capacitors at nodes and their bilinear error at the drive's edge.
    pub reactive: Vec<ReactiveError>,
    /// The 10–90 % edge the model errors are judged at (the drive's, at least 2 samples), s.
    pub judged_rise: f64,
    /// The shortest drive edge at which every model error is within max_error (None: none
    /// up to 10^7 samples).
    pub shortest_edge: Option<f64>,
    /// Fitted characteristic impedances Zc(s), one per lossy cable type in use (`zc.rs`).
    pub zc: Vec<super::zc::ZcFit>,
    /// Per cable run (plant segment) of a lossy cable: its enforced network or why it has
    /// none (`zc_enforce.rs`).
    pub zc_runs: Vec<ZcRun>,
}

/// The Zc(s) network of one cable run (all core lines of one plant segment).
#[derive(Debug, Clone, PartialEq)]
pub struct ZcRun {
    /// Plant segment index.
    pub segment: usize,
    /// Index into `Report::zc` of the cable's fit.
    pub fit: usize,
    /// The run's core lines.
    pub lines: Vec<u16>,
    /// Largest |Z0 − Zc|/|Zc| over the fit band: the constant port's error.
    pub constant_error: f64,
    /// The enforced network, or why the run has none.
    pub decision: super::zc_enforce::Decision,
    /// Whether the compiled network carries it (`CompileOptions::zc_networks`).
    pub compiled: bool,
}

impl Report {
    /// Solver RAM for this network, bytes (approximate): delay storage plus per-port state
    /// (wide: 4-byte waves, about 30 bytes per port; narrow: 2-byte waves, about 26).
    pub fn ram_bytes(&self, profile: super::ProfileKind) -> usize {
        let per_port = match profile {
            super::ProfileKind::Wide => 30,
            super::ProfileKind::Narrow => 26,
        };
        self.memory_waves * profile.wave_bytes() + self.ports * per_port
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

pub(super) fn fill(c: &mut Compiled, plant: &Plant, lump: &super::lumped::LumpPlan) {
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
    sizes(c);
    super::model_error::fill(c, plant, lump);
}

/// The storage the network needs (`super::capacities`) into the report.
pub(super) fn sizes(c: &mut Compiled) {
    let (ports, juncs, mem) = super::capacities(&c.network());
    let r = &mut c.report;
    r.ports = ports;
    r.junctions = juncs;
    r.memory_waves = mem;
}

//! The physics compiler: a [`Plant`] in metres and ohms becomes a core [`Network`] in
//! samples and milliohms, with a report of every error the quantization introduces.
//!
//! * delays: each segment's one-way delay τ = length / v is rounded to whole samples; the
//!   timing error is reported in ns and %; a segment shorter than
//!   [`LUMP_BELOW_SAMPLES`] is lumped instead (`lumped.rs`: its C'·l at a node, its end
//!   nodes joined, the model's error stated per segment);
//! * conductor resistance: a segment with loop resistance R = r'·length is cut into n
//!   sections and each section's R/n sits in the middle of the section (series junction
//!   between two halves of the same cable), so the DC operating point obeys Ohm's law
//!   exactly; n is chosen so that each section has R/(n·Z0) <= [`SECTION_R_OVER_Z0`];
//! * loads: resistors as shunts, capacitors as bilinear-transform elements
//!   (port resistance T/(2C)); series and parallel RC terminations;
//! * rig port: the rig's latency is taken out of the first line by the core; the
//!   compiler keeps that line long enough;
//! * fixed point: compile leaves the scale at one volt per I/O code with no fraction bits;
//!   the analysis stage (`crate::analysis::prepare`) chooses it from a run of the f64 twin.
//!
//! This is a pure stage: it imports neither the twin nor the host core runner, and runs
//! nothing. Every figure that needs a run is the analysis stage's.
mod core_check;
pub mod fraction;
mod loads;
pub mod loss;
pub mod lumped;
pub mod model_error;
pub mod pi;
mod report;
mod segments;
pub mod zc;
pub mod zc_enforce;
mod zc_runs;

pub use lumped::{LumpKind, LUMP_BELOW_SAMPLES};
pub use report::{ReactiveError, Reflection, Report, SegmentModel, SegmentTiming, ZcRun};
pub use segments::{
    LinePiece, DROPPED_ABOVE_CORE, DROPPED_BELOW_CORE, DROPPED_ONE_SAMPLE, MIN_FRACTIONAL_DELAY, SECTION_R_OVER_Z0,
};

use crate::plant::{Drive as PlantDrive, End, EventAction, Load, Plant, PlantError, ProbeKind as PlantProbe, Span};
use tidewire_core::{
    Drive, Element, Junction, JunctionId, Line, LineLoss, Network, OwnedNetwork, Probe, ProbeKind, Shunt, Side,
};

/// Which number profile a configuration is compiled for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ProfileKind {
    /// 32-bit waves (Cortex-M4 class).
    Wide,
    /// 16-bit waves (Cortex-M0 class).
    Narrow,
}

impl ProfileKind {
    /// Name used on the command line and in reports.
    pub fn name(self) -> &'static str {
        match self {
            ProfileKind::Wide => "wide",
            ProfileKind::Narrow => "narrow",
        }
    }

    /// The profile's `io_shift` (fraction bits of a wave below one I/O code,
    /// `Profile::IO_SHIFT`).
    pub fn io_shift(self) -> u8 {
        match self {
            ProfileKind::Wide => <tidewire_core::Wide as tidewire_core::Profile>::IO_SHIFT,
            ProfileKind::Narrow => <tidewire_core::Narrow as tidewire_core::Profile>::IO_SHIFT,
        }
    }

    /// Bytes of one wave in the core's memory.
    pub fn wave_bytes(self) -> usize {
        match self {
            ProfileKind::Wide => 4,
            ProfileKind::Narrow => 2,
        }
    }
}

/// A change the core applies between two samples.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CoreAction {
    SetShunt(JunctionId, Shunt),
    Break(JunctionId),
}

/// A scheduled change: before sample `sample` is computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct CoreEvent {
    pub sample: usize,
    pub action: CoreAction,
}

/// How the drive is run on the host.
#[derive(Debug, Clone, PartialEq)]
pub enum HostDrive {
    /// Test source: EMF per sample (V).
    Source { emf: Vec<f64> },
    /// Rig port: the device under test is `emf` behind `dut_resistance`, connected to the pin
    /// that the rig's reference resistor `r_ref` ties to the DAC; `latency` samples.
    Rig { emf: Vec<f64>, dut_resistance: f64, r_ref: f64, latency: usize },
}

impl HostDrive {
    /// The EMF at sample `n`; past the compiled run it holds its last value.
    pub fn emf_at(&self, n: usize) -> f64 {
        let e = self.emf();
        e.get(n).or(e.last()).copied().unwrap_or(0.0)
    }

    /// The EMF per sample.
    pub fn emf(&self) -> &[f64] {
        match self {
            HostDrive::Source { emf } | HostDrive::Rig { emf, .. } => emf,
        }
    }
}

/// The core's owned network in host vectors.
pub type HostNetwork = OwnedNetwork<Vec<Line>, Vec<Junction>, Vec<Element>, Vec<LineLoss>, Vec<Probe>>;

/// A compiled plant: the core network and what the host needs to run and explain it.
#[derive(Debug, Clone, PartialEq)]
pub struct Compiled {
    pub profile: ProfileKind,
    /// The core network, owned (the core's one owned network type).
    pub net: HostNetwork,
    /// Sample period, s.
    pub dt: f64,
    /// Samples of a default run (the plant's duration).
    pub samples: usize,
    /// Plant node index → core junction.
    pub node_junction: Vec<JunctionId>,
    /// Per plant segment, its core lines from its `from` end to its `to` end.
    pub segment_pieces: Vec<Vec<LinePiece>>,
    pub events: Vec<CoreEvent>,
    pub host_drive: HostDrive,
    /// Names and units of the probes, in order.
    pub probe_names: Vec<(String, &'static str)>,
    pub report: Report,
}

impl Compiled {
    /// The core network (borrowing this configuration).
    pub fn network(&self) -> Network<'_> {
        self.net.network()
    }

    /// Volts per wave LSB.
    pub fn volts_per_lsb(&self) -> f64 {
        self.net.volts_per_code as f64 / (1u64 << self.net.io_shift) as f64
    }
}

/// Build a located compile error.
pub(crate) fn err(
    file: &str,
    span: Span,
    field: impl Into<String>,
    message: impl Into<String>,
    hint: impl Into<String>,
) -> PlantError {
    PlantError {
        file: file.to_string(),
        line: span.line,
        column: span.column,
        field: field.into(),
        message: message.into(),
        hint: hint.into(),
    }
}

/// Compile `plant` (read from `file`, for error messages) for `profile`. The result's
/// scale is one volt per code with no fraction bits until `crate::analysis::analyse` sets
/// it; use `crate::analysis::prepare` for a configuration ready to load.
pub fn compile(plant: &Plant, file: &str, profile: ProfileKind) -> Result<Compiled, PlantError> {
    compile_with(plant, file, profile, CompileOptions::for_plant(plant))
}

/// [`compile`] with explicit [`CompileOptions`].
pub fn compile_with(
    plant: &Plant,
    file: &str,
    profile: ProfileKind,
    opts: CompileOptions,
) -> Result<Compiled, PlantError> {
    build(plant, file, profile, Some(opts))
}

/// Whether lossy lines carry their Zc(s) networks by default: on. The core runs them in both
/// profiles and checks each line's passivity margin at load (`docs/zc-model.md`); a compile
/// with the option off keeps the constant port impedance (to compare, `twin::run_with_zc`).
pub const ZC_NETWORKS_DEFAULT: bool = true;

/// Choices of a compile that the plant file does not make.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct CompileOptions {
    /// Give every cable run that gets an enforced Zc(s) network (`zc_enforce.rs`) that
    /// network at every end of its lines (`LineLoss::zc`), with Z_p as the lines' impedance.
    pub zc_networks: bool,
}

impl CompileOptions {
    /// The plant file's choices (`[plant] characteristic_impedance`).
    pub fn for_plant(plant: &Plant) -> Self {
        CompileOptions { zc_networks: plant.zc_networks }
    }
}

impl Default for CompileOptions {
    fn default() -> Self {
        CompileOptions { zc_networks: ZC_NETWORKS_DEFAULT }
    }
}

/// Lay `plant` out without fitting its loss filters, to size it before the fits run (they
/// are the costly part of compiling a long lossy plant). The result has the full
/// compile's lines, junctions, elements and loss records (lossy lines carry an empty
/// record), but not the delay a lossy cable adds for its in-band dispersion, which only
/// lengthens a line by whole samples (`segments::Builder::add_loss`), and no model-error
/// report. For sizing only: it is not checked against the core and must not be loaded.
pub fn lay_out(plant: &Plant, file: &str, profile: ProfileKind) -> Result<Compiled, PlantError> {
    build(plant, file, profile, None)
}

/// `opts`: `None` lays out without fitting (see [`lay_out`]).
fn build(
    plant: &Plant,
    file: &str,
    profile: ProfileKind,
    opts: Option<CompileOptions>,
) -> Result<Compiled, PlantError> {
    let fit_losses = opts.is_some();
    let dt = 1.0 / plant.sample_rate;
    let exact_samples = (plant.duration / dt).round();
    // Checked before anything is sized by it (the drive's samples, the twin's traces).
    if exact_samples.is_nan() || exact_samples > MAX_PLANT_SAMPLES as f64 {
        return Err(err(
            file,
            Span::default(),
            "plant.duration",
            format!(
                "a duration of {} is {exact_samples:e} samples at this sample rate; a plant's run holds at most {MAX_PLANT_SAMPLES} samples",
                crate::si::format(plant.duration, "s")
            ),
            format!(
                "set duration to at most \"{}\" (longer runs: `simulate --samples N` streams)",
                crate::si::at_most(MAX_PLANT_SAMPLES as f64 * dt, "s")
            ),
        ));
    }
    let samples = (exact_samples as usize).max(1);
    let frac = match profile {
        ProfileKind::Wide => <tidewire_core::Wide as tidewire_core::Profile>::LOSS_FRAC,
        ProfileKind::Narrow => <tidewire_core::Narrow as tidewire_core::Profile>::LOSS_FRAC,
    };
    let mut b = segments::Builder::new(plant, file, dt, frac, fraction::drive_bandwidth(plant, dt));
    b.fit_losses = fit_losses;

    // Every node's own load first, so its errors (a capacitor out of the core's range) come
    // before anything lumping says about the segments.
    for node in &plant.nodes {
        loads::realize(&node.load, dt, file, node.span, &format!("node.{}.load", node.name))?;
    }
    // Electrically short segments are lumped: their end nodes share one junction.
    let lump = lumped::plan(plant, file, dt)?;
    // Junctions for the plant's node classes first, so class k is junction k (a plant with
    // no lumped segment: node n is junction n).
    let mut node_elements = Vec::new();
    for k in 0..lump.classes {
        if let Some(si) = lumped::series_class(plant, &lump, k) {
            // L'·l and R'·l of the piece as a series-inductor junction (port 2L/T).
            let (port_milliohm, milliohm) = lumped::series_l(plant, si, dt, file)?;
            b.junctions.push(Junction::SeriesInductor { port_milliohm, milliohm });
            continue;
        }
        let (shunt, els) = lumped::class_load(plant, &lump, k, dt, file, None)?;
        b.junctions.push(Junction::Node { shunt });
        for (kind, port, series) in els {
            node_elements.push(Element {
                junction: k as JunctionId,
                kind,
                port_milliohm: port,
                series_milliohm: series,
            });
        }
    }
    // Pi sections: R'l + L'l as a series branch between their two nodes (their C'l/2 went
    // to each node's elements above).
    for (si, ka, kb) in pi::sections(plant, &lump) {
        let (port_milliohm, milliohm) = lumped::series_l(plant, si, dt, file)?;
        b.junctions.push(Junction::Branch { a: ka as JunctionId, b: kb as JunctionId, port_milliohm, milliohm });
    }
    let node_junction: Vec<JunctionId> = lump.class_of.iter().map(|&k| k as JunctionId).collect();
    b.node_junction = node_junction.clone();

    // The rig port's node and latency, to keep its first line long enough.
    let rig = match &plant.drive {
        PlantDrive::Rig { node, latency, .. } => Some((*node, *latency)),
        _ => None,
    };
    let mut break_junction = Vec::new();
    for (si, seg) in plant.segments.iter().enumerate() {
        let cuts: Vec<(usize, f64)> = plant
            .events
            .iter()
            .enumerate()
            .filter_map(|(ei, e)| match e.action {
                EventAction::Break { segment, distance } if segment == si => Some((ei, distance)),
                _ => None,
            })
            .collect();
        if lump.lumped[si].is_some() {
            b.lumped_segment(seg);
            continue;
        }
        let min_first = rig.and_then(|(n, lat)| (n == seg.from || n == seg.to).then_some(lat));
        let breaks = b.segment(seg, &cuts, min_first)?;
        break_junction.extend(breaks);
    }
    if let Some((node, lat)) = rig {
        let j = node_junction[node];
        let first = b.lines.iter().find(|l| l.a == j || l.b == j);
        if let (Some(l), Some(seg)) = (first, plant.segments.iter().find(|s| s.from == node || s.to == node)) {
            if l.delay < lat + 1 {
                return Err(err(
                    file,
                    seg.span,
                    format!("segment[{}].length", seg.name),
                    format!("the first {} samples of cable at the rig port are shorter than the rig latency of {lat} samples plus one", l.delay),
                    "the emulation needs the port's first stretch of cable to outlast the rig's ADC-to-DAC latency: raise the sample rate, lengthen the segment, or reduce the latency",
                ));
            }
        }
    }
    let report_segments = std::mem::take(&mut b.timings);
    let (lines, junctions, segment_pieces, losses) = (b.lines, b.junctions, b.pieces, b.losses);
    let mut elements = node_elements;
    elements.sort_by_key(|e| e.junction);

    // Drive.
    let (drive, host_drive) = match &plant.drive {
        PlantDrive::Source { node, emf, rs } => (
            Drive::Source {
                junction: node_junction[*node],
                milliohm: checked_milliohm(*rs, file, plant.nodes[*node].span, "drive.resistance")?,
            },
            HostDrive::Source { emf: emf.sample(dt, samples) },
        ),
        PlantDrive::Rig { node, r_ref, latency, stimulus, dut_resistance, .. } => {
            let seg = plant.segments.iter().find(|s| s.from == *node || s.to == *node);
            let z0 = seg.map(|s| plant.cables[s.cable].z0).unwrap_or(*r_ref);
            if (z0 - r_ref).abs() > 1e-6 * z0 {
                return Err(err(
                    file,
                    plant.nodes[*node].span,
                    "drive.reference",
                    format!("the rig's reference resistor is {r_ref} ohm but the cable at the port is {z0} ohm"),
                    "the emulation is exact only when the reference resistor equals the port's characteristic impedance",
                ));
            }
            let j = node_junction[*node];
            if let Some(Junction::Node { shunt }) = junctions.get(j as usize).copied() {
                if shunt != Shunt::Open || elements.iter().any(|e| e.junction == j) {
                    return Err(err(
                        file,
                        plant.nodes[*node].span,
                        format!("node.{}.load", plant.nodes[*node].name),
                        "a rig port node cannot also carry a load",
                        "remove the load: the device under test is what hangs from the rig port",
                    ));
                }
            }
            (
                Drive::Rig { junction: node_junction[*node], latency: *latency as u16 },
                HostDrive::Rig {
                    emf: stimulus.sample(dt, samples),
                    dut_resistance: *dut_resistance,
                    r_ref: *r_ref,
                    latency: *latency as usize,
                },
            )
        }
    };

    // Probes.
    let mut probes = Vec::new();
    let mut probe_names = Vec::new();
    for p in &plant.probes {
        let probe = match p.kind {
            PlantProbe::Voltage(n) => {
                let j = node_junction[n];
                let (li, l) = lines.iter().enumerate().find(|(_, l)| l.a == j || l.b == j).ok_or_else(|| {
                    err(
                        file,
                        plant.nodes[n].span,
                        format!("probe[{}].node", p.name),
                        "node has no segment",
                        "probe a connected node",
                    )
                })?;
                Probe { kind: ProbeKind::Voltage, line: li as u16, side: if l.a == j { Side::A } else { Side::B } }
            }
            PlantProbe::Current(s, end) => {
                let pieces = &segment_pieces[s];
                let (piece, side) = match end {
                    End::From => (pieces.first(), Side::A),
                    End::To => (pieces.last(), Side::B),
                };
                let line = piece.map(|p| p.line).unwrap_or(0);
                Probe { kind: ProbeKind::Current, line, side }
            }
        };
        probe_names.push((p.name.clone(), if matches!(p.kind, PlantProbe::Voltage(_)) { "V" } else { "A" }));
        probes.push(probe);
    }
    if probes.len() > tidewire_core::MAX_PROBES {
        return Err(err(
            file,
            Span::default(),
            "probe",
            format!("{} probes, the core reads out at most {}", probes.len(), tidewire_core::MAX_PROBES),
            "remove some probes",
        ));
    }

    // Events.
    let mut events = Vec::new();
    for (ei, e) in plant.events.iter().enumerate() {
        let sample = (e.at / dt).round();
        // An event at or after the end of the run would never act: say so, not ignore it.
        if sample.is_nan() || sample >= samples as f64 {
            return Err(err(
                file,
                e.span,
                "event.at",
                format!(
                    "the event at {} is outside the run, which ends at {} (plant.duration)",
                    crate::si::format(e.at, "s"),
                    crate::si::format(samples as f64 * dt, "s")
                ),
                format!(
                    "move it to at most at = \"{}\", or set plant.duration to at least \"{}\"",
                    crate::si::at_most((samples - 1) as f64 * dt, "s"),
                    crate::si::at_least(e.at + 2.0 * dt, "s")
                ),
            ));
        }
        let sample = sample as usize;
        let action = match e.action {
            EventAction::SetLoad(n, load) => {
                let shunt = match load {
                    Load::Open | Load::Short | Load::Resistor(_) if lump.members(lump.class_of[n]).nth(1).is_some() => {
                        // A node merged with others by lumping: the new load joins theirs.
                        if let Load::Resistor(r) = load {
                            checked_milliohm(r, file, e.span, "event.load")?;
                        }
                        lumped::class_load(plant, &lump, lump.class_of[n], dt, file, Some((n, load)))?.0
                    }
                    Load::Open => Shunt::Open,
                    Load::Short => Shunt::Short,
                    Load::Resistor(r) => Shunt::Resistor { milliohm: checked_milliohm(r, file, e.span, "event.load")? },
                    _ => {
                        return Err(err(
                            file,
                            e.span,
                            "event.load",
                            "a load switched while running must be open, short or a resistor",
                            "describe the reactive part as the node's permanent load",
                        ))
                    }
                };
                CoreAction::SetShunt(node_junction[n], shunt)
            }
            EventAction::Break { .. } => match break_junction.iter().find(|(k, _)| *k == ei) {
                Some((_, j)) => CoreAction::Break(*j),
                None => continue,
            },
        };
        events.push(CoreEvent { sample, action });
    }
    events.sort_by_key(|e| e.sample);

    let mut compiled = Compiled {
        profile,
        net: HostNetwork { lines, junctions, elements, losses, drive, probes, io_shift: 0, volts_per_code: 1.0 },
        dt,
        samples,
        node_junction,
        segment_pieces,
        events,
        host_drive,
        probe_names,
        report: Report { segments: report_segments, ..Report::default() },
    };
    let Some(opts) = opts else {
        report::sizes(&mut compiled);
        return Ok(compiled);
    };
    zc_runs::fit(&mut compiled, plant, opts);
    core_check::check(&compiled, plant, file)?;
    report::fill(&mut compiled, plant, &lump);
    Ok(compiled)
}

/// Most samples of a plant's own run (its duration): `verify`, the fixed-point scale and
/// the drive hold every sample of it in memory. `simulate --samples` streams past it.
pub const MAX_PLANT_SAMPLES: usize = 10_000_000;

/// The core's resistances are whole milliohms in a `u32`: 1 mΩ to 4 294 967.295 Ω.
pub const MIN_OHM: f64 = 1e-3;
pub const MAX_OHM: f64 = u32::MAX as f64 / 1000.0;

/// Capacities a solver needs for `net`: (ports, junctions, delay storage).
pub fn capacities(net: &Network<'_>) -> (usize, usize, usize) {
    let mem = net.lines.iter().map(|l| 2 * l.delay as usize).sum::<usize>() + net.elements.len();
    (2 * net.lines.len() + net.elements.len(), net.junctions.len(), mem)
}

/// A resistance from the plant file in the core's milliohms, or a located error when it
/// is outside the range the core holds (never clamped silently: a clamped load makes the
/// core disagree with the physics by the clamp).
pub(crate) fn checked_milliohm(ohm: f64, file: &str, span: Span, field: &str) -> Result<u32, PlantError> {
    let shown = crate::si::format(ohm, "ohm");
    if ohm.is_finite() && ohm < MIN_OHM * (1.0 - 1e-9) {
        return Err(err(
            file,
            span,
            field,
            format!("{shown} is below the smallest resistance the core holds, 1 mohm"),
            "write at least \"1 mohm\", or \"short\" for a dead short",
        ));
    }
    if !ohm.is_finite() || ohm > MAX_OHM {
        return Err(err(
            file,
            span,
            field,
            format!("{shown} is above the largest resistance the core holds, {}", crate::si::at_most(MAX_OHM, "ohm")),
            format!(
                "write at most \"{}\", or \"open\" (against any cable's impedance that is an open to within 0.01 %)",
                crate::si::at_most(MAX_OHM, "ohm")
            ),
        ));
    }
    to_milliohm(ohm).ok_or_else(|| {
        err(
            file,
            span,
            field,
            format!("{shown} does not fit the core's milliohms"),
            "write a value from 1 mohm to 4.29 Mohm",
        )
    })
}

/// Ohms to the core's milliohms, rounded to the nearest; `None` when the rounded value
/// is outside 1 mΩ ..= u32::MAX mΩ or not a number. Never clamps: every caller turns
/// `None` into a located error or a stated choice (a dropped resistance, say), because a
/// clamped value makes the core disagree with the physics by the clamp.
pub fn to_milliohm(ohm: f64) -> Option<u32> {
    let m = (ohm * 1000.0).round();
    (m.is_finite() && (1.0..=u32::MAX as f64).contains(&m)).then_some(m as u32)
}

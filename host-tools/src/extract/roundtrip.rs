//! Running an extracted plant back: its driving-point response from the exact reference
//! and from the core, compared with the capture.

use super::load::EndLoad;
use super::merge::Run;
use crate::analysis::prepare;
use crate::compile::ProfileKind;
use crate::plant::{CableType, Drive, Load, Node, Plant, Probe, ProbeKind, Segment, Span, Tolerances, Waveform};
use crate::reference::{exact_response, ExactOptions};

/// What the model plant is made of besides its runs and load.
#[derive(Debug, Clone, PartialEq)]
pub struct Frame {
    /// The cable every run is made of; each run overrides its impedance.
    pub cable: CableType,
    pub rs: f64,
    pub emf: Waveform,
    pub sample_rate: f64,
    pub samples: usize,
}

impl EndLoad {
    /// The plant model's load.
    pub fn load(&self) -> Load {
        match *self {
            EndLoad::Open => Load::Open,
            EndLoad::Short => Load::Short,
            EndLoad::Resistor(r) => Load::Resistor(r),
            EndLoad::Capacitor(c) => Load::Capacitor(c),
            EndLoad::ParallelRc { r, c } => Load::ParallelRc { r, c },
        }
    }
}

/// Node names of the model plant: the port, the joints, the end.
pub fn node_name(i: usize, count: usize) -> String {
    if i == 0 {
        "port".into()
    } else if i == count {
        "end".into()
    } else {
        format!("joint{i}")
    }
}

/// The plant of `lines` in a chain from the port, `load` at the far end.
pub fn model_plant(frame: &Frame, lines: &[Run], load: EndLoad) -> Plant {
    let n = lines.len();
    let nodes = (0..=n)
        .map(|i| Node {
            name: node_name(i, n),
            load: if i == n { load.load() } else { Load::Open },
            span: Span::default(),
        })
        .collect();
    let cables = lines
        .iter()
        .enumerate()
        .map(|(i, r)| CableType { name: format!("run{}", i + 1), z0: r.z, ..frame.cable.clone() })
        .collect();
    let segments = lines
        .iter()
        .enumerate()
        .map(|(i, r)| Segment {
            name: format!("run{}", i + 1),
            from: i,
            to: i + 1,
            cable: i,
            length: r.length(),
            span: Span::default(),
            inline: None,
        })
        .collect();
    Plant {
        name: "extracted".into(),
        notes: vec![],
        sample_rate: frame.sample_rate,
        duration: frame.samples as f64 / frame.sample_rate,
        cables,
        nodes,
        segments,
        drive: Drive::Source { node: 0, emf: frame.emf.clone(), rs: frame.rs },
        probes: vec![Probe { name: "port".into(), kind: ProbeKind::Voltage(0) }],
        tolerances: Tolerances::default(),
        zc_networks: crate::compile::ZC_NETWORKS_DEFAULT,
        events: vec![],
        lattice_path: vec![],
    }
}

/// The exact reference's voltage at the plant's first probe, `samples` long.
pub fn exact_port(plant: &Plant, samples: usize) -> Result<Vec<f64>, String> {
    let run = exact_response(plant, &ExactOptions { samples, wrap_level: ExactOptions::DEFAULT_WRAP_LEVEL })
        .map_err(|e| e.to_string())?;
    Ok(run.traces.into_iter().next().map(|t| t.values).unwrap_or_default())
}

/// The core's (wide profile) voltage at the plant's first probe, `samples` long.
pub fn core_port(plant: &Plant, file: &str, samples: usize) -> Result<Vec<f64>, String> {
    let (c, _) = prepare(plant, file, ProfileKind::Wide).map_err(|e| e.to_string())?;
    let run = crate::host_core::run_core(&c, samples, &[], &|_| {}).map_err(|e| e.to_string())?;
    Ok(run.recording.probes.into_iter().next().unwrap_or_default())
}

/// Largest and rms difference of `a` and `b` over the samples they share, V.
pub fn distance(a: &[f64], b: &[f64]) -> (f64, f64) {
    let n = a.len().min(b.len());
    if n == 0 {
        return (f64::INFINITY, f64::INFINITY);
    }
    let (mut max, mut sum) = (0.0f64, 0.0);
    for k in 0..n {
        let d = (a[k] - b[k]).abs();
        max = max.max(d);
        sum += d * d;
    }
    (max, (sum / n as f64).sqrt())
}

/// The round trip's figures, as fractions of the EMF step.
#[derive(Debug, Clone, PartialEq)]
pub struct RoundTrip {
    pub exact: Vec<f64>,
    pub exact_max: f64,
    pub exact_rms: f64,
    /// The core's response and figures, or why the core could not run the plant.
    pub core: Result<(Vec<f64>, f64, f64), String>,
}

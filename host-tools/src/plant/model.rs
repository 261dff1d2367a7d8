//! The physical plant model: what an engineer describes, in SI units.
//!
//! This is the hand-off between the plant-file reader (`plant::file`), the physics compiler
//! (`compile`) and the floating-point references (`reference`). Everything here is in base SI
//! units (metres, seconds, ohms, siemens, farads, henries, volts, hertz); the file reader does
//! all unit conversion. Indices (`NodeId`, `CableId`, `SegmentId`) point into the vectors of
//! [`Plant`].

/// Speed of light in vacuum, m/s (exact by the SI definition).
pub const C0: f64 = 299_792_458.0;

pub type NodeId = usize;
pub type CableId = usize;
pub type SegmentId = usize;

/// Where an item was written in its plant file, for error messages and reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Span {
    /// 1-based line.
    pub line: usize,
    /// 1-based column.
    pub column: usize,
}

/// Frequency-dependent loss of a cable, beyond its DC conductor resistance.
///
/// Attenuation constant alpha(f) = k_c·sqrt(f) + k_d·f in nepers per metre (f in Hz):
/// k_c models conductor (skin-effect) loss, k_d dielectric loss (1 Np = 8.686 dB).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct LossModel {
    /// Np / (m · sqrt(Hz)).
    pub k_c: f64,
    /// Np / (m · Hz).
    pub k_d: f64,
}

/// A cable type: the per-metre electrical constants of one kind of cable.
#[derive(Debug, Clone, PartialEq)]
pub struct CableType {
    pub name: String,
    /// Characteristic impedance at high frequency, ohms (lossless sqrt(L'/C')).
    pub z0: f64,
    /// Propagation speed, m/s (velocity factor · C0).
    pub velocity: f64,
    /// DC conductor resistance per metre, both conductors together (loop), ohm/m.
    pub r_per_m: f64,
    /// Frequency-dependent loss on top of `r_per_m`; `None` for DC resistance only.
    pub loss: Option<LossModel>,
    /// Where the nominal values come from (preset source, or "plant file").
    pub source: String,
}

impl CableType {
    /// Inductance per metre L' = Z0 / v (H/m).
    pub fn l_per_m(&self) -> f64 {
        self.z0 / self.velocity
    }
    /// Capacitance per metre C' = 1 / (Z0 · v) (F/m).
    pub fn c_per_m(&self) -> f64 {
        1.0 / (self.z0 * self.velocity)
    }
    /// Velocity factor v / C0.
    pub fn velocity_factor(&self) -> f64 {
        self.velocity / C0
    }
}

/// A one-port load from a node to the return conductor.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Load {
    /// Nothing connected (reflection coefficient +1).
    Open,
    /// A hard short to return (reflection coefficient -1).
    Short,
    /// A resistor to return, ohms.
    Resistor(f64),
    /// A capacitor to return, farads (a receiver input).
    Capacitor(f64),
    /// A resistor in series with a capacitor to return (AC termination).
    SeriesRc { r: f64, c: f64 },
    /// A resistor in parallel with a capacitor to return.
    ParallelRc { r: f64, c: f64 },
}

/// A named point of the plant where segments meet.
#[derive(Debug, Clone, PartialEq)]
pub struct Node {
    pub name: String,
    pub load: Load,
    pub span: Span,
}

/// A lumped element in series inside a segment: a choke (inductance L in series with its
/// winding resistance R), `at` metres from the segment's `from` end.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Inline {
    /// H (> 0).
    pub inductance: f64,
    /// Ω (>= 0).
    pub resistance: f64,
    /// Metres from the `from` end, strictly inside the segment.
    pub at: f64,
}

/// A length of one cable type between two nodes.
#[derive(Debug, Clone, PartialEq)]
pub struct Segment {
    pub name: String,
    pub from: NodeId,
    pub to: NodeId,
    pub cable: CableId,
    /// Length in metres (> 0).
    pub length: f64,
    pub span: Span,
    /// A series element inside the segment, if any.
    pub inline: Option<Inline>,
}

/// The EMF waveform of a test source, in volts against seconds.
#[derive(Debug, Clone, PartialEq)]
pub enum Waveform {
    /// 0 before `delay`, then a ramp to `amplitude` whose 10–90 % rise time is `rise`
    /// (`rise = 0` is an ideal step).
    Step { amplitude: f64, delay: f64, rise: f64 },
    /// A single pulse of `width` (between 50 % points) with the given rise/fall time.
    Pulse { amplitude: f64, delay: f64, width: f64, rise: f64 },
    /// Samples at the plant's sample rate, from a CSV file (one volt value per sample).
    Samples(Vec<f64>),
    /// A half-bridge PWM output swinging between +amplitude and −amplitude: high for
    /// duty·period, then `dead_time` at 0 V (both switches off, the output modelled at the
    /// mid-point), low until `dead_time` before the period ends, then 0 V again. Every edge
    /// is a linear ramp of 10–90 % time `rise`; the first period starts at `delay`.
    Pwm { amplitude: f64, period: f64, duty: f64, dead_time: f64, rise: f64, delay: f64 },
}

impl Waveform {
    /// The waveform at time `t` seconds. `Samples` holds one value per sample of period `dt`.
    ///
    /// Edges are linear ramps; a 10–90 % rise time `r` is a full ramp of `r / 0.8`.
    pub fn at(&self, t: f64, dt: f64) -> f64 {
        fn ramp(t: f64, start: f64, rise: f64) -> f64 {
            let full = rise / 0.8;
            if full <= 0.0 {
                if t >= start {
                    1.0
                } else {
                    0.0
                }
            } else {
                ((t - start) / full).clamp(0.0, 1.0)
            }
        }
        match self {
            // The ramp starts at `delay`; a pulse's fall starts `width` after its rise
            // starts, so `width` is also the 50 %-to-50 % width.
            Waveform::Step { amplitude, delay, rise } => amplitude * ramp(t, *delay, *rise),
            Waveform::Pulse { amplitude, delay, width, rise } => {
                amplitude * (ramp(t, *delay, *rise) - ramp(t, delay + width, *rise))
            }
            Waveform::Samples(v) => {
                let i = (t / dt).round();
                if i < 0.0 {
                    0.0
                } else {
                    v.get(i as usize).copied().unwrap_or(0.0)
                }
            }
            Waveform::Pwm { amplitude, period, duty, dead_time, rise, delay } => {
                if t < *delay || *period <= 0.0 {
                    return 0.0;
                }
                let tau = (t - delay) % period;
                let on = duty * period;
                let r = |x: f64| ramp(x, 0.0, *rise);
                amplitude * (r(tau) - r(tau - on)) - amplitude * (r(tau - on - dead_time) - r(tau - period + dead_time))
            }
        }
    }

    /// `n` samples at period `dt`, sample k taken at t = k·dt.
    pub fn sample(&self, dt: f64, n: usize) -> Vec<f64> {
        (0..n).map(|k| self.at(k as f64 * dt, dt)).collect()
    }

    /// The final (settled) value of the waveform.
    pub fn final_value(&self) -> f64 {
        match self {
            Waveform::Step { amplitude, .. } => *amplitude,
            Waveform::Pulse { .. } | Waveform::Pwm { .. } => 0.0,
            Waveform::Samples(v) => v.last().copied().unwrap_or(0.0),
        }
    }

    /// Whether the waveform settles to a DC value, so that the end of a run can be judged
    /// against the DC operating point. A PWM drive is periodic: the end of its run is some
    /// point in a period, not a final value.
    pub fn settles_to_dc(&self) -> bool {
        !matches!(self, Waveform::Pwm { .. })
    }

    /// The largest magnitude the waveform reaches, V.
    pub fn peak(&self) -> f64 {
        match self {
            Waveform::Step { amplitude, .. } | Waveform::Pulse { amplitude, .. } | Waveform::Pwm { amplitude, .. } => {
                amplitude.abs()
            }
            Waveform::Samples(v) => v.iter().fold(0.0, |m, x| m.max(x.abs())),
        }
    }
}

/// The one thing that drives the plant.
#[derive(Debug, Clone, PartialEq)]
pub enum Drive {
    /// A test source at `node`: EMF behind an internal resistance `rs` (ohms, > 0).
    Source { node: NodeId, emf: Waveform, rs: f64 },
    /// A rig port at `node`: the device under test connects there through the rig's
    /// reference resistor `r_ref` (ohms); the ADC and DAC have the stated full scale
    /// (volts, symmetric ±) and the rig's ADC-to-DAC latency is `latency` samples.
    ///
    /// For host runs (`simulate`, `verify`) the device under test is modelled as a Thevenin
    /// source: `stimulus` EMF behind `dut_resistance` ohms, connected to the pin.
    Rig {
        node: NodeId,
        r_ref: f64,
        adc_full_scale: f64,
        dac_full_scale: f64,
        latency: u32,
        stimulus: Waveform,
        dut_resistance: f64,
    },
}

impl Drive {
    /// Whether the drive settles to a DC value (see [`Waveform::settles_to_dc`]).
    pub fn settles_to_dc(&self) -> bool {
        match self {
            Drive::Source { emf, .. } => emf.settles_to_dc(),
            Drive::Rig { stimulus, .. } => stimulus.settles_to_dc(),
        }
    }
}

/// Which end of a segment.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum End {
    From,
    To,
}

/// What a probe measures.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ProbeKind {
    /// Voltage of a node against return, V.
    Voltage(NodeId),
    /// Current flowing from the node into the segment at the given end, A.
    Current(SegmentId, End),
}

#[derive(Debug, Clone, PartialEq)]
pub struct Probe {
    pub name: String,
    pub kind: ProbeKind,
}

/// Pass/fail limits for `verify`, as fractions of the drive step unless noted.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tolerances {
    /// Maximum absolute error against the exact reference, fraction of the drive step.
    pub max_error: f64,
    /// RMS error against the exact reference, fraction of the drive step.
    pub rms_error: f64,
    /// Final value against the DC operating point, fraction of the drive step.
    pub final_error: f64,
    /// First-edge arrival time error, in samples.
    pub arrival_samples: f64,
}

impl Default for Tolerances {
    fn default() -> Self {
        Tolerances { max_error: 0.05, rms_error: 0.01, final_error: 0.002, arrival_samples: 1.0 }
    }
}

/// A scheduled change while the plant runs.
#[derive(Debug, Clone, PartialEq)]
pub enum EventAction {
    /// The node's load becomes `load`.
    SetLoad(NodeId, Load),
    /// The segment breaks `distance` metres from its `from` end (the compiler places a node
    /// there in advance).
    Break { segment: SegmentId, distance: f64 },
}

#[derive(Debug, Clone, PartialEq)]
pub struct Event {
    /// Time of the change, seconds from the start of the run.
    pub at: f64,
    pub action: EventAction,
    pub span: Span,
}

/// A whole plant as described in a plant file.
#[derive(Debug, Clone, PartialEq)]
pub struct Plant {
    pub name: String,
    /// Free text shown by `inspect` (for example a high-voltage caution).
    pub notes: Vec<String>,
    /// Sample rate of the emulation, Hz.
    pub sample_rate: f64,
    /// How long `simulate`/`verify` run by default, seconds.
    pub duration: f64,
    /// Whether lossy cable runs get their Zc(s) networks (`[plant] characteristic_impedance =
    /// "fitted"`, the default) or keep a constant port impedance (`"constant"`: for a core
    /// built without its `zc-check` feature, whose loader refuses the networks).
    pub zc_networks: bool,
    pub cables: Vec<CableType>,
    pub nodes: Vec<Node>,
    pub segments: Vec<Segment>,
    pub drive: Drive,
    pub probes: Vec<Probe>,
    pub tolerances: Tolerances,
    pub events: Vec<Event>,
    /// Path of the lattice (distance-time) view: the segments in order, if given.
    pub lattice_path: Vec<SegmentId>,
}

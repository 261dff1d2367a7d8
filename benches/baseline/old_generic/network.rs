//! (Frozen copy of `core/src/network.rs` at c696084, see `mod.rs`.)
//!
//! The network description a solver is built from: lines measured in samples, junctions,
//! one-port shunts, the drive and the probes, all in integer units (milliohms, samples).
//!
//! A [`Network`] borrows its tables, so firmware can keep one in a `static` (the host's Rust
//! source output) and the image reader can hand out one that borrows its decoded storage.
//! The wave conventions are the crate's (see the crate documentation): at every line end
//! v = a + b and i = (a − b)/Z0, with a the wave entering the line.

/// Index of a junction in [`Network::junctions`].
pub type JunctionId = u16;
/// Index of a line in [`Network::lines`].
pub type LineId = u16;

/// A lossless transmission line: characteristic impedance and one-way delay in samples.
///
/// In each direction the wave leaving one end arrives unchanged at the other end `delay`
/// samples later: b_far[n] = a_near[n − delay] (method of characteristics).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Line {
    /// Characteristic impedance Z0 in milliohms (> 0).
    pub z_milliohm: u32,
    /// One-way delay in whole samples (>= 1).
    pub delay: u32,
    /// Junction at end A.
    pub a: JunctionId,
    /// Junction at end B.
    pub b: JunctionId,
}

/// A one-port from a node to the return conductor.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum Shunt {
    /// Nothing connected: no shunt term (an end alone there reflects with +1).
    Open,
    /// Exact short: v = 0, every port reflects a_k = −b_k.
    Short,
    /// A resistor to return, in milliohms (> 0).
    Resistor { milliohm: u32 },
}

/// A scattering junction.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum Junction {
    /// A node joining any number (>= 1) of line ends in parallel, with a shunt one-port.
    Node { shunt: Shunt },
    /// A resistor in series between exactly two line ends (series two-port adaptor).
    Series { milliohm: u32 },
}

/// What drives the network.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum Drive {
    /// No drive: the input stream is ignored, the output is zero.
    None,
    /// A test source at a node: EMF from the input stream behind `milliohm` (> 0).
    /// The step output is the node voltage there.
    Source { junction: JunctionId, milliohm: u32 },
    /// A rig port at a node with exactly one line end. The input is the measured pin voltage,
    /// the output is the DAC drive 2·b; `latency` (samples, <= [`MAX_RIG_LATENCY`]) is the
    /// rig's ADC-to-DAC latency, taken out of the attached line's round trip.
    Rig { junction: JunctionId, latency: u16 },
}

/// The largest rig latency the core can take out of a line, in samples.
pub const MAX_RIG_LATENCY: u16 = 63;

/// What a reactive one-port stores.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum ElementKind {
    /// A capacitor: port resistance T/(2C), b[n] = a[n − 1] (bilinear transform).
    Capacitor,
    /// An inductor: port resistance 2L/T, b[n] = −a[n − 1] (bilinear transform).
    Inductor,
}

/// A reactive one-port from a node to return, optionally in series with a resistor
/// (for example a receiver's input capacitance, or an AC termination R + C).
///
/// Wave model (bilinear transform, Fettweis): the reactance is a port of resistance
/// `port_milliohm` whose reflected wave is its incident wave one sample earlier (negated for
/// an inductor). With a series resistor R_s the node sees one port of resistance
/// R_p + R_s, and the reactance receives a_c = b + μ·(a − b) with μ = R_p/(R_p + R_s).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Element {
    /// The node it hangs from.
    pub junction: JunctionId,
    pub kind: ElementKind,
    /// Port resistance of the reactance, milliohms (> 0): T/(2C) or 2L/T.
    pub port_milliohm: u32,
    /// Resistor in series with it, milliohms (0: none).
    pub series_milliohm: u32,
}

/// The most first-order sections a line's loss filter may have.
pub const MAX_LOSS_SECTIONS: usize = 6;

/// Frequency-dependent loss of one line: a cascade of first-order shelving sections applied
/// to every wave arriving at either end (the pure delay stays in the line).
///
/// Section k: H_k(z) = g_k·(1 − b_k·z⁻¹)/(1 − a_k·z⁻¹) with −1 < b_k < a_k < 1, a_k > 0,
/// given in Q30 (`zeros[k]` = b_k·2^30, `poles[k]` = a_k·2^30). The core computes
/// g_k = (1 − a_k)/(1 − b_k) rounded down, so every section has |H_k| <= H_k(1) <= 1 at
/// every frequency (its magnitude falls monotonically from DC to Nyquist) after quantization.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LineLoss {
    pub line: LineId,
    /// Sections in use (1..=MAX_LOSS_SECTIONS).
    pub sections: u8,
    pub poles: [u32; MAX_LOSS_SECTIONS],
    pub zeros: [i32; MAX_LOSS_SECTIONS],
}

/// Which end of a line.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Side {
    A,
    B,
}

/// What a probe reads at a line end.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum ProbeKind {
    /// The voltage at the line end, v = a + b (the node voltage there).
    Voltage,
    /// The current into the line at that end, i = (a − b)/Z0; the raw read-out is a − b.
    Current,
}

/// A probe on one line end.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Probe {
    pub kind: ProbeKind,
    pub line: LineId,
    pub side: Side,
}

/// The largest number of probes a solver reads out.
pub const MAX_PROBES: usize = 8;

/// A whole network, borrowed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Network<'a> {
    pub lines: &'a [Line],
    pub junctions: &'a [Junction],
    /// Reactive one-ports at nodes.
    pub elements: &'a [Element],
    /// Loss filters of lossy lines (at most one per line).
    pub losses: &'a [LineLoss],
    pub drive: Drive,
    pub probes: &'a [Probe],
    /// Waves carry `io_shift` more fractional bits than I/O codes: wave = code · 2^io_shift.
    pub io_shift: u8,
    /// Volts per I/O code (host convenience only; never used on the per-sample path).
    pub volts_per_code: f32,
}

//! The network description a solver is built from: lines measured in samples, junctions,
//! one-port shunts, the drive and the probes, all in integer units (milliohms, samples).
//!
//! A [`Network`] borrows its tables, so firmware can keep one in a `static` (the host's Rust
//! source output) and the image reader can hand out one that borrows its decoded storage.
//! The wave conventions are the crate's (see the crate documentation): at every line end
//! v = a + b and i = (a − b)/Z0, with a the wave entering the line.

use serde::{Deserialize, Serialize};

/// Index of a junction in [`Network::junctions`].
pub type JunctionId = u16;
/// Index of a line in [`Network::lines`].
pub type LineId = u16;

/// A lossless transmission line: characteristic impedance and one-way delay in samples.
///
/// In each direction the wave leaving one end arrives unchanged at the other end `delay`
/// samples later: `b_far[n] = a_near[n − delay]` (method of characteristics).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
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
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Shunt {
    /// Nothing connected: no shunt term (an end alone there reflects with +1).
    Open,
    /// Exact short: v = 0, every port reflects a_k = −b_k.
    Short,
    /// A resistor to return, in milliohms (> 0).
    Resistor {
        /// Resistance to return, milliohms (> 0).
        milliohm: u32,
    },
}

/// A scattering junction.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Junction {
    /// A node joining any number (>= 1) of line ends in parallel, with a shunt one-port.
    Node {
        /// The one-port from the node to return.
        shunt: Shunt,
    },
    /// A resistor in series between exactly two line ends (series two-port adaptor).
    Series {
        /// The series resistor, milliohms (> 0).
        milliohm: u32,
    },
    /// An inductor (a choke) in series between exactly two line ends of equal impedance,
    /// with its winding resistance: port resistance 2L/T (bilinear transform, `b[n] =
    /// −a[n−1]`) and `milliohm` in series. Three-port series adaptor: x = b1 − b2 − b_L,
    /// a1 = b1 − c·x, a2 = b2 + c·x, a_L = b_L + c_L·x with c = 2Z/ΣR, c_L = 2R_L/ΣR,
    /// ΣR = 2Z + R_L + R. The core keeps the inductor's state scaled to voltage,
    /// s = −(2Z/R_L)·b_L, so that y = c·x = c·(b1 − b2) + (R_L/ΣR)·s and s' = 2y − s.
    SeriesInductor {
        /// Port resistance of the inductor, 2L/T, milliohms (> 0).
        port_milliohm: u32,
        /// Winding resistance in series, milliohms (0: none).
        milliohm: u32,
    },
    /// A series branch, resistor R and inductor L (either may be 0), between two **nodes**
    /// [`Junction::Node`] `a` and `b`, each joining any number of line ends with its own
    /// shunt, elements and drive. The branch itself holds no line end. Current i flows from
    /// `a` through the branch into `b`: v_a − v_b = R·i + v_L.
    ///
    /// Solved exactly as a wave-digital tree (Fettweis 1986): each node is a parallel
    /// adaptor with one reflection-free link port of conductance G (its whole weight, shunt
    /// and source included), the branch a series adaptor (root) of the two links, the
    /// inductor (port resistance R_L = 2L/T, bilinear transform, `b_L[n] = −a_L[n−1]`) and R.
    /// With w = v_open/2 of each node: x = w_a − w_b − b_L, i = 2x/(1/G_a + 1/G_b + R_L + R),
    /// v_a = w_a + r_a with r_a = w_a − i/G_a, v_b = w_b + r_b with r_b = w_b + i/G_b.
    /// A node takes part in at most one branch.
    Branch {
        /// The node the current leaves.
        a: JunctionId,
        /// The node the current enters.
        b: JunctionId,
        /// Port resistance of the inductor, 2L/T, milliohms (0: no inductor).
        port_milliohm: u32,
        /// Series resistance, milliohms (0: none).
        milliohm: u32,
    },
}

/// What drives the network.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum Drive {
    /// No drive: the input stream is ignored, the output is zero.
    None,
    /// A test source at a node: EMF from the input stream behind `milliohm` (> 0).
    /// The step output is the node voltage there.
    Source {
        /// The node the source drives.
        junction: JunctionId,
        /// Source resistance, milliohms (> 0).
        milliohm: u32,
    },
    /// A rig port at a node with exactly one line end. The input is the measured pin voltage,
    /// the output is the DAC drive 2·b; `latency` (samples, <= [`MAX_RIG_LATENCY`]) is the
    /// rig's ADC-to-DAC latency, taken out of the attached line's round trip.
    Rig {
        /// The rig port node.
        junction: JunctionId,
        /// The rig's ADC-to-DAC latency, samples.
        latency: u16,
    },
}

/// The largest rig latency the core can take out of a line, in samples.
pub const MAX_RIG_LATENCY: u16 = 63;

/// What a reactive one-port stores.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum ElementKind {
    /// A capacitor: port resistance T/(2C), `b[n] = a[n − 1]` (bilinear transform).
    Capacitor,
    /// An inductor: port resistance 2L/T, `b[n] = −a[n − 1]` (bilinear transform).
    Inductor,
}

/// A reactive one-port from a node to return, optionally in series with a resistor
/// (for example a receiver's input capacitance, or an AC termination R + C).
///
/// Wave model (bilinear transform, Fettweis): the reactance is a port of resistance
/// `port_milliohm` whose reflected wave is its incident wave one sample earlier (negated for
/// an inductor). With a series resistor R_s the node sees one port of resistance
/// R_p + R_s, and the reactance receives a_c = b + μ·(a − b) with μ = R_p/(R_p + R_s).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Element {
    /// The node it hangs from.
    pub junction: JunctionId,
    /// Capacitor or inductor.
    pub kind: ElementKind,
    /// Port resistance of the reactance, milliohms (> 0): T/(2C) or 2L/T.
    pub port_milliohm: u32,
    /// Resistor in series with it, milliohms (0: none).
    pub series_milliohm: u32,
}

/// The most first-order sections a line's loss filter may have.
pub const MAX_LOSS_SECTIONS: usize = 6;

/// A first-order Thiran allpass that adds a fraction of a sample to a line's delay
/// (Laakso, Välimäki, Karjalainen, Laine, "Splitting the unit delay", IEEE Signal Processing
/// Magazine 13(1), 1996): H(z) = (a + z⁻¹)/(1 + a·z⁻¹) with a = (1 − d)/(1 + d) delays by d
/// samples at low frequency, d in [0.5, 1.5) (then |a| <= 1/3: the pole −a stays well inside
/// the unit circle).
///
/// Realised as the normalised (Gray–Markel) lattice, a lossless two-port with state s:
/// y = a·x + c·s, s' = c·x − a·s, c = sqrt(1 − a²) (then Y/X = (a + z⁻¹)/(1 + a·z⁻¹)).
/// Both coefficients are given in Q30 and quantized toward zero by the core; `load` checks
/// |a_q| <= 1/2 and a_q² + c_q² <= 1 from the integers (see `configure/passive.rs`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Allpass {
    /// a·2^30 (|a| <= 1/2).
    pub a: i32,
    /// c·2^30 (0 < c <= 1, a² + c² <= 1).
    pub c: u32,
}

/// Frequency-dependent loss of one line: a cascade of first-order shelving sections applied
/// to every wave arriving at either end (the pure delay stays in the line), followed by an
/// optional fractional-delay [`Allpass`] (an LTI filter commutes with the delay, so filtering
/// at the arrival is the same line). A lossless line with a fractional delay has
/// `sections` = 0 and an allpass.
///
/// Section k: H_k(z) = g_k·(1 − b_k·z⁻¹)/(1 − a_k·z⁻¹) with −1 < b_k < a_k < 1, a_k > 0,
/// given in Q30 (`zeros[k]` = b_k·2^30, `poles[k]` = a_k·2^30). The core computes
/// g_k = (1 − a_k)/(1 − b_k) rounded down, so every section has |H_k| <= H_k(1) <= 1 at
/// every frequency (its magnitude falls monotonically from DC to Nyquist) after quantization.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct LineLoss {
    /// The lossy line.
    pub line: LineId,
    /// Sections in use (0..=MAX_LOSS_SECTIONS; 0 only with an allpass).
    pub sections: u8,
    /// Pole a_k of each section in Q30 (a_k·2^30, 0 < a_k < 1).
    pub poles: [u32; MAX_LOSS_SECTIONS],
    /// Zero b_k of each section in Q30 (b_k·2^30, −1 < b_k < a_k).
    pub zeros: [i32; MAX_LOSS_SECTIONS],
    /// The fractional part of the line's delay, if any: the wave arriving at either end
    /// passes this allpass after the loss sections.
    pub allpass: Option<Allpass>,
    /// The frequency-dependent characteristic impedance Zc(s) of the lossy line, if any: the
    /// same network at both ends ([`ZcNetwork`]). The line's `z_milliohm` is then the port
    /// resistance Z_p the junctions see.
    pub zc: Option<ZcNetwork>,
}

/// The most parallel-RC sections a line end's [`ZcNetwork`] may have.
pub const MAX_ZC_SECTIONS: usize = 4;

/// A lossy line's characteristic impedance Zc(s) ≈ Z_inf + Σ_i R_i/(1 + s·R_i·C_i) (Foster
/// form, J. Marti 1982), realised at each end of the line in node-wave form
/// (`docs/zc-model.md`).
///
/// Section i is a bilinear wave-digital parallel R_i‖C_i with port resistance
/// r_i = R_i ∥ T/(2C_i), reflection-free: it emits k_i·s_i, k_i = r_i/(T/(2C_i)), s_i its
/// capacitor's state (a wave, like every state of the core). The junction at the end sees
/// one port of resistance Z_p = Z_inf + Σ r_i (the line's `z_milliohm`) with incident wave
///
///   b_p = b + c,   c = Σ_i k_i·s_i,
///
/// b the wave arriving from the line (after its loss sections and allpass). From the
/// junction's outgoing wave a_p, with d = a_p − b_p = Z_p·i (i the current into the end):
///
///   a = a_p + c   (the wave sent into the line: a = v − b, v = a_p + b_p the node voltage)
///   s_i' = (2·k_i − 1)·s_i + ρ_i·d,   ρ_i = r_i/Z_p
///
/// At DC (loss filter gain 1, same network at both ends) the line is a wire whatever its
/// network, so the DC point follows Ohm's law. Coefficients in Q30, 0 < k_i < 1, 0 < ρ_i,
/// Σ ρ_i < 1.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ZcNetwork {
    /// Sections in use (1..=MAX_ZC_SECTIONS).
    pub sections: u8,
    /// k_i·2^30 per section (0 < k_i < 1).
    pub k: [u32; MAX_ZC_SECTIONS],
    /// ρ_i·2^30 = (r_i/Z_p)·2^30 per section (ρ_i > 0, Σ ρ_i < 1).
    pub rho: [u32; MAX_ZC_SECTIONS],
}

/// Which end of a line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Side {
    /// End A (the line's `a` junction).
    A,
    /// End B (the line's `b` junction).
    B,
}

/// What a probe reads at a line end.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum ProbeKind {
    /// The voltage at the line end, v = a + b (the node voltage there).
    Voltage,
    /// The current into the line at that end, i = (a − b)/Z0; the raw read-out is a − b.
    Current,
}

/// A probe on one line end.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Probe {
    /// Voltage or current.
    pub kind: ProbeKind,
    /// The line it reads.
    pub line: LineId,
    /// Which end of that line.
    pub side: Side,
}

/// The largest number of probes a solver reads out.
pub const MAX_PROBES: usize = 8;

/// A whole network, borrowed.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Network<'a> {
    /// Lines (delays and impedances).
    pub lines: &'a [Line],
    /// Junctions: nodes and series junctions, named by index from the lines.
    pub junctions: &'a [Junction],
    /// Reactive one-ports at nodes.
    pub elements: &'a [Element],
    /// Arrival filters (loss sections, fractional delay) of lines (at most one per line).
    pub losses: &'a [LineLoss],
    /// The drive.
    pub drive: Drive,
    /// Probes read out each sample (at most [`MAX_PROBES`]).
    pub probes: &'a [Probe],
    /// Waves carry `io_shift` more fractional bits than I/O codes: wave = code · 2^io_shift.
    pub io_shift: u8,
    /// Volts per I/O code (host convenience only; never used on the per-sample path).
    pub volts_per_code: f32,
}

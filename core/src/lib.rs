//! # tidewire-core
//!
//! The real-time half of tidewire: a `no_std`, allocation-free, fixed-point solver that
//! emulates a cable plant sample by sample, so that a device under test sees the reflections
//! and the settling of real copper.
//!
//! ## Model and wave conventions
//! A plant is a network of lossless **lines** (characteristic impedance Z0, one-way delay
//! of D whole samples) joined at **junctions**. At every line end
//!
//! * v = a + b, i = (a − b)/Z0,
//!
//! with `a` the wave entering the line and `b` the wave leaving it toward the junction;
//! current i flows into the line. A line delays each direction: `b_far[n] = a_near[n − D]`
//! (method of characteristics: v + Z0·i leaving one end arrives unchanged D samples later).
//!
//! * A **node** joins ports k (conductance G_k = 1/Z_k) in parallel, with a shunt
//!   conductance G_s and optionally a test source (EMF E behind R_s):
//!   v = (Σ 2·G_k·b_k + E/R_s) / (Σ G_k + G_s + 1/R_s), and every port takes a_k = v − b_k.
//!   A short has v = 0, a_k = −b_k exactly; an open end alone reflects a = b.
//! * A **series junction** joins two line ends of equal impedance through a resistor R:
//!   I = 2(b1 − b2)/(Z1 + Z2 + R), a1 = b1 − Z1·I, a2 = b2 + Z2·I.
//!   This lets the host lump a cable's conductor resistance so DC obeys Ohm's law; a
//!   series inductor (a choke) is the same junction with a bilinear inductor port.
//! * **Elements** (bilinear capacitors and inductors, optionally behind a resistor) hang
//!   from nodes; **loss filters** (attenuating first-order sections) act on the waves
//!   arriving at the ends of lossy lines.
//! * A **fractional delay** adds d samples (0.5 <= d < 1.5 as the host compiles it) to a
//!   line of D whole samples: the wave arriving at either end passes a first-order Thiran
//!   allpass H(z) = (a + z⁻¹)/(1 + a·z⁻¹), a = (1 − d)/(1 + d) (Laakso et al. 1996), whose
//!   group delay at low frequency is d. It runs as the normalised (Gray–Markel) lattice,
//!   a lossless two-port between the arriving wave x and a state s:
//!   y = a·x + c·s, s' = c·x − a·s, c = sqrt(1 − a²).
//! * A **Zc(s) network** ([`ZcNetwork`]) gives a lossy line the frequency-dependent
//!   characteristic impedance of a real cable, Zc(s) ≈ Z_inf + Σ R_i/(1 + s·R_i·C_i) (J. Marti
//!   1982), at both of its ends in node-wave form: the junction sees the port Z_p with
//!   incident wave b_p = b + c, c = Σ k_i·s_i, and the line gets a = a_p + c; each section's
//!   state follows s_i' = (2k_i − 1)·s_i + ρ_i·(a_p − b_p). Probes read the junction's
//!   waves (v = a_p + b_p). See `docs/zc-model.md`.
//! * A **rig port** is a node with one line end where a real device is attached through a
//!   physical resistor R_ref = Z0 to a DAC: the core reads the pin voltage v, computes
//!   a = v − b and drives the DAC at 2·b. The rig's ADC-to-DAC latency L is taken out of
//!   the first line's return direction (whose delay must be at least L + 1 samples), so
//!   waves inside the plant keep their physical timing against the pin's ADC samples.
//!
//! ## Fixed point
//! Two [`Profile`]s share one generic [`Solver`]: [`Wide`] (i32 waves, i64 sums; Cortex-M4
//! class) and [`Narrow`] (i16 waves, i32 sums, no 64-bit products; Cortex-M0 class). I/O is
//! i16 codes; waves carry `io_shift` more fractional bits (wave = code·2^io_shift).
//!
//! Every line has one integer weight g = floor(2^c/Z0) used at both of its ends. At a node
//! the sum N = 2·Σ g_k·b_k + g_src·E is exact in double width; the exact node voltage is
//! v = N/T (T the node's total weight). A [`Wide`] node does not divide exactly: it forms
//! q = floor(|N|·r/2^p) from a reciprocal r rounded so that r/2^p < 1/T strictly (one split
//! product, no correction step), which gives 0 <= q < |v| whenever N != 0, and it uses the
//! node voltage v' = sign(N)·(q + ε), 0 < ε <= |v| − q (v' = 0 when N = 0): strictly between
//! 0 and v, never an integer. A [`Narrow`] node divides exactly (v' = v: the floor and the
//! remainder test from two correction steps), for DC accuracy with its 16-bit reciprocal (the
//! measurement is at `profile/scalar.rs`, `floor_div32`). Every outgoing wave is
//! a_k = v' − b_k truncated toward zero, then saturated (only floor(v') and whether v' has a
//! fraction are needed).
//!
//! **Passivity, every topology.** Count the shunt as a port of weight g_sh with incident
//! wave 0 and the source as one of weight g_src with incident wave E/2; then for every v'
//! between 0 and v
//!
//! * Σ_j g_j·(v' − b_j)² = Σ_j g_j·b_j² − T·v'·(v − v') <= Σ_j g_j·b_j²,
//!
//! and truncating each line's outgoing wave toward zero (|a_k| <= |v' − b_k|) only lowers
//! the left side. So with E = 0 the stored energy Σ_lines g·(wave²) cannot grow at any
//! junction, loops included (the stored energy is the sum of the lines' energies and every
//! junction can only lower it).
//!
//! **Zero input decays to exactly 0.** A [`Wide`] node with N != 0 has T·v'·(v − v') > 0,
//! so it strictly lowers the energy; it is lossless only where N = 0, and there it sends
//! a_k = −b_k, exactly what the exact node voltage (v = 0) gives. A [`Narrow`] node is the
//! exact one, lossless only where no truncation bites. With zero input the state
//! space is finite and the energy never grows, so every run ends in a cycle, and on a cycle
//! the energy comes back to its value, so no step on it lowers it: every node has N = 0 and
//! every other junction acts exactly (a truncation that bites lowers the energy strictly).
//! The cycle is then also a run of the exact network with every node voltage 0 — which a
//! plant in which every path has loss does not
//! have except at rest. So such a plant reaches exactly 0 in every wave and every I/O code
//! (DAC output, probe codes): there is no residue below the I/O resolution to bound. How
//! fast is bounded from the exact network's own decay (`core/tests/passivity.rs`,
//! `decay_bound`: both profiles, trees and loops, every element kind, events while running).
//!
//! **Accuracy.** In [`Wide`] q is at most 3 below |v| (`core/tests/oracle.rs`), so a node's
//! outgoing waves lie at most 3 LSB (of 2^-io_shift code each) toward zero from the exact
//! ones; where the exact value is an integer (a matched source launches exactly E/2) the node
//! sends one LSB less — the price of the missing correction steps. A lone open line end (one
//! port, no source, no shunt) runs as an open end and reflects exactly b in both profiles.
//!
//! Series junctions (equal impedances), series inductors and
//! reactive elements follow the same rule: exact double-width value,
//! truncated toward zero once, with coefficients rounded so that the quantized element is
//! itself passive (their modules state the argument).
//!
//! **Loss sections** H(z) = (g − gb·z⁻¹)/(1 − a·z⁻¹) are DC-exact and carry their
//! quantization residue. Their integers satisfy g − gb = 1 − a exactly
//! (`quantize::loss_section`, checked at load), so H(1) = 1 however few LSB the pole a sits
//! below one: the DC operating point is Ohm's law's in both profiles (rounding g down and gb
//! up, as before, cost about 10 % of DC gain per section where 1 − a was a few LSB at 14
//! bits). With gb <= a the zero gb/g is at or below the pole and |H| falls monotonically from
//! 1 (`configure/passive.rs`). Truncating y toward zero leaves, under a constant x, a steady
//! state anywhere up to 1/(1 − a) LSB below x (the first-order recursion's dead band:
//! y = trunc((1 − a)·x + a·y) holds whenever (1 − a)·(x − y) < 1), hundreds of wave LSB at 14
//! bits. The section instead floors y − x plus the previous residue and keeps the new residue
//! (first-order error feedback): its quantization error reaches the output through
//! (1 − z⁻¹)/(1 − a·z⁻¹), zero at DC, so it settles on a constant x exactly, stays within a
//! few LSB of its exact response on the slow tail (`core/tests/loss_dc.rs`), and with every
//! wave zero it outputs zero (the residue is below one LSB and makes no wave). The argument
//! is next to the arithmetic (`profile/arith.rs`). Unlike the junctions, a section's output
//! may exceed its exact value by less than one LSB in a sample (it is not magnitude
//! truncation); its errors telescope (e_n = r_(n−1) − r_n), so over any run they sum to less
//! than one LSB. The property tests' zero-input decay and passive bound
//! (`core/tests/passivity.rs`) and constant-drive settling (`core/tests/settle.rs`) run with
//! these sections.
//!
//! **Zc(s) networks: what is and is not proven.** A Zc end shifts both of its waves by the same
//! c, so it is not a lossless adaptor between constant port resistances, and the energy
//! argument above does not cover it. Its arithmetic follows the rule all the same (c and each
//! s_i' one exact sum, truncated toward zero, saturated; `core/tests/oracle.rs`), and with no
//! current (an open or broken end: a_p = b_p) each state shrinks strictly, |s_i'| < |s_i|
//! (|2k_i − 1| < 1). What is passive or not is each line with its two ends: `load` computes
//! the least passivity margin of that two-port from the integers (quantized loss sections,
//! allpass, whole delay, quantized Zc coefficients: `configure::zc_passivity_margin`) over a
//! frequency grid and refuses a line whose margin is below 0 ([`BuildError::ZcNotPassive`]).
//! This is a check on a grid of the quantized linear model, not a proof for the truncated
//! arithmetic: zero-input decay to exactly 0 and the passive bound are measured over random
//! trees and loops of accepted plants (`core/tests/zc.rs`), not derived.
//!
//! **Constant drive.** Around a non-zero working point every outgoing wave of a node has one
//! sign, so truncation toward zero rounds them all the same way; for small deviations the node
//! then acts as if only v were quantized, and in a lightly damped plant a deviation of a few
//! wave LSB can circulate round a loop without decaying (truncation's dead band). Every
//! junction runs its plain rule whether driven or not; instead both profiles keep fraction
//! bits below the I/O code ([`Profile::IO_SHIFT`]: 12 in [`Wide`], 4 in [`Narrow`]), so such
//! a deviation stays within a code or two of every output: `core/tests/settle.rs` states the
//! band measured over random trees and loops of every element kind, and `tidewire verify`
//! measures it per plant (its working-point check).
//!
//! ## Real-time guarantees
//! `step` does O(ports + junctions) work, independent of the delays (ring buffers, no data
//! shifting), no division, no floating point, no allocation, and cannot panic once
//! [`Solver::load`] has accepted the network. Coefficients are computed by the core itself,
//! with integer arithmetic, in `load` and in [`Solver::set_shunt`]; the one floating-point
//! computation is `load`'s passivity margin of lines with Zc(s) networks (`libm`, off the
//! per-sample path).
#![no_std]
#![forbid(unsafe_code)]
// Panics are ruled out by the compiler as well as by the firmware's link check: no indexing
// or slicing that can fail, no arithmetic that can overflow, divide by zero or shift too far
// (every operation is checked, wrapping with its range argued, or saturating). Unit tests may
// index.
#![cfg_attr(not(test), deny(clippy::indexing_slicing, clippy::arithmetic_side_effects))]
#![deny(missing_docs)]

pub mod configure;
pub mod emitted;
pub mod error;
pub mod image;
pub mod network;
pub mod owned;
pub mod plant_step;
pub mod profile;
pub mod quantize;
pub mod solver;
#[cfg(feature = "defmt")]
mod solver_format;

pub use error::{BuildError, ConfigError, Table};
pub use network::{
    Allpass, Drive, Element, ElementKind, Junction, JunctionId, Line, LineId, LineLoss, Network, Probe, ProbeKind,
    Shunt, Side, ZcNetwork, MAX_LOSS_SECTIONS, MAX_PROBES, MAX_RIG_LATENCY, MAX_ZC_SECTIONS,
};
pub use owned::{HeaplessNetwork, OwnedNetwork};
pub use plant_step::PlantStep;
pub use profile::{Narrow, Profile, Wide};
pub use solver::Solver;

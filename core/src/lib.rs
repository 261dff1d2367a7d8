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
//! the sum 2·Σ g_k·b_k + g_src·E is exact in double width; the quotient by the node's total
//! weight is formed from a reciprocal rounded down and made exact by two correction steps
//! (floor and "remainder nonzero"), and every outgoing wave is its exact value
//! a_k = v_exact − b_k truncated toward zero, then saturated. So |a_k,q| <= |a_k,exact| port
//! by port: with E = 0 the stored energy Σ_lines g·(wave²) cannot grow at any junction (the
//! exact node is passive), for every topology, loops included, and wherever the exact value is
//! not an integer the truncation removes energy — a plant in which every path has loss decays
//! to exactly zero, with no limit cycle. Series junctions (equal impedances), series inductors,
//! reactive elements and loss sections follow the same rule: exact double-width value,
//! truncated toward zero once, with coefficients rounded so that the quantized element is
//! itself passive (their modules state the argument). The fractional-delay lattice's
//! matrix [[a, c], [c, −a]] has norm sqrt(a² + c²); the core truncates a and c toward zero
//! (F = `LOSS_FRAC` bits) and `load` checks a_q² + c_q² <= 2^(2F) from the integers, so the exact outputs have
//! y² + s'² <= x² + s², and truncating each toward zero (then saturating) only lowers them:
//! y_q² + s'_q² <= x² + s², the section's outgoing plus stored energy never exceeds its
//! incoming plus stored energy (`configure/passive.rs`). Rounding to nearest, or rounding the
//! node voltage alone, does not have this property: a lossy node would then reflect a
//! one-LSB wave losslessly, and the property tests find such limit cycles.
//!
//! **Constant drive.** Around a non-zero working point every outgoing wave of a node has one
//! sign, so truncation toward zero rounds them all the same way; for small deviations the node
//! then acts as if only v were quantized, and in a lightly damped plant the deviations wander
//! by tens of LSB without ever settling (the packaging-line example: 40 codes in the narrow
//! profile). So at nodes with a shunt, while the drive is on (E != 0), a port whose previous
//! outgoing wave is the floor or the ceiling of its exact value, and no larger than |v|, keeps
//! it (the hold rule, [`Profile::node_scatter_held`]): a deviation below one LSB is absorbed
//! and the plant locks onto a fixed point. Holding adds less than 2·g_k·|v| of energy per
//! port; the shunt dissipates g_sh·v², and the rule applies only where |v| >= 2·G/g_sh
//! ([`profile::hold_threshold`]), so the node stays passive. With E = 0 the plain rule runs,
//! so the zero-input argument above holds unchanged. The hold does not reach loops through
//! series resistors, impedance steps at open nodes or reactances' adaptors: there the narrow
//! profile can still keep a small oscillation (`core/tests/settle.rs` states the measured
//! band).
//!
//! ## Real-time guarantees
//! `step` does O(ports + junctions) work, independent of the delays (ring buffers, no data
//! shifting), no division, no floating point, no allocation, and cannot panic once
//! [`Solver::load`] has accepted the network. Coefficients are computed by the core itself,
//! with integer arithmetic, in `load` and in [`Solver::set_shunt`].
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
    Shunt, Side, MAX_LOSS_SECTIONS, MAX_PROBES, MAX_RIG_LATENCY,
};
pub use owned::{HeaplessNetwork, OwnedNetwork};
pub use plant_step::PlantStep;
pub use profile::{Narrow, Profile, Wide};
pub use solver::Solver;

//! The parts a rig can run on: clock, memory, and the measured firmware figures that say how
//! fast a plant runs there. This table is the one place these part figures live; the
//! instructions per port update are the measured cost models of `analysis::budget::PARTS`
//! (from `cargo run -p xtask -- firmware`), not copies of them.

use crate::analysis::budget::{instructions_per_sample, PARTS as COST_CLASSES, SPECIALISED_OFFSET};
use crate::compile::ProfileKind;

/// Which form of the step a budget assumes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Form {
    /// The data-driven solver: loads a plant image at run time (what a rig runs).
    Generic,
    /// The plant-specialised solver `tidewire compile --rust` emits: one fixed plant built in.
    Specialised,
}

impl Form {
    /// Name as in the figures file.
    pub fn name(self) -> &'static str {
        match self {
            Form::Generic => "generic",
            Form::Specialised => "specialised",
        }
    }
}

/// One part.
pub struct RigPart {
    /// Name on the command line.
    pub name: &'static str,
    pub description: &'static str,
    /// Core clock, Hz (one instruction per cycle is assumed: an upper bound on the rate).
    pub clock_hz: f64,
    /// RAM and flash for the rig, bytes.
    pub ram: usize,
    pub flash: usize,
    /// Number profile the part runs.
    pub profile: ProfileKind,
    /// Index into `analysis::budget::PARTS` (the measured cost model).
    cost: usize,
    /// Flash used by the rig firmware for this part (text + data of the release build), or
    /// None where no rig firmware exists for the part.
    pub firmware_flash: Option<usize>,
    /// Where that figure comes from.
    pub firmware_source: &'static str,
    /// Whether the part's firmware builds the core with its `zc-check` feature (the load-time
    /// passivity check of Zc(s) networks, soft-float f64 code): without it `load` refuses
    /// every plant that carries a network.
    pub zc_check: bool,
}

impl RigPart {
    /// Instructions per sample for a network of `ports` line ends in the step's `form` (the
    /// measured cost model of the part's class and form: a least-squares line through the
    /// firmware figures; the junctions are folded into the per-port cost there).
    pub fn instructions(&self, ports: usize, _junctions: usize, form: Form) -> Option<f64> {
        let k = match form {
            Form::Generic => self.cost,
            Form::Specialised => self.cost + SPECIALISED_OFFSET,
        };
        COST_CLASSES.get(k).and_then(|c| instructions_per_sample(c, ports))
    }
}

/// The parts `tidewire rate --part` knows.
pub const RIG_PARTS: [RigPart; 3] = [
    RigPart {
        name: "m0",
        description: "emulated Cortex-M0 (QEMU microbit, nRF51 at 16 MHz), narrow profile",
        clock_hz: 16e6,
        ram: 16 * 1024,
        flash: 256 * 1024,
        profile: ProfileKind::Narrow,
        cost: 0,
        firmware_flash: None,
        firmware_source: "no rig firmware for this part",
        // examples/firmware builds the M0 without it: its flash cannot hold the soft-float code.
        zc_check: false,
    },
    RigPart {
        name: "m4",
        description: "emulated Cortex-M4 (QEMU mps2-an386 at 25 MHz), wide profile",
        clock_hz: 25e6,
        ram: 4 * 1024 * 1024,
        flash: 4 * 1024 * 1024,
        profile: ProfileKind::Wide,
        cost: 1,
        // llvm-size of examples/rig (release, 2026-12-02): text 63 964 + data 151 992 bytes.
        firmware_flash: Some(63_964 + 151_992),
        firmware_source: "llvm-size examples/rig/target/thumbv7em-none-eabihf/release/tidewire-rig",
        zc_check: true,
    },
    RigPart {
        name: "stm32f407",
        description: "STM32F407 Discovery (Cortex-M4F at 168 MHz), wide profile",
        clock_hz: 168e6,
        ram: 128 * 1024,
        flash: 1024 * 1024,
        profile: ProfileKind::Wide,
        cost: 1,
        // llvm-size of examples/rig-board (release, 2026-12-02): text 62 128 + data 70 072 bytes.
        firmware_flash: Some(62_128 + 70_072),
        firmware_source: "llvm-size examples/rig-board/target/thumbv7em-none-eabihf/release/tidewire-rig-board",
        zc_check: true,
    },
];

/// Find a part by name.
pub fn find(name: &str) -> Option<&'static RigPart> {
    RIG_PARTS.iter().find(|p| p.name.eq_ignore_ascii_case(name))
}

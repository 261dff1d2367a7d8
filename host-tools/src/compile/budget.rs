//! Sample budget on microcontrollers, from measured instruction counts.
//!
//! The counts come from `cargo run -p xtask -- firmware` (QEMU with `-icount shift=0`,
//! one instruction per virtual nanosecond; see docs/firmware.md). Instructions per sample
//! ≈ PER_PORT · ports + PER_JUNCTION · junctions + BASE; at one instruction per cycle a
//! part at clock f sustains f / instructions samples per second (an upper bound: wait
//! states and the rig's own I/O come on top).

/// A part class: name, clock the budget is stated at, and its measured cost model
/// (instructions per port update, per junction, per sample), or `None` if not measured.
pub struct Part {
    pub name: &'static str,
    pub clock_hz: f64,
    pub cost: Option<(f64, f64, f64)>,
}

/// The two part classes the core targets.
pub const PARTS: [Part; 2] = [
    Part { name: "Cortex-M0 class (narrow profile)", clock_hz: 48e6, cost: None },
    Part { name: "Cortex-M4 class (wide profile)", clock_hz: 168e6, cost: None },
];

/// One line per part: instructions per sample and the largest sample rate.
pub fn budgets(ports: usize, junctions: usize) -> Vec<String> {
    PARTS
        .iter()
        .map(|p| match p.cost {
            Some((per_port, per_junction, base)) => {
                let instr = per_port * ports as f64 + per_junction * junctions as f64 + base;
                format!(
                    "{} at {:.0} MHz: about {:.0} instructions per sample, at most {:.2} MS/s",
                    p.name,
                    p.clock_hz / 1e6,
                    instr,
                    p.clock_hz / instr / 1e6
                )
            }
            None => format!("{} at {:.0} MHz: not measured yet", p.name, p.clock_hz / 1e6),
        })
        .collect()
}

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

/// The two part classes the core targets. Costs: straight-line fits through the measured
/// instructions per sample of the xtask's bus plants (2, 8, 32 ports; about one junction per
/// two ports, so the junction cost is folded into the per-port figure), from
/// `cargo run -p xtask -- firmware` on 2026-12-02: M0 narrow 415.0 / 1098.5 / 3610.0
/// instructions at 2 / 8 / 32 ports, M4 wide 425 / 1095 / 3591.
pub const PARTS: [Part; 2] = [
    Part { name: "Cortex-M0 class (narrow profile)", clock_hz: 48e6, cost: Some((104.6, 0.0, 261.5)) },
    Part { name: "Cortex-M4 class (wide profile)", clock_hz: 168e6, cost: Some((104.0, 0.0, 263.0)) },
];

/// One line per part: instructions per sample, the largest sample rate, and how that
/// compares with the plant's own sample rate `fs`.
pub fn budgets(ports: usize, junctions: usize, fs: f64) -> Vec<String> {
    PARTS
        .iter()
        .map(|p| match p.cost {
            Some((per_port, per_junction, base)) => {
                let instr = per_port * ports as f64 + per_junction * junctions as f64 + base;
                let rate = p.clock_hz / instr;
                let verdict = if rate >= fs {
                    "real time".to_string()
                } else {
                    format!("{:.0}x slower than real time at this plant's rate", fs / rate)
                };
                format!(
                    "{} at {:.0} MHz: about {:.0} instructions per sample, at most {:.1} kS/s ({verdict})",
                    p.name,
                    p.clock_hz / 1e6,
                    instr,
                    rate / 1e3
                )
            }
            None => format!("{} at {:.0} MHz: not measured yet", p.name, p.clock_hz / 1e6),
        })
        .collect()
}

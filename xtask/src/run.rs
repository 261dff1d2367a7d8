//! Parsing what the firmware prints over semihosting (see `examples/firmware/src/main.rs`).

use std::collections::BTreeMap;

/// (profile, plant, form, seed index): which timed block.
pub type TicksKey = (String, String, String, u32);

/// (profile, plant, form, event): which event.
pub type EventKey = (String, String, String, String);

/// One timed run: samples; ticks of the run (mod 2^24); the most ticks of one sample, with the
/// step and of the stimulus loop alone; the sums of the samples' own readings, the same two.
#[derive(Debug, Clone, Copy)]
pub struct Ticks {
    pub samples: u32,
    pub total: u32,
    pub worst: u32,
    pub base_worst: u32,
    pub sum: u32,
    pub base_sum: u32,
}

/// Everything one QEMU run reported.
#[derive(Debug, Default)]
pub struct Report {
    /// (profile, plant, "source" | "image", seed index) → hash.
    pub hashes: BTreeMap<(String, String, String, u32), u32>,
    /// (profile, plant, form, seed index) → the timed run.
    pub ticks: BTreeMap<TicksKey, Ticks>,
    /// (profile, plant, form, event) → (taken, ticks, ticks of an empty event): events
    /// between two samples.
    pub events: BTreeMap<EventKey, (bool, u32, u32)>,
    /// (profile, plant, form) → solver size in bytes.
    pub ram: BTreeMap<(String, String, String), u32>,
    /// Calibration: (cycles asked of `asm::delay`, ticks).
    pub clock: Option<(u32, u32)>,
    pub done: bool,
    pub errors: Vec<String>,
}

fn hex(s: Option<&str>) -> Option<u32> {
    u32::from_str_radix(s?, 16).ok()
}

/// Parse the firmware's output.
pub fn parse(text: &str) -> Report {
    let mut r = Report::default();
    for line in text.lines() {
        let t: Vec<&str> = line.split_whitespace().collect();
        let g = |i: usize| t.get(i).copied();
        let key = |i: usize| g(i).map(|s| s.to_ascii_lowercase()).unwrap_or_default();
        let ok = match g(0) {
            Some("HASH") => hex(g(4)).zip(hex(g(5))).map(|(seed, h)| {
                r.hashes.insert((key(1), key(2), key(3), seed), h);
            }),
            Some("TICKS") => (|| {
                let t = Ticks {
                    samples: hex(g(5))?,
                    total: hex(g(6))?,
                    worst: hex(g(7))?,
                    base_worst: hex(g(8))?,
                    sum: hex(g(9))?,
                    base_sum: hex(g(10))?,
                };
                r.ticks.insert((key(1), key(2), key(3), hex(g(4))?), t);
                Some(())
            })(),
            Some("EVENT") => hex(g(5)).zip(hex(g(6)).zip(hex(g(7)))).map(|(ok, (t, b))| {
                r.events.insert((key(1), key(2), key(3), key(4)), (ok == 1, t, b));
            }),
            Some("RAM") => hex(g(4)).map(|b| {
                r.ram.insert((key(1), key(2), key(3)), b);
            }),
            Some("CLOCK") => hex(g(1)).zip(hex(g(2))).map(|c| r.clock = Some(c)),
            Some("DONE") => {
                r.done = true;
                Some(())
            }
            Some("PORTS") => Some(()),
            _ => None,
        };
        if ok.is_none() && !line.trim().is_empty() {
            r.errors.push(line.to_string());
        }
    }
    r
}

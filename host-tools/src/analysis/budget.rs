//! Sample budget on microcontrollers, from the measured instruction counts in
//! `docs/firmware-figures.json` (written by `cargo run -p xtask -- firmware`; instructions
//! counted under QEMU `-icount`, see docs/firmware.md). Nothing here is copied by hand: the
//! file is embedded at build time and fitted here.
//!
//! Model: instructions per sample ≈ per_port · ports + base, a least-squares line through the
//! measured plants of one part, profile and form, each plant counted by its slowest single
//! sample (`worst_instructions_per_sample`: a loop that steps once per sample period must
//! meet the period in every sample, so the average is not what a rig can run at). The test
//! plants have about one junction per two ports, so the junction cost is folded into the
//! per-port figure. At one instruction per
//! cycle a part at clock f sustains f / instructions samples per second: an upper bound, wait
//! states and the rig's own I/O come on top.

use serde::Deserialize;

/// The figures file, as the firmware run wrote it.
const FIGURES: &str = include_str!("../../../docs/firmware-figures.json");

#[derive(Deserialize)]
struct Figures {
    rows: Vec<Row>,
}

#[derive(Deserialize)]
struct Row {
    part: String,
    machine: String,
    profile: String,
    form: String,
    /// Test plant name (`p<ports>_<profile>`; `p<ports>f_<profile>` with fractional delays,
    /// `p<ports>b_<profile>` with a series branch between two nodes).
    #[serde(default)]
    plant: String,
    ports: usize,
    /// The slowest single sample of the firmware's timed runs.
    worst_instructions_per_sample: f64,
    /// The costliest event between two samples (generic form, where measured).
    #[serde(default)]
    event_instructions: Option<f64>,
}

/// A part class the budget is stated for: the figures' part, profile and form, and the clock
/// assumed for a typical member of the class (not measured: QEMU counts instructions).
pub struct Part {
    pub name: &'static str,
    /// `part` in the figures file.
    pub figures_part: &'static str,
    pub profile: &'static str,
    pub form: &'static str,
    pub clock_hz: f64,
}

/// The two part classes the core targets, with the clock assumed for each [practice], in
/// both forms of the step: `generic` (the data-driven solver, which loads images at run time:
/// a rig) and `specialised` (the plant-specialised solver `tidewire compile --rust` emits:
/// firmware built for one fixed plant). Generic first: `rig::parts` indexes this table.
pub const PARTS: [Part; 4] = [
    Part { name: "Cortex-M0 class", figures_part: "M0", profile: "narrow", form: "generic", clock_hz: 48e6 },
    Part { name: "Cortex-M4 class", figures_part: "M4", profile: "wide", form: "generic", clock_hz: 168e6 },
    Part { name: "Cortex-M0 class", figures_part: "M0", profile: "narrow", form: "specialised", clock_hz: 48e6 },
    Part { name: "Cortex-M4 class", figures_part: "M4", profile: "wide", form: "specialised", clock_hz: 168e6 },
];

/// Offset from a part class's generic entry in [`PARTS`] to its specialised one.
pub const SPECIALISED_OFFSET: usize = 2;

/// Least-squares (per_port, base, machine, largest measured plant) of each plant's slowest
/// sample for one part, profile and form, or `None` if the figures hold fewer than two plants.
fn fit(part: &Part) -> Option<(f64, f64, String, usize)> {
    fit_by(part, |r| Some(r.worst_instructions_per_sample))
}

/// The same line through the costliest event between two samples, where it was measured.
fn event_fit(part: &Part) -> Option<(f64, f64, String, usize)> {
    fit_by(part, |r| r.event_instructions)
}

/// The plain plants of one part, profile and form in the figures file. Plants named
/// `p<ports>f_…` carry a fractional delay on every line (the cost of a fraction, measured
/// beside the plain plant), `p<ports>b_…` a series branch, `p<ports>z_…` Zc(s) networks on
/// its lossy lines; they stay out of the per-port fits.
fn plain_rows(part: &Part) -> Vec<Row> {
    let Ok(figs) = serde_json::from_str::<Figures>(FIGURES) else { return Vec::new() };
    figs.rows
        .into_iter()
        .filter(|r| r.part == part.figures_part && r.profile == part.profile && r.form == part.form)
        .filter(|r| !r.plant.contains("f_") && !r.plant.contains("b_") && !r.plant.contains("z_"))
        .collect()
}

/// The one plain plant of `part` whose event cost was measured: (instructions, ports,
/// machine); `None` unless exactly one was.
fn single_event(part: &Part) -> Option<(f64, usize, String)> {
    let rows = plain_rows(part);
    let mut measured = rows.iter().filter_map(|r| Some((r.event_instructions?, r.ports, &r.machine)));
    let (e, ports, machine) = measured.next()?;
    if measured.next().is_some() {
        return None;
    }
    Some((e, ports, machine.clone()))
}

/// Least squares of `value` against the ports over the plain plants of one part, profile and
/// form that have it.
fn fit_by(part: &Part, value: impl Fn(&Row) -> Option<f64>) -> Option<(f64, f64, String, usize)> {
    let all = plain_rows(part);
    let rows: Vec<&Row> = all.iter().filter(|r| value(r).is_some()).collect();
    if rows.len() < 2 {
        return None;
    }
    // Least squares on the relative error (weights 1/y²): a budget off by 10 % matters as
    // much for a 2-port plant as for an 85-port one, and the fixed cost per sample differs
    // between the forms.
    let y = |r: &Row| value(r).unwrap_or(0.0);
    let w = |r: &Row| y(r).powi(-2);
    let sw: f64 = rows.iter().map(|r| w(r)).sum();
    let mx = rows.iter().map(|r| w(r) * r.ports as f64).sum::<f64>() / sw;
    let my = rows.iter().map(|r| w(r) * y(r)).sum::<f64>() / sw;
    let sxx: f64 = rows.iter().map(|r| w(r) * (r.ports as f64 - mx).powi(2)).sum();
    let sxy: f64 = rows.iter().map(|r| w(r) * (r.ports as f64 - mx) * (y(r) - my)).sum();
    if sxx == 0.0 {
        return None;
    }
    let slope = sxy / sxx;
    let largest = rows.iter().map(|r| r.ports).max().unwrap_or(0);
    Some((slope, my - slope * mx, rows[0].machine.clone(), largest))
}

/// Instructions per sample for a network of `ports` line ends on `part`, from the fit to the
/// figures file; `None` if the figures do not hold that part, profile and form.
pub fn instructions_per_sample(part: &Part, ports: usize) -> Option<f64> {
    fit(part).map(|(per_port, base, _, _)| per_port * ports as f64 + base)
}

/// One line per part class whose events were measured: what an event between two samples
/// (a terminator switched, a node broken or joined) adds to the sample after it. Fitted over
/// the plants where two or more were measured; where only one plant was (the Cortex-M0:
/// its flash holds one plant with events), that measurement is quoted as it is, with its size.
pub fn event_budgets(ports: usize) -> Vec<String> {
    PARTS
        .iter()
        .filter_map(|p| {
            let (instr, source) = match event_fit(p) {
                Some((per_port, base, machine, _)) => {
                    (per_port * ports as f64 + base, format!("{} on QEMU {machine}", p.figures_part))
                }
                None => {
                    let (v, measured_ports, machine) = single_event(p)?;
                    (v, format!("{} on QEMU {machine}, measured on a {measured_ports}-port plant only", p.figures_part))
                }
            };
            Some(format!(
                "{} at {:.0} MHz ({} profile, {} form): an event adds about {instr:.0} instructions \
                 ({}) to the sample after it; docs/firmware-figures.json, {source}",
                p.name,
                p.clock_hz / 1e6,
                p.profile,
                p.form,
                crate::si::format(instr / p.clock_hz, "s"),
            ))
        })
        .collect()
}

/// One line per part: what it assumes (part, profile, form, clock), instructions per sample,
/// the largest sample rate, and how that compares with the plant's own sample rate `fs`.
pub fn budgets(ports: usize, _junctions: usize, fs: f64) -> Vec<String> {
    PARTS
        .iter()
        .map(|p| {
            let what = format!("{} at {:.0} MHz ({} profile, {} form)", p.name, p.clock_hz / 1e6, p.profile, p.form);
            match fit(p) {
                Some((per_port, base, machine, largest)) => {
                    let instr = per_port * ports as f64 + base;
                    let rate = p.clock_hz / instr;
                    let verdict = if rate >= fs {
                        "real time".to_string()
                    } else {
                        format!("{:.0}x slower than real time at this plant's rate", fs / rate)
                    };
                    let beyond = if ports > largest {
                        format!(", extrapolated beyond the {largest}-port plant measured")
                    } else {
                        String::new()
                    };
                    format!(
                        "{what}: about {instr:.0} instructions in the slowest sample, at most {:.1} kS/s ({verdict}); \
                         counts from docs/firmware-figures.json, {} on QEMU {machine}{beyond}",
                        rate / 1e3,
                        p.figures_part
                    )
                }
                None => format!("{what}: not in docs/firmware-figures.json"),
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The fit reproduces every measured plant it was fitted to within 10 % (the cost is close
    /// to linear in the ports), and the budget names part, clock, profile and form.
    #[test]
    fn budget_follows_the_figures_file() {
        for p in &PARTS {
            let (per_port, base, _, _) = fit(p).expect("the figures hold this part");
            let rows = plain_rows(p);
            assert!(rows.len() >= 2, "{}", p.name);
            for r in &rows {
                let model = per_port * r.ports as f64 + base;
                assert!((model / r.worst_instructions_per_sample - 1.0).abs() < 0.10, "{} {} ports", p.name, r.ports);
            }
        }
        // The event line follows the measured events the same way, where they were measured.
        for p in &PARTS {
            let Some((per_port, base, _, _)) = event_fit(p) else { continue };
            for r in &plain_rows(p) {
                let e = r.event_instructions.expect("measured for every plain plant of this part");
                let model = per_port * r.ports as f64 + base;
                assert!((model / e - 1.0).abs() < 0.10, "event {} {} ports: {model} against {e}", p.name, r.ports);
            }
        }
        let events = event_budgets(85);
        // Every generic part with an event measured has its line: the M0's event was measured
        // on one plant only, which used to leave it out (a fit needs two).
        assert_eq!(events.len(), 2, "{events:?}");
        assert!(events[0].contains("Cortex-M0 class at 48 MHz (narrow profile, generic form): an event adds about"));
        assert!(events[1].contains("Cortex-M4 class at 168 MHz (wide profile, generic form): an event adds about"));
        for p in PARTS.iter().filter(|p| event_fit(p).is_none()) {
            if let Some((v, ports, _)) = single_event(p) {
                let line = events.iter().find(|l| l.starts_with(p.name) && l.contains(p.form)).expect("a line");
                assert!(line.contains(&format!("about {v:.0} instructions")), "{line}");
                assert!(line.contains(&format!("measured on a {ports}-port plant only")), "{line}");
            }
        }
        let lines = budgets(32, 16, 100e6);
        assert!(lines[1].contains("Cortex-M4 class at 168 MHz (wide profile, generic form)"), "{}", lines[1]);
        assert!(lines[0].contains("Cortex-M0 class at 48 MHz (narrow profile, generic form)"), "{}", lines[0]);
        assert!(lines[2].contains("Cortex-M0 class at 48 MHz (narrow profile, specialised form)"), "{}", lines[2]);
        assert!(lines[3].contains("Cortex-M4 class at 168 MHz (wide profile, specialised form)"), "{}", lines[3]);
    }
}

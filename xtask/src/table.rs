//! Instruction counts from SysTick readings, and the results table.
//!
//! Under `qemu -icount shift=S` every guest instruction advances virtual time by 2^S ns, and
//! SysTick (CLKSOURCE = 1) counts the board clock f in that virtual time, so
//! instructions = ticks · (10^9 / f) / 2^S. At S = 0 one tick is 40 instructions on the
//! mps2-an386 (25 MHz) and 62.5 on the micro:bit (16 MHz); at S = 6 one instruction is 64 ns,
//! longer than a tick on both, so equal tick counts mean exactly equal instruction counts.

use crate::parts::Part;
use crate::plants::TestPlant;
use crate::run::Report;

/// One line of the table.
pub struct Row {
    part: &'static str,
    machine: &'static str,
    profile: String,
    /// `generic` (the data-driven solver) or `specialised`.
    form: &'static str,
    junctions: usize,
    plant: String,
    ports: usize,
    ram: u32,
    samples: u32,
    per_sample: f64,
    per_port: f64,
    /// Instructions of the slowest single sample of a longer run (`-icount shift=6`).
    worst: f64,
    /// Instructions of the costliest event between two samples (terminator removed or put
    /// back, node broken or joined), if the plant has a terminated node and it was measured.
    event: Option<f64>,
    /// Seed-0 and seed-1 tick counts equal at shift 0.
    equal_coarse: bool,
    /// Instruction difference seed 1 − seed 0 measured at shift 6 (0: exactly equal).
    fine_diff: f64,
}

fn ns_per_tick(part: &Part) -> f64 {
    1e9 / part.systick_hz
}

/// Instructions for `ticks` at `-icount shift`.
fn instructions(part: &Part, ticks: f64, shift: u32) -> f64 {
    ticks * ns_per_tick(part) / f64::from(1u32 << shift)
}

/// Check the calibration loop against the nominal SysTick clock; returns the measured Hz.
///
/// `cortex_m::asm::delay(c)` (cortex-m 0.7.10) runs c + 1 iterations of `subs; bne`:
/// 2c + 2 instructions.
pub fn check_clock(part: &Part, r: &Report, shift: u32) -> Result<f64, String> {
    let (cycles, ticks) = r.clock.ok_or_else(|| format!("{}: no CLOCK line", part.name))?;
    let insns = 2.0 * f64::from(cycles) + 2.0;
    let hz = f64::from(ticks) / (insns * f64::from(1u32 << shift)) * 1e9;
    if (hz / part.systick_hz - 1.0).abs() > 0.002 {
        return Err(format!(
            "{}: SysTick runs at {hz:.0} Hz by the calibration loop, expected {} Hz (shift {shift})",
            part.name, part.systick_hz
        ));
    }
    Ok(hz)
}

/// The table row of one plant on one part in one form (`generic` or `specialised`).
pub fn row(
    part: &Part,
    profile: &str,
    form: &'static str,
    plant: &TestPlant,
    coarse: &Report,
    fine: &Report,
) -> Result<Row, String> {
    let get = |r: &Report, seed: u32| {
        r.ticks
            .get(&(profile.to_string(), plant.name.clone(), form.to_string(), seed))
            .copied()
            .ok_or_else(|| format!("{}: no TICKS for {profile} {} {form} seed {seed}", part.name, plant.name))
    };
    let (c0, c1, f0, f1) = (get(coarse, 0)?, get(coarse, 1)?, get(fine, 0)?, get(fine, 1)?);
    let n = c0.samples;
    // From the fine run: at shift 6 one instruction is longer than one tick on both parts, so
    // a single sample's reading resolves one instruction. The average is the sum of the
    // samples' own readings (the loop between them is not the step's); the slowest sample of
    // both stimuli is the larger.
    let per_sample = instructions(part, f64::from(f0.sum) - f64::from(f0.base_sum), 6) / f64::from(n);
    let worst = [f0, f1]
        .iter()
        .map(|t| instructions(part, f64::from(t.worst) - f64::from(t.base_worst), 6))
        .fold(0.0, f64::max);
    // At shift 6 a run's ticks wrap the 24-bit counter: only the difference of the two
    // stimuli's totals is read, as a signed difference mod 2^24.
    let fine_ticks = (f1.total.wrapping_sub(f0.total) << 8) as i32 >> 8;
    let mut event = None;
    for ((prof, name, f, op), (ok, t, b)) in &fine.events {
        if f == form && prof == profile && *name == plant.name {
            if !ok {
                return Err(format!("{}: the {form} form refused event `{op}` on {profile} {name}", part.name));
            }
            let x = instructions(part, f64::from(*t) - f64::from(*b), 6);
            event = Some(event.map_or(x, |e: f64| e.max(x)));
        }
    }
    let ports = plant.ports();
    Ok(Row {
        part: part.name,
        machine: part.machine,
        profile: profile.to_string(),
        form,
        junctions: plant.junctions.len(),
        plant: plant.name.clone(),
        ports,
        ram: coarse.ram.get(&(profile.to_string(), plant.name.clone(), form.to_string())).copied().unwrap_or(0),
        samples: n,
        per_sample,
        per_port: per_sample / ports as f64,
        worst,
        event,
        equal_coarse: c0.total == c1.total,
        fine_diff: instructions(part, f64::from(fine_ticks), 6),
    })
}

/// Print the table (markdown, so docs/firmware.md can take it as is).
pub fn print(rows: &[Row], clocks: &[(&str, f64)]) {
    for (part, hz) in clocks {
        println!("{part}: SysTick measured at {:.4} MHz (calibration loop, -icount shift=0)", hz / 1e6);
    }
    println!();
    println!("| part | profile | form | plant | ports | solver RAM (B) | instr/sample | worst sample | event | instr/port-update | stimuli equal (shift 0) | seed1 − seed0 instr (shift 6) |");
    println!("|---|---|---|---|---:|---:|---:|---:|---:|---:|---|---:|");
    for r in rows {
        println!(
            "| {} | {} | {} | {} | {} | {} | {:.1} | {:.0} | {} | {:.2} | {} | {:.1} |",
            r.part,
            r.profile,
            r.form,
            r.plant,
            r.ports,
            r.ram,
            r.per_sample,
            r.worst,
            r.event.map_or("—".to_string(), |e| format!("{e:.0}")),
            r.per_port,
            if r.equal_coarse { "yes" } else { "no" },
            r.fine_diff
        );
    }
    println!("\n({})", method(rows));
}

/// How the figures were taken: printed under the table and stored in the figures file.
fn method(rows: &[Row]) -> String {
    format!(
        "QEMU -icount shift=6, SysTick around every sample of {}-sample runs from rest: the \
         average from the sum of the samples' readings, the worst sample from the largest, the \
         stimulus loop's sum and largest subtracted; event: the costliest of a terminator removed \
         or put back, a node broken or joined, between two samples; data independence: equal run \
         totals at -icount shift=0 and shift 6 (docs/firmware.md)",
        rows.first().map_or(0, |r| r.samples)
    )
}

/// The rows as the figures file stores them.
pub fn figures(rows: &[Row]) -> crate::figures::Figures {
    crate::figures::Figures {
        command: "cargo run -p xtask -- firmware".into(),
        method: method(rows),
        rows: rows
            .iter()
            .map(|r| crate::figures::FigureRow {
                part: r.part.into(),
                machine: r.machine.into(),
                profile: r.profile.clone(),
                form: r.form.into(),
                plant: r.plant.clone(),
                ports: r.ports,
                junctions: r.junctions,
                solver_ram_bytes: r.ram,
                instructions_per_sample: (r.per_sample * 10.0).round() / 10.0,
                instructions_per_port_update: (r.per_port * 100.0).round() / 100.0,
                worst_instructions_per_sample: r.worst.round(),
                event_instructions: r.event.map(f64::round),
                stimuli_equal: r.equal_coarse,
                stimulus_difference: (r.fine_diff * 10.0).round() / 10.0,
            })
            .collect(),
    }
}

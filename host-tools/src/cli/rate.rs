//! `tidewire rate PLANT [--part NAME] [--from RATE] [--to RATE]`: which sample rate does the
//! plant need, and can a part run it in real time?
//!
//! The search (`analysis::rate_search`) verifies the plant against the exact reference on a
//! ladder of rates and bisects to the least passing one; the table gives the error against
//! rate and, from the measured firmware figures, the cost per sample at each rate.
//!
//! With `--part`: the part's measured cost model (instructions per sample from the line ends and
//! junctions, `rig::parts`) gives the highest rate at one instruction per cycle; the plant is
//! compiled again at that rate (fewer samples of delay, perhaps coarser lumping) until the
//! rate and the network agree; then RAM, flash, and the plant's tolerances at that rate.
//!
//! Exit codes: without `--part`, 0 when some rate passes and 1 when none does; with
//! `--part`, 0 the part runs the plant in real time at some rate that passes the
//! tolerances, 1 it does not (too slow, too little memory, or the tolerances fail at the rate
//! it can keep); 2 bad input (checked before any work).
use super::Failure;
use crate::analysis::rate_search::{self, default_bounds};
use crate::compile::{compile, Compiled, ProfileKind};
use crate::plant::units::{parse_quantity, UnitKind};
use crate::plant::{load_plant, Plant};
use crate::rig::parts::{find, Form, RigPart, RIG_PARTS};
use std::path::Path;

fn si_rate(hz: f64) -> String {
    if hz >= 1e6 {
        format!("{:.3} MS/s", hz / 1e6)
    } else if hz >= 1e3 {
        format!("{:.2} kS/s", hz / 1e3)
    } else {
        format!("{hz:.1} S/s")
    }
}

/// The highest rate the part keeps, compiled at that rate: (rate, network there).
fn settle(plant: &Plant, file: &str, part: &RigPart, form: Form, start: &Compiled) -> Result<(f64, Compiled), String> {
    let cost = |c: &Compiled| part.instructions(c.report.ports, c.report.junctions, form).map(|i| part.clock_hz / i);
    let mut rate = cost(start).ok_or("the part has no measured cost model")?;
    let mut best = None;
    // The network shrinks (or stays) as the rate falls, so the part's rate rises or stays:
    // a few rounds reach a rate the part keeps with the network compiled at it.
    for _ in 0..8 {
        let mut p = plant.clone();
        p.sample_rate = rate;
        let c = compile(&p, file, part.profile).map_err(|e| format!("at {}: {e}", si_rate(rate)))?;
        let keeps = cost(&c).ok_or("the part has no measured cost model")?;
        if keeps >= rate {
            best = Some((rate, c));
            break;
        }
        rate = keeps * 0.999;
    }
    best.ok_or_else(|| format!("no rate found that the part keeps (last tried {})", si_rate(rate)))
}

pub(super) fn run(
    path: &Path,
    part_name: Option<&str>,
    from: Option<&str>,
    to: Option<&str>,
    form: Form,
) -> Result<i32, Failure> {
    let part = match part_name {
        None => None,
        Some(name) => Some(find(name).ok_or_else(|| {
            let names: Vec<&str> = RIG_PARTS.iter().map(|p| p.name).collect();
            Failure { code: 2, message: format!("error: unknown part {name:?}; parts: {}", names.join(", ")) }
        })?),
    };
    let rate_arg = |text: Option<&str>, option: &str| -> Result<Option<f64>, Failure> {
        text.map(|t| {
            parse_quantity(t, UnitKind::Frequency)
                .map_err(|e| Failure { code: 2, message: format!("error: --{option} \"{t}\": {e}") })
        })
        .transpose()
    };
    let (from, to) = (rate_arg(from, "from")?, rate_arg(to, "to")?);
    let plant = load_plant(path)?;
    let file = path.display().to_string();
    let (lo, hi) = default_bounds(&plant);
    let (lo, hi) = (from.unwrap_or(lo.min(to.unwrap_or(hi))), to.unwrap_or(hi.max(from.unwrap_or(lo))));
    rate_search::check_bounds(&plant, &file, lo, hi)?;
    let profile = part.map_or(ProfileKind::Wide, |p| p.profile);
    let code = match part {
        Some(part) => real_time(&plant, &file, part, form)?,
        None => {
            println!("== {} ==", plant.name);
            0
        }
    };
    let found = search_table(&plant, &file, profile, part, form, lo, hi)?;
    Ok(if part.is_some() {
        code
    } else if found {
        0
    } else {
        1
    })
}

/// The search and its table: error against rate, cost per sample, real time per part.
fn search_table(
    plant: &Plant,
    file: &str,
    profile: ProfileKind,
    part: Option<&RigPart>,
    form: Form,
    lo: f64,
    hi: f64,
) -> Result<bool, Failure> {
    let s = rate_search::search(plant, file, profile, lo, hi)?;
    println!(
        "\n-- the rate this plant needs: verify ({} profile, core against the exact reference, the plant's tolerances: max {:.2} %, rms {:.2} %) from {} to {}",
        profile.name(),
        100.0 * plant.tolerances.max_error,
        100.0 * plant.tolerances.rms_error,
        si_rate(lo),
        si_rate(hi)
    );
    let parts: Vec<&RigPart> = match part {
        Some(p) => vec![p],
        None => RIG_PARTS.iter().collect(),
    };
    println!(
        "   {:>13} {:>6} {:>9} {:>10} {:>10} {:<27} instructions per sample, {} form (real time?)",
        "rate",
        "lumped",
        "line ends",
        "worst max",
        "worst rms",
        "verdict",
        form.name()
    );
    for p in &s.points {
        let mark = if p.bisected { "~" } else { " " };
        match &p.outcome {
            Ok(f) => {
                let costs: Vec<String> = parts
                    .iter()
                    .map(|part| match part.instructions(f.ports, f.junctions, form) {
                        Some(i) => format!(
                            "{} {:.0} ({})",
                            part.name,
                            i,
                            if part.clock_hz / i >= p.rate { "yes" } else { "no" }
                        ),
                        None => format!("{} -", part.name),
                    })
                    .collect();
                println!(
                    "  {mark}{:>13} {:>6} {:>9} {:>9.2} % {:>8.2} % {:<27} {}",
                    si_rate(p.rate),
                    f.lumped,
                    f.ports,
                    100.0 * f.max_error,
                    100.0 * f.rms_error,
                    if f.pass { "pass".to_string() } else { format!("FAIL {}", f.failed.join("+")) },
                    costs.join(", ")
                );
            }
            Err(e) => println!("  {mark}{:>13}   not run: {e}", si_rate(p.rate)),
        }
    }
    match s.least_passing {
        Some(r) => println!(
            "   least rate found that passes: {} (~ = found by bisection; a rate above it can still fail where delays round badly)",
            si_rate(r)
        ),
        None => println!("   no rate tried passes the plant's tolerances"),
    }
    Ok(s.least_passing.is_some())
}

/// Solver RAM of `c` in `form`: the specialised form keeps its delay memory in three spans
/// (emitter's layout) instead of the generic form's rings.
fn solver_ram(c: &Compiled, profile: ProfileKind, form: Form) -> usize {
    let generic = c.report.ram_bytes(profile);
    let wave = profile.wave_bytes();
    match (form, crate::emit::specialised_memory_waves(&c.network(), profile)) {
        (Form::Specialised, Some(w)) => {
            let rings = usize::try_from(w).unwrap_or(usize::MAX).saturating_mul(wave);
            generic.saturating_sub(c.report.memory_waves * wave).saturating_add(rings)
        }
        _ => generic,
    }
}

/// The part's real-time answer (the command's answer before the rate search existed).
fn real_time(plant: &Plant, file: &str, part: &RigPart, form: Form) -> Result<i32, Failure> {
    let file = file.to_string();
    let own = compile(plant, &file, part.profile)?;
    let fs = plant.sample_rate;
    println!("== {} on {} ==", plant.name, part.name);
    println!("   part: {}; {} KiB RAM, {} KiB flash", part.description, part.ram / 1024, part.flash / 1024);
    let zc_runs = own.report.zc_runs.iter().filter(|r| r.compiled).count();
    if !part.zc_check && zc_runs > 0 {
        println!(
            "   note: this part's core is built without its zc-check feature, so its loader refuses the Zc(s) networks of {zc_runs} cable run(s); set [plant] characteristic_impedance = \"constant\" to run the plant there (figures below are with the networks)"
        );
    }
    println!(
        "   form: {} ({}); instruction counts from docs/firmware-figures.json",
        form.name(),
        match form {
            Form::Generic => "the data-driven solver that loads plant images at run time, as a rig does",
            Form::Specialised =>
                "the plant-specialised solver of `tidewire compile --rust`, this plant built into the firmware",
        }
    );
    let instr = part.instructions(own.report.ports, own.report.junctions, form).unwrap_or(f64::NAN);
    let keeps = part.clock_hz / instr;
    println!(
        "   at the plant's rate {}: {} line ends, {} junctions, about {:.0} instructions per sample -> the part keeps {}",
        si_rate(fs),
        own.report.ports,
        own.report.junctions,
        instr,
        si_rate(keeps)
    );
    if keeps >= fs {
        println!("   the plant's own rate runs in real time ({:.1}x headroom)", keeps / fs);
    } else {
        println!("   the plant's own rate runs {:.0}x slower than real time", fs / keeps);
    }
    let (rate, c) = match settle(plant, &file, part, form, &own) {
        Ok((r, c)) => {
            println!("   highest real-time rate: {} ({} line ends compiled at that rate)", si_rate(r), c.report.ports);
            (Some(r), c)
        }
        Err(e) => {
            println!("   no real-time rate: {e}");
            (None, own)
        }
    };
    let ram = solver_ram(&c, part.profile, form);
    let image = crate::emit::image_bytes(&c.network()).len();
    let ram_ok = ram <= part.ram;
    println!(
        "   RAM: solver about {:.1} KiB of {} KiB{}",
        ram as f64 / 1024.0,
        part.ram / 1024,
        if ram_ok { "" } else { "  -- DOES NOT FIT" }
    );
    match part.firmware_flash {
        // The specialised step is compiled into the firmware: its code grows with the plant
        // (junctions unrolled) and no image is loaded, so the generic rig's figure is not its.
        Some(f) if form == Form::Specialised => println!(
            "   flash: not measured for the specialised form (its step is unrolled per junction and built into the firmware; measure your build with llvm-size); the generic rig firmware is {:.1} KiB of {} KiB",
            f as f64 / 1024.0,
            part.flash / 1024
        ),
        Some(f) => println!(
            "   flash: rig firmware {:.1} KiB of {} KiB (measured: {}); plant image {image} bytes, loaded at run time",
            f as f64 / 1024.0,
            part.flash / 1024,
            part.firmware_source
        ),
        None => println!(
            "   flash: {} ({} KiB on the part); plant image {image} bytes",
            part.firmware_source,
            part.flash / 1024
        ),
    }
    let Some(rate) = rate else { return Ok(1) };
    let mut p = plant.clone();
    p.sample_rate = rate;
    let (v, _) = crate::verify::verify(&p, &file, &c, &[], &|_| {})?;
    let worst = v.probes.iter().map(|f| f.max_error / f.norm).fold(0.0, f64::max);
    println!(
        "   tolerances at {}: {} (largest error {:.2} % of the step, allowed {:.2} %)",
        si_rate(rate),
        if v.pass() { "PASS" } else { "FAIL" },
        100.0 * worst,
        100.0 * plant.tolerances.max_error
    );
    Ok(if v.pass() && ram_ok { 0 } else { 1 })
}

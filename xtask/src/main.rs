//! Project tasks. `cargo run -p xtask -- firmware [--inject-panic]`:
//!
//! * `firmware`: generate the test plants (Rust source + image) into
//!   `examples/firmware/plants/gen/`, build the firmware for the Cortex-M4 and the Cortex-M0,
//!   run both on QEMU (`-icount shift=0` for the instruction table, `shift=6` for an exact
//!   comparison of the two stimuli), compare every hash with the host core, print the table.
//!   It writes the table to `docs/firmware-figures.json` and renders the README's table
//!   from it (between `<!-- figures:begin -->` and `<!-- figures:end -->`).
//! * `firmware --inject-panic`: build with a panicking `unwrap` on the per-sample path; succeeds
//!   only if both links fail on the undefined panic symbol.
//! * `soak [--cases N] [--hours H]`: the property suites with many cases, for hours if asked
//!   (see `soak.rs`).
//! * `rig`: the rig firmware in QEMU driven by `tidewire rig` end to end (see `rig.rs`).
//! * `stream [--samples N]`: streaming `simulate` measured: time, output size, peak memory.
//! * `scale` (use `--release`): verify time and peak memory of generated plants (see `scale.rs`).
//! * `step-profile [PLANT] [m4|m0]`: where the instructions of a plant-specialised step go,
//!   from the ELF of the last `firmware` run (see `profile.rs`).
//! * `generic-profile [PLANT] [m4|m0]`: where the executed instructions of the generic step
//!   go, counted under QEMU from the same ELF (see `generic_profile.rs`).
mod figures;
mod gen;
mod generic_profile;
mod host;
mod parts;
mod plants;
mod profile;
mod rig;
mod run;
mod scale;
mod soak;
#[path = "../../examples/firmware/src/stimulus.rs"]
#[allow(dead_code)]
mod stimulus;
mod stream;
mod table;
mod tools;

use parts::{Part, PARTS};
use std::path::{Path, PathBuf};
use std::process::{Command, ExitCode};
use std::time::Duration;

/// The symbol the firmware's panic handler calls and nothing defines.
const PANIC_SYMBOL: &str = "tidewire_firmware_panic_is_reachable";
/// QEMU runs longer than this are killed (a hang is a failure).
const QEMU_TIMEOUT: Duration = Duration::from_secs(300);

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let result = match args.iter().map(String::as_str).collect::<Vec<_>>().as_slice() {
        ["firmware"] => firmware(false),
        ["firmware", "--inject-panic"] => firmware(true),
        ["soak", rest @ ..] => soak::soak(rest),
        ["rig"] => rig::rig(),
        ["stream", rest @ ..] => stream::stream(rest),
        ["scale"] => scale::scale(),
        ["scale-one", path] => scale::one(path),
        ["step-profile", rest @ ..] => profile::step_profile(rest),
        ["generic-profile", rest @ ..] => generic_profile::generic_profile(rest),
        _ => Err("usage: cargo run -p xtask -- firmware [--inject-panic] | soak [--cases N] [--hours H] | rig | stream [--samples N] | scale | step-profile [PLANT] [m4|m0] | generic-profile [PLANT] [m4|m0]"
            .into()),
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("xtask: error: {e}");
            ExitCode::FAILURE
        }
    }
}

struct Paths {
    crate_dir: PathBuf,
    target_dir: PathBuf,
}

fn paths() -> Paths {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).parent().unwrap_or(Path::new(".")).to_path_buf();
    let crate_dir = root.join("examples/firmware");
    // Own target dir for the firmware workspace: `$CARGO_TARGET_DIR/fw`, else its `target/`.
    let target_dir = match std::env::var_os("CARGO_TARGET_DIR") {
        Some(d) => PathBuf::from(d).join("fw"),
        None => crate_dir.join("target"),
    };
    Paths { crate_dir, target_dir }
}

/// `cargo build --release` of the firmware for `part`; returns (success, stderr).
fn build(p: &Paths, part: &Part, inject: bool) -> Result<(bool, String), String> {
    let mut features = part.features.to_string();
    if inject {
        features.push_str(",inject-panic");
    }
    let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
    eprintln!("xtask: building firmware for {} ({}, features {features})", part.name, part.target);
    let out = Command::new(cargo)
        .current_dir(&p.crate_dir)
        .env("CARGO_TARGET_DIR", &p.target_dir)
        .args(["build", "--release", "--target", part.target, "--features", &features])
        .output()
        .map_err(|e| format!("cannot start cargo: {e}"))?;
    Ok((out.status.success(), String::from_utf8_lossy(&out.stderr).into_owned()))
}

fn inject_panic(p: &Paths) -> Result<(), String> {
    for part in &PARTS {
        // The plain build must link, so that the failure below is the injected panic's.
        let (ok, err) = build(p, part, false)?;
        if !ok {
            eprintln!("{err}");
            return Err(format!("{}: the firmware without the injected panic does not build", part.name));
        }
        let (ok, err) = build(p, part, true)?;
        if ok {
            return Err(format!("{}: the build with a panic on the per-sample path LINKED", part.name));
        }
        if !err.contains(PANIC_SYMBOL) {
            eprintln!("{err}");
            return Err(format!("{}: the build failed, but not on the panic symbol {PANIC_SYMBOL}", part.name));
        }
        let line = err.lines().find(|l| l.contains(PANIC_SYMBOL)).unwrap_or("").trim();
        println!("{}: link failed as expected: {line}", part.name);
    }
    println!("inject-panic: both links failed on `{PANIC_SYMBOL}` (a reachable panic cannot ship)");
    Ok(())
}

fn qemu(part: &Part, elf: &Path, shift: u32) -> Result<run::Report, String> {
    let mut cmd = Command::new("qemu-system-arm");
    cmd.args(["-M", part.machine, "-display", "none", "-monitor", "none", "-serial", "null"])
        .args(["-semihosting-config", "enable=on,target=native"])
        .args(["-icount", &format!("shift={shift}")])
        .arg("-kernel")
        .arg(elf);
    eprintln!("xtask: qemu-system-arm -M {} -icount shift={shift} -kernel {}", part.machine, elf.display());
    let (ok, text) = tools::run_with_timeout(&mut cmd, QEMU_TIMEOUT)?;
    let r = run::parse(&text);
    if !ok || !r.done || !r.errors.is_empty() {
        return Err(format!("{} on {}: firmware run failed (exit ok: {ok}); output:\n{text}", part.name, part.machine));
    }
    Ok(r)
}

fn firmware(inject: bool) -> Result<(), String> {
    let p = paths();
    tools::ensure_targets(&PARTS.map(|x| x.target))?;
    let plants: Vec<(&str, Vec<plants::TestPlant>)> =
        plants::PROFILES.iter().map(|(prof, shift)| (*prof, plants::test_plants(prof, *shift))).collect();
    gen::generate(&p.crate_dir.join("plants/gen"), &plants)?;
    if inject {
        return inject_panic(&p);
    }
    tools::ensure_qemu()?;
    let mut rows = Vec::new();
    let mut checked = 0;
    let mut clocks = Vec::new();
    for part in &PARTS {
        let (ok, err) = build(&p, part, false)?;
        if !ok {
            eprintln!("{err}");
            let hint = if err.contains(PANIC_SYMBOL) { " (a panic is reachable: see the link error)" } else { "" };
            return Err(format!("firmware build for {} failed{hint}", part.name));
        }
        let elf = p.target_dir.join(part.target).join("release/tidewire-firmware");
        let coarse = qemu(part, &elf, 0)?;
        let fine = qemu(part, &elf, 6)?;
        clocks.push((part.name, table::check_clock(part, &coarse, 0)?));
        table::check_clock(part, &fine, 6)?;
        for (profile, list) in plants.iter().filter(|(prof, _)| part.profiles.contains(prof)) {
            for plant in list.iter().filter(|p| part.name != "M0" || gen::fits_m0(p)) {
                let want = host::hashes(profile, plant)?;
                // The specialised form must give the generic form's hashes (the host's
                // specialised form is checked against the host's generic one, bit for bit, by
                // `cargo test --test specialised` on these plants and stimuli).
                let paths =
                    [("source", 0), ("source", 1), ("image", 0), ("image", 1), ("specialised", 0), ("specialised", 1)];
                for report in [&coarse, &fine] {
                    for (src, seed) in paths {
                        // want: [source seed 0, source seed 1, image seed 0, image seed 1].
                        let i = seed as usize + if src == "image" { 2 } else { 0 };
                        let key = (profile.to_string(), plant.name.clone(), src.to_string(), seed);
                        match report.hashes.get(&key) {
                            Some(h) if *h == want[i] => checked += 1,
                            Some(h) => {
                                return Err(format!(
                                    "{} {profile} {} {src} seed {seed}: hash {h:08x}, host {:08x}",
                                    part.name, plant.name, want[i]
                                ))
                            }
                            None => return Err(format!("{} printed no hash for {key:?}", part.name)),
                        }
                    }
                }
                println!(
                    "hash {} {profile:6} {:10} host {:08x} {:08x} = firmware (source, image, specialised)",
                    part.name, plant.name, want[0], want[1]
                );
                for form in ["generic", "specialised"] {
                    rows.push(table::row(part, profile, form, plant, &coarse, &fine)?);
                }
            }
        }
    }
    println!("all {checked} firmware hashes equal the host's\n");
    table::print(&rows, &clocks);
    let root = p.crate_dir.parent().and_then(Path::parent).unwrap_or(Path::new(".")).to_path_buf();
    let figs = table::figures(&rows);
    figs.write(&root.join("docs/firmware-figures.json"))?;
    let readme_path = root.join("README.md");
    let readme = std::fs::read_to_string(&readme_path).map_err(|e| format!("README.md: {e}"))?;
    let updated = figures::with_table(&readme, &figs.readme_table())?;
    if updated != readme {
        figures::write_atomic(&readme_path, &updated)?;
    }
    println!("\nwrote docs/firmware-figures.json and the README's table from it");
    Ok(())
}

//! The `tidewire` command as a user runs it: every demo plant inspects, compiles and
//! simulates; every bad plant gives exit 2 with a located message and no panic text; no
//! command leaves a partial output file behind.
use assert_cmd::Command;
use std::path::{Path, PathBuf};

fn plants() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants");
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    v.sort();
    assert!(v.len() >= 3, "at least three demo plants");
    v
}

fn tidewire() -> Command {
    Command::cargo_bin("tidewire").unwrap()
}

/// A fresh folder, removed when the guard drops.
fn tmp(name: &str) -> tempfile::TempDir {
    tempfile::Builder::new().prefix(&format!("tidewire-cli-{name}-")).tempdir().unwrap()
}

#[test]
fn every_demo_plant_inspects_compiles_and_simulates() {
    let guard = tmp("demo-plants");
    let out = guard.path().to_path_buf();
    for p in plants() {
        let name = p.file_stem().unwrap().to_string_lossy().into_owned();
        for profile in ["wide", "narrow"] {
            let a = tidewire().args(["inspect", p.to_str().unwrap(), "--profile", profile]).assert().success();
            let text = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
            assert!(text.contains("-- segments") && text.contains("-- fixed point"), "{name}: {text}");
            let (img, rs) = (out.join(format!("{name}-{profile}.bin")), out.join(format!("{name}-{profile}.rs")));
            tidewire()
                .args([
                    "compile",
                    p.to_str().unwrap(),
                    "--profile",
                    profile,
                    "--image",
                    img.to_str().unwrap(),
                    "--rust",
                    rs.to_str().unwrap(),
                ])
                .assert()
                .success();
            assert!(std::fs::read(&img).unwrap().starts_with(b"TIDW"));
            let source = std::fs::read_to_string(&rs).unwrap();
            assert!(source.contains("pub static NETWORK"));
            // inspect's specialised memory is the emitted plant's: three spans.
            let span: u64 = source
                .split("pub const SPAN: usize = ")
                .nth(1)
                .and_then(|t| t.split(';').next())
                .and_then(|t| t.parse().ok())
                .unwrap_or_else(|| panic!("{name}: no SPAN in the specialised source"));
            assert!(
                text.contains(&format!("specialised form ({profile}): {} waves of delay memory", 3 * span)),
                "{name} {profile}: {text}"
            );
            let csv = out.join(format!("{name}-{profile}.csv"));
            tidewire()
                .args([
                    "simulate",
                    p.to_str().unwrap(),
                    "--samples",
                    "500",
                    "--profile",
                    profile,
                    "--csv",
                    csv.to_str().unwrap(),
                ])
                .assert()
                .success();
            let text = std::fs::read_to_string(&csv).unwrap();
            assert_eq!(text.lines().count(), 501, "{name}: header + 500 rows");
            assert!(text.lines().next().unwrap().starts_with("time (s),"));
        }
    }
}

#[test]
fn the_drive_plant_states_the_high_voltage_caution() {
    let p = plants().into_iter().find(|p| p.to_string_lossy().contains("drive-to-motor")).unwrap();
    let a = tidewire().args(["inspect", p.to_str().unwrap()]).assert().success();
    let text = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
    assert!(text.contains("CAUTION") && text.contains("local electrical codes"), "{text}");
}

#[test]
fn bad_plants_exit_2_with_a_located_message_and_leave_no_file() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad_plants");
    let guard = tmp("bad");
    let out = guard.path().to_path_buf();
    let mut n = 0;
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        let img = out.join("never.bin");
        let a = tidewire().args(["compile", p.to_str().unwrap(), "--image", img.to_str().unwrap()]).assert().code(2);
        let err = String::from_utf8_lossy(&a.get_output().stderr).into_owned();
        let fname = p.file_name().unwrap().to_string_lossy().into_owned();
        assert!(err.contains(&format!("{fname}:")), "{fname}: message names the file: {err}");
        // file:line:column
        let located = err.split(&format!("{fname}:")).nth(1).is_some_and(|rest| {
            let mut it = rest.split(':');
            it.next().is_some_and(|l| l.parse::<usize>().is_ok())
                && it.next().is_some_and(|c| c.parse::<usize>().is_ok())
        });
        assert!(located, "{fname}: line and column: {err}");
        assert!(err.contains("hint:"), "{fname}: a fix hint: {err}");
        assert!(!err.contains("panicked"), "{fname}: no panic: {err}");
        assert!(!img.exists(), "{fname}: no output file");
        n += 1;
    }
    assert!(n >= 20);
}

#[test]
fn failed_writes_leave_nothing_half_written() {
    let p = plants().remove(0);
    let guard = tmp("nowrite");
    let out = guard.path().to_path_buf();
    let missing = out.join("no/such/folder/out.csv");
    let a = tidewire()
        .args(["simulate", p.to_str().unwrap(), "--samples", "10", "--csv", missing.to_str().unwrap()])
        .assert()
        .code(2);
    let err = String::from_utf8_lossy(&a.get_output().stderr).into_owned();
    assert!(err.contains("out.csv") && !err.contains("panicked"), "{err}");
    assert_eq!(std::fs::read_dir(&out).unwrap().count(), 0, "nothing written");
    tidewire().args(["compile", p.to_str().unwrap()]).assert().code(2);
    tidewire().args(["inspect", "/no/such/plant.toml"]).assert().code(2);
    tidewire().args(["frobnicate"]).assert().code(2);
}

#[test]
fn motor_cable_sweep_reproduces_the_critical_length_rule() {
    // Critical length l_c = v·t_rise/2 (Persson, IEEE Trans. IA 28(5), 1992 [memory];
    // docs/references.md): 100 ns rise at v = 1.5e8 m/s gives 7.5 m. Far beyond l_c the
    // wave reaches the motor whole and reflects: peak = (1 + Γ_L)·Z0/(Z0 + Rs) of the step
    // with Γ_L = (2000 − 80)/(2000 + 80) for the demo's 80 Ω cable, 2 kΩ motor and 4 Ω
    // drive [closed form] = 1.831; well below l_c the peak stays near the step.
    let p = plants().into_iter().find(|p| p.to_string_lossy().contains("drive-to-motor")).unwrap();
    let guard = tmp("sweep");
    let out = guard.path().to_path_buf();
    let svg = out.join("sweep.svg");
    let a = tidewire()
        .args([
            "sweep",
            p.to_str().unwrap(),
            "--segment",
            "motor-feed",
            "--probe",
            "motor terminals",
            "--from",
            "1",
            "--to",
            "120",
            "--steps",
            "6",
            "--svg",
            svg.to_str().unwrap(),
        ])
        .assert()
        .success();
    let text = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
    assert!(text.contains("critical length l_c = v·t_rise/2 = 7.50 m"), "{text}");
    let rows: Vec<(f64, f64)> = text
        .lines()
        .filter_map(|l| {
            let mut it = l.split_whitespace();
            let len = it.next()?.parse::<f64>().ok()?;
            let _m = it.next()?;
            Some((len, it.next()?.parse::<f64>().ok()?))
        })
        .collect();
    assert_eq!(rows.len(), 6, "{text}");
    let gamma = (2000.0 - 80.0) / (2000.0 + 80.0);
    let far = (1.0 + gamma) * 80.0 / 84.0;
    let (l_long, p_long) = rows[5];
    assert!((l_long - 120.0).abs() < 1e-6 && (p_long - far).abs() < 0.02 * far, "120 m: {p_long} vs {far}");
    let (l_short, p_short) = rows[0];
    assert!(l_short == 1.0 && p_short < 1.2, "1 m: {p_short}");
    assert!(std::fs::read_to_string(&svg).unwrap().contains("critical length"));
    // The exact reference is beside the core at every point: at 120 m (a whole number of
    // samples) it meets the same closed form.
    let exact_120 = text
        .lines()
        .find(|l| l.trim_start().starts_with("120.00 m"))
        .and_then(|l| l.split_whitespace().nth(3)?.parse::<f64>().ok())
        .unwrap();
    assert!((exact_120 - far).abs() < 0.02 * far, "exact at 120 m: {exact_120} vs {far}");
    // The 1 m and 2.61 m points (0.67 and 1.74 samples at 100 MHz) fail their tolerance, and
    // the note says why and what resolves it (at 400 MHz every point from 1 to 4 m passes).
    assert!(text.contains("outside the plant's tolerances: 2 of 6 points"), "{text}");
    assert!(text.contains("every failing point is a segment of at most 1.7 samples one way at 100.0000 MHz"), "{text}");
}

#[test]
fn simulate_output_reads_back_as_a_samples_waveform() {
    // The CSV `simulate` writes (time, then one column per probe) drives another plant: the
    // column after time becomes the drive's samples, one per sample period.
    let guard = tmp("roundtrip");
    let out = guard.path().to_path_buf();
    let p = plants().into_iter().find(|p| p.to_string_lossy().contains("packaging-line")).unwrap();
    let csv = out.join("run.csv");
    tidewire()
        .args(["simulate", p.to_str().unwrap(), "--samples", "300", "--csv", csv.to_str().unwrap()])
        .assert()
        .success();
    let written = std::fs::read_to_string(&csv).unwrap();
    let first_probe: Vec<f64> =
        written.lines().skip(1).map(|l| l.split(',').nth(1).unwrap().trim().parse().unwrap()).collect();
    assert_eq!(first_probe.len(), 300);
    let sample_rate =
        std::fs::read_to_string(&p).unwrap().lines().find(|l| l.starts_with("sample_rate")).unwrap().to_string();
    let plant = format!(
        "[plant]\nname = \"replay\"\n{sample_rate}\nduration = \"100 ns\"\n[node.a]\n[node.b]\nload = \"100 ohm\"\n\
         [[segment]]\nfrom = \"a\"\nto = \"b\"\ncable = \"twisted-pair-120\"\nlength = \"3 m\"\n\
         [drive]\nkind = \"source\"\nnode = \"a\"\nresistance = \"50 ohm\"\nwaveform = {{ samples = \"run.csv\" }}\n"
    );
    let plant_path = out.join("replay.toml");
    std::fs::write(&plant_path, &plant).unwrap();
    let read = tidewire_host::plant::load_plant(&plant_path).unwrap();
    let tidewire_host::plant::Drive::Source { emf, .. } = read.drive else { panic!("a source drive") };
    assert_eq!(emf, tidewire_host::plant::Waveform::Samples(first_probe));

    // A time column that does not step by the sample period is refused at its line.
    let lines: Vec<&str> = written.lines().collect();
    let later_time = lines[5].split(',').next().unwrap();
    let skewed: String = lines
        .iter()
        .enumerate()
        .map(|(i, l)| {
            let l = if i == 3 { format!("{later_time},{}", l.split_once(',').unwrap().1) } else { l.to_string() };
            l + "\n"
        })
        .collect();
    std::fs::write(&csv, skewed).unwrap();
    let e = tidewire_host::plant::load_plant(&plant_path).unwrap_err();
    assert_eq!((e.line, e.field.as_str()), (4, "drive.waveform.samples"), "{e}");
    assert!(e.message.contains("sample rate"), "{e}");
}

#[test]
fn sweep_takes_units_other_parameters_and_refuses_nonsense() {
    let p = plants().into_iter().find(|p| p.to_string_lossy().contains("drive-to-motor")).unwrap();
    let p = p.to_str().unwrap();
    // A node's load as the parameter, values with units; the exact column is there and a
    // matched motor (80 ohm, the cable's impedance) takes no reflection: peak = Z0/(Z0 + Rs)
    // of the step = 80/84 [closed form].
    let a = tidewire()
        .args(["sweep", p, "--node", "motor", "--probe", "motor terminals", "--from", "80 ohm", "--to", "8 kohm"])
        .args(["--steps", "3"])
        .assert()
        .success();
    let text = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
    assert!(text.contains("load resistance of node \"motor\"") && !text.contains("critical length"), "{text}");
    let first = text.lines().find(|l| l.trim_start().starts_with("80.00")).unwrap();
    let exact: f64 = first.split_whitespace().nth(3).unwrap().parse().unwrap();
    assert!((exact - 80.0 / 84.0).abs() < 0.01, "{first}");
    for bad in [
        vec!["--segment", "motor-feed", "--from", "3 V"],
        vec!["--segment", "motor-feed", "--steps", "100000000"],
        vec!["--segment", "motor-feed", "--node", "motor"],
        vec!["--cable", "no-such-cable"],
    ] {
        let out = tidewire().args(["sweep", p, "--probe", "motor terminals"]).args(&bad).assert().code(2);
        let err = String::from_utf8_lossy(&out.get_output().stderr).into_owned();
        assert!(!err.is_empty() && !err.contains("panicked"), "{bad:?}: {err}");
    }
}

/// Own scenario: 180 m of the Category 5e preset at 100 MS/s. Both profiles hold the fit
/// (0.024 dB, measured 2 Dec 2026, since the loss sections are DC-exact; the narrow profile's
/// sections used to lose about 10 % of DC gain each and its fit was 1.6 dB off, marked `!!`):
/// neither is marked at the default 5 % tolerance. The marking itself is checked with the
/// same plant under a tolerance the fit cannot meet: 0.1 %, below the 0.024 dB (0.28 %) fit
/// error, so both profiles must be marked.
#[test]
fn a_loss_fit_over_the_tolerance_is_marked() {
    let guard = tmp("loss-mark");
    let dir = guard.path().to_path_buf();
    let plant = |name: &str, verify: &str| {
        let path = dir.join(name);
        std::fs::write(
            &path,
            format!(
                r#"[plant]
name = "long pair"
sample_rate = "100 MHz"
duration = "6 us"
[cable.pair]
preset = "cat5e"
[node.near]
[node.far]
load = "100 ohm"
[[segment]]
name = "run"
from = "near"
to = "far"
cable = "pair"
length = "180 m"
[drive]
kind = "source"
node = "near"
resistance = "100 ohm"
waveform = {{ step = "1 V", rise = "40 ns", delay = "50 ns" }}
[[probe]]
name = "far"
node = "far"
{verify}"#
            ),
        )
        .unwrap();
        path
    };
    let (default, strict) = (plant("run.toml", ""), plant("strict.toml", "[verify]\nmax_error = \"0.1 %\"\n"));
    let loss_line = |plant: &std::path::Path, profile: &str| {
        let a = tidewire().args(["inspect", plant.to_str().unwrap(), "--profile", profile]).assert().success();
        let text = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
        text.lines().find(|l| l.contains("largest fit error") && l.contains("loss at 0.4 fs")).unwrap_or("").to_string()
    };
    for profile in ["wide", "narrow"] {
        let line = loss_line(&default, profile);
        assert!(!line.is_empty() && !line.contains("!!"), "{profile}, 5 %: {line}");
        let line = loss_line(&strict, profile);
        assert!(line.contains("!!"), "{profile}, 0.1 %: {line}");
    }
}

#[test]
fn inspect_names_the_junction_and_call_of_each_event_as_the_emitted_source_numbers_them() {
    // The plant file names nodes and segments; firmware calls set_shunt / set_broken with a
    // junction number that neither the plant file nor (before this) inspect gave.
    let guard = tmp("event-calls");
    let plant = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants/irrigation-network.toml");
    let (rs, js) = (guard.path().join("p.rs"), guard.path().join("i.json"));
    let out = tidewire().args(["inspect", plant.to_str().unwrap(), "--json", js.to_str().unwrap()]).assert().success();
    let text = String::from_utf8_lossy(&out.get_output().stdout).into_owned();
    let line = text.lines().find(|l| l.contains("segment south-s1 breaks")).expect("an event line");
    let call = line.split_whitespace().rev().take(2).collect::<Vec<_>>();
    assert_eq!(call[0], "true)", "{line}");
    let j: u16 = call[1].trim_start_matches("set_broken(").trim_end_matches(',').parse().expect(line);
    tidewire().args(["compile", plant.to_str().unwrap(), "--rust", rs.to_str().unwrap()]).assert().success();
    let src = std::fs::read_to_string(&rs).unwrap();
    let set_broken = &src[src.find("fn set_broken").expect("the specialised form")..];
    let arms = &set_broken[..set_broken.find("FixedNode").unwrap()];
    assert!(arms.contains(&format!("{j} => {{")), "junction {j} is not switchable in the emitted source:\n{arms}");
    let doc: serde_json::Value = serde_json::from_slice(&std::fs::read(&js).unwrap()).unwrap();
    let ev = &doc["events"][0];
    assert_eq!(ev["junction"], serde_json::json!(j));
    assert_eq!(ev["core_call"], serde_json::json!(format!("set_broken({j}, true)")));
}

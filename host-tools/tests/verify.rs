//! `verify` and its references: the twin against the exact reference, verify on every demo
//! plant, and a verify that must fail.
use assert_cmd::Command;
use std::path::Path;
use tidewire_host::analysis::prepare;
use tidewire_host::compile::ProfileKind;
use tidewire_host::plant::parse_plant;
use tidewire_host::reference::{exact_response, ExactOptions};

/// A lossless plant with every delay on the sample grid: 50 Ω lines of 5 and 7 samples in
/// a tee, one end open, one 75 Ω, source 50 Ω. Twin and exact reference describe the same
/// physics exactly, so they agree to 1e-9 of the step [closed form].
const ON_GRID: &str = r#"
[plant]
name = "on-grid tee"
sample_rate = "1 GHz"
duration = "400 ns"
[cable.c50]
impedance = "50 ohm"
delay = "5 ns/m"
[node.src]
[node.tee]
[node.open_end]
[node.r75]
load = "75 ohm"
[[segment]]
from = "src"
to = "tee"
cable = "c50"
length = "1 m"
[[segment]]
from = "tee"
to = "open_end"
cable = "c50"
length = "1.4 m"
[[segment]]
from = "tee"
to = "r75"
cable = "c50"
length = "0.6 m"
[drive]
kind = "source"
node = "src"
resistance = "50 ohm"
waveform = { step = "1 V", rise = "0 s", delay = "0 s" }
[[probe]]
name = "src"
node = "src"
[[probe]]
name = "open end"
node = "open_end"
[[probe]]
name = "into tee"
segment = "src-tee"
end = "to"
"#;

#[test]
fn twin_and_exact_reference_agree_on_a_lossless_on_grid_plant() {
    let plant = parse_plant(ON_GRID, "on-grid.toml", Path::new(".")).unwrap();
    let c = prepare(&plant, "on-grid.toml", ProfileKind::Wide).unwrap().0;
    let tw = tidewire_host::twin::run(&c, c.samples, &[]);
    let ex = exact_response(&plant, &ExactOptions::for_plant(&plant)).unwrap();
    let mut worst = 0.0f64;
    for (k, t) in ex.traces.iter().enumerate() {
        let scale = if t.unit == "A" { 1.0 / 50.0 } else { 1.0 };
        for (a, b) in tw.probes[k].iter().zip(&t.values) {
            worst = worst.max((a - b).abs() / scale);
        }
    }
    assert!(worst < 1e-9, "twin vs exact: {worst:e} of the 1 V step");
    // And the core is close to both (arithmetic error only).
    let core = tidewire_host::host_core::run_core(&c, c.samples, &[], &|_| {}).unwrap();
    for (k, t) in ex.traces.iter().enumerate() {
        let scale = if t.unit == "A" { 1.0 / 50.0 } else { 1.0 };
        let e = core.recording.probes[k].iter().zip(&t.values).map(|(a, b)| (a - b).abs() / scale).fold(0.0, f64::max);
        assert!(e < 2.0 * c.net.volts_per_code as f64, "core vs exact {e:e}");
    }
}

#[test]
fn every_demo_plant_passes_verify_within_its_tolerances() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants");
    for name in ["bench-rig.toml", "drive-to-motor.toml", "irrigation-network.toml", "packaging-line.toml"] {
        let p = dir.join(name);
        let a = Command::cargo_bin("tidewire").unwrap().args(["verify", p.to_str().unwrap()]).assert();
        let out = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
        assert_eq!(a.get_output().status.code(), Some(0), "{name}:\n{out}");
        assert!(out.contains("== PASS"), "{name}: {out}");
    }
}

#[test]
fn verify_fails_when_a_tolerance_is_tighter_than_the_emulation_reaches() {
    // The same bench rig with max error 0.1 % of the step (2 mV, above one 0.15 mV ADC code,
    // so the limit is not refused as finer than the I/O): the delay quantization alone
    // exceeds it (0.25-1.2 % here), so verify must say FAIL and exit 1.
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants");
    let text = std::fs::read_to_string(dir.join("bench-rig.toml")).unwrap();
    let start = text.find("max_error").expect("bench rig sets max_error");
    let end = start + text[start..].find('\n').unwrap();
    let tight = format!("{}max_error = \"0.1 %\"{}", &text[..start], &text[end..]);
    let tmp = std::env::temp_dir().join(format!("tidewire-tight-{}.toml", std::process::id()));
    std::fs::write(&tmp, tight).unwrap();
    let a = Command::cargo_bin("tidewire").unwrap().args(["verify", tmp.to_str().unwrap()]).assert().code(1);
    let out = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
    assert!(out.contains("FAIL"), "{out}");
    let _ = std::fs::remove_file(tmp);
}

/// Reactive terminations: a receiver's input capacitance on a stub and an AC (series RC)
/// termination at the far end of a 120 Ω bus, driven by a 10 ns edge.
const REACTIVE: &str = r#"
[plant]
name = "reactive loads"
sample_rate = "500 MHz"
duration = "8 us"
[cable.tp]
impedance = "120 ohm"
velocity_factor = 0.66
[node.src]
[node.tap]
[node.rx]
load = { capacitor = "47 pF" }
[node.far]
load = { resistor = "120 ohm", capacitor = "2.2 nF", wiring = "series" }
[[segment]]
from = "src"
to = "tap"
cable = "tp"
length = "40 m"
[[segment]]
from = "tap"
to = "rx"
cable = "tp"
length = "3 m"
[[segment]]
from = "tap"
to = "far"
cable = "tp"
length = "25 m"
[drive]
kind = "source"
node = "src"
resistance = "120 ohm"
waveform = { step = "3.3 V", rise = "10 ns", delay = "20 ns" }
[[probe]]
name = "receiver"
node = "rx"
[[probe]]
name = "AC terminator"
node = "far"
"#;

#[test]
fn shunt_capacitance_and_rc_terminations_pass_verify() {
    // Core against the exact reference (the capacitors exactly, 1/(sC), in the frequency
    // domain) with the default tolerances: 5 % max, 1 % rms of the step, first edge within
    // one sample, final value within 0.2 % of the DC point (the capacitors are open at DC).
    let plant = parse_plant(REACTIVE, "reactive.toml", Path::new(".")).unwrap();
    let c = prepare(&plant, "reactive.toml", ProfileKind::Wide).unwrap().0;
    assert_eq!(c.net.elements.len(), 2, "one bilinear capacitor per reactive load");
    let (v, _) = tidewire_host::verify::verify(&plant, "reactive.toml", &c, &[], &|_| {}).unwrap();
    for p in &v.probes {
        assert!(
            p.pass(),
            "{}: max {} rms {} final {} vs {}",
            p.name,
            p.max_error,
            p.rms_error,
            p.final_core,
            p.final_expected
        );
    }
}

/// A choke in line: 10 uH with 0.5 Ω winding resistance 15 m along a 40 m run of 120 Ω
/// cable, matched at both ends.
const CHOKE: &str = r#"
[plant]
name = "choke in line"
sample_rate = "500 MHz"
duration = "6 us"
[cable.tp]
impedance = "120 ohm"
velocity_factor = 0.66
[node.src]
[node.far]
load = "120 ohm"
[[segment]]
name = "run"
from = "src"
to = "far"
cable = "tp"
length = "40 m"
inline = { inductance = "10 uH", resistance = "0.5 ohm", at = "15 m" }
[drive]
kind = "source"
node = "src"
resistance = "120 ohm"
waveform = { step = "5 V", rise = "10 ns", delay = "20 ns" }
[[probe]]
name = "source end"
node = "src"
[[probe]]
name = "far end"
node = "far"
[[probe]]
name = "into the run"
segment = "run"
end = "from"
"#;

#[test]
fn series_inductance_in_line_passes_verify() {
    // Core (bilinear series inductor between two runs of the cable) against the exact
    // reference (the choke as 1/(R + sL) between two internal nodes), default tolerances.
    // [closed form] DC: 5 V · 120/(120 + 0.5 + 120) at the far end.
    let plant = parse_plant(CHOKE, "choke.toml", Path::new(".")).unwrap();
    let c = prepare(&plant, "choke.toml", ProfileKind::Wide).unwrap().0;
    assert!(c.net.junctions.iter().any(|j| matches!(j, tidewire_core::Junction::SeriesInductor { .. })));
    let (v, _) = tidewire_host::verify::verify(&plant, "choke.toml", &c, &[], &|_| {}).unwrap();
    for p in &v.probes {
        assert!(
            p.pass(),
            "{}: max {} rms {} final {} vs {}",
            p.name,
            p.max_error,
            p.rms_error,
            p.final_core,
            p.final_expected
        );
    }
    let dc = 5.0 * 120.0 / 240.5;
    assert!((v.probes[1].final_expected - dc).abs() < 1e-9, "DC point {}", v.probes[1].final_expected);
    // A choke placed at or past the end of its segment is a located error.
    let bad = CHOKE.replace(r#"at = "15 m""#, r#"at = "40 m""#);
    let e = parse_plant(&bad, "choke.toml", Path::new(".")).unwrap_err();
    assert!(e.line > 0 && e.field.contains("inline.at"), "{e}");
}

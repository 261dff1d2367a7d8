//! Sense checks and right hints: each plant the tools used to accept silently (or answer
//! with a wrong hint) now gets an error or warning that says why, located in the file, with
//! a hint naming a value that passes; where cheap, the hinted value is tried and passes.
use std::path::Path;
use tidewire_host::analysis::{prepare, Analysis};
use tidewire_host::compile::ProfileKind;
use tidewire_host::plant::{parse_plant, PlantError};

const BASE: &str = r#"
[plant]
name = "sense"
sample_rate = "100 MHz"
duration = "40 us"
[node.a]
[node.b]
load = "120 ohm"
[[segment]]
name = "run"
from = "a"
to = "b"
cable = "twisted-pair-120"
length = "20 m"
[drive]
kind = "source"
node = "a"
resistance = "120 ohm"
waveform = { step = "5 V", rise = "20 ns" }
[[probe]]
name = "far"
node = "b"
"#;

fn with(edits: &[(&str, &str)]) -> String {
    let mut s = BASE.to_string();
    for (old, new) in edits {
        assert!(s.contains(old), "{old}");
        s = s.replacen(old, new, 1);
    }
    s
}

fn run(text: &str) -> Result<Analysis, PlantError> {
    let plant = parse_plant(text, "sense.toml", Path::new("."))?;
    prepare(&plant, "sense.toml", ProfileKind::Wide).map(|(_, a)| a)
}

fn error(text: &str) -> PlantError {
    match run(text) {
        Ok(_) => panic!("accepted: {text}"),
        Err(e) => e,
    }
}

/// The text between the first pair of double quotes in `hint`.
fn quoted(hint: &str) -> String {
    hint.split('"').nth(1).unwrap_or_else(|| panic!("no quoted value in {hint}")).to_string()
}

#[test]
fn the_base_plant_passes_without_warnings() {
    let a = run(BASE).unwrap();
    assert!(a.warnings.is_empty(), "{:?}", a.warnings);
}

#[test]
fn an_event_outside_the_run_is_an_error_naming_a_time_inside_it() {
    let ev = "[[event]]\nat = \"1 s\"\nnode = \"b\"\nload = \"open\"\n";
    let text = format!("{BASE}{ev}");
    let e = error(&text);
    assert!(e.line > 0 && e.field == "event.at", "{e}");
    assert!(e.message.contains("outside the run"), "{e}");
    let at = quoted(&e.hint);
    run(&text.replace("at = \"1 s\"", &format!("at = \"{at}\""))).unwrap();
}

#[test]
fn an_arrival_tolerance_below_one_sample_is_an_error() {
    let e = error(&format!("{BASE}[verify]\narrival = \"0.001 samples\"\n"));
    assert!(e.line > 0 && e.message.contains("below one sample"), "{e}");
    run(&format!("{BASE}[verify]\narrival = \"{}\"\n", quoted(&e.hint))).unwrap();
    // One sample written as a time passes at 100 MHz.
    run(&format!("{BASE}[verify]\narrival = \"10 ns\"\n")).unwrap();
}

#[test]
fn a_tolerance_finer_than_one_io_code_is_an_error_and_an_absurd_drive_warns() {
    let e = error(&format!("{BASE}[verify]\nfinal_error = \"0.000001 %\"\n"));
    assert!(e.message.contains("finer than one I/O code"), "{e}");
    run(&format!("{BASE}[verify]\nfinal_error = \"{}\"\n", quoted(&e.hint))).unwrap();
    let a = run(&with(&[("step = \"5 V\"", "step = \"1e9 V\"")])).unwrap();
    assert!(a.warnings.iter().any(|w| w.contains("check the drive's unit")), "{:?}", a.warnings);
}

#[test]
fn a_segment_rounded_far_off_its_delay_warns_with_a_rate_that_fixes_it() {
    // 1 m of 5.05 ns/m cable at 10 ns per sample is 0.505 samples, rounded to 1: +98 %.
    let text = with(&[("length = \"20 m\"", "length = \"1 m\"")]);
    let a = run(&text).unwrap();
    let w = a.warnings.iter().find(|w| w.contains("timing error")).expect("a timing warning");
    let rate = quoted(w);
    let fixed = run(&text.replace("sample_rate = \"100 MHz\"", &format!("sample_rate = \"{rate}\""))).unwrap();
    assert!(!fixed.warnings.iter().any(|w| w.contains("timing error")), "{:?}", fixed.warnings);
}

#[test]
fn the_least_sample_rate_in_a_hint_is_rounded_up_and_passes() {
    // 100 m at 200 kHz: 505 ns against a 2.5 us sample. The least rate is 0.5/505.4 ns =
    // 989.3 kHz [closed form]; the hint must not name a rate at or below it.
    let text = with(&[
        ("sample_rate = \"100 MHz\"", "sample_rate = \"200 kHz\""),
        ("length = \"20 m\"", "length = \"100 m\""),
    ]);
    let e = error(&text);
    // The one segment is shorter than the lumping threshold, and lumped it would leave the
    // plant without a delay line: refused, with the least rate that makes it a line.
    assert!(e.message.contains("no delay line"), "{e}");
    let rate = quoted(&e.hint);
    assert_eq!(rate, "990 kHz", "{e}");
    run(&text.replace("sample_rate = \"200 kHz\"", &format!("sample_rate = \"{rate}\""))).unwrap();
}

#[test]
fn a_capacitor_at_a_very_low_sample_rate_is_not_called_too_small() {
    let text = with(&[
        ("sample_rate = \"100 MHz\"", "sample_rate = \"1 Hz\""),
        ("duration = \"40 us\"", "duration = \"40 s\""),
        ("load = \"120 ohm\"", "load = { capacitor = \"1 nF\" }"),
    ]);
    let e = error(&text);
    assert!(!e.message.contains("too small to matter") && e.message.contains("T/(2C)"), "{e}");
    let rate = quoted(&e.hint);
    // 1/(2·1 nF·4.29 MΩ) = 116.4 Hz [closed form], rounded up.
    assert_eq!(rate, "117 Hz");
}

#[test]
fn a_huge_length_is_located_and_says_what_would_fit_without_jargon() {
    let e = error(&with(&[("length = \"20 m\"", "length = \"1e12 m\"")]));
    assert!(e.line > 0 && e.column > 0 && e.field == "segment[run].length", "{e}");
    assert!(!e.message.contains("tier") && !e.hint.contains("tier"), "{e}");
    let shorter = quoted(&e.hint);
    if let Err(e) = run(&with(&[("length = \"20 m\"", &format!("length = \"{shorter}\""))])) {
        // A shorter plant may still fail another check; never for storage.
        assert!(!e.message.contains("delay storage"), "{e}");
    }
}

#[test]
fn resistances_outside_the_core_range_are_errors_not_clamps() {
    for (load, hint) in [("10 Mohm", "4.29 Mohm"), ("0.1 mohm", "1 mohm")] {
        let e = error(&with(&[("load = \"120 ohm\"", &format!("load = \"{load}\""))]));
        assert!(e.line > 0 && e.field == "node.b.load", "{e}");
        assert_eq!(quoted(&e.hint), hint, "{e}");
        run(&with(&[("load = \"120 ohm\"", &format!("load = \"{hint}\""))])).unwrap();
    }
    let e = error(&with(&[("resistance = \"120 ohm\"", "resistance = \"1 Gohm\"")]));
    assert_eq!(e.field, "drive.resistance", "{e}");
}

#[test]
fn runs_too_long_or_too_fast_are_refused_before_memory_is_taken() {
    // 1 s at 100 MHz is 1e8 samples: refused before the drive is sampled.
    let e = error(&with(&[("duration = \"40 us\"", "duration = \"1 s\"")]));
    assert!(e.field == "plant.duration" && e.hint.contains("simulate --samples"), "{e}");
    // 1e17 Hz: the delay storage is checked before the f64 twin allocates it.
    let e = error(&with(&[
        ("sample_rate = \"100 MHz\"", "sample_rate = \"1e17 Hz\""),
        ("duration = \"40 us\"", "duration = \"1 fs\""),
    ]));
    assert!(e.message.contains("delay storage"), "{e}");
}

#[cfg(unix)]
#[test]
fn a_samples_file_that_is_a_device_is_refused_without_reading_it() {
    let text = with(&[("waveform = { step = \"5 V\", rise = \"20 ns\" }", "waveform = { samples = \"/dev/zero\" }")]);
    let e = parse_plant(&text, "sense.toml", Path::new(".")).unwrap_err();
    assert!(e.message.contains("not a regular file") && e.line > 0, "{e}");
}

/// Resistances the compiler derives (line impedances, lumped section resistors, a choke's
/// port 2L/T) are never clamped into the core's 1 mΩ ..= 4.29 MΩ: each out-of-range value
/// is a located error, or a resistance left out with a warning that says so.
#[test]
fn derived_resistances_outside_the_core_are_errors_or_warnings_never_clamped() {
    let own = |z: &str, r: &str| {
        let own = format!("[cable.own]\nvelocity_factor = 0.66\nimpedance = \"{z}\"\nresistance = \"{r}\"\n");
        with(&[("cable = \"twisted-pair-120\"", "cable = \"own\"")]) + &own
    };
    // A cable impedance below 1 mΩ used to become 1 mΩ without a word.
    let e = error(&own("0.1 mohm", "0 ohm/m"));
    assert!(e.line > 0 && e.field == "cable.own.impedance", "{e}");
    assert!(e.message.contains("outside the core"), "{e}");
    // 20 m of 10 µΩ/m is 0.2 mΩ: below what the core holds, left out and said so (it used to
    // become a 1 mΩ resistor, five times the cable's).
    let a = run(&own("50 ohm", "10 uohm/m")).unwrap();
    assert!(
        a.warnings.iter().any(|w| w.contains("segment run") && w.contains("left out") && w.contains("1 mohm")),
        "{:?}",
        a.warnings
    );
    // A choke of 1 H at 100 MHz has 2L/T = 200 MΩ, above the core's 4.29 MΩ: refused with
    // a rate that passes.
    let choke = |l: &str| {
        with(&[(
            "length = \"20 m\"",
            &format!("length = \"20 m\"\ninline = {{ inductance = \"{l}\", at = \"10 m\" }}"),
        )])
    };
    let e = error(&choke("1 H"));
    assert!(e.field == "segment[run].inline.inductance" && e.line > 0, "{e}");
    let rate = quoted(&e.hint);
    assert!(e.hint.starts_with("lower plant.sample_rate"), "{e}");
    run(&choke("1 H").replace("sample_rate = \"100 MHz\"", &format!("sample_rate = \"{rate}\""))).unwrap_err();
    run(&choke("10 uH")).unwrap();
}

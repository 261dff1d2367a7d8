//! Hostile inputs as a CI job meets them: a plant file that is not UTF-8, a device or an
//! oversized file given as the plant, an output into a folder that does not exist. Each is
//! refused with a located error, exit 2, before any work, and nothing is written.
use assert_cmd::Command;
use std::path::{Path, PathBuf};

fn tidewire() -> Command {
    Command::cargo_bin("tidewire").unwrap()
}

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// A fresh folder with the irrigation example plant copied in as `plant.toml`.
fn setup() -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::Builder::new().prefix("tidewire-hostile-").tempdir().unwrap();
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants/irrigation-network.toml");
    let p = dir.path().join("plant.toml");
    std::fs::copy(src, &p).unwrap();
    (dir, p)
}

/// The names in `dir`, sorted.
fn names(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> =
        std::fs::read_dir(dir).unwrap().map(|e| e.unwrap().file_name().to_string_lossy().into_owned()).collect();
    v.sort();
    v
}

/// Run, expect exit 2, no panic, and `needle` in stderr; returns stderr.
fn refused(args: &[&str], needle: &str) -> String {
    let a = tidewire().args(args).assert().code(2);
    let err = String::from_utf8_lossy(&a.get_output().stderr).into_owned();
    assert!(err.contains(needle), "{args:?}: expected {needle:?} in: {err}");
    assert!(!err.contains("panicked"), "{args:?}: {err}");
    err
}

#[test]
fn a_plant_file_that_is_not_utf8_is_refused_at_the_line_and_column_of_the_bad_byte() {
    let (dir, p) = setup();
    let mut bytes = std::fs::read(&p).unwrap();
    // Line 3 of the example is a comment; put a Latin-1 'é' (0xe9) after its 5th character.
    let line3 = bytes.iter().enumerate().filter(|(_, b)| **b == b'\n').nth(1).unwrap().0 + 1;
    bytes.insert(line3 + 5, 0xe9);
    std::fs::write(&p, &bytes).unwrap();
    let before = names(dir.path());
    let out = dir.path().join("x.bin");
    for cmd in [&["inspect", s(&p)][..], &["compile", s(&p), "--image", s(&out)], &["verify", s(&p)]] {
        refused(cmd, &format!("{}:3:6: the plant file is not UTF-8 text: byte 0xe9", s(&p)));
    }
    assert_eq!(names(dir.path()), before);
}

#[cfg(unix)]
#[test]
fn a_device_or_an_oversized_file_as_the_plant_is_refused_without_reading_it_all() {
    // /dev/zero never ends: read whole, it would take all memory before any check.
    refused(&["inspect", "/dev/zero"], "more than the limit of");
    let (dir, _) = setup();
    let big = dir.path().join("big.toml");
    let f = std::fs::File::create(&big).unwrap();
    f.set_len(tidewire_host::plant::file::MAX_PLANT_FILE + 1).unwrap();
    refused(&["compile", s(&big), "--image", s(&dir.path().join("x.bin"))], "more than the limit of");
    refused(&["inspect", s(dir.path())], "this is a folder, not a plant file");
}

#[test]
fn an_output_into_a_missing_folder_is_refused_before_any_work() {
    let (dir, p) = setup();
    let before = names(dir.path());
    let missing = dir.path().join("no-such-folder");
    let svg = missing.join("wave.svg");
    let json = dir.path().join("v.json");
    // Before the check this failed only after the whole verification, naming a temporary.
    let err = refused(&["verify", s(&p), "--json", s(&json), "--svg", s(&svg)], "does not exist");
    assert!(!err.contains(".tmp"), "the message names a temporary: {err}");
    refused(&["simulate", s(&p), "--csv", s(&missing.join("run.csv"))], "does not exist");
    refused(&["compile", s(&p), "--rust", s(&missing.join("p.rs"))], "does not exist");
    refused(&["inspect", s(&p), "--json", s(&missing.join("i.json"))], "does not exist");
    // A file where the folder should be.
    let file_dir = p.join("out.csv");
    refused(&["simulate", s(&p), "--csv", s(&file_dir)], "is not a folder");
    assert_eq!(names(dir.path()), before);
}

#[test]
fn an_absurd_drive_level_is_refused_where_it_is_written() {
    let (dir, p) = setup();
    let text = std::fs::read_to_string(&p).unwrap();
    // Before: 1e300 V got through the reader and failed later at verify.final_error with no
    // line, a 300-digit number and the hint `final_error = "NaN %"`.
    let line = text.lines().position(|l| l.contains("pulse = \"12 V\"")).unwrap() + 1;
    std::fs::write(&p, text.replace("pulse = \"12 V\"", "pulse = \"1e300 V\"")).unwrap();
    let err =
        refused(&["inspect", s(&p)], "drive.waveform.pulse: the drive level \"1e300 V\" is beyond any cable plant");
    assert!(err.contains(&format!("plant.toml:{line}:")), "{err}");
    // A samples file with such a value is refused at its own line.
    let stim = dir.path().join("stim.csv");
    std::fs::write(&stim, "volts\n0\n1\n2e12\n").unwrap();
    let start = text.find("waveform = {").unwrap();
    let end = start + text[start..].find('\n').unwrap();
    std::fs::write(&p, format!("{}waveform = {{ samples = \"stim.csv\" }}{}", &text[..start], &text[end..])).unwrap();
    refused(&["inspect", s(&p)], "stim.csv:4:1: drive.waveform.samples: 2e12 V is beyond any cable plant");
}

#[test]
fn a_hint_in_scientific_notation_parses_back() {
    use tidewire_host::plant::units::{parse_quantity, UnitKind};
    for (v, kind, unit) in [(1.17e23, UnitKind::Frequency, "Hz"), (3.339e-20, UnitKind::Frequency, "Hz")] {
        let text = tidewire_host::si::at_most(v, unit);
        assert!(text.contains('e'), "{text}");
        let back = parse_quantity(&text, kind).unwrap();
        assert!(back <= v && back > 0.99 * v, "{text} -> {back}");
    }
}

#[test]
fn a_break_too_near_a_segment_end_is_named_at_its_own_distance() {
    // Before: a break near the `from` end was reported "at 0.00 m".
    let (_dir, p) = setup();
    let text = std::fs::read_to_string(&p).unwrap();
    assert!(text.contains("break_at = \"12 m\""));
    for (at, shown) in [("0.5 m", "a break at 0.50 m"), ("34.5 m", "a break at 34.50 m")] {
        std::fs::write(&p, text.replace("break_at = \"12 m\"", &format!("break_at = \"{at}\""))).unwrap();
        refused(&["inspect", s(&p)], &format!("segment[south-s1]: {shown} leaves a piece shorter than one sample"));
    }
}

#[cfg(unix)]
#[test]
fn a_device_as_a_capture_or_an_image_is_refused_without_reading_it_all() {
    // Before: both read /dev/zero until the process was killed for lack of memory (its
    // metadata size is 0, so a size check before reading passed).
    let (dir, _) = setup();
    let out = dir.path().join("t.toml");
    let extract = ["extract", "/dev/zero", "--source-resistance", "50 ohm", "--emf", "1 V"];
    refused(&[&extract[..], &["--velocity-factor", "0.66", "--out", s(&out)]].concat(), "more than the limit of");
    // Refused before any connection is tried (port 1 on the loopback has no rig).
    refused(&["rig", "-c", "tcp:127.0.0.1:1", "load", "/dev/zero"], "more than the limit of");
    // A capture that is not UTF-8 is refused at the line and column of the bad byte.
    let cap = dir.path().join("cap.csv");
    std::fs::write(&cap, b"time,volts\n0,0\n1e-9,0.5\xff\n").unwrap();
    let extract = ["extract", s(&cap), "--source-resistance", "50 ohm", "--emf", "1 V"];
    refused(
        &[&extract[..], &["--velocity-factor", "0.66", "--out", s(&out)]].concat(),
        "cap.csv:3:9: the capture is not UTF-8",
    );
    assert!(!out.exists());
}

#[test]
fn one_probe_too_many_is_refused_at_its_line() {
    // Before: "plant.toml: probe: 9 probes, ..." with no line, found only by the compiler.
    let (_dir, p) = setup();
    let mut text = std::fs::read_to_string(&p).unwrap();
    let before = text.lines().count();
    for k in 0..6 {
        text.push_str(&format!("\n[[probe]]\nname = \"extra {k}\"\nnode = \"hub_north\"\n"));
    }
    std::fs::write(&p, text).unwrap();
    // The example has 3 probes; the 9th is "extra 5", whose table starts on the last lines.
    let line = before + 2 + 5 * 4;
    refused(&["inspect", s(&p)], &format!(":{line}:1: probe[extra 5]: 9 probes, the core reads out at most 8"));
}

#[test]
fn demo_never_overwrites_an_edited_plant_or_a_file_named_as_its_folder() {
    let dir = tempfile::Builder::new().prefix("tidewire-hostile-demo-").tempdir().unwrap();
    // A file where the folder should be: a clear message, not "File exists (os error 17)".
    let file = dir.path().join("not-a-folder");
    std::fs::write(&file, b"keep").unwrap();
    refused(&["demo", "--out", s(&file)], "exists and is not a folder");
    assert_eq!(std::fs::read(&file).unwrap(), b"keep");
    // A plant the user edited after a demo run: before, a rerun replaced it silently; now
    // it is moved aside, and the demo still runs.
    let out = dir.path().join("demo");
    std::fs::create_dir(&out).unwrap();
    let plant = out.join("packaging-line.toml");
    std::fs::write(&plant, b"# my own edits\n").unwrap();
    let a = tidewire().args(["demo", "--out", s(&out)]).assert();
    let stdout = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
    assert!(stdout.contains("kept your edited"), "{stdout}");
    assert_eq!(std::fs::read(out.join("packaging-line.toml.edited")).unwrap(), b"# my own edits\n");
    assert!(std::fs::read_to_string(&plant).unwrap().contains("[plant]"));
}

#[test]
fn a_vanishingly_short_segment_is_named_as_lumped_not_as_a_capacitor_the_file_lacks() {
    // Before: "node.controller: ... the capacitor 0.0000 nF ..." for a plant without any
    // capacitor there: the C was the lumped segment's own.
    let (_dir, p) = setup();
    let text = std::fs::read_to_string(&p).unwrap();
    assert!(text.contains("length = \"80 m\""));
    std::fs::write(&p, text.replace("length = \"80 m\"", "length = \"1e-12 m\"")).unwrap();
    let err = refused(&["inspect", s(&p)], "the segments lumped at this node (shorter than half a sample) carry");
    assert!(err.contains("join its two nodes"), "{err}");
}

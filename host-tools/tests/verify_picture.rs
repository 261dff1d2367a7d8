//! The verify picture and the verify text quote the same error: each error panel's legend
//! gives the peak |core − exact| of what it draws, and that figure is the verdict's
//! `max_error` (here read from `verify --json`, the same `ProbeFigures` the text prints).
//! A window shows part of the run: the legend then gives the window's peak and the whole
//! run's, and says which is which.
//!
//! Plants: a drive that rises in two samples (the case where the picture once seemed to
//! disagree with the text: the sharpest edge, the largest model error), on a lossy cable,
//! and the rig-break example, whose comparison runs on after its scheduled break.
use assert_cmd::Command;
use std::path::Path;

const TWO_SAMPLE_EDGE: &str = r#"
[plant]
name = "two-sample edge"
sample_rate = "100 MHz"
duration = "10 us"
[node.a]
[node.b]
load = "100 ohm"
[[segment]]
name = "run"
from = "a"
to = "b"
cable = "cat5e"
length = "20 m"
[drive]
kind = "source"
node = "a"
resistance = "100 ohm"
waveform = { step = "5 V", rise = "20 ns" }
[[probe]]
name = "far"
node = "b"
[[probe]]
name = "near"
node = "a"
[[probe]]
name = "feed current"
segment = "run"
end = "from"
"#;

/// A fresh folder, removed when the guard drops.
fn tmp(name: &str) -> tempfile::TempDir {
    tempfile::Builder::new().prefix(&format!("tidewire-picture-{name}-")).tempdir().unwrap()
}

/// A figure as the legend writes it ("28.4 mV", "1.13 mA", "135 µA") in base units.
fn figure(text: &str) -> f64 {
    let (number, unit) = text.trim().split_once(' ').unwrap_or_else(|| panic!("no unit in '{text}'"));
    let value: f64 = number.parse().unwrap_or_else(|_| panic!("not a number: '{text}'"));
    let prefix = unit.trim_end_matches(['V', 'A']);
    let factor = match prefix {
        "" => 1.0,
        "m" => 1e-3,
        "µ" => 1e-6,
        "n" => 1e-9,
        "p" => 1e-12,
        "k" => 1e3,
        other => panic!("prefix '{other}' in '{text}'"),
    };
    value * factor
}

/// Per error panel, in probe order: the legend's text inside "(peak |error| ...)".
fn legends(svg: &str) -> Vec<String> {
    svg.match_indices("(peak |error| ")
        .map(|(i, m)| {
            let rest = &svg[i + m.len()..];
            rest[..rest.find(')').expect("closing parenthesis")].to_string()
        })
        .collect()
}

/// Run verify with `extra` arguments; the SVG's legends and the JSON's per-probe max_error.
fn verify(dir: &Path, plant: &Path, extra: &[&str]) -> (Vec<String>, Vec<f64>) {
    let (svg, json) = (dir.join("w.svg"), dir.join("v.json"));
    let mut args = vec!["verify", plant.to_str().unwrap(), "--svg", svg.to_str().unwrap()];
    args.extend(["--json", json.to_str().unwrap()]);
    args.extend(extra);
    let out = Command::cargo_bin("tidewire").unwrap().args(&args).output().unwrap();
    assert!(out.status.code().is_some_and(|c| c <= 1), "{}", String::from_utf8_lossy(&out.stderr));
    let doc: serde_json::Value = serde_json::from_slice(&std::fs::read(&json).unwrap()).unwrap();
    let max: Vec<f64> =
        doc["probes"].as_array().unwrap().iter().map(|p| p["max_error"].as_f64().expect("max_error")).collect();
    (legends(&std::fs::read_to_string(&svg).unwrap()), max)
}

/// The legend rounds to three significant figures.
fn same_to_three_figures(shown: f64, exact: f64) -> bool {
    (shown - exact).abs() <= 5e-3 * exact.abs().max(1e-15)
}

fn whole_run_agrees(dir: &Path, plant: &Path) {
    let (legends, max) = verify(dir, plant, &[]);
    assert_eq!(legends.len(), max.len(), "one error panel per probe: {legends:?}");
    for (l, m) in legends.iter().zip(&max) {
        assert!(!l.contains("window"), "a whole-run picture names one figure: {l}");
        let shown = figure(l);
        assert!(same_to_three_figures(shown, *m), "picture {l} against text {m:e}");
    }
}

#[test]
fn a_two_sample_edge_shows_the_same_peak_in_picture_and_text() {
    let guard = tmp("edge");
    let dir = guard.path().to_path_buf();
    let plant = dir.join("edge.toml");
    std::fs::write(&plant, TWO_SAMPLE_EDGE).unwrap();
    whole_run_agrees(&dir, &plant);
}

#[test]
fn after_an_event_the_picture_and_text_still_agree() {
    let guard = tmp("event");
    let dir = guard.path().to_path_buf();
    let plant = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants/rig-break.toml");
    whole_run_agrees(&dir, &plant);
}

#[test]
fn a_window_gives_its_own_peak_and_the_whole_runs_labelled() {
    let guard = tmp("window");
    let dir = guard.path().to_path_buf();
    let plant = dir.join("edge.toml");
    std::fs::write(&plant, TWO_SAMPLE_EDGE).unwrap();
    // From 1 us on, after the edge and its first echoes: the window's peak is smaller.
    let (legends, max) = verify(&dir, &plant, &["--window", "1us..9us"]);
    assert_eq!(legends.len(), max.len());
    for (l, m) in legends.iter().zip(&max) {
        let (here, run) = l.split_once(" in the window shown, ").unwrap_or_else(|| panic!("unlabelled: {l}"));
        let run = run.strip_suffix(" over the whole run").unwrap_or_else(|| panic!("unlabelled: {l}"));
        assert!(same_to_three_figures(figure(run), *m), "whole-run figure {run} against text {m:e}");
        assert!(figure(here) <= figure(run) * 1.005, "{l}");
    }
    let smaller = legends.iter().filter(|l| {
        let (here, run) = l.split_once(" in the window shown, ").unwrap();
        figure(here) < 0.9 * figure(run.trim_end_matches(" over the whole run"))
    });
    assert!(smaller.count() > 0, "the window leaves out the edge's peak: {legends:?}");
}

/// The numbers among an SVG's text elements, in document order, after the first `after`.
fn numbers_after(svg: &str, after: &str) -> Vec<f64> {
    let texts: Vec<&str> = svg
        .split("<text")
        .skip(1)
        .filter_map(|t| t.split_once('>').and_then(|(_, rest)| rest.split_once("</text>")).map(|(s, _)| s.trim()))
        .collect();
    let start = texts.iter().position(|t| *t == after).unwrap_or_else(|| panic!("no text '{after}'"));
    texts[start..].iter().take_while(|t| !t.starts_with("event 1")).filter_map(|t| t.parse().ok()).collect()
}

#[test]
fn the_irrigation_pictures_run_past_the_break_and_mark_it() {
    // The example's break is at 6 us of a 20 us run (`verify_verdicts.rs` checks the figures).
    let guard = tmp("irrigation");
    let dir = guard.path().to_path_buf();
    let plant = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants/irrigation-network.toml");
    let lattice = dir.join("l.svg");
    let (legends, max) = verify(&dir, &plant, &["--lattice", lattice.to_str().unwrap()]);
    let svg = std::fs::read_to_string(dir.join("w.svg")).unwrap();
    let probes = max.len();
    // One mark per probe panel, and one in the lattice view.
    assert_eq!(svg.matches("event 1: segment").count(), probes, "one labelled mark per probe panel");
    assert!(std::fs::read_to_string(&lattice).unwrap().contains("event 1: segment"), "the lattice marks the break");
    // The time axis of the first panel reaches well past the break (ticks up to 18 us).
    let ticks = numbers_after(&svg, "time (µs)");
    let last = ticks.iter().copied().fold(f64::NAN, f64::max);
    assert!(last >= 3.0 * 6.0, "the picture stops at {last} us: {ticks:?}");
    // The error panels' peaks are the verdict's whole-run figures, after the event included.
    for (l, m) in legends.iter().zip(&max) {
        assert!(same_to_three_figures(figure(l), *m), "picture {l} against text {m:e}");
    }
}

/// Rows of a sweep's table (lines that start with a number) and how many say FAIL.
fn sweep_rows(stdout: &str) -> (usize, usize) {
    let rows: Vec<&str> =
        stdout.lines().filter(|l| l.split_whitespace().next().is_some_and(|w| w.parse::<f64>().is_ok())).collect();
    (rows.len(), rows.iter().filter(|l| l.trim_end().ends_with("FAIL")).count())
}

#[test]
fn the_sweep_picture_shows_the_exact_curve_and_rings_exactly_the_failing_points() {
    let guard = tmp("sweep");
    let dir = guard.path().to_path_buf();
    let plant = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants/drive-to-motor.toml");
    let svg = dir.join("s.svg");
    let run = |args: &[&str]| {
        let mut all = vec!["sweep", plant.to_str().unwrap(), "--probe", "motor terminals"];
        all.extend(args);
        all.extend(["--svg", svg.to_str().unwrap()]);
        let o = Command::cargo_bin("tidewire").unwrap().args(&all).output().unwrap();
        assert!(o.status.code().is_some_and(|c| c <= 1), "{}", String::from_utf8_lossy(&o.stderr));
        (String::from_utf8_lossy(&o.stdout).into_owned(), std::fs::read_to_string(&svg).unwrap())
    };
    // Lengths from 1 m (shorter than a sample's travel: the short runs miss the plant's 5 %)
    // to 120 m. Points are drawn as small circles (core and exact, radius 3), failing ones
    // ringed (radius 8), as `plot/sweep.rs` draws them.
    let (text, picture) = run(&["--segment", "motor-feed", "--from", "1 m", "--to", "120 m", "--steps", "6"]);
    let (rows, fails) = sweep_rows(&text);
    assert_eq!(rows, 6, "{text}");
    assert!(fails > 0, "some short runs fail the plant's tolerances: {text}");
    assert_eq!(picture.matches("r=\"8\"").count(), fails, "one ring per failing point");
    assert_eq!(picture.matches("r=\"3\"").count(), 2 * rows, "core and exact at every point");
    assert!(picture.contains("exact reference") && picture.contains("fails the plant"), "legend");
    assert!(picture.contains("critical length") && picture.contains("(m)"), "a length sweep in metres");
    // A load sweep has no critical length, in the text or the picture.
    let (text, picture) = run(&["--node", "motor", "--from", "80 ohm", "--to", "8 kohm", "--steps", "3"]);
    assert!(!text.contains("critical length") && !picture.contains("critical length"), "{text}");
}

#[test]
fn event_labels_on_the_lattice_sit_on_a_light_box() {
    // Before: black text straight on the map's darkest levels, unreadable where the
    // voltage is high (the label of a break drawn over a charged line).
    let dir = tempfile::Builder::new().prefix("tidewire-lattice-labels-").tempdir().unwrap();
    let plant = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants/irrigation-network.toml");
    let svg = dir.path().join("lattice.svg");
    Command::cargo_bin("tidewire")
        .unwrap()
        .args(["verify", plant.to_str().unwrap(), "--lattice", svg.to_str().unwrap()])
        .assert()
        .success();
    let text = std::fs::read_to_string(&svg).unwrap();
    let label = text.find("event 1:").expect("the event's label");
    let text_start = text[..label].rfind("<text").unwrap();
    let before = text[..text_start].trim_end();
    let last_element = &before[before.rfind('<').unwrap()..];
    assert!(last_element.starts_with("<rect") && last_element.contains("#FFFFFF"), "{last_element}");
}

//! `tidewire extract`: synthetic captures made by the exact reference (never the core) of
//! plants of our own, extracted back into plants and checked. Each check names its source.
use std::path::Path;
use tidewire_host::extract::load::EndLoad;
use tidewire_host::extract::{extract, lossless_cable, parse_capture, Capture, Extraction, Options};
use tidewire_host::plant::parse_plant;
use tidewire_host::plant::{presets, Drive, ProbeKind, C0};
use tidewire_host::reference::{exact_response, ExactOptions};

/// A chain of (impedance ohm, length m) runs from the driven port, with `load` at the end.
#[allow(clippy::too_many_arguments)]
fn chain_plant(
    rate: &str,
    duration: &str,
    rs: f64,
    emf: f64,
    delay: &str,
    rise: &str,
    runs: &[(f64, f64)],
    load: &str,
) -> String {
    chain_plant_of(rate, duration, rs, emf, delay, rise, runs, load, "velocity_factor = 0.66")
}

/// As [`chain_plant`], each cable's `cable_line` giving its speed (or its preset).
#[allow(clippy::too_many_arguments)]
fn chain_plant_of(
    rate: &str,
    duration: &str,
    rs: f64,
    emf: f64,
    delay: &str,
    rise: &str,
    runs: &[(f64, f64)],
    load: &str,
    cable_line: &str,
) -> String {
    let mut s = format!("[plant]\nname = \"test chain\"\nsample_rate = \"{rate}\"\nduration = \"{duration}\"\n\n");
    for (i, (z, _)) in runs.iter().enumerate() {
        s += &format!("[cable.c{i}]\nimpedance = \"{z} ohm\"\n{cable_line}\n\n");
    }
    for i in 0..=runs.len() {
        s += &format!("[node.n{i}]\n");
        if i == runs.len() {
            s += &format!("load = {load}\n");
        }
    }
    for (i, (_, l)) in runs.iter().enumerate() {
        s += &format!("\n[[segment]]\nfrom = \"n{i}\"\nto = \"n{}\"\ncable = \"c{i}\"\nlength = \"{l} m\"\n", i + 1);
    }
    s += &format!(
        "\n[drive]\nkind = \"source\"\nnode = \"n0\"\nresistance = \"{rs} ohm\"\nwaveform = {{ step = \"{emf} V\", delay = \"{delay}\", rise = \"{rise}\" }}\n\n[[probe]]\nnode = \"n0\"\n"
    );
    s
}

/// The exact reference's port voltage of plant text `text` as a capture.
fn capture_of(text: &str) -> Capture {
    let plant = parse_plant(text, "synthetic.toml", Path::new(".")).expect("test plant parses");
    let run = exact_response(&plant, &ExactOptions::for_plant(&plant)).expect("exact response");
    Capture {
        file: "synthetic.csv".into(),
        t0: 0.0,
        dt: run.dt,
        volts: run.traces[0].values.clone(),
        places: vec![(0, 0); run.traces[0].values.len()],
    }
}

/// Gaussian noise of standard deviation `sigma`, from a fixed seed (xorshift, Box–Muller).
fn add_noise(v: &mut [f64], sigma: f64, seed: u64) {
    let mut x = seed.max(1);
    let mut uniform = || {
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        ((x >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    };
    for s in v.iter_mut() {
        let (u1, u2) = (uniform(), uniform());
        *s += sigma * (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos();
    }
}

fn opts(rs: f64, emf: f64) -> Options {
    Options {
        rs,
        emf,
        cable: lossless_cable(0.66),
        preset: None,
        rise: None,
        tolerance: 0.03,
        smooth: None,
        refine: 12,
    }
}

fn show(name: &str, x: &Extraction) {
    println!("== {name}: smooth {} ending {:?} load {:?}", x.smooth, x.profile.ending, x.load);
    println!(
        "   edge start {:e} rise {:e} offset {:e} noise {:e}",
        x.edge.start, x.edge.rise, x.edge.offset, x.edge.noise
    );
    println!("   runs {:?}", x.runs.iter().map(|r| (r.start, r.z)).collect::<Vec<_>>());
    for r in &x.lines {
        println!("   {:8.3} .. {:8.3} m  {:8.3} ohm", r.start, r.end, r.z);
    }
    println!(
        "   fit rms {:.4} -> {:.4} V in {} steps",
        x.refined.rms_before, x.refined.rms_after, x.refined.iterations
    );
    println!("   exact max {:.3} % rms {:.3} %", 100.0 * x.roundtrip.exact_max, 100.0 * x.roundtrip.exact_rms);
    match &x.roundtrip.core {
        Ok((_, m, r)) => println!("   core max {:.3} % rms {:.3} %", 100.0 * m, 100.0 * r),
        Err(e) => println!("   core: {e}"),
    }
}

/// Three impedance changes along the line before its end [our own scenario].
const CHAIN: &[(f64, f64)] = &[(50.0, 10.0), (75.0, 6.0), (35.0, 8.0), (100.0, 5.0)];

/// A branched plant: 50 ohm feed to a hub, from which a 75 ohm run goes to an open end and
/// a 100 ohm run to a 150 ohm load [our own scenario].
fn branch_plant() -> String {
    r#"[plant]
name = "branch"
sample_rate = "1 GHz"
duration = "700 ns"

[cable.feed]
impedance = "50 ohm"
velocity_factor = 0.66

[cable.a]
impedance = "75 ohm"
velocity_factor = 0.66

[cable.b]
impedance = "100 ohm"
velocity_factor = 0.66

[node.port]
[node.mid]
[node.hub]
[node.end_a]
load = "open"
[node.end_b]
load = "150 ohm"

[[segment]]
from = "port"
to = "mid"
cable = "feed"
length = "12 m"

[[segment]]
from = "mid"
to = "hub"
cable = "a"
length = "5 m"

[[segment]]
from = "hub"
to = "end_a"
cable = "a"
length = "9 m"

[[segment]]
from = "hub"
to = "end_b"
cable = "b"
length = "16 m"

[drive]
kind = "source"
node = "port"
resistance = "50 ohm"
waveform = { step = "1 V", delay = "15 ns", rise = "0 s" }

[[probe]]
node = "port"
"#
    .to_string()
}

fn run(cap: &Capture, o: &Options) -> Extraction {
    let x = extract(cap, o, vec!["test".into()], "extracted.toml").expect("extraction");
    show(&cap.file, &x);
    x
}

/// Largest |a − b| over the shared samples, as a fraction of `step`.
fn max_diff(a: &[f64], b: &[f64], step: f64) -> f64 {
    a.iter().zip(b).map(|(x, y)| (x - y).abs()).fold(0.0, f64::max) / step
}

// Must show: plants with >= 3 impedance changes, a branch, a resistive or capacitive end;
// the extracted plant's driving-point response within 2 % of the step of the capture.
// The response is the exact reference's (the capture's own maker); the limit is the
// issue's, the physics behind it the telegrapher's equations [closed form per segment].

#[test]
fn three_changes_and_a_resistive_end_round_trip_within_2_percent() {
    let cap = capture_of(&chain_plant("1 GHz", "600 ns", 50.0, 1.0, "20 ns", "0 s", CHAIN, "\"200 ohm\""));
    let x = run(&cap, &opts(50.0, 1.0));
    assert!(x.roundtrip.exact_max < 0.02, "max {}", x.roundtrip.exact_max);
    assert_eq!(x.lines.len(), 4, "{:?}", x.lines);
    match x.load {
        EndLoad::Resistor(r) => assert!((r / 200.0 - 1.0).abs() < 0.02, "{r}"),
        other => panic!("a resistor end, got {other:?}"),
    }
    // The plant written is read by the project's loader: one probe, at the drive, first.
    assert_eq!(x.plant.probes.len(), 1);
    assert!(matches!(x.plant.probes[0].kind, ProbeKind::Voltage(0)));
    assert!(matches!(x.plant.drive, Drive::Source { node: 0, .. }));
    assert_eq!((x.plant.duration * x.plant.sample_rate).round() as usize, cap.volts.len());
}

#[test]
fn capacitive_end_with_a_slow_edge_round_trip_within_2_percent() {
    let cap =
        capture_of(&chain_plant("1 GHz", "800 ns", 50.0, 1.0, "20 ns", "2 ns", CHAIN, "{ capacitor = \"100 pF\" }"));
    let x = run(&cap, &opts(50.0, 1.0));
    assert!(x.roundtrip.exact_max < 0.02, "max {}", x.roundtrip.exact_max);
    match x.load {
        EndLoad::Capacitor(c) => assert!((c / 100e-12 - 1.0).abs() < 0.05, "{c}"),
        other => panic!("a capacitor end, got {other:?}"),
    }
}

#[test]
fn branch_becomes_an_equivalent_line_within_2_percent() {
    let cap = capture_of(&branch_plant());
    let x = run(&cap, &opts(50.0, 1.0));
    assert!(x.roundtrip.exact_max < 0.02, "max {}", x.roundtrip.exact_max);
}

/// Extract `clean` with Gaussian noise of 1 % of the step added (seeded), and return the
/// largest difference of the extracted plant's response from the clean capture, as a
/// fraction of the step: the noise itself is not counted as error.
fn noisy_round_trip(clean: &Capture, name: &str, seed: u64) -> f64 {
    let mut noisy = clean.clone();
    noisy.file = name.into();
    add_noise(&mut noisy.volts, 0.01, seed);
    let x = run(&noisy, &opts(50.0, 1.0));
    let err = max_diff(&x.roundtrip.exact, &clean.volts, 1.0);
    println!("   against the clean capture: max {:.3} %", 100.0 * err);
    err
}

// Must show: the same plants with noise of 1 % of the step: within 3 %. One seed each here
// (seconds); `noise_soak_more_seeds` (ignored, run with `-- --ignored`) tries three more.

#[test]
fn one_percent_noise_three_changes_resistive_end_within_3_percent() {
    let clean = capture_of(&chain_plant("1 GHz", "600 ns", 50.0, 1.0, "20 ns", "0 s", CHAIN, "\"200 ohm\""));
    let err = noisy_round_trip(&clean, "chain, 200 ohm end, 1 % noise", 0x5eed);
    assert!(err < 0.03, "max {err}");
}

#[test]
fn one_percent_noise_capacitive_end_slow_edge_within_3_percent() {
    let clean =
        capture_of(&chain_plant("1 GHz", "800 ns", 50.0, 1.0, "20 ns", "2 ns", CHAIN, "{ capacitor = \"100 pF\" }"));
    let err = noisy_round_trip(&clean, "chain, 100 pF end, 2 ns edge, 1 % noise", 0x5eed);
    assert!(err < 0.03, "max {err}");
}

#[test]
fn one_percent_noise_branch_within_3_percent() {
    let clean = capture_of(&branch_plant());
    let err = noisy_round_trip(&clean, "branch, 1 % noise", 0x5eed);
    assert!(err < 0.03, "max {err}");
}

#[test]
fn single_step_impedance_and_distance_from_the_closed_form() {
    // 50 ohm line, then 80 ohm from 7.3 m (off the layer grid of 0.099 m), matched end.
    // rho = (80 − 50)/(80 + 50); Z = Z0·(1 + rho)/(1 − rho) [closed form] = 80 ohm.
    let (z0, z1, at) = (50.0, 80.0, 7.3);
    let rho = (z1 - z0) / (z1 + z0);
    let expected = z0 * (1.0 + rho) / (1.0 - rho);
    let cap =
        capture_of(&chain_plant("1 GHz", "400 ns", 50.0, 1.0, "10 ns", "0 s", &[(z0, at), (z1, 25.0)], "\"80 ohm\""));
    let x = run(&cap, &opts(50.0, 1.0));
    // One sample's travel: v·dt.
    let travel = 0.66 * C0 * cap.dt;
    // The peeled and merged profile itself, before any fit ...
    assert!(x.runs.len() >= 2, "{:?}", x.runs);
    assert!((x.runs[1].z / expected - 1.0).abs() < 0.01, "peeled {} vs {expected}", x.runs[1].z);
    assert!((x.runs[1].start - at).abs() < travel, "peeled at {} vs {at}", x.runs[1].start);
    // ... and the plant written: a line to the step, then (the 80 ohm line outlasting the
    // record) a resistor of its impedance.
    match x.load {
        EndLoad::Resistor(r) => assert!((r / expected - 1.0).abs() < 0.01, "{r}"),
        other => panic!("a resistor end, got {other:?}"),
    }
    let end = x.lines.last().unwrap().end;
    assert!((end - at).abs() < travel, "{end} vs {at}");
}

#[test]
fn lossy_cable_lengths_within_2_percent_with_its_preset() {
    // Cat 5e runs of 100, 120 and 100 ohm (the middle one a different batch), open end.
    let runs = [(100.0, 30.0), (120.0, 25.0), (100.0, 40.0)];
    let cap = capture_of(&chain_plant_of(
        "250 MHz",
        "1.3 us",
        100.0,
        1.0,
        "20 ns",
        "0 s",
        &runs,
        "\"open\"",
        "preset = \"cat5e\"",
    ));
    let cable = presets::find("cat5e").unwrap();
    let o = Options { cable, preset: Some("cat5e".into()), ..opts(100.0, 1.0) };
    let x = run(&cap, &o);
    assert_eq!(x.lines.len(), 3, "{:?}", x.lines);
    for (got, (_, want)) in x.lines.iter().zip(runs) {
        assert!((got.length() / want - 1.0).abs() < 0.02, "{} m vs {want} m", got.length());
    }
}

#[test]
fn capture_reader_takes_a_header_comments_and_units() {
    let mut text = String::from("# scope export\ntime (s), port (V)\n");
    for k in 0..40 {
        text += &format!("{} ns, {}\n", 2 * k, if k < 10 { "0" } else { "0.5 V" });
    }
    let cap = parse_capture(&text, "c.csv").expect("reads");
    assert_eq!(cap.volts.len(), 40);
    assert!((cap.dt - 2e-9).abs() < 1e-18);
    assert_eq!(cap.places[0], (3, 7));
}

// The command as a user runs it.

fn tidewire() -> assert_cmd::Command {
    assert_cmd::Command::cargo_bin("tidewire").unwrap()
}

/// A fresh folder, removed when the guard drops.
fn tmp(name: &str) -> tempfile::TempDir {
    tempfile::Builder::new().prefix(&format!("tidewire-extract-{name}-")).tempdir().unwrap()
}

fn example_capture() -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/captures/tank-farm-link.csv")
}

#[test]
fn example_capture_gives_a_plant_the_loader_reads_and_a_picture() {
    let guard = tmp("example");
    let d = guard.path().to_path_buf();
    let (out, svg) = (d.join("tank.toml"), d.join("tank.svg"));
    let o = tidewire()
        .args(["extract", example_capture().to_str().unwrap(), "--source-resistance", "50 ohm", "--emf", "1 V"])
        .args(["--velocity-factor", "0.66", "--out", out.to_str().unwrap(), "--svg", svg.to_str().unwrap()])
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&o.stdout);
    assert!(o.status.success(), "{stdout}\n{}", String::from_utf8_lossy(&o.stderr));
    let plant = tidewire_host::plant::load_plant(&out).expect("the plant written reads back");
    assert!(matches!(plant.probes[0].kind, ProbeKind::Voltage(0)));
    // The capture's plant (examples/captures/tank-farm-link.toml, our own): 42 m of 75 ohm,
    // 6 m of 50 ohm, 31 m of 75 ohm, 47 pF.
    let lengths: Vec<f64> = plant.segments.iter().map(|s| s.length).collect();
    assert_eq!(lengths.len(), 3, "{stdout}");
    for (got, want) in lengths.iter().zip([42.0, 6.0, 31.0]) {
        assert!((got / want - 1.0).abs() < 0.02, "{got} vs {want}\n{stdout}");
    }
    let svg_text = std::fs::read_to_string(&svg).unwrap();
    assert!(svg_text.contains("largest discontinuities"));
}

#[test]
fn bad_captures_get_located_errors_exit_2_and_nothing_written() {
    let guard = tmp("bad");
    let d = guard.path().to_path_buf();
    let good = |k: usize| format!("{:e},{}\n", k as f64 * 1e-9, if k < 10 { 0.0 } else { 0.5 });
    let rows = |n: usize| (0..n).map(good).collect::<String>();
    let mut nan = rows(60);
    nan = nan.replacen("0.5\n", "NaN\n", 1);
    let mut backwards = String::from("time,volts\n");
    backwards += &rows(20);
    backwards += "1e-9,0.5\n";
    backwards += &rows(60)[..0];
    let gap: String = (0..60).filter(|&k| k != 30).map(good).collect();
    let flat: String = (0..60).map(|k| format!("{:e},0.0\n", k as f64 * 1e-9)).collect();
    let cases = [
        ("nan.csv", nan, "volts"),
        ("backwards.csv", backwards, "does not increase"),
        ("gap.csv", gap, "gap"),
        ("short.csv", rows(10), "fewer than"),
        ("flat.csv", flat, "no step edge"),
        ("one-column.csv", "time\n1e-9\n".to_string() + &rows(40), "one value"),
    ];
    for (name, text, what) in cases {
        let path = d.join(name);
        std::fs::write(&path, &text).unwrap();
        let out = d.join(format!("{name}.toml"));
        let o = tidewire()
            .args(["extract", path.to_str().unwrap(), "--source-resistance", "50 ohm", "--emf", "1 V"])
            .args(["--velocity-factor", "0.66", "--out", out.to_str().unwrap()])
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{name}: {err}");
        assert!(err.contains(what), "{name}: {err}");
        // file:line:column: located.
        let place = format!("{}:", path.display());
        let rest = err.split(&place).nth(1).unwrap_or("");
        let nums: Vec<&str> = rest.splitn(3, ':').take(2).collect();
        assert!(nums.len() == 2 && nums.iter().all(|n| n.parse::<usize>().is_ok()), "{name}: not located: {err}");
        assert!(!err.contains("panicked"), "{name}: {err}");
        assert!(!out.exists(), "{name}: wrote a plant");
    }
    // Bad options: exit 2, nothing written, the option named.
    let out = d.join("opt.toml");
    let o = tidewire()
        .args(["extract", example_capture().to_str().unwrap(), "--source-resistance", "50 m", "--emf", "1 V"])
        .args(["--velocity-factor", "0.66", "--out", out.to_str().unwrap()])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--source-resistance"));
    assert!(!out.exists());
}

#[test]
fn verify_and_simulate_draw_the_view_against_distance() {
    let guard = tmp("views");
    let d = guard.path().to_path_buf();
    let plant = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/captures/tank-farm-link.toml");
    let svg = d.join("v.svg");
    let o = tidewire()
        .args(["simulate", plant.to_str().unwrap(), "--csv", d.join("s.csv").to_str().unwrap()])
        .args(["--profile-svg", svg.to_str().unwrap()])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = std::fs::read_to_string(&svg).unwrap();
    // The readout shows the splice: 75 -> 50 ohm at 42 m, rho = (50 − 75)/(50 + 75) = −0.2
    // [closed form], read off the peeled profile (no fit) within 0.01.
    let rhos: Vec<f64> = text.split("ρ = ").skip(1).filter_map(|t| t[..6].trim().parse().ok()).collect();
    assert!(rhos.iter().any(|r| (r + 0.2).abs() < 0.01), "readout {rhos:?}");
}

#[test]
#[ignore = "soak: nine more noisy extractions, about a minute"]
fn noise_soak_more_seeds() {
    let cases = [
        ("chain, 200 ohm end", chain_plant("1 GHz", "600 ns", 50.0, 1.0, "20 ns", "0 s", CHAIN, "\"200 ohm\"")),
        ("branch", branch_plant()),
        (
            "chain, 100 pF end, 2 ns edge",
            chain_plant("1 GHz", "800 ns", 50.0, 1.0, "20 ns", "2 ns", CHAIN, "{ capacitor = \"100 pF\" }"),
        ),
    ];
    for (name, text) in cases {
        let clean = capture_of(&text);
        for seed in [7919, 15838, 23757] {
            let err = noisy_round_trip(&clean, name, seed);
            assert!(err < 0.03, "{name}, seed {seed}: max {err}");
        }
    }
}

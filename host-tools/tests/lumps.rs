//! Electrically short segments lumped, capacitors faster than a sample, the per-segment
//! report and the rate search (issue 10 items 2, 4, 5).
use proptest::prelude::*;
use std::path::Path;
use tidewire_host::analysis::{prepare, rate_search};
use tidewire_host::compile::{compile, LumpKind, ProfileKind, SegmentModel};
use tidewire_host::plant::parse_plant;
use tidewire_host::verify::verify;

fn plant_file(name: &str) -> (tidewire_host::plant::Plant, String) {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants").join(name);
    let plant = tidewire_host::plant::load_plant(&path).unwrap();
    (plant, path.display().to_string())
}

#[test]
fn the_silo_bus_at_8_msps_compiles_with_lumped_drops_and_passes_verify_at_every_probe() {
    // 250 m of 120 ohm trunk, drops of 2, 5 and 9 m to 12 kohm receivers, 120 ohm far
    // terminator, 60 ohm driver, 500 ns edge, 8 MS/s: before lumping the compiler refused it
    // ("shorter than half a sample").
    let (plant, file) = plant_file("silo-sensor-bus.toml");
    assert_eq!(plant.sample_rate, 8e6);
    assert_eq!(plant.tolerances, tidewire_host::plant::Tolerances::default(), "judged at the default tolerances");
    let (c, _) = prepare(&plant, &file, ProfileKind::Wide).unwrap();
    let lumped: Vec<&str> = c
        .report
        .segments
        .iter()
        .filter(|t| matches!(t.model, SegmentModel::Lumped(LumpKind::Stub { .. })))
        .map(|t| t.name.as_str())
        .collect();
    assert_eq!(lumped, ["drop-a", "drop-b", "drop-c"]);
    // The stated model error grows with the drop's length, and none is over the tolerance.
    let errs: Vec<f64> = c.report.segments.iter().skip(4).map(|t| t.model_error).collect();
    assert!(errs[0] < errs[1] && errs[1] < errs[2] && errs[2] < 0.05, "{errs:?}");
    assert!(c.report.segments.iter().all(|t| !t.exceeds));
    let (v, _) = verify(&plant, &file, &c, &[], &|_| {}).unwrap();
    assert_eq!(v.probes.len(), 6);
    for p in &v.probes {
        assert!(
            p.pass(),
            "{}: max {:.3} %, rms {:.3} %",
            p.name,
            100.0 * p.max_error / p.norm,
            100.0 * p.rms_error / p.norm
        );
    }
}

/// A matched line into a capacitor whose time constant with the line is a third of a
/// sample: Z0·C = T/3 with Z0 = 50 Ω and T = 10 ns gives C = 66.67 pF [closed form].
const FAST_CAP: &str = r#"
[plant]
name = "fast capacitor"
sample_rate = "100 MHz"
duration = "1 us"
[cable.c50]
impedance = "50 ohm"
delay = "5 ns/m"
[node.src]
[node.cap]
load = { capacitor = "66.6667 pF" }
[[segment]]
from = "src"
to = "cap"
cable = "c50"
length = "20 m"
[drive]
kind = "source"
node = "src"
resistance = "50 ohm"
waveform = { step = "1 V", rise = "100 ns", delay = "50 ns" }
[[probe]]
name = "at capacitor"
node = "cap"
[[probe]]
name = "at source"
node = "src"
"#;

#[test]
fn a_capacitor_a_third_of_a_sample_fast_is_within_one_percent_and_pole_matching_is_worse() {
    // The capacitor sees the line's 50 Ω: τ = T/3. The bilinear port T/(2C) keeps the
    // lag's low-frequency delay τ exactly; the pole-matched port R·tanh(T/(2τ)) (the
    // discrete pole e^(−T/τ)) moves it by half a sample minus τ, which a ramp of 10
    // samples turns into about 2 % of the step (model_error.rs; computed).
    let plant = parse_plant(FAST_CAP, "fast.toml", Path::new(".")).unwrap();
    let (c, _) = prepare(&plant, "fast.toml", ProfileKind::Wide).unwrap();
    let e = &c.report.reactive[0];
    assert!((e.tau / c.dt - 1.0 / 3.0).abs() < 1e-3, "tau {} samples", e.tau / c.dt);
    let (v, _) = verify(&plant, "fast.toml", &c, &[], &|_| {}).unwrap();
    let worst =
        |v: &tidewire_host::verify::Verification| v.probes.iter().map(|p| p.max_error / p.norm).fold(0.0, f64::max);
    let bilinear = worst(&v);
    assert!(bilinear < 0.01, "bilinear: {:.3} % of the step", 100.0 * bilinear);
    // The report's stated error for it agrees with what verify measures (within a factor).
    assert!(e.error > 0.5 * bilinear && e.error < 2.0 * bilinear + 1e-3, "stated {} measured {}", e.error, bilinear);
    let mut matched = c.clone();
    let r_th = 50.0;
    let tau = r_th * 66.6667e-12;
    matched.net.elements[0].port_milliohm = (1000.0 * r_th * (c.dt / (2.0 * tau)).tanh()).round() as u32;
    let (vm, _) = verify(&plant, "fast.toml", &matched, &[], &|_| {}).unwrap();
    let pole_matched = worst(&vm);
    println!(
        "tau = T/3, 10-sample edge: bilinear {:.3} % (stated {:.3} %), pole-matched {:.3} % of the step",
        100.0 * bilinear,
        100.0 * e.error,
        100.0 * pole_matched
    );
    assert!(pole_matched > 1.5 * bilinear, "pole-matched {pole_matched} vs bilinear {bilinear}");
}

#[test]
fn a_joined_short_piece_and_a_load_switched_on_a_merged_node_compile() {
    // A 1 m patch between two trunk runs at 10 MS/s (0.05 samples): the nodes are joined;
    // an event switches a load on one of the joined nodes, and it joins the other's load.
    let text = r#"
[plant]
name = "patch"
sample_rate = "10 MHz"
duration = "20 us"
[cable.c]
impedance = "100 ohm"
delay = "5 ns/m"
[node.a]
[node.b]
load = "1 kohm"
[node.c]
load = "1 kohm"
[node.d]
load = "100 ohm"
[[segment]]
from = "a"
to = "b"
cable = "c"
length = "100 m"
[[segment]]
name = "patch"
from = "b"
to = "c"
cable = "c"
length = "1 m"
[[segment]]
from = "c"
to = "d"
cable = "c"
length = "100 m"
[drive]
kind = "source"
node = "a"
resistance = "100 ohm"
waveform = { step = "1 V", rise = "1 us" }
[[probe]]
name = "d"
node = "d"
[[event]]
at = "10 us"
node = "b"
load = "open"
"#;
    let plant = parse_plant(text, "patch.toml", Path::new(".")).unwrap();
    let (c, _) = prepare(&plant, "patch.toml", ProfileKind::Wide).unwrap();
    assert_eq!(c.report.segments[1].model, SegmentModel::Lumped(LumpKind::Joined));
    assert_eq!(c.node_junction[1], c.node_junction[2]);
    // Before the event the joined node holds both 1 kohm loads in parallel (500 ohm), after
    // it only c's 1 kohm.
    let j = c.node_junction[1] as usize;
    assert_eq!(
        c.net.junctions[j],
        tidewire_core::Junction::Node { shunt: tidewire_core::Shunt::Resistor { milliohm: 500_000 } }
    );
    match c.events[0].action {
        tidewire_host::compile::CoreAction::SetShunt(jj, s) => {
            assert_eq!(jj as usize, j);
            assert_eq!(s, tidewire_core::Shunt::Resistor { milliohm: 1_000_000 });
        }
        a => panic!("{a:?}"),
    }
    let (v, _) = verify(&plant, "patch.toml", &c, &[], &|_| {}).unwrap();
    assert!(v.pass(), "{:?}", v.probes.iter().map(|p| p.max_error / p.norm).collect::<Vec<_>>());
}

#[test]
fn a_short_high_impedance_piece_between_equal_lines_becomes_a_pi_section_or_a_series_inductor() {
    // 1.5 m of 300 ohm between two 100 ohm runs at 10 MS/s (0.15 samples): as a series
    // inductor (L = 300 ohm · 7.5 ns = 2.25 uH) its neglected C costs less than the joined
    // model's neglected L (the piece is inductive against the lines it joins).
    let text = r#"
[plant]
name = "inductive patch"
sample_rate = "10 MHz"
duration = "20 us"
[cable.c]
impedance = "100 ohm"
delay = "5 ns/m"
[cable.hi]
impedance = "300 ohm"
delay = "5 ns/m"
[node.a]
[node.b]
[node.c]
[node.d]
load = "100 ohm"
[[segment]]
from = "a"
to = "b"
cable = "c"
length = "100 m"
[[segment]]
name = "patch"
from = "b"
to = "c"
cable = "hi"
length = "1.5 m"
[[segment]]
from = "c"
to = "d"
cable = "c"
length = "100 m"
[drive]
kind = "source"
node = "a"
resistance = "100 ohm"
waveform = { step = "1 V", rise = "300 ns" }
[[probe]]
name = "a"
node = "a"
[[probe]]
name = "d"
node = "d"
"#;
    let plant = parse_plant(text, "hi.toml", Path::new(".")).unwrap();
    let (c, _) = prepare(&plant, "hi.toml", ProfileKind::Wide).unwrap();
    // Both of its nodes keep a 100 m line, so the piece may be a pi section (C/2, R + L,
    // C/2), which models what the series inductor neglects (C) and what the joined model
    // neglects (L): its stated error is the smallest of the three, and it is chosen.
    assert_eq!(c.report.segments[1].model, SegmentModel::Lumped(LumpKind::Pi));
    let rise = tidewire_host::compile::model_error::judged_rise(&plant, c.dt);
    let stated = |k| tidewire_host::compile::lumped::lump_error(&plant, 1, k, rise);
    assert!(stated(LumpKind::Pi) < stated(LumpKind::Series) && stated(LumpKind::Pi) < stated(LumpKind::Joined));
    // 2L/T = 2 · 2.25 uH / 100 ns = 45 ohm [closed form], between the two nodes.
    let (jb, jc) = (c.node_junction[1], c.node_junction[2]);
    assert!(c.net.junctions.contains(&tidewire_core::Junction::Branch {
        a: jb,
        b: jc,
        port_milliohm: 45_000,
        milliohm: 0
    }));
    let (v, _) = verify(&plant, "hi.toml", &c, &[], &|_| {}).unwrap();
    let pi = v.probes.iter().map(|p| p.max_error / p.norm).fold(0.0, f64::max);
    assert!(v.pass(), "pi model: {pi}");
    // Where a node of the piece has no line of its own beyond the piece's neighbour that is
    // itself short, the pi section does not apply; the series inductor is then chosen over
    // the joined model as before: here the 100 m runs become 20 m (1 sample each at 10 MS/s,
    // not the 1.5 samples a pi section's node needs).
    let short_runs =
        text.replace("length = \"100 m\"", "length = \"20 m\"").replace("rise = \"300 ns\"", "rise = \"3 us\"");
    let plant2 = parse_plant(&short_runs, "hi.toml", Path::new(".")).unwrap();
    let (c2, _) = prepare(&plant2, "hi.toml", ProfileKind::Wide).unwrap();
    assert_eq!(c2.report.segments[1].model, SegmentModel::Lumped(LumpKind::Series));
    let j = c2.node_junction[1] as usize;
    assert_eq!(c2.net.junctions[j], tidewire_core::Junction::SeriesInductor { port_milliohm: 45_000, milliohm: 0 });
}

#[test]
fn a_short_segment_with_a_current_probe_is_refused_with_a_rate_that_makes_it_a_line() {
    let text = FAST_CAP.replace("length = \"20 m\"", "length = \"0.5 m\"").replace(
        "[[probe]]\nname = \"at source\"\nnode = \"src\"",
        "[[probe]]\nname = \"into cap\"\nsegment = \"src-cap\"\nend = \"to\"",
    );
    let plant = parse_plant(&text, "probe.toml", Path::new(".")).unwrap();
    let e = compile(&plant, "probe.toml", ProfileKind::Wide).unwrap_err();
    assert!(e.message.contains("current probe") && e.field == "probe[into cap].segment", "{e}");
    assert!(e.hint.contains("sample_rate"), "{e}");
}

#[test]
fn the_rate_search_checks_its_bounds_before_work_and_finds_a_passing_rate() {
    let (plant, file) = plant_file("silo-sensor-bus.toml");
    // Upside-down bounds, a run too long to hold, too many doublings: refused up front.
    assert!(rate_search::check_bounds(&plant, &file, 8e6, 4e6).is_err());
    assert!(rate_search::check_bounds(&plant, &file, 1e6, 1e13).is_err());
    assert!(rate_search::check_bounds(&plant, &file, 1.0, 1e9).is_err());
    assert!(rate_search::check_bounds(&plant, &file, 0.0, 1e6).is_err());
    let s = rate_search::search(&plant, &file, ProfileKind::Wide, 4e6, 16e6).unwrap();
    let least = s.least_passing.expect("a passing rate");
    // 4 MS/s fails (trunk pieces off the grid, edges 26 % off), 8 MS/s passes: the least
    // passing rate lies between them.
    assert!(least > 4e6 && least <= 8e6, "{least}");
    assert!(s.points.iter().any(|p| p.bisected));
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    /// A lumped stub of any length under the threshold, ending in any resistor and
    /// capacitor, makes a network the core accepts (passive by its load checks), and after
    /// a pulse the fixed-point core decays to exactly zero at every probe.
    #[test]
    fn a_lumped_stub_network_is_accepted_and_decays_to_zero(
        stub_m in 0.05f64..1.24, // 4 ns/m at 10 ns per sample: under 0.5 samples
        r_load in 10.0f64..1e5,
        c_pf in 0.0f64..500.0,
        rs in 10.0f64..500.0,
    ) {
        let load = if c_pf > 1.0 {
            format!("{{ resistor = \"{r_load} ohm\", capacitor = \"{c_pf} pF\", wiring = \"parallel\" }}")
        } else {
            format!("\"{r_load} ohm\"")
        };
        let text = format!(r#"
[plant]
name = "stub"
sample_rate = "100 MHz"
duration = "10 us"
[cable.c]
impedance = "100 ohm"
delay = "4 ns/m"
[node.a]
[node.t]
[node.s]
load = {load}
[node.far]
load = "100 ohm"
[[segment]]
from = "a"
to = "t"
cable = "c"
length = "10 m"
[[segment]]
from = "t"
to = "far"
cable = "c"
length = "7 m"
[[segment]]
from = "t"
to = "s"
cable = "c"
length = "{stub_m} m"
[drive]
kind = "source"
node = "a"
resistance = "{rs} ohm"
waveform = {{ pulse = "1 V", width = "40 ns", rise = "10 ns", delay = "10 ns" }}
[[probe]]
name = "a"
node = "a"
[[probe]]
name = "s"
node = "s"
"#);
        let plant = parse_plant(&text, "stub.toml", Path::new(".")).unwrap();
        let (c, _) = prepare(&plant, "stub.toml", ProfileKind::Wide).unwrap();
        let stub = matches!(c.report.segments[2].model, SegmentModel::Lumped(LumpKind::Stub { .. }));
        prop_assert!(stub, "the stub is not lumped");
        let run = tidewire_host::host_core::run_core(&c, c.samples, &[], &|_| {}).unwrap();
        for trace in &run.recording.probes {
            let tail = &trace[trace.len() - 20..];
            prop_assert!(tail.iter().all(|x| *x == 0.0), "no decay: {:?}", tail);
        }
    }
}

fn silo_path() -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants/silo-sensor-bus.toml")
}

#[test]
fn rate_answers_the_rate_a_plant_needs_and_refuses_bad_bounds_with_exit_2() {
    let out = assert_cmd::Command::cargo_bin("tidewire")
        .unwrap()
        .args(["rate", silo_path().to_str().unwrap(), "--from", "4 MHz", "--to", "16 MHz"])
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert_eq!(out.status.code(), Some(0), "{text}");
    assert!(text.contains("least rate found that passes"), "{text}");
    assert!(text.contains("8.000 MS/s") && text.contains("FAIL"), "{text}");
    for (args, says) in [
        (vec!["--from", "fast"], "--from"),
        (vec!["--from", "16 MHz", "--to", "4 MHz"], "--to"),
        (vec!["--to", "1000 GHz"], "samples"),
        (vec!["--from", "1 Hz", "--to", "1 GHz"], "rungs"),
        (vec!["--part", "z80"], "unknown part"),
    ] {
        let path = silo_path();
        let mut a = vec!["rate", path.to_str().unwrap()];
        a.extend(args.iter().copied());
        let out = assert_cmd::Command::cargo_bin("tidewire").unwrap().args(&a).output().unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{a:?}: {err}");
        assert!(err.contains(says), "{a:?}: {err}");
        assert!(out.stdout.is_empty(), "{a:?}: work done before the check");
    }
}

#[test]
fn a_short_stub_shorted_at_its_end_is_an_inductor_at_the_tap_not_a_short() {
    // 4.5 m of 100 ohm cable shorted at its end, at 10 MS/s (0.225 samples): L = 100 ohm ·
    // 22.5 ns = 2.25 uH to return; 2L/T = 45 ohm [closed form]. Lumped as a short the tap
    // would be dead.
    let text = r#"
[plant]
name = "shorted stub"
sample_rate = "10 MHz"
duration = "20 us"
[cable.c]
impedance = "100 ohm"
delay = "5 ns/m"
[node.a]
[node.t]
[node.s]
load = "short"
[node.far]
load = "100 ohm"
[[segment]]
from = "a"
to = "t"
cable = "c"
length = "100 m"
[[segment]]
from = "t"
to = "far"
cable = "c"
length = "100 m"
[[segment]]
name = "stub"
from = "t"
to = "s"
cable = "c"
length = "4.5 m"
[drive]
kind = "source"
node = "a"
resistance = "100 ohm"
waveform = { step = "1 V", rise = "300 ns" }
[[probe]]
name = "tap"
node = "t"
[[probe]]
name = "far"
node = "far"
"#;
    let plant = parse_plant(text, "short.toml", Path::new(".")).unwrap();
    let (c, _) = prepare(&plant, "short.toml", ProfileKind::Wide).unwrap();
    let j = c.node_junction[1];
    assert_eq!(c.net.junctions[j as usize], tidewire_core::Junction::Node { shunt: tidewire_core::Shunt::Open });
    let el = c.net.elements.iter().find(|e| e.junction == j).expect("an element at the tap");
    assert_eq!((el.kind, el.port_milliohm), (tidewire_core::ElementKind::Inductor, 45_000));
    assert!(c.report.segments[2].model_error < 0.05 && c.report.segments[2].model_error > 0.0);
    let (v, _) = verify(&plant, "short.toml", &c, &[], &|_| {}).unwrap();
    assert!(v.pass(), "{:?}", v.probes.iter().map(|p| p.max_error / p.norm).collect::<Vec<_>>());
}

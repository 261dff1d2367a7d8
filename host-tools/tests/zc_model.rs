//! The characteristic impedance Zc(s) of lossy lines (`compile/zc.rs`, `docs/zc-model.md`):
//! the fitted networks run in the f64 twin against the exact reference, on the two cables
//! where a constant port impedance misses. Run with `--nocapture` for the figures.
//!
//! The core runs the same networks (`core/tests/zc.rs`); here the model and its enforcement.
use std::path::Path;
use tidewire_host::compile::zc_enforce::{fine_margin, realised_zc, scales_text, Decision, LineView, SAFETY};
use tidewire_host::compile::{compile, compile_with, CompileOptions, Compiled, ProfileKind};
use tidewire_host::plant::{parse_plant, Plant};
use tidewire_host::reference::{exact_response, ExactOptions};
use tidewire_host::twin::{run, run_with_zc, Recording};

const WITH_ZC: CompileOptions = CompileOptions { zc_networks: true };
const CONSTANT_PORT: CompileOptions = CompileOptions { zc_networks: false };

/// One segment between a source and a load, both `r` ohms, probes at both ends.
fn plant(cable: &str, length: &str, r: &str, rate: &str, rise: &str, duration: &str) -> String {
    format!(
        r#"
[plant]
name = "zc check"
sample_rate = "{rate}"
duration = "{duration}"
[cable.c]
preset = "{cable}"
[node.src]
[node.far]
load = "{r}"
[[segment]]
from = "src"
to = "far"
cable = "c"
length = "{length}"
[drive]
kind = "source"
node = "src"
resistance = "{r}"
waveform = {{ step = "1 V", rise = "{rise}", delay = "0 s" }}
[[probe]]
name = "src"
node = "src"
[[probe]]
name = "far"
node = "far"
"#
    )
}

/// Largest |model − exact| per probe, as a fraction of the 1 V step.
fn worst(rec: &Recording, exact: &[Vec<f64>]) -> Vec<f64> {
    rec.probes.iter().zip(exact).map(|(m, e)| m.iter().zip(e).map(|(a, b)| (a - b).abs()).fold(0.0, f64::max)).collect()
}

/// The plant, compiled with its Zc networks in the network, and the exact reference.
fn setup(text: &str) -> (Plant, Compiled, Vec<Vec<f64>>) {
    let p = parse_plant(text, "zc.toml", Path::new(".")).unwrap();
    let c = compile_with(&p, "zc.toml", ProfileKind::Wide, WITH_ZC).unwrap();
    let ex = exact_response(&p, &ExactOptions::for_plant(&p)).unwrap();
    let exact = ex.traces.iter().map(|t| t.values.clone()).collect();
    (p, c, exact)
}

/// The enforced networks of a compile (every run of a lossy cable must have one here).
fn networks(c: &Compiled) -> Vec<&tidewire_host::compile::zc_enforce::Enforced> {
    c.report
        .zc_runs
        .iter()
        .map(|r| match &r.decision {
            Decision::Network(e) => e,
            Decision::Refused { reason, .. } => panic!("segment {} refused: {reason}", r.segment),
        })
        .collect()
}

/// Figures of one case: largest error vs exact per probe with a constant Z0 and with the
/// compiled Zc networks (twin over the compiled network), and the least margin.
fn report(name: &str, p: &Plant, c: &Compiled, exact: &[Vec<f64>]) -> (Vec<f64>, Vec<f64>, f64) {
    let n = c.samples;
    let plain = worst(&run(&compile_with(p, "zc.toml", ProfileKind::Wide, CONSTANT_PORT).unwrap(), n, &[]), exact);
    let node = worst(&run(c, n, &[]), exact);
    let mut least = f64::INFINITY;
    for (run, e) in c.report.zc_runs.iter().zip(networks(c)) {
        eprintln!(
            "{name}: segment {} ({} lines): sections x[{}], Z_inf {:.3} ohm, Z_p {:.3} ohm, Zc error {:.3} % (constant port {:.3} %), least margin {:.3e} at {:.4e} Hz",
            run.segment,
            run.lines.len(),
            scales_text(&e.scales),
            e.z_inf,
            f64::from(e.z_p_milliohm) / 1000.0,
            100.0 * e.max_rel_error,
            100.0 * run.constant_error,
            e.margin.0,
            e.margin.1
        );
        least = least.min(e.margin.0);
    }
    let fit = &c.report.zc[0];
    eprintln!(
        "{name}: Zc fit Z_inf {:.2} ohm + {} RC sections, |Zc| {:.1} .. {:.1} ohm over {:.3e} .. {:.3e} Hz, fit error {:.3} %",
        fit.z_inf,
        fit.sections.len(),
        fit.zc_edges.0,
        fit.zc_edges.1,
        fit.band.0,
        fit.band.1,
        100.0 * fit.max_rel_error
    );
    for (k, probe) in ["src", "far"].iter().enumerate() {
        eprintln!(
            "{name}: {probe}: largest error vs exact, % of the step: constant Z0 {:.3}, compiled Zc networks {:.3}",
            100.0 * plain[k],
            100.0 * node[k]
        );
    }
    (plain, node, least)
}

/// Every network of `c` rechecked on a `finer` times finer grid than the compiler's
/// (`zc_enforce::fine_margin`: with 16, 65536 evenly spaced frequencies, so the whole
/// delay's phase turns by at most N·π/65536 between two, and 16384 log-spaced from
/// fs·10⁻⁷), at Q30 and the profile's bits, exact condition (1 − |A|²)·Re Zc >=
/// 2·|Im A|·|Im Zc| without the compiler's phase cushion.
fn recheck(c: &Compiled, frac: u32, finer: usize) -> f64 {
    let fs = 1.0 / c.dt;
    let mut least = f64::INFINITY;
    for (run, e) in c.report.zc_runs.iter().zip(networks(c)) {
        for &line in &run.lines {
            let view = LineView {
                delay: c.net.lines[line as usize].delay,
                loss: c.net.losses.iter().find(|l| l.line == line),
            };
            for bits in [30, frac] {
                let zc = |f: f64| realised_zc(&e.network, e.z_p_milliohm, bits, f, fs);
                let m = fine_margin(&zc, &view, fs, frac, finer);
                least = least.min(m);
            }
        }
    }
    least
}

#[test]
fn cat5e_100m_with_zc_is_within_two_percent_at_both_ends() {
    // The issue's case: 100 m of the Cat 5e preset with its DC loop resistance and skin
    // loss, 100 ohm source and load, 100 MS/s, a 40 ns edge, 4 us (four round trips).
    let text = plant("cat5e", "100 m", "100 ohm", "100 MHz", "40 ns", "4 us");
    let (p, c, exact) = setup(&text);
    let (plain, node, margin) = report("cat5e 100 m", &p, &c, &exact);
    // Without Zc the drive end misses by more than 5 % (the issue's 5.26 %, `tidewire verify`).
    assert!(plain[0] > 0.05, "constant Z0 at the drive end: {}", plain[0]);
    for (k, e) in node.iter().enumerate() {
        assert!(*e < 0.02, "probe {k}: {e:.4} of the step");
    }
    // Passive with the stated margin on every piece of the ladder (before enforcement the
    // pieces were active by -1.1e-3 .. -3.3e-3 at 195 kHz: docs/zc-model.md).
    assert!(margin >= SAFETY, "{margin}");
    let fine = recheck(&c, 30, 16);
    eprintln!("cat5e 100 m: least margin on the fine grid {fine:.3e}");
    assert!(fine >= 0.0, "{fine}");
    // The network is in the compiled lines, the same at both ends of each, and the same
    // network the default compile's twin runs (`run_with_zc`).
    let e = networks(&c)[0];
    for &line in &c.report.zc_runs[0].lines {
        assert_eq!(c.net.lines[line as usize].z_milliohm, e.z_p_milliohm);
        assert_eq!(c.net.losses.iter().find(|l| l.line == line).and_then(|l| l.zc), Some(e.network));
    }
    // The series junctions of the lumped R_dc sit between two lines of the run: both
    // sides have the port Z_p, so the core's one series coefficient c = 2·Z_p/(2·Z_p + R)
    // holds for both and the DC point stays Ohm's law (`zc_networks_keep_the_dc_point...`).
    let mut series = 0;
    for (j, junction) in c.net.junctions.iter().enumerate() {
        if let tidewire_core::Junction::Series { .. } = junction {
            let sides: Vec<u32> = c
                .net
                .lines
                .iter()
                .filter(|l| usize::from(l.a) == j || usize::from(l.b) == j)
                .map(|l| l.z_milliohm)
                .collect();
            assert_eq!(sides, vec![e.z_p_milliohm; 2], "series junction {j}");
            series += 1;
        }
    }
    assert_eq!(series, c.report.zc_runs[0].lines.len() - 1);
    // The default compile carries the networks; a compile with the option off keeps the
    // constant port, and its `run_with_zc` is the twin of the networks all the same.
    let default = compile(&p, "zc.toml", ProfileKind::Wide).unwrap();
    assert_eq!(default.net, c.net);
    let constant = compile_with(&p, "zc.toml", ProfileKind::Wide, CONSTANT_PORT).unwrap();
    assert!(constant.net.losses.iter().all(|l| l.zc.is_none()));
    assert_eq!(run_with_zc(&constant, c.samples).probes, run(&c, c.samples, &[]).probes);
}

#[test]
fn the_core_runs_the_cat5e_case_within_two_percent_at_both_ends_in_both_profiles() {
    // The issue's must-show in fixed point: the default compile (Zc networks in the core's
    // network) run by the core, against the exact reference, % of the 1 V step.
    let text = plant("cat5e", "100 m", "100 ohm", "100 MHz", "40 ns", "4 us");
    let p = parse_plant(&text, "zc.toml", Path::new(".")).unwrap();
    let ex = exact_response(&p, &ExactOptions::for_plant(&p)).unwrap();
    let exact: Vec<Vec<f64>> = ex.traces.iter().map(|t| t.values.clone()).collect();
    for profile in [ProfileKind::Wide, ProfileKind::Narrow] {
        // As `verify` runs it (the drive scaled to the I/O codes).
        let c = tidewire_host::analysis::prepare(&p, "zc.toml", profile).unwrap().0;
        assert!(c.net.losses.iter().any(|l| l.zc.is_some()), "{profile:?}: no network compiled");
        let core = tidewire_host::host_core::run_core(&c, c.samples, &[], &|_| {}).unwrap();
        let e: Vec<f64> = core
            .recording
            .probes
            .iter()
            .zip(&exact)
            .map(|(m, x)| m.iter().zip(x).map(|(a, b)| (a - b).abs()).fold(0.0, f64::max))
            .collect();
        eprintln!("core {profile:?}: drive end {:.3} %, far end {:.3} % of the step", 100.0 * e[0], 100.0 * e[1]);
        for (k, e) in e.iter().enumerate() {
            assert!(*e < 0.02, "{profile:?} probe {k}: {e:.4} of the step");
        }
    }
}

#[test]
fn rg58_30m_at_5ghz_with_zc() {
    // The issue's second case: 30 m of the RG-58 preset (no DC resistance in its source) at
    // 5 GS/s, 50 ohm source and load, a 1 ns edge, 400 ns (two round trips and more).
    let text = plant("coax-50-rg58", "30 m", "50 ohm", "5 GHz", "1 ns", "400 ns");
    let (p, c, exact) = setup(&text);
    let (_plain, node, margin) = report("rg58 30 m", &p, &c, &exact);
    assert!(margin >= SAFETY, "{margin}");
    let fine = recheck(&c, 30, 16);
    eprintln!("rg58 30 m: least margin on the fine grid {fine:.3e}");
    assert!(fine >= 0.0, "{fine}");
    for (k, e) in node.iter().enumerate() {
        assert!(*e < 0.02, "probe {k}: {e:.4} of the step");
    }
}

#[test]
fn narrow_profile_networks_are_passive_too() {
    // The narrow profile's loss sections and Zc coefficients at its LOSS_FRAC bits.
    let frac = <tidewire_core::Narrow as tidewire_core::Profile>::LOSS_FRAC;
    for text in [
        plant("cat5e", "100 m", "100 ohm", "100 MHz", "40 ns", "4 us"),
        plant("coax-50-rg58", "30 m", "50 ohm", "5 GHz", "1 ns", "400 ns"),
    ] {
        let p = parse_plant(&text, "zc.toml", Path::new(".")).unwrap();
        let c = compile_with(&p, "zc.toml", ProfileKind::Narrow, WITH_ZC).unwrap();
        for run in &c.report.zc_runs {
            match &run.decision {
                Decision::Network(e) => {
                    eprintln!(
                        "narrow: segment {} margin {:.3e} scales {}",
                        run.segment,
                        e.margin.0,
                        scales_text(&e.scales)
                    );
                    assert!(e.margin.0 >= SAFETY);
                }
                Decision::Refused { reason, .. } => eprintln!("narrow: segment {} refused: {reason}", run.segment),
            }
        }
        if c.report.zc_runs.iter().all(|r| matches!(r.decision, Decision::Network(_))) {
            let fine = recheck(&c, frac, 16);
            eprintln!("narrow: least margin on the fine grid {fine:.3e}");
            assert!(fine >= 0.0, "{fine}");
        }
    }
}

#[test]
fn zc_networks_keep_the_dc_point_and_decay() {
    // DC: the node-wave end sends a = v − b into a line whose loss filter has DC gain 1, so
    // at DC the line is a wire whatever its Zc network (docs/zc-model.md), and the drive
    // end settles to Ohm's law with the cable's loop resistance lumped in series junctions:
    // v_src = E·(R_loop + R_load)/(R_src + R_loop + R_load) [closed form]. The cable's own
    // approach to it is slow (the skin effect's tail: the exact reference is still 0.5 %
    // above it after 40 us), so the twin runs 800 us, twenty times the plant's 40 us.
    let text = plant("cat5e", "100 m", "100 ohm", "100 MHz", "40 ns", "40 us");
    let (p, c, exact) = setup(&text);
    let r_loop = p.cables[0].r_per_m * 100.0;
    let rec = run(&c, 20 * c.samples, &[]);
    let (src, far) = (*rec.probes[0].last().unwrap(), *rec.probes[1].last().unwrap());
    let (want_src, want_far) = ((r_loop + 100.0) / (200.0 + r_loop), 100.0 / (200.0 + r_loop));
    eprintln!("dc after 800 us: src {src:.6} V (Ohm's law {want_src:.6}), far {far:.6} V (Ohm's law {want_far:.6})");
    // The compiler rounds each lumped section to whole milliohms.
    assert!((src - want_src).abs() < 1e-5 && (far - want_far).abs() < 1e-5, "{src} {far}");
    // Over the plant's own 40 us the twin with Zc follows the exact reference.
    let mut short = rec.clone();
    for t in short.probes.iter_mut() {
        t.truncate(c.samples);
    }
    let w = worst(&short, &exact);
    eprintln!("40 us: largest error vs exact {:.3} % (src), {:.3} % (far)", 100.0 * w[0], 100.0 * w[1]);
    assert!(w.iter().all(|e| *e < 0.01), "{w:?}");
    // Zero input: a 100 ns pulse, then nothing: the probes fall below 1e-5 of the pulse
    // by 90 us and keep falling (measured: to a fifth from 45 to 95 us; the loads, the series resistance and the sections'
    // resistors take the energy; the slowest section's time constant is about 15 us).
    let text = plant("cat5e", "100 m", "100 ohm", "100 MHz", "40 ns", "100 us").replace(
        r#"{ step = "1 V", rise = "40 ns", delay = "0 s" }"#,
        r#"{ pulse = "1 V", width = "100 ns", rise = "0 s", delay = "0 s" }"#,
    );
    let p = parse_plant(&text, "zc.toml", Path::new(".")).unwrap();
    let c = compile_with(&p, "zc.toml", ProfileKind::Wide, WITH_ZC).unwrap();
    let rec = run(&c, c.samples, &[]);
    let peak = |from: usize, to: usize| {
        rec.probes.iter().map(|t| t[from..to].iter().fold(0.0f64, |m, v| m.max(v.abs()))).fold(0.0, f64::max)
    };
    let (middle, tail) = (peak(4000, 5000), peak(9000, 10000));
    eprintln!("decay: largest |v| over 40-50 us {middle:.3e} V, over 90-100 us {tail:.3e} V");
    assert!(tail < 1e-5 && tail < 0.5 * middle, "{middle} {tail}");
}

/// A random plant of lossy cables: a tree over 2–5 nodes and up to one extra segment that
/// closes a loop, lengths 5–150 m, resistive or parallel RC loads at every node but the
/// driven one (whose source resistance is its load), a 1 V, 50 ns pulse at 100 MS/s.
fn random_plant() -> impl proptest::strategy::Strategy<Value = String> {
    use proptest::prelude::*;
    const CABLES: [&str; 4] = ["cat5e", "cat6", "coax-50-rg58", "coax-50-rg213"];
    (2usize..=5, any::<bool>()).prop_flat_map(|(nodes, loop_)| {
        let edges = nodes - 1 + usize::from(loop_ && nodes >= 3);
        (
            Just(nodes),
            proptest::collection::vec((any::<prop::sample::Index>(), 0usize..4, 5.0f64..150.0), edges),
            proptest::collection::vec((20.0f64..2000.0, prop::option::of(10.0f64..500.0)), nodes),
            20.0f64..500.0,
            any::<(prop::sample::Index, prop::sample::Index)>(),
        )
            .prop_map(|(nodes, edges, loads, r_src, (la, lb))| {
                let mut t = String::from(
                    "[plant]\nname = \"random\"\nsample_rate = \"100 MHz\"\nduration = \"40 us\"\n",
                );
                for c in CABLES {
                    t += &format!("[cable.{c}]\npreset = \"{c}\"\n");
                }
                for (k, (r, c)) in loads.iter().enumerate() {
                    t += &format!("[node.n{k}]\n");
                    if k > 0 {
                        t += &match c {
                            Some(pf) => format!(
                                "load = {{ resistor = \"{r:.1} ohm\", capacitor = \"{pf:.1} pF\", wiring = \"parallel\" }}\n"
                            ),
                            None => format!("load = \"{r:.1} ohm\"\n"),
                        };
                    }
                }
                for (k, (parent, cable, len)) in edges.iter().enumerate() {
                    // Tree edges join node k+1 to an earlier node; the last edge of a plant
                    // with a loop joins two random nodes.
                    let (from, to) = if k + 1 < nodes {
                        (parent.index(k + 1), k + 1)
                    } else {
                        let a = la.index(nodes);
                        let b = (a + 1 + lb.index(nodes - 1)) % nodes;
                        (a, b)
                    };
                    t += &format!(
                        "[[segment]]\nname = \"s{k}\"\nfrom = \"n{from}\"\nto = \"n{to}\"\ncable = \"{}\"\nlength = \"{len:.2} m\"\n",
                        CABLES[*cable]
                    );
                }
                t += &format!(
                    "[drive]\nkind = \"source\"\nnode = \"n0\"\nresistance = \"{r_src:.1} ohm\"\nwaveform = {{ pulse = \"1 V\", width = \"50 ns\", rise = \"0 s\", delay = \"0 s\" }}\n"
                );
                for k in 0..nodes {
                    t += &format!("[[probe]]\nname = \"p{k}\"\nnode = \"n{k}\"\n");
                }
                t
            })
    })
}

proptest::proptest! {
    // 128 cases, not 256: each compiles a plant of up to five lossy segments with its loss
    // fits and enforcement (about 0.1 s in a debug build) and rechecks every line on the
    // finer grid; 128 keep this file below the 34 s its former 256-case twin property took.
    // PROPTEST_CASES=1024 for a soak.
    #![proptest_config(proptest::prelude::ProptestConfig {
        cases: std::env::var("PROPTEST_CASES").ok().and_then(|c| c.parse().ok()).unwrap_or(128),
        ..proptest::prelude::ProptestConfig::default()
    })]

    /// Passivity enforcement on trees and loops of lossy cables (both profiles): every run
    /// either gets a network whose least margin is at least SAFETY on the compiler's grid
    /// and >= 0 on a four times finer grid without the cushion (`recheck`), or none.
    #[test]
    fn enforced_networks_are_passive_in_random_plants(text in random_plant(), narrow in proptest::prelude::any::<bool>()) {
        let p = parse_plant(&text, "random.toml", Path::new(".")).unwrap();
        let (profile, frac) = if narrow {
            (ProfileKind::Narrow, <tidewire_core::Narrow as tidewire_core::Profile>::LOSS_FRAC)
        } else {
            (ProfileKind::Wide, <tidewire_core::Wide as tidewire_core::Profile>::LOSS_FRAC)
        };
        let c = compile_with(&p, "random.toml", profile, WITH_ZC).unwrap();
        proptest::prop_assert!(c.report.zc_runs.len() == p.segments.len());
        let mut kept = c.clone();
        kept.report.zc_runs.retain(|r| matches!(r.decision, Decision::Network(_)));
        for run in &kept.report.zc_runs {
            if let Decision::Network(e) = &run.decision {
                proptest::prop_assert!(e.margin.0 >= SAFETY, "margin {:?}\n{text}", e.margin);
            }
        }
        let fine = recheck(&kept, frac, 4);
        proptest::prop_assert!(fine >= 0.0, "fine-grid margin {fine}\n{text}");
    }
}

proptest::proptest! {
    // 64 cases: each runs 4000 samples of the twin over a compiled plant of up to five
    // segments (about 0.15 s in a debug build); passivity itself is the 256-case property
    // above, this one measures that the networks also decay in the running model.
    #![proptest_config(proptest::prelude::ProptestConfig {
        cases: std::env::var("PROPTEST_CASES").ok().and_then(|c| c.parse().ok()).unwrap_or(64),
        ..proptest::prelude::ProptestConfig::default()
    })]

    /// Trees and loops of lossy cables with their enforced Zc networks in the compiled
    /// network (node-wave form, f64 twin): after a pulse every node voltage stays within 2 V
    /// of the 1 V pulse and decays (the last 4 us hold less than 1 % of the run's peak).
    #[test]
    fn zc_networks_stay_bounded_and_decay_in_random_plants(text in random_plant()) {
        let p = parse_plant(&text, "random.toml", Path::new(".")).unwrap();
        let c = compile_with(&p, "random.toml", ProfileKind::Wide, WITH_ZC).unwrap();
        let rec = run(&c, c.samples, &[]);
        let n = c.samples;
        let peak = |from: usize| rec.probes.iter().map(|t| t[from..].iter().fold(0.0f64, |m, v| m.max(v.abs()))).fold(0.0, f64::max);
        let (all, tail) = (peak(0), peak(n - n / 10));
        proptest::prop_assert!(all.is_finite() && all <= 2.0, "peak {all}\n{text}");
        proptest::prop_assert!(tail <= 0.01 * all, "tail {tail} of peak {all}\n{text}");
    }
}

#[test]
fn inspect_reports_each_cable_runs_network() {
    // The demo irrigation plant's Cat 5e weather link, as a user reads it: text and JSON.
    let plant = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants/irrigation-network.toml");
    let json = std::env::temp_dir().join(format!("tidewire-zc-{}.json", std::process::id()));
    let out = assert_cmd::Command::cargo_bin("tidewire")
        .unwrap()
        .args(["inspect", plant.to_str().unwrap(), "--json", json.to_str().unwrap()])
        .assert()
        .success();
    let text = String::from_utf8_lossy(&out.get_output().stdout).into_owned();
    let line = text.lines().find(|l| l.contains("segment weather-link")).unwrap_or_else(|| panic!("{text}"));
    assert!(line.contains("Zc network on") && line.contains("least margin +"), "{line}");
    let v: serde_json::Value = serde_json::from_slice(&std::fs::read(&json).unwrap()).unwrap();
    let _ = std::fs::remove_file(&json);
    let run = &v["zc_runs"][0];
    assert_eq!(run["segment"], "weather-link");
    assert_eq!(run["network"], true);
    // On by default: the core runs the network.
    assert_eq!(run["in_core_network"], true);
    assert!(run["refused_because"].is_null());
    let (m, e, e0) = (
        run["least_margin"].as_f64().unwrap(),
        run["fit_error_fraction"].as_f64().unwrap(),
        run["constant_port_error_fraction"].as_f64().unwrap(),
    );
    assert!(m >= SAFETY && e < e0, "{run}");
    assert_eq!(v["zc_passivity_margin"]["margin"].as_f64(), Some(m));
}

#[test]
fn a_plant_file_can_keep_the_constant_port_and_a_wrong_choice_is_located() {
    // `[plant] characteristic_impedance = "constant"`: the compile a core without its
    // zc-check feature can load (no LineLoss::zc anywhere, lines at Z0).
    let text = plant("cat5e", "100 m", "100 ohm", "100 MHz", "40 ns", "4 us");
    let fitted = parse_plant(&text, "zc.toml", Path::new(".")).unwrap();
    assert!(compile(&fitted, "zc.toml", ProfileKind::Wide).unwrap().net.losses.iter().any(|l| l.zc.is_some()));
    let with = |choice: &str| {
        text.replace("duration = \"4 us\"", &format!("duration = \"4 us\"\ncharacteristic_impedance = \"{choice}\""))
    };
    let p = parse_plant(&with("constant"), "zc.toml", Path::new(".")).unwrap();
    let c = compile(&p, "zc.toml", ProfileKind::Wide).unwrap();
    assert!(c.net.losses.iter().all(|l| l.zc.is_none()));
    assert!(c.report.zc_runs.iter().all(|r| !r.compiled));
    let e = parse_plant(&with("sqrt"), "zc.toml", Path::new(".")).unwrap_err();
    assert_eq!((e.line, e.field.as_str()), (6, "plant.characteristic_impedance"), "{e:?}");
    assert!(e.message.contains("sqrt") && e.hint.contains("constant"), "{e:?}");
}

#[test]
fn verify_does_not_judge_a_final_value_the_exact_reference_has_not_reached() {
    // 4 us of 100 m Cat 5e: the skin-effect tail keeps the exact reference itself more than
    // the 0.2 % final-value tolerance from the DC point at the end, so the final value is
    // not judged (the max and RMS errors judge the end) and the run passes.
    let dir = tempfile::tempdir().unwrap();
    let (file, json) = (dir.path().join("cat5e.toml"), dir.path().join("v.json"));
    std::fs::write(&file, plant("cat5e", "100 m", "100 ohm", "100 MHz", "40 ns", "4 us")).unwrap();
    let out = assert_cmd::Command::cargo_bin("tidewire")
        .unwrap()
        .args(["verify", file.to_str().unwrap(), "--json", json.to_str().unwrap()])
        .assert()
        .success();
    let text = String::from_utf8_lossy(&out.get_output().stdout).into_owned();
    assert!(text.contains("final value      not judged"), "{text}");
    let v: serde_json::Value = serde_json::from_slice(&std::fs::read(&json).unwrap()).unwrap();
    for p in v["probes"].as_array().unwrap() {
        assert_eq!(p["final_value"]["against"], "unsettled", "{p}");
        assert_eq!(p["final_value"]["checked"], false, "{p}");
        assert!(p["pass"]["final_value"].is_null(), "{p}");
    }
    assert_eq!(v["verdict"], "pass");
}

#[test]
fn equal_cable_runs_share_one_enforcement_and_it_is_the_direct_one() {
    // A trunk of four runs (three of 40 m, one of 25 m): the compiler enforces each kind of
    // run once (`zc_runs.rs`). Every run's recorded result must equal `enforce` called
    // directly on that run's own lines.
    let mut text = String::from(
        "[plant]\nname = \"equal runs\"\nsample_rate = \"100 MHz\"\nduration = \"4 us\"\n[cable.c]\npreset = \"cat5e\"\n",
    );
    for k in 0..=4 {
        text += &format!("[node.n{k}]\n");
    }
    text += "load = \"100 ohm\"\n";
    for (k, len) in ["40 m", "40 m", "25 m", "40 m"].iter().enumerate() {
        text += &format!("[[segment]]\nfrom = \"n{k}\"\nto = \"n{}\"\ncable = \"c\"\nlength = \"{len}\"\n", k + 1);
    }
    text += "[drive]\nkind = \"source\"\nnode = \"n0\"\nresistance = \"100 ohm\"\n\
             waveform = { step = \"1 V\", rise = \"40 ns\", delay = \"0 s\" }\n\
             [[probe]]\nname = \"far\"\nnode = \"n4\"\n";
    let p = parse_plant(&text, "runs.toml", Path::new(".")).unwrap();
    let c = compile_with(&p, "runs.toml", ProfileKind::Wide, CONSTANT_PORT).unwrap();
    assert_eq!(c.report.zc_runs.len(), 4, "one Zc(s) run per lossy segment");
    let frac = <tidewire_core::Wide as tidewire_core::Profile>::LOSS_FRAC;
    for run in &c.report.zc_runs {
        let views: Vec<LineView<'_>> = run
            .lines
            .iter()
            .map(|&l| LineView {
                delay: c.net.lines[l as usize].delay,
                loss: c.net.losses.iter().find(|x| x.line == l),
            })
            .collect();
        let z0 = f64::from(c.net.lines[run.lines[0] as usize].z_milliohm) / 1000.0;
        let cable = &p.cables[p.segments[run.segment].cable];
        let direct =
            tidewire_host::compile::zc_enforce::enforce(cable, &c.report.zc[run.fit], &views, z0, 1.0 / c.dt, frac);
        assert_eq!((run.constant_error, &run.decision), (direct.0, &direct.1), "segment {}", run.segment);
    }
    let r = &c.report.zc_runs;
    assert_eq!(r[0].decision, r[1].decision, "equal runs, equal decisions");
    assert_eq!(r[0].decision, r[3].decision, "equal runs, equal decisions");
}

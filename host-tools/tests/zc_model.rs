//! The characteristic impedance Zc(s) of lossy lines (`compile/zc.rs`, `docs/zc-model.md`):
//! the fitted networks run in the f64 twin against the exact reference, on the two cables
//! where a constant port impedance misses. Run with `--nocapture` for the figures.
//!
//! The core does not run the Zc networks yet; these tests measure the model it is to follow.
use std::path::Path;
use tidewire_host::compile::{compile, Compiled, ProfileKind};
use tidewire_host::plant::{parse_plant, Plant};
use tidewire_host::reference::{exact_response, ExactOptions};
use tidewire_host::twin::{run, run_with_zc, Recording, ZcRealisation};

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

fn setup(text: &str) -> (Plant, Compiled, Vec<Vec<f64>>) {
    let p = parse_plant(text, "zc.toml", Path::new(".")).unwrap();
    let c = compile(&p, "zc.toml", ProfileKind::Wide).unwrap();
    {
        let t0 = text.replace("preset = \"cat5e\"", "preset = \"cat5e\"\nresistance = \"0 ohm/m\"");
        let p0 = parse_plant(&t0, "zc.toml", Path::new(".")).unwrap();
        let c0 = compile(&p0, "zc.toml", ProfileKind::Wide).unwrap();
        let r0 = run_with_zc(&c0, 10 * c0.samples, ZcRealisation::NodeWave);
        eprintln!(
            "  no R: junctions {:?} losses {:?} end {:.5} {:.5}",
            c0.net.junctions,
            c0.net.losses.len(),
            r0.probes[0].last().unwrap(),
            r0.probes[1].last().unwrap()
        );
    }
    let ex = exact_response(&p, &ExactOptions::for_plant(&p)).unwrap();
    let exact = ex.traces.iter().map(|t| t.values.clone()).collect();
    (p, c, exact)
}

/// Figures of one case: largest error vs exact per probe with a constant Z0, with Zc in
/// node-wave form and with Zc behind a series adaptor, and the least passivity margin of
/// its lines (`zc::passivity_margin`).
type Figures = (Vec<f64>, Vec<f64>, Vec<f64>, f64);

fn report(name: &str, c: &Compiled, exact: &[Vec<f64>]) -> Figures {
    let n = c.samples;
    let mut least = f64::INFINITY;
    let plain = worst(&run(c, n, &[]), exact);
    let node = worst(&run_with_zc(c, n, ZcRealisation::NodeWave), exact);
    let series = worst(&run_with_zc(c, n, ZcRealisation::SeriesAdaptor), exact);
    for &(line, k) in &c.report.zc_lines {
        let loss = c.net.losses.iter().find(|l| l.line == line);
        let delay = c.net.lines[line as usize].delay;
        let (m, f) = tidewire_host::compile::zc::passivity_margin(&c.report.zc[k], loss, delay, 1.0 / c.dt, 30);
        eprintln!("{name}: line {line} ({delay} samples): passivity margin {m:.3e} at {f:.4e} Hz");
        least = least.min(m);
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
            "{name}: {probe}: largest error vs exact, % of the step: constant Z0 {:.3}, Zc node-wave {:.3}, Zc series adaptor {:.3}",
            100.0 * plain[k],
            100.0 * node[k],
            100.0 * series[k]
        );
    }
    (plain, node, series, least)
}

#[test]
fn cat5e_100m_with_zc_is_within_two_percent_at_both_ends() {
    // The issue's case: 100 m of the Cat 5e preset with its DC loop resistance and skin
    // loss, 100 ohm source and load, 100 MS/s, a 40 ns edge, 4 us (four round trips).
    let text = plant("cat5e", "100 m", "100 ohm", "100 MHz", "40 ns", "4 us");
    let (_, c, exact) = setup(&text);
    let (plain, node, series, margin) = report("cat5e 100 m", &c, &exact);
    // Without Zc the drive end misses by more than 5 % (the issue's 5.26 %, `tidewire verify`).
    assert!(plain[0] > 0.05, "constant Z0 at the drive end: {}", plain[0]);
    for (k, e) in node.iter().enumerate() {
        assert!(*e < 0.02, "probe {k}: {e:.4} of the step");
    }
    // Not passive everywhere: the lumped-resistance ladder's pieces (6-13 samples) are
    // active by a little just below the fit band (measured: least margin -3.3e-3 at
    // 195 kHz). A short piece's even mode is as lossy as its shunt conductance, which
    // the skin-only line barely has, so Zc's fitted phase and the loss filter must agree
    // closely there (docs/zc-model.md, what the core still needs). Held here so that a
    // change that moves it is seen.
    assert!(margin < 0.0 && margin > -0.005, "{margin}");
    // inspect reports the same least margin (compile report, wide profile's Q30 sections).
    assert_eq!(c.report.zc_margin.map(|m| m.0), Some(margin));
    // The series adaptor gets the drive end right but sends 2·Z_inf·i into the line: the
    // far end misses.
    assert!(series[1] > node[1], "series {} node {}", series[1], node[1]);
}

#[test]
fn rg58_30m_at_5ghz_with_zc() {
    // The issue's second case: 30 m of the RG-58 preset (no DC resistance in its source) at
    // 5 GS/s, 50 ohm source and load, a 1 ns edge, 400 ns (two round trips and more).
    let text = plant("coax-50-rg58", "30 m", "50 ohm", "5 GHz", "1 ns", "400 ns");
    let (_, c, exact) = setup(&text);
    let (_plain, node, _series, margin) = report("rg58 30 m", &c, &exact);
    // The one line (757 samples) is passive on the grid (measured margin 8.3e-3).
    assert!(margin > 0.0, "{margin}");
    for (k, e) in node.iter().enumerate() {
        assert!(*e < 0.02, "probe {k}: {e:.4} of the step");
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
    let rec = run_with_zc(&c, 20 * c.samples, ZcRealisation::NodeWave);
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
    let c = compile(&p, "zc.toml", ProfileKind::Wide).unwrap();
    let rec = run_with_zc(&c, c.samples, ZcRealisation::NodeWave);
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
    #![proptest_config(proptest::prelude::ProptestConfig {
        cases: std::env::var("PROPTEST_CASES").ok().and_then(|c| c.parse().ok()).unwrap_or(256),
        ..proptest::prelude::ProptestConfig::default()
    })]

    /// Trees and loops of lossy cables with Zc networks at every line end (node-wave form,
    /// f64 twin): after a pulse every node voltage stays within 2 V of the 1 V pulse and
    /// decays (the last 4 us hold less than 1 % of the run's peak). Marti's form is not a
    /// lossless adaptor (docs/zc-model.md), so this is measured, not argued.
    #[test]
    fn zc_networks_stay_bounded_and_decay_in_random_plants(text in random_plant()) {
        let p = parse_plant(&text, "random.toml", Path::new(".")).unwrap();
        let c = compile(&p, "random.toml", ProfileKind::Wide).unwrap();
        // Every line is of a lossy cable, so every line end has a network.
        proptest::prop_assert!(c.report.zc_lines.len() == c.net.lines.len() && !c.report.zc.is_empty());
        let rec = run_with_zc(&c, c.samples, ZcRealisation::NodeWave);
        let n = c.samples;
        let peak = |from: usize| rec.probes.iter().map(|t| t[from..].iter().fold(0.0f64, |m, v| m.max(v.abs()))).fold(0.0, f64::max);
        let (all, tail) = (peak(0), peak(n - n / 10));
        proptest::prop_assert!(all.is_finite() && all <= 2.0, "peak {all}\n{text}");
        proptest::prop_assert!(tail <= 0.01 * all, "tail {tail} of peak {all}\n{text}");
    }
}

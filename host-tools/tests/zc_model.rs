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
    let ex = exact_response(&p, &ExactOptions::for_plant(&p)).unwrap();
    let exact = ex.traces.iter().map(|t| t.values.clone()).collect();
    (p, c, exact)
}

fn report(name: &str, c: &Compiled, exact: &[Vec<f64>]) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
    let n = c.samples;
    let plain = worst(&run(c, n, &[]), exact);
    let node = worst(&run_with_zc(c, n, ZcRealisation::NodeWave), exact);
    let series = worst(&run_with_zc(c, n, ZcRealisation::SeriesAdaptor), exact);
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
    (plain, node, series)
}

#[test]
fn cat5e_100m_with_zc_is_within_two_percent_at_both_ends() {
    // The issue's case: 100 m of the Cat 5e preset with its DC loop resistance and skin
    // loss, 100 ohm source and load, 100 MS/s, a 40 ns edge, 4 us (four round trips).
    let text = plant("cat5e", "100 m", "100 ohm", "100 MHz", "40 ns", "4 us");
    let (_, c, exact) = setup(&text);
    let (plain, node, series) = report("cat5e 100 m", &c, &exact);
    // Without Zc the drive end misses by more than 5 % (the issue's 5.26 %, `tidewire verify`).
    assert!(plain[0] > 0.05, "constant Z0 at the drive end: {}", plain[0]);
    for (k, e) in node.iter().enumerate() {
        assert!(*e < 0.02, "probe {k}: {e:.4} of the step");
    }
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
    let (_plain, node, _series) = report("rg58 30 m", &c, &exact);
    for (k, e) in node.iter().enumerate() {
        assert!(*e < 0.02, "probe {k}: {e:.4} of the step");
    }
}

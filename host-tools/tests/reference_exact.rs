//! Whole-plant checks of the exact reference (`tidewire_host::reference`) against published
//! worked examples and closed forms. Each check names its source next to the assertion.

use num_complex::Complex64;
use tidewire_host::plant::{
    CableType, Drive, End, Load, LossModel, Node, Plant, Probe, ProbeKind, Segment, Span, Tolerances, Waveform, C0,
};
use tidewire_host::reference::{
    dc_operating_point, exact_response, segment_s21, transfer, ExactOptions, ReferenceError,
};

fn cable(z0: f64, velocity: f64, r_per_m: f64, loss: Option<LossModel>) -> CableType {
    CableType { name: "line".into(), z0, velocity, r_per_m, loss, source: "test".into() }
}

/// A source node, one segment of `length` m, and a far node with `load`; probes: far-end
/// voltage, source-end voltage, current into the segment at its far end.
fn one_line(c: CableType, length: f64, emf: Waveform, rs: f64, load: Load, rate: f64) -> Plant {
    let node = |name: &str, load| Node { name: name.into(), load, span: Span::default() };
    Plant {
        name: "bench".into(),
        notes: vec![],
        sample_rate: rate,
        duration: 1e-6,
        cables: vec![c],
        nodes: vec![node("feed", Load::Open), node("far", load)],
        segments: vec![Segment {
            name: "run".into(),
            from: 0,
            to: 1,
            cable: 0,
            length,
            span: Span::default(),
            inline: None,
        }],
        drive: Drive::Source { node: 0, emf, rs },
        probes: vec![
            Probe { name: "v far".into(), kind: ProbeKind::Voltage(1) },
            Probe { name: "v feed".into(), kind: ProbeKind::Voltage(0) },
            Probe { name: "i far".into(), kind: ProbeKind::Current(0, End::To) },
        ],
        tolerances: Tolerances::default(),
        events: vec![],
        lattice_path: vec![],
        zc_networks: true,
    }
}

fn step(amplitude: f64, rise: f64) -> Waveform {
    Waveform::Step { amplitude, delay: 0.0, rise }
}

fn run(plant: &Plant, samples: usize) -> tidewire_host::reference::ExactRun {
    exact_response(plant, &ExactOptions { samples, wrap_level: 1e-9 }).expect("exact response")
}

fn peak(values: &[f64]) -> f64 {
    values.iter().fold(0.0, |p: f64, v| p.max(v.abs()))
}

#[test]
fn ulaby_step_into_mismatched_line_follows_the_bounce_series() {
    // Source: Ulaby, Fundamentals of Applied Electromagnetics, problem 2.75 (worked in a
    // published solution set; docs/references.md). Vg = 60 V, Rg = 100, Z0 = 50,
    // RL = 25, T = 5 ns; at 1 GHz T is 5 samples, on the grid.
    let c = cable(50.0, 2.0e8, 0.0, None);
    let plant = one_line(c, 1.0, step(60.0, 0.0), 100.0, Load::Resistor(25.0), 1.0e9);
    let r = run(&plant, 200);
    let (load, feed) = (&r.traces[0].values, &r.traces[1].values);
    // [closed form] first wave 60·50/150 = 20 V, Gamma_L = −1/3, Gamma_g = +1/3:
    // load plateau k (from (2k+1)T): (40/3)·sum_{j<=k} (−1/9)^j;
    // feed plateau k (from 2kT): 20 − (80/9)·sum_{j<k} (−1/9)^j.
    let series = |k: usize| (0..k).map(|j| (-1.0f64 / 9.0).powi(j as i32)).sum::<f64>();
    let t = 5;
    for k in 0..4 {
        let want = 40.0 / 3.0 * series(k + 1);
        let got = load[(2 * k + 1) * t + t]; // middle of [(2k+1)T, (2k+3)T)
        assert!((got - want).abs() <= 1e-6 * want, "load plateau {k}: {got} vs {want}");
    }
    for k in 0..3 {
        let want = 20.0 - 80.0 / 9.0 * series(k);
        let got = feed[2 * k * t + t]; // middle of [2kT, 2(k+1)T)
        assert!((got - want).abs() <= 1e-6 * want, "feed plateau {k}: {got} vs {want}");
    }
    // The published rounded values, docs/references.md: 13.333, 11.852, 12.016, 11.998 V at the
    // load and 20, 11.111, 12.099 V at the source end.
    for (got, want) in [10, 20, 30, 40].iter().map(|&m| load[m]).zip([13.333, 11.852, 12.016, 11.998]) {
        assert!((got - want).abs() < 6e-4, "{got} vs published {want}");
    }
    for (got, want) in [5, 15, 25].iter().map(|&m| feed[m]).zip([20.0, 11.111, 12.099]) {
        assert!((got - want).abs() < 6e-4, "{got} vs published {want}");
    }
    // Final value 60·25/125 = 12 V [closed form], after 40 round trips.
    assert!((load[199] - 12.0).abs() <= 1e-6 * 12.0, "final {}", load[199]);
    // Nothing arrives before T [closed form], up to the stated wrap-around bound.
    let bound = r.wrap_bound * 60.0;
    assert!(bound < 1e-6, "bound {bound}");
    assert!(load[..5].iter().all(|v| v.abs() <= bound), "precursor {:?}", &load[..5]);
}

#[test]
fn lossy_line_settles_to_ohms_law() {
    // [closed form] 100 m at 0.1 ohm/m loop resistance (10 ohm) between 10 V behind 50 ohm
    // and a 100 ohm load: v_load = 10·100/(50 + 10 + 100).
    let c = cable(50.0, 2.0e8, 0.1, None);
    let plant = one_line(c, 100.0, step(10.0, 0.0), 50.0, Load::Resistor(100.0), 1.0e8);
    let want = 10.0 * 100.0 / 160.0;
    let dc = dc_operating_point(&plant, 10.0).expect("dc");
    assert!((dc[1] - want).abs() <= 1e-4 * want, "dc load {}", dc[1]);
    assert!((dc[0] - 10.0 * 110.0 / 160.0).abs() <= 1e-4 * want, "dc feed {}", dc[0]);
    let r = run(&plant, 4000); // 40 us, 40 round trips
    let late = *r.traces[0].values.last().unwrap();
    assert!((late - want).abs() <= 1e-4 * want, "late load {late} vs {want}");
    // Same settled current flows out of the line into the load [closed form]: −v/RL.
    let i = *r.traces[2].values.last().unwrap();
    assert!((i + want / 100.0).abs() <= 1e-4 * want / 100.0, "late current {i}");
    // transfer() at s = 0 is the DC operating point per volt.
    let h0 = transfer(&plant, 0, Complex64::new(0.0, 0.0)).unwrap();
    assert!((h0.re * 10.0 - want).abs() < 1e-12);
}

/// TIA-568 category 5e insertion loss, dB per 100 m, f in MHz [memory for the formula]
/// (docs/references.md). Local to this test on purpose.
fn cat5e_db(f_mhz: f64) -> f64 {
    1.967 * f_mhz.sqrt() + 0.023 * f_mhz + 0.050 / f_mhz.sqrt()
}

/// Least-squares fit of alpha = k_c·sqrt(f) + k_d·f (Np/m, f in Hz) to the cat 5e curve at
/// the given frequencies (MHz).
fn fit_cat5e(freqs: &[f64]) -> LossModel {
    // Work in dB/100 m against sqrt(f_MHz) and f_MHz, then convert units.
    let (mut a11, mut a12, mut a22, mut b1, mut b2) = (0.0, 0.0, 0.0, 0.0, 0.0);
    for &f in freqs {
        let (u, w, y) = (f.sqrt(), f, cat5e_db(f));
        a11 += u * u;
        a12 += u * w;
        a22 += w * w;
        b1 += u * y;
        b2 += w * y;
    }
    let det = a11 * a22 - a12 * a12;
    let c_sqrt = (b1 * a22 - b2 * a12) / det; // dB/100 m per sqrt(MHz)
    let c_lin = (a11 * b2 - a12 * b1) / det; // dB/100 m per MHz
    let np_per_m = 1.0 / (20.0 / std::f64::consts::LN_10) / 100.0; // dB/100 m -> Np/m
    LossModel { k_c: c_sqrt * np_per_m / 1e3, k_d: c_lin * np_per_m / 1e6 }
}

#[test]
fn cat5e_fit_reproduces_the_insertion_loss_curve_within_what_the_model_can_reach() {
    let freqs = [1.0, 4.0, 10.0, 16.0, 31.25, 62.5, 100.0];
    let loss = fit_cat5e(&freqs);
    // Nominal 100 ohm, NVP 0.68 [practice]. No DC resistance: the fitted LossModel carries
    // the whole curve (R_dc would add a constant alpha = R_dc/(2·Z0) on top of it).
    let c = cable(100.0, 0.68 * C0, 0.0, Some(loss));
    let length = 100.0;
    let db_per_np = 20.0 / std::f64::consts::LN_10;
    // [closed form] the causal skin term R·(1 + j) has an internal reactance equal to its
    // resistance; to second order in R/(wL) it lowers alpha by k_c²·v/(2·pi) per metre at
    // every frequency (alpha = (R/2Z0)·(1 − R/(2wL)) and R/(2Z0)·R/(2wL) = k_c²·v/(2·pi)).
    let offset = db_per_np * loss.k_c * loss.k_c * c.velocity / (2.0 * std::f64::consts::PI) * length;
    assert!((offset - 0.146).abs() < 0.002, "internal-reactance offset {offset} dB");
    for &f in &freqs {
        let il = -20.0 * segment_s21(&c, length, f * 1e6, 100.0).norm().log10();
        let fitted = db_per_np * length * (loss.k_c * (f * 1e6).sqrt() + loss.k_d * f * 1e6);
        // Source: TIA-568 cat 5e formula [memory for the formula], docs/references.md. The brief
        // asked for 0.1 dB; the exact causal line cannot reach it: the 0.05/sqrt(f) term is
        // not representable by k_c·sqrt(f) + k_d·f (fit residual 0.043 dB at 1 MHz), and the
        // internal reactance above puts the line about 0.11–0.16 dB below the formula.
        // 0.2 dB is the honest tolerance.
        assert!((il - cat5e_db(f)).abs() < 0.2, "{f} MHz: exact {il} dB vs formula {} dB", cat5e_db(f));
        // [closed form] and the difference from the fitted alpha is that offset, up to
        // third-order terms, the dielectric's dispersion and the Zc mismatch (< 0.05 dB).
        assert!(
            (il - fitted + offset).abs() < 0.05,
            "{f} MHz: exact {il} dB, fitted alpha {fitted} dB, offset {offset} dB"
        );
    }
}

#[test]
fn motor_cable_longer_than_the_critical_length_nearly_doubles_the_edge() {
    // Source: critical length l_c = v·t_rise/2 (Persson, IEEE Trans. IA 28(5), 1992
    // [memory]; docs/references.md): 680 V, 0.1 us 10–90 % rise, v = 1.5e8 m/s, l_c = 7.5 m.
    // The motor is an open end at edge frequencies; the drive is ~1 ohm; cable 80 ohm.
    let c = cable(80.0, 1.5e8, 0.0, None);
    let e = 680.0;
    // 1 GHz: the 125 ns ramp spans 125 samples, 2 m is 13.3 samples of delay.
    let long = one_line(c.clone(), 120.0, step(e, 0.1e-6), 1.0, Load::Open, 1.0e9);
    let short = one_line(c, 2.0, step(e, 0.1e-6), 1.0, Load::Open, 1.0e9);
    let long_peak = peak(&run(&long, 3000).traces[0].values);
    let short_peak = peak(&run(&short, 3000).traces[0].values);
    // [closed form] the first wave E·Z0/(Rs + Z0) doubles at the open end and the next
    // one, 2 round trips of 1.6 us later, is reduced by Gamma_g = −79/81.
    let doubled = 2.0 * e * 80.0 / 81.0;
    assert!(long_peak > 1.9 * e, "120 m: peak {long_peak} V");
    assert!(long_peak < doubled * 1.001, "120 m: peak {long_peak} V above {doubled} V");
    assert!(short_peak < 1.5 * e, "2 m: peak {short_peak} V");
    assert!(short_peak > e, "2 m: an open end still overshoots, peak {short_peak} V");
}

#[test]
fn matched_line_passes_a_half_step_without_reflection() {
    // [closed form] Rs = Z0 = RL: the far end is E/2 delayed by T and nothing comes back;
    // the feed sits at E/2 from t = 0. T = 7 samples, on the grid.
    let c = cable(50.0, 2.0e8, 0.0, None);
    let plant = one_line(c, 7.0, step(1.0, 0.0), 50.0, Load::Resistor(50.0), 2.0e8);
    let r = run(&plant, 300);
    for (m, v) in r.traces[0].values.iter().enumerate() {
        let want = if m >= 7 { 0.5 } else { 0.0 };
        assert!((v - want).abs() < 1e-9, "far end sample {m}: {v}");
    }
    for (m, v) in r.traces[1].values.iter().enumerate() {
        assert!((v - 0.5).abs() < 1e-9, "feed sample {m}: {v}");
    }
    // Current into the line at its far end: −(E/2)/RL once the wave has arrived.
    assert!((r.traces[2].values[100] + 0.01).abs() < 1e-11);
    assert_eq!((r.traces[0].unit, r.traces[2].unit), ("V", "A"));
}

#[test]
fn doubling_the_record_changes_the_first_samples_only_within_the_stated_bound() {
    // [closed form] wrap-around: the copies of the response N samples later enter with
    // weight exp(−sigma·N·dt); runs of n and 2n samples must agree to the sum of their
    // stated bounds. A lossy cable with skin and dielectric loss, an off-grid delay and a
    // series-RC termination, so nothing is exact by construction.
    let loss = LossModel { k_c: 3.0e-6, k_d: 3.0e-11 };
    let c = cable(100.0, 0.66 * C0, 0.08, Some(loss));
    let load = Load::SeriesRc { r: 120.0, c: 200e-12 };
    let plant = one_line(c, 37.3, step(5.0, 20e-9), 22.0, load, 5.0e8);
    let n = 700;
    let a = run(&plant, n);
    let b = run(&plant, 2 * n);
    assert!(a.sigma > b.sigma, "a shorter record is damped harder");
    let allowed = (a.wrap_bound + b.wrap_bound) * peak(&a.drive);
    // 1e-4 V on a 5 V step: far below any tolerance the emulator is checked against.
    assert!(allowed < 1e-4, "bound {allowed} must be small enough to mean something");
    for k in 0..3 {
        for m in 0..n {
            let d = (a.traces[k].values[m] - b.traces[k].values[m]).abs();
            assert!(d <= allowed, "trace {k} sample {m}: differs by {d}, bound {allowed}");
        }
    }
    // A looser wrap level must show up as a larger difference: the check can fail.
    let loose = exact_response(&plant, &ExactOptions { samples: n, wrap_level: 1e-2 }).unwrap();
    let worst = (0..n).map(|m| (loose.traces[0].values[m] - b.traces[0].values[m]).abs()).fold(0.0, f64::max);
    assert!(worst > allowed, "wrap level 1e-2 differs by only {worst}");
    assert!(worst <= (loose.wrap_bound + b.wrap_bound) * peak(&a.drive), "{worst}");

    // An ideal step into a lossless line whose delay is off the grid rings at the band
    // edge (Gibbs); the stated bound grows to cover it and still holds.
    let c = cable(50.0, 2.0e8, 0.0, None);
    let harsh = one_line(c, 37.3, step(5.0, 0.0), 22.0, load, 5.0e8);
    let (a, b) = (run(&harsh, n), run(&harsh, 2 * n));
    let allowed = (a.wrap_bound + b.wrap_bound) * peak(&a.drive);
    for m in 0..n {
        let d = (a.traces[0].values[m] - b.traces[0].values[m]).abs();
        assert!(d <= allowed, "ideal step, sample {m}: differs by {d}, bound {allowed}");
    }
}

#[test]
fn rig_drive_is_its_device_stimulus_behind_its_resistance() {
    // [closed form] a rig port with the device modelled as stimulus behind dut_resistance
    // gives the same plant response as a test source with that EMF and resistance.
    let c = cable(50.0, 2.0e8, 0.0, None);
    let source = one_line(c, 1.0, step(60.0, 0.0), 100.0, Load::Resistor(25.0), 1.0e9);
    let mut rig = source.clone();
    rig.drive = Drive::Rig {
        node: 0,
        r_ref: 50.0,
        adc_full_scale: 100.0,
        dac_full_scale: 100.0,
        latency: 2,
        stimulus: step(60.0, 0.0),
        dut_resistance: 100.0,
    };
    let (a, b) = (run(&source, 64), run(&rig, 64));
    assert_eq!(a.drive, b.drive);
    for (x, y) in a.traces[0].values.iter().zip(&b.traces[0].values) {
        assert!((x - y).abs() < 1e-12);
    }
}

#[test]
fn bad_plants_are_errors_not_panics() {
    let c = cable(50.0, 2.0e8, 0.0, None);
    let good = one_line(c, 1.0, step(1.0, 0.0), 50.0, Load::Open, 1.0e9);
    let opts = ExactOptions { samples: 16, wrap_level: 1e-9 };
    let mut p = good.clone();
    p.probes.clear();
    assert_eq!(exact_response(&p, &opts), Err(ReferenceError::NoProbes));
    let mut p = good.clone();
    p.segments[0].length = -3.0;
    p.segments[0].span = Span { line: 12, column: 5 };
    let msg = exact_response(&p, &opts).unwrap_err().to_string();
    assert!(msg.contains("segment 'run'") && msg.contains("line 12, column 5") && msg.contains("length"), "{msg}");
    let mut p = good.clone();
    p.nodes[1].load = Load::Resistor(0.0);
    assert!(matches!(dc_operating_point(&p, 1.0), Err(ReferenceError::Invalid { field: "load", .. })));
    assert!(matches!(
        transfer(&good, 9, Complex64::new(1.0, 0.0)),
        Err(ReferenceError::ProbeOutOfRange { index: 9, count: 3 })
    ));
    let bad_wrap = ExactOptions { samples: 16, wrap_level: 1.5 };
    assert!(matches!(exact_response(&good, &bad_wrap), Err(ReferenceError::BadOption { .. })));
    assert_eq!(exact_response(&good, &ExactOptions { samples: 0, wrap_level: 1e-9 }), Err(ReferenceError::NoSamples));
    // A node with nothing connected cannot be solved; the error names the frequency.
    let mut p = good.clone();
    p.nodes.push(Node { name: "island".into(), load: Load::Open, span: Span::default() });
    p.probes.push(Probe { name: "v island".into(), kind: ProbeKind::Voltage(2) });
    assert!(matches!(exact_response(&p, &opts), Err(ReferenceError::Singular { .. })));
}

#[test]
fn dc_currents_are_the_low_frequency_limit_of_the_line_solution() {
    // [closed form] two lossless runs of 1 m and 3 m in parallel into a short share the DC
    // current E/Rs like 1/(s·L'·l) as s -> 0: 3/4 and 1/4. transfer() at s = 0 (DC
    // analysis) must meet the full line solution at a small s (which departs from DC at
    // first order in s·L/Rs: 4e-10 at s = 0.01/s).
    let c = cable(100.0, 2.0e8, 0.0, None);
    let mut plant = one_line(c, 1.0, step(1.0, 0.0), 10.0, Load::Short, 1.0e9);
    let mut second = plant.segments[0].clone();
    second.length = 3.0;
    plant.segments.push(second);
    plant.probes = vec![
        Probe { name: "i1".into(), kind: ProbeKind::Current(0, End::From) },
        Probe { name: "i3".into(), kind: ProbeKind::Current(1, End::From) },
    ];
    for (k, want) in [(0, 0.075), (1, 0.025)] {
        let dc = transfer(&plant, k, Complex64::new(0.0, 0.0)).unwrap();
        let near = transfer(&plant, k, Complex64::new(1.0e-2, 0.0)).unwrap();
        assert!((dc.re - want).abs() < 1e-14, "DC current {k}: {dc}");
        assert!((near - dc).norm() < 1e-6 * want, "s = 0.01/s, current {k}: {near} vs {dc}");
    }
}

#[test]
fn a_line_fitted_to_the_cat5e_formula_gives_s21_within_a_tenth_of_a_db() {
    // The line "described by" the TIA-568 Category 5e insertion-loss formula [memory for the
    // formula; docs/references.md]: a causal cable model whose |S21| over 100 m is fitted to the
    // formula: k_c and k_d are fitted (least squares over the table frequencies) to the exact
    // line's own |S21|, so the causal skin term's internal reactance, which lowers the
    // attenuation by k_c²·v/(2·pi) per metre [closed form, see above], is part of the fit. Then the exact
    // reference's |S21| meets the formula within 0.1 dB at the published table frequencies
    // 1, 4, 10, 16, 31.25, 62.5 and 100 MHz.
    let freqs = [1.0, 4.0, 10.0, 16.0, 31.25, 62.5, 100.0];
    let (length, v) = (100.0, 0.68 * C0);
    // Gauss-Newton on (k_c, k_d, R_dc) against the exact |S21| itself (the line's own
    // dispersion and low-frequency impedance included), from the plain fit as the start. The
    // conductor's DC resistance is the third parameter: it carries the formula's low-frequency
    // term 0.050/sqrt(f), which k_c·sqrt(f) + k_d·f cannot.
    let il_of = |p: [f64; 3], f: f64| {
        let m = LossModel { k_c: p[0], k_d: p[1] };
        -20.0 * segment_s21(&cable(100.0, v, p[2], Some(m)), length, f * 1e6, 100.0).norm().log10()
    };
    let start = fit_cat5e(&freqs);
    let mut p = [start.k_c, start.k_d, 0.01];
    for _ in 0..10 {
        let r: Vec<f64> = freqs.iter().map(|f| il_of(p, *f) - cat5e_db(*f)).collect();
        let mut jac = vec![[0.0f64; 3]; freqs.len()];
        for k in 0..3 {
            let h = p[k].abs().max(1e-12) * 1e-4;
            let mut q = p;
            q[k] += h;
            for (i, f) in freqs.iter().enumerate() {
                jac[i][k] = (il_of(q, *f) - il_of(p, *f)) / h;
            }
        }
        let mut ata = nalgebra::Matrix3::<f64>::zeros();
        let mut atr = nalgebra::Vector3::<f64>::zeros();
        for (i, row) in jac.iter().enumerate() {
            for a in 0..3 {
                atr[a] += row[a] * r[i];
                for b in 0..3 {
                    ata[(a, b)] += row[a] * row[b];
                }
            }
        }
        let step = ata.lu().solve(&atr).expect("well-posed fit");
        for k in 0..3 {
            p[k] -= step[k];
        }
    }
    assert!(p[2] > 0.0 && p[2] < 0.5, "fitted DC loop resistance {} ohm/m is physical", p[2]);
    let loss = LossModel { k_c: p[0], k_d: p[1] };
    let r_dc = p[2];
    let c = cable(100.0, v, r_dc, Some(loss));
    for &f in &freqs {
        let il = -20.0 * segment_s21(&c, length, f * 1e6, 100.0).norm().log10();
        assert!((il - cat5e_db(f)).abs() < 0.1, "{f} MHz: exact {il} dB vs formula {} dB", cat5e_db(f));
    }
}

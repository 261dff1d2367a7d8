//! Closed-form and worked-example checks of the solver. Each test names the source of its
//! expected values: [closed form] follows from the wave equations alone; the worked example
//! is the one in docs/references.md, "Step into a mismatched line" (Ulaby, Fundamentals of Applied Electromagnetics,
//! problem 2.75, values found in a published solution set).

use tidewire_core::{Drive, Junction, Line, Narrow, Network, Probe, ProbeKind, Profile, Shunt, Side, Solver, Wide};

const OHM: u32 = 1000; // milliohms per ohm

fn node(shunt: Shunt) -> Junction {
    Junction::Node { shunt }
}

fn line(z_ohm: u32, delay: u32, a: u16, b: u16) -> Line {
    Line { z_milliohm: z_ohm * OHM, delay, a, b }
}

fn v_probe(line: u16, side: Side) -> Probe {
    Probe { kind: ProbeKind::Voltage, line, side }
}

/// Run `n` samples of a constant input code and collect every probe's raw value.
fn run<P: Profile>(net: &Network, input: i16, n: usize) -> Vec<Vec<i32>> {
    let mut s: Solver<P, 16, 8, 4096> = Solver::new();
    s.load(net).expect("valid network");
    (0..n)
        .map(|_| {
            s.step(input);
            (0..net.probes.len()).map(|k| s.probe_raw(k)).collect()
        })
        .collect()
}

/// Ulaby problem 2.75 (docs/references.md, "Step into a mismatched line"): Vg = 60 V step, Rg = 100 Ω, Z0 = 50 Ω,
/// RL = 25 Ω, T = 5 ns = 5 samples at 1 GHz. Load voltage at T, 3T, 5T, 7T:
/// 13.333, 11.852, 12.016, 11.998 V; source end at 0, 2T, 4T: 20, 11.111, 12.099 V;
/// final 12 V. Checked within 2 LSB of the output code after scaling.
fn worked_example<P: Profile>(io_shift: u8, step_code: i16) {
    let volts_per_code = 60.0 / step_code as f32;
    let lines = [line(50, 5, 0, 1)];
    let juncs = [node(Shunt::Open), node(Shunt::Resistor { milliohm: 25 * OHM })];
    let probes = [v_probe(0, Side::B), v_probe(0, Side::A)];
    let net = Network {
        lines: &lines,
        junctions: &juncs,
        elements: &[],
        losses: &[],
        drive: Drive::Source { junction: 0, milliohm: 100 * OHM },
        probes: &probes,
        io_shift,
        volts_per_code,
    };
    let out = run::<P>(&net, step_code, 200);
    let code = |raw: i32| (raw >> io_shift) as f64 * volts_per_code as f64;
    let lsb = volts_per_code as f64;
    let check = |what: &str, got: f64, want: f64| {
        assert!((got - want).abs() <= 2.0 * lsb + 0.0005, "{what}: got {got:.4} V, want {want} V (lsb {lsb:.5})");
    };
    // Samples inside each plateau: the load sees the k-th wave from sample (2k+1)·5 on.
    for (k, want) in [13.333, 11.852, 12.016, 11.998].iter().enumerate() {
        let n = (2 * k + 1) * 5 + 1;
        check(&format!("load at {}T", 2 * k + 1), code(out[n][0]), *want);
    }
    for (k, want) in [20.0, 11.111, 12.099].iter().enumerate() {
        let n = 2 * k * 5 + 1;
        check(&format!("source at {}T", 2 * k), code(out[n][1]), *want);
    }
    check("final load", code(out[199][0]), 12.0);
    check("final source", code(out[199][1]), 12.0);
}

#[test]
fn worked_example_wide() {
    worked_example::<Wide>(12, 16000);
}

#[test]
fn worked_example_narrow() {
    worked_example::<Narrow>(0, 8000);
}

/// A source matched to the line (Rs = Z0) launches E/2 [closed form: E·Z0/(Rs + Z0)].
fn far_end_response<P: Profile>(shunt: Shunt, io_shift: u8) -> (Vec<i32>, Vec<i32>) {
    let lines = [line(100, 7, 0, 1)];
    let juncs = [node(Shunt::Open), node(shunt)];
    let probes = [v_probe(0, Side::B), v_probe(0, Side::A)];
    let net = Network {
        lines: &lines,
        junctions: &juncs,
        elements: &[],
        losses: &[],
        drive: Drive::Source { junction: 0, milliohm: 100 * OHM },
        probes: &probes,
        io_shift,
        volts_per_code: 1e-3,
    };
    let out = run::<P>(&net, 10_000, 60);
    (out.iter().map(|p| p[0]).collect(), out.iter().map(|p| p[1]).collect())
}

#[test]
fn open_end_doubles_short_cancels_matched_reflects_nothing() {
    // [closed form] Gamma = +1 at an open end, -1 at a short, 0 into Z0, with the node
    // rule's rounding stated: every node uses a voltage v' strictly between 0 and the exact v
    // (`Profile::node_scatter`, Wide), so where the exact wave is an integer a node sends it
    // one LSB toward zero: the source node launches E/2 − 1 LSB. A lone open end reflects b
    // exactly (it runs as an open end, `configure::lone_open`).
    let e = 10_000i32 << 12;
    let (far, near) = far_end_response::<Wide>(Shunt::Open, 12);
    assert_eq!(far[6], 0, "nothing arrives before the delay");
    assert_eq!(far[7], e - 2, "open end: incident E/2 − 1 LSB doubles exactly");
    assert_eq!(near[13], e / 2 - 1, "before the reflection returns");
    assert_eq!(near[14], e - 2, "matched source absorbs the reflection: settles at E (− 2 LSB)");
    assert_eq!(near[59], e - 2);

    let (far, near) = far_end_response::<Wide>(Shunt::Short, 12);
    assert!(far.iter().all(|v| *v == 0), "short: far-end voltage stays exactly 0");
    assert_eq!(near[14], 0, "reflection -E/2 cancels the source end");

    let (far, near) = far_end_response::<Wide>(Shunt::Resistor { milliohm: 100 * OHM }, 12);
    assert_eq!(far[7], e / 2 - 1);
    assert!(near[1..].iter().all(|v| *v == e / 2 - 1), "matched load: reflection exactly zero");

    let (far, near) = far_end_response::<Narrow>(Shunt::Resistor { milliohm: 100 * OHM }, 0);
    // Narrow divides exactly (`Profile::node_scatter`): E/2 and 2·(E/2) exactly.
    assert_eq!(far[7], 5000);
    assert!(near[1..].iter().all(|v| *v == 5000), "narrow: matched load reflection exactly zero");
    let (far, _) = far_end_response::<Narrow>(Shunt::Open, 0);
    assert_eq!(far[7], 10_000);
}

#[test]
fn equal_three_way_junction_sends_two_thirds_on_and_one_third_back() {
    // [closed form] A Z0 line meeting two Z0 lines in parallel: Gamma = -1/3, each branch
    // receives 2/3 of the incident wave (docs/references.md, "Junctions and terminations").
    // Source matched (Rs = Z0) launches E/2 = 30000·2^12 / 2; branches end matched.
    let lines = [line(120, 4, 0, 1), line(120, 6, 1, 2), line(120, 9, 1, 3)];
    let m = Shunt::Resistor { milliohm: 120 * OHM };
    let juncs = [node(Shunt::Open), node(Shunt::Open), node(m), node(m)];
    let probes = [v_probe(0, Side::A), v_probe(1, Side::B), v_probe(2, Side::B)];
    let net = Network {
        lines: &lines,
        junctions: &juncs,
        elements: &[],
        losses: &[],
        drive: Drive::Source { junction: 0, milliohm: 120 * OHM },
        probes: &probes,
        io_shift: 12,
        volts_per_code: 1e-3,
    };
    let out = run::<Wide>(&net, 30_000, 40);
    let inc = (30_000i64 << 12) / 2;
    let near = out[9][0] as i64; // incident + reflected (-1/3) after the round trip of 8
    let b1 = out[11][1] as i64; // branch 1 far end (matched): 2/3 of incident
    let b2 = out[14][2] as i64;
    assert!((near - (inc - inc / 3)).abs() <= 2, "near end {near} vs {}", inc - inc / 3);
    assert!((b1 - 2 * inc / 3).abs() <= 2, "branch 1 {b1}");
    assert!((b2 - 2 * inc / 3).abs() <= 2, "branch 2 {b2}");
}

#[test]
fn dc_through_lumped_series_resistance_obeys_ohms_law() {
    // [closed form] 10 V behind 50 Ω, a 100 Ω cable with 40 Ω of conductor resistance lumped
    // as four series resistors of 10 Ω between five sections, into a 150 Ω load:
    // V_load = 10·150/(50 + 40 + 150) = 6.25 V. Check within 0.1 %.
    let z = 100;
    let mut lines = vec![];
    let mut juncs = vec![node(Shunt::Open)];
    // nodes: 0 source; series junctions 1..=4; 5 load.
    for k in 0..5u16 {
        let a = if k == 0 { 0 } else { k };
        let b = if k == 4 { 5 } else { k + 1 };
        lines.push(line(z, 3, a, b));
        if k < 4 {
            juncs.push(Junction::Series { milliohm: 10 * OHM });
        }
    }
    juncs.push(node(Shunt::Resistor { milliohm: 150 * OHM }));
    let probes = [v_probe(4, Side::B), Probe { kind: ProbeKind::Current, line: 0, side: Side::A }];
    let net = Network {
        lines: &lines,
        junctions: &juncs,
        elements: &[],
        losses: &[],
        drive: Drive::Source { junction: 0, milliohm: 50 * OHM },
        probes: &probes,
        io_shift: 12,
        volts_per_code: 1e-3,
    };
    let mut s: Solver<Wide, 16, 8, 4096> = Solver::new();
    s.load(&net).unwrap();
    for _ in 0..4000 {
        s.step(10_000); // 10 V at 1 mV per code
    }
    let v = s.probe_value(0) as f64;
    let i = s.probe_value(1) as f64;
    assert!((v - 6.25).abs() / 6.25 < 1e-3, "load voltage {v}");
    assert!((i - 10.0 / 240.0).abs() / (10.0 / 240.0) < 1e-3, "current {i}");
}

#[test]
fn rig_port_closed_by_matched_line_reads_back_zero_reflection() {
    // [closed form] The rig port is the near end of a line terminated in Z0: the plant sends
    // back b = 0, so the DAC drive 2·b is exactly 0 whatever the device does, and the wave
    // entering the line is the pin voltage itself (a = v − b = v).
    for latency in [0u16, 1, 3] {
        let lines = [line(120, 10, 0, 1)];
        let juncs = [node(Shunt::Open), node(Shunt::Resistor { milliohm: 120 * OHM })];
        let probes = [v_probe(0, Side::B)];
        let net = Network {
            lines: &lines,
            junctions: &juncs,
            elements: &[],
            losses: &[],
            drive: Drive::Rig { junction: 0, latency },
            probes: &probes,
            io_shift: 12,
            volts_per_code: 1e-3,
        };
        let mut s: Solver<Wide, 4, 4, 64> = Solver::new();
        s.load(&net).unwrap();
        for n in 0..200i32 {
            let pin = ((n * 37) % 2000 - 1000) as i16;
            assert_eq!(s.step(pin), 0, "latency {latency}: DAC drive must stay 0");
        }
    }
}

#[test]
fn rig_port_open_line_echoes_after_the_round_trip() {
    // [closed form] An open far end returns the pin's wave after 2·D; with rig latency L the
    // core sends it back L samples early so that it reaches the pin at 2·D.
    let d = 10u32;
    for latency in [0u16, 2, 5] {
        let lines = [line(120, d, 0, 1)];
        let juncs = [node(Shunt::Open), node(Shunt::Open)];
        let net = Network {
            lines: &lines,
            junctions: &juncs,
            elements: &[],
            losses: &[],
            drive: Drive::Rig { junction: 0, latency },
            probes: &[],
            io_shift: 0,
            volts_per_code: 1e-3,
        };
        let mut s: Solver<Wide, 4, 4, 64> = Solver::new();
        s.load(&net).unwrap();
        // A single 1000-code pulse at n = 0 on the pin (the DAC showing 0 then).
        let out: Vec<i16> = (0..40).map(|n| s.step(if n == 0 { 1000 } else { 0 })).collect();
        let first = out.iter().position(|x| *x != 0).unwrap();
        assert_eq!(first as u32 + latency as u32, 2 * d, "latency {latency}");
        assert_eq!(out[first], 2000, "DAC drive 2·b with b = a = 1000");
    }
}

#[test]
fn rig_latency_longer_than_round_trip_is_refused() {
    let lines = [line(120, 2, 0, 1)];
    let juncs = [node(Shunt::Open), node(Shunt::Open)];
    let net = Network {
        lines: &lines,
        junctions: &juncs,
        elements: &[],
        losses: &[],
        drive: Drive::Rig { junction: 0, latency: 2 },
        probes: &[],
        io_shift: 0,
        volts_per_code: 1e-3,
    };
    let mut s: Solver<Wide, 4, 4, 64> = Solver::new();
    assert_eq!(s.load(&net), Err(tidewire_core::BuildError::RigLatencyTooLong { latency: 2, delay: 2 }));
}

#[test]
fn capacitor_behind_a_matched_line_charges_with_time_constant_z0_c() {
    // [closed form] A source E behind Rs = Z0 drives a matched line whose far end holds a
    // capacitor C: the far end sees a Thevenin source E behind Z0, so after the line delay D
    // v(t) = E·(1 − exp(−t/(Z0·C))). With the bilinear transform the capacitor is a port of
    // resistance T/(2C); tau = Z0·C = 40 samples here, so the discretization error is well
    // under 0.1 % of E; checked within 0.3 % of E at several times, both profiles, and with
    // a series resistor the final value is still E (no DC current through a capacitor).
    let z0 = 50u32;
    let tau = 40.0; // samples
    let rc_mohm = (1000.0 * z0 as f64 / (2.0 * tau)).round() as u32; // T/(2C) with C = tau·T/Z0
    for series in [0u32, 20 * OHM] {
        let lines = [line(z0, 3, 0, 1)];
        let juncs = [node(Shunt::Open), node(Shunt::Open)];
        let elements = [tidewire_core::Element {
            junction: 1,
            kind: tidewire_core::ElementKind::Capacitor,
            port_milliohm: rc_mohm,
            series_milliohm: series,
        }];
        let probes = [v_probe(0, Side::B)];
        let net = Network {
            lines: &lines,
            junctions: &juncs,
            elements: &elements,
            losses: &[],
            drive: Drive::Source { junction: 0, milliohm: z0 * OHM },
            probes: &probes,
            io_shift: 12,
            volts_per_code: 1e-3,
        };
        let out = run::<Wide>(&net, 20_000, 2000);
        let e = (20_000i64 << 12) as f64;
        if series == 0 {
            for n in [10usize, 40, 100, 200] {
                // The first wave reaches the far end at sample 3 (the line delay). The bilinear
                // transform (trapezoidal rule) counts the first sample of a step as half a
                // period of input, so its samples follow the continuous step response that
                // starts half a sample earlier [closed form]: t = n − 3 + 1/2.
                let t = (n - 3) as f64 + 0.5;
                let want = e * (1.0 - (-t / tau).exp());
                let got = out[n][0] as f64;
                assert!((got - want).abs() < 0.003 * e, "n={n}: {got} vs {want}");
            }
        }
        assert!((out[1999][0] as f64 - e).abs() < 1e-4 * e, "final value with series {series}");
    }
}

#[test]
fn series_inductor_between_matched_lines_passes_the_step_with_time_constant_l_over_2z0() {
    // [closed form] An incident step V on a Z0 line meets an inductor L in series with a
    // matched Z0 line: the transmitted wave is V·(1 − exp(−t/tau)), tau = L/(2·Z0). With the
    // bilinear inductor of port resistance R_L = 2L/T, tau = R_L/(4·Z0) samples; here 20.
    // As for the capacitor, the trapezoidal rule aligns the samples half a sample early.
    // Checked at the matched far end within 0.3 % of V (wide) and 0.6 % (narrow: its 13-bit
    // coefficients put c = 2Z/ΣR = 0.0244 at 199/8192, 0.4 % low); and at DC the
    // inductor (with 0 winding resistance) is a through connection: the far end settles at V.
    let z0 = 50u32;
    let tau = 20.0;
    let rl = (4.0 * z0 as f64 * tau * 1000.0) as u32; // mΩ
    let lines = [line(z0, 5, 0, 1), line(z0, 5, 1, 2)];
    let juncs = [
        node(Shunt::Open),
        Junction::SeriesInductor { port_milliohm: rl, milliohm: 0 },
        node(Shunt::Resistor { milliohm: z0 * OHM }),
    ];
    let probes = [v_probe(1, Side::B)];
    for (io_shift, code, tol) in [(12u8, 20_000i16, 0.003), (0, 20_000, 0.006)] {
        let net = Network {
            lines: &lines,
            junctions: &juncs,
            elements: &[],
            losses: &[],
            drive: Drive::Source { junction: 0, milliohm: z0 * OHM },
            probes: &probes,
            io_shift,
            volts_per_code: 1e-3,
        };
        let v = ((code as i64) << io_shift) as f64 / 2.0;
        let out = if io_shift == 0 { run::<Narrow>(&net, code, 600) } else { run::<Wide>(&net, code, 600) };
        for n in [12usize, 20, 40, 80] {
            let want = v * (1.0 - (-((n - 10) as f64 + 0.5) / tau).exp());
            let got = out[n][0] as f64;
            assert!((got - want).abs() < tol * v, "shift {io_shift} n={n}: {got} vs {want}");
        }
        // Truncating the state toward zero leaves a dead band of about 1/(2·(1 − rho)) state
        // LSBs (rho = R_L/ΣR = 0.976 here: ~20 LSB), under 1e-3 of V in either profile's
        // units only for the wide one; the narrow one is held to 0.3 %.
        let final_tol = if io_shift == 0 { 3e-3 } else { 1e-3 };
        assert!(
            (out[599][0] as f64 - v).abs() < final_tol * v,
            "shift {io_shift}: settles at V: {} vs {v}",
            out[599][0]
        );
    }
}

//! The series branch between two nodes (`Junction::Branch`): a closed-form step response,
//! the f64 twin against the same closed form, the core against the twin with its own integer
//! coefficients, and the loader's refusals.

use tidewire_core::{
    BuildError, Drive, Junction, Line, Narrow, Network, Probe, ProbeKind, Profile, Shunt, Side, Solver, Wide,
};
use tidewire_twin::{Quantized, Twin};

const OHM: u32 = 1000;

/// E behind 50 Ω at node A, which also has a matched 50 Ω line (a 50 Ω resistor to return
/// for as long as we look: its far end is terminated in 50 Ω, so nothing comes back); the
/// branch R = 25 Ω + L from A to B; B has a matched 50 Ω line. `port` is R_L = 2L/T in mΩ.
fn rl_plant(port: u32, io_shift: u8) -> (Vec<Line>, Vec<Junction>, Vec<Probe>, Drive, u8) {
    let lines =
        vec![Line { z_milliohm: 50 * OHM, delay: 7, a: 0, b: 2 }, Line { z_milliohm: 50 * OHM, delay: 5, a: 1, b: 3 }];
    let juncs = vec![
        Junction::Node { shunt: Shunt::Open },
        Junction::Node { shunt: Shunt::Open },
        Junction::Node { shunt: Shunt::Resistor { milliohm: 50 * OHM } },
        Junction::Node { shunt: Shunt::Resistor { milliohm: 50 * OHM } },
        Junction::Branch { a: 0, b: 1, port_milliohm: port, milliohm: 25 * OHM },
    ];
    let probes = vec![
        Probe { kind: ProbeKind::Voltage, line: 1, side: Side::A },
        Probe { kind: ProbeKind::Voltage, line: 0, side: Side::A },
    ];
    (lines, juncs, probes, Drive::Source { junction: 0, milliohm: 50 * OHM }, io_shift)
}

fn net<'a>(p: &'a (Vec<Line>, Vec<Junction>, Vec<Probe>, Drive, u8)) -> Network<'a> {
    Network {
        lines: &p.0,
        junctions: &p.1,
        elements: &[],
        losses: &[],
        drive: p.3,
        probes: &p.2,
        io_shift: p.4,
        volts_per_code: 1e-3,
    }
}

/// [closed form] First-order RL circuit (the step response of a series RL circuit,
/// i(t) = V/R·(1 − e^(−tR/L)); any circuit-theory text): the Thevenin source at A is E/2
/// behind 25 Ω, the loop resistance R_tot = 25 + 25 + 50 = 100 Ω, so
/// i(t) = (E/2)/R_tot·(1 − e^(−t/τ)), τ = L/R_tot, v_B = 50 Ω·i → E/4, v_A = E/2 − 25 Ω·i.
/// With R_L = 2L/T, τ = R_L/(2·R_tot) samples: 20 for R_L = 4 kΩ, 2 for 400 Ω. The bilinear
/// (trapezoidal) inductor counts the step's first sample as half a sample of input, so the
/// samples follow the continuous response from t = n + 1/2 (as for the series inductor in
/// `closed_form.rs`), up to the trapezoidal rule's own error (its pole (1 − 1/2τ)/(1 + 1/2τ)
/// against e^(−1/τ)).
fn closed_form(n: usize, e: f64, tau: f64) -> (f64, f64) {
    let t = n as f64 + 0.5;
    let i = e / 2.0 / 100.0 * (1.0 - (-t / tau).exp());
    (50.0 * i, e / 2.0 - 25.0 * i)
}

fn quantized<P: Profile, const A: usize, const B: usize, const C: usize, const D: usize>(
    s: &Solver<P, A, B, C, D>,
    lines: usize,
) -> Quantized {
    Quantized {
        g: (0..lines).map(|l| u64::from(s.line_weight(l))).collect(),
        exponent: s.weight_exponent(),
        series_frac: P::SERIES_FRAC,
        total_max: P::TOTAL_MAX,
        allpass_frac: P::LOSS_FRAC,
    }
}

#[test]
fn rl_branch_between_resistive_nodes_follows_the_first_order_step() {
    let p = rl_plant(4000 * OHM, 12);
    let e_code = 20_000i16;
    // The nominal twin against the closed form: within 1e-4 of E (the trapezoidal rule's
    // error at τ = 20 samples; measured 7.5e-5 at n = 0).
    let mut twin = Twin::new(&net(&p));
    for n in 0..120 {
        let out = twin.step(1.0).to_vec();
        let (vb, va) = closed_form(n, 1.0, 20.0);
        assert!((out[0] - vb).abs() < 1e-4 && (out[1] - va).abs() < 1e-4, "twin n={n}: {out:?} vs {vb}, {va}");
    }
    // The core against the closed form within 0.2 % of E/2 (wide, τ = 20 samples); the
    // matched far ends send nothing back, checked to n = 120. The narrow profile at τ = 2
    // samples, where the half-sample alignment of the trapezoidal rule is too coarse for the
    // closed form's early samples: against the nominal f64 twin (the same bilinear plant)
    // within 1 % of E/2 (its node weights are 13-bit), and the closed form's DC value.
    // (The narrow profile is run at τ = 2 because the inductor's wave b_L ≈ −R_L·i/2 is R_L/(2·R_tot)
    // = 20 times the node voltage at τ = 20 and would saturate its 16-bit waves; see the
    // crate docs of `Junction::Branch`.)
    let e_w = ((e_code as i64) << 12) as f64;
    let mut s: Solver<Wide, 8, 8, 64> = Solver::new();
    s.load(&net(&p)).unwrap();
    let p16 = rl_plant(400 * OHM, 0);
    let mut s16: Solver<Narrow, 8, 8, 64> = Solver::new();
    s16.load(&net(&p16)).unwrap();
    let e_n = e_code as f64;
    let mut twin16 = Twin::new(&net(&p16));
    for n in 0..120 {
        s.step(e_code);
        s16.step(e_code);
        let (vb, va) = closed_form(n, e_w, 20.0);
        let nominal = twin16.step(e_n).to_vec();
        let (vb16, va16) = (nominal[0], nominal[1]);
        let (gb, ga) = (s.probe_raw(0) as f64, s.probe_raw(1) as f64);
        assert!((gb - vb).abs() < 0.002 * e_w / 2.0, "wide v_B n={n}: {gb} vs {vb}");
        assert!((ga - va).abs() < 0.002 * e_w / 2.0, "wide v_A n={n}: {ga} vs {va}");
        let (gb, ga) = (s16.probe_raw(0) as f64, s16.probe_raw(1) as f64);
        assert!((gb - vb16).abs() < 0.01 * e_n / 2.0, "narrow v_B n={n}: {gb} vs {vb16}");
        assert!((ga - va16).abs() < 0.01 * e_n / 2.0, "narrow v_A n={n}: {ga} vs {va16}");
    }
    // DC [closed form]: the inductor is a through connection, v_B = E/4, v_A = E/2 − 25·E/200
    // = 3E/8 (the far lines matched, so nothing else arrives).
    assert!((s.probe_raw(0) as f64 - e_w / 4.0).abs() < 1e-3 * e_w, "wide DC");
    assert!((s.probe_raw(1) as f64 - 3.0 * e_w / 8.0).abs() < 1e-3 * e_w, "wide DC at A");
    assert!((s16.probe_raw(0) as f64 - e_n / 4.0).abs() < 5e-3 * e_n, "narrow DC");
}

#[test]
fn the_core_tracks_the_twin_with_its_own_coefficients() {
    // Only arithmetic error: the quantized twin runs the core's integer weights and port
    // numbers in f64; the core stays within 4 LSB (wide, io_shift 12) and 2 codes (narrow).
    // The narrow profile only where its inductor wave does not saturate (R_L <= 4·R_tot).
    for port in [0u32, 400 * OHM, 4000 * OHM] {
        let narrow = port <= 400 * OHM;
        let p = rl_plant(port, 12);
        let mut s: Solver<Wide, 8, 8, 64> = Solver::new();
        s.load(&net(&p)).unwrap();
        let mut twin = Twin::quantized(&net(&p), quantized(&s, 2));
        let p16 = rl_plant(port, 0);
        let mut s16: Solver<Narrow, 8, 8, 64> = Solver::new();
        s16.load(&net(&p16)).unwrap();
        let mut twin16 = Twin::quantized(&net(&p16), quantized(&s16, 2));
        for n in 0..300 {
            let x: i16 = if n < 150 { 12_000 } else { -3_000 };
            s.step(x);
            s16.step(x);
            let want = twin.step(f64::from(x) * 4096.0).to_vec();
            let want16 = twin16.step(f64::from(x)).to_vec();
            for k in 0..2 {
                let got = s.probe_raw(k) as f64;
                assert!((got - want[k]).abs() <= 4.0, "port {port} wide probe {k} n={n}: {got} vs {}", want[k]);
                let got16 = s16.probe_raw(k) as f64;
                let ok = !narrow || (got16 - want16[k]).abs() <= 2.0;
                assert!(ok, "port {port} narrow probe {k} n={n}: {got16} vs {}", want16[k]);
            }
        }
    }
}

/// A change to a valid plant's junctions and drive.
type Edit = Box<dyn Fn(&mut Vec<Junction>, &mut Drive)>;

#[test]
fn the_loader_refuses_bad_branches() {
    let ok = rl_plant(4000 * OHM, 12);
    let cases: Vec<(&str, Edit)> = vec![
        ("same node twice", Box::new(|j, _| j[4] = Junction::Branch { a: 0, b: 0, port_milliohm: 1, milliohm: 1 })),
        ("node out of range", Box::new(|j, _| j[4] = Junction::Branch { a: 0, b: 9, port_milliohm: 1, milliohm: 1 })),
        (
            "to itself (a branch)",
            Box::new(|j, _| j[4] = Junction::Branch { a: 0, b: 4, port_milliohm: 1, milliohm: 1 }),
        ),
        ("short node", Box::new(|j, _| j[1] = Junction::Node { shunt: Shunt::Short })),
        (
            "a second branch on node 1",
            Box::new(|j, _| j.push(Junction::Branch { a: 1, b: 2, port_milliohm: 1, milliohm: 1 })),
        ),
        ("drive on the branch", Box::new(|_, d| *d = Drive::Source { junction: 4, milliohm: 1000 })),
        ("rig port as a branch end", Box::new(|_, d| *d = Drive::Rig { junction: 1, latency: 0 })),
    ];
    for (what, f) in cases {
        let mut p = ok.clone();
        f(&mut p.1, &mut p.3);
        let mut s: Solver<Wide, 8, 8, 64> = Solver::new();
        let r = s.load(&net(&p));
        assert!(matches!(r, Err(BuildError::BadBranch { .. } | BuildError::DriveOnSeries { .. })), "{what}: {r:?}");
        assert_eq!(tidewire_core::configure::check::<Wide>(&net(&p)).err(), r.err(), "{what}: check agrees");
    }
    // A branch whose inductor is far larger than its nodes' impedances costs weight bits:
    // at 2^31 mΩ (2 MΩ port resistance) the 50 Ω lines' weights vanish next to it in the
    // narrow profile and the network is refused, never truncated.
    let p = rl_plant(u32::MAX, 0);
    let mut s16: Solver<Narrow, 8, 8, 64> = Solver::new();
    assert!(matches!(s16.load(&net(&p)), Err(BuildError::CoefficientOutOfRange { .. })));
    // A linked node is not reconfigurable: its weight is part of the branch's coefficients.
    let mut s: Solver<Wide, 8, 8, 64> = Solver::new();
    s.load(&net(&ok)).unwrap();
    assert!(s.set_shunt(0, Shunt::Open).is_err() && s.set_broken(1, true).is_err());
    assert!(s.set_shunt(2, Shunt::Open).is_ok());
}

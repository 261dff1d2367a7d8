//! Checks of the leapfrog baseline that `benches/versus_leapfrog.rs` measures the core
//! against: before its cost is compared, it must solve the same physics.
//!
//! Numbers: the step into a mismatched line of docs/references.md (Ulaby, Fundamentals of Applied
//! Electromagnetics, problem 2.75): E = 60 V, Rs = 100 Ω, Z0 = 50 Ω, one-way delay T.
//! With v = 2e8 m/s, dt = 10 ns and 100 m, T = 50 steps and the grid has 50 cells.

#[path = "../benches/baseline/leapfrog.rs"]
mod leapfrog;

use leapfrog::{FarEnd, Leapfrog, Setup};

const E: f64 = 60.0;
/// One-way delay in steps: 100 m / (2e8 m/s · 10 ns).
const T: usize = 50;

fn setup(source_ohm: f64, far: FarEnd) -> Setup {
    Setup { z0: 50.0, velocity: 2e8, length: 100.0, r_per_m: 0.0, dt: 1e-8, source_ohm, far }
}

/// Run a step of E from t = 0 for `steps` steps; returns (source node, middle node, far node)
/// after each step (entry n is the state at time (n + 1)·dt).
fn run(s: &Setup, steps: usize) -> Vec<(f64, f64, f64)> {
    let mut lf = Leapfrog::new(s).expect("valid setup");
    assert_eq!(lf.cells(), T);
    (0..steps)
        .map(|_| {
            let v0 = lf.step(E);
            (v0, lf.node_voltage(T / 2), lf.node_voltage(T))
        })
        .collect()
}

/// Assert `x` is within `tol` of `want` at every step index in `range`.
fn plateau(trace: &[f64], range: std::ops::Range<usize>, want: f64, tol: f64, what: &str) {
    for n in range {
        let got = trace[n];
        assert!((got - want).abs() <= tol, "{what}: step {n}: got {got}, want {want} ± {tol}");
    }
}

#[test]
fn first_wave_is_e_z0_over_rs_plus_z0() {
    // Closed form (voltage divider of the source resistance and the line's input impedance
    // Z0 before any reflection returns): V+ = E·Z0/(Rs + Z0) = 60·50/150 = 20 V
    // [closed form; docs/references.md, "Junctions and terminations"].
    let out = run(&setup(100.0, FarEnd::Open), 4 * T);
    let v0: Vec<f64> = out.iter().map(|o| o.0).collect();
    let mid: Vec<f64> = out.iter().map(|o| o.1).collect();
    plateau(&v0, 1..2 * T - 2, 20.0, 1e-9, "source node before the first echo");
    // The front reaches the middle node after T/2 steps; the echo from the open end
    // passes it at 3T/2.
    plateau(&mid, T / 2 + 1..3 * T / 2 - 2, 20.0, 1e-9, "middle node under the first wave");
    assert!(mid[T / 2 - 3].abs() < 1e-9, "nothing arrives ahead of the front (v·t)");
}

#[test]
fn open_end_doubles_the_wave_and_the_source_echo_follows() {
    // Bounce diagram [closed form]: an open end reflects with Γ_L = +1, so the far end sits
    // at 2·V+ = 40 V from T to 3T; the echo reflects at the source with
    // Γ_g = (Rs − Z0)/(Rs + Z0) = 1/3 and adds 2·Γ_g·V+ = 13.33 V at 3T.
    let far: Vec<f64> = run(&setup(100.0, FarEnd::Open), 6 * T).iter().map(|o| o.2).collect();
    plateau(&far, 0..T - 2, 0.0, 1e-9, "far end before the front");
    plateau(&far, T + 1..3 * T - 2, 40.0, 1e-9, "open far end after the first arrival");
    plateau(&far, 3 * T + 1..5 * T - 2, 40.0 + 40.0 / 3.0, 1e-9, "open far end after the source echo");
}

#[test]
fn resistive_load_follows_the_worked_example() {
    // docs/references.md worked example (Ulaby problem 2.75, RL = 25 Ω, published solution set):
    // load voltage 13.333, 11.852, 12.016, 11.998 V after T, 3T, 5T, 7T; source end 20,
    // 11.111, 12.099 V after 0, 2T, 4T. The published values carry 3 decimals: ± 1 mV.
    let out = run(&setup(100.0, FarEnd::Resistor(25.0)), 10 * T);
    let v0: Vec<f64> = out.iter().map(|o| o.0).collect();
    let far: Vec<f64> = out.iter().map(|o| o.2).collect();
    for (k, want) in [(1, 13.333), (3, 11.852), (5, 12.016), (7, 11.998)] {
        plateau(&far, k * T + 1..(k + 2) * T - 2, want, 1e-3, "load voltage");
    }
    for (k, want) in [(0, 20.0), (2, 11.111), (4, 12.099)] {
        plateau(&v0, k * T + 1..(k + 2) * T - 2, want, 1e-3, "source-end voltage");
    }
}

#[test]
fn conductor_resistance_sets_the_dc_divider() {
    // DC operating point [closed form, Ohm's law]: Rs, the conductor's R'·length and RL in
    // series: V_load = E·RL/(Rs + R'·ℓ + RL) = 60·50/(50 + 10 + 50) = 27.2727 V. The leapfrog
    // update holds this exactly in steady state (uniform current, v drop R'·dx per cell).
    let s = Setup { r_per_m: 0.1, ..setup(50.0, FarEnd::Resistor(50.0)) };
    let mut lf = Leapfrog::new(&s).expect("valid setup");
    let input = vec![E; 40 * T];
    let mut output = vec![0.0; input.len()];
    lf.process(&input, &mut output);
    let want = E * 50.0 / 110.0;
    let got = lf.node_voltage(T);
    assert!((got - want).abs() < 1e-6 * want, "far end {got} V, want {want} V");
    // The source node carries the drop over Rs only: E − I·Rs with I = E/110 Ω.
    let want0 = E - E / 110.0 * 50.0;
    let got0 = *output.last().expect("non-empty block");
    assert!((got0 - want0).abs() < 1e-6 * want0, "source node {got0} V, want {want0} V");
}

#[test]
fn grid_has_length_over_v_dt_cells() {
    // Courant number 1: dx = v·dt = 2 m at 100 MHz, so 10 km is 5000 cells [closed form].
    let s = Setup { length: 10_000.0, ..setup(50.0, FarEnd::Resistor(50.0)) };
    assert_eq!(Leapfrog::new(&s).expect("valid setup").cells(), 5000);
    // A length between whole cells rounds up (Courant number below 1 keeps it stable).
    let s = Setup { length: 101.0, ..setup(50.0, FarEnd::Resistor(50.0)) };
    assert_eq!(Leapfrog::new(&s).expect("valid setup").cells(), 51);
}

#[test]
fn bad_setup_is_refused_with_the_field_name() {
    let err = Leapfrog::new(&Setup { z0: 0.0, ..setup(50.0, FarEnd::Open) }).unwrap_err();
    assert!(err.contains("`z0`"), "{err}");
    let err = Leapfrog::new(&Setup { r_per_m: -1.0, ..setup(50.0, FarEnd::Open) }).unwrap_err();
    assert!(err.contains("`r_per_m`"), "{err}");
    let err = Leapfrog::new(&setup(50.0, FarEnd::Resistor(f64::NAN))).unwrap_err();
    assert!(err.contains("far-end resistor"), "{err}");
}

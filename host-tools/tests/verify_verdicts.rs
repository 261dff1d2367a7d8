//! Verdicts that mean what they say: the irrigation example with its break is compared
//! with the exact reference over the whole run (the reference follows the event), a
//! PWM-driven plant is not judged on a DC final value it never reaches, and a real error
//! still fails.

use std::path::Path;
use tidewire_host::analysis::prepare;
use tidewire_host::compile::{Compiled, ProfileKind};
use tidewire_host::plant::{load_plant, parse_plant, Load, Plant};
use tidewire_host::verify::{verify, FinalCheck, Verification};

fn run(plant: &Plant, reference: &Plant) -> Verification {
    let (c, _) = prepare(plant, "test.toml", ProfileKind::Wide).unwrap();
    verify(reference, "test.toml", &c, &[], &|_| {}).unwrap().0
}

#[test]
fn irrigation_example_is_verified_against_the_physics_after_its_break() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants/irrigation-network.toml");
    let plant = load_plant(&path).unwrap();
    let v = run(&plant, &plant);
    assert_eq!(v.exact_samples, v.samples, "the exact reference covers the whole run");
    assert_eq!(v.events.len(), 1);
    let e = &v.events[0];
    assert_eq!(e.sample, 600, "6 us at 100 MHz");
    assert_eq!(e.compared, v.samples - 600);
    assert!(v.pass(), "{v:#?}");
    // The comparison after the break is against the broken plant: judged against the plant
    // left intact, the same core fails after the event.
    let mut intact = plant.clone();
    intact.events.clear();
    let (c, _) = prepare(&plant, "test.toml", ProfileKind::Wide).unwrap();
    let (wrong, _) = verify(&intact, "test.toml", &c, &[], &|_| {}).unwrap();
    let worst = wrong.probes.iter().map(|p| p.max_error / p.norm).fold(0.0, f64::max);
    let after = e.probes.iter().zip(&v.probes).map(|(p, f)| p.max_error / f.norm).fold(0.0, f64::max);
    assert!(worst > 3.0 * after, "intact plant {worst}, broken plant after the event {after}");
}

const PWM_PLANT: &str = r#"
[plant]
name = "PWM into a cable"
sample_rate = "100 MHz"
duration = "20 us"

[cable.c]
impedance = "100 ohm"
velocity_factor = 0.667128

[node.drive]
[node.motor]
load = "470 ohm"

[[segment]]
name = "lead"
from = "drive"
to = "motor"
cable = "c"
length = "40 m"

[drive]
kind = "source"
node = "drive"
resistance = "10 ohm"
waveform = { pwm = "24 V", period = "3.3 us", duty = "40 %", dead_time = "100 ns", rise = "20 ns" }

[[probe]]
name = "motor"
node = "motor"
"#;

#[test]
fn a_pwm_plant_passes_where_the_core_agrees_and_an_error_still_fails() {
    let plant = parse_plant(PWM_PLANT, "pwm.toml", Path::new(".")).unwrap();
    let v = run(&plant, &plant);
    let p = &v.probes[0];
    assert_eq!(p.final_check, FinalCheck::NonePeriodic);
    // The run ends 0.19 us into a high phase while the motor still rings towards the new
    // level (about 10.7 V): far from the DC point of the last EMF level (+24 V behind
    // 10 ohm into 470 ohm, 23.5 V [closed form]), so a DC final-value check would fail a
    // core that agrees with the physics.
    let e_last = 24.0;
    let dc_last = e_last * 470.0 / 480.0;
    assert!((p.final_core - dc_last).abs() > 10.0 * plant.tolerances.final_error * p.norm, "{p:#?}");
    assert!(v.pass(), "{v:#?}");
    // A deliberate error: the core runs the plant with a 330-ohm motor, the reference the
    // 470-ohm one. The waveform errors catch it though the final value is not judged.
    let mut other = plant.clone();
    other.nodes[1].load = Load::Resistor(330.0);
    let bad = run(&other, &plant);
    assert!(!bad.pass(), "{bad:#?}");
    assert!(!bad.probes[0].pass_max || !bad.probes[0].pass_rms);
}

fn example(name: &str) -> Plant {
    load_plant(&Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants").join(name)).unwrap()
}

/// `verify` and the working-point check on `plant` as compiled for `profile`.
fn held(plant: &Plant, profile: ProfileKind) -> Verification {
    let (c, _) = prepare(plant, "test.toml", profile).unwrap();
    held_compiled(plant, &c)
}

fn held_compiled(plant: &Plant, c: &Compiled) -> Verification {
    let (mut v, _) = verify(plant, "test.toml", c, &[], &|_| {}).unwrap();
    v.hold_check(plant, "test.toml", c).unwrap();
    v
}

/// `plant` compiled for the narrow profile and then run with no bits below the I/O code
/// (io_shift 0, one code = one wave LSB): the same waves, read at 16-bit resolution, where
/// the rounding's dead band shows as a cycle of several codes.
fn narrow_at_wave_resolution(plant: &Plant) -> Compiled {
    let (mut c, _) = prepare(plant, "test.toml", ProfileKind::Narrow).unwrap();
    assert_eq!(c.net.io_shift, ProfileKind::Narrow.io_shift(), "the compiler's narrow io_shift");
    assert!(c.net.io_shift > 0, "narrow waves keep bits below the code");
    c.net.volts_per_code /= (1u32 << c.net.io_shift) as f32;
    c.net.io_shift = 0;
    c
}

#[test]
fn the_working_point_check_sees_the_narrow_limit_cycle_and_judges_it_against_the_tolerance() {
    // drive-to-motor, step to 680 V: both profiles hold every code at the compiler's scale
    // (narrow: 4 bits below its 12-bit code, `Profile::IO_SHIFT`).
    let plant = example("drive-to-motor.toml");
    let wide = held(&plant, ProfileKind::Wide);
    let h = wide.hold.as_ref().expect("a step drive is checked");
    assert_eq!(h.emf, 680.0);
    assert_eq!((h.widest(), h.watched, h.held), (0, h.held / 2, 160_000), "{h:#?}");
    assert_eq!(h.outputs.len(), 1 + plant.probes.len(), "the drive's code and every probe");
    let narrow = held(&plant, ProfileKind::Narrow);
    assert!(narrow.pass(), "{narrow:#?}");
    assert_eq!(narrow.hold.as_ref().unwrap().widest(), 0, "{narrow:#?}");
    // The same narrow waves read one code per wave LSB: the dead band of truncation is a
    // cycle of more than a few codes at the motor terminals, which the check must see. Within
    // the plant's final-value tolerance (0.5 % of 680 V) it passes, and the text names it.
    let c = narrow_at_wave_resolution(&plant);
    let narrow = held_compiled(&plant, &c);
    let h = narrow.hold.as_ref().unwrap();
    let motor = h.outputs.iter().find(|o| o.name == "motor terminals").unwrap();
    assert!(motor.band > tidewire_host::verify::hold::FEW_CODES, "{h:#?}");
    assert!(motor.low <= motor.last && motor.last <= motor.high);
    assert_eq!(h.limit, (0.005 * 680.0 / f64::from(c.net.volts_per_code)).floor() as u32);
    assert!(h.pass() && narrow.pass(), "{h:#?}");
    // A final-value tolerance tighter than the band: the check fails the verdict, for the
    // outputs that cycle and only those.
    let mut tight = plant.clone();
    tight.tolerances.final_error = 2e-4; // 136 mV, under 3 codes of 47 mV
    let v = held_compiled(&tight, &c);
    let h = v.hold.as_ref().unwrap();
    assert_eq!(h.limit, tidewire_host::verify::hold::FEW_CODES, "never tighter than a few codes");
    assert!(!h.pass() && !v.pass(), "{h:#?}");
    assert!(h.outputs.iter().all(|o| o.pass == (o.band <= h.limit)));
}

#[test]
fn the_working_point_check_is_the_zero_input_rest_after_a_pulse_and_absent_for_pwm() {
    // irrigation-network: a pulse, so the drive held after the run is 0 V; every path has
    // loss, so every code must be exactly 0 (the zero-input property), in both profiles.
    let plant = example("irrigation-network.toml");
    for profile in [ProfileKind::Wide, ProfileKind::Narrow] {
        let v = held(&plant, profile);
        let h = v.hold.as_ref().unwrap();
        assert_eq!(h.emf, 0.0);
        assert!(h.outputs.iter().all(|o| (o.low, o.high, o.last) == (0, 0, 0)), "{profile:?}: {h:#?}");
    }
    // A PWM drive never holds a value: no check.
    let pwm = parse_plant(PWM_PLANT, "pwm.toml", Path::new(".")).unwrap();
    assert!(held(&pwm, ProfileKind::Wide).hold.is_none());
}

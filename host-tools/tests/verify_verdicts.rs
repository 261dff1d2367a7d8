//! Verdicts that mean what they say: the irrigation example with its break is compared
//! with the exact reference over the whole run (the reference follows the event), a
//! PWM-driven plant is not judged on a DC final value it never reaches, and a real error
//! still fails.

use std::path::Path;
use tidewire_host::analysis::prepare;
use tidewire_host::compile::ProfileKind;
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

//! Faults injected while the plant runs, and drive waveforms, end to end (plant file →
//! compiler → core on the host).
use std::path::Path;
use tidewire_host::analysis::prepare;
use tidewire_host::compile::ProfileKind;
use tidewire_host::plant::{parse_plant, Waveform};

const BREAK_PLANT: &str = r#"
[plant]
name = "break test"
sample_rate = "200 MHz"
duration = "4 us"
[cable.c]
impedance = "50 ohm"
velocity_factor = 0.66
[node.src]
[node.far]
load = "50 ohm"
[[segment]]
name = "line"
from = "src"
to = "far"
cable = "c"
length = "200 m"
[drive]
kind = "source"
node = "src"
resistance = "50 ohm"
waveform = { pulse = "1 V", width = "20 ns", rise = "0 s", delay = "2 us" }
[[probe]]
name = "drive"
node = "src"
[[event]]
at = "2 us"
segment = "line"
break_at = "60 m"
"#;

#[test]
fn a_break_at_distance_d_echoes_at_the_drive_2d_over_v_after_the_event() {
    // [closed form] Everything is matched, so before the break nothing ever returns. The line
    // breaks 60 m out at t_e = 2 us, the moment a 1 V pulse leaves the 50 Ω source (0.5 V on
    // the line); the open end of the break reflects it with Gamma = +1, and it is back at the
    // drive 2·d/v = 2·60/(0.66·c) = 606.5 ns after the event. Checked within one sample.
    for profile in [ProfileKind::Wide, ProfileKind::Narrow] {
        let plant = parse_plant(BREAK_PLANT, "break.toml", Path::new(".")).unwrap();
        let c = prepare(&plant, "break.toml", profile).unwrap().0;
        assert_eq!(c.events.len(), 1);
        let run = tidewire_host::host_core::run_core(&c, c.samples, &[], &|_| {}).unwrap();
        let v = &run.recording.probes[0];
        let dt = c.dt;
        let t_e = 2e-6;
        let start = (t_e / dt).round() as usize;
        // The launched pulse itself: 0.5 V for 20 ns at the drive.
        assert!((v[start + 1] - 0.5).abs() < 0.01, "{profile:?}: launched pulse {}", v[start + 1]);
        // The first return after the pulse has passed.
        let after = start + (30e-9 / dt) as usize;
        assert!(v[..start].iter().all(|x| x.abs() < 1e-3), "nothing returns before the event");
        let n = (after..v.len()).find(|&k| v[k] > 0.25).expect("an echo arrives");
        let want = t_e + 2.0 * 60.0 / (0.66 * 299_792_458.0);
        let got = n as f64 * dt;
        assert!((got - want).abs() <= dt, "{profile:?}: echo at {got:e} s, want {want:e} s");
        assert!((v[n] - 0.5).abs() < 0.02, "open break doubles back the full 0.5 V: {}", v[n]);
    }
}

#[test]
fn pwm_with_dead_time_has_the_stated_levels_and_timing() {
    // [closed form] ±24 V, 10 us period, 30 % duty, 200 ns dead time, ideal edges.
    let w = Waveform::Pwm { amplitude: 24.0, period: 10e-6, duty: 0.3, dead_time: 200e-9, rise: 0.0, delay: 1e-6 };
    let dt = 10e-9;
    let at = |t: f64| w.at(t, dt);
    assert_eq!(at(0.5e-6), 0.0, "before the delay");
    assert_eq!(at(1e-6 + 1e-6), 24.0, "high phase");
    assert_eq!(at(1e-6 + 3.1e-6), 0.0, "dead time after the high phase");
    assert_eq!(at(1e-6 + 5e-6), -24.0, "low phase");
    assert_eq!(at(1e-6 + 9.9e-6), 0.0, "dead time before the next period");
    assert_eq!(at(1e-6 + 11e-6), 24.0, "next period");
    // With a finite edge the 10-90 % time is the stated rise.
    let w = Waveform::Pwm { amplitude: 10.0, period: 10e-6, duty: 0.5, dead_time: 100e-9, rise: 40e-9, delay: 0.0 };
    let t10 = (0..1000).map(|k| k as f64 * 1e-10).find(|t| w.at(*t, dt) >= 1.0).unwrap();
    let t90 = (0..1000).map(|k| k as f64 * 1e-10).find(|t| w.at(*t, dt) >= 9.0).unwrap();
    assert!(((t90 - t10) - 40e-9).abs() < 0.2e-9, "10-90 % {}", t90 - t10);
}

#[test]
fn pwm_plant_file_parses_and_bad_duty_is_located() {
    let base = BREAK_PLANT.replace(
        r#"waveform = { pulse = "1 V", width = "20 ns", rise = "0 s", delay = "2 us" }"#,
        r#"waveform = { pwm = "24 V", period = "1 us", duty = "30 %", dead_time = "50 ns", rise = "10 ns" }"#,
    );
    let plant = parse_plant(&base, "pwm.toml", Path::new(".")).unwrap();
    assert!(matches!(plant.drive, tidewire_host::plant::Drive::Source { emf: Waveform::Pwm { .. }, .. }));
    let bad = base.replace(r#"duty = "30 %""#, r#"duty = "130 %""#);
    let e = parse_plant(&bad, "pwm.toml", Path::new(".")).unwrap_err();
    assert!(e.line > 0 && e.field.contains("duty"), "{e}");
}

//! Scheduled events in the exact reference (compensation method, `reference::events`)
//! against closed forms of a matched line: with the source matched (Rs = Z0) every wave
//! that returns to the source is absorbed, so each node voltage is a sum of a few steps
//! whose sizes are reflection coefficients and whose times are the line delays [closed
//! form: lattice diagram of a lossless line, Γ = (R − Z0)/(R + Z0)].

use tidewire_host::plant::{
    CableType, Drive, Event, EventAction, Load, Node, Plant, Probe, ProbeKind, Segment, Span, Tolerances, Waveform,
};
use tidewire_host::reference::{exact_response, ExactOptions};

const E: f64 = 2.0;
const Z0: f64 = 50.0;
/// 100 MHz and v = 2e8 m/s: 2 m per sample, so every delay below is on the sample grid.
const RATE: f64 = 1e8;

fn plant(length: f64, load: Load, events: Vec<(f64, EventAction)>) -> Plant {
    let node = |name: &str, load| Node { name: name.into(), load, span: Span::default() };
    Plant {
        name: "matched line".into(),
        notes: vec![],
        sample_rate: RATE,
        duration: 200.0 / RATE,
        cables: vec![CableType {
            name: "c".into(),
            z0: Z0,
            velocity: 2e8,
            r_per_m: 0.0,
            loss: None,
            source: "test".into(),
        }],
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
        drive: Drive::Source { node: 0, emf: Waveform::Step { amplitude: E, delay: 0.0, rise: 0.0 }, rs: Z0 },
        probes: vec![
            Probe { name: "feed".into(), kind: ProbeKind::Voltage(0) },
            Probe { name: "far".into(), kind: ProbeKind::Voltage(1) },
        ],
        tolerances: Tolerances::default(),
        events: events.into_iter().map(|(at, action)| Event { at, action, span: Span::default() }).collect(),
        lattice_path: vec![],
        zc_networks: true,
    }
}

fn gamma(load: Load) -> f64 {
    match load {
        Load::Open => 1.0,
        Load::Short => -1.0,
        Load::Resistor(r) => (r - Z0) / (r + Z0),
        _ => unreachable!("static loads only in these tests"),
    }
}

/// Largest |exact − want| over the run.
fn worst(p: &Plant, want: impl Fn(usize, usize) -> f64) -> f64 {
    let run = exact_response(p, &ExactOptions::for_plant(p)).unwrap();
    let mut w = 0.0f64;
    for (c, t) in run.traces.iter().enumerate() {
        for (k, v) in t.values.iter().enumerate() {
            w = w.max((v - want(c, k)).abs());
        }
    }
    w
}

#[test]
fn switched_far_end_loads_follow_the_lattice_diagram() {
    // Line of D = 20 samples; the load changes at sample 70 (after the first reflection has
    // come back). Far end: v = (E/2)·(1 + Γ(k)) from k = D. Feed: E/2 + (E/2)·Γ(k − D) from
    // k = 2D. Covers every compensation path: resistor → open (injection), resistor →
    // short (forced voltage), short → resistor (load current by Kirchhoff's law).
    let d = 20usize;
    let ke = 70usize;
    for (before, after) in [
        (Load::Resistor(150.0), Load::Open),
        (Load::Resistor(150.0), Load::Short),
        (Load::Short, Load::Resistor(20.0)),
        (Load::Open, Load::Resistor(Z0)),
    ] {
        let p = plant(2.0 * d as f64, before, vec![(ke as f64 / RATE, EventAction::SetLoad(1, after))]);
        let g = |k: usize| if k < ke { gamma(before) } else { gamma(after) };
        let w = worst(&p, |c, k| match c {
            0 if k >= 2 * d => E / 2.0 * (1.0 + g(k - d)),
            0 => E / 2.0,
            _ if k >= d => E / 2.0 * (1.0 + g(k)),
            _ => 0.0,
        });
        assert!(w < 1e-6 * E, "{before:?} -> {after:?}: worst error {w}");
    }
}

#[test]
fn a_break_reflects_the_incident_wave_and_cuts_off_the_far_part() {
    // Matched line (R = Z0) of D = 30 samples, broken 10 samples (20 m) from the feed at
    // sample 50. Feed: E/2, then E from 50 + 10 (the open break returns the incident E/2).
    // Far end: E/2 from D until the last wave that passed the break arrives: 50 + 20.
    let p = plant(60.0, Load::Resistor(Z0), vec![(50.0 / RATE, EventAction::Break { segment: 0, distance: 20.0 })]);
    let w = worst(&p, |c, k| match c {
        0 if k >= 60 => E,
        0 => E / 2.0,
        _ if (30..70).contains(&k) => E / 2.0,
        _ => 0.0,
    });
    assert!(w < 1e-6 * E, "worst error {w}");
}

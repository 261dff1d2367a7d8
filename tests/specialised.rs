//! The plant-specialised solver that `tidewire compile --rust` emits is bit-exact with the
//! generic `Solver`: for every plant below, both profiles, two stimuli and the plant's events
//! while running, every drive output, every probe and every rig drive read-out is the same
//! integer at every sample.
//!
//! The specialised sources are checked in under `tests/generated/specialised/` and built into
//! this one test binary (no crate per plant); the first test fails if any of them is not what
//! the emitter writes today. Regenerate them with
//! `TIDEWIRE_BLESS=1 cargo test --test specialised`.
//!
//! Coverage: nodes of 1 to 5 ports, a source node, series resistors (lumped conductor
//! resistance), a series inductor with and without winding resistance, shunts open, short and
//! resistive, capacitor and inductor elements alone and behind a resistor, loss filters of six
//! sections, a rig port with latency 2, and events: a load switched (open → resistor,
//! short → open, open → resistor → short → open), a node broken and joined again; a series
//! branch between two nodes (a lumped pi section); lossy lines with Zc(s) networks at both
//! ends (node-wave form), through a series junction, a one-sample line and a break; a 34-port
//! field bus built only from the kinds the old-style generic step of `benches/forms.rs` knows.
use std::path::{Path, PathBuf};
use tidewire::core::{
    Allpass, ConfigError, Drive, Element, ElementKind, Junction, Line, LineLoss, Narrow, Network, PlantStep, Probe,
    ProbeKind, Shunt, Side, Solver, Wide, ZcNetwork,
};
use tidewire::host::analysis::prepare;
use tidewire::host::compile::{CoreAction, ProfileKind};
use tidewire::host::emit::{plant_rust_source, switched_junctions};
use tidewire::host::plant::load_plant;

macro_rules! generated {
    ($($m:ident),*) => {$(
        #[allow(dead_code)]
        mod $m {
            include!(concat!("generated/specialised/", stringify!($m), ".rs"));
        }
    )*};
}
generated!(
    every_kind_wide,
    every_kind_narrow,
    rig_break_wide,
    rig_break_narrow,
    reactive_wide,
    reactive_narrow,
    one_line_wide,
    pi_section_wide,
    pi_section_narrow,
    zc_ladder_wide,
    zc_ladder_narrow,
    tap_bus_wide,
    tap_bus_narrow
);

/// A change applied to both forms before sample `.0`.
#[derive(Debug, Clone, Copy)]
enum Ev {
    Shunt(u16, Shunt),
    Broken(u16, bool),
}

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// (generated module name, fresh source, events).
fn plant_file_case(file: &str, profile: ProfileKind) -> (String, Vec<(usize, Ev)>) {
    let path = root().join(file);
    let plant = load_plant(&path).unwrap();
    let c = prepare(&plant, &path.display().to_string(), profile).unwrap().0;
    let src = plant_rust_source(&c.network(), profile, &switched_junctions(&c), &plant.name).unwrap();
    let events = c
        .events
        .iter()
        .map(|e| {
            let ev = match e.action {
                CoreAction::SetShunt(j, s) => Ev::Shunt(j, s),
                CoreAction::Break(j) => Ev::Broken(j, true),
            };
            (e.sample, ev)
        })
        .collect();
    (src, events)
}

/// A hand-built network of our own with what plant files do not produce: inductor elements
/// (alone and behind a resistor), a choke without winding resistance, a multi-port node with
/// elements switched through every shunt kind, and a break that is joined again.
fn reactive_network() -> (Vec<Line>, Vec<Junction>, Vec<Element>, Vec<Probe>) {
    let z = 100_000;
    let lines = vec![
        Line { z_milliohm: z, delay: 5, a: 0, b: 1 },
        Line { z_milliohm: z, delay: 3, a: 1, b: 2 },
        Line { z_milliohm: 150_000, delay: 7, a: 1, b: 3 },
        Line { z_milliohm: z, delay: 4, a: 2, b: 4 },
        Line { z_milliohm: z, delay: 9, a: 4, b: 5 },
        Line { z_milliohm: 60_000, delay: 2, a: 3, b: 6 },
    ];
    let junctions = vec![
        Junction::Node { shunt: Shunt::Open },
        Junction::Node { shunt: Shunt::Open },
        Junction::SeriesInductor { port_milliohm: 40_000, milliohm: 0 },
        Junction::Node { shunt: Shunt::Resistor { milliohm: 330_000 } },
        Junction::Series { milliohm: 2_500 },
        Junction::Node { shunt: Shunt::Short },
        Junction::Node { shunt: Shunt::Open },
    ];
    let elements = vec![
        Element { junction: 1, kind: ElementKind::Inductor, port_milliohm: 900_000, series_milliohm: 0 },
        Element { junction: 1, kind: ElementKind::Capacitor, port_milliohm: 20_000, series_milliohm: 47_000 },
        Element { junction: 6, kind: ElementKind::Inductor, port_milliohm: 250_000, series_milliohm: 10_000 },
        Element { junction: 3, kind: ElementKind::Capacitor, port_milliohm: 5_000, series_milliohm: 0 },
    ];
    let probes = vec![
        Probe { kind: ProbeKind::Voltage, line: 0, side: Side::A },
        Probe { kind: ProbeKind::Voltage, line: 1, side: Side::A },
        Probe { kind: ProbeKind::Current, line: 2, side: Side::B },
        Probe { kind: ProbeKind::Voltage, line: 5, side: Side::B },
    ];
    (lines, junctions, elements, probes)
}

fn reactive_case(profile: ProfileKind) -> (String, Vec<(usize, Ev)>) {
    let (lines, junctions, elements, probes) = reactive_network();
    let net = Network {
        lines: &lines,
        junctions: &junctions,
        elements: &elements,
        losses: &[],
        drive: Drive::Source { junction: 0, milliohm: 50_000 },
        probes: &probes,
        io_shift: if profile == ProfileKind::Wide { 8 } else { 0 },
        volts_per_code: 1.0 / 4096.0,
    };
    let events = vec![
        (150, Ev::Shunt(1, Shunt::Resistor { milliohm: 120_000 })),
        (300, Ev::Shunt(1, Shunt::Short)),
        (420, Ev::Broken(3, true)),
        (500, Ev::Shunt(1, Shunt::Open)),
        (640, Ev::Broken(3, false)),
        (700, Ev::Shunt(3, Shunt::Open)),
    ];
    (plant_rust_source(&net, profile, &[1, 3], "reactive (test)").unwrap(), events)
}

/// The one-line plant of `benches/versus_leapfrog.rs` at 1 km (50 Ω, 500 samples at 100 MHz,
/// 50 Ω source, matched far end), benched against the f64 leapfrog in `benches/forms.rs`; the
/// far end is opened at sample 700.
fn one_line_case() -> (String, Vec<(usize, Ev)>) {
    let lines = [Line { z_milliohm: 50_000, delay: 500, a: 0, b: 1 }];
    let junctions =
        [Junction::Node { shunt: Shunt::Open }, Junction::Node { shunt: Shunt::Resistor { milliohm: 50_000 } }];
    let probes = [Probe { kind: ProbeKind::Voltage, line: 0, side: Side::B }];
    let net = Network {
        lines: &lines,
        junctions: &junctions,
        elements: &[],
        losses: &[],
        drive: Drive::Source { junction: 0, milliohm: 50_000 },
        probes: &probes,
        io_shift: 8,
        volts_per_code: 1.0 / 4096.0,
    };
    let src = plant_rust_source(&net, ProfileKind::Wide, &[1], "one line of 1 km (test)").unwrap();
    (src, vec![(700, Ev::Shunt(1, Shunt::Open))])
}

/// A hand-built lossy ladder of our own with Zc(s) networks at every end of its lossy lines:
/// a source node, a series resistor between two lossy lines (the lumped conductor
/// resistance, as the compiler builds it), a one-sample lossy line, a lossy line with a
/// fractional delay, a lossless stub, a current probe on a Zc end; the middle node is broken
/// and joined again, the far load opened and closed. The shelf (pole 1/2, zero −1/2)
/// attenuates by 1/9 at Nyquist; the network (k = 1/2 and 7/10, ρ = 1/50 and 1/100) passes
/// the load-time margin.
fn zc_ladder_case(profile: ProfileKind) -> (String, Vec<(usize, Ev)>) {
    let z = 100_000;
    let lines = [
        Line { z_milliohm: z, delay: 6, a: 0, b: 1 },
        Line { z_milliohm: z, delay: 1, a: 1, b: 2 },
        Line { z_milliohm: z, delay: 9, a: 2, b: 3 },
        Line { z_milliohm: 75_000, delay: 4, a: 2, b: 4 },
    ];
    let junctions = [
        Junction::Node { shunt: Shunt::Open },
        Junction::Series { milliohm: 2_000 },
        Junction::Node { shunt: Shunt::Open },
        Junction::Node { shunt: Shunt::Resistor { milliohm: 100_000 } },
        Junction::Node { shunt: Shunt::Resistor { milliohm: 150_000 } },
    ];
    let q30 = |x: f64| (x * (1u64 << 30) as f64) as u32;
    let zc = Some(ZcNetwork { sections: 2, k: [q30(0.5), q30(0.7), 0, 0], rho: [q30(0.02), q30(0.01), 0, 0] });
    let shelf = |line: u16, allpass: Option<Allpass>| LineLoss {
        line,
        sections: 1,
        poles: [q30(0.5), 0, 0, 0, 0, 0],
        zeros: [-(q30(0.5) as i32), 0, 0, 0, 0, 0],
        allpass,
        zc,
    };
    // A quarter-sample fraction: a = (1 − d)/(1 + d) with d = 0.75, c = sqrt(1 − a²).
    let a = 0.25 / 1.75;
    let ap = Allpass { a: q30(a) as i32, c: q30((1.0 - a * a).sqrt()) };
    let losses = [shelf(0, None), shelf(1, None), shelf(2, Some(ap))];
    let probes = [
        Probe { kind: ProbeKind::Voltage, line: 0, side: Side::A },
        Probe { kind: ProbeKind::Current, line: 0, side: Side::A },
        Probe { kind: ProbeKind::Voltage, line: 1, side: Side::B },
        Probe { kind: ProbeKind::Current, line: 2, side: Side::B },
        Probe { kind: ProbeKind::Voltage, line: 3, side: Side::B },
    ];
    let net = Network {
        lines: &lines,
        junctions: &junctions,
        elements: &[],
        losses: &losses,
        drive: Drive::Source { junction: 0, milliohm: 100_000 },
        probes: &probes,
        io_shift: if profile == ProfileKind::Wide { 8 } else { 0 },
        volts_per_code: 1.0 / 4096.0,
    };
    let events = vec![
        (300, Ev::Broken(2, true)),
        (450, Ev::Broken(2, false)),
        (550, Ev::Shunt(3, Shunt::Open)),
        (700, Ev::Shunt(3, Shunt::Resistor { milliohm: 100_000 })),
    ];
    (plant_rust_source(&net, profile, &[2, 3], "Zc ladder (test)").unwrap(), events)
}

/// A field bus of our own, built only from what the generic step of the day issue 9 was filed
/// had (so `benches/forms.rs` runs that step, `benches/baseline/old_generic/`, on it beside
/// today's two forms): a rig port (latency 2) into a 100 Ω trunk, five taps, each two trunk
/// halves joined by a series resistor of 1.5 Ω (the lumped conductor resistance) and a drop
/// line to an end that is in turn matched (75 Ω), a receiver's input capacitance (port
/// resistance T/(2C) = 250 Ω), 10 Ω, a short and an AC termination (150 Ω + a capacitor of
/// port 50 Ω), then 300 Ω at the far end. The first trunk line and every drop carry a
/// two-section loss filter. 34 ports. Events: the short is lifted and put back, and the third
/// tap node is broken and joined again.
fn tap_bus_case(profile: ProfileKind) -> (String, Vec<(usize, Ev)>) {
    const TRUNK: [u32; 10] = [14, 40, 26, 75, 19, 58, 23, 120, 35, 11];
    const DROP: [u32; 5] = [21, 55, 130, 33, 240];
    const DROP_OHM: [u32; 5] = [75, 120, 50, 90, 150];
    let (ohm, trunk_z) = (1000, 100_000);
    let q30 = |x: f64| (x * (1u64 << 30) as f64) as i64;
    let loss = |line: usize| LineLoss {
        line: line as u16,
        sections: 2,
        poles: [q30(0.62) as u32, q30(0.91) as u32, 0, 0, 0, 0],
        zeros: [q30(0.57) as i32, q30(0.89) as i32, 0, 0, 0, 0],
        allpass: None,
        zc: None,
    };
    let mut lines = Vec::new();
    let mut junctions = vec![Junction::Node { shunt: Shunt::Open }];
    let mut elements = Vec::new();
    let mut losses = vec![loss(0)];
    let mut probes = vec![Probe { kind: ProbeKind::Current, line: 0, side: Side::A }];
    let mut at = 0u16;
    fn add(junctions: &mut Vec<Junction>, j: Junction) -> u16 {
        junctions.push(j);
        (junctions.len() - 1) as u16
    }
    for t in 0..5 {
        let series = add(&mut junctions, Junction::Series { milliohm: 1_500 });
        lines.push(Line { z_milliohm: trunk_z, delay: TRUNK[2 * t], a: at, b: series });
        let tap = add(&mut junctions, Junction::Node { shunt: Shunt::Open });
        lines.push(Line { z_milliohm: trunk_z, delay: TRUNK[2 * t + 1], a: series, b: tap });
        let z = DROP_OHM[t] * ohm;
        let end = match t {
            0 => Shunt::Resistor { milliohm: z },
            2 => Shunt::Resistor { milliohm: 10 * ohm },
            3 => Shunt::Short,
            _ => Shunt::Open,
        };
        let drop_end = add(&mut junctions, Junction::Node { shunt: end });
        let series_milliohm = if t == 4 { z } else { 0 };
        if t == 1 || t == 4 {
            let port_milliohm = if t == 1 { 250 * ohm } else { 50 * ohm };
            elements.push(Element { junction: drop_end, kind: ElementKind::Capacitor, port_milliohm, series_milliohm });
        }
        lines.push(Line { z_milliohm: z, delay: DROP[t], a: tap, b: drop_end });
        losses.push(loss(lines.len() - 1));
        probes.push(Probe { kind: ProbeKind::Voltage, line: (lines.len() - 1) as u16, side: Side::B });
        at = tap;
    }
    let far = add(&mut junctions, Junction::Node { shunt: Shunt::Resistor { milliohm: 300 * ohm } });
    lines.push(Line { z_milliohm: trunk_z, delay: 31, a: at, b: far });
    probes.push(Probe { kind: ProbeKind::Voltage, line: (lines.len() - 1) as u16, side: Side::B });
    let net = Network {
        lines: &lines,
        junctions: &junctions,
        elements: &elements,
        losses: &losses,
        drive: Drive::Rig { junction: 0, latency: 2 },
        probes: &probes,
        io_shift: if profile == ProfileKind::Wide { 12 } else { 0 },
        volts_per_code: 1.0 / 4096.0,
    };
    // Junctions: 0 the rig port, then (series, tap, drop end) per tap: the short is 12, the
    // third tap node 8.
    let events = vec![
        (250, Ev::Shunt(12, Shunt::Open)),
        (400, Ev::Broken(8, true)),
        (520, Ev::Shunt(12, Shunt::Short)),
        (650, Ev::Broken(8, false)),
    ];
    (plant_rust_source(&net, profile, &[8, 12], "tap bus (test)").unwrap(), events)
}

fn fresh(name: &str) -> (String, Vec<(usize, Ev)>) {
    let profile = if name.ends_with("wide") { ProfileKind::Wide } else { ProfileKind::Narrow };
    match name.trim_end_matches("_wide").trim_end_matches("_narrow") {
        "every_kind" => plant_file_case("tests/plants/every-kind.toml", profile),
        "rig_break" => plant_file_case("examples/plants/rig-break.toml", profile),
        "one_line" => one_line_case(),
        "pi_section" => plant_file_case("tests/plants/pi-section.toml", profile),
        "zc_ladder" => zc_ladder_case(profile),
        "tap_bus" => tap_bus_case(profile),
        _ => reactive_case(profile),
    }
}

const CASES: [&str; 13] = [
    "every_kind_wide",
    "every_kind_narrow",
    "rig_break_wide",
    "rig_break_narrow",
    "reactive_wide",
    "reactive_narrow",
    "one_line_wide",
    "pi_section_wide",
    "pi_section_narrow",
    "zc_ladder_wide",
    "zc_ladder_narrow",
    "tap_bus_wide",
    "tap_bus_narrow",
];

#[test]
fn checked_in_specialised_sources_are_what_the_emitter_writes() {
    let bless = std::env::var_os("TIDEWIRE_BLESS").is_some();
    for name in CASES {
        let path = root().join(format!("tests/generated/specialised/{name}.rs"));
        let (src, _) = fresh(name);
        if bless {
            std::fs::write(&path, &src).unwrap();
        }
        let checked_in = std::fs::read_to_string(&path).unwrap_or_default();
        assert!(src == checked_in, "{} is stale: run TIDEWIRE_BLESS=1 cargo test --test specialised", path.display());
    }
}

/// Two stimuli: xorshift codes over the whole range, and a step with a pulse (a settling run).
fn stimuli(len: usize) -> [Vec<i16>; 2] {
    let mut x: u32 = 0x2545_f491;
    let noise = (0..len)
        .map(|_| {
            x ^= x << 13;
            x ^= x >> 17;
            x ^= x << 5;
            (x >> 16) as i16
        })
        .collect();
    let step = (0..len)
        .map(|n| {
            if n < 20 {
                0
            } else if (200..230).contains(&n) {
                -9000
            } else {
                12000
            }
        })
        .collect();
    [noise, step]
}

/// Step both forms through `input` with `events`; every read-out equal at every sample.
/// Returns the generic form's probe traces (to show the events changed the run).
fn compare(
    g: &mut dyn PlantStep,
    s: &mut dyn PlantStep,
    input: &[i16],
    events: &[(usize, Ev)],
    what: &str,
) -> Vec<i32> {
    assert_eq!(g.probe_count(), s.probe_count(), "{what}: probe count");
    let mut trace = Vec::new();
    for (n, x) in input.iter().enumerate() {
        for (_, ev) in events.iter().filter(|(at, _)| *at == n) {
            let (rg, rs) = match *ev {
                Ev::Shunt(j, sh) => (g.set_shunt(j, sh), s.set_shunt(j, sh)),
                Ev::Broken(j, b) => (g.set_broken(j, b), s.set_broken(j, b)),
            };
            assert_eq!(rg, Ok(()), "{what}: generic refused {ev:?}");
            assert_eq!(rs, Ok(()), "{what}: specialised refused {ev:?}");
        }
        assert_eq!(g.rig_drive(), s.rig_drive(), "{what}: rig drive before sample {n}");
        assert_eq!(g.step(*x), s.step(*x), "{what}: output at sample {n}");
        for k in 0..g.probe_count() {
            assert_eq!(g.probe_raw(k), s.probe_raw(k), "{what}: probe {k} at sample {n}");
            trace.push(g.probe_raw(k));
        }
    }
    trace
}

macro_rules! forms {
    ($m:ident, $p:ty) => {
        || -> (Box<dyn PlantStep>, Box<dyn PlantStep>) {
            let mut g =
                Box::new(Solver::<$p, { $m::PORTS }, { $m::JUNCTIONS }, { $m::MEMORY }, { $m::LOSS_ENDS }>::new());
            g.load(&$m::NETWORK).unwrap();
            (g, Box::new($m::specialised::Plant::new()))
        }
    };
}

fn check(name: &str, make: &dyn Fn() -> (Box<dyn PlantStep>, Box<dyn PlantStep>)) {
    let (_, events) = fresh(name);
    assert!(!events.is_empty(), "{name}: every case runs events");
    let last = events.iter().map(|e| e.0).max().unwrap_or(0);
    for (k, input) in stimuli(last + 600).iter().enumerate() {
        let (mut g, mut s) = make();
        let with = compare(&mut *g, &mut *s, input, &events, &format!("{name}, stimulus {k}"));
        // The same run without events differs: the events were applied, not ignored.
        let (mut g, mut s) = make();
        let without = compare(&mut *g, &mut *s, input, &[], &format!("{name}, stimulus {k}, no events"));
        assert_ne!(with, without, "{name}: the events changed nothing");
        // Reset brings both back to rest: the same run again gives the same samples.
        g.reset();
        s.reset();
        assert_eq!(compare(&mut *g, &mut *s, input, &[], &format!("{name}, after reset")), without);
    }
}

#[test]
fn every_kind_is_bit_exact() {
    check("every_kind_wide", &forms!(every_kind_wide, Wide));
    check("every_kind_narrow", &forms!(every_kind_narrow, Narrow));
}

#[test]
fn rig_port_with_latency_and_a_break_is_bit_exact() {
    check("rig_break_wide", &forms!(rig_break_wide, Wide));
    check("rig_break_narrow", &forms!(rig_break_narrow, Narrow));
}

#[test]
fn reactive_elements_and_every_shunt_are_bit_exact() {
    check("reactive_wide", &forms!(reactive_wide, Wide));
    check("reactive_narrow", &forms!(reactive_narrow, Narrow));
}

#[test]
fn a_series_branch_between_nodes_is_bit_exact() {
    check("pi_section_wide", &forms!(pi_section_wide, Wide));
    check("pi_section_narrow", &forms!(pi_section_narrow, Narrow));
}

#[test]
fn lossy_lines_with_zc_networks_are_bit_exact() {
    check("zc_ladder_wide", &forms!(zc_ladder_wide, Wide));
    check("zc_ladder_narrow", &forms!(zc_ladder_narrow, Narrow));
}

#[test]
fn the_benched_tap_bus_is_bit_exact() {
    check("tap_bus_wide", &forms!(tap_bus_wide, Wide));
    check("tap_bus_narrow", &forms!(tap_bus_narrow, Narrow));
}

#[test]
fn the_benched_one_line_plant_is_bit_exact() {
    check("one_line_wide", &forms!(one_line_wide, Wide));
}

#[test]
fn nodes_no_event_switches_are_fixed_and_say_so() {
    let mut s = reactive_wide::specialised::Plant::new();
    // Junction 0 (the source node) is constants; junction 2 is a series inductor.
    assert_eq!(s.set_shunt(0, Shunt::Short), Err(ConfigError::FixedNode { junction: 0 }));
    assert_eq!(s.set_broken(0, true), Err(ConfigError::FixedNode { junction: 0 }));
    assert_eq!(s.set_shunt(2, Shunt::Short), Err(ConfigError::NotANode { junction: 2 }));
    assert_eq!(s.set_shunt(99, Shunt::Short), Err(ConfigError::NotANode { junction: 99 }));
    // A refused shunt is refused as the generic solver refuses it, and changes nothing.
    let mut g =
        Solver::<Wide, { reactive_wide::PORTS }, { reactive_wide::JUNCTIONS }, { reactive_wide::MEMORY }>::new();
    g.load(&reactive_wide::NETWORK).unwrap();
    let zero = Shunt::Resistor { milliohm: 0 };
    assert_eq!(PlantStep::set_shunt(&mut g, 1, zero), s.set_shunt(1, zero));
    assert!(s.set_shunt(1, zero).is_err());
    let _ = Path::new(".");
}

#[test]
fn the_checked_runs_cross_the_ring_windows_wrap() {
    // The specialised rings live in a window of SPAN waves whose position wraps every SPAN
    // samples, the waves in flight at the wrap read from their second copy one span lower
    // (`emit/specialised/layout.rs`): the bit-exact runs above must cross that wrap, more
    // than once, to prove the layout.
    for (name, span) in [
        ("every_kind_wide", every_kind_wide::specialised::SPAN),
        ("every_kind_narrow", every_kind_narrow::specialised::SPAN),
        ("rig_break_wide", rig_break_wide::specialised::SPAN),
        ("reactive_narrow", reactive_narrow::specialised::SPAN),
        ("pi_section_wide", pi_section_wide::specialised::SPAN),
        ("zc_ladder_narrow", zc_ladder_narrow::specialised::SPAN),
    ] {
        let (_, events) = fresh(name);
        let samples = events.iter().map(|e| e.0).max().unwrap_or(0) + 600;
        assert!(samples > 2 * span, "{name}: {samples} samples cross the window's wrap less than twice (span {span})");
    }
}

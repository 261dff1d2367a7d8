//! The old-style generic step that `benches/forms.rs` measures today's forms against
//! (`benches/baseline/old_generic/`, frozen from commit c696084) is the real step, not a toy:
//!
//! * **narrow, bit for bit**: today's narrow node keeps the old exact node division and
//!   per-port truncation, and the series, element-adaptor, short, open-end and rig-port rules
//!   are the old ones, so on a lossless plant the two steps give the same integers wherever
//!   today's additions do not act (every output, and every probe except one on the rig
//!   port's line end: that read-out was corrected since, today it is the pin voltage
//!   v = a + b[n − latency], the old one read a + b[n]). Today's additions are the loss
//!   sections' error feedback (`Profile::loss_section`; the plants are compared lossless)
//!   and the bits below the I/O code (`Profile::IO_SHIFT`; the check runs at io_shift 0,
//!   `at_code_level`). The check drives a burst shorter than the travel time from the rig
//!   port to the first node, then zero input, and compares every output and probe sample of
//!   the ring-down;
//! * **wide, within a bound**: today's wide node runs without the correction steps (a node
//!   voltage strictly between 0 and the exact one, `Profile::node_scatter`) and the loss
//!   sections feed their residue back, so the waves differ by a few LSB, and with 12 fraction
//!   bits below an I/O code the outputs stay within [`WIDE_CODES`] of each other under the
//!   bench's own stimulus, losses included;
//! * the converter refuses, with the index, what the old core could not represent.
//!
//! A perturbed plant (one shunt 1 % off) must fail the same comparison: the check can fail.

#[path = "../benches/baseline/old_generic/mod.rs"]
mod old_generic;

macro_rules! generated {
    ($($m:ident),*) => {$(
        #[allow(dead_code)]
        mod $m {
            include!(concat!("generated/specialised/", stringify!($m), ".rs"));
        }
    )*};
}
generated!(rig_break_wide, rig_break_narrow, one_line_wide, tap_bus_wide, tap_bus_narrow);

use old_generic::convert::Unsupported;
use tidewire::core::{
    Allpass, Drive, Element, ElementKind, Junction, Line, LineLoss, Narrow, Network, Probe, ProbeKind, Shunt, Side,
    Solver, Wide, ZcNetwork,
};

/// Samples compared after the burst: several round trips of the longest plant (tap bus).
const RUN: usize = 4000;
/// Largest output-code difference allowed between the old and today's wide step (see the
/// module docs): measured 0 (rig_break) and 1 (one_line, tap_bus with its losses) by
/// `cargo test --test old_step -- --nocapture`, plus one code of margin.
const WIDE_CODES: i32 = 2;

/// Outputs and probe read-outs of one run: (output, probes) per sample.
type Trace = Vec<(i16, Vec<i32>)>;

/// Both steps of one plant behind closures, so one comparison serves every plant and profile;
/// each returns the output and the probes that are compared.
struct Pair<'a> {
    old: Box<dyn FnMut(i16) -> (i16, Vec<i32>) + 'a>,
    now: Box<dyn FnMut(i16) -> (i16, Vec<i32>) + 'a>,
}

/// Whether probe `k` of `net` reads the rig port's line end (a read-out that changed, see the
/// module docs).
fn at_rig_port(net: &Network<'_>, k: usize) -> bool {
    let (Drive::Rig { junction, .. }, Some(p)) = (net.drive, net.probes.get(k)) else {
        return false;
    };
    net.lines.get(usize::from(p.line)).is_some_and(|l| if p.side == Side::A { l.a } else { l.b } == junction)
}

fn run(step: &mut dyn FnMut(i16) -> (i16, Vec<i32>), input: &[i16]) -> Trace {
    input.iter().map(|x| step(*x)).collect()
}

/// The old and today's generic solver of generated plant `$m` in profile `$p` (`$old` the
/// baseline's marker), today's network taken through `$net` (the plant's own, or a variant).
macro_rules! pair {
    ($m:ident, $p:ty, $old:ty, $net:expr) => {{
        let net: &Network<'_> = $net;
        let converted = old_generic::from_core(net).expect("the old core represents this plant");
        let mut o =
            Box::new(
                old_generic::Solver::<$old, { $m::PORTS }, { $m::JUNCTIONS }, { $m::MEMORY }, { $m::LOSS_ENDS }>::new(),
            );
        o.load(&converted.view()).expect("the old core loads the converted plant");
        let mut g = Box::new(Solver::<$p, { $m::PORTS }, { $m::JUNCTIONS }, { $m::MEMORY }, { $m::LOSS_ENDS }>::new());
        g.load(net).expect("today's core loads the plant");
        let compared: Vec<usize> = (0..net.probes.len()).filter(|k| !at_rig_port(net, *k)).collect();
        let kept = compared.clone();
        Pair {
            old: Box::new(move |x| {
                let y = o.step(x);
                (y, compared.iter().map(|k| o.probe_raw(*k)).collect())
            }),
            now: Box::new(move |x| {
                let y = g.step(x);
                (y, kept.iter().map(|k| g.probe_raw(*k)).collect())
            }),
        }
    }};
}

/// A burst of `len` xorshift codes (full range), then `RUN` samples of zero input.
fn burst(len: usize) -> Vec<i16> {
    let mut x: u32 = 0x9e37_79b9;
    (0..len + RUN)
        .map(|n| {
            x ^= x << 13;
            x ^= x >> 17;
            x ^= x << 5;
            if n < len {
                (x >> 16) as i16
            } else {
                0
            }
        })
        .collect()
}

/// The bench's stimulus (`benches/forms.rs`): ±8000 codes, 256-sample period.
fn square(len: usize) -> Vec<i16> {
    (0..len).map(|n| if (n / 128) % 2 == 0 { 8000 } else { -8000 }).collect()
}

/// The first sample where the two traces differ, if any.
fn first_difference(a: &Trace, b: &Trace) -> Option<usize> {
    a.iter().zip(b.iter()).position(|(x, y)| x != y)
}

/// Samples after the burst where the output or some probe is not zero.
fn live_samples(t: &Trace, from: usize) -> usize {
    t.iter().skip(from).filter(|(y, p)| *y != 0 || p.iter().any(|v| *v != 0)).count()
}

/// Compared probes that stay zero for the whole ring-down (waves never reached them).
fn silent_probes(t: &Trace, from: usize) -> Vec<usize> {
    let n = t.first().map_or(0, |(_, p)| p.len());
    (0..n).filter(|k| t.iter().skip(from).all(|(_, p)| p[*k] == 0)).collect()
}

/// `silent`: the compared probes that read zero throughout (a voltage across a short).
fn check_bit_equal(name: &str, mut p: Pair<'_>, burst_len: usize, silent: &[usize]) {
    let input = burst(burst_len);
    let (old, now) = (run(&mut *p.old, &input), run(&mut *p.now, &input));
    assert_eq!(first_difference(&old, &now), None, "{name}: the old and today's narrow step differ");
    // Not a trivial run: the ring-down lasts, and it reaches every probe compared.
    let live = live_samples(&now, burst_len);
    println!("{name}: {live} samples of the ring-down carry waves, all equal");
    assert!(live >= 100, "{name}: only {live} samples of the ring-down carry waves");
    assert_eq!(silent_probes(&now, burst_len), silent, "{name}: probes the waves never reached");
}

/// `net` without its loss filters (a lossless plant: the old and today's rules agree).
/// `net` with no bits below the I/O code (io_shift 0), the only narrow scale the old core
/// knew; both steps then run the same waves from the same codes.
fn at_code_level<'a>(net: &Network<'a>) -> Network<'a> {
    Network { io_shift: 0, ..*net }
}

fn lossless<'a>(net: &Network<'a>) -> Network<'a> {
    Network { losses: &[], ..*net }
}

/// A source-driven ladder of our own (the generated plants above are driven by a rig port
/// or are wide only): a source node (200 Ω, no shunt), a series resistor, an open 3-port
/// node with a capacitor behind 10 Ω, a resistive and a shorted end. The first node after
/// the source is 50 samples away (30 + 20).
mod source_ladder {
    use super::*;
    pub const PORTS: usize = 9;
    pub const JUNCTIONS: usize = 5;
    pub const MEMORY: usize = 2 * (30 + 20 + 25 + 15) + 1;
    pub const LOSS_ENDS: usize = 0;
    pub const LINES: [Line; 4] = [
        Line { z_milliohm: 50_000, delay: 30, a: 0, b: 1 },
        Line { z_milliohm: 50_000, delay: 20, a: 1, b: 2 },
        Line { z_milliohm: 100_000, delay: 25, a: 2, b: 3 },
        Line { z_milliohm: 75_000, delay: 15, a: 2, b: 4 },
    ];
    pub const JUNCTION_TABLE: [Junction; 5] = [
        Junction::Node { shunt: Shunt::Open },
        Junction::Series { milliohm: 1_000 },
        Junction::Node { shunt: Shunt::Open },
        Junction::Node { shunt: Shunt::Resistor { milliohm: 330_000 } },
        Junction::Node { shunt: Shunt::Short },
    ];
    pub const ELEMENTS: [Element; 1] =
        [Element { junction: 2, kind: ElementKind::Capacitor, port_milliohm: 30_000, series_milliohm: 10_000 }];
    pub const PROBES: [Probe; 4] = [
        Probe { kind: ProbeKind::Voltage, line: 0, side: Side::A },
        Probe { kind: ProbeKind::Voltage, line: 1, side: Side::B },
        Probe { kind: ProbeKind::Current, line: 2, side: Side::B },
        Probe { kind: ProbeKind::Current, line: 3, side: Side::B },
    ];
    pub fn network() -> Network<'static> {
        Network {
            lines: &LINES,
            junctions: &JUNCTION_TABLE,
            elements: &ELEMENTS,
            losses: &[],
            drive: Drive::Source { junction: 0, milliohm: 200_000 },
            probes: &PROBES,
            io_shift: 0,
            volts_per_code: 1.0 / 4096.0,
        }
    }
}

#[test]
fn narrow_old_step_equals_todays_on_a_ring_down() {
    // Rig port, series resistors, open, resistive and 2-port nodes; the first node is 30
    // samples from the rig port (8 + 15 + 7), the burst 20.
    check_bit_equal(
        "rig_break",
        pair!(rig_break_narrow, Narrow, old_generic::Narrow, &at_code_level(&rig_break_narrow::NETWORK)),
        20,
        &[],
    );
    // Five taps, a short, capacitor elements (one behind 150 Ω), 34 ports; the first node is
    // 54 samples from the rig port (14 + 40), the burst 40. Compared probe 3 is the voltage
    // across the short.
    let bus = at_code_level(&lossless(&tap_bus_narrow::NETWORK));
    check_bit_equal("tap_bus (lossless)", pair!(tap_bus_narrow, Narrow, old_generic::Narrow, &bus), 40, &[3]);
    // A source node, an element behind a resistor, a current probe into a short.
    let ladder = source_ladder::network();
    check_bit_equal("source ladder", pair!(source_ladder, Narrow, old_generic::Narrow, &ladder), 40, &[]);
}

#[test]
fn the_comparison_fails_on_a_perturbed_plant() {
    // rig_break's far load 120 Ω → 121.2 Ω in the plant the old step runs only.
    let mut junctions = rig_break_narrow::NETWORK.junctions.to_vec();
    assert_eq!(junctions[2], Junction::Node { shunt: Shunt::Resistor { milliohm: 120_000 } });
    junctions[2] = Junction::Node { shunt: Shunt::Resistor { milliohm: 121_200 } };
    let perturbed = Network { junctions: &junctions, ..at_code_level(&rig_break_narrow::NETWORK) };
    let mut p = pair!(rig_break_narrow, Narrow, old_generic::Narrow, &perturbed);
    let mut q = pair!(rig_break_narrow, Narrow, old_generic::Narrow, &at_code_level(&rig_break_narrow::NETWORK));
    let input = burst(20);
    let (old_perturbed, now) = (run(&mut *p.old, &input), run(&mut *q.now, &input));
    assert!(first_difference(&old_perturbed, &now).is_some(), "a 1 % change of a load went unseen");
}

/// Largest |output code difference| between the old and today's step under `input`.
fn max_code_difference(mut p: Pair<'_>, input: &[i16]) -> i32 {
    let (old, now) = (run(&mut *p.old, input), run(&mut *p.now, input));
    old.iter().zip(now.iter()).map(|(a, b)| (i32::from(a.0) - i32::from(b.0)).abs()).max().unwrap_or(0)
}

#[test]
fn wide_old_step_stays_within_a_few_codes_of_todays() {
    let input = square(RUN);
    for (name, d) in [
        (
            "rig_break",
            max_code_difference(pair!(rig_break_wide, Wide, old_generic::Wide, &rig_break_wide::NETWORK), &input),
        ),
        (
            "one_line",
            max_code_difference(pair!(one_line_wide, Wide, old_generic::Wide, &one_line_wide::NETWORK), &input),
        ),
        ("tap_bus", max_code_difference(pair!(tap_bus_wide, Wide, old_generic::Wide, &tap_bus_wide::NETWORK), &input)),
    ] {
        println!("{name}: largest output difference {d} codes");
        assert!(d <= WIDE_CODES, "{name}: old and today's wide step differ by {d} codes (bound {WIDE_CODES})");
    }
}

#[test]
fn what_the_old_core_lacked_is_refused_with_its_index() {
    let lines = [Line { z_milliohm: 50_000, delay: 4, a: 0, b: 1 }, Line { z_milliohm: 50_000, delay: 4, a: 1, b: 2 }];
    let open = Junction::Node { shunt: Shunt::Open };
    let base = Network {
        lines: &lines,
        junctions: &[open, Junction::Series { milliohm: 1_000 }, open],
        elements: &[],
        losses: &[],
        drive: Drive::Source { junction: 0, milliohm: 50_000 },
        probes: &[Probe { kind: ProbeKind::Voltage, line: 1, side: Side::B }],
        io_shift: 0,
        volts_per_code: 1.0,
    };
    assert!(old_generic::from_core(&base).is_ok());
    let choke = [open, Junction::SeriesInductor { port_milliohm: 9_000, milliohm: 0 }, open];
    assert_eq!(
        old_generic::from_core(&Network { junctions: &choke, ..base }).err(),
        Some(Unsupported::Junction { index: 1 })
    );
    let branch = [open, open, open, Junction::Branch { a: 0, b: 2, port_milliohm: 0, milliohm: 100 }];
    assert_eq!(
        old_generic::from_core(&Network { junctions: &branch, ..base }).err(),
        Some(Unsupported::Junction { index: 3 })
    );
    let plain =
        LineLoss { line: 0, sections: 1, poles: [1 << 29, 0, 0, 0, 0, 0], zeros: [0; 6], allpass: None, zc: None };
    let fraction = LineLoss { line: 1, sections: 0, allpass: Some(Allpass { a: 1 << 27, c: 1 << 29 }), ..plain };
    let zc = LineLoss { zc: Some(ZcNetwork { sections: 1, k: [1 << 29, 0, 0, 0], rho: [1 << 20, 0, 0, 0] }), ..plain };
    assert!(old_generic::from_core(&Network { losses: &[plain], ..base }).is_ok());
    assert_eq!(
        old_generic::from_core(&Network { losses: &[plain, fraction], ..base }).err(),
        Some(Unsupported::Loss { index: 1 })
    );
    assert_eq!(old_generic::from_core(&Network { losses: &[zc], ..base }).err(), Some(Unsupported::Loss { index: 0 }));
}

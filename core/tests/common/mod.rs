//! Test support: random passive networks; the f64 twin is the shared `tidewire_twin`.
#![allow(dead_code)]

use proptest::prelude::*;
use tidewire_core::{Drive, Element, Junction, Line, LineLoss, Probe, ProbeKind, Shunt, Side};

/// An owned network for tests: the core's one owned network over `Vec`s (its `network()` is
/// the view a solver loads).
pub type Owned = tidewire_core::OwnedNetwork<Vec<Line>, Vec<Junction>, Vec<Element>, Vec<LineLoss>, Vec<Probe>>;

/// Volts per I/O code of every test network (host convenience only; the core never reads it).
pub const VOLTS_PER_CODE: f32 = 1e-3;

/// Storage the network's rings take, in waves: both directions of every line.
pub fn delay_sum(net: &Owned) -> u32 {
    net.lines.iter().map(|l| 2 * l.delay).sum()
}

/// What terminations the generator may use at nodes.
#[derive(Debug, Clone, Copy)]
pub enum Loads {
    /// Trees whose nodes all have a resistor to return (every line also gets a series
    /// resistor). Such a plant has no lossless mode in exact arithmetic: in a mode that
    /// dissipates nothing, a one-line leaf with a resistor must see b = 0, so its line
    /// carries nothing; a node (or series junction) whose other lines carry nothing can only
    /// send out zero if its last line brings zero too, and peeling the tree from its leaves
    /// leaves no line carrying anything. (Loops do not have this property with lumped
    /// resistance: a ring of 74 + 150 samples joined at one node with a resistor at the
    /// join of the two lines has an undamped mode with a current node at the resistor and a
    /// voltage node at the junction, because 74/150 = 37/75 is a ratio of odd numbers.)
    Lossy,
    /// As `Lossy`, plus up to three extra lines that close loops. A loop can keep an undamped
    /// mode (see `Lossy`), so a test using these checks what holds with or without one.
    LossyLoops,
    /// Opens, shorts and resistors anywhere, series resistors on some lines: a plant that
    /// may ring for ever but must never grow.
    Any,
}

impl Loads {
    /// Every node has a resistor and every line series resistance.
    fn lossy(self) -> bool {
        matches!(self, Loads::Lossy | Loads::LossyLoops)
    }
}

fn shunt_strategy(loads: Loads) -> BoxedStrategy<Shunt> {
    match loads {
        Loads::Lossy | Loads::LossyLoops => {
            (10_000u32..1_000_000).prop_map(|m| Shunt::Resistor { milliohm: m }).boxed()
        }
        Loads::Any => prop_oneof![
            Just(Shunt::Open),
            Just(Shunt::Short),
            (10_000u32..1_000_000).prop_map(|m| Shunt::Resistor { milliohm: m }),
        ]
        .boxed(),
    }
}

/// Random networks: a random tree over `nodes` nodes plus extra edges (loops); each edge is
/// one line, or two lines joined by a series resistor (equal or unequal impedances).
/// Impedances 10 Ω – 1 kΩ, delays 1–`max_delay` samples; a source at node 0.
pub fn network(loads: Loads, max_delay: u32, io_shift: u8) -> impl Strategy<Value = Owned> {
    let extra_max = if matches!(loads, Loads::Lossy) { 1 } else { 4 };
    let lossy = loads.lossy();
    (2usize..7, 0usize..extra_max).prop_flat_map(move |(nodes, extra)| {
        let edges = nodes - 1 + extra;
        (
            proptest::collection::vec(shunt_strategy(loads), nodes),
            proptest::collection::vec(
                (
                    any::<prop::sample::Index>(),
                    10_000u32..1_000_000,
                    1u32..=max_delay,
                    1u32..=max_delay,
                    prop_oneof![Just(0u8), Just(1), Just(2)],
                    1_000u32..200_000,
                    10_000u32..1_000_000,
                ),
                edges,
            ),
            10_000u32..1_000_000,
            proptest::collection::vec((any::<prop::sample::Index>(), any::<bool>(), any::<bool>()), 1..4),
            proptest::collection::vec(
                (any::<prop::sample::Index>(), 2_000u32..2_000_000, 0u32..200_000, any::<bool>()),
                0..3,
            ),
        )
            .prop_map(move |(shunts, edge_specs, rs, probe_specs, element_specs)| {
                let mut junctions: Vec<Junction> = shunts.iter().map(|s| Junction::Node { shunt: *s }).collect();
                let mut lines = Vec::new();
                for (k, (pick, z, d1, d2, kind, r, z2)) in edge_specs.into_iter().enumerate() {
                    // Tree edges first (node k+1 to an earlier node), then extra edges.
                    let (a, b) = if k + 1 < nodes {
                        (pick.index(k + 1) as u16, (k + 1) as u16)
                    } else {
                        (pick.index(nodes) as u16, ((pick.index(nodes) + 1 + k) % nodes) as u16)
                    };
                    // Every line of a lossy plant carries series resistance.
                    let kind = if lossy && kind == 0 { 1 } else { kind };
                    match kind {
                        0 => lines.push(Line { z_milliohm: z, delay: d1, a, b }),
                        1 => {
                            let s = junctions.len() as u16;
                            junctions.push(Junction::Series { milliohm: r });
                            lines.push(Line { z_milliohm: z, delay: d1, a, b: s });
                            lines.push(Line { z_milliohm: z, delay: d2, a: s, b });
                        }
                        _ => {
                            // A series resistor between different impedances, built as the
                            // host does: one sample of the first line after the resistor,
                            // then an impedance step at an open node.
                            let s = junctions.len() as u16;
                            junctions.push(Junction::Series { milliohm: r });
                            junctions.push(Junction::Node { shunt: Shunt::Open });
                            lines.push(Line { z_milliohm: z, delay: d1, a, b: s });
                            lines.push(Line { z_milliohm: z, delay: 1, a: s, b: s + 1 });
                            lines.push(Line { z_milliohm: z2, delay: d2, a: s + 1, b });
                        }
                    }
                }
                let probes = probe_specs
                    .into_iter()
                    .map(|(i, current, side_b)| Probe {
                        kind: if current { ProbeKind::Current } else { ProbeKind::Voltage },
                        line: i.index(lines.len()) as u16,
                        side: if side_b { Side::B } else { Side::A },
                    })
                    .collect();
                // Reactive one-ports (capacitors, inductors; some behind a series resistor)
                // at random plant nodes.
                let mut elements: Vec<Element> = element_specs
                    .into_iter()
                    .map(|(i, port, series, inductor)| Element {
                        junction: i.index(nodes) as u16,
                        kind: if inductor {
                            tidewire_core::ElementKind::Inductor
                        } else {
                            tidewire_core::ElementKind::Capacitor
                        },
                        port_milliohm: port,
                        // In a lossy plant every reactance sits behind a resistor: a bare
                        // bilinear capacitor is a short at the Nyquist frequency, which would
                        // give the plant a lossless mode there.
                        series_milliohm: if lossy { series.max(1_000) } else { series },
                    })
                    .collect();
                elements.sort_by_key(|e| e.junction);
                Owned {
                    lines,
                    junctions,
                    elements,
                    losses: Vec::new(),
                    drive: Drive::Source { junction: 0, milliohm: rs },
                    probes,
                    io_shift,
                    volts_per_code: VOLTS_PER_CODE,
                }
            })
    })
}

/// The one f64 twin of the wave model (shared with the host tools): nominal, or with the
/// core's quantized coefficients, the reference for arithmetic error.
// Not every test binary that includes this module runs the twin.
#[allow(unused_imports)]
pub use tidewire_twin::{Quantized, Twin};

/// The twin's quantized coefficients of a loaded solver: its line weights and weight
/// exponent, and the profile's series and allpass fractions and weight total.
pub fn quantized<P: tidewire_core::Profile, const A: usize, const B: usize, const C: usize, const D: usize>(
    s: &tidewire_core::Solver<P, A, B, C, D>,
) -> Quantized {
    Quantized {
        g: (0..A / 2).map(|l| u64::from(s.line_weight(l))).collect(),
        exponent: s.weight_exponent(),
        series_frac: P::SERIES_FRAC,
        total_max: P::TOTAL_MAX,
        allpass_frac: P::LOSS_FRAC,
    }
}

/// Random loss filters (1–3 attenuating sections each) on some of the lines of `net`.
pub fn with_losses(net: Owned) -> impl Strategy<Value = Owned> {
    let n = net.lines.len();
    proptest::collection::vec(
        (any::<prop::sample::Index>(), proptest::collection::vec((0.05f64..0.995, 0.0f64..1.0), 1..=3)),
        0..=n.min(4),
    )
    .prop_map(move |specs| {
        let mut out = net.clone();
        for (i, sections) in specs {
            let line = i.index(n) as u16;
            if out.losses.iter().any(|l| l.line == line) {
                continue;
            }
            let mut l = LineLoss {
                line,
                sections: sections.len() as u8,
                poles: [0; 6],
                zeros: [0; 6],
                allpass: None,
                zc: None,
            };
            for (k, (a, t)) in sections.iter().enumerate() {
                // zero anywhere in (−0.9, a): the section only attenuates
                let b = a - (a + 0.9) * t.clamp(0.01, 0.99);
                l.poles[k] = (a * (1u64 << 30) as f64) as u32;
                l.zeros[k] = (b * (1u64 << 30) as f64) as i32;
            }
            out.losses.push(l);
        }
        out
    })
}

/// Samples a zero-input first-order section with pole `a` needs to reach exactly zero from
/// |y| <= 2^32 with truncation toward zero: |y| shrinks by the factor a while a·|y| < |y| − 1,
/// then by at least one LSB per sample, so ln(2^32)/(1 − a) + 1/(1 − a) samples suffice.
pub fn filter_decay(net: &Owned) -> usize {
    net.losses
        .iter()
        .flat_map(|l| l.poles.iter().take(l.sections as usize))
        .map(|p| {
            let a = *p as f64 / (1u64 << 30) as f64;
            ((32.0 * std::f64::consts::LN_2 + 1.0) / (1.0 - a)).ceil() as usize
        })
        .sum()
}

/// The Q30 lattice coefficients of a first-order Thiran allpass of fraction `d`
/// (a = (1 − d)/(1 + d), c = sqrt(1 − a²), Laakso et al. 1996), truncated toward zero with
/// a² + c² <= 2^60 made sure in integers.
pub fn allpass_for(d: f64) -> tidewire_core::Allpass {
    let a = (1.0 - d) / (1.0 + d);
    let a30 = (a * (1u64 << 30) as f64).trunc() as i32;
    let mut c30 = ((1.0 - a * a).sqrt() * (1u64 << 30) as f64).floor() as u32;
    while (a30 as i128).pow(2) + (c30 as i128).pow(2) > 1i128 << 60 {
        c30 -= 1;
    }
    tidewire_core::Allpass { a: a30, c: c30 }
}

/// Random fractional delays (d in [0.5, 1.5)) on some of the lines of `net`, added to a
/// line's loss filter or as a filter of its own.
pub fn with_fractions(net: Owned) -> impl Strategy<Value = Owned> {
    let n = net.lines.len();
    proptest::collection::vec((any::<prop::sample::Index>(), 0.5f64..1.5), 0..=n.min(6)).prop_map(move |specs| {
        let mut out = net.clone();
        for (i, d) in specs {
            let line = i.index(n) as u16;
            let ap = Some(allpass_for(d));
            match out.losses.iter_mut().find(|l| l.line == line) {
                Some(l) => l.allpass = ap,
                None => {
                    out.losses.push(LineLoss { line, sections: 0, poles: [0; 6], zeros: [0; 6], allpass: ap, zc: None })
                }
            }
        }
        out
    })
}

/// Random series branches between nodes of `net` (up to two, each node in at most one):
/// R_L = u·(ρ_a + ρ_b) and R = v·(ρ_a + ρ_b), u in [0, 4), v in [0, 2), ρ the node's own
/// impedance (its line ends in parallel): the range a lumped short segment takes
/// (R_L = 2L/T <= 3·Z0 below 1.5 samples). Shorts and nodes already linked are skipped.
pub fn with_branches(net: Owned) -> impl Strategy<Value = Owned> {
    let nodes = net.junctions.len();
    proptest::collection::vec(
        (any::<prop::sample::Index>(), any::<prop::sample::Index>(), 0.0f64..4.0, 0.0f64..2.0),
        1..=2,
    )
    .prop_map(move |specs| {
        let mut out = net.clone();
        let mut used: Vec<usize> = Vec::new();
        let rho = |o: &Owned, j: usize| {
            let g: f64 = o
                .lines
                .iter()
                .map(|l| (usize::from(l.a == j as u16) + usize::from(l.b == j as u16)) as f64 / l.z_milliohm as f64)
                .sum();
            1.0 / g
        };
        let plain: Vec<usize> = (0..nodes)
            .filter(|j| matches!(out.junctions[*j], Junction::Node { shunt } if shunt != Shunt::Short))
            .collect();
        for (ia, ib, u, v) in specs {
            if plain.len() < 2 {
                break;
            }
            // Two different plain nodes.
            let ka = ia.index(plain.len());
            let (a, b) = (plain[ka], plain[(ka + 1 + ib.index(plain.len() - 1)) % plain.len()]);
            if used.contains(&a) || used.contains(&b) {
                continue;
            }
            let r = rho(&out, a) + rho(&out, b);
            used.extend([a, b]);
            out.junctions.push(Junction::Branch {
                a: a as u16,
                b: b as u16,
                port_milliohm: (u * r) as u32,
                milliohm: (v * r) as u32,
            });
        }
        out
    })
}

/// Random Zc(s) networks (1–4 sections, 0.02 < k < 0.98) on every line of `net` that has
/// loss sections, sized so that the line's loss pays for the network's phase near DC.
///
/// Near DC a loss filter of DC gain 1 attenuates by ε ≈ C·ω² (per section
/// C = (a − g·gb)/(2(1 − a)²), from |H|² = ((g − gb)² + 2g·gb(1 − cos ω))/((1 − a)² +
/// 2a(1 − cos ω)) with g − gb = 1 − a), the line's phase is φ ≈ ω·τ (τ = N + the sections'
/// group delay a/(1 − a) − b/(1 − b)), and the network's phase is arg Zc ≈ −d·ω with
/// d = Σ k·ρ/(2(1 − k)²)/Zc(1). The even admittance then needs ε/φ >= |arg Zc|, i.e.
/// C/τ >= d (the condition α >= ω·τ·tan(−arg Zc) of `docs/zc-model.md`). Σ ρ is drawn as
/// u·C/(τ·d₁) (d₁ the slope per unit Σ ρ), u in [0.05, 1.2), capped at 0.5: a line whose
/// Zc rises by what its attenuation pays for, and some that do not. Not every draw is
/// passive at every frequency: tests keep the plants the loader accepts ([`zc_accepted`])
/// and count them.
pub fn with_zc(net: Owned) -> impl Strategy<Value = Owned> {
    let n = net.losses.len();
    proptest::collection::vec((proptest::collection::vec((0.02f64..0.98, 0.05f64..1.0), 1..=4), 0.05f64..1.2), n)
        .prop_map(move |specs| {
            let mut out = net.clone();
            let q30 = (1u64 << 30) as f64;
            for (l, (sections, u)) in out.losses.iter_mut().zip(specs) {
                if l.sections == 0 {
                    continue;
                }
                let delay = out.lines[l.line as usize].delay as f64;
                let (mut c, mut tau) = (0.0, delay);
                for (p, z) in l.poles.iter().zip(l.zeros.iter()).take(l.sections as usize) {
                    let (a, b) = (*p as f64 / q30, *z as f64 / q30);
                    let g = (1.0 - a) / (1.0 - b);
                    c += (a - g * g * b) / (2.0 * (1.0 - a) * (1.0 - a));
                    tau += a / (1.0 - a) - b / (1.0 - b);
                }
                let share: f64 = sections.iter().map(|(_, w)| w).sum();
                let d1: f64 = sections.iter().map(|(k, w)| k * (w / share) / (2.0 * (1.0 - k) * (1.0 - k))).sum();
                let total = (u * c / (tau * d1)).clamp(1e-4, 0.5);
                let mut zc = tidewire_core::ZcNetwork { sections: sections.len() as u8, k: [0; 4], rho: [0; 4] };
                for (i, (k, w)) in sections.iter().enumerate() {
                    zc.k[i] = (k * q30) as u32;
                    zc.rho[i] = ((total * w / share) * q30).max(1.0) as u32;
                }
                l.zc = Some(zc);
            }
            out
        })
}

/// Whether both profiles' loaders accept `net` (with io_shift 0 for the narrow one).
pub fn zc_accepted(net: &Owned) -> bool {
    let mut n16 = net.clone();
    n16.io_shift = 0;
    tidewire_core::configure::check::<tidewire_core::Wide>(&net.network()).is_ok()
        && tidewire_core::configure::check::<tidewire_core::Narrow>(&n16.network()).is_ok()
}

//! The loader on hostile networks behind a valid image header and CRC: extreme impedances,
//! delays, indices, coefficients and capacities. Nothing may panic (these tests run with
//! overflow checks on), and every network the loader accepts must stay within the passive
//! (energy) bound over a long run.

use proptest::prelude::*;
use tidewire_core::image::header;
use tidewire_core::{
    Allpass, BuildError, Drive, Element, ElementKind, Junction, Line, LineLoss, Narrow, Network, Probe, ProbeKind,
    Profile, Shunt, Side, Solver, Wide, ZcNetwork, MAX_LOSS_SECTIONS,
};

type WideSolver = Solver<Wide, 24, 8, 4096, 8>;
type NarrowSolver = Solver<Narrow, 24, 8, 4096, 8>;

mod common;

/// A hostile network is any owned network (the core's one owned network, as the tests hold it).
use common::{Owned as Hostile, VOLTS_PER_CODE};

/// Bring every index into its table (most generated cases; the rest keep wild indices).
fn fold_indices(h: &mut Hostile) {
    let (nl, nj) = (h.lines.len() as u16, h.junctions.len() as u16);
    for (k, l) in h.lines.iter_mut().enumerate() {
        // The first lines visit every junction, so few nodes dangle.
        let a = if k < nj as usize { k as u16 } else { l.a };
        (l.a, l.b) = (a % nj, l.b % nj);
    }
    for e in &mut h.elements {
        e.junction %= nj;
    }
    for j in &mut h.junctions {
        if let Junction::Branch { a, b, .. } = j {
            (*a, *b) = (*a % nj, *b % nj);
        }
    }
    for l in &mut h.losses {
        l.line %= nl;
    }
    for p in &mut h.probes {
        p.line %= nl;
    }
    match &mut h.drive {
        Drive::Source { junction, .. } | Drive::Rig { junction, .. } => *junction %= nj,
        _ => {}
    }
}

/// The image bytes: a valid header and CRC around the postcard body.
fn image(h: &Hostile) -> Vec<u8> {
    let mut buf = vec![0u8; 1 << 16];
    let body = postcard::to_slice(&h.network(), &mut buf).expect("body fits").to_vec();
    let mut out = header(&body).to_vec();
    out.extend_from_slice(&body);
    out
}

fn resistance() -> impl Strategy<Value = u32> {
    prop_oneof![1 => Just(0u32), 2 => 1u32..16, 24 => 10_000u32..1_000_000, 2 => any::<u32>(), 1 => Just(u32::MAX)]
}

fn delay() -> impl Strategy<Value = u32> {
    prop_oneof![1 => Just(0u32), 40 => 1u32..40, 1 => any::<u32>(), 1 => Just(u32::MAX), 1 => Just(u32::MAX - 1)]
}

fn index(n: u16) -> impl Strategy<Value = u16> {
    prop_oneof![30 => 0..n, 1 => any::<u16>()]
}

fn junction() -> impl Strategy<Value = Junction> {
    let shunt = prop_oneof![
        Just(Shunt::Open),
        Just(Shunt::Short),
        resistance().prop_map(|milliohm| Shunt::Resistor { milliohm })
    ];
    prop_oneof![
        10 => shunt.prop_map(|shunt| Junction::Node { shunt }),
        1 => resistance().prop_map(|milliohm| Junction::Series { milliohm }),
        1 => (resistance(), resistance())
            .prop_map(|(port_milliohm, milliohm)| Junction::SeriesInductor { port_milliohm, milliohm }),
        // Series branches between nodes: any indices (folded into the table by
        // `fold_indices` in most cases), any resistances, 0 included.
        2 => (any::<u16>(), any::<u16>(), prop_oneof![Just(0u32), resistance()], prop_oneof![Just(0u32), resistance()])
            .prop_map(|(a, b, port_milliohm, milliohm)| Junction::Branch { a, b, port_milliohm, milliohm }),
    ]
}

fn loss() -> impl Strategy<Value = LineLoss> {
    let section = prop_oneof![
        1 => (1u32..(1 << 30), any::<i32>()).prop_map(|(p, z)| (p, z)),
        6 => (1u32..(1 << 30), 0.0f64..1.0).prop_map(|(p, f)| (p, (p as f64 * f) as i32 - (1 << 20))),
        1 => (any::<u32>(), any::<i32>()),
    ];
    // Fractional-delay allpasses: none, a lattice near the passive limit (c from the norm,
    // off by a few LSB either way), or any integers at all.
    let allpass = prop_oneof![
        3 => Just(None),
        3 => (-(1i32 << 29)..=(1 << 29), -3i64..=3).prop_map(|(a, off)| {
            let c = (((1u128 << 60) - (a as i128 * a as i128) as u128) as f64).sqrt() as i64 + off;
            Some(Allpass { a, c: c.clamp(0, u32::MAX as i64) as u32 })
        }),
        1 => (any::<i32>(), any::<u32>()).prop_map(|(a, c)| Some(Allpass { a, c })),
    ];
    // Zc(s) networks: none, one in range (small ρ, any k), or any integers at all.
    let zc = prop_oneof![
        4 => Just(None),
        2 => (1u8..=4, any::<[u32; 4]>(), any::<[u32; 4]>()).prop_map(|(sections, k, r)| {
            Some(ZcNetwork { sections, k: k.map(|x| 1 + x % ((1 << 30) - 1)), rho: r.map(|x| 1 + x % (1 << 24)) })
        }),
        1 => (any::<u8>(), any::<[u32; 4]>(), any::<[u32; 4]>()).prop_map(|(sections, k, rho)| Some(ZcNetwork { sections, k, rho })),
    ];
    (
        index(6),
        prop_oneof![12 => 1u8..=3, 3 => Just(0u8), 1 => 0u8..=255],
        proptest::collection::vec(section, MAX_LOSS_SECTIONS),
        allpass,
        zc,
    )
        .prop_map(|(line, sections, s, allpass, zc)| {
            let mut poles = [0u32; MAX_LOSS_SECTIONS];
            let mut zeros = [0i32; MAX_LOSS_SECTIONS];
            for (k, (p, z)) in s.into_iter().enumerate() {
                poles[k] = p;
                zeros[k] = z;
            }
            LineLoss { line, sections, poles, zeros, allpass, zc }
        })
}

fn hostile() -> impl Strategy<Value = Hostile> {
    let line = (resistance(), delay(), index(5), index(5)).prop_map(|(z_milliohm, delay, a, b)| Line {
        z_milliohm,
        delay,
        a,
        b,
    });
    let element = (index(5), any::<bool>(), resistance(), resistance()).prop_map(|(junction, l, p, s)| Element {
        junction,
        kind: if l { ElementKind::Inductor } else { ElementKind::Capacitor },
        port_milliohm: p,
        series_milliohm: s,
    });
    let drive = prop_oneof![
        1 => Just(Drive::None),
        4 => (index(5), resistance()).prop_map(|(junction, milliohm)| Drive::Source { junction, milliohm }),
        1 => (index(5), 0u16..80).prop_map(|(junction, latency)| Drive::Rig { junction, latency }),
    ];
    let probe = (index(6), any::<bool>(), any::<bool>()).prop_map(|(line, c, b)| Probe {
        kind: if c { ProbeKind::Current } else { ProbeKind::Voltage },
        line,
        side: if b { Side::B } else { Side::A },
    });
    (
        proptest::collection::vec(line, 1..8),
        proptest::collection::vec(junction(), 2..5),
        proptest::collection::vec(element, 0..2),
        proptest::collection::vec(loss(), 0..2),
        drive,
        proptest::collection::vec(probe, 0..4),
        prop_oneof![3 => Just(0u8), 1 => 0u8..20],
        prop_oneof![1 => Just(true), 4 => Just(false)],
    )
        .prop_map(|(lines, junctions, elements, losses, drive, probes, io_shift, hostile_indices)| {
            let mut h =
                Hostile { lines, junctions, elements, losses, drive, probes, io_shift, volts_per_code: VOLTS_PER_CODE };
            if !hostile_indices {
                fold_indices(&mut h);
            }
            h
        })
}

/// Run an accepted network and check the passive bound [closed form]: a source of EMF e
/// behind weight g_src (a port whose incoming wave is e/2) adds at most g_src·e²/4 to the
/// stored energy Σ g·w² per sample, every junction only removes energy, so a wave on a line of
/// weight g obeys g·w² <= Σ g_src·e²/4 and a probe (a ± b) is at most twice that bound.
/// Without a drive the plant stays exactly at rest.
fn run_accepted<P: Profile, const A: usize, const B: usize, const C: usize, const D: usize>(
    s: &mut Solver<P, A, B, C, D>,
    h: &Hostile,
    drive: &[i16],
) -> Result<(), TestCaseError> {
    let g_src = match h.drive {
        Drive::Source { milliohm, .. } => {
            // floor(2^c / Rs): the core's own source weight.
            ((1u128 << s.weight_exponent()) / milliohm as u128) as f64
        }
        _ => 0.0,
    };
    let shift = if P::MAX_IO_SHIFT == 0 { 0 } else { h.io_shift as i32 };
    let mut injected = 0.0f64;
    for n in 0..6000 {
        let x = drive.get(n % 2000).copied().filter(|_| n < 4000).unwrap_or(0);
        let out = s.step(x);
        match h.drive {
            Drive::None => prop_assert!(s.is_at_rest() && out == 0, "undriven plant moved at n={n}"),
            Drive::Source { .. } => {
                let e = x as f64 * 2f64.powi(shift);
                injected += g_src * e * e / 4.0;
                for (k, p) in h.probes.iter().enumerate() {
                    let g = s.line_weight(p.line as usize) as f64;
                    prop_assert!(g >= 1.0, "probe {k} on a line of weight 0 was accepted");
                    let bound = 2.0 * (injected / g).sqrt() + 4.0;
                    let raw = s.probe_raw(k) as f64;
                    prop_assert!(raw.abs() <= bound, "probe {k} = {raw} above the passive bound {bound} at n={n}");
                }
            }
            _ => {}
        }
    }
    Ok(())
}

/// 2048 hostile images (proptest's generator, run by hand so that the accepted share can be
/// checked too: a generator whose images are all refused would test nothing).
#[test]
fn hostile_images_are_refused_or_stay_passive() {
    use proptest::test_runner::{Config, TestRunner};
    use std::cell::Cell;
    let cases = std::env::var("PROPTEST_CASES").ok().and_then(|c| c.parse().ok()).unwrap_or(2048u32);
    let mut runner = TestRunner::new(Config { cases, ..Config::default() });
    let (accepted_wide, accepted_narrow) = (Cell::new(0u32), Cell::new(0u32));
    let strategy = (hostile(), proptest::collection::vec(any::<i16>(), 2000));
    runner
        .run(&strategy, |(h, drive)| {
            let img = image(&h);
            let mut w = Box::new(WideSolver::new());
            if w.load_image(&img).is_ok() {
                accepted_wide.set(accepted_wide.get() + 1);
                run_accepted(&mut *w, &h, &drive)?;
            } else {
                // A refused image leaves a solver that steps as an empty network.
                prop_assert_eq!(w.step(1000), 0);
                prop_assert!(w.is_at_rest());
            }
            let mut n = Box::new(NarrowSolver::new());
            if n.load_image(&img).is_ok() {
                accepted_narrow.set(accepted_narrow.get() + 1);
                run_accepted(&mut *n, &h, &drive)?;
            }
            Ok(())
        })
        .unwrap();
    let (w, n) = (accepted_wide.get(), accepted_narrow.get());
    eprintln!("accepted: wide {w}, narrow {n} of {cases}");
    assert!(w >= cases / 20 && n >= cases / 100, "too few images accepted (wide {w}, narrow {n} of {cases})");
}

/// The reproducer of the weight-budget overflow: sixteen parallel lines of 3 mΩ at one node
/// (Σ floor(2^62/Z) is about 2^64.4, past u64) and a source of 4 MΩ. The sum must not wrap;
/// at the exponent the lines allow, the source weight floor(2^c/R_s) is 0, so the network is
/// refused with the node named instead of running with a disconnected (or, before, an
/// active) junction.
#[test]
fn weight_budget_overflow_is_refused_at_the_node() {
    let mut lines: Vec<Line> = (0..16).map(|_| Line { z_milliohm: 3, delay: 5, a: 0, b: 1 }).collect();
    lines.push(Line { z_milliohm: 100_000, delay: 7, a: 1, b: 2 });
    let h = Hostile {
        lines,
        junctions: vec![Junction::Node { shunt: Shunt::Open }; 3],
        elements: vec![],
        losses: vec![],
        drive: Drive::Source { junction: 0, milliohm: 4_000_000_000 },
        probes: vec![Probe { kind: ProbeKind::Voltage, line: 16, side: Side::B }],
        io_shift: 12,
        volts_per_code: VOLTS_PER_CODE,
    };
    let mut w = Box::new(Solver::<Wide, 64, 8, 4096>::new());
    assert_eq!(w.load(&h.network()), Err(BuildError::CoefficientOutOfRange { junction: 0 }));
    assert_eq!(
        tidewire_core::configure::check::<Wide>(&h.network()),
        Err(BuildError::CoefficientOutOfRange { junction: 0 })
    );
    let h16 = Hostile { io_shift: 0, ..h.clone() };
    let mut n = Box::new(Solver::<Narrow, 64, 8, 4096>::new());
    assert_eq!(n.load(&h16.network()), Err(BuildError::CoefficientOutOfRange { junction: 0 }));
    // With a 40 Ω source the same node is fine: the budget is met without wrapping.
    let h = Hostile { drive: Drive::Source { junction: 0, milliohm: 40_000 }, ..h };
    w.load(&h.network()).unwrap();
    assert!(w.weight_exponent() < 30);
}

/// Delays that sum past 2^32 (a 32-bit `usize` would wrap `mem + d`) are refused by capacity.
#[test]
fn delays_that_would_wrap_are_refused() {
    let lines = [
        Line { z_milliohm: 50_000, delay: u32::MAX, a: 0, b: 1 },
        Line { z_milliohm: 50_000, delay: u32::MAX, a: 1, b: 0 },
    ];
    let junctions = [Junction::Node { shunt: Shunt::Open }; 2];
    let net = Network {
        lines: &lines,
        junctions: &junctions,
        elements: &[],
        losses: &[],
        drive: Drive::None,
        probes: &[],
        io_shift: 0,
        volts_per_code: 1.0,
    };
    let mut s = Box::new(Solver::<Wide, 8, 4, 64>::new());
    assert!(matches!(
        s.load(&net),
        Err(BuildError::CapacityExceeded { table: tidewire_core::Table::DelayStorage, .. })
    ));
}

/// The fractional-delay allpass is checked from its integers: a² + c² <= 1 (at the
/// profile's `LOSS_FRAC` bits, after truncation toward zero), c > 0, |a| <= 1/2, and a
/// filter with neither sections nor an allpass is refused.
#[test]
fn allpass_coefficients_are_checked_at_load() {
    let lines = [Line { z_milliohm: 50_000, delay: 4, a: 0, b: 1 }];
    let junctions = [Junction::Node { shunt: Shunt::Resistor { milliohm: 50_000 } }; 2];
    let one = 1u32 << 30;
    let try_load = |ap: Option<Allpass>, sections: u8| {
        let losses =
            [LineLoss { line: 0, sections, poles: [1 << 29, 0, 0, 0, 0, 0], zeros: [0; 6], allpass: ap, zc: None }];
        let net = Network {
            lines: &lines,
            junctions: &junctions,
            elements: &[],
            losses: &losses,
            drive: Drive::Source { junction: 0, milliohm: 50_000 },
            probes: &[],
            io_shift: 0,
            volts_per_code: 1.0,
        };
        let wide = Solver::<Wide, 8, 4, 64, 2>::new().load(&net);
        let narrow = Solver::<Narrow, 8, 4, 64, 2>::new().load(&net);
        assert_eq!(wide.is_ok(), tidewire_core::configure::check::<Wide>(&net).is_ok());
        (wide, narrow)
    };
    let bad = Err(BuildError::BadLoss { loss: 0 });
    // A whole-sample allpass (a = 0, c = 1: norm exactly 1) and a quarter-pole one pass,
    // alone and after a loss section.
    for sections in [0, 1] {
        assert_eq!(try_load(Some(Allpass { a: 0, c: one }), sections), (Ok(()), Ok(())));
        let a = one as i32 / 4;
        let c = ((1u64 << 60) - (a as u64).pow(2)).isqrt() as u32;
        assert_eq!(try_load(Some(Allpass { a, c }), sections), (Ok(()), Ok(())));
        assert_eq!(try_load(Some(Allpass { a: -a, c }), sections), (Ok(()), Ok(())));
    }
    // Norm above 1: c one LSB (Q30) too large.
    assert_eq!(try_load(Some(Allpass { a: 0, c: one + 1 }), 0).0, bad);
    // Pole beyond 1/2 (a lossless lattice all the same).
    let a = (one / 2 + (1 << 16)) as i32;
    let c = ((1u64 << 60) - (a as u64).pow(2)).isqrt() as u32;
    assert_eq!(try_load(Some(Allpass { a, c }), 0), (bad, bad));
    assert_eq!(try_load(Some(Allpass { a: -a, c }), 0), (bad, bad));
    // c = 0 (no path through the lattice), and extreme integers.
    assert_eq!(try_load(Some(Allpass { a: 0, c: 0 }), 0), (bad, bad));
    assert_eq!(try_load(Some(Allpass { a: i32::MIN, c: u32::MAX }), 0), (bad, bad));
    assert_eq!(try_load(Some(Allpass { a: i32::MAX, c: 1 }), 0), (bad, bad));
    // Neither sections nor an allpass.
    assert_eq!(try_load(None, 0), (bad, bad));
}

/// Zc(s) networks are checked at load from the integers (`configure/zc.rs`): 1..=4 sections,
/// 0 < k < 1, ρ > 0, Σ ρ < 1 after quantization, loss sections on the line, not the rig
/// port's line, and a passivity margin >= 0. Refused with a located error, never a panic.
#[test]
fn zc_networks_are_checked_at_load() {
    let lines = [Line { z_milliohm: 100_000, delay: 20, a: 0, b: 1 }];
    let junctions = [Junction::Node { shunt: Shunt::Resistor { milliohm: 100_000 } }; 2];
    let one = 1u32 << 30;
    // A shelf with DC gain 1 (pole 0.5, zero −0.5): it attenuates by 1/3 at Nyquist.
    let try_load = |zc: ZcNetwork, sections: u8, drive: Drive| {
        let losses = [LineLoss {
            line: 0,
            sections,
            poles: [one / 2, 0, 0, 0, 0, 0],
            zeros: [-(one as i32) / 2, 0, 0, 0, 0, 0],
            allpass: if sections == 0 { Some(Allpass { a: 0, c: one }) } else { None },
            zc: Some(zc),
        }];
        let net = Network {
            lines: &lines,
            junctions: &junctions,
            elements: &[],
            losses: &losses,
            drive,
            probes: &[],
            io_shift: 0,
            volts_per_code: 1.0,
        };
        let wide = Solver::<Wide, 8, 4, 64, 2>::new().load(&net);
        let narrow = Solver::<Narrow, 8, 4, 64, 2>::new().load(&net);
        assert_eq!(wide.is_ok(), tidewire_core::configure::check::<Wide>(&net).is_ok());
        assert_eq!(narrow.is_ok(), tidewire_core::configure::check::<Narrow>(&net).is_ok());
        (wide, narrow)
    };
    let src = Drive::Source { junction: 0, milliohm: 100_000 };
    let zc = |sections: u8, k: u32, rho: u32| ZcNetwork { sections, k: [k; 4], rho: [rho; 4] };
    // A small network (Σ ρ = 1/1024, k = 1/2) on this lossy line: passive, accepted.
    let good = zc(1, one / 2, one >> 10);
    assert_eq!(try_load(good, 1, src), (Ok(()), Ok(())));
    let m = tidewire_core::configure::zc_passivity_margin(
        &LineLoss {
            line: 0,
            sections: 1,
            poles: [one / 2, 0, 0, 0, 0, 0],
            zeros: [-(one as i32) / 2, 0, 0, 0, 0, 0],
            allpass: None,
            zc: Some(good),
        },
        20,
        30,
    )
    .unwrap();
    assert!(m.least >= 0.0 && m.least < 1.0, "{m:?}");
    let bad = Err(BuildError::BadZc { loss: 0 });
    // On a lossless line (an allpass only): active, refused.
    assert_eq!(try_load(good, 0, src), (bad, bad));
    // Sections 0 and 5 (and 255).
    for n in [0, 5, 255] {
        assert_eq!(try_load(zc(n, one / 2, one >> 10), 1, src), (bad, bad));
    }
    // k >= 1, k = 0, k quantizing to 0 in the narrow profile only.
    assert_eq!(try_load(zc(1, one, one >> 10), 1, src), (bad, bad));
    assert_eq!(try_load(zc(1, u32::MAX, one >> 10), 1, src), (bad, bad));
    assert_eq!(try_load(zc(1, 0, one >> 10), 1, src), (bad, bad));
    assert_eq!(try_load(zc(1, 1 << 10, one >> 10), 1, src).1, bad);
    // ρ = 0, Σ ρ = 1, Σ ρ > 1, huge ρ.
    assert_eq!(try_load(zc(1, one / 2, 0), 1, src), (bad, bad));
    assert_eq!(try_load(zc(4, one / 2, one / 4), 1, src), (bad, bad));
    assert_eq!(try_load(zc(2, one / 2, one / 4 * 3), 1, src), (bad, bad));
    assert_eq!(try_load(zc(4, u32::MAX, u32::MAX), 1, src), (bad, bad));
    // In range but active: a large, slow network (Σ ρ = 0.9, k near 1) whose phase the
    // line's weak loss does not pay for.
    let active = Err(BuildError::ZcNotPassive { line: 0 });
    assert_eq!(try_load(zc(1, one - (one >> 6), one / 10 * 9), 1, src), (active, active));
    // On the rig port's line: not supported, refused.
    let rig = Drive::Rig { junction: 0, latency: 2 };
    let junctions_rig =
        [Junction::Node { shunt: Shunt::Open }, Junction::Node { shunt: Shunt::Resistor { milliohm: 100_000 } }];
    let losses = [LineLoss {
        line: 0,
        sections: 1,
        poles: [one / 2, 0, 0, 0, 0, 0],
        zeros: [-(one as i32) / 2, 0, 0, 0, 0, 0],
        allpass: None,
        zc: Some(good),
    }];
    let net = Network {
        lines: &lines,
        junctions: &junctions_rig,
        elements: &[],
        losses: &losses,
        drive: rig,
        probes: &[],
        io_shift: 0,
        volts_per_code: 1.0,
    };
    assert_eq!(Solver::<Wide, 8, 4, 64, 2>::new().load(&net), Err(BuildError::ZcOnRigLine { line: 0 }));
    assert_eq!(tidewire_core::configure::check::<Narrow>(&net), Err(BuildError::ZcOnRigLine { line: 0 }));
}

//! Lossy lines with Zc(s) networks at both ends (node-wave form, `docs/zc-model.md`), in
//! trees and loops, both profiles: zero-input decay to exactly zero, outputs within the
//! passive bound over a long run, and tracking of the f64 twin run with the core's own
//! quantized coefficients.
//!
//! The plants are random (`common::with_zc` on lines with random loss filters) and kept only
//! where both loaders accept them: the load-time passivity margin of every Zc line
//! (`configure::zc_passivity_margin`) is >= 0. `zc_plants_are_mostly_accepted` counts how
//! many remain.
//!
//! Nothing here is derived for the truncated arithmetic of a Zc end (the energy argument of
//! the other elements does not cover it, `docs/zc-model.md`): the bounds are the ones the
//! plants without Zc are held to, and the figures are measured. With
//! `ZC_REPORT=1 cargo test -p tidewire-core --test zc -- --nocapture` (256 cases each,
//! 2 Dec 2026): 234 of 400 drawn plants accepted; the slowest rest at 0.32 (wide) and 0.23
//! (narrow) of the decay bound; the largest probe at 0.38 of the passive bound; tracking
//! within 134.5 LSB (wide, io_shift 12) and 61.2 codes (narrow) of the quantized twin, and
//! 671 LSB on one later case (see [`TRACK_WIDE`]).

mod common;

use common::{network, with_losses, with_zc, zc_accepted, Loads, Owned, Twin};
use proptest::prelude::*;
use proptest::strategy::ValueTree;
use proptest::test_runner::TestRunner;
use tidewire_core::{Narrow, Profile, Solver, Wide};

type WideSolver = Solver<Wide, 64, 32, 16384, 64>;
type NarrowSolver = Solver<Narrow, 64, 32, 16384, 64>;

fn config() -> ProptestConfig {
    // `PROPTEST_CASES` (the soak command) raises the count.
    let cases = std::env::var("PROPTEST_CASES").ok().and_then(|c| c.parse().ok()).unwrap_or(256);
    ProptestConfig { cases, max_global_rejects: 100_000, ..ProptestConfig::default() }
}

/// Random plants with Zc networks that both loaders accept, and at least one Zc line.
fn zc_plants(loads: Loads, max_delay: u32) -> impl Strategy<Value = Owned> {
    network(loads, max_delay, 12)
        .prop_flat_map(with_losses)
        .prop_flat_map(with_zc)
        .prop_filter("a Zc line the loaders accept", |n| n.losses.iter().any(|l| l.zc.is_some()) && zc_accepted(n))
}

#[test]
fn zc_plants_are_mostly_accepted() {
    // Of the drawn plants with at least one Zc line, the share both loaders accept (fixed
    // seed, so the figure is reproducible).
    let mut runner = TestRunner::deterministic();
    let strategy = network(Loads::LossyLoops, 300, 12).prop_flat_map(with_losses).prop_flat_map(with_zc);
    let (mut drawn, mut accepted) = (0, 0);
    while drawn < 400 {
        let net = strategy.new_tree(&mut runner).unwrap().current();
        if !net.losses.iter().any(|l| l.zc.is_some()) {
            continue;
        }
        drawn += 1;
        accepted += usize::from(zc_accepted(&net));
    }
    println!("accepted {accepted} of {drawn}");
    assert!(accepted * 2 >= drawn, "only {accepted} of {drawn} Zc plants pass the load-time margin");
}

/// Samples the exact (f64) plant, driven by `drive`, needs until its line energy Σ g·w²
/// falls below g_min/4 (a quarter LSB in the weakest line), checked every W/8 samples;
/// `None` past 400 000 samples (a loop with an undamped mode).
fn exact_decay(net: &Owned, drive: &[f64]) -> Option<usize> {
    let w = common::delay_sum(net).max(8) as usize;
    let mut twin = Twin::new(&net.network());
    for x in drive {
        twin.step(*x);
    }
    let g_min = net.lines.iter().map(|l| 1000.0 / l.z_milliohm as f64).fold(f64::INFINITY, f64::min);
    let stride = (w / 8).max(1);
    let mut n_e = 0usize;
    while twin.energy() >= g_min / 4.0 {
        for _ in 0..stride {
            twin.step(0.0);
        }
        n_e += stride;
        if n_e > 400_000 {
            return None;
        }
    }
    Some(n_e)
}

/// Zero-input samples until every I/O code (the drive's output and every probe, in codes)
/// is exactly 0 and the solver is at rest, or `None` within `limit`.
fn rest<P: Profile>(net: &Owned, drive: &[i16], limit: usize) -> Option<usize> {
    let mut s = Box::new(Solver::<P, 64, 32, 16384, 64>::new());
    s.load(&net.network()).unwrap();
    for x in drive {
        s.step(*x);
    }
    let shift = net.io_shift as u32;
    for n in 0..=limit {
        let out = s.step(0);
        let codes_zero = out == 0 && (0..s.probe_count()).all(|k| s.probe_raw(k) >> shift == 0 && s.probe_raw(k) >= 0);
        if codes_zero && s.is_at_rest() {
            return Some(n);
        }
    }
    None
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn a_zc_plants_decay_to_exactly_zero(
        net in zc_plants(Loads::LossyLoops, 100),
        drive in proptest::collection::vec(-30000i16..30000, 1..300),
    ) {
        // Bound: 2·n_e + 4·W + 2·(the sections' own decay), as for the plants without Zc
        // (`passivity.rs`), n_e from the f64 twin of the same plant (loss filters and Zc
        // networks included). Observed, not derived: the Zc ends are not covered by the
        // energy argument (module docs of `configure/zc.rs`). Plants whose f64 twin does
        // not decay (a loop with an undamped mode) are skipped.
        let d: Vec<f64> = drive.iter().map(|x| *x as f64 * 4096.0).collect();
        let n_e = exact_decay(&net, &d);
        prop_assume!(n_e.is_some(), "the exact plant does not decay");
        let w = common::delay_sum(&net).max(8) as usize;
        let bound = 2 * n_e.unwrap_or(0) + 4 * w + 2 * common::filter_decay(&net);
        // A loop through a series resistor can keep a zero-input limit cycle in fixed point
        // without any Zc network (a mode that carries no current through the resistor; a
        // case found on 2 Dec 2026 and kept in the regressions file: lines of 19 and 13
        // samples through a series junction, a 4-sample cycle of 21 LSB in the narrow
        // profile, the Zc line itself at rest). Such a plant is skipped when the same plant
        // without its Zc networks does not rest either: what is checked is that the
        // networks never keep a plant from resting that rests without them.
        let bare = || {
            let mut b = net.clone();
            b.losses.iter_mut().for_each(|l| l.zc = None);
            b
        };
        let got = rest::<Wide>(&net, &drive, bound);
        if got.is_none() {
            prop_assume!(rest::<Wide>(&bare(), &drive, bound).is_some(), "rests without Zc either");
        }
        prop_assert!(got.is_some(), "wide: not at rest after {bound} zero-input samples");

        let mut n16 = net.clone();
        n16.io_shift = 0;
        let d16: Vec<f64> = drive.iter().map(|x| *x as f64).collect();
        let bound16 = 2 * exact_decay(&n16, &d16).unwrap_or(0) + 4 * w + 2 * common::filter_decay(&n16);
        let got16 = rest::<Narrow>(&n16, &drive, bound16);
        if got16.is_none() {
            let mut b16 = bare();
            b16.io_shift = 0;
            prop_assume!(rest::<Narrow>(&b16, &drive, bound16).is_some(), "rests without Zc either");
        }
        prop_assert!(got16.is_some(), "narrow: not at rest after {bound16} zero-input samples");
        if std::env::var("ZC_REPORT").is_ok() {
            println!("rest wide {:?} of {bound}, narrow {:?} of {bound16}", got, got16);
        }
    }

    #[test]
    fn b_zc_outputs_stay_within_the_passive_bound(
        net in zc_plants(Loads::LossyLoops, 300),
        drive in proptest::collection::vec(-32768i16..=32767, 1..2000),
    ) {
        // The bound of `passivity.rs` [closed form for a passive plant]: a source E behind Rs
        // delivers at most E²/(4·Rs) per sample, so every probe stays within
        // 2·sqrt(Σ e²/(4·Rs)/g_min) (+ 4 LSB). With Zc ends the line energy alone is not a
        // Lyapunov function; this checks the bound the plant must keep as a passive one.
        let mut s = Box::new(WideSolver::new());
        s.load(&net.network()).unwrap();
        let rs = match net.drive { tidewire_core::Drive::Source { milliohm, .. } => milliohm as f64 / 1000.0, _ => unreachable!() };
        let g_min = net.lines.iter().map(|l| 1000.0 / l.z_milliohm as f64).fold(f64::INFINITY, f64::min);
        let mut injected = 0.0f64;
        let mut worst = 0.0f64;
        for n in 0..drive.len() * 3 {
            let x = if n < drive.len() { drive[n] } else { 0 };
            let e = x as f64 * 4096.0;
            injected += e * e / (4.0 * rs);
            s.step(x);
            let bound = 2.0 * (injected / g_min).sqrt();
            for k in 0..s.probe_count() {
                let raw = s.probe_raw(k) as f64;
                worst = worst.max(raw.abs() / (bound + 4.0));
                prop_assert!(raw.abs() <= bound + 4.0, "probe {k} = {raw} above passive bound {bound} at n={n}");
            }
        }
        if std::env::var("ZC_REPORT").is_ok() {
            println!("largest probe / bound {worst:.4}");
        }
    }

    #[test]
    fn c_zc_both_profiles_track_the_quantized_twin(
        net in zc_plants(Loads::LossyLoops, 300),
        drive in proptest::collection::vec(-1000i16..1000, 1..400),
    ) {
        // The f64 twin with the core's own quantized coefficients (line weights, series
        // coefficients, the allpass and Zc coefficients at LOSS_FRAC bits), so only
        // arithmetic error is measured, over 1500 samples.
        let mut s = Box::new(WideSolver::new());
        s.load(&net.network()).unwrap();
        let mut twin = Twin::quantized(&net.network(), common::quantized(&*s));
        let mut n16 = net.clone();
        n16.io_shift = 0;
        let mut s16 = Box::new(NarrowSolver::new());
        s16.load(&n16.network()).unwrap();
        let mut twin16 = Twin::quantized(&n16.network(), common::quantized(&*s16));
        let (mut worst, mut worst16) = (0.0f64, 0.0f64);
        for n in 0..1500 {
            let x = if n < drive.len() { drive[n] } else { 0 };
            s.step(x);
            s16.step(x);
            let want = twin.step(x as f64 * 4096.0);
            let want16 = twin16.step(x as f64);
            prop_assume!(want16.iter().all(|v| v.abs() < 30000.0), "narrow run would saturate");
            for k in 0..want.len() {
                worst = worst.max((s.probe_raw(k) as f64 - want[k]).abs());
                worst16 = worst16.max((s16.probe_raw(k) as f64 - want16[k]).abs());
            }
        }
        if std::env::var("ZC_REPORT").is_ok() {
            println!("tracking wide {worst:.1} LSB, narrow {worst16:.2} codes");
        }
        prop_assert!(worst <= TRACK_WIDE, "wide off the twin by {worst} LSB");
        prop_assert!(worst16 <= TRACK_NARROW, "narrow off the twin by {worst16} codes");
    }
}

/// Tracking bounds. Narrow: the 96 codes `passivity.rs` states for plants without Zc
/// (measured here up to 61.5 codes). Wide: 2048 LSB (1/2 code at io_shift 12), four times
/// the 512 LSB stated without Zc. A section whose pole 2k − 1 lies near ±1 (k near 0 or 1)
/// turns each state's truncation (< 1 LSB per sample) into a bias of up to about
/// 1/(1 − |2k − 1|) LSB, and the plant's impedance steps amplify it. A case found on
/// 2 Dec 2026 (kept in the regressions file: k = 0.02, ρ = 0.5, a 25 Ω line into a 900 Ω
/// one) measured 671 LSB (wide) against 1.2 codes (narrow), where random plants otherwise
/// stayed within 135 LSB. The bound is observed, not derived.
const TRACK_WIDE: f64 = 2048.0;
const TRACK_NARROW: f64 = 96.0;

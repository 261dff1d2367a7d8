//! The two forms of the per-sample step on the same plants, in one run: the generic
//! (data-driven) `Solver` loaded from a plant's network, and the plant-specialised
//! `specialised::Plant` that `tidewire compile --rust` emits for it (bit-exact with it:
//! `tests/specialised.rs`). On every plant the old core can represent, the generic step as it
//! was when issue 9 was filed (`baseline/old_generic/`, frozen from commit c696084; checked
//! against today's by `tests/old_step.rs`) runs beside them as `old-style generic`, loaded
//! from the same network. On the one-line plant, the f64 leapfrog baseline a user might
//! otherwise write (`baseline/leapfrog.rs`) runs beside them.
//!
//! Throughput is `Elements(samples)`: criterion's elements/s are simulated samples per
//! second, so the ratio of two lines of one group is the speed-up of one form over the other.
//! Plants (sources checked in under `tests/generated/specialised/`, regenerated and checked by
//! `tests/specialised.rs`): `every_kind` (a test plant of our own with every element kind, 29
//! ports, both profiles; a choke, fractional delays and Zc(s) networks, so no old-style line),
//! `tap_bus` (a field bus of our own with a rig port, five taps with series resistors, drops
//! ending matched, capacitive, 10 Ω, shorted and AC-terminated, loss filters; 34 ports, both
//! profiles), `rig_break` (the example rig plant, wide) and `one_line` (one 1 km line of 50 Ω
//! at 100 MHz, 500 samples of delay, as in `versus_leapfrog`).

#[path = "baseline/leapfrog.rs"]
mod leapfrog;
#[path = "baseline/old_generic/mod.rs"]
mod old_generic;

macro_rules! generated {
    ($($m:ident),*) => {$(
        #[allow(dead_code)]
        mod $m {
            include!(concat!("../tests/generated/specialised/", stringify!($m), ".rs"));
        }
    )*};
}
generated!(every_kind_wide, every_kind_narrow, tap_bus_wide, tap_bus_narrow, rig_break_wide, one_line_wide);

use std::hint::black_box;
use std::time::Duration;

use criterion::{Criterion, SamplingMode, Throughput};
use leapfrog::{FarEnd, Leapfrog, Setup};
use tidewire_core::{Narrow, PlantStep, Solver, Wide};

/// Samples per block.
const BLOCK: usize = 4096;

/// A square wave of ±8000 codes, 256-sample period (as the other benches).
fn stimulus_codes() -> Vec<i16> {
    (0..BLOCK).map(|n| if (n / 128) % 2 == 0 { 8000 } else { -8000 }).collect()
}

/// One line of a group: `process` runs a block of `BLOCK` samples (`output[k]` = step of
/// `input[k]`), the same stimulus for every form.
fn bench_block(c: &mut Criterion, group: &str, form: &str, process: &mut dyn FnMut(&[i16], &mut [i16])) {
    let input = stimulus_codes();
    let mut output = vec![0i16; BLOCK];
    let mut g = c.benchmark_group(group);
    g.throughput(Throughput::Elements(BLOCK as u64));
    g.sampling_mode(SamplingMode::Flat);
    g.bench_function(form, |b| {
        b.iter(|| {
            process(black_box(&input), &mut output);
            black_box(&output);
        })
    });
    g.finish();
}

fn bench_form(c: &mut Criterion, group: &str, form: &str, solver: &mut dyn PlantStep) {
    bench_block(c, group, form, &mut |i, o| solver.process(i, o));
}

/// Generic and specialised form of generated plant module `$m` on profile `$p`.
macro_rules! both {
    ($c:expr, $m:ident, $p:ty) => {{
        let mut g = Box::new(Solver::<$p, { $m::PORTS }, { $m::JUNCTIONS }, { $m::MEMORY }, { $m::LOSS_ENDS }>::new());
        g.load(&$m::NETWORK).expect("generated network loads");
        bench_form($c, concat!("forms/", stringify!($m)), "generic", &mut *g);
        let mut s = Box::new($m::specialised::Plant::new());
        bench_form($c, concat!("forms/", stringify!($m)), "specialised", &mut *s);
    }};
}

/// The old-style generic step (`baseline/old_generic/`) on generated plant `$m`'s network,
/// profile `$p` (the baseline's own marker type), then the two forms of today ([`both`]).
macro_rules! three {
    ($c:expr, $m:ident, $p:ty, $old:ty) => {{
        // The old narrow profile had no bits below the I/O code: its copy runs the plant at
        // io_shift 0 (the same work per sample; only the scale of the codes differs).
        let at_old_shift = tidewire_core::Network {
            io_shift: $m::NETWORK.io_shift.min(<$old as old_generic::profile::Profile>::MAX_IO_SHIFT),
            ..$m::NETWORK
        };
        let net = old_generic::from_core(&at_old_shift).expect("the old core represents this plant");
        let mut o =
            Box::new(
                old_generic::Solver::<$old, { $m::PORTS }, { $m::JUNCTIONS }, { $m::MEMORY }, { $m::LOSS_ENDS }>::new(),
            );
        o.load(&net.view()).expect("the old core loads this plant");
        bench_block($c, concat!("forms/", stringify!($m)), "old-style generic", &mut |i, out| o.process(i, out));
        both!($c, $m, $p);
    }};
}

fn leapfrog_case(c: &mut Criterion) {
    // The one_line plant: 1 km of 50 Ω at v = 2e8 m/s, 100 MHz: 500 cells at Courant number 1.
    let setup = Setup {
        z0: 50.0,
        velocity: 2e8,
        length: 1000.0,
        r_per_m: 0.0,
        dt: 1e-8,
        source_ohm: 50.0,
        far: FarEnd::Resistor(50.0),
    };
    let mut lf = Leapfrog::new(&setup).expect("bench setup is valid");
    let input: Vec<f64> = stimulus_codes().iter().map(|x| f64::from(*x) / 4096.0).collect();
    let mut output = vec![0.0f64; BLOCK];
    let mut g = c.benchmark_group("forms/one_line_wide");
    g.throughput(Throughput::Elements(BLOCK as u64));
    g.sampling_mode(SamplingMode::Flat);
    g.bench_function("leapfrog_f64", |b| {
        b.iter(|| {
            lf.process(black_box(&input), &mut output);
            black_box(&output);
        })
    });
    g.finish();
}

fn main() {
    // Seventeen cases at about 3.5 s each; the command line overrides.
    let mut c = Criterion::default()
        .warm_up_time(Duration::from_secs(1))
        .measurement_time(Duration::from_secs(2))
        .sample_size(30)
        .configure_from_args();
    both!(&mut c, every_kind_wide, Wide);
    both!(&mut c, every_kind_narrow, Narrow);
    three!(&mut c, tap_bus_wide, Wide, old_generic::Wide);
    three!(&mut c, tap_bus_narrow, Narrow, old_generic::Narrow);
    three!(&mut c, rig_break_wide, Wide, old_generic::Wide);
    three!(&mut c, one_line_wide, Wide, old_generic::Wide);
    leapfrog_case(&mut c);
    c.final_summary();
}

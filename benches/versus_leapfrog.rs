//! Cost per simulated sample against cable length: the delay-line core next to the f64
//! leapfrog baseline a user might otherwise write (`baseline/leapfrog.rs`).
//!
//! Both simulate one uniform lossless 50 Ω line at 100 MHz with v = 2e8 m/s, driven by a
//! source with 50 Ω internal resistance and ended in a matched 50 Ω load:
//! * core (Wide profile): one line of delay = length / (v·dt) samples between the source node
//!   and the matched node; its cost per sample does not depend on that delay;
//! * leapfrog: length / (v·dt) cells at Courant number 1, each updated every sample, so its
//!   cost per sample grows with the length.
//!
//! Throughput is `Elements(samples)`, so criterion's elements/s are simulated samples per
//! second and its time per iteration divided by the block is the time per sample.

#[path = "baseline/leapfrog.rs"]
mod leapfrog;

use std::hint::black_box;
use std::time::Duration;

use criterion::{BenchmarkId, Criterion, SamplingMode, Throughput};
use leapfrog::{FarEnd, Leapfrog, Setup};
use tidewire_core::{Drive, Junction, Line, Network, Shunt, Solver, Wide};

/// Samples per block.
const BLOCK: usize = 4096;
/// Sample rate, Hz, and the time step it gives.
const SAMPLE_RATE: f64 = 100e6;
/// Propagation speed, m/s.
const VELOCITY: f64 = 2e8;
/// Line impedance, source resistance and load, ohms.
const Z0: f64 = 50.0;
/// Cable lengths, metres.
const LENGTHS: [f64; 4] = [10.0, 100.0, 1_000.0, 10_000.0];
/// Delay storage of the core: both directions of the longest line (2 · 5000 samples).
const MEM: usize = 10_000;
/// Volts per I/O code of the core.
const VOLTS_PER_CODE: f32 = 1.0 / 4096.0;

/// A square wave of ±8000 codes, 256-sample period.
fn stimulus_codes() -> Vec<i16> {
    (0..BLOCK).map(|n| if (n / 128) % 2 == 0 { 8000 } else { -8000 }).collect()
}

fn core_case(c: &mut Criterion, length: f64) {
    // One-way delay in whole samples: length / (v·dt) [closed form].
    let delay = (length * SAMPLE_RATE / VELOCITY).round() as u32;
    let z = (Z0 * 1000.0) as u32;
    let lines = [Line { z_milliohm: z, delay, a: 0, b: 1 }];
    let junctions = [Junction::Node { shunt: Shunt::Open }, Junction::Node { shunt: Shunt::Resistor { milliohm: z } }];
    let net = Network {
        lines: &lines,
        junctions: &junctions,
        elements: &[],
        losses: &[],
        drive: Drive::Source { junction: 0, milliohm: z },
        probes: &[],
        io_shift: 8,
        volts_per_code: VOLTS_PER_CODE,
    };
    let mut solver: Box<Solver<Wide, 2, 2, MEM>> = Box::default();
    solver.load(&net).expect("bench network is valid");
    assert_eq!(solver.memory_used(), 2 * delay as usize);

    let input = stimulus_codes();
    let mut output = vec![0i16; BLOCK];
    let mut group = c.benchmark_group("versus_leapfrog/core_wide");
    group.throughput(Throughput::Elements(BLOCK as u64));
    group.sampling_mode(SamplingMode::Flat);
    group.bench_function(BenchmarkId::new("length_m", length), |b| {
        b.iter(|| {
            solver.process(black_box(&input), &mut output);
            black_box(&output);
        })
    });
    group.finish();
}

fn leapfrog_case(c: &mut Criterion, length: f64) {
    let setup = Setup {
        z0: Z0,
        velocity: VELOCITY,
        length,
        r_per_m: 0.0,
        dt: 1.0 / SAMPLE_RATE,
        source_ohm: Z0,
        far: FarEnd::Resistor(Z0),
    };
    let mut lf = Leapfrog::new(&setup).expect("bench setup is valid");
    let cells = (length * SAMPLE_RATE / VELOCITY).round() as usize;
    assert_eq!(lf.cells(), cells, "Courant number 1: one cell per sample of delay");

    // The same stimulus as the core's, in volts.
    let input: Vec<f64> = stimulus_codes().iter().map(|x| f64::from(*x) * f64::from(VOLTS_PER_CODE)).collect();
    let mut output = vec![0.0f64; BLOCK];
    let mut group = c.benchmark_group("versus_leapfrog/leapfrog_f64");
    group.throughput(Throughput::Elements(BLOCK as u64));
    group.sampling_mode(SamplingMode::Flat);
    group.bench_function(BenchmarkId::new("length_m", length), |b| {
        b.iter(|| {
            lf.process(black_box(&input), &mut output);
            black_box(&output);
        })
    });
    group.finish();
}

fn main() {
    // Eight cases at about 3.5 s each; the command line still overrides.
    let mut c = Criterion::default()
        .warm_up_time(Duration::from_secs(1))
        .measurement_time(Duration::from_secs(2))
        .sample_size(30)
        .configure_from_args();
    for length in LENGTHS {
        core_case(&mut c, length);
        leapfrog_case(&mut c, length);
    }
    c.final_summary();
}

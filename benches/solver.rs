//! Port updates per second of the fixed-point core against plant size and delay length, for
//! both number profiles.
//!
//! The claim under test (crate docs, "Real-time guarantees"): `step` costs O(ports +
//! junctions) and nothing in the delays, because every line is a ring buffer read and written
//! at one cursor. So for a fixed plant size the figures must stay flat from 1 to 10 000
//! samples of delay, and criterion reports them as elements/s = port-updates/s
//! (`Throughput::Elements(ports · samples)`).
//!
//! Plant: a chain of `ports / 2` equal 100 Ω lines of `delay` samples each. A test source
//! (EMF behind 100 Ω) drives the first node, the last node is matched with 100 Ω, and the
//! junctions between lines alternate between a series 1 Ω (lumped conductor resistance) and
//! a node with a 10 kΩ resistive shunt (a tap's input load), so every junction kind on the
//! per-sample path is exercised. Blocks of 4096 samples go through `Solver::process`.
//!
//! Storage is sized per case exactly as firmware would size it (MEM = ports · delay waves,
//! up to 1.28 M waves = 5 MB for the Wide profile) and lives on the heap.

use std::hint::black_box;
use std::time::Duration;

use criterion::{BenchmarkId, Criterion, Throughput};
use tidewire_core::{Drive, Junction, Line, Narrow, Network, Profile, Shunt, Solver, Wide};

/// Samples per `process` call.
const BLOCK: usize = 4096;
/// Characteristic impedance of every line, source resistance and far-end match, mΩ.
const Z_MOHM: u32 = 100_000;
/// Series resistance at the series junctions, mΩ.
const SERIES_MOHM: u32 = 1_000;
/// Shunt at the intermediate nodes, mΩ.
const TAP_MOHM: u32 = 10_000_000;

/// The chain plant of `lines` lines of `delay` samples (see the module docs).
fn chain(lines: usize, delay: u32) -> (Vec<Line>, Vec<Junction>) {
    let line_list = (0..lines).map(|k| Line { z_milliohm: Z_MOHM, delay, a: k as u16, b: (k + 1) as u16 }).collect();
    let junctions = (0..=lines)
        .map(|j| match j {
            0 => Junction::Node { shunt: Shunt::Open },
            _ if j == lines => Junction::Node { shunt: Shunt::Resistor { milliohm: Z_MOHM } },
            _ if j % 2 == 1 => Junction::Series { milliohm: SERIES_MOHM },
            _ => Junction::Node { shunt: Shunt::Resistor { milliohm: TAP_MOHM } },
        })
        .collect();
    (line_list, junctions)
}

/// A square wave of ±8000 codes with a 256-sample period: the waves are never all zero.
fn stimulus() -> Vec<i16> {
    (0..BLOCK).map(|n| if (n / 128) % 2 == 0 { 8000 } else { -8000 }).collect()
}

/// Bench one (profile, ports, delay) case; `MEM` must be `PORTS · delay`.
fn case<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize>(c: &mut Criterion, delay: u32) {
    let (lines, junctions) = chain(PORTS / 2, delay);
    let net = Network {
        lines: &lines,
        junctions: &junctions,
        elements: &[],
        losses: &[],
        drive: Drive::Source { junction: 0, milliohm: Z_MOHM },
        probes: &[],
        io_shift: 0,
        volts_per_code: 1.0 / 4096.0,
    };
    // Heap storage: up to 5 MB, more than a thread stack should carry (see `main` too).
    let mut solver: Box<Solver<P, PORTS, JUNCS, MEM>> = Box::default();
    solver.load(&net).expect("bench network is valid");
    assert_eq!(solver.port_count(), PORTS, "every port of the capacity is in use");
    assert_eq!(solver.memory_used(), MEM, "every wave of the storage is in use");

    let input = stimulus();
    let mut output = vec![0i16; BLOCK];
    let name = if P::NAME.starts_with("wide") { "wide" } else { "narrow" };
    let mut group = c.benchmark_group(format!("solver/{name}/{PORTS}ports"));
    group.throughput(Throughput::Elements((PORTS * BLOCK) as u64));
    group.bench_function(BenchmarkId::new("delay", delay), |b| {
        b.iter(|| {
            solver.process(black_box(&input), &mut output);
            black_box(&output);
        })
    });
    group.finish();
}

/// All delays for one profile and plant size (const generics need the literal products).
macro_rules! delays {
    ($c:expr, $p:ty, $ports:literal) => {
        case::<$p, $ports, { $ports / 2 + 1 }, { $ports * 1 }>($c, 1);
        case::<$p, $ports, { $ports / 2 + 1 }, { $ports * 100 }>($c, 100);
        case::<$p, $ports, { $ports / 2 + 1 }, { $ports * 1000 }>($c, 1000);
        case::<$p, $ports, { $ports / 2 + 1 }, { $ports * 10000 }>($c, 10000);
    };
}

fn benches(c: &mut Criterion) {
    delays!(c, Wide, 2);
    delays!(c, Wide, 8);
    delays!(c, Wide, 32);
    delays!(c, Wide, 128);
    delays!(c, Narrow, 2);
    delays!(c, Narrow, 8);
    delays!(c, Narrow, 32);
    delays!(c, Narrow, 128);
}

fn main() {
    // An unoptimized build (`cargo test --benches` runs each case once) may build the 5 MB
    // solver on the stack before boxing it: give the cases a stack that holds it.
    std::thread::Builder::new()
        .stack_size(64 << 20)
        .spawn(|| {
            // 32 cases at about 3.5 s each keeps the whole run near two minutes on a shared
            // 2-core machine; the command line (e.g. `-- --measurement-time 5`) overrides.
            let mut c = Criterion::default()
                .warm_up_time(Duration::from_secs(1))
                .measurement_time(Duration::from_secs(2))
                .sample_size(30)
                .configure_from_args();
            benches(&mut c);
            c.final_summary();
        })
        .expect("spawn the bench thread")
        .join()
        .expect("bench thread finished");
}

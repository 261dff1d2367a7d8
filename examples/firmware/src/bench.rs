//! One plant on one number profile: load it twice (from the `include!`d Rust source and from
//! the `include_bytes!` image), hash both runs for both stimuli, then time the per-sample loop.
//!
//! Timing uses SysTick on the core clock (CLKSOURCE = 1), a 24-bit down-counter. Writing its
//! current-value register restarts the count, so every timed run starts at the same phase
//! of a tick and two runs with equal instruction counts read exactly the same ticks under
//! `-icount`; every sample is also read on its own (average and slowest sample). The
//! conversion to instructions (ticks · 10^9 / f_systick / 2^shift) is done by the host, which
//! knows the `-icount shift` it ran QEMU with.

use crate::out::Out;
use crate::stimulus::{run_hashed, Stimulus, SAMPLES, SEEDS};

/// Samples per timed run: more than the largest plant's ring span (p85: 5260 waves), so a
/// run passes at least one wrap of the specialised form's window and its average and its
/// worst sample both count it.
pub const TIMED: u32 = 8192;
use cortex_m::peripheral::{syst::SystClkSource, SYST};
#[cfg(not(feature = "inject-panic"))]
use tidewire_core::{Junction, Shunt};
use tidewire_core::{Network, PlantStep, Profile, Solver};

/// SysTick reload: the full 24 bits.
const RELOAD: u32 = 0x00ff_ffff;

/// Start SysTick free-running on the core clock.
pub fn start_timer(syst: &mut SYST) {
    syst.set_clock_source(SystClkSource::Core);
    syst.set_reload(RELOAD);
    syst.clear_current();
    syst.enable_counter();
}

/// Restart the count and return the start reading.
#[inline(always)]
fn mark(syst: &mut SYST) -> u32 {
    syst.clear_current();
    SYST::get_current()
}

/// Ticks elapsed since `start` (mod 2^24, exact across a reload for spans below 2^24 ticks).
#[inline(always)]
fn elapsed(start: u32) -> u32 {
    start.wrapping_sub(SYST::get_current()) & RELOAD
}

/// Ticks of a calibration loop of a known instruction count (`cortex_m::asm::delay`).
pub fn calibrate(syst: &mut SYST, out: &mut Out, cycles: u32) {
    let t0 = mark(syst);
    cortex_m::asm::delay(cycles);
    let t = elapsed(t0);
    out.str("CLOCK").hex(cycles).hex(t).nl();
}

/// A timed run: its ticks (mod 2^24); the sum of its samples' own readings, and the most
/// of one sample.
pub struct Timing {
    pub total: u32,
    pub sum: u32,
    pub worst: u32,
}

/// The whole run between two readings (from a restarted count, so two runs of equal
/// instruction counts read the same ticks), and every sample between two readings of its
/// own: a real-time loop must meet its period in its slowest sample, which the average can
/// hide (a specialised step's window wrap). The per-sample readings cost the same in
/// [`time_baseline`], which is subtracted. The sum of the per-sample readings counts the
/// samples alone, without the loop's bookkeeping between them (at shift 6, where a reading
/// resolves one instruction, the host takes the average from it). At `-icount shift=0` a run
/// stays below one 24-bit wrap of the counter (the largest, M4 narrow p85: about 1.7 million
/// ticks); at shift 6 the host takes only differences of totals mod 2^24 from it.
#[inline(always)]
fn timed(syst: &mut SYST, mut sample: impl FnMut()) -> Timing {
    let (mut worst, mut sum) = (0u32, 0u32);
    let start = mark(syst);
    for _ in 0..TIMED {
        let t0 = SYST::get_current();
        sample();
        let d = elapsed(t0);
        sum = sum.wrapping_add(d);
        worst = d.max(worst);
    }
    Timing { total: elapsed(start), sum, worst }
}

/// The stimulus loop alone, timed as [`time_steps`] times the solver.
#[inline(never)]
pub fn time_baseline(syst: &mut SYST, seed: u32) -> Timing {
    let mut stim = Stimulus::new(seed, TIMED);
    let mut sink = 0i16;
    let t = timed(syst, || sink ^= core::hint::black_box(stim.next_code()));
    core::hint::black_box(sink);
    t
}

/// One step, out of line, as a sample interrupt calls it. Inlined into the timing loop, the
/// compiler kept plant state in registers from one iteration to the next (a 2-port
/// specialised step spilled and reloaded them around every sample: 264 instead of about 160
/// instructions on the M4), which measures the loop, not the step a rig runs once per tick.
/// The call and return are counted, as a rig pays them.
#[inline(never)]
fn step_once<S: PlantStep>(solver: &mut S, x: i16) -> i16 {
    solver.step(x)
}

/// `TIMED` calls of `step` (plus the stimulus loop) from rest, either form.
#[inline(never)]
fn time_steps<S: PlantStep>(syst: &mut SYST, solver: &mut S, seed: u32) -> Timing {
    solver.reset();
    let mut stim = Stimulus::new(seed, TIMED);
    let mut sink = 0i16;
    let t = timed(syst, || {
        let x = stim.next_code();
        #[cfg(feature = "inject-panic")]
        let x = core::hint::black_box(Some(x)).unwrap();
        sink ^= step_once(solver, x);
    });
    core::hint::black_box(sink);
    t
}

/// Print the `TICKS` line of one timed run.
fn report(out: &mut Out, profile: &str, name: &str, form: &str, seed: usize, t: Timing, base: Timing) {
    out.str("TICKS").word(profile).word(name).word(form).hex(seed as u32).hex(TIMED);
    out.hex(t.total).hex(t.worst).hex(base.worst).hex(t.sum).hex(base.sum).nl();
}

#[cfg(not(feature = "inject-panic"))]
/// The first node of `net` with a resistor to return (a terminator): what a plant's events
/// switch (a terminator removed, a cable broken at a node).
fn terminated_node(net: &Network) -> Option<(u16, Shunt)> {
    net.junctions.iter().enumerate().find_map(|(j, x)| match x {
        Junction::Node { shunt: s @ Shunt::Resistor { .. } } => Some((u16::try_from(j).ok()?, *s)),
        _ => None,
    })
}

/// Ticks of one event between two samples, and whether the solver took it.
#[cfg(not(feature = "inject-panic"))]
#[inline(never)]
fn time_event(syst: &mut SYST, event: impl FnOnce() -> bool) -> (u32, bool) {
    let t0 = mark(syst);
    let ok = core::hint::black_box(event());
    (elapsed(t0), ok)
}

/// The events a running plant takes, each timed on its own (`EVENT profile plant form op ok
/// ticks baseline`): the terminator removed and put back, the node broken and joined again.
/// A rig applies an event between two samples, so its cost lands on one sample period. On the
/// M4 for every plant; on the Cortex-M0 for its largest plant only ([`events_only`]): its
/// image has no flash for the event code of every plant (7 KB over).
#[cfg(not(feature = "inject-panic"))]
fn report_events<S: PlantStep>(syst: &mut SYST, out: &mut Out, solver: &mut S, what: [&str; 3], net: &Network) {
    let Some((j, shunt)) = terminated_node(net) else { return };
    let (base, _) = time_event(syst, || true);
    let ops: [(&str, Option<Shunt>, bool); 4] = [
        ("open", Some(Shunt::Open), false),
        ("shunt", Some(shunt), false),
        ("break", None, true),
        ("join", None, false),
    ];
    for (op, to, broken) in ops {
        let (t, ok) = match to {
            Some(sh) => time_event(syst, || solver.set_shunt(j, sh).is_ok()),
            None => time_event(syst, || solver.set_broken(j, broken).is_ok()),
        };
        let [profile, name, form] = what;
        out.str("EVENT").word(profile).word(name).word(form).word(op).hex(u32::from(ok)).hex(t).hex(base).nl();
    }
}

/// The events of one plant's generic solver alone (the Cortex-M0, whose flash holds the event
/// code for one plant): loaded fresh, run from rest for a while, then the events.
#[cfg(all(feature = "m0", not(feature = "m4"), not(feature = "inject-panic")))]
#[inline(never)]
pub fn events_only<P: Profile, const PO: usize, const J: usize, const M: usize, const L: usize>(
    syst: &mut SYST,
    out: &mut Out,
    profile: &str,
    name: &str,
    net: &Network<'static>,
) -> bool {
    let mut solver: Solver<P, PO, J, M, L> = fresh();
    if !load(&mut solver, net) {
        out.str("ERROR load").word(profile).word(name).word("source").nl();
        return false;
    }
    let _ = run_hashed(&mut solver, SEEDS[0], SAMPLES);
    report_events(syst, out, &mut solver, [profile, name, "generic"], net);
    true
}

/// `Solver::new()`, out of line: the solver is built through the return slot in the caller's
/// frame, and the temporaries LLVM makes for it (on the M0 a second copy of the loss records,
/// 2.2 KB for p34_narrow) live in this frame only while it runs, not in `run_plant`'s under
/// the image loader's (together they overflowed the M0's 16 KB of RAM).
#[inline(never)]
fn fresh<P: Profile, const PO: usize, const J: usize, const M: usize, const L: usize>() -> Solver<P, PO, J, M, L> {
    Solver::new()
}

/// `Solver::load`, out of line: its temporaries (on the M0 several KB) live in this frame
/// only while loading, not in `run_plant`'s for the whole run.
#[inline(never)]
fn load<P: Profile, const PO: usize, const J: usize, const M: usize, const L: usize>(
    solver: &mut Solver<P, PO, J, M, L>,
    net: &Network<'static>,
) -> bool {
    solver.load(net).is_ok()
}

/// `Solver::load_image`, out of line for the same reason (the decoded network is a local).
#[inline(never)]
fn load_image<P: Profile, const PO: usize, const J: usize, const M: usize, const L: usize>(
    solver: &mut Solver<P, PO, J, M, L>,
    image: &[u8],
) -> bool {
    solver.load_image(image).is_ok()
}

/// Run one plant: hashes from both load paths, then timings. Returns false on a load error.
#[inline(never)]
pub fn run_plant<P: Profile, const PO: usize, const J: usize, const M: usize, const L: usize>(
    syst: &mut SYST,
    out: &mut Out,
    profile: &str,
    name: &str,
    net: &Network<'static>,
    image: &[u8],
) -> bool {
    // On the stack: the frame is given back before the next plant runs.
    let mut solver: Solver<P, PO, J, M, L> = fresh();
    out.str("RAM")
        .word(profile)
        .word(name)
        .word("generic")
        .hex(core::mem::size_of::<Solver<P, PO, J, M, L>>() as u32)
        .nl();
    for from_image in [false, true] {
        let source = if from_image { "image" } else { "source" };
        let ok = if from_image { load_image(&mut solver, image) } else { load(&mut solver, net) };
        if !ok {
            out.str("ERROR load").word(profile).word(name).word(source).nl();
            return false;
        }
        for (i, seed) in SEEDS.iter().enumerate() {
            let h = run_hashed(&mut solver, *seed, SAMPLES);
            out.str("HASH").word(profile).word(name).word(source).hex(i as u32).hex(h).nl();
        }
    }
    out.str("PORTS").word(profile).word(name).hex(solver.port_count() as u32).nl();
    for (i, seed) in SEEDS.iter().enumerate() {
        let t = time_steps(syst, &mut solver, *seed);
        report(out, profile, name, "generic", i, t, time_baseline(syst, *seed));
    }
    #[cfg(all(feature = "m4", not(feature = "inject-panic")))]
    report_events(syst, out, &mut solver, [profile, name, "generic"], net);
    true
}

/// Run the plant-specialised form of one plant (`tidewire compile --rust`'s `specialised::Plant`):
/// hashes for both stimuli (printed with the load path `specialised`, so the host compares them
/// with the generic form's), then timings. Its own frame, so the generic solver's is gone.
#[inline(never)]
pub fn run_specialised<S: PlantStep + Default>(syst: &mut SYST, out: &mut Out, profile: &str, name: &str) -> bool {
    let mut plant = S::default();
    out.str("RAM").word(profile).word(name).word("specialised").hex(core::mem::size_of::<S>() as u32).nl();
    for (i, seed) in SEEDS.iter().enumerate() {
        let h = run_hashed(&mut plant, *seed, SAMPLES);
        out.str("HASH").word(profile).word(name).word("specialised").hex(i as u32).hex(h).nl();
    }
    for (i, seed) in SEEDS.iter().enumerate() {
        let t = time_steps(syst, &mut plant, *seed);
        report(out, profile, name, "specialised", i, t, time_baseline(syst, *seed));
    }
    // No events here: the test plants' specialised forms are built for fixed plants (every
    // node constants, as `tidewire compile --rust` emits a plant without events); declaring
    // a node switchable changes the step the table measures (p85 wide +109 instructions per
    // sample, tried 3 Dec 2026).
    true
}

//! The host core runner: the real fixed-point core run on the host over a compiled plant's drive and events.
//!
//! The solver is the same `tidewire-core` code the rig runs, at a host capacity tier; it
//! lives on a worker thread with a large stack so its fixed arrays never touch the main
//! stack.

use crate::compile::{Compiled, CoreAction, HostDrive, ProfileKind};
use crate::twin::Recording;
use tidewire_core::{Narrow, Profile, Solver, Wide};

/// Host capacity: line ends, junctions, delay storage (waves).
pub const HOST_PORTS: usize = 4096;
pub const HOST_JUNCTIONS: usize = 2048;
pub const HOST_MEMORY: usize = 1 << 21;
/// Loss records (a line's loss filter and fractional delay): one per line end is room for all.
pub const HOST_LOSSES: usize = HOST_PORTS;

/// Why a host run failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum RunError {
    /// The core refused the network.
    #[error("the core refused the compiled network: {0}")]
    Build(tidewire_core::BuildError),
    /// The worker thread could not start or died.
    #[error("host run failed: {0}")]
    Thread(String),
}

/// What the core produced: probe traces (V, A), the drive output codes, line-end waves.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct CoreRun {
    pub recording: Recording,
    /// The drive's output code per sample (source node voltage, or DAC drive at a rig port).
    pub drive_out: Vec<i16>,
    /// The drive's input code per sample.
    pub drive_in: Vec<i16>,
    /// Coefficients the core chose: weight exponent and, per line, its effective impedance.
    pub effective_z: Vec<f64>,
}

/// One sample as the core produced it, for a [`run_core_with`] sink.
pub struct SampleOut<'a> {
    /// Sample index.
    pub n: usize,
    /// Probe values (V or A).
    pub probes: &'a [f64],
    /// The probes as the core's integers (value = raw × [`probe_scales`]).
    pub raw: &'a [i32],
    /// The drive's output and input codes.
    pub drive_out: i16,
    pub drive_in: i16,
    /// Per recorded line, its entering waves at the two ends (V).
    pub line_a: &'a [(f64, f64)],
}

/// Run the core for `samples` samples, recording the line-end waves of `record`, calling
/// `progress(n)` every 4096 samples. Holds the whole run in memory: for long runs use
/// [`run_core_with`], which hands each sample to a sink.
pub fn run_core(
    c: &Compiled,
    samples: usize,
    record: &[u16],
    progress: &(dyn Fn(usize) + Sync),
) -> Result<CoreRun, RunError> {
    let mut out = CoreRun {
        recording: Recording { probes: vec![Vec::with_capacity(samples); c.net.probes.len()], ..Recording::default() },
        ..CoreRun::default()
    };
    out.recording.line_a = vec![Vec::with_capacity(samples); record.len()];
    let mut sink = |s: SampleOut<'_>| -> Result<(), RunError> {
        out.drive_out.push(s.drive_out);
        out.drive_in.push(s.drive_in);
        for (t, v) in out.recording.probes.iter_mut().zip(s.probes) {
            t.push(*v);
        }
        for (t, v) in out.recording.line_a.iter_mut().zip(s.line_a) {
            t.push(*v);
        }
        if s.n.is_multiple_of(4096) {
            progress(s.n);
        }
        Ok(())
    };
    out.effective_z = run_core_with(c, samples, record, &mut sink)?;
    Ok(out)
}

/// Run the core for `samples` samples and hand each sample to `sink` (on the worker
/// thread) as it is computed: memory independent of the run length. A sink error stops the
/// run. Returns the per-line effective impedances the core chose.
pub fn run_core_with(
    c: &Compiled,
    samples: usize,
    record: &[u16],
    sink: &mut (dyn FnMut(SampleOut<'_>) -> Result<(), RunError> + Send),
) -> Result<Vec<f64>, RunError> {
    std::thread::scope(|scope| {
        let h = std::thread::Builder::new()
            .stack_size(64 << 20)
            .spawn_scoped(scope, || match c.profile {
                ProfileKind::Wide => {
                    let mut s = Box::new(Solver::<Wide, HOST_PORTS, HOST_JUNCTIONS, HOST_MEMORY, HOST_LOSSES>::new());
                    drive(&mut s, c, samples, record, sink)
                }
                ProfileKind::Narrow => {
                    let mut s = Box::new(Solver::<Narrow, HOST_PORTS, HOST_JUNCTIONS, HOST_MEMORY, HOST_LOSSES>::new());
                    drive(&mut s, c, samples, record, sink)
                }
            })
            .map_err(|e| RunError::Thread(e.to_string()))?;
        h.join().map_err(|_| RunError::Thread("worker panicked".into()))?
    })
}

/// Per probe, volts (or amperes) per unit of the core's raw probe integer: one wave LSB,
/// divided by the line impedance for a current probe (i = (a − b)/Z0).
pub fn probe_scales(c: &Compiled) -> Vec<f64> {
    let lsb = c.volts_per_lsb();
    c.net
        .probes
        .iter()
        .map(|p| match p.kind {
            tidewire_core::ProbeKind::Current => {
                lsb / (c.net.lines.get(p.line as usize).map_or(1.0, |l| l.z_milliohm as f64 / 1000.0))
            }
            _ => lsb,
        })
        .collect()
}

fn code(volts: f64, vpc: f64) -> i16 {
    (volts / vpc).round().clamp(i16::MIN as f64, i16::MAX as f64) as i16
}

fn drive<P: Profile, const A: usize, const B: usize, const C: usize, const D: usize>(
    s: &mut Solver<P, A, B, C, D>,
    c: &Compiled,
    samples: usize,
    record: &[u16],
    sink: &mut (dyn FnMut(SampleOut<'_>) -> Result<(), RunError> + Send),
) -> Result<Vec<f64>, RunError> {
    s.load(&c.network()).map_err(RunError::Build)?;
    let vpc = c.net.volts_per_code as f64;
    let lsb = c.volts_per_lsb();
    let z: Vec<f64> = c.net.lines.iter().map(|l| l.z_milliohm as f64 / 1000.0).collect();
    let effective_z = (0..c.net.lines.len()).map(|l| s.effective_impedance(l)).collect();
    let mut probes = vec![0.0; c.net.probes.len()];
    let mut raw = vec![0i32; c.net.probes.len()];
    let mut line_a = vec![(0.0, 0.0); record.len()];
    let mut ev = c.events.iter().peekable();
    let mut dac_history: std::collections::VecDeque<i16> = std::collections::VecDeque::new();
    for n in 0..samples {
        while let Some(e) = ev.next_if(|e| e.sample <= n) {
            // The compiler checked these junctions; a refusal would be a compiler bug.
            let _ = match e.action {
                CoreAction::SetShunt(j, sh) => s.set_shunt(j, sh),
                CoreAction::Break(j) => s.set_broken(j, true),
            };
        }
        let input = match &c.host_drive {
            HostDrive::Source { .. } => code(c.host_drive.emf_at(n), vpc),
            HostDrive::Rig { dut_resistance, r_ref, latency, .. } => {
                // The pin: device EMF e behind Rd, and the rig's reference resistor to the DAC,
                // which shows the value the core computed `latency` samples ago:
                // v = (e/Rd + V_dac/R_ref) / (1/Rd + 1/R_ref).
                // Latency 0 means the DAC shows this sample's drive, which the core knows before
                // it reads the pin (the drive depends on older waves only).
                let dac = if *latency == 0 {
                    s.rig_drive()
                } else if dac_history.len() >= *latency {
                    dac_history[dac_history.len() - latency]
                } else {
                    0
                };
                let v_dac = dac as f64 * vpc;
                let e = c.host_drive.emf_at(n);
                let v = (e / dut_resistance + v_dac / r_ref) / (1.0 / dut_resistance + 1.0 / r_ref);
                code(v, vpc)
            }
        };
        let o = s.step(input);
        if matches!(c.host_drive, HostDrive::Rig { .. }) {
            dac_history.push_back(o);
            if dac_history.len() > 128 {
                dac_history.pop_front();
            }
        }
        for (k, slot) in probes.iter_mut().enumerate() {
            raw[k] = s.probe_raw(k);
            let raw = raw[k] as f64 * lsb;
            let v = if c.net.probes[k].kind == tidewire_core::ProbeKind::Current {
                raw / z[c.net.probes[k].line as usize]
            } else {
                raw
            };
            *slot = v;
        }
        for (k, l) in record.iter().enumerate() {
            let (aa, _) = s.line_end_waves(*l as usize, false);
            let (ab, _) = s.line_end_waves(*l as usize, true);
            line_a[k] = (aa as f64 * lsb, ab as f64 * lsb);
        }
        sink(SampleOut { n, probes: &probes, raw: &raw, drive_out: o, drive_in: input, line_a: &line_a })?;
    }
    Ok(effective_z)
}

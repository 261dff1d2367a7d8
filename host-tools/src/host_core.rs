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

/// Run the core for `samples` samples, recording the line-end waves of `record`, calling
/// `progress(n)` every 4096 samples.
pub fn run_core(
    c: &Compiled,
    samples: usize,
    record: &[u16],
    progress: &(dyn Fn(usize) + Sync),
) -> Result<CoreRun, RunError> {
    std::thread::scope(|scope| {
        let h = std::thread::Builder::new()
            .stack_size(64 << 20)
            .spawn_scoped(scope, || match c.profile {
                ProfileKind::Wide => {
                    let mut s = Box::new(Solver::<Wide, HOST_PORTS, HOST_JUNCTIONS, HOST_MEMORY, HOST_PORTS>::new());
                    drive(&mut s, c, samples, record, progress)
                }
                ProfileKind::Narrow => {
                    let mut s = Box::new(Solver::<Narrow, HOST_PORTS, HOST_JUNCTIONS, HOST_MEMORY, HOST_PORTS>::new());
                    drive(&mut s, c, samples, record, progress)
                }
            })
            .map_err(|e| RunError::Thread(e.to_string()))?;
        h.join().map_err(|_| RunError::Thread("worker panicked".into()))?
    })
}

fn code(volts: f64, vpc: f64) -> i16 {
    (volts / vpc).round().clamp(i16::MIN as f64, i16::MAX as f64) as i16
}

fn drive<P: Profile, const A: usize, const B: usize, const C: usize, const D: usize>(
    s: &mut Solver<P, A, B, C, D>,
    c: &Compiled,
    samples: usize,
    record: &[u16],
    progress: &(dyn Fn(usize) + Sync),
) -> Result<CoreRun, RunError> {
    s.load(&c.network()).map_err(RunError::Build)?;
    let vpc = c.net.volts_per_code as f64;
    let lsb = c.volts_per_lsb();
    let z: Vec<f64> = c.net.lines.iter().map(|l| l.z_milliohm as f64 / 1000.0).collect();
    let mut out = CoreRun {
        recording: Recording { probes: vec![Vec::with_capacity(samples); c.net.probes.len()], ..Recording::default() },
        effective_z: (0..c.net.lines.len()).map(|l| s.effective_impedance(l)).collect(),
        ..CoreRun::default()
    };
    out.recording.line_a = vec![Vec::with_capacity(samples); record.len()];
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
        out.drive_out.push(o);
        out.drive_in.push(input);
        for k in 0..c.net.probes.len() {
            let raw = s.probe_raw(k) as f64 * lsb;
            let v = if c.net.probes[k].kind == tidewire_core::ProbeKind::Current {
                raw / z[c.net.probes[k].line as usize]
            } else {
                raw
            };
            out.recording.probes[k].push(v);
        }
        for (k, l) in record.iter().enumerate() {
            let (aa, _) = s.line_end_waves(*l as usize, false);
            let (ab, _) = s.line_end_waves(*l as usize, true);
            out.recording.line_a[k].push((aa as f64 * lsb, ab as f64 * lsb));
        }
        if n % 4096 == 0 {
            progress(n);
        }
    }
    Ok(out)
}

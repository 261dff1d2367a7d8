//! The f64 twin run over a compiled plant: the shared twin (`tidewire_twin`, also used by
//! the core's tests) with the plant's drive, its scheduled events and the recordings the
//! host needs.
//!
//! Comparing the core with the twin isolates arithmetic error (fixed point, coefficient
//! rounding); comparing the twin with the exact reference isolates model error (delay
//! quantization, lumped resistance, bilinear elements). The rig port is modelled ideally:
//! the device under test's EMF behind its resistance, at the port node, with no latency
//! (the core's latency compensation is what the comparison checks).

use crate::compile::{Compiled, CoreAction, HostDrive};
use tidewire_core::Drive;
use tidewire_twin::Twin;

/// Time series of one run: per probe (V or A), and the a-waves at both ends of every line
/// (for the lattice view), if recorded.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Recording {
    pub probes: Vec<Vec<f64>>,
    /// `line_a[line][n] = (a at end A, a at end B)` in volts, when recorded.
    pub line_a: Vec<Vec<(f64, f64)>>,
    /// Largest |wave| seen anywhere, V.
    pub peak_wave: f64,
}

/// Run the twin for `samples` samples; record line-end waves of the lines in `record`.
pub fn run(c: &Compiled, samples: usize, record: &[u16]) -> Recording {
    run_twin(c, Twin::new(&c.net.network()), samples, record)
}

/// The twin over the network as a compile with `CompileOptions::zc_networks` carries it:
/// every enforced Zc(s) network of `c.report.zc_runs` at both ends of its lines
/// (`Compiled::with_zc_networks`, read by the twin from `LineLoss::zc`). The same run as
/// [`run`] when the compile already carries them.
pub fn run_with_zc(c: &Compiled, samples: usize) -> Recording {
    let net = c.with_zc_networks();
    run_twin(c, Twin::new(&net.network()), samples, &[])
}

fn run_twin(c: &Compiled, mut twin: Twin, samples: usize, record: &[u16]) -> Recording {
    if let (Drive::Rig { junction, .. }, HostDrive::Rig { dut_resistance, .. }) = (c.net.drive, &c.host_drive) {
        twin.set_source(junction as usize, 1.0 / dut_resistance);
    }
    let mut out = Recording { probes: vec![Vec::with_capacity(samples); c.net.probes.len()], ..Recording::default() };
    out.line_a = vec![Vec::with_capacity(samples); record.len()];
    let mut ev = c.events.iter().peekable();
    for n in 0..samples {
        while let Some(e) = ev.next_if(|e| e.sample <= n) {
            match e.action {
                CoreAction::SetShunt(j, s) => twin.set_shunt(j as usize, s),
                CoreAction::Break(j) => twin.set_broken(j as usize),
            }
        }
        let values = twin.step(c.host_drive.emf_at(n));
        for (trace, v) in out.probes.iter_mut().zip(values) {
            trace.push(*v);
        }
        for (k, l) in record.iter().enumerate() {
            out.line_a[k].push(twin.line_a(*l as usize));
        }
    }
    out.peak_wave = twin.peak_wave;
    out
}

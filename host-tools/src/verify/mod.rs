//! `tidewire verify`: how close the fixed-point core comes to the physics, for one plant.
//!
//! Three runs over the plant's own drive: the core (fixed point, as on the rig), the f64
//! twin (same network, ideal arithmetic) and the exact reference (telegrapher's equations in
//! the frequency domain). Core − exact is the total error; it splits into model error
//! (twin − exact: delay quantization, lumping, bilinear elements) and arithmetic error
//! (core − twin). Each figure is judged against the plant's tolerances.
//!
//! Normalization: voltage probes against the drive step (the drive's peak EMF); current
//! probes against the largest exact current of that probe. The exact reference does not
//! model scheduled events, so for plants with events the core − exact figures cover the
//! samples before the first event and the core − twin figures cover the whole run.

pub mod lattice;
pub mod metrics;

use crate::compile::Compiled;
use crate::host_core::{run_core, CoreRun};
use crate::plant::{Plant, PlantError, ProbeKind};
use crate::reference::{exact_response, ExactOptions};
use crate::twin;

/// Figures of one probe.
#[derive(Debug, Clone, PartialEq)]
pub struct ProbeFigures {
    pub name: String,
    pub unit: &'static str,
    /// Normalization of the % figures (V for voltages, A for currents).
    pub norm: f64,
    pub max_error: f64,
    pub rms_error: f64,
    /// core − twin, largest (arithmetic error).
    pub arithmetic_error: f64,
    /// twin − exact, largest (model error).
    pub model_error: f64,
    /// First-edge arrival (samples) of the core and of the exact reference.
    pub arrival_core: Option<f64>,
    pub arrival_exact: Option<f64>,
    pub final_core: f64,
    /// DC operating point (voltages) or the exact final value (currents).
    pub final_expected: f64,
    /// Settling to 1 % and 5 % of the norm, seconds after the drive's edge.
    pub settle_1: Option<f64>,
    pub settle_5: Option<f64>,
    /// Peak overshoot and undershoot, fractions of the norm.
    pub overshoot: f64,
    pub undershoot: f64,
    pub pass_max: bool,
    pub pass_rms: bool,
    pub pass_final: bool,
    pub pass_arrival: bool,
}

impl ProbeFigures {
    /// Every judged figure within tolerance.
    pub fn pass(&self) -> bool {
        self.pass_max && self.pass_rms && self.pass_final && self.pass_arrival
    }
}

/// All traces of a verification run, for plots and CSV.
#[derive(Debug, Clone, PartialEq)]
pub struct Traces {
    pub core: CoreRun,
    pub twin: twin::Recording,
    pub exact: Vec<Vec<f64>>,
    pub dt: f64,
    /// Samples compared against the exact reference.
    pub exact_len: usize,
}

/// The outcome of `verify`.
#[derive(Debug, Clone, PartialEq)]
pub struct Verification {
    pub probes: Vec<ProbeFigures>,
    pub step: f64,
    pub samples: usize,
    pub exact_samples: usize,
    pub wrap_bound: f64,
    pub tolerances: crate::plant::Tolerances,
}

impl Verification {
    pub fn pass(&self) -> bool {
        self.probes.iter().all(|p| p.pass())
    }
}

fn located(file: &str, e: impl std::fmt::Display) -> PlantError {
    PlantError {
        file: file.into(),
        line: 0,
        column: 0,
        field: String::new(),
        message: e.to_string(),
        hint: String::new(),
    }
}

/// Run the three models and judge the figures. `record` lists core lines whose end waves
/// are kept for the lattice view.
pub fn verify(
    plant: &Plant,
    file: &str,
    c: &Compiled,
    record: &[u16],
    progress: &(dyn Fn(usize) + Sync),
) -> Result<(Verification, Traces), PlantError> {
    let n = c.samples;
    let core = run_core(c, n, record, progress).map_err(|e| located(file, e))?;
    let tw = twin::run(c, n, record);
    let exact_len = c.events.first().map_or(n, |e| e.sample.min(n)).max(1);
    let opts = ExactOptions { samples: exact_len, ..ExactOptions::for_plant(plant) };
    let ex = exact_response(plant, &opts).map_err(|e| located(file, e))?;
    let exact: Vec<Vec<f64>> = ex.traces.iter().map(|t| t.values.clone()).collect();
    let step = c.host_drive.emf().iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let e_final = c.host_drive.emf().last().copied().unwrap_or(0.0);
    let dc = crate::reference::dc_operating_point(plant, e_final).ok();
    let edge = c.host_drive.emf().iter().position(|x| x.abs() > 0.0).unwrap_or(0);
    let tol = plant.tolerances;
    let mut probes = vec![];
    for (k, p) in plant.probes.iter().enumerate() {
        let cr = &core.recording.probes[k];
        let tr = &tw.probes[k];
        let xr = &exact[k];
        let is_v = matches!(p.kind, ProbeKind::Voltage(_));
        let norm = if is_v { step } else { xr.iter().fold(0.0f64, |m, v| m.max(v.abs())).max(1e-12) };
        let (max_error, rms_error) = metrics::errors(&cr[..exact_len.min(cr.len())], xr);
        let (arithmetic_error, _) = metrics::errors(cr, tr);
        let (model_error, _) = metrics::errors(&tr[..exact_len.min(tr.len())], xr);
        let level = 0.05 * xr.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let arrival_exact = metrics::arrival(xr, level);
        let arrival_core = metrics::arrival(&cr[..exact_len.min(cr.len())], level);
        let final_core = cr.last().copied().unwrap_or(0.0);
        let final_expected = match (p.kind, &dc, c.events.is_empty()) {
            (ProbeKind::Voltage(node), Some(dc), true) => dc[node],
            (_, _, true) => xr.last().copied().unwrap_or(0.0),
            // With events the plant's final state is the twin's.
            _ => tr.last().copied().unwrap_or(0.0),
        };
        let s = |band: f64| metrics::settling(cr, final_expected, band * norm, edge).map(|k| k as f64 * c.dt);
        let (overshoot, undershoot) = metrics::overshoot(cr, final_expected, norm);
        let pass_arrival = match (arrival_core, arrival_exact) {
            (Some(a), Some(b)) => (a - b).abs() <= tol.arrival_samples,
            (None, None) => true,
            _ => false,
        };
        probes.push(ProbeFigures {
            name: p.name.clone(),
            unit: if is_v { "V" } else { "A" },
            norm,
            max_error,
            rms_error,
            arithmetic_error,
            model_error,
            arrival_core,
            arrival_exact,
            final_core,
            final_expected,
            settle_1: s(0.01),
            settle_5: s(0.05),
            overshoot,
            undershoot,
            pass_max: max_error <= tol.max_error * norm,
            pass_rms: rms_error <= tol.rms_error * norm,
            pass_final: (final_core - final_expected).abs() <= tol.final_error * norm,
            pass_arrival,
        });
    }
    let v =
        Verification { probes, step, samples: n, exact_samples: exact_len, wrap_bound: ex.wrap_bound, tolerances: tol };
    Ok((v, Traces { core, twin: tw, exact, dt: c.dt, exact_len }))
}

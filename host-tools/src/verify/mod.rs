//! `tidewire verify`: how close the fixed-point core comes to the physics, for one plant.
//!
//! Three runs over the plant's own drive: the core (fixed point, as on the rig), the f64
//! twin (same network, ideal arithmetic) and the exact reference (telegrapher's equations in
//! the frequency domain). Core − exact is the total error; it splits into model error
//! (twin − exact: delay quantization, lumping, bilinear elements) and arithmetic error
//! (core − twin). Each figure is judged against the plant's tolerances.
//!
//! Normalization: voltage probes against the drive step (the drive's peak EMF); current
//! probes against the largest exact current of that probe. The exact reference follows
//! scheduled events (compensation method, see `reference`), so every figure covers the
//! whole run, and each event gets its own figures over the samples until the next one.
//!
//! Final value: checked only where the drive settles to a DC value. A step or a pulse is
//! compared with the DC operating point of the plant as it is after its events (current
//! probes: with the exact reference's last sample); where the exact reference itself is
//! still farther than the final-value tolerance from the DC point at the end of the run,
//! no final-value judgement (`FinalCheck::Unsettled`: the DC point cannot be checked in so
//! short a run, and the max and RMS errors already judge the end). A PWM drive never settles: no final-value check (the max and
//! RMS errors already compare every period with the exact reference), and the result says
//! so. A drive from samples is compared with the exact reference's last sample.

pub mod hold;
pub mod lattice;
pub mod metrics;

use crate::compile::Compiled;
use crate::host_core::{run_core, CoreRun};
use crate::plant::{EventAction, Waveform};
use crate::plant::{Plant, PlantError, ProbeKind};
use crate::reference::{exact_response, ExactOptions};
use crate::twin;
use serde::Serialize;

/// What the final value of a probe was compared with.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FinalCheck {
    /// The DC operating point of the plant (after its events) at the drive's final EMF;
    /// for current probes, the exact reference's last sample.
    DcPoint,
    /// The exact reference at the last sample (a drive from samples).
    ExactEnd,
    /// Not checked: the drive is periodic (PWM) and never settles to a DC value.
    NonePeriodic,
    /// The f64 twin at the last sample: the exact reference stops at the first event (an
    /// event it cannot follow).
    TwinEnd,
    /// Not judged: the exact reference has not reached the DC point within the final-value
    /// tolerance by the end of the run (a skin-effect tail outlasts a short run), so the DC
    /// point cannot be checked; `final_expected` is the exact reference's last sample, which
    /// the max and RMS errors already judge.
    Unsettled,
}

impl FinalCheck {
    /// Whether the final value is judged at all (not for a periodic drive, nor where the
    /// exact reference has not settled).
    pub fn judged(self) -> bool {
        !matches!(self, FinalCheck::NonePeriodic | FinalCheck::Unsettled)
    }

    /// The rule for a plant: see the module notes.
    pub fn for_plant(plant: &Plant) -> FinalCheck {
        let drive = match &plant.drive {
            crate::plant::Drive::Source { emf, .. } => emf,
            crate::plant::Drive::Rig { stimulus, .. } => stimulus,
        };
        match drive {
            Waveform::Pwm { .. } => FinalCheck::NonePeriodic,
            Waveform::Samples(_) => FinalCheck::ExactEnd,
            Waveform::Step { .. } | Waveform::Pulse { .. } => FinalCheck::DcPoint,
        }
    }
}

/// Core − exact figures of one probe over the samples after one event.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EventProbeFigures {
    pub name: String,
    pub unit: &'static str,
    pub max_error: f64,
    pub rms_error: f64,
    pub pass_max: bool,
    pub pass_rms: bool,
}

/// One scheduled event and the comparison after it (until the next event or the end).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EventFigures {
    /// Time of the event, s.
    pub at: f64,
    /// First sample computed after the change.
    pub sample: usize,
    /// Samples compared (from `sample` to the next event or the end of the run).
    pub compared: usize,
    /// What changes, in words.
    pub action: String,
    pub probes: Vec<EventProbeFigures>,
}

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
    /// The twin over the network with the compiler's enforced Zc(s) networks
    /// (`twin::run_with_zc`) − exact, largest: the model error of what a compile with
    /// `CompileOptions::zc_networks` carries (`docs/zc-model.md`). `None` for a plant in
    /// which no cable run gets a network, or whose compile already carries them (the default:
    /// then `model_error` is that figure).
    pub zc_model_error: Option<f64>,
    /// First-edge arrival (samples) of the core and of the exact reference.
    pub arrival_core: Option<f64>,
    pub arrival_exact: Option<f64>,
    pub final_core: f64,
    /// What `final_expected` is (and whether the final value is checked at all).
    pub final_check: FinalCheck,
    /// DC operating point (voltages) or the exact final value (currents, events, samples);
    /// the exact final value, for information, when not checked.
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
    /// One entry per scheduled event inside the run, in time order.
    pub events: Vec<EventFigures>,
    /// The working-point check ([`hold`]), where the caller ran it ([`Verification::hold_check`]).
    pub hold: Option<hold::HoldFigures>,
}

impl Verification {
    pub fn pass(&self) -> bool {
        self.probes.iter().all(|p| p.pass())
            && self.events.iter().all(|e| e.probes.iter().all(|p| p.pass_max && p.pass_rms))
            && self.hold.as_ref().is_none_or(|h| h.pass())
    }

    /// Run the working-point check ([`hold`]) on `c` and keep its figures. Separate from
    /// [`verify`] because it runs the core for up to 2^20 more samples: `tidewire verify` and
    /// the demo run it, a sample-rate search does not.
    pub fn hold_check(&mut self, plant: &Plant, file: &str, c: &Compiled) -> Result<(), PlantError> {
        self.hold =
            hold::check(c, plant.drive.settles_to_dc(), &self.tolerances, self.step).map_err(|e| located(file, e))?;
        Ok(())
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
    // Networks the compile left out (option off): the twin with them, to compare.
    let has_zc = c
        .report
        .zc_runs
        .iter()
        .any(|r| !r.compiled && matches!(r.decision, crate::compile::zc_enforce::Decision::Network(_)));
    let tw_zc = has_zc.then(|| twin::run_with_zc(c, n));
    let opts = ExactOptions { samples: n.max(1), ..ExactOptions::for_plant(plant) };
    // An event the exact reference cannot follow (two breaks of one segment): compare with
    // the physics up to the first event only, and say so in the verdict (exact_samples).
    let (ex, exact_len) = match exact_response(plant, &opts) {
        Err(crate::reference::ReferenceError::Unsupported(_)) => {
            let first = c.events.first().map_or(n, |e| e.sample.min(n)).max(1);
            let mut before = plant.clone();
            before.events.clear();
            let ex = exact_response(&before, &ExactOptions { samples: first, ..opts }).map_err(|e| located(file, e))?;
            (ex, first)
        }
        r => (r.map_err(|e| located(file, e))?, n.max(1)),
    };
    let exact: Vec<Vec<f64>> = ex.traces.iter().map(|t| t.values.clone()).collect();
    let step = c.host_drive.emf().iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let e_final = c.host_drive.emf().last().copied().unwrap_or(0.0);
    let dc = crate::reference::dc_operating_point_after_events(plant, e_final, n).ok();
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
        let zc_model_error =
            tw_zc.as_ref().map(|z| metrics::errors(&z.probes[k][..exact_len.min(z.probes[k].len())], xr).0);
        let level = 0.05 * xr.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let arrival_exact = metrics::arrival(xr, level);
        let arrival_core = metrics::arrival(&cr[..exact_len.min(cr.len())], level);
        let final_core = cr.last().copied().unwrap_or(0.0);
        let exact_end = xr.last().copied().unwrap_or(0.0);
        let final_check = match FinalCheck::for_plant(plant) {
            FinalCheck::NonePeriodic => FinalCheck::NonePeriodic,
            _ if exact_len < n => FinalCheck::TwinEnd,
            FinalCheck::DcPoint => match (p.kind, &dc) {
                (ProbeKind::Voltage(node), Some(dc)) if (exact_end - dc[node]).abs() > tol.final_error * norm => {
                    FinalCheck::Unsettled
                }
                _ => FinalCheck::DcPoint,
            },
            rule => rule,
        };
        let final_expected = match (p.kind, &dc, final_check) {
            (_, _, FinalCheck::TwinEnd) => tr.last().copied().unwrap_or(0.0),
            (ProbeKind::Voltage(node), Some(dc), FinalCheck::DcPoint) => dc[node],
            _ => exact_end,
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
            zc_model_error,
            arrival_core,
            arrival_exact,
            final_core,
            final_check,
            final_expected,
            settle_1: s(0.01),
            settle_5: s(0.05),
            overshoot,
            undershoot,
            pass_max: max_error <= tol.max_error * norm,
            pass_rms: rms_error <= tol.rms_error * norm,
            pass_final: !final_check.judged() || (final_core - final_expected).abs() <= tol.final_error * norm,
            pass_arrival,
        });
    }
    let events =
        if exact_len >= n { event_figures(plant, c, &core.recording.probes, &exact, &probes) } else { Vec::new() };
    let v = Verification {
        probes,
        step,
        samples: n,
        exact_samples: exact_len,
        wrap_bound: ex.wrap_bound,
        tolerances: tol,
        events,
        hold: None,
    };
    Ok((v, Traces { core, twin: tw, exact, dt: c.dt, exact_len }))
}

/// Core − exact figures after each event inside the run (until the next one or the end).
fn event_figures(
    plant: &Plant,
    c: &Compiled,
    core: &[Vec<f64>],
    exact: &[Vec<f64>],
    probes: &[ProbeFigures],
) -> Vec<EventFigures> {
    let n = c.samples;
    let mut evs: Vec<(usize, &crate::plant::Event)> = plant
        .events
        .iter()
        .filter_map(|e| {
            let k = (e.at * plant.sample_rate).round();
            (k.is_finite() && k >= 0.0 && k < n as f64).then_some((k as usize, e))
        })
        .collect();
    evs.sort_by_key(|e| e.0);
    let tol = plant.tolerances;
    (0..evs.len())
        .map(|i| {
            let (k, e) = evs[i];
            let end = evs.get(i + 1).map_or(n, |x| x.0).max(k);
            let action = match e.action {
                EventAction::SetLoad(node, load) => {
                    format!("load of node '{}' becomes {load:?}", plant.nodes.get(node).map_or("?", |x| &x.name))
                }
                EventAction::Break { segment, distance } => format!(
                    "segment '{}' breaks {} from its from end",
                    plant.segments.get(segment).map_or("?", |x| &x.name),
                    crate::si::format(distance, "m")
                ),
            };
            let probes = probes
                .iter()
                .enumerate()
                .map(|(p, f)| {
                    let (a, b) = (&core[p], &exact[p]);
                    let (max_error, rms_error) =
                        metrics::errors(&a[k.min(a.len())..end.min(a.len())], &b[k.min(b.len())..end.min(b.len())]);
                    EventProbeFigures {
                        name: f.name.clone(),
                        unit: f.unit,
                        max_error,
                        rms_error,
                        pass_max: max_error <= tol.max_error * f.norm,
                        pass_rms: rms_error <= tol.rms_error * f.norm,
                    }
                })
                .collect();
            EventFigures { at: e.at, sample: k, compared: end - k, action, probes }
        })
        .collect()
}

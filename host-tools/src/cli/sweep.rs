//! `tidewire sweep`: the command around `crate::analysis::sweep` (arguments, table, SVG).
use super::{io_failure, Failure};
use crate::analysis::sweep::{rise_of, sweep, Parameter, SweepError};
use crate::compile::ProfileKind;
use crate::plant::units::{parse_quantity, UnitKind};
use crate::plant::{load_plant, Plant};
use crate::plot::{write_sweep, SweepPlot};
use std::path::Path;

/// Segments shorter than this many samples one way are "short" to a length sweep's note
/// (their model is lumped or a fractional delay of a few samples) [practice].
const SHORT_SAMPLES: f64 = 3.0;

/// Most points of one sweep (each is a whole compile, core run and exact run).
pub const MAX_STEPS: usize = 1000;

/// What to vary: exactly one of a segment (length), a node (load) or a cable (impedance).
pub struct Target {
    pub segment: Option<String>,
    pub node: Option<String>,
    pub cable: Option<String>,
}

fn bad(m: String) -> Failure {
    Failure { code: 2, message: format!("error: {m}") }
}

fn find<'a>(
    file: &str,
    kind: &str,
    want: &str,
    names: impl Iterator<Item = &'a str> + Clone,
) -> Result<usize, Failure> {
    names.clone().position(|n| n == want).ok_or_else(|| {
        bad(format!("{file}: no {kind} named \"{want}\" ({kind}s: {})", names.collect::<Vec<_>>().join(", ")))
    })
}

fn parameter(plant: &Plant, file: &str, t: &Target) -> Result<(Parameter, String), Failure> {
    match (&t.segment, &t.node, &t.cable) {
        (Some(s), None, None) => Ok((
            Parameter::Length(find(file, "segment", s, plant.segments.iter().map(|x| x.name.as_str()))?),
            format!("length of \"{s}\""),
        )),
        (None, Some(n), None) => Ok((
            Parameter::LoadResistance(find(file, "node", n, plant.nodes.iter().map(|x| x.name.as_str()))?),
            format!("load resistance of node \"{n}\""),
        )),
        (None, None, Some(c)) => Ok((
            Parameter::CableImpedance(find(file, "cable", c, plant.cables.iter().map(|x| x.name.as_str()))?),
            format!("impedance of cable \"{c}\""),
        )),
        _ => Err(bad("give exactly one of --segment (length), --node (load) or --cable (impedance)".into())),
    }
}

/// A swept value: a quantity with its unit ("12 m", "1 kohm"); a bare number is read in the
/// base unit (m or ohm), as earlier versions took it.
fn value(text: &str, kind: UnitKind, option: &str) -> Result<f64, Failure> {
    parse_quantity(text, kind)
        .or_else(|e| text.trim().parse::<f64>().map_err(|_| e))
        .map_err(|e| bad(format!("--{option} \"{text}\": {e}")))
}

#[allow(clippy::too_many_arguments)]
pub(super) fn run(
    path: &Path,
    target: &Target,
    probe: &str,
    from: &str,
    to: &str,
    steps: usize,
    svg: Option<&Path>,
    profile: ProfileKind,
) -> Result<i32, Failure> {
    let plant = load_plant(path)?;
    let file = path.display().to_string();
    let (param, what) = parameter(&plant, &file, target)?;
    let pi = find(&file, "probe", probe, plant.probes.iter().map(|p| p.name.as_str()))?;
    let kind = if param.unit() == "m" { UnitKind::Length } else { UnitKind::Resistance };
    let (from, to) = (value(from, kind, "from")?, value(to, kind, "to")?);
    if !(from.is_finite() && to.is_finite() && from > 0.0 && to > from) {
        return Err(bad(format!("--from must be above zero and --to above it (got {from} and {to})")));
    }
    if !(2..=MAX_STEPS).contains(&steps) {
        return Err(bad(format!("--steps must be between 2 and {MAX_STEPS}, got {steps}")));
    }
    let values: Vec<f64> = (0..steps).map(|k| from * (to / from).powf(k as f64 / (steps - 1) as f64)).collect();
    let pts = sweep(&plant, &file, param, pi, &values, profile).map_err(|e| match e {
        SweepError::Plant(e) => Failure::from(e),
        e => bad(e.to_string()),
    })?;
    // The critical length v·t_rise/2 means something only for a length sweep of a drive
    // with a finite rise time, and is drawn only inside the swept range.
    let lc = match param {
        Parameter::Length(k) => {
            let v = plant.cables[plant.segments[k].cable].velocity;
            rise_of(&plant).filter(|r| *r > 0.0).map(|r| (v * r / 2.0, v))
        }
        _ => None,
    };
    let unit = param.unit();
    println!("== sweep: {} ==  peak of \"{probe}\" against the {what}", plant.name);
    if let Some((lc, v)) = lc {
        println!("   critical length l_c = v·t_rise/2 = {lc:.2} m (v = {v:.3e} m/s)");
    }
    println!(
        "   tolerances at each point: max error {:.2} %, rms {:.2} % of the drive step",
        100.0 * plant.tolerances.max_error,
        100.0 * plant.tolerances.rms_error
    );
    println!("   {:>10}  {:>12}  {:>12}  {:>10}  verdict", "value", "core / step", "exact / step", "max error");
    for p in &pts {
        println!(
            "   {:>8.2} {unit}  {:>12.3}  {:>12.3}  {:>8.3} %  {}",
            p.value,
            p.peak_ratio,
            p.exact_peak_ratio,
            100.0 * p.max_error,
            if p.pass { "ok" } else { "FAIL" }
        );
    }
    let fails = pts.iter().filter(|p| !p.pass).count();
    if fails > 0 {
        println!("   outside the plant's tolerances: {fails} of {} points (ringed in the picture)", pts.len());
        // A length sweep's failures are mostly the short end, where the segment is a few
        // samples long and its model (lumped sections, a fractional delay) carries the error:
        // say how long the failing segments are in samples, and what resolves them.
        if let (Parameter::Length(_), Some((_, v))) = (param, lc) {
            let longest = pts.iter().filter(|p| !p.pass).map(|p| p.value / v * plant.sample_rate).fold(0.0, f64::max);
            if longest < SHORT_SAMPLES {
                println!(
                    "   every failing point is a segment of at most {longest:.1} samples one way at {}: the short-line model \
                     (lumped sections, fractional delay) dominates there; a higher plant.sample_rate resolves it",
                    crate::si::format(plant.sample_rate, "Hz")
                );
            }
        }
    }
    if let Some(out) = svg {
        let core: Vec<(f64, f64)> = pts.iter().map(|p| (p.value, p.peak_ratio)).collect();
        let exact: Vec<(f64, f64)> = pts.iter().map(|p| (p.value, p.exact_peak_ratio)).collect();
        let failed: Vec<(f64, f64)> = pts.iter().filter(|p| !p.pass).map(|p| (p.value, p.peak_ratio)).collect();
        let title = format!("{}: peak at \"{probe}\"", plant.name);
        let x_label = format!("{what} ({unit})");
        let mut x_markers = vec![];
        if let Some((lc, _)) = lc.filter(|(lc, _)| (from..=to).contains(lc)) {
            x_markers.push((lc, "critical length v·t_rise/2"));
        }
        let plot = SweepPlot {
            title: &title,
            x_label: &x_label,
            y_label: "peak / drive step",
            series: vec![("tidewire core", &core), ("exact reference", &exact)],
            x_markers,
            y_markers: vec![(2.0, "2 × step"), (1.0, "1 × step")],
            log_x: true,
            failed: ("fails the plant's tolerances", failed),
        };
        write_sweep(out, &plot).map_err(|e| io_failure(out, e))?;
        println!("wrote {}", out.display());
    }
    Ok(0)
}

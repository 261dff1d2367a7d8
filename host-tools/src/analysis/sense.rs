//! Sense checks: a plant that compiles can still ask for something the emulation cannot
//! give. Each check here is an error or a warning that says why, with a hint naming a
//! value that would pass.
use super::Analysis;
use crate::compile::{err, Compiled};
use crate::host_core::{HOST_JUNCTIONS, HOST_MEMORY, HOST_PORTS};
use crate::plant::{Plant, PlantError, Span};
use crate::si;

/// A segment whose delay is rounded by more than this fraction gets a warning: rounding
/// moves an edge by up to half a sample, so 10 % needs at least 5 samples of delay.
pub const TIMING_WARNING: f64 = 0.10;

/// Drives above this peak get a units warning: no cable plant insulates 1 MV [practice].
pub const IMPLAUSIBLE_VOLTS: f64 = 1e6;

/// The host runner's capacity, checked before anything is sized by the plant (the f64 twin
/// allocates the delay storage the plant asks for). The error is located at the segment
/// that needs the most storage.
pub(super) fn capacity(c: &Compiled, plant: &Plant, file: &str) -> Result<(), PlantError> {
    let r = &c.report;
    let (ports, juncs, mem) = (r.ports, r.junctions, r.memory_waves);
    if ports <= HOST_PORTS && juncs <= HOST_JUNCTIONS && mem <= HOST_MEMORY {
        return Ok(());
    }
    let fs = 1.0 / c.dt;
    // Delays are counted from the exact one-way delays: a compiled delay saturates at the
    // largest u32, which would understate the storage a huge segment needs. Each line
    // stores both directions: storage = 2·Σ delay (plus what the compiler adds elsewhere).
    let exact: Vec<f64> = r.segments.iter().map(|t| t.tau / c.dt).collect();
    let compiled: f64 = r.segments.iter().map(|t| t.delay as f64).sum();
    let mem_true = mem as f64 - 2.0 * compiled + 2.0 * exact.iter().sum::<f64>();
    let longest = exact.iter().enumerate().max_by(|x, y| x.1.total_cmp(y.1));
    if mem_true > HOST_MEMORY as f64 || mem > HOST_MEMORY {
        let fs_max = fs * HOST_MEMORY as f64 / mem_true.max(mem as f64);
        let Some((i, &d)) = longest else {
            return Err(err(
                file,
                Span::default(),
                "plant.sample_rate",
                format!("the plant needs {mem} waves of delay storage; the host runner holds at most {HOST_MEMORY}"),
                format!("lower plant.sample_rate to at most \"{}\"", si::at_most(fs_max, "Hz")),
            ));
        };
        let t = &r.segments[i];
        let others = mem_true - 2.0 * d;
        let room = (HOST_MEMORY as f64 - others) / 2.0;
        let length_hint = if room >= 1.0 {
            format!("shorten segment {} to at most \"{}\", or ", t.name, si::at_most(t.length * room / d, "m"))
        } else {
            String::new()
        };
        return Err(err(
            file,
            plant.segments.get(i).map_or(Span::default(), |s| s.span),
            format!("segment[{}].length", t.name),
            format!(
                "the plant needs {mem_true:.3e} waves of delay storage at this sample rate (segment {} alone is {d:.3e} samples long); the host runner holds at most {HOST_MEMORY}",
                t.name
            ),
            format!("{length_hint}lower plant.sample_rate to at most \"{}\"", si::at_most(fs_max, "Hz")),
        ));
    }
    // Line ends and junctions come from every segment and node: no one place to point at.
    let (span, field) = (Span::default(), "segment");
    Err(err(
        file,
        span,
        field,
        format!(
            "the plant needs {ports} line ends and {juncs} junctions; the host runner holds at most {HOST_PORTS} and {HOST_JUNCTIONS}"
        ),
        "use fewer or longer segments (each lumped section adds line ends), or lower plant.sample_rate".to_string(),
    ))
}

/// Checks that need the fixed-point scale: the tolerances against one I/O code, a drive
/// beyond any plant, segments whose delay rounding is large.
pub(super) fn after_scale(c: &Compiled, plant: &Plant, file: &str, a: &mut Analysis) -> Result<(), PlantError> {
    let t = &plant.tolerances;
    let vpc = c.net.volts_per_code as f64;
    let step = a.peak_emf;
    // The core reads and writes whole I/O codes: a voltage tolerance finer than one code
    // cannot be met by the I/O, whatever the emulation does.
    let finest = [("max_error", t.max_error), ("rms_error", t.rms_error), ("final_error", t.final_error)]
        .into_iter()
        .filter(|(_, f)| *f > 0.0)
        .min_by(|x, y| x.1.total_cmp(&y.1));
    if let Some((name, frac)) = finest {
        if frac * step < vpc {
            return Err(err(
                file,
                Span::default(),
                format!("verify.{name}"),
                format!(
                    "{name} = {} % of the {} drive is {}, finer than one I/O code ({})",
                    100.0 * frac,
                    si::format(step, "V"),
                    si::format(frac * step, "V"),
                    si::format(vpc, "V")
                ),
                format!("write {name} = \"{}\" or more", format_percent_up(vpc / step)),
            ));
        }
    }
    if a.peak_emf > IMPLAUSIBLE_VOLTS {
        a.warnings.push(format!(
            "the drive reaches {} (one I/O code = {}), beyond what any cable plant insulates: check the drive's unit; a drive of at most {} passes without this warning",
            si::format(a.peak_emf, "V"),
            si::format(vpc, "V"),
            si::format(IMPLAUSIBLE_VOLTS, "V"),
        ));
    }
    // Lumped segments have no line to carry a resistance or a delay to round: their model
    // error is in the report instead.
    for s in c.report.segments.iter().filter(|s| s.model == crate::compile::SegmentModel::DelayLine) {
        if let Some(why) = s.r_dropped {
            a.warnings.push(format!(
                "segment {}: its conductor resistance {} is left out of the model ({why}), so DC levels along it are off by up to that resistance; {}",
                s.name,
                si::format(s.r_total, "ohm"),
                if why == crate::compile::DROPPED_ONE_SAMPLE {
                    format!(
                        "raise plant.sample_rate to at least \"{}\" to give it two samples",
                        si::at_least(1.5 / s.tau, "Hz")
                    )
                } else if why == crate::compile::DROPPED_BELOW_CORE {
                    "it is below what the core holds (a longer segment carries it)".to_string()
                } else {
                    "check the cable's resistance per metre and the segment's length".to_string()
                }
            ));
        }
        // Only where a delay is still rounded: a delay line with no fraction (shorter than
        // `MIN_FRACTIONAL_DELAY`, or at a rig port).
        if s.fraction.is_some() {
            continue;
        }
        let rel = s.error_s / s.tau;
        if rel.abs() > TIMING_WARNING {
            a.warnings.push(format!(
                "segment {}: its delay {} is rounded to {} sample(s), a timing error of {:+.1} %; raise plant.sample_rate to at least \"{}\" for an error within {:.0} %",
                s.name,
                si::format(s.tau, "s"),
                s.delay,
                100.0 * rel,
                si::at_least(0.5 / (TIMING_WARNING * s.tau), "Hz"),
                100.0 * TIMING_WARNING
            ));
        }
    }
    Ok(())
}

/// A fraction as a percentage rounded up to two significant figures ("0.0034 %").
fn format_percent_up(f: f64) -> String {
    let p = 100.0 * f;
    let decade = p.log10().floor() as i32;
    let step = 10f64.powi(decade - 1);
    let r = (p / step).ceil() * step;
    let decimals = (1 - decade).max(0) as usize;
    format!("{r:.decimals$} %")
}

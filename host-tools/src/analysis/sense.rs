//! Sense checks: a plant that compiles can still ask for something the emulation cannot
//! give. Each check here is an error or a warning that says why, with a hint naming a
//! value that would pass.
use super::Analysis;
use crate::compile::{err, lay_out, Compiled, ProfileKind};
use crate::host_core::{HOST_JUNCTIONS, HOST_LOSSES, HOST_MEMORY, HOST_PORTS};
use crate::plant::units::{parse_quantity, UnitKind};
use crate::plant::{Plant, PlantError, Span};
use crate::si;

/// A segment whose delay is rounded by more than this fraction gets a warning: rounding
/// moves an edge by up to half a sample, so 10 % needs at least 5 samples of delay.
pub const TIMING_WARNING: f64 = 0.10;

/// Drives above this peak get a units warning: no cable plant insulates 1 MV [practice].
pub const IMPLAUSIBLE_VOLTS: f64 = 1e6;

/// Limits before work: a plant with lossy cables is laid out without its loss fits (the
/// costly part of compiling it) and checked against the host runner's capacity, so that a
/// plant too big for the runner is refused in the time of the layout, not after minutes of
/// fits. A plant without loss has nothing costly to skip: `compile` sizes it.
pub fn before_fits(plant: &Plant, file: &str, profile: ProfileKind) -> Result<(), PlantError> {
    if plant.cables.iter().all(|c| c.loss.is_none()) {
        return Ok(());
    }
    fits_host_runner(plant, file, profile)
}

/// The plant laid out without loss fits and checked against the host runner's capacity:
/// for a caller about to run many plants (a sweep), a refusal before any of them runs.
pub fn fits_host_runner(plant: &Plant, file: &str, profile: ProfileKind) -> Result<(), PlantError> {
    let laid = lay_out(plant, file, profile)?;
    // The layout leaves out the whole samples a lossy line gains for its dispersion (they
    // only add storage) but also the sub-sample shift that dispersion gives a segment's
    // fraction, at most one sample per direction of a lossy line: that much is allowed for
    // here, and the check after the fits is exact.
    let slack = 2 * laid.net.losses.len();
    capacity_with(&laid, plant, file, slack)
}

/// The host runner's capacity, checked before anything is sized by the plant (the f64 twin
/// allocates the delay storage the plant asks for). The error is located at the segment
/// that needs the most storage, or at the segment where line ends or junctions run out.
pub(super) fn capacity(c: &Compiled, plant: &Plant, file: &str) -> Result<(), PlantError> {
    capacity_with(c, plant, file, 0)
}

/// Whether a network of these sizes fits the host runner, `slack` waves of storage allowed.
fn fits_host(c: &Compiled, slack: usize) -> bool {
    let r = &c.report;
    r.ports <= HOST_PORTS
        && r.junctions <= HOST_JUNCTIONS
        && r.memory_waves <= HOST_MEMORY.saturating_add(slack)
        && c.net.losses.len() <= HOST_LOSSES
}

fn capacity_with(c: &Compiled, plant: &Plant, file: &str, slack: usize) -> Result<(), PlantError> {
    let r = &c.report;
    let (ports, juncs, mem) = (r.ports, r.junctions, r.memory_waves);
    if fits_host(c, slack) {
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
    if mem_true > (HOST_MEMORY + slack) as f64 || mem > HOST_MEMORY + slack {
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
    // Line ends, junctions and loss records come from every segment in turn: the error
    // points at the first segment whose lines no longer fit, and names a sample rate at
    // which the whole plant does (found by laying it out again, short segments lumped).
    let (i, seg) = first_over(c, plant);
    let here = seg.map_or(String::new(), |s| {
        format!(" (they run out at segment {}, number {} of {})", s.name, i + 1, plant.segments.len())
    });
    let rate = largest_fitting_rate(plant, file, c.profile, slack);
    let mut hint = match rate {
        Some(text) => format!("lower plant.sample_rate to at most \"{text}\" (laid out at that rate the plant fits; mind its timing warnings there)"),
        None => "no sample rate fits the whole plant".to_string(),
    };
    if let Some(s) = seg {
        hint += &format!(", or split the plant before segment {}", s.name);
    }
    Err(err(
        file,
        seg.map_or(Span::default(), |s| s.span),
        seg.map_or("segment".to_string(), |s| format!("segment[{}]", s.name)),
        format!(
            "at {} the plant needs {ports} line ends, {juncs} junctions and {} loss filters; the host runner holds at most {HOST_PORTS}, {HOST_JUNCTIONS} and {HOST_LOSSES}{here}",
            si::format(fs, "Hz"),
            c.net.losses.len()
        ),
        hint,
    ))
}

/// The first segment whose lines take the line ends, junctions or loss records past the
/// host runner's (the compiler lays segments out in file order, each after every node's
/// junction and element).
fn first_over<'p>(c: &Compiled, plant: &'p Plant) -> (usize, Option<&'p crate::plant::Segment>) {
    let elements = c.net.elements.len();
    let mut losses = 0;
    for (i, pieces) in c.segment_pieces.iter().enumerate() {
        let lines = pieces.iter().map(|p| p.line as usize + 1).max().unwrap_or(0);
        let juncs = pieces
            .iter()
            .filter_map(|p| c.net.lines.get(p.line as usize))
            .map(|l| l.a.max(l.b) as usize + 1)
            .max()
            .unwrap_or(0);
        losses += c.net.losses.iter().filter(|l| pieces.iter().any(|p| p.line == l.line)).count();
        if 2 * lines + elements > HOST_PORTS || juncs > HOST_JUNCTIONS || losses > HOST_LOSSES {
            return (i, plant.segments.get(i));
        }
    }
    (0, None)
}

/// The largest sample rate, as a hint would write it (three figures, rounded down), at
/// which the laid-out plant fits the host runner; `None` when none from the plant's own
/// rate down to 2^-24 of it does. Each try is one layout without loss fits.
fn largest_fitting_rate(plant: &Plant, file: &str, profile: ProfileKind, slack: usize) -> Option<String> {
    let fits = |rate: f64| {
        let mut p = plant.clone();
        p.sample_rate = rate;
        lay_out(&p, file, profile).is_ok_and(|c| fits_host(&c, slack))
    };
    let fs = plant.sample_rate;
    // Halve until it fits, then bisect (in the logarithm) between that and the rate above.
    let mut lo = (1..=24).map(|k| fs / f64::from(1u32 << k)).find(|r| fits(*r))?;
    let mut hi = 2.0 * lo;
    // Eight halvings of the octave: within 0.3 %, finer than the three figures' rounding
    // below (which is stepped down until the written value fits).
    for _ in 0..8 {
        let mid = (lo * hi).sqrt();
        if fits(mid) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    // The value the hint names is the one checked: rounded down to what a user would
    // write, then stepped down until it fits.
    (0..8).find_map(|k| {
        let text = si::at_most(lo * 0.99f64.powi(k), "Hz");
        let rate = parse_quantity(&text, UnitKind::Frequency).ok()?;
        fits(rate).then_some(text)
    })
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

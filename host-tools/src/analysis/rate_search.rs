//! Which sample rate does a plant need? The plant is compiled and verified (host core
//! against the exact reference, the plant's own tolerances) on a ladder of rates, a factor
//! of two apart, in parallel; then the least passing rate is narrowed by bisection (on a
//! log scale) between it and the failing rung below it.
//!
//! Pass/fail need not be monotone in the rate: a segment's delay rounds differently at each
//! rate, and lumping switches on below [`crate::compile::LUMP_BELOW_SAMPLES`]. The answer is
//! therefore "the least rate found that passes, with every rate tried listed", not a proof
//! that every higher rate passes.
use super::prepare;
use crate::compile::{err, ProfileKind, SegmentModel, MAX_PLANT_SAMPLES};
use crate::plant::{Plant, PlantError, Span};
use crate::si;
use rayon::prelude::*;

/// Most rungs on the ladder (each is a compile and a verify).
pub const MAX_RUNGS: usize = 24;
/// Bisection steps between the last failing and the first passing rung: 2^(1/2^5), about
/// 2.2 % apart at the end.
pub const BISECTION_STEPS: usize = 5;

/// What verify said at one rate.
#[derive(Debug, Clone, PartialEq)]
pub struct RateFigures {
    /// Worst probe's largest and RMS error, fractions of its norm (the step for voltages).
    pub max_error: f64,
    pub rms_error: f64,
    pub pass: bool,
    /// The checks that failed, by name ("max", "rms", "final", "arrival", "event"), empty
    /// when it passes.
    pub failed: Vec<&'static str>,
    /// Line ends and junctions of the network at this rate (its cost per sample).
    pub ports: usize,
    pub junctions: usize,
    /// Segments lumped at this rate.
    pub lumped: usize,
    /// Samples verified.
    pub samples: usize,
}

/// One rate tried.
#[derive(Debug, Clone, PartialEq)]
pub struct RatePoint {
    pub rate: f64,
    /// The figures, or why the plant could not be compiled or verified at this rate.
    pub outcome: Result<RateFigures, String>,
    /// Found by bisection (not a ladder rung).
    pub bisected: bool,
}

/// The search's answer.
#[derive(Debug, Clone, PartialEq)]
pub struct RateSearch {
    /// Every rate tried, ascending.
    pub points: Vec<RatePoint>,
    /// The least rate that passed.
    pub least_passing: Option<f64>,
}

/// The ladder's bounds when none are given: from the rate at which the plant's longest
/// segment is one sample (below it nothing but lumps would be left) to four times the
/// plant's own rate, and never past the samples a run may hold.
pub fn default_bounds(plant: &Plant) -> (f64, f64) {
    let longest =
        plant.segments.iter().map(|s| s.length / plant.cables[s.cable].velocity).fold(0.0f64, f64::max).max(1e-15);
    let most = MAX_PLANT_SAMPLES as f64 / plant.duration.max(1e-300);
    let hi = (4.0 * plant.sample_rate).min(most);
    let lo = (1.0 / longest).min(hi);
    (lo, hi)
}

/// The rungs from `lo` to `hi`, a factor of two apart, `hi` included.
fn ladder(lo: f64, hi: f64) -> Vec<f64> {
    let mut r = vec![hi];
    while r.len() < MAX_RUNGS && r.last().is_some_and(|x| x / 2.0 >= lo * (1.0 - 1e-9)) {
        let next = r.last().copied().unwrap_or(hi) / 2.0;
        r.push(next);
    }
    r.reverse();
    r
}

/// Check the bounds before any work: positive, ordered, within the ladder's rung count and
/// within the samples one run may hold. Errors name the option and a value that passes.
pub fn check_bounds(plant: &Plant, file: &str, lo: f64, hi: f64) -> Result<(), PlantError> {
    let bad = |field: &str, message: String, hint: String| Err(err(file, Span::default(), field, message, hint));
    if !(lo.is_finite() && lo > 0.0) {
        return bad(
            "--from",
            format!("the lowest rate {lo} Hz is not a positive rate"),
            "write a rate like \"1 MHz\"".into(),
        );
    }
    if !(hi.is_finite() && hi >= lo) {
        return bad(
            "--to",
            format!("the highest rate {} is below the lowest {}", si::format(hi, "Hz"), si::format(lo, "Hz")),
            format!("write --to at least \"{}\"", si::at_least(lo, "Hz")),
        );
    }
    let samples = hi * plant.duration;
    if samples > MAX_PLANT_SAMPLES as f64 {
        return bad(
            "--to",
            format!(
                "at {} the plant's run of {} is {samples:.3e} samples; a verified run holds at most {MAX_PLANT_SAMPLES}",
                si::format(hi, "Hz"),
                si::format(plant.duration, "s")
            ),
            format!("write --to at most \"{}\"", si::at_most(MAX_PLANT_SAMPLES as f64 / plant.duration, "Hz")),
        );
    }
    let span = (hi / lo).log2();
    if span > (MAX_RUNGS - 1) as f64 {
        return bad(
            "--from",
            format!(
                "{} to {} is {span:.1} doublings; the ladder has at most {MAX_RUNGS} rungs",
                si::format(lo, "Hz"),
                si::format(hi, "Hz")
            ),
            format!("write --from at least \"{}\"", si::at_least(hi / 2f64.powi(MAX_RUNGS as i32 - 1), "Hz")),
        );
    }
    Ok(())
}

/// Compile, analyse and verify `plant` at `rate`.
fn try_rate(plant: &Plant, file: &str, profile: ProfileKind, rate: f64, bisected: bool) -> RatePoint {
    let mut p = plant.clone();
    p.sample_rate = rate;
    let outcome = (|| {
        let (c, _) = prepare(&p, file, profile).map_err(|e| e.message)?;
        let (v, _) = crate::verify::verify(&p, file, &c, &[], &|_| {}).map_err(|e| e.message)?;
        let worst = |f: fn(&crate::verify::ProbeFigures) -> f64| {
            v.probes.iter().map(|x| if x.norm > 0.0 { f(x) / x.norm } else { 0.0 }).fold(0.0, f64::max)
        };
        Ok(RateFigures {
            max_error: worst(|x| x.max_error),
            rms_error: worst(|x| x.rms_error),
            pass: v.pass(),
            failed: failed_checks(&v),
            ports: c.report.ports,
            junctions: c.report.junctions,
            lumped: c.report.segments.iter().filter(|t| t.model != SegmentModel::DelayLine).count(),
            samples: c.samples,
        })
    })();
    RatePoint { rate, outcome, bisected }
}

/// One of verify's per-probe checks.
type Check = fn(&crate::verify::ProbeFigures) -> bool;

/// Which of verify's checks failed, in a fixed order.
fn failed_checks(v: &crate::verify::Verification) -> Vec<&'static str> {
    let mut out = vec![];
    let checks: [(&str, Check); 4] = [
        ("max", |p| p.pass_max),
        ("rms", |p| p.pass_rms),
        ("final", |p| p.pass_final),
        ("arrival", |p| p.pass_arrival),
    ];
    for (name, ok) in checks {
        if !v.probes.iter().all(ok) {
            out.push(name);
        }
    }
    if !v.events.iter().all(|e| e.probes.iter().all(|p| p.pass_max && p.pass_rms)) {
        out.push("event");
    }
    out
}

fn passes(p: &RatePoint) -> bool {
    p.outcome.as_ref().is_ok_and(|f| f.pass)
}

/// Search the least rate in [lo, hi] at which `verify` passes the plant's tolerances in
/// `profile`. Bounds are checked first ([`check_bounds`]).
pub fn search(plant: &Plant, file: &str, profile: ProfileKind, lo: f64, hi: f64) -> Result<RateSearch, PlantError> {
    check_bounds(plant, file, lo, hi)?;
    let mut points: Vec<RatePoint> =
        ladder(lo, hi).into_par_iter().map(|r| try_rate(plant, file, profile, r, false)).collect();
    // Bisection between the first passing rung and the rung below it.
    if let Some(k) = points.iter().position(passes) {
        if k > 0 {
            let (mut fail, mut pass) = (points[k - 1].rate, points[k].rate);
            for _ in 0..BISECTION_STEPS {
                let mid = (fail * pass).sqrt();
                let p = try_rate(plant, file, profile, mid, true);
                if passes(&p) {
                    pass = mid;
                } else {
                    fail = mid;
                }
                points.push(p);
            }
        }
    }
    points.sort_by(|a, b| a.rate.total_cmp(&b.rate));
    let least_passing = points.iter().find(|p| passes(p)).map(|p| p.rate);
    Ok(RateSearch { points, least_passing })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_ladder_doubles_from_the_top_and_stays_within_its_bounds() {
        let l = ladder(1e6, 8e6);
        assert_eq!(l, vec![1e6, 2e6, 4e6, 8e6]);
        let l = ladder(3e6, 8e6);
        assert_eq!(l, vec![4e6, 8e6]);
        assert!(ladder(1.0, 1e12).len() <= MAX_RUNGS);
    }
}

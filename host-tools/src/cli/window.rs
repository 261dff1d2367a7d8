//! `--window START..END`: the part of a run a picture shows, in the plant file's time units
//! ("10us..40us", "0 s..2.5 ms"). The figures and the verdict always cover the whole run;
//! only the pictures are cut.
use super::Failure;
use crate::plant::units::{parse_quantity, UnitKind};
use crate::si;
use std::ops::Range;

/// A time window, seconds from the start of the run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Window {
    pub start: f64,
    pub end: f64,
}

/// Parse `START..END` (clap's value parser: an error here exits 2 with the option named).
pub fn parse(text: &str) -> Result<Window, String> {
    let (a, b) =
        text.split_once("..").ok_or_else(|| format!("\"{text}\" is not START..END; write e.g. \"10us..40us\""))?;
    let time = |part: &str, which: &str| {
        parse_quantity(part, UnitKind::Time).map_err(|e| format!("{which} \"{}\" of \"{text}\": {e}", part.trim()))
    };
    let (start, end) = (time(a, "the start")?, time(b, "the end")?);
    if !(start.is_finite() && end.is_finite()) {
        return Err(format!("\"{text}\": both ends must be finite times"));
    }
    if start < 0.0 {
        return Err(format!("\"{text}\": the start {} is before the run begins (0 s)", si::format(start, "s")));
    }
    if start >= end {
        return Err(format!(
            "\"{text}\": the start {} is not before the end {}; write the earlier time first",
            si::format(start, "s"),
            si::format(end, "s")
        ));
    }
    Ok(Window { start, end })
}

impl Window {
    /// The samples of a run of `samples` samples at `dt` that the window covers (at least
    /// two, for a line), or an error naming the option when it reaches outside the run.
    pub fn samples(&self, dt: f64, samples: usize) -> Result<Range<usize>, Failure> {
        let run_end = samples.saturating_sub(1) as f64 * dt;
        let shown = format!("{}..{}", si::format(self.start, "s"), si::format(self.end, "s"));
        // Half a sample of slack: a window written to the run's last sample passes.
        if self.end > run_end + 0.5 * dt {
            return Err(Failure {
                code: 2,
                message: format!(
                    "error: --window {shown}: ends after the run, which lasts {} ({samples} samples)\n  \
                     hint: end the window at most at \"{}\"",
                    si::format(run_end, "s"),
                    si::at_most(run_end, "s")
                ),
            });
        }
        let first = (self.start / dt).ceil() as usize;
        let last = ((self.end / dt).floor() as usize).min(samples.saturating_sub(1));
        if last < first + 1 {
            return Err(Failure {
                code: 2,
                message: format!(
                    "error: --window {shown}: holds fewer than two samples at one sample per {}\n  \
                     hint: widen the window to at least \"{}\"",
                    si::format(dt, "s"),
                    si::at_least(2.0 * dt, "s")
                ),
            });
        }
        Ok(first..last + 1)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn windows_parse_in_plant_units_and_are_checked_for_sense() {
        assert_eq!(parse("10us..40us"), Ok(Window { start: 10e-6, end: 40e-6 }));
        assert_eq!(parse(" 0 s .. 2.5 ms"), Ok(Window { start: 0.0, end: 2.5e-3 }));
        assert!(parse("40us..10us").unwrap_err().contains("not before the end"));
        assert!(parse("10us").unwrap_err().contains("START..END"));
        assert!(parse("10 m..20 m").unwrap_err().contains("the start"));
        assert!(parse("-1us..2us").unwrap_err().contains("before the run begins"));
        // 100 samples at 10 ns: the run ends at 990 ns.
        let w = parse("100ns..500ns").unwrap();
        assert_eq!(w.samples(10e-9, 100).ok(), Some(10..51));
        let e = parse("100ns..2us").unwrap().samples(10e-9, 100).unwrap_err();
        assert!(e.code == 2 && e.message.contains("ends after the run"), "{}", e.message);
        let e = parse("100ns..105ns").unwrap().samples(10e-9, 100).unwrap_err();
        assert!(e.message.contains("fewer than two samples"), "{}", e.message);
    }
}

//! The far end: which load ends the extracted line.
//!
//! Peeling ends one of two ways. If the record runs out first, the last uniform run goes on
//! beyond the record, and within the record a resistor of the run's impedance is the same
//! thing (a matched line and a resistor reflect alike), so the last run becomes a resistor.
//! If a strong reflector ends the peeling (|k| ≥ 0.95), the end is open (k > 0), short
//! (k < 0), a resistor found from the settled voltage, or a capacitor (which first
//! reflects like a short, then like an open). Each candidate is run through the exact
//! reference and the one closest to the capture is kept; the capacitance is fitted by a
//! golden-section search on ln C.

use super::merge::Run;
use super::peel::Ending;

/// The load at the end of the extracted line.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum EndLoad {
    Open,
    Short,
    Resistor(f64),
    Capacitor(f64),
    ParallelRc { r: f64, c: f64 },
}

impl EndLoad {
    /// The load as a plant file writes it.
    pub fn plant_text(&self) -> String {
        use super::plant_out::eng;
        match self {
            EndLoad::Open => "\"open\"".into(),
            EndLoad::Short => "\"short\"".into(),
            EndLoad::Resistor(r) => format!("\"{}\"", eng(*r, "ohm")),
            EndLoad::Capacitor(c) => format!("{{ capacitor = \"{}\" }}", eng(*c, "F")),
            EndLoad::ParallelRc { r, c } => format!(
                "{{ resistor = \"{}\", capacitor = \"{}\", wiring = \"parallel\" }}",
                eng(*r, "ohm"),
                eng(*c, "F")
            ),
        }
    }

    /// One line for reports.
    pub fn describe(&self) -> String {
        use super::plant_out::eng;
        match self {
            EndLoad::Open => "open".into(),
            EndLoad::Short => "short".into(),
            EndLoad::Resistor(r) => format!("resistor {}", eng(*r, "ohm")),
            EndLoad::Capacitor(c) => format!("capacitor {}", eng(*c, "F")),
            EndLoad::ParallelRc { r, c } => format!("{} parallel to {}", eng(*r, "ohm"), eng(*c, "F")),
        }
    }
}

/// What the end identification needs to know about the capture.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tail {
    /// Settled port voltage (mean of the last 5 % of the record), V.
    pub settled: f64,
    /// EMF step, V.
    pub emf: f64,
    /// Source resistance, ohm.
    pub rs: f64,
    /// DC loop resistance of the cable per metre, ohm/m (0 when lossless).
    pub r_per_m: f64,
    /// One-way travel time of one metre, s/m.
    pub s_per_m: f64,
    /// Sample interval and record length, s.
    pub dt: f64,
    pub record: f64,
}

impl Tail {
    /// The resistance the settled voltage implies at the end of `length` m of cable:
    /// v = emf·R/(Rs + R) at DC, so R = Rs·v/(emf − v), less the cable's loop resistance.
    pub fn dc_resistance(&self, length: f64) -> Option<f64> {
        let x = self.settled / self.emf;
        if !(x > 0.0 && x < 0.999) {
            return None;
        }
        let r = self.rs * x / (1.0 - x) - self.r_per_m * length;
        (r > 0.0).then_some(r)
    }
}

/// The ending, with a record-long peel that nonetheless shows an end: a run over 5 times
/// the first run's impedance (open-like) or under a fifth of it (short-like); the settled
/// voltage then still offers a resistor among the candidates. Loss compensation can
/// carry the peel past an open end, where the layers then climb without bound; noise can
/// carry it up a capacitor's charging curve. The earlier of the two ends is taken.
pub fn effective_ending(runs: &[Run], ending: Ending, layer: f64, origin: usize) -> Ending {
    if runs.len() < 2 {
        return ending;
    }
    // A peel that ends on a reflector can still have climbed there through many layers
    // (a capacitor charging, seen through noise): the climb's start is the end then.
    let peel_end = match ending {
        Ending::Record => usize::MAX,
        Ending::Reflector { at, .. } => at,
    };
    let typical = runs[0].z;
    for (i, r) in runs.iter().enumerate().skip(1) {
        let k = if r.z > 5.0 * typical {
            1.0
        } else if r.z < typical / 5.0 {
            -1.0
        } else {
            continue;
        };
        // The end is where the climb (or the fall) toward it began.
        let mut first = i;
        while first > 1 && (runs[first - 1].z / typical).ln() * k > 0.4 {
            first -= 1;
        }
        let at = (runs[first].start / layer).round() as usize + origin;
        return if at < peel_end { Ending::Reflector { at, k } } else { ending };
    }
    ending
}

/// The uniform runs that stay lines, and where the load sits (m from the port).
pub fn lines_before_end(runs: &[Run], ending: Ending, layer: f64, origin: usize) -> (Vec<Run>, Option<f64>) {
    match ending {
        Ending::Record => {
            if runs.len() <= 1 {
                // One run over the whole record: a line of it, matched at the record's end.
                (runs.to_vec(), None)
            } else {
                (runs[..runs.len() - 1].to_vec(), None)
            }
        }
        Ending::Reflector { at, .. } => {
            let x_end = (at as f64 - origin as f64) * layer;
            let mut lines: Vec<Run> = runs.iter().copied().filter(|r| r.start < x_end).collect();
            // A run of less than two layers just before the end is the end's own edge, and
            // so are runs climbing to many times the impedance before them (an open end
            // seen through the band limit).
            // The level to compare with: the median impedance of the first half of the runs.
            let mut zs: Vec<f64> = lines[..lines.len().div_ceil(2)].iter().map(|r| r.z).collect();
            zs.sort_by(f64::total_cmp);
            let typical = zs.get(zs.len() / 2).copied().unwrap_or(0.0);
            let mut x_end = x_end;
            while lines.len() > 1 {
                let last = lines[lines.len() - 1];
                if last.z > 4.0 * typical {
                    x_end = last.start;
                } else if x_end - last.start >= 2.0 * layer {
                    break;
                }
                lines.pop();
            }
            if let Some(last) = lines.last_mut() {
                last.end = x_end;
            }
            (lines, Some(x_end))
        }
    }
}

/// A resistor this many times the last run's impedance is written as an open end: its
/// reflection, (R − Z)/(R + Z) = 1 − 2Z/(R + Z), is within 0.02 % of an open's, and the
/// fit can drive an open end's resistor to values no emulator holds.
const OPEN_RATIO: f64 = 1e4;

/// After the fit: neighbours of the same impedance (within `tol`) become one run, and
/// trailing runs of over 100 times the line's impedance, fitted as lines, are an open end,
/// as is a resistor of over [`OPEN_RATIO`] times the last run's impedance.
pub fn tidy(lines: &[Run], load: EndLoad, tol: f64) -> (Vec<Run>, EndLoad) {
    let mut out: Vec<Run> = Vec::with_capacity(lines.len());
    for r in lines {
        match out.last_mut() {
            Some(last) if (r.z / last.z).ln().abs() < (1.0 + tol).ln() => {
                // Keep the impedance of the longer part: both are the same cable.
                let z = if r.length() > last.length() { r.z } else { last.z };
                *last = Run { start: last.start, end: r.end, z };
            }
            _ => out.push(*r),
        }
    }
    let typical = out.first().map_or(1.0, |r| r.z);
    if let Some(i) = out.iter().position(|r| r.z > 100.0 * typical) {
        if i > 0 {
            out.truncate(i);
            return (out, EndLoad::Open);
        }
    }
    let load = open_if_huge(&out, load);
    (out, load)
}

/// `load`, or an open end for a resistor of over [`OPEN_RATIO`] times the last run's
/// impedance.
pub fn open_if_huge(lines: &[Run], load: EndLoad) -> EndLoad {
    match (load, lines.last()) {
        (EndLoad::Resistor(r), Some(last)) if r > OPEN_RATIO * last.z => EndLoad::Open,
        (other, _) => other,
    }
}

/// Candidate ends: the lines to keep and the load after them (capacitances NaN: to be
/// fitted, or a starting value).
pub fn candidates(runs: &[Run], lines: &[Run], ending: Ending, tail: &Tail) -> Vec<(Vec<Run>, EndLoad)> {
    let length: f64 = lines.iter().map(Run::length).sum();
    let dc = tail.dc_resistance(length);
    let mut c: Vec<(Vec<Run>, EndLoad)> = Vec::new();
    let keep = |load| (lines.to_vec(), load);
    match ending {
        Ending::Record => {
            let last = runs.last().map_or(tail.rs, |r| r.z);
            c.push(keep(EndLoad::Resistor(last)));
            if let Some(r) = dc {
                c.push(keep(EndLoad::Resistor(r)));
            }
        }
        Ending::Reflector { k, .. } => {
            c.push(keep(if k > 0.0 { EndLoad::Open } else { EndLoad::Short }));
            if let Some(r) = dc {
                c.push(keep(EndLoad::Resistor(r)));
            }
            // A small capacitor at a band-limited end can read as open as well as short.
            c.push(keep(EndLoad::Capacitor(f64::NAN)));
            if k < 0.0 {
                if let Some(r) = dc {
                    c.push(keep(EndLoad::ParallelRc { r, c: f64::NAN }));
                }
            }
            // A capacitor shows as a short run of low impedance before an open: its
            // capacitance is that run's, C = τ/Z = length/(v·Z).
            if let [.., before, last] = lines {
                if last.z < 0.7 * before.z {
                    let cap = last.length() * tail.s_per_m / last.z;
                    let shorter = lines[..lines.len() - 1].to_vec();
                    c.push((shorter.clone(), EndLoad::Capacitor(cap)));
                    let len2: f64 = shorter.iter().map(Run::length).sum();
                    if let Some(r) = tail.dc_resistance(len2) {
                        c.push((shorter, EndLoad::ParallelRc { r, c: cap }));
                    }
                }
            }
        }
    }
    c
}

/// Golden-section search for the minimum of `f` on [lo, hi].
pub fn golden(mut lo: f64, mut hi: f64, iterations: usize, mut f: impl FnMut(f64) -> f64) -> f64 {
    let g = (5f64.sqrt() - 1.0) / 2.0;
    let mut a = hi - g * (hi - lo);
    let mut b = lo + g * (hi - lo);
    let (mut fa, mut fb) = (f(a), f(b));
    for _ in 0..iterations {
        if fa < fb {
            hi = b;
            b = a;
            fb = fa;
            a = hi - g * (hi - lo);
            fa = f(a);
        } else {
            lo = a;
            a = b;
            fa = fb;
            b = lo + g * (hi - lo);
            fb = f(b);
        }
    }
    if fa < fb {
        a
    } else {
        b
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn golden_finds_the_minimum_of_a_parabola() {
        let x = golden(-3.0, 5.0, 60, |x| (x - 1.25) * (x - 1.25));
        assert!((x - 1.25).abs() < 1e-6, "{x}");
    }

    #[test]
    fn a_resistor_far_above_the_line_is_written_open() {
        let lines = [Run { start: 0.0, end: 10.0, z: 100.0 }];
        // (R − Z)/(R + Z) for 10 Mohm on 100 ohm: 0.99998 [closed form]: an open.
        assert_eq!(tidy(&lines, EndLoad::Resistor(1e7), 0.015).1, EndLoad::Open);
        assert_eq!(tidy(&lines, EndLoad::Resistor(2e5), 0.015).1, EndLoad::Resistor(2e5));
    }

    #[test]
    fn dc_resistance_inverts_the_divider() {
        // v = emf·R/(Rs + R) [closed form]: 50 ohm source, 150 ohm end: 0.75 of the EMF.
        let t = Tail { settled: 0.75, emf: 1.0, rs: 50.0, r_per_m: 0.0, s_per_m: 5e-9, dt: 1e-9, record: 1e-6 };
        assert!((t.dc_resistance(10.0).unwrap() - 150.0).abs() < 1e-9);
    }
}

//! The one SI-prefix formatter: values in engineering units (n, µ, m, k, M) for every
//! report, verdict and picture. The micro sign is U+00B5 everywhere; plant files accept
//! `u`, `µ` and `μ` on input (`crate::plant::units`).

/// An engineering scale: values are divided by `factor` and the unit gets `prefix`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Scale {
    pub factor: f64,
    pub prefix: &'static str,
}

/// Prefixes from nano to mega; "µ" is U+00B5, the micro sign.
const PREFIXES: [(f64, &str); 6] = [(1e-9, "n"), (1e-6, "µ"), (1e-3, "m"), (1.0, ""), (1e3, "k"), (1e6, "M")];

impl Scale {
    /// The largest prefix that keeps `max_abs` at or above 1 (so 0.0042 V reads 4.2 mV);
    /// the base unit for zero or non-finite input.
    pub fn for_magnitude(max_abs: f64) -> Scale {
        let mut chosen = Scale { factor: 1.0, prefix: "" };
        if !(max_abs.is_finite() && max_abs > 0.0) {
            return chosen;
        }
        chosen = Scale { factor: PREFIXES[0].0, prefix: PREFIXES[0].1 };
        for (factor, prefix) in PREFIXES {
            // A small tolerance so that 0.999999e-6 still reads 1 µs, not 999.999 ns.
            if max_abs >= factor * (1.0 - 1e-9) {
                chosen = Scale { factor, prefix };
            }
        }
        chosen
    }

    /// Time axes use ns, µs, ms or s only.
    pub fn for_time(t_max: f64) -> Scale {
        let s = Scale::for_magnitude(t_max);
        if s.factor > 1.0 {
            Scale { factor: 1.0, prefix: "" }
        } else {
            s
        }
    }
}

/// `v` with four decimals and the prefix that keeps its magnitude in [1, 1000)
/// (e.g. `format(4.2e-8, "s")` is "42.0000 ns"); zero in the base unit.
pub fn format(v: f64, unit: &str) -> String {
    let s = Scale::for_magnitude(v.abs());
    let x = v / s.factor;
    // Only above the prefixes: below them a value is mostly rounding noise (a timing error
    // of 4e-19 s), which reads best as 0.0000 ns.
    if beyond_prefixes(x) && x.abs() >= 1.0 {
        return format!("{v:.4e} {unit}");
    }
    format!("{x:.4} {}{unit}", s.prefix)
}

/// Whether `x`, scaled by the prefix [`Scale::for_magnitude`] chose, falls outside what the
/// prefixes can show in a few digits (a value pasted absurdly large or small into a plant
/// file: 1e300 would print 300 digits, 1e-30 as zero).
fn beyond_prefixes(x: f64) -> bool {
    x.is_finite() && x != 0.0 && !(1e-4..1e6).contains(&x.abs())
}

/// `v` rounded *up* to three significant figures, with its prefix (e.g. 989.3e3 Hz reads
/// "990 kHz"): for hints that name a least value that passes (rounding down could name a
/// value that fails).
pub fn at_least(v: f64, unit: &str) -> String {
    three_figures(v, unit, f64::ceil)
}

/// `v` rounded *down* to three significant figures, with its prefix: for hints that name a
/// largest value that passes.
pub fn at_most(v: f64, unit: &str) -> String {
    three_figures(v, unit, f64::floor)
}

fn three_figures(v: f64, unit: &str, round: fn(f64) -> f64) -> String {
    if !(v.is_finite() && v > 0.0) {
        return format!("{v} {unit}");
    }
    // Round in the value's own decade, then pick the prefix for the rounded value (990 kHz
    // rounded up may become 1 MHz).
    let decade = v.log10().floor() as i32;
    let step = 10f64.powi(decade - 2);
    // A quotient off by one ulp can only move the result one step further the safe way.
    let r = round(v / step) * step;
    let sc = Scale::for_magnitude(r);
    let x = r / sc.factor;
    if beyond_prefixes(x) {
        return format!("{r:.2e} {unit}");
    }
    let decimals = (2 - x.log10().floor() as i32).max(0) as usize;
    let text = format!("{x:.decimals$}");
    let text = if text.contains('.') { text.trim_end_matches('0').trim_end_matches('.').to_string() } else { text };
    format!("{text} {}{unit}", sc.prefix)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn format_picks_the_prefix_that_keeps_one_to_a_thousand() {
        assert_eq!(format(0.0, "V"), "0.0000 V");
        assert_eq!(format(4.2e-8, "s"), "42.0000 ns");
        assert_eq!(format(-3.3e-6, "s"), "-3.3000 µs");
        assert_eq!(format(0.0125, "V"), "12.5000 mV");
        assert_eq!(format(200e6, "Hz"), "200.0000 MHz");
        assert_eq!(format(1500.0, "V"), "1.5000 kV");
    }

    #[test]
    fn least_and_largest_values_round_the_safe_way() {
        assert_eq!(at_least(989.3e3, "Hz"), "990 kHz");
        assert_eq!(at_least(199_999.0, "Hz"), "200 kHz");
        assert_eq!(at_least(200_001.0, "Hz"), "201 kHz");
        assert_eq!(at_least(999.5e3, "Hz"), "1 MHz");
        assert_eq!(at_most(4.2949e6, "ohm"), "4.29 Mohm");
        assert_eq!(at_most(141.39e6, "Hz"), "141 MHz");
        assert_eq!(at_least(0.5, "s"), "500 ms");
    }

    #[test]
    fn values_beyond_the_prefixes_read_in_scientific_notation() {
        // Before: 1e300 printed 300 digits and 1e-30 printed "0.0000 nF".
        assert_eq!(format(1e300, "V"), "1.0000e300 V");
        assert_eq!(format(-2.5e20, "ohm"), "-2.5000e20 ohm");
        // Below the prefixes a value is mostly rounding noise: it stays in nano.
        assert_eq!(format(4.3e-19, "s"), "0.0000 ns");
        assert_eq!(format(4.7e-11, "F"), "0.0470 nF");
        assert_eq!(format(999e9, "ohm"), "999000.0000 Mohm");
        assert_eq!(at_least(1.17e23, "Hz"), "1.17e23 Hz");
        assert_eq!(at_most(3.339e-20, "Hz"), "3.33e-20 Hz");
        // A hint is written back into a plant file: `tests/hostile_inputs.rs` checks that the
        // notation parses (the reader is in `plant`, which this module may not import).
    }
}

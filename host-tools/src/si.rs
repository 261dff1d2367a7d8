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
    format!("{:.4} {}{unit}", v / s.factor, s.prefix)
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
}

//! Quantity strings such as `"23 m"`, `"4.7 nF"` or `"6.5 dB/100m"`, turned into SI values.
//!
//! Plant files are written by people, so every dimensioned value carries its unit and the
//! reader checks that the unit fits the field: a length given in ohms is an error that names
//! the unit the field expects. A quantity is `<number> <unit>`; the space is optional and the
//! unit may carry one SI prefix (`f p n u µ m k M G`). A per-length unit is written
//! `<unit>/<length>`, where the length may be `m`, `km`, `ft`, `100m` or `100ft`.
//!
//! Values come back in coherent SI units: ohm, metre, second, hertz, volt, farad, henry,
//! their per-metre forms, nepers per metre for attenuation (1 Np = 20/ln 10 dB ≈ 8.686 dB),
//! and plain fractions for percentages.

mod kind;

pub use kind::UnitKind;

/// Decibels in one neper: 20 / ln 10 (1 Np = 8.686 dB).
pub const DB_PER_NEPER: f64 = 8.685_889_638_065_037;

/// One foot in metres (exact by definition).
const FOOT: f64 = 0.3048;

/// Why a quantity string could not be read.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum UnitError {
    /// The text is empty.
    #[error("empty value, expected {}", .expected.describe())]
    Empty { expected: UnitKind },
    /// No number could be read at the start of the text.
    #[error("\"{text}\" does not start with a number, expected {}", .expected.describe())]
    BadNumber { text: String, expected: UnitKind },
    /// The number is infinite or not a number.
    #[error("\"{text}\" is not a finite number")]
    NotFinite { text: String },
    /// A number without a unit where the field needs one.
    #[error("{value} has no unit, expected {}", .expected.describe())]
    MissingUnit { value: f64, expected: UnitKind },
    /// A unit where the field takes a plain number.
    #[error("unit `{unit}` given, but this field is a plain number")]
    UnexpectedUnit { unit: String },
    /// A known unit of another kind, for example `m` where ohm is expected.
    #[error("unit `{unit}` is {}, but this field expects {}", .found.short_name(), .expected.describe())]
    WrongUnit { unit: String, found: UnitKind, expected: UnitKind },
    /// A unit this reader does not know.
    #[error("unknown unit `{unit}`, expected {}", .expected.describe())]
    UnknownUnit { unit: String, expected: UnitKind },
}

/// Base units that take an SI prefix, with the kind they measure on their own.
const PREFIXABLE: &[(&str, UnitKind)] = &[
    ("ohm", UnitKind::Resistance),
    ("ohms", UnitKind::Resistance),
    ("Ω", UnitKind::Resistance),
    ("m", UnitKind::Length),
    ("s", UnitKind::Time),
    ("Hz", UnitKind::Frequency),
    ("V", UnitKind::Voltage),
    ("F", UnitKind::Capacitance),
    ("H", UnitKind::Inductance),
];

/// SI prefixes accepted in front of a base unit (both micro signs and `u`), as powers of ten.
const PREFIXES: &[(&str, i32)] =
    &[("f", -15), ("p", -12), ("n", -9), ("u", -6), ("µ", -6), ("μ", -6), ("m", -3), ("k", 3), ("M", 6), ("G", 9)];

/// A unit's factor to SI as 10^pow10 · extra. Keeping the power of ten apart lets the
/// decimal parser read `"0.2 us"` as `0.2e-6`, the double nearest the written value,
/// instead of 0.2 · 1e-6, which rounds twice.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Scale {
    pow10: i32,
    extra: f64,
}

impl Scale {
    const ONE: Scale = Scale { pow10: 0, extra: 1.0 };

    fn ten_to(pow10: i32) -> Scale {
        Scale { pow10, extra: 1.0 }
    }

    fn times(self, other: Scale) -> Scale {
        Scale { pow10: self.pow10 + other.pow10, extra: self.extra * other.extra }
    }

    fn per(self, other: Scale) -> Scale {
        Scale { pow10: self.pow10 - other.pow10, extra: self.extra / other.extra }
    }

    fn apply(self, value: f64) -> f64 {
        // Powers of ten up to 1e22 are exact doubles, so each step below rounds once.
        let p = 10f64.powi(self.pow10.abs());
        let scaled = if self.pow10 >= 0 { value * p } else { value / p };
        scaled * self.extra
    }
}

/// Fixed units without prefixes: (symbol, kind, factor to SI).
const FIXED: &[(&str, UnitKind, Scale)] = &[
    ("ft", UnitKind::Length, Scale { pow10: 0, extra: FOOT }),
    ("%", UnitKind::Fraction, Scale { pow10: -2, extra: 1.0 }),
    ("Np/(m*sqrt(Hz))", UnitKind::ConductorLoss, Scale::ONE),
    ("Np/(m·sqrt(Hz))", UnitKind::ConductorLoss, Scale::ONE),
    ("Np/m/sqrt(Hz)", UnitKind::ConductorLoss, Scale::ONE),
    ("Np/(m*Hz)", UnitKind::DielectricLoss, Scale::ONE),
    ("Np/(m·Hz)", UnitKind::DielectricLoss, Scale::ONE),
    ("Np/m/Hz", UnitKind::DielectricLoss, Scale::ONE),
];

/// Read `text` as a quantity of the `expected` kind, in SI units.
///
/// `"23 m"` → 23.0, `"4.7nF"` → 4.7e-9, `"6.5 dB/100m"` → 0.065 / 8.686 Np/m, `"5 %"` → 0.05.
pub fn parse_quantity(text: &str, expected: UnitKind) -> Result<f64, UnitError> {
    let text = text.trim();
    if text.is_empty() {
        return Err(UnitError::Empty { expected });
    }
    let split = number_prefix_len(text);
    if split == 0 {
        return Err(UnitError::BadNumber { text: text.to_string(), expected });
    }
    let value: f64 = text[..split].parse().map_err(|_| UnitError::BadNumber { text: text.to_string(), expected })?;
    let unit: String = text[split..].chars().filter(|c| !c.is_whitespace()).collect();
    if unit.is_empty() {
        return from_bare(value, expected);
    }
    if expected == UnitKind::Dimensionless {
        return Err(UnitError::UnexpectedUnit { unit });
    }
    let (found, scale) = match read_unit(&unit) {
        Some(x) => x,
        None => return Err(UnitError::UnknownUnit { unit, expected }),
    };
    if found != expected {
        return Err(UnitError::WrongUnit { unit, found, expected });
    }
    let number = &text[..split];
    let si = match shifted_decimal(number, scale.pow10) {
        Some(v) => v * scale.extra,
        None => scale.apply(value),
    };
    finite(si, text)
}

/// `number` · 10^pow10, read by the decimal parser in one rounding (`"0.2"`, -6 → 0.2e-6).
fn shifted_decimal(number: &str, pow10: i32) -> Option<f64> {
    let (mantissa, exp) = match number.find(['e', 'E']) {
        Some(i) => (&number[..i], number[i + 1..].parse::<i64>().ok()?),
        None => (number, 0),
    };
    let exp = exp.checked_add(i64::from(pow10))?;
    format!("{mantissa}e{exp}").parse().ok()
}

/// A number written without a unit (a TOML number, or a string holding only a number).
///
/// Accepted only for [`UnitKind::Dimensionless`] and [`UnitKind::Fraction`] (read as a
/// fraction, not a percentage).
pub fn from_bare(value: f64, expected: UnitKind) -> Result<f64, UnitError> {
    match expected {
        UnitKind::Dimensionless | UnitKind::Fraction => finite(value, &value.to_string()),
        _ => Err(UnitError::MissingUnit { value, expected }),
    }
}

fn finite(value: f64, text: &str) -> Result<f64, UnitError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(UnitError::NotFinite { text: text.to_string() })
    }
}

/// Length in bytes of the decimal number at the start of `text` (sign, digits, point,
/// exponent). An `e` is part of the number only when digits follow it.
fn number_prefix_len(text: &str) -> usize {
    let b = text.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
        i += 1;
    }
    let mantissa_start = i;
    while i < b.len() && (b[i].is_ascii_digit() || b[i] == b'.') {
        i += 1;
    }
    if !b[mantissa_start..i].iter().any(u8::is_ascii_digit) {
        return 0;
    }
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        let mut j = i + 1;
        if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
            j += 1;
        }
        if j < b.len() && b[j].is_ascii_digit() {
            while j < b.len() && b[j].is_ascii_digit() {
                j += 1;
            }
            i = j;
        }
    }
    i
}

/// A unit string without whitespace → (kind, factor to SI).
fn read_unit(unit: &str) -> Option<(UnitKind, Scale)> {
    if let Some(&(_, kind, scale)) = FIXED.iter().find(|(sym, _, _)| *sym == unit) {
        return Some((kind, scale));
    }
    if let Some((num, den)) = unit.split_once('/') {
        let length = read_length_denominator(den)?;
        if let Some(scale) = read_decibel_or_neper(num) {
            return Some((UnitKind::Attenuation, scale.per(length)));
        }
        let (kind, scale) = read_prefixed(num)?;
        let per_kind = match kind {
            UnitKind::Resistance => UnitKind::ResistancePerLength,
            UnitKind::Time => UnitKind::DelayPerLength,
            UnitKind::Capacitance => UnitKind::CapacitancePerLength,
            UnitKind::Inductance => UnitKind::InductancePerLength,
            _ => return None,
        };
        return Some((per_kind, scale.per(length)));
    }
    read_prefixed(unit)
}

/// `dB` or `Np` → factor to nepers (1 Np = 20/ln 10 dB).
fn read_decibel_or_neper(num: &str) -> Option<Scale> {
    match num {
        "dB" => Some(Scale { pow10: 0, extra: 1.0 / DB_PER_NEPER }),
        "Np" => Some(Scale::ONE),
        _ => None,
    }
}

/// A length denominator (`m`, `km`, `ft`, `100m`, `100ft`) → its length in metres.
fn read_length_denominator(den: &str) -> Option<Scale> {
    let digits = den.bytes().take_while(u8::is_ascii_digit).count();
    let count = match &den[..digits] {
        "" | "1" => Scale::ONE,
        "10" => Scale::ten_to(1),
        "100" => Scale::ten_to(2),
        "1000" => Scale::ten_to(3),
        _ => return None,
    };
    let metres = match &den[digits..] {
        "ft" => Scale { pow10: 0, extra: FOOT },
        rest => match read_prefixed(rest)? {
            (UnitKind::Length, m) => m,
            _ => return None,
        },
    };
    Some(count.times(metres))
}

/// An optionally prefixed base unit (`mohm`, `ns`, `MHz`) → (kind, factor to SI).
fn read_prefixed(unit: &str) -> Option<(UnitKind, Scale)> {
    if let Some(&(_, kind)) = PREFIXABLE.iter().find(|(sym, _)| *sym == unit) {
        return Some((kind, Scale::ONE));
    }
    PREFIXABLE.iter().find_map(|&(sym, kind)| {
        let prefix = unit.strip_suffix(sym)?;
        PREFIXES.iter().find(|(p, _)| *p == prefix).map(|&(_, e)| (kind, Scale::ten_to(e)))
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * b.abs().max(1e-300)
    }

    #[test]
    fn prefixes_scale_by_powers_of_ten() {
        let cases = [
            ("47 pF", UnitKind::Capacitance, 47e-12),
            ("4.7nF", UnitKind::Capacitance, 4.7e-9),
            ("10 uH", UnitKind::Inductance, 10e-6),
            ("10 µH", UnitKind::Inductance, 10e-6),
            ("10 μH", UnitKind::Inductance, 10e-6),
            ("2 kohm", UnitKind::Resistance, 2e3),
            ("1 Mohm", UnitKind::Resistance, 1e6),
            ("120 Ω", UnitKind::Resistance, 120.0),
            ("70 mohm/m", UnitKind::ResistancePerLength, 0.07),
            ("200 MHz", UnitKind::Frequency, 200e6),
            ("1 GHz", UnitKind::Frequency, 1e9),
            ("3 fs", UnitKind::Time, 3e-15),
            ("20 us", UnitKind::Time, 20e-6),
            ("5 ms", UnitKind::Time, 5e-3),
            ("680 V", UnitKind::Voltage, 680.0),
            ("1.5 mm", UnitKind::Length, 1.5e-3),
            ("2 km", UnitKind::Length, 2e3),
            ("10 ft", UnitKind::Length, 3.048),
        ];
        for (text, kind, want) in cases {
            let got = parse_quantity(text, kind).unwrap();
            assert!(close(got, want), "{text}: {got} != {want}");
        }
    }

    #[test]
    fn decimal_prefixes_round_once() {
        // "100 ns" must be the double nearest 1e-7, as if written 100e-9.
        assert_eq!(parse_quantity("100 ns", UnitKind::Time).unwrap(), 100e-9);
        assert_eq!(parse_quantity("20 us", UnitKind::Time).unwrap(), 20e-6);
        assert_eq!(parse_quantity("0.2 us", UnitKind::Time).unwrap(), 0.2e-6);
        assert_eq!(parse_quantity("84 mohm/m", UnitKind::ResistancePerLength).unwrap(), 0.084);
        assert_eq!(parse_quantity("70 ohm/km", UnitKind::ResistancePerLength).unwrap(), 0.07);
    }

    #[test]
    fn per_length_units() {
        assert!(close(parse_quantity("5 ns/m", UnitKind::DelayPerLength).unwrap(), 5e-9));
        assert!(close(parse_quantity("42 pF/m", UnitKind::CapacitancePerLength).unwrap(), 42e-12));
        assert!(close(parse_quantity("600nH/m", UnitKind::InductancePerLength).unwrap(), 600e-9));
        assert!(close(parse_quantity("70 ohm/km", UnitKind::ResistancePerLength).unwrap(), 0.07));
    }

    #[test]
    fn attenuation_converts_decibels_to_nepers() {
        // 1 Np = 20/ln 10 dB [closed form].
        assert!(close(DB_PER_NEPER, 20.0 / std::f64::consts::LN_10));
        let per_m = 0.065 / DB_PER_NEPER;
        for text in ["6.5 dB/100m", "0.065 dB/m", "65 dB/km", "6.5dB/100 m"] {
            let got = parse_quantity(text, UnitKind::Attenuation).unwrap();
            assert!(close(got, per_m), "{text}: {got}");
        }
        let ft = parse_quantity("1.3 dB/100ft", UnitKind::Attenuation).unwrap();
        assert!(close(ft, 1.3 / (100.0 * FOOT) / DB_PER_NEPER));
        assert!(close(parse_quantity("0.5 Np/m", UnitKind::Attenuation).unwrap(), 0.5));
    }

    #[test]
    fn loss_coefficients_and_fractions() {
        let kc = parse_quantity("2.5e-6 Np/(m*sqrt(Hz))", UnitKind::ConductorLoss).unwrap();
        assert!(close(kc, 2.5e-6));
        let kd = parse_quantity("3e-11 Np/(m * Hz)", UnitKind::DielectricLoss).unwrap();
        assert!(close(kd, 3e-11));
        assert!(close(parse_quantity("5 %", UnitKind::Fraction).unwrap(), 0.05));
        assert!(close(parse_quantity("0.2%", UnitKind::Fraction).unwrap(), 0.002));
        assert!(close(parse_quantity("0.05", UnitKind::Fraction).unwrap(), 0.05));
        assert!(close(parse_quantity("0.66", UnitKind::Dimensionless).unwrap(), 0.66));
    }

    #[test]
    fn exponents_and_signs() {
        assert!(close(parse_quantity("-3 m", UnitKind::Length).unwrap(), -3.0));
        assert!(close(parse_quantity("1e3 m", UnitKind::Length).unwrap(), 1e3));
        assert!(close(parse_quantity("1.5E-2m", UnitKind::Length).unwrap(), 0.015));
        assert!(close(parse_quantity("+2.5 V", UnitKind::Voltage).unwrap(), 2.5));
    }

    #[test]
    fn wrong_unit_names_the_expected_unit() {
        let err = parse_quantity("5 m", UnitKind::Resistance).unwrap_err();
        assert_eq!(
            err,
            UnitError::WrongUnit { unit: "m".into(), found: UnitKind::Length, expected: UnitKind::Resistance }
        );
        assert!(err.to_string().contains("ohm"), "{err}");
        let err = parse_quantity("5 ns", UnitKind::DelayPerLength).unwrap_err();
        assert!(err.to_string().contains("s/m"), "{err}");
    }

    #[test]
    fn malformed_quantities_are_errors() {
        assert!(matches!(parse_quantity("", UnitKind::Length), Err(UnitError::Empty { .. })));
        assert!(matches!(parse_quantity("long", UnitKind::Length), Err(UnitError::BadNumber { .. })));
        assert!(matches!(parse_quantity(".", UnitKind::Length), Err(UnitError::BadNumber { .. })));
        assert!(matches!(parse_quantity("23", UnitKind::Length), Err(UnitError::MissingUnit { .. })));
        assert!(matches!(parse_quantity("23 parsec", UnitKind::Length), Err(UnitError::UnknownUnit { .. })));
        assert!(matches!(parse_quantity("23 xm", UnitKind::Length), Err(UnitError::UnknownUnit { .. })));
        assert!(matches!(parse_quantity("0.66 m", UnitKind::Dimensionless), Err(UnitError::UnexpectedUnit { .. })));
        assert!(matches!(parse_quantity("1e999 m", UnitKind::Length), Err(UnitError::NotFinite { .. })));
        assert!(matches!(parse_quantity("3 dB/0m", UnitKind::Attenuation), Err(UnitError::UnknownUnit { .. })));
        assert!(matches!(parse_quantity("1..2 m", UnitKind::Length), Err(UnitError::BadNumber { .. })));
    }
}

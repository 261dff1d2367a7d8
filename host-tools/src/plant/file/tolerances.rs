//! `[verify]`: how closely the core must follow the physics.

use toml::{Spanned, Value};

use super::locate::Source;
use super::raw::{Raw, RawVerify};
use super::values::{non_negative, written};
use crate::plant::error::PlantError;
use crate::plant::model::Tolerances;
use crate::plant::units::{self, UnitKind};

/// `[verify]` tolerances over the defaults; `arrival` in samples or as a time.
pub fn tolerances(src: &Source, raw: Option<&Spanned<RawVerify>>, sample_rate: f64) -> Result<Tolerances, PlantError> {
    let mut t = Tolerances::default();
    let Some(raw) = raw else { return Ok(t) };
    let v = raw.get_ref();
    for (value, slot, name) in [
        (&v.max_error, &mut t.max_error, "max_error"),
        (&v.rms_error, &mut t.rms_error, "rms_error"),
        (&v.final_error, &mut t.final_error, "final_error"),
    ] {
        let Some(value) = value else { continue };
        let field = format!("verify.{name}");
        let x = non_negative(src, value, UnitKind::Fraction, &field, name)?;
        if x > 1.0 {
            return Err(src.error(
                value.span(),
                field,
                format!("{name} {} is more than 100 % of the drive step", written(value)),
                "tolerances are fractions of the step: write \"5 %\" or 0.05",
            ));
        }
        *slot = x;
    }
    if let Some(a) = &v.arrival {
        t.arrival_samples = arrival(src, a, sample_rate)?;
    }
    Ok(t)
}

/// `"1 sample"`, `"2 samples"` or a time such as `"5 ns"` (converted at the sample rate).
fn arrival(src: &Source, raw: &Raw, sample_rate: f64) -> Result<f64, PlantError> {
    let field = "verify.arrival";
    let bad = |message: String| src.error(raw.span(), field, message, "write e.g. arrival = \"1 sample\" or \"5 ns\"");
    let Value::String(s) = raw.get_ref() else {
        return Err(bad(format!("arrival needs a unit, got {}", written(raw))));
    };
    let t = s.trim();
    let samples = if let Some(n) = t.strip_suffix("samples").or_else(|| t.strip_suffix("sample")) {
        units::parse_quantity(n, UnitKind::Dimensionless).map_err(|e| bad(e.to_string()))?
    } else {
        units::parse_quantity(t, UnitKind::Time).map_err(|e| bad(e.to_string()))? * sample_rate
    };
    if samples.is_nan() || samples < 0.0 {
        return Err(bad(format!("arrival tolerance must not be negative, got {}", written(raw))));
    }
    // Edges are found on the sample grid (interpolated between two samples): a tolerance
    // below one sample judges the interpolation, not the emulation. The small margin lets
    // "10 ns" at 100 MHz pass although 10e-9·100e6 is not exactly 1 in binary.
    if samples < 1.0 - 1e-9 {
        return Err(src.error(
            raw.span(),
            field,
            format!(
                "an arrival tolerance of {samples:.3} samples is below one sample ({}): edges are only located on the sample grid",
                crate::si::format(1.0 / sample_rate, "s")
            ),
            format!("write arrival = \"1 sample\" (= {} at this sample rate) or more", crate::si::format(1.0 / sample_rate, "s")),
        ));
    }
    Ok(samples)
}

//! Single values of a plant file: quantities, loads and source waveforms.

use std::path::Path;

use toml::Value;

use super::locate::Source;
use super::raw::{Raw, RawWaveform};
use crate::plant::error::PlantError;
use crate::plant::model::{Load, Waveform};
use crate::plant::units::{self, UnitKind};

/// The value as the user wrote it, for messages (`"-3 m"`, `0.66`).
pub fn written(raw: &Raw) -> String {
    show(raw.get_ref())
}

/// A TOML value as written, for messages.
fn show(value: &Value) -> String {
    match value {
        Value::String(s) => format!("\"{s}\""),
        Value::Integer(i) => i.to_string(),
        Value::Float(x) => x.to_string(),
        Value::Boolean(b) => b.to_string(),
        Value::Datetime(d) => d.to_string(),
        Value::Array(_) => "an array".to_string(),
        Value::Table(_) => "a table".to_string(),
    }
}

/// A quantity of `kind` from a string such as `"23 m"` (or a bare TOML number where the
/// field is dimensionless), in SI units.
pub fn quantity(src: &Source, raw: &Raw, kind: UnitKind, field: &str) -> Result<f64, PlantError> {
    let parsed = match raw.get_ref() {
        Value::String(s) => units::parse_quantity(s, kind),
        Value::Integer(i) => units::from_bare(*i as f64, kind),
        Value::Float(x) => units::from_bare(*x, kind),
        _ => {
            return Err(src.error(
                raw.span(),
                field,
                format!("expected {}, got {}", kind.describe(), written(raw)),
                "write the value as a string with its unit",
            ))
        }
    };
    parsed.map_err(|e| {
        let hint = format!("write {} with its unit, e.g. {}", kind.short_name(), kind.example());
        src.error(raw.span(), field, e.to_string(), hint)
    })
}

/// A quantity that must be greater than zero.
pub fn positive(src: &Source, raw: &Raw, kind: UnitKind, field: &str, what: &str) -> Result<f64, PlantError> {
    let v = quantity(src, raw, kind, field)?;
    if v > 0.0 {
        Ok(v)
    } else {
        Err(src.error(
            raw.span(),
            field,
            format!("{what} must be positive, got {}", written(raw)),
            format!("give {} greater than zero, e.g. {}", kind.short_name(), kind.example()),
        ))
    }
}

/// A quantity that must be zero or more.
pub fn non_negative(src: &Source, raw: &Raw, kind: UnitKind, field: &str, what: &str) -> Result<f64, PlantError> {
    let v = quantity(src, raw, kind, field)?;
    if v >= 0.0 {
        Ok(v)
    } else {
        Err(src.error(
            raw.span(),
            field,
            format!("{what} must not be negative, got {}", written(raw)),
            format!("give {} of zero or more, e.g. {}", kind.short_name(), kind.example()),
        ))
    }
}

const LOAD_HINT: &str = "use \"open\", \"short\", \"120 ohm\", { capacitor = \"47 pF\" } or \
                         { resistor = \"120 ohm\", capacitor = \"1 nF\", wiring = \"series\" }";

/// A node load: `"open"`, `"short"`, `"120 ohm"`, `{ capacitor = .. }` or an RC pair.
pub fn load(src: &Source, raw: &Raw, field: &str) -> Result<Load, PlantError> {
    let bad = |message: String| src.error(raw.span(), field, message, LOAD_HINT);
    match raw.get_ref() {
        Value::String(s) if s.trim() == "open" => Ok(Load::Open),
        Value::String(s) if s.trim() == "short" => Ok(Load::Short),
        Value::String(s) => {
            let r = units::parse_quantity(s, UnitKind::Resistance)
                .map_err(|e| bad(format!("load {}: {e}", written(raw))))?;
            resistor(r).map_err(|m| bad(format!("{m}, got {}", written(raw))))
        }
        Value::Table(t) => {
            for key in t.keys() {
                if !matches!(key.as_str(), "resistor" | "capacitor" | "wiring") {
                    return Err(bad(format!(
                        "unknown load field `{key}`, expected `resistor`, `capacitor` or `wiring`"
                    )));
                }
            }
            let part = |key: &str, kind: UnitKind| -> Result<Option<f64>, PlantError> {
                let Some(v) = t.get(key) else { return Ok(None) };
                let Value::String(s) = v else {
                    return Err(bad(format!("load `{key}` must be a string like \"1 nF\"")));
                };
                let x = units::parse_quantity(s, kind).map_err(|e| bad(format!("load `{key}`: {e}")))?;
                if x > 0.0 {
                    Ok(Some(x))
                } else {
                    Err(bad(format!("load `{key}` must be positive, got \"{s}\"")))
                }
            };
            let r = part("resistor", UnitKind::Resistance)?;
            let c = part("capacitor", UnitKind::Capacitance)?;
            let wiring = match t.get("wiring") {
                None => None,
                Some(Value::String(w)) if w == "series" || w == "parallel" => Some(w.as_str()),
                Some(w) => {
                    let w = show(w);
                    return Err(bad(format!("load `wiring` must be \"series\" or \"parallel\", got {w}")));
                }
            };
            match (r, c, wiring) {
                (Some(r), None, None) => resistor(r).map_err(bad),
                (None, Some(c), None) => Ok(Load::Capacitor(c)),
                (Some(r), Some(c), Some("series")) => Ok(Load::SeriesRc { r, c }),
                (Some(r), Some(c), Some(_)) => Ok(Load::ParallelRc { r, c }),
                (Some(_), Some(_), None) => {
                    Err(bad("a resistor and a capacitor need `wiring = \"series\"` or \"parallel\"".into()))
                }
                (_, _, Some(_)) => Err(bad("`wiring` is only for a resistor together with a capacitor".into())),
                (None, None, None) => Err(bad("empty load table".into())),
            }
        }
        _ => Err(bad(format!("a load is a string or a table, got {}", written(raw)))),
    }
}

fn resistor(r: f64) -> Result<Load, String> {
    if r > 0.0 {
        Ok(Load::Resistor(r))
    } else {
        Err("a load resistance must be positive (write \"short\" for zero ohms)".into())
    }
}

/// A source waveform table: `{ step = .. }`, `{ pulse = .., width = .. }` or
/// `{ samples = "file.csv" }`; `rise` and `delay` default to zero.
pub fn waveform(
    src: &Source,
    raw: &toml::Spanned<RawWaveform>,
    field: &str,
    base_dir: &Path,
    sample_rate: f64,
) -> Result<Waveform, PlantError> {
    let w = raw.get_ref();
    let sub = |name: &str| format!("{field}.{name}");
    let time = |r: &Option<Raw>, name: &str| -> Result<f64, PlantError> {
        r.as_ref().map_or(Ok(0.0), |r| non_negative(src, r, UnitKind::Time, &sub(name), name))
    };
    if let Some(level) = &w.pwm {
        return pwm(src, raw, level, field, base_dir);
    }
    for (r, name) in [(&w.period, "period"), (&w.duty, "duty"), (&w.dead_time, "dead_time")] {
        if let Some(r) = r {
            return Err(src.error(
                r.span(),
                sub(name),
                format!("`{name}` belongs to a pwm waveform"),
                "remove it, or write `pwm = ..`",
            ));
        }
    }
    // (amplitude, is_pulse) for the edge forms; the samples form returns from here.
    let (level, is_pulse) = match (&w.step, &w.pulse, &w.samples) {
        (Some(step), None, None) => (step, false),
        (None, Some(pulse), None) => (pulse, true),
        (None, None, Some(path)) => {
            for (r, name) in [(&w.rise, "rise"), (&w.delay, "delay"), (&w.width, "width")] {
                if let Some(r) = r {
                    return Err(src.error(
                        r.span(),
                        sub(name),
                        format!("`{name}` does not apply to a samples waveform"),
                        "put the edge shape into the samples file, or use `step`/`pulse`",
                    ));
                }
            }
            return read_samples(src, path, &sub("samples"), base_dir, sample_rate).map(Waveform::Samples);
        }
        _ => {
            return Err(src.error(
                raw.span(),
                field,
                "a waveform needs exactly one of `step`, `pulse` or `samples`",
                "write e.g. { step = \"5 V\", rise = \"10 ns\" } or { samples = \"stim.csv\" }",
            ))
        }
    };
    let rise = time(&w.rise, "rise")?;
    let delay = time(&w.delay, "delay")?;
    let name = if is_pulse { "pulse" } else { "step" };
    let amplitude = drive_level(src, level, &sub(name))?;
    match (is_pulse, &w.width) {
        (false, None) => Ok(Waveform::Step { amplitude, delay, rise }),
        (false, Some(width)) => Err(src.error(
            width.span(),
            sub("width"),
            "`width` belongs to a pulse, not a step",
            "remove `width`, or write `pulse = ..` instead of `step = ..`",
        )),
        (true, None) => Err(src.error(
            raw.span(),
            field,
            "a pulse needs a `width`",
            "add e.g. width = \"200 ns\" (the time between the 50 % points)",
        )),
        (true, Some(width)) => {
            let width = positive(src, width, UnitKind::Time, &sub("width"), "pulse width")?;
            Ok(Waveform::Pulse { amplitude, delay, width, rise })
        }
    }
}

/// The largest drive level accepted: a thousand times the level above which `inspect`
/// warns that no cable plant insulates it (1 MV). Far beyond it the fixed-point scale
/// (volts per I/O code, an `f32`) overflows; refused here, where the value is written.
pub const MAX_DRIVE_VOLTS: f64 = 1e9;

/// A drive level (step, pulse or pwm amplitude) in volts, at most [`MAX_DRIVE_VOLTS`].
fn drive_level(src: &Source, level: &Raw, field: &str) -> Result<f64, PlantError> {
    let v = quantity(src, level, UnitKind::Voltage, field)?;
    if v.abs() > MAX_DRIVE_VOLTS {
        return Err(src.error(
            level.span(),
            field,
            format!("the drive level {} is beyond any cable plant", written(level)),
            "check the unit; a drive level is at most \"1 GV\" (plants are driven with volts to kilovolts)",
        ));
    }
    Ok(v)
}

/// `{ pwm = "24 V", period = "10 us", duty = "30 %", dead_time = "200 ns", rise = "50 ns",
/// delay = "0 s" }`: a half-bridge output between ±amplitude with dead time.
fn pwm(
    src: &Source,
    raw: &toml::Spanned<RawWaveform>,
    level: &Raw,
    field: &str,
    _base_dir: &Path,
) -> Result<Waveform, PlantError> {
    let w = raw.get_ref();
    let sub = |name: &str| format!("{field}.{name}");
    if w.step.is_some() || w.pulse.is_some() || w.samples.is_some() || w.width.is_some() {
        return Err(src.error(
            raw.span(),
            field,
            "a pwm waveform takes no `step`, `pulse`, `samples` or `width`",
            "keep only pwm, period, duty, dead_time, rise, delay",
        ));
    }
    let need = |r: &Option<Raw>, name: &str, hint: &str| -> Result<Raw, PlantError> {
        r.clone()
            .ok_or_else(|| src.error(raw.span(), sub(name), format!("a pwm waveform needs `{name}`"), hint.to_string()))
    };
    let amplitude = drive_level(src, level, &sub("pwm"))?;
    let period = positive(
        src,
        &need(&w.period, "period", "add e.g. period = \"10 us\"")?,
        UnitKind::Time,
        &sub("period"),
        "period",
    )?;
    let duty_raw = need(&w.duty, "duty", "add e.g. duty = \"30 %\"")?;
    let duty = quantity(src, &duty_raw, UnitKind::Fraction, &sub("duty"))?;
    let time = |r: &Option<Raw>, name: &str| -> Result<f64, PlantError> {
        r.as_ref().map_or(Ok(0.0), |r| non_negative(src, r, UnitKind::Time, &sub(name), name))
    };
    let dead_time = time(&w.dead_time, "dead_time")?;
    let rise = time(&w.rise, "rise")?;
    let delay = time(&w.delay, "delay")?;
    if !(duty > 0.0 && duty < 1.0) {
        return Err(src.error(
            duty_raw.span(),
            sub("duty"),
            format!("duty must lie between 0 and 100 %, got {}", duty * 100.0),
            "write e.g. duty = \"30 %\"",
        ));
    }
    let on = duty * period;
    if dead_time >= on.min(period - on) {
        return Err(src.error(
            raw.span(),
            sub("dead_time"),
            "dead time is longer than the high or the low phase",
            "shorten dead_time or move duty towards 50 %",
        ));
    }
    Ok(Waveform::Pwm { amplitude, period, duty, dead_time, rise, delay })
}

/// One value in volts per line; an optional non-numeric first line (a header), blank lines
/// and `#` comments are skipped.
/// Largest samples file read: 64 MiB is about 4 million rows of simulate's CSV, far more
/// than any drive stimulus needs; checked before reading so a device such as `/dev/zero`
/// or a huge file cannot exhaust memory.
pub const MAX_SAMPLES_FILE: u64 = 64 << 20;

/// Read a regular file of at most [`MAX_SAMPLES_FILE`] bytes as text.
fn read_limited(path: &Path) -> std::io::Result<String> {
    use std::io::Read;
    let meta = std::fs::metadata(path)?;
    if !meta.is_file() {
        return Err(std::io::Error::other("not a regular file (a device, pipe or folder)"));
    }
    if meta.len() > MAX_SAMPLES_FILE {
        return Err(std::io::Error::other(format!("{} bytes, more than the limit of {MAX_SAMPLES_FILE}", meta.len())));
    }
    let mut text = String::new();
    // `take` also bounds a file that grows while it is read.
    std::fs::File::open(path)?.take(MAX_SAMPLES_FILE + 1).read_to_string(&mut text)?;
    if text.len() as u64 > MAX_SAMPLES_FILE {
        return Err(std::io::Error::other(format!("more than the limit of {MAX_SAMPLES_FILE} bytes")));
    }
    Ok(text)
}

/// A samples file, read with `csv`: either one column of volts (an optional header line
/// first), or the CSV that `tidewire simulate` writes — a header whose first column is
/// time in seconds, then the volts in the next column (further columns are ignored). With a
/// time column, its step must be the plant's sample period. Blank lines and `#` comments
/// are skipped.
fn read_samples(
    src: &Source,
    path: &toml::Spanned<String>,
    field: &str,
    base_dir: &Path,
    sample_rate: f64,
) -> Result<Vec<f64>, PlantError> {
    let full = base_dir.join(path.get_ref());
    let shown = full.display().to_string();
    let text = read_limited(&full).map_err(|e| {
        src.error(
            path.span(),
            field,
            format!("cannot read samples file {shown}: {e}"),
            format!(
                "give a regular file of at most {} MiB; the path is relative to the plant file's folder",
                MAX_SAMPLES_FILE >> 20
            ),
        )
    })?;
    let at = |line: u64, message: String| PlantError {
        file: shown.clone(),
        line: line as usize,
        column: 1,
        field: field.to_string(),
        message,
        hint: "write one value in volts per line (an optional header line first), or give the CSV \
               that `tidewire simulate` writes (time in s, then volts)"
            .into(),
    };
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .comment(Some(b'#'))
        .trim(csv::Trim::All)
        .from_reader(text.as_bytes());
    // None until the first record is seen; then whether column 0 is time.
    let mut time_column: Option<bool> = None;
    let mut values = Vec::new();
    let mut times = Vec::new();
    for record in reader.records() {
        let record = record.map_err(|e| {
            let line = e.position().map_or(1, |p| p.line());
            at(line, format!("not readable as CSV: {e}"))
        })?;
        let line = record.position().map_or(1, |p| p.line());
        let cell = |k: usize| record.get(k).unwrap_or("");
        if time_column.is_none() {
            let is_header = cell(0).parse::<f64>().is_err();
            let timed = record.len() >= 2 && cell(0).to_lowercase().starts_with("time");
            if record.len() >= 2 && !timed {
                return Err(at(line, format!("{} columns, but the first is not headed \"time (s)\"", record.len())));
            }
            time_column = Some(timed);
            if is_header {
                continue;
            }
        }
        let timed = time_column == Some(true);
        let v = cell(usize::from(timed));
        match v.parse::<f64>() {
            Ok(x) if x.abs() > MAX_DRIVE_VOLTS => {
                return Err(at(line, format!("{v} V is beyond any cable plant (at most {MAX_DRIVE_VOLTS:.0e} V)")))
            }
            Ok(x) if x.is_finite() => values.push(x),
            Ok(_) => return Err(at(line, format!("sample \"{v}\" is not finite"))),
            Err(_) => return Err(at(line, format!("\"{v}\" is not a number of volts"))),
        }
        if timed {
            match cell(0).parse::<f64>() {
                Ok(t) if t.is_finite() => times.push((line, t)),
                _ => return Err(at(line, format!("time \"{}\" is not a number of seconds", cell(0)))),
            }
        }
    }
    if values.is_empty() {
        return Err(at(1, "the samples file holds no values".into()));
    }
    // The time column must step by the sample period: the samples are used one per sample.
    // Allowed slack: a quarter period, or the 7 significant digits simulate writes.
    let dt = 1.0 / sample_rate;
    if let Some(&(_, t0)) = times.first() {
        for (k, &(line, t)) in times.iter().enumerate() {
            let expected = t0 + k as f64 * dt;
            if (t - expected).abs() > (0.25 * dt).max(1e-6 * t.abs()) {
                return Err(at(
                    line,
                    format!(
                        "time {t:e} s, but one sample per period of the plant's sample rate puts it at {expected:e} s"
                    ),
                ));
            }
        }
    }
    Ok(values)
}

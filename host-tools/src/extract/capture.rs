//! Reading a step-response capture: CSV of time (s) and volts at the driven port.
//!
//! A header line and `#` comments are allowed; a value may be a plain number or carry a
//! unit as in plant files (`"120 ns"`, `"1.2 V"`). Everything the extraction relies on is
//! checked here and reported with the file, line and column of the offending value: times
//! must be finite, strictly increasing and evenly spaced (no gaps), volts finite.

use crate::plant::units::{parse_quantity, UnitKind};
use crate::plant::PlantError;
use std::path::Path;

/// Fewest samples a capture must have.
pub const MIN_SAMPLES: usize = 32;
/// Most samples a capture may have (layer peeling costs O(n²)).
pub const MAX_SAMPLES: usize = 16_384;
/// Largest capture file read, bytes (checked before anything is read).
pub const MAX_FILE_BYTES: u64 = 16 << 20;
/// Relative spread of the sample intervals accepted as even sampling.
const JITTER: f64 = 0.02;

/// A capture on an even time grid; sample k is at `t0 + k·dt`.
#[derive(Debug, Clone, PartialEq)]
pub struct Capture {
    /// The file as named by the user.
    pub file: String,
    /// Time of the first sample, s.
    pub t0: f64,
    /// Sample interval, s.
    pub dt: f64,
    /// Volts at the driven port.
    pub volts: Vec<f64>,
    /// Where each sample's volts value sits in the file (line, column), for later errors.
    pub places: Vec<(usize, usize)>,
}

impl Capture {
    /// An error placed at sample `k`'s volts value.
    pub fn error_at(&self, k: usize, message: impl Into<String>, hint: impl Into<String>) -> PlantError {
        let (line, column) = self.places.get(k).copied().unwrap_or((0, 0));
        PlantError {
            file: self.file.clone(),
            line,
            column,
            field: "volts".into(),
            message: message.into(),
            hint: hint.into(),
        }
    }
}

fn located(file: &str, text: &str, offset: usize, field: &str, message: String, hint: &str) -> PlantError {
    let before = &text[..offset.min(text.len())];
    let line = before.matches('\n').count() + 1;
    let start = before.rfind('\n').map_or(0, |i| i + 1);
    PlantError {
        file: file.into(),
        line,
        column: before[start..].chars().count() + 1,
        field: field.into(),
        message,
        hint: hint.into(),
    }
}

/// Read the capture at `path` (size checked before reading).
pub fn read_capture(path: &Path) -> Result<Capture, PlantError> {
    let file = path.display().to_string();
    let whole = |message: String, hint: &str| PlantError {
        file: file.clone(),
        line: 0,
        column: 0,
        field: String::new(),
        message,
        hint: hint.into(),
    };
    let meta = std::fs::metadata(path).map_err(|e| whole(format!("cannot read the capture: {e}"), "check the path"))?;
    if meta.len() > MAX_FILE_BYTES {
        return Err(whole(
            format!("the capture is {} bytes, more than the {} accepted", meta.len(), MAX_FILE_BYTES),
            "cut the capture to the step and its echoes, or decimate it",
        ));
    }
    let bytes = crate::files::read_bounded(path, MAX_FILE_BYTES)
        .map_err(|e| whole(format!("cannot read the capture: {e}"), "give a CSV file of the step response"))?;
    let text = crate::files::utf8_text(bytes).map_err(|e| PlantError {
        line: e.line,
        column: e.column,
        ..whole(
            format!("the capture is not UTF-8 text: byte 0x{:02x} is not a valid character", e.byte),
            "the capture must be UTF-8 text (CSV)",
        )
    })?;
    parse_capture(&text, &file)
}

/// Read capture `text`; `file` names it in errors.
pub fn parse_capture(text: &str, file: &str) -> Result<Capture, PlantError> {
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .comment(Some(b'#'))
        .flexible(true)
        .trim(csv::Trim::All)
        .from_reader(text.as_bytes());
    let mut times: Vec<f64> = Vec::new();
    let mut volts: Vec<f64> = Vec::new();
    let mut places: Vec<(usize, usize)> = Vec::new();
    let mut time_offsets: Vec<usize> = Vec::new();
    let mut record = csv::StringRecord::new();
    let mut first = true;
    loop {
        let more = reader.read_record(&mut record).map_err(|e| {
            let offset = e.position().map_or(0, |p| p.byte() as usize);
            located(
                file,
                text,
                offset,
                "",
                format!("not readable as CSV: {e}"),
                "write one `time, volts` pair per line",
            )
        })?;
        if !more {
            break;
        }
        let start = record.position().map_or(0, |p| p.byte() as usize);
        if record.iter().all(|f| f.is_empty()) {
            continue;
        }
        // The record's ranges are of its trimmed fields; place errors on the raw line.
        let field_offset = |i: usize| -> usize {
            let line = &text[start.min(text.len())..];
            let line = &line[..line.find('\n').unwrap_or(line.len())];
            let mut at = 0;
            for _ in 0..i {
                at = line[at..].find(',').map_or(line.len(), |c| at + c + 1);
            }
            let lead = line[at..].len() - line[at..].trim_start().len();
            start + at + lead
        };
        if record.len() < 2 {
            let end = start + record.as_slice().len();
            return Err(located(
                file,
                text,
                end,
                "volts",
                "a row with one value; expected time and volts".into(),
                "write `time, volts` on every line",
            ));
        }
        if times.len() >= MAX_SAMPLES {
            return Err(located(
                file,
                text,
                start,
                "",
                format!("more than {MAX_SAMPLES} samples"),
                "cut the capture to the step and its echoes, or decimate it",
            ));
        }
        let t_text = &record[0];
        let v_text = &record[1];
        let t = read_value(t_text, UnitKind::Time);
        let v = read_value(v_text, UnitKind::Voltage);
        if first && (t.is_err() || v.is_err()) && t_text.parse::<f64>().is_err() {
            // The first row may be a header such as `time (s), volts (V)`.
            first = false;
            continue;
        }
        first = false;
        let t =
            t.map_err(|m| located(file, text, field_offset(0), "time", m, "give the time in seconds, e.g. 1.5e-7"))?;
        let v =
            v.map_err(|m| located(file, text, field_offset(1), "volts", m, "give the voltage in volts, e.g. 2.37"))?;
        if let Some(&prev) = times.last() {
            if t <= prev {
                return Err(located(
                    file,
                    text,
                    field_offset(0),
                    "time",
                    format!("time {t:e} s does not increase (previous row {prev:e} s)"),
                    "sort the rows by time and remove repeated rows",
                ));
            }
        }
        times.push(t);
        volts.push(v);
        time_offsets.push(field_offset(0));
        let off = field_offset(1);
        let (l, c) = {
            let e = located(file, text, off, "", String::new(), "");
            (e.line, e.column)
        };
        places.push((l, c));
    }
    if times.len() < MIN_SAMPLES {
        let end = text.len();
        return Err(located(
            file,
            text,
            end,
            "",
            format!("the capture has {} samples, fewer than the {MIN_SAMPLES} needed", times.len()),
            "capture the step and its echoes with at least a few dozen samples",
        ));
    }
    let mut steps: Vec<f64> = times.windows(2).map(|w| w[1] - w[0]).collect();
    steps.sort_by(f64::total_cmp);
    let dt = steps[steps.len() / 2];
    for k in 1..times.len() {
        let step = times[k] - times[k - 1];
        if (step - dt).abs() > JITTER * dt {
            let what = if step > 1.5 * dt {
                format!("a gap of {step:e} s before this row; the capture is sampled every {dt:e} s")
            } else {
                format!("uneven sampling: {step:e} s since the previous row, the capture is sampled every {dt:e} s")
            };
            return Err(located(
                file,
                text,
                time_offsets[k],
                "time",
                what,
                "export the capture on an even time grid without dropped samples",
            ));
        }
    }
    Ok(Capture { file: file.into(), t0: times[0], dt, volts, places })
}

/// A plain number, or a number with a unit of `kind`; non-finite values are refused.
fn read_value(text: &str, kind: UnitKind) -> Result<f64, String> {
    let v = match text.parse::<f64>() {
        Ok(v) => v,
        Err(_) => parse_quantity(text, kind).map_err(|e| e.to_string())?,
    };
    if v.is_finite() {
        Ok(v)
    } else {
        Err(format!("\"{text}\" is not a finite number"))
    }
}

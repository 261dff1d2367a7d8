//! `tidewire simulate`: the real fixed-point core on the host, probes to CSV.
use super::compile_cmd::progress;
use super::{io_failure, Failure};
use crate::compile::ProfileKind;
use crate::host_core::{probe_scales, run_core_with, RunError, SampleOut};
use crate::runfile;
use std::path::Path;

/// CSV of time (s) and each probe (V or A): header names carry the unit.
pub(crate) fn probes_csv(
    names: &[(String, &str)],
    dt: f64,
    columns: &[(&str, &Vec<Vec<f64>>)],
) -> Result<Vec<u8>, csv::Error> {
    let mut w = csv::Writer::from_writer(vec![]);
    let mut header = vec!["time (s)".to_string()];
    for (tag, _) in columns {
        for (n, u) in names {
            header.push(if tag.is_empty() { format!("{n} ({u})") } else { format!("{n} {tag} ({u})") });
        }
    }
    w.write_record(&header)?;
    let len = columns.iter().flat_map(|(_, c)| c.iter().map(|t| t.len())).min().unwrap_or(0);
    for k in 0..len {
        let mut row = vec![format!("{:.6e}", k as f64 * dt)];
        for (_, c) in columns {
            for t in c.iter() {
                row.push(format!("{:.6e}", t[k]));
            }
        }
        w.write_record(&row)?;
    }
    w.into_inner().map_err(|e| csv::Error::from(std::io::Error::other(e.to_string())))
}

/// Largest output a run may write: refused before the run starts (a terabyte is past any
/// use of a probe trace, and the run would take days).
pub const MAX_OUTPUT_BYTES: u64 = 1 << 40;

/// Bytes per row: CSV about 14 characters per column ("-1.234567e-07,"), binary 4 per probe.
fn row_bytes(probes: usize, csv: bool, bin: bool) -> u64 {
    (if csv { 14 * (probes as u64 + 1) } else { 0 }) + if bin { 4 * probes as u64 } else { 0 }
}

/// `--samples` within sense: at least 1, and an output that fits [`MAX_OUTPUT_BYTES`].
pub(crate) fn check_samples(n: u64, per_row: u64, dt: f64) -> Result<usize, Failure> {
    let max = MAX_OUTPUT_BYTES / per_row.max(1);
    if n == 0 {
        return Err(Failure { code: 2, message: "error: --samples must be at least 1 (e.g. --samples 1000)".into() });
    }
    if n > max {
        return Err(Failure {
            code: 2,
            message: format!(
                "error: --samples {n}: the output would be about {} bytes ({} of run time), more than the limit of \
                 {MAX_OUTPUT_BYTES} bytes\n  hint: use at most --samples {max}, or fewer probes",
                n.saturating_mul(per_row),
                crate::si::format(n as f64 * dt, "s"),
            ),
        });
    }
    usize::try_from(n).map_err(|_| Failure { code: 2, message: format!("error: --samples {n} is too large here") })
}

/// Output of one run: CSV text rows and/or run-file rows, streamed.
struct Writers {
    csv: Option<csv::Writer<std::io::BufWriter<std::fs::File>>>,
    bin: Option<std::io::BufWriter<std::fs::File>>,
    dt: f64,
    row: Vec<String>,
}

impl Writers {
    fn sample(&mut self, s: &SampleOut<'_>) -> std::io::Result<()> {
        if let Some(w) = &mut self.csv {
            self.row.clear();
            self.row.push(format!("{:.6e}", s.n as f64 * self.dt));
            self.row.extend(s.probes.iter().map(|v| format!("{v:.6e}")));
            w.write_record(&self.row)?;
        }
        if let Some(w) = &mut self.bin {
            runfile::write_row(w, s.raw)?;
        }
        Ok(())
    }

    fn finish(self) -> std::io::Result<()> {
        if let Some(mut w) = self.csv {
            w.flush()?;
        }
        if let Some(mut w) = self.bin {
            std::io::Write::flush(&mut w)?;
        }
        Ok(())
    }
}

/// Where `simulate` writes.
pub(super) struct SimOutputs<'a> {
    pub csv: Option<&'a Path>,
    pub bin: Option<&'a Path>,
}

pub(super) fn run(
    path: &Path,
    samples: Option<u64>,
    out: SimOutputs<'_>,
    profile: ProfileKind,
) -> Result<i32, Failure> {
    if out.csv.is_none() && out.bin.is_none() {
        return Err(Failure { code: 2, message: "error: simulate needs --csv OUT.csv and/or --bin OUT.twrun".into() });
    }
    let named: Vec<(&str, &Path)> =
        [("--csv", out.csv), ("--bin", out.bin)].into_iter().filter_map(|(k, p)| p.map(|p| (k, p))).collect();
    let batch = super::outputs::guard(path, &named)?;
    if samples == Some(0) {
        check_samples(0, 1, 1.0)?;
    }
    // The run's length and output size are checked from the plant file alone, before the
    // plant is compiled and analysed (limits before work).
    let plant = crate::plant::load_plant(path)?;
    let per_row = row_bytes(plant.probes.len(), out.csv.is_some(), out.bin.is_some());
    if let Some(n) = samples {
        check_samples(n, per_row, 1.0 / plant.sample_rate)?;
    }
    let (c, _) = crate::analysis::prepare(&plant, &path.display().to_string(), profile)?;
    let n = check_samples(
        samples.unwrap_or(c.samples as u64),
        row_bytes(c.probe_names.len(), out.csv.is_some(), out.bin.is_some()),
        c.dt,
    )?;
    let mut w = Writers { csv: None, bin: None, dt: c.dt, row: vec![] };
    if let Some(p) = out.csv {
        let f = batch.stream(p).map_err(|e| io_failure(p, e))?;
        let mut cw = csv::Writer::from_writer(std::io::BufWriter::new(f));
        let header: Vec<String> = std::iter::once("time (s)".to_string())
            .chain(c.probe_names.iter().map(|(n, u)| format!("{n} ({u})")))
            .collect();
        cw.write_record(&header).map_err(|e| io_failure(p, e))?;
        w.csv = Some(cw);
    }
    if let Some(p) = out.bin {
        let f = batch.stream(p).map_err(|e| io_failure(p, e))?;
        let mut bw = std::io::BufWriter::new(f);
        let columns: Vec<runfile::Column> = c
            .probe_names
            .iter()
            .zip(probe_scales(&c))
            .map(|((name, unit), scale)| runfile::Column { name: name.clone(), unit: unit.to_string(), scale })
            .collect();
        runfile::write_header(&mut bw, c.dt, &columns).map_err(|e| io_failure(p, e))?;
        w.bin = Some(bw);
    }
    let pb = progress(n, "simulate");
    let mut write_error: Option<std::io::Error> = None;
    let mut sink = |s: SampleOut<'_>| -> Result<(), RunError> {
        if let Err(e) = w.sample(&s) {
            write_error = Some(e);
            return Err(RunError::Thread("write failed".into()));
        }
        if s.n.is_multiple_of(4096) {
            pb.set_position(s.n as u64);
        }
        Ok(())
    };
    let r = run_core_with(&c, n, &[], &mut sink);
    pb.finish_and_clear();
    let shown = out.csv.or(out.bin).unwrap_or(path);
    if let Some(e) = write_error {
        return Err(io_failure(shown, e));
    }
    r.map_err(|e| Failure { code: 2, message: format!("error: {e}") })?;
    w.finish().map_err(|e| io_failure(shown, e))?;
    let done = super::outputs::commit(batch)?;
    for p in done {
        println!("simulated {} samples of \"{}\" ({} profile) -> {}", n, plant.name, c.profile.name(), p.display());
    }
    Ok(0)
}

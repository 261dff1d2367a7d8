//! `tidewire simulate`: the real fixed-point core on the host, probes to CSV.
use super::compile_cmd::progress;
use super::{io_failure, load_and_prepare, Failure};
use crate::compile::ProfileKind;
use crate::host_core::run_core;
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

pub(super) fn run(path: &Path, samples: Option<usize>, csv_path: &Path, profile: ProfileKind) -> Result<i32, Failure> {
    let (plant, c, _) = load_and_prepare(path, profile)?;
    if samples == Some(0) {
        return Err(Failure { code: 2, message: "error: --samples must be at least 1".into() });
    }
    let n = samples.unwrap_or(c.samples);
    let pb = progress(n, "simulate");
    let r = run_core(&c, n, &[], &|k| pb.set_position(k as u64))
        .map_err(|e| Failure { code: 2, message: format!("error: {e}") })?;
    pb.finish_and_clear();
    let bytes = probes_csv(&c.probe_names, c.dt, &[("", &r.recording.probes)]).map_err(|e| io_failure(csv_path, e))?;
    crate::emit::write_atomic(csv_path, &bytes).map_err(|e| io_failure(csv_path, e))?;
    println!("simulated {} samples of \"{}\" ({} profile) -> {}", n, plant.name, c.profile.name(), csv_path.display());
    Ok(0)
}

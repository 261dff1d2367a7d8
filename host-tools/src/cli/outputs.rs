//! Outputs that never destroy anything: every command checks its output paths before any
//! work and writes all of them in one batch (see `files`).
use super::{io_failure, Failure};
use crate::files::{check_outputs, Batch};
use std::path::{Path, PathBuf};

/// The files a plant reads besides itself: a drive's samples file (`drive.waveform` or
/// `drive.stimulus` `{ samples = "..." }`, relative to the plant's folder). Read from the
/// TOML alone, before any work; a plant that does not parse names none (loading it fails
/// with a located error before anything is written).
fn referenced_inputs(plant: &Path) -> Vec<PathBuf> {
    // Read as the loader reads it (bounded: a device or a huge file cannot exhaust memory).
    let Ok(text) = crate::plant::file::read_plant_text(plant) else { return vec![] };
    let Ok(doc) = text.parse::<toml::Table>() else { return vec![] };
    let dir = plant.parent().filter(|d| !d.as_os_str().is_empty()).unwrap_or(Path::new("."));
    ["waveform", "stimulus"]
        .iter()
        .filter_map(|w| doc.get("drive")?.get(w)?.get("samples")?.as_str().map(|s| dir.join(s)))
        .collect()
}

/// Check `outputs` (option, path) against the plant file, the files it reads and each
/// other, then open the batch that stages them.
pub(crate) fn guard(plant: &Path, outputs: &[(&str, &Path)]) -> Result<Batch, Failure> {
    let extra = referenced_inputs(plant);
    let inputs: Vec<&Path> = std::iter::once(plant).chain(extra.iter().map(PathBuf::as_path)).collect();
    check_outputs(&inputs, outputs).map_err(|e| Failure { code: 2, message: format!("error: {e}") })?;
    Ok(Batch::begin())
}

/// Rename every staged output over its target.
pub(crate) fn commit(batch: Batch) -> Result<Vec<PathBuf>, Failure> {
    batch.commit().map_err(|(p, e)| io_failure(&p, e))
}

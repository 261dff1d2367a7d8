//! Outputs that never destroy anything: every command checks its output paths before any
//! work and writes all of them in one batch (see `files`).
use super::{io_failure, Failure};
use crate::files::{check_outputs, Batch};
use std::path::{Path, PathBuf};

/// Check `outputs` (option, path) against the plant file and each other, then open the
/// batch that stages them.
pub(crate) fn guard(plant: &Path, outputs: &[(&str, &Path)]) -> Result<Batch, Failure> {
    check_outputs(&[plant], outputs).map_err(|e| Failure { code: 2, message: format!("error: {e}") })?;
    Ok(Batch::begin())
}

/// Rename every staged output over its target.
pub(crate) fn commit(batch: Batch) -> Result<Vec<PathBuf>, Failure> {
    batch.commit().map_err(|(p, e)| io_failure(&p, e))
}

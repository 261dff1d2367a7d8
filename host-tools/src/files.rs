//! The one way this crate writes a file: atomically.
//!
//! A temporary file is created beside the target (same folder, so the rename stays on one
//! file system), written, flushed to disk and renamed over the target. A reader sees the old
//! file or the new one, never half of one; on any failure the temporary file is removed
//! (`tempfile` deletes it when dropped) and the target is untouched.
use std::io::Write;
use std::path::Path;

/// Write `bytes` to `path` atomically.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let dir = path.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
    let name = path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_else(|| "out".into());
    let prefix = format!(".{name}.");
    let mut builder = tempfile::Builder::new();
    builder.prefix(&prefix).suffix(".tmp");
    // tempfile makes its files private (0600); an output is an ordinary file (0644, before
    // the umask), as `File::create` would make it.
    #[cfg(unix)]
    builder.permissions(std::os::unix::fs::PermissionsExt::from_mode(0o644));
    let mut tmp = builder.tempfile_in(dir)?;
    tmp.write_all(bytes)?;
    tmp.as_file().sync_all()?;
    tmp.persist(path).map_err(|e| e.error)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn replaces_the_file_and_leaves_no_temporary_behind() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("out.bin");
        write_atomic(&p, b"old").unwrap();
        write_atomic(&p, b"new contents").unwrap();
        assert_eq!(std::fs::read(&p).unwrap(), b"new contents");
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }

    #[test]
    fn a_missing_folder_is_an_error_and_writes_nothing() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("no-such-folder").join("out.bin");
        assert!(write_atomic(&p, b"x").is_err());
        assert!(!p.exists());
    }
}

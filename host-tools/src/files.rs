//! The one way this crate writes a file: atomically, and never destroying anything.
//!
//! A temporary file is created beside the target (same folder, so the rename stays on one
//! file system), written, flushed to disk and renamed over the target. A reader sees the old
//! file or the new one, never half of one; on any failure the temporary file is removed
//! (`tempfile` deletes it when dropped) and the target is untouched.
//!
//! A command with several outputs opens a [`Batch`] first: while it is open, every
//! [`write_atomic`] on that thread only *stages* its temporary, and [`Batch::commit`] renames
//! them all once every output has been written. A batch dropped without commit (an error, a
//! panic) deletes its temporaries, so a failed command leaves no output and no temporary.
//! Before any work, [`check_outputs`] refuses an output that is an input, two outputs on one
//! path, and an existing target that is not a writable regular file (a symlink, a device, a
//! folder, a read-only file): those are never replaced.
use std::cell::RefCell;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::Mutex;
use tempfile::NamedTempFile;

/// Read at most `limit` bytes of the file at `path`; a longer file is an error naming the
/// limit. `take` bounds what is read, so a device (`/dev/zero`), a pipe or a file that grows
/// while it is read cannot exhaust memory, which a size taken from its metadata (0 for a
/// device) would not prevent.
pub fn read_bounded(path: &Path, limit: u64) -> std::io::Result<Vec<u8>> {
    use std::io::Read;
    if std::fs::metadata(path)?.is_dir() {
        return Err(std::io::Error::other("this is a folder, not a file"));
    }
    let mut bytes = Vec::new();
    std::fs::File::open(path)?.take(limit.saturating_add(1)).read_to_end(&mut bytes)?;
    if bytes.len() as u64 > limit {
        return Err(std::io::Error::other(format!("more than the limit of {limit} bytes")));
    }
    Ok(bytes)
}

/// Where bytes stop being UTF-8 text: the first bad byte, its offset, and its 1-based line and
/// column (columns in characters of the valid text before it), to place the error in the
/// file as any other reading error is placed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct NotUtf8 {
    pub byte: u8,
    pub offset: usize,
    pub line: usize,
    pub column: usize,
}

/// `bytes` as text, or where they stop being UTF-8.
pub fn utf8_text(bytes: Vec<u8>) -> Result<String, NotUtf8> {
    String::from_utf8(bytes).map_err(|e| {
        let offset = e.utf8_error().valid_up_to();
        let bytes = e.as_bytes();
        let prefix = std::str::from_utf8(bytes.get(..offset).unwrap_or_default()).unwrap_or_default();
        let line = prefix.matches('\n').count() + 1;
        let column = prefix.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
        NotUtf8 { byte: bytes.get(offset).copied().unwrap_or_default(), offset, line, column }
    })
}

/// Why an output path is refused before any work.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum OutputError {
    #[error(
        "{output}: this is also the input {input}; writing it would destroy the input (choose another output path)"
    )]
    IsInput { output: String, input: String },
    #[error(
        "{path}: given for both {first} and {second}; one would overwrite the other (give each output its own path)"
    )]
    Twice { path: String, first: String, second: String },
    #[error("{path}: exists and is a symbolic link; tidewire does not replace links (remove it or write elsewhere)")]
    Symlink { path: String },
    #[error(
        "{path}: exists and is not a regular file ({kind}); tidewire only replaces regular files (write elsewhere)"
    )]
    NotRegular { path: String, kind: &'static str },
    #[error("{path}: exists and is read-only; tidewire does not replace it (make it writable or write elsewhere)")]
    ReadOnly { path: String },
    #[error("{path}: the folder {folder} {why}; tidewire does not create folders (create it or write elsewhere)")]
    NoFolder { path: String, folder: String, why: &'static str },
}

/// The path as the file system resolves it: the canonical folder and the file name, so
/// `./a.toml`, `a.toml` and `dir/../a.toml` compare equal even before the file exists.
fn resolved(p: &Path) -> PathBuf {
    if let Ok(c) = p.canonicalize() {
        return c;
    }
    let dir = p.parent().filter(|d| !d.as_os_str().is_empty()).unwrap_or(Path::new("."));
    match (dir.canonicalize(), p.file_name()) {
        (Ok(d), Some(n)) => d.join(n),
        _ => p.to_path_buf(),
    }
}

/// What an existing target is, if it may not be replaced.
fn refuse_existing(path: &Path) -> Result<(), OutputError> {
    let shown = path.display().to_string();
    let Ok(meta) = std::fs::symlink_metadata(path) else { return Ok(()) };
    let ft = meta.file_type();
    if ft.is_symlink() {
        return Err(OutputError::Symlink { path: shown });
    }
    if !ft.is_file() {
        let kind = if ft.is_dir() { "a folder" } else { special_kind(&ft) };
        return Err(OutputError::NotRegular { path: shown, kind });
    }
    // Checked on the mode bits, not by trying to open: run as root, an open for writing
    // succeeds on a read-only file, and the rename would replace it.
    if meta.permissions().readonly() {
        return Err(OutputError::ReadOnly { path: shown });
    }
    Ok(())
}

/// The folder an output goes into must exist before any work: its temporary is created
/// there, and a missing folder found only when the results are written would lose the run.
fn check_folder(path: &Path) -> Result<(), OutputError> {
    let dir = path.parent().filter(|d| !d.as_os_str().is_empty()).unwrap_or(Path::new("."));
    let why = match std::fs::metadata(dir) {
        Ok(m) if m.is_dir() => return Ok(()),
        Ok(_) => "is not a folder",
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => "does not exist",
        Err(_) => "cannot be read",
    };
    Err(OutputError::NoFolder { path: path.display().to_string(), folder: dir.display().to_string(), why })
}

#[cfg(unix)]
fn special_kind(ft: &std::fs::FileType) -> &'static str {
    use std::os::unix::fs::FileTypeExt;
    if ft.is_block_device() || ft.is_char_device() {
        "a device"
    } else if ft.is_fifo() {
        "a pipe"
    } else if ft.is_socket() {
        "a socket"
    } else {
        "a special file"
    }
}

#[cfg(not(unix))]
fn special_kind(_: &std::fs::FileType) -> &'static str {
    "a special file"
}

/// Check a command's outputs before it does any work. `inputs` are files the command reads;
/// `outputs` are (option name, path).
pub fn check_outputs(inputs: &[&Path], outputs: &[(&str, &Path)]) -> Result<(), OutputError> {
    let ins: Vec<(PathBuf, &Path)> = inputs.iter().map(|p| (resolved(p), *p)).collect();
    let mut seen: Vec<(PathBuf, &str)> = vec![];
    for (what, p) in outputs {
        let r = resolved(p);
        if let Some((_, input)) = ins.iter().find(|(i, _)| *i == r) {
            return Err(OutputError::IsInput { output: p.display().to_string(), input: input.display().to_string() });
        }
        if let Some((_, first)) = seen.iter().find(|(s, _)| *s == r) {
            return Err(OutputError::Twice {
                path: p.display().to_string(),
                first: first.to_string(),
                second: what.to_string(),
            });
        }
        refuse_existing(p)?;
        check_folder(p)?;
        seen.push((r, what));
    }
    Ok(())
}

/// Every temporary of this process that is not yet renamed or deleted, so that a signal
/// handler can delete them ([`remove_temporaries`]): a run stopped with Ctrl-C or `kill`
/// leaves no orphan temporary (`kill -9` cannot be caught).
static LIVE: Mutex<Vec<PathBuf>> = Mutex::new(vec![]);

/// A temporary's entry in [`LIVE`], removed when this guard drops.
struct Live(PathBuf);

impl Live {
    fn new(p: &Path) -> Live {
        if let Ok(mut v) = LIVE.lock() {
            v.push(p.to_path_buf());
        }
        Live(p.to_path_buf())
    }
}

impl Drop for Live {
    fn drop(&mut self) {
        if let Ok(mut v) = LIVE.lock() {
            v.retain(|p| *p != self.0);
        }
    }
}

/// Delete every temporary this process still holds (for a signal handler; the process
/// should exit right after).
pub fn remove_temporaries() {
    if let Ok(v) = LIVE.lock() {
        for p in v.iter() {
            let _ = std::fs::remove_file(p);
        }
    }
}

/// A staged output: its temporary and where it goes.
struct Staged {
    tmp: NamedTempFile,
    target: PathBuf,
    _live: Live,
}

thread_local! {
    /// The open batch of this thread, if any (the writers in `emit` and `plot` take only a
    /// path; a batch lets a command make all their outputs appear together or not at all).
    static BATCH: RefCell<Option<Vec<Staged>>> = const { RefCell::new(None) };
}

/// All outputs of one command: staged, then renamed together by [`Batch::commit`].
#[must_use = "a batch that is not committed deletes its outputs"]
pub struct Batch {
    _not_send: std::marker::PhantomData<*const ()>,
}

impl Batch {
    /// Open a batch on this thread (replacing none: batches do not nest).
    pub fn begin() -> Batch {
        BATCH.with(|b| *b.borrow_mut() = Some(vec![]));
        Batch { _not_send: std::marker::PhantomData }
    }

    /// A temporary for a streamed output (beside `path`), staged in this batch; write to the
    /// returned handle, then commit.
    pub fn stream(&self, path: &Path) -> std::io::Result<std::fs::File> {
        let tmp = temporary(path)?;
        let live = Live::new(tmp.path());
        let f = tmp.as_file().try_clone()?;
        BATCH.with(|b| {
            if let Some(v) = b.borrow_mut().as_mut() {
                v.push(Staged { tmp, target: path.to_path_buf(), _live: live });
            }
        });
        Ok(f)
    }

    /// Flush every staged output to disk, then rename each over its target. On an error
    /// before the first rename nothing is replaced; temporaries not renamed are deleted.
    pub fn commit(self) -> Result<Vec<PathBuf>, (PathBuf, std::io::Error)> {
        let staged = BATCH.with(|b| b.borrow_mut().take()).unwrap_or_default();
        for s in &staged {
            s.tmp.as_file().sync_all().map_err(|e| (s.target.clone(), e))?;
            // The target may have changed since `check_outputs`: never rename over a link,
            // a device or a read-only file.
            refuse_existing(&s.target).map_err(|e| (s.target.clone(), std::io::Error::other(e.to_string())))?;
        }
        let mut done = vec![];
        for s in staged {
            let target = s.target.clone();
            s.tmp.persist(&target).map_err(|e| (target.clone(), e.error))?;
            done.push(target);
        }
        Ok(done)
    }
}

impl Drop for Batch {
    fn drop(&mut self) {
        // Dropping the staged temporaries deletes them.
        BATCH.with(|b| b.borrow_mut().take());
    }
}

fn temporary(path: &Path) -> std::io::Result<NamedTempFile> {
    refuse_existing(path).map_err(|e| std::io::Error::other(e.to_string()))?;
    let dir = path.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
    let name = path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_else(|| "out".into());
    let prefix = format!(".{name}.");
    let mut builder = tempfile::Builder::new();
    builder.prefix(&prefix).suffix(".tmp");
    // tempfile makes its files private (0600); an output is an ordinary file (0644, before
    // the umask), as `File::create` would make it.
    #[cfg(unix)]
    builder.permissions(std::os::unix::fs::PermissionsExt::from_mode(0o644));
    builder.tempfile_in(dir)
}

/// Write `bytes` to `path` atomically; inside an open [`Batch`], stage it for the commit.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let mut tmp = temporary(path)?;
    let live = Live::new(tmp.path());
    tmp.write_all(bytes)?;
    let staged = BATCH.with(|b| match b.borrow_mut().as_mut() {
        Some(v) => {
            v.push(Staged { tmp, target: path.to_path_buf(), _live: live });
            None
        }
        None => Some((tmp, live)),
    });
    if let Some((tmp, _live)) = staged {
        tmp.as_file().sync_all()?;
        tmp.persist(path).map_err(|e| e.error)?;
    }
    Ok(())
}

#[cfg(test)]
mod tests;

//! The two outputs for the core: a binary image a rig loads at run time, and Rust source
//! with the network as a `static` for firmware that includes it at build time. Both carry
//! the same [`Network`], so the same plant gives the same solver either way.
mod image;
mod rust_source;

pub use image::{image_bytes, write_image};
pub use rust_source::{capacities, rust_source, write_rust_source};

use std::io::Write;
use std::path::Path;

/// Write `bytes` to `path` atomically: a temporary file in the same folder, then a rename,
/// so that a failure leaves no half-written file behind.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let dir = path.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
    let name = path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_else(|| "out".into());
    let tmp = dir.join(format!(".{name}.tmp{}", std::process::id()));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path)
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}

//! Binary image writer (the reader, with the format table, is `tidewire_core::image`).
use std::path::Path;
use tidewire_core::image::header;
use tidewire_core::Network;

/// The image of `net`: 16-byte header (magic, version, length, CRC-32) then the postcard body.
pub fn image_bytes(net: &Network<'_>) -> Vec<u8> {
    // Serializing plain integers and slices into a Vec cannot fail.
    let body = postcard::to_allocvec(net).unwrap_or_default();
    let mut out = header(&body).to_vec();
    out.extend_from_slice(&body);
    out
}

/// Write the image of `net` to `path` (atomically).
pub fn write_image(path: &Path, net: &Network<'_>) -> std::io::Result<()> {
    super::write_atomic(path, &image_bytes(net))
}

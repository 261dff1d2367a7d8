//! The two outputs for the core: a binary image a rig loads at run time, and Rust source
//! with the network as a `static` for firmware that includes it at build time. Both carry
//! the same [`Network`](tidewire_core::Network), so the same plant gives the same solver either way.
mod image;
mod rust_source;
mod specialised;

pub use crate::compile::capacities;
pub use image::{image_bytes, write_image};
pub use rust_source::{rust_source, write_rust_source};
pub use specialised::{plant_rust_source, specialised_memory_waves, specialised_source, switched_junctions, EmitError};

/// The crate's one atomic writer, re-exported here for the tools that write images.
pub use crate::files::write_atomic;

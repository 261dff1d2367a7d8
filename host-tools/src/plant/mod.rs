//! Plants as engineers describe them: the physical model, plant files, cable presets.
pub mod model;

pub use model::*;

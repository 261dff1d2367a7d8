//! Plants as engineers describe them: the physical model, plant files, cable presets.
pub mod error;
pub mod file;
pub mod model;
pub mod presets;
pub mod units;

pub use error::PlantError;
pub use file::{load_plant, parse_plant};
pub use model::*;

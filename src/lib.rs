//! The `tidewire` root package: end-to-end tests (`tests/`), benches (`benches/`) and
//! examples (`examples/`) for the two crates of the workspace. It re-exports both so that
//! examples read as a user's code would.
pub use tidewire_core as core;
pub use tidewire_host as host;

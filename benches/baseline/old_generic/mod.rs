//! The generic step as it was when issue 9 was filed, frozen: a speed baseline only.
//!
//! Taken from commit `c696084` (2 Dec 2026) of this repository, files
//! `core/src/{network,error,profile,configure,solver}.rs` (read with
//! `git show c696084:core/src/<file>.rs`). What changed on the way here:
//! * trimmed: the image reader (`image.rs`), the serde and defmt derives, `Display` of the
//!   errors, and the host conveniences of the solver that stepping does not use (`set_shunt`,
//!   `set_broken`, `line_end_waves`, `is_at_rest`, volts read-outs, `process_with_probe`,
//!   weight and impedance read-outs, memory and port counts) and the profile's unit tests;
//! * paths: `crate::` became `super::`, and the profile's markers are this module's own
//!   `Wide` and `Narrow` (not the core's, whose `Profile` trait is a different one now);
//! * added: `convert.rs`, today's `tidewire_core::Network` in the old description.
//!
//! The per-sample code (`solver.rs`: `step`, `scatter`, `propagate`; `profile.rs`: the node,
//! series, adaptor and loss-section arithmetic) is the old code unchanged: one enum matched
//! per junction, per-port ring cursor/start/end with their own bounds checks, a separate
//! propagate pass with a partner look-up, the exact 64-bit (narrow: 32-bit) node division
//! with per-port truncation. It is not part of the core and is not maintained: it exists so
//! that `benches/forms.rs` can measure today's generic and specialised steps against it in
//! one run, and `tests/old_step.rs` checks it still computes what the core computed then.

// A frozen copy keeps the old types whole (fields and variants that only the trimmed
// reconfiguration API reached, such as `Mode::Broken`), and the bench and the test each
// use part of it.
#![allow(dead_code)]

pub mod configure;
pub mod convert;
pub mod error;
pub mod network;
pub mod profile;
pub mod solver;

pub use convert::from_core;
pub use profile::{Narrow, Wide};
pub use solver::Solver;

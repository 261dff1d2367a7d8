//! The one error type of the floating-point references.
//!
//! The references take a [`Plant`](crate::plant::Plant) that the plant-file reader has
//! already checked, but a `Plant` can also be built in code, so every value the physics
//! needs is checked again here and a bad one is named with its item and, where the item
//! came from a file, its line and column.

use crate::plant::Span;

/// Why a reference could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum ReferenceError {
    /// The plant has no probes, so there is nothing to compute.
    /// A scheduled event the exact reference cannot follow.
    #[error("the exact reference cannot follow this event: {0}")]
    Unsupported(String),
    #[error("the plant has no probes, so the reference has nothing to compute")]
    NoProbes,
    /// A run of zero samples was asked for.
    #[error("a reference run needs at least one sample")]
    NoSamples,
    /// A probe index past the end of `plant.probes`.
    #[error("probe {index} does not exist: the plant has {count} probe(s)")]
    ProbeOutOfRange { index: usize, count: usize },
    /// An option of the computation is outside its range.
    #[error("option {name} = {value} is out of range: expected {expected}")]
    BadOption { name: &'static str, value: f64, expected: &'static str },
    /// A plant item holds a value the physics cannot use (or points at a missing item).
    #[error("{item}{}: {field}: {message}", place(.span))]
    Invalid { item: String, span: Span, field: &'static str, message: String },
    /// The nodal matrix is singular at this complex frequency s = sigma + j·2·pi·f.
    #[error(
        "the nodal equations are singular at s = {sigma:e} + j·2π·{f_hz:e} Hz (a node with nothing connected to it?)"
    )]
    Singular { sigma: f64, f_hz: f64 },
    /// The solution at this complex frequency is not a finite number.
    #[error("the nodal solution is not finite at s = {sigma:e} + j·2π·{f_hz:e} Hz")]
    NonFinite { sigma: f64, f_hz: f64 },
}

impl ReferenceError {
    /// An [`ReferenceError::Invalid`] for `item`, at `span`, about `field`.
    pub(crate) fn invalid(item: String, span: Span, field: &'static str, message: String) -> Self {
        ReferenceError::Invalid { item, span, field, message }
    }
}

/// " (line L, column C)" for a span from a file, nothing for a plant built in code.
fn place(span: &Span) -> String {
    if span.line > 0 {
        format!(" (line {}, column {})", span.line, span.column)
    } else {
        String::new()
    }
}

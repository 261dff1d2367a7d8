//! The one error type of the floating-point references.
//!
//! The references take a [`Plant`](crate::plant::Plant) that the plant-file reader has
//! already checked, but a `Plant` can also be built in code, so every value the physics
//! needs is checked again here and a bad one is named with its item and, where the item
//! came from a file, its line and column.

use crate::plant::Span;
use std::fmt;

/// Why a reference could not be computed.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum ReferenceError {
    /// The plant has no probes, so there is nothing to compute.
    NoProbes,
    /// A run of zero samples was asked for.
    NoSamples,
    /// A probe index past the end of `plant.probes`.
    ProbeOutOfRange { index: usize, count: usize },
    /// An option of the computation is outside its range.
    BadOption { name: &'static str, value: f64, expected: &'static str },
    /// A plant item holds a value the physics cannot use (or points at a missing item).
    Invalid { item: String, span: Span, field: &'static str, message: String },
    /// The nodal matrix is singular at this complex frequency s = sigma + j·2·pi·f.
    Singular { sigma: f64, f_hz: f64 },
    /// The solution at this complex frequency is not a finite number.
    NonFinite { sigma: f64, f_hz: f64 },
}

impl ReferenceError {
    /// An [`ReferenceError::Invalid`] for `item`, at `span`, about `field`.
    pub(crate) fn invalid(item: String, span: Span, field: &'static str, message: String) -> Self {
        ReferenceError::Invalid { item, span, field, message }
    }
}

impl fmt::Display for ReferenceError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ReferenceError::NoProbes => {
                write!(f, "the plant has no probes, so the reference has nothing to compute")
            }
            ReferenceError::NoSamples => write!(f, "a reference run needs at least one sample"),
            ReferenceError::ProbeOutOfRange { index, count } => {
                write!(f, "probe {index} does not exist: the plant has {count} probe(s)")
            }
            ReferenceError::BadOption { name, value, expected } => {
                write!(f, "option {name} = {value} is out of range: expected {expected}")
            }
            ReferenceError::Invalid { item, span, field, message } => {
                write!(f, "{item}")?;
                if span.line > 0 {
                    write!(f, " (line {}, column {})", span.line, span.column)?;
                }
                write!(f, ": {field}: {message}")
            }
            ReferenceError::Singular { sigma, f_hz } => write!(
                f,
                "the nodal equations are singular at s = {sigma:e} + j·2π·{f_hz:e} Hz \
                 (a node with nothing connected to it?)"
            ),
            ReferenceError::NonFinite { sigma, f_hz } => {
                write!(f, "the nodal solution is not finite at s = {sigma:e} + j·2π·{f_hz:e} Hz")
            }
        }
    }
}

impl std::error::Error for ReferenceError {}

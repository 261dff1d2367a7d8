//! Node loads to core shunts and reactive elements.
use super::{err, to_milliohm};
use crate::plant::{Load, PlantError, Span};
use tidewire_core::{ElementKind, Shunt};

/// A reactive part of a load: kind, port resistance (mΩ), series resistance (mΩ).
pub(super) type ElementSpec = (ElementKind, u32, u32);

/// A load as (shunt, [(element kind, port mΩ, series mΩ)]). A capacitor C at sample period
/// T is the bilinear-transform port of resistance T/(2C) (docs/references.md, wave
/// digital filters).
pub(super) fn realize(
    load: &Load,
    dt: f64,
    file: &str,
    span: Span,
    field: &str,
) -> Result<(Shunt, Vec<ElementSpec>), PlantError> {
    let cap = |c: f64| -> Result<u32, PlantError> {
        let r = dt / (2.0 * c);
        if r * 1000.0 < 1.0 {
            return Err(err(
                file,
                span,
                field,
                format!("capacitance {c:e} F is too large for the sample rate (port resistance below 1 mohm)"),
                "describe such a large capacitor as a short, or lower the sample rate",
            ));
        }
        if r > 4e6 {
            return Err(err(
                file,
                span,
                field,
                format!("capacitance {c:e} F is too small to matter"),
                "remove it (it is an open)",
            ));
        }
        Ok(to_milliohm(r))
    };
    Ok(match *load {
        Load::Open => (Shunt::Open, vec![]),
        Load::Short => (Shunt::Short, vec![]),
        Load::Resistor(r) => (Shunt::Resistor { milliohm: to_milliohm(r) }, vec![]),
        Load::Capacitor(c) => (Shunt::Open, vec![(ElementKind::Capacitor, cap(c)?, 0)]),
        Load::SeriesRc { r, c } => (Shunt::Open, vec![(ElementKind::Capacitor, cap(c)?, to_milliohm(r))]),
        Load::ParallelRc { r, c } => {
            (Shunt::Resistor { milliohm: to_milliohm(r) }, vec![(ElementKind::Capacitor, cap(c)?, 0)])
        }
    })
}

//! Node loads to core shunts and reactive elements.
use super::{checked_milliohm, err, to_milliohm, MAX_OHM, MIN_OHM};
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
    // The capacitor's port resistance T/(2C) must lie in the core's range [MIN_OHM,
    // MAX_OHM]; T/(2C) <= MAX_OHM  <=>  fs >= 1/(2·C·MAX_OHM), and >= MIN_OHM  <=>
    // fs <= 1/(2·C·MIN_OHM).
    let cap = |c: f64| -> Result<u32, PlantError> {
        let r = dt / (2.0 * c);
        let shown = crate::si::format(c, "F");
        if r < MIN_OHM {
            return Err(err(
                file,
                span,
                field,
                format!(
                    "at this sample rate the capacitor {shown} acts through a port resistance T/(2C) = {}, below the core's 1 mohm",
                    crate::si::format(r, "ohm")
                ),
                format!(
                    "lower plant.sample_rate to at most \"{}\", or describe the capacitor as a short",
                    crate::si::at_most(1.0 / (2.0 * c * MIN_OHM), "Hz")
                ),
            ));
        }
        if r > MAX_OHM {
            return Err(err(
                file,
                span,
                field,
                format!(
                    "at this sample rate one sample ({}) is so long against the capacitor {shown} that its port resistance T/(2C) = {} is above the core's {}",
                    crate::si::format(dt, "s"),
                    crate::si::format(r, "ohm"),
                    crate::si::at_most(MAX_OHM, "ohm")
                ),
                format!(
                    "raise plant.sample_rate to at least \"{}\"",
                    crate::si::at_least(1.0 / (2.0 * c * MAX_OHM), "Hz")
                ),
            ));
        }
        // In range by the two checks above.
        to_milliohm(r)
            .ok_or_else(|| err(file, span, field, format!("{shown}: port resistance out of range"), "check the value"))
    };
    let ohm = |r: f64| checked_milliohm(r, file, span, field);
    Ok(match *load {
        Load::Open => (Shunt::Open, vec![]),
        Load::Short => (Shunt::Short, vec![]),
        Load::Resistor(r) => (Shunt::Resistor { milliohm: ohm(r)? }, vec![]),
        Load::Capacitor(c) => (Shunt::Open, vec![(ElementKind::Capacitor, cap(c)?, 0)]),
        Load::SeriesRc { r, c } => (Shunt::Open, vec![(ElementKind::Capacitor, cap(c)?, ohm(r)?)]),
        Load::ParallelRc { r, c } => {
            (Shunt::Resistor { milliohm: ohm(r)? }, vec![(ElementKind::Capacitor, cap(c)?, 0)])
        }
    })
}

//! `[cable.<name>]` tables: presets, overrides, propagation and loss.
//!
//! Propagation is given one way only: `impedance` with `velocity_factor` or `delay`
//! (v = 1/delay), or `inductance` with `capacitance` (Z0 = sqrt(L'/C'), v = 1/sqrt(L'·C')).
//! Loss is given either as attenuation points (fitted, see [`super::loss`]) or directly as
//! `loss_coefficients`.

use std::collections::BTreeMap;

use toml::Spanned;

use super::locate::Source;
use super::loss::{fit_loss, FitError};
use super::raw::{RawCable, Text};
use super::values::{non_negative, positive, quantity, written};
use crate::plant::error::PlantError;
use crate::plant::model::{CableId, CableType, LossModel, C0};
use crate::plant::presets;
use crate::plant::units::UnitKind;

/// The largest DC loop resistance per metre a cable may have: 1 kohm/m is far above any cable
/// (resistance wire for heaters is a few ohm/m; 24 AWG copper pairs about 0.19 ohm/m
/// [memory]) and keeps the exact reference's nodal solution finite.
const MAX_RESISTANCE_PER_M: f64 = 1e3;

/// The cable types of a plant: those of the file, then presets used by name.
pub struct Cables {
    pub list: Vec<CableType>,
}

impl Cables {
    /// Build the `[cable.*]` tables, in file order.
    pub fn read(src: &Source, raw: &BTreeMap<Text, Spanned<RawCable>>) -> Result<Cables, PlantError> {
        let mut entries: Vec<_> = raw.iter().collect();
        entries.sort_by_key(|(k, _)| k.span().start);
        let mut list = Vec::with_capacity(entries.len());
        for (key, table) in entries {
            list.push(cable(src, key, table.get_ref())?);
        }
        Ok(Cables { list })
    }

    /// The cable a segment names: a `[cable.x]` of the file, else a preset (added once).
    pub fn resolve(&mut self, src: &Source, name: &Text, field: &str) -> Result<CableId, PlantError> {
        if let Some(i) = self.list.iter().position(|c| &c.name == name.get_ref()) {
            return Ok(i);
        }
        if let Some(preset) = presets::find(name.get_ref()) {
            self.list.push(preset);
            return Ok(self.list.len() - 1);
        }
        Err(src.error(
            name.span(),
            field,
            format!("unknown cable \"{}\"", name.get_ref()),
            format!("define [cable.{}] or use one of: {}", name.get_ref(), known(&self.list)),
        ))
    }
}

fn known(list: &[CableType]) -> String {
    let mut names: Vec<&str> = list.iter().map(|c| c.name.as_str()).collect();
    for p in presets::NAMES {
        if !names.contains(p) {
            names.push(p);
        }
    }
    names.join(", ")
}

fn cable(src: &Source, key: &Text, c: &RawCable) -> Result<CableType, PlantError> {
    let name = key.get_ref().clone();
    let path = |f: &str| format!("cable.{name}.{f}");
    let mut out = match &c.preset {
        Some(p) => presets::find(p.get_ref()).ok_or_else(|| {
            src.error(
                p.span(),
                path("preset"),
                format!("unknown preset \"{}\"", p.get_ref()),
                format!("use one of: {}", presets::NAMES.join(", ")),
            )
        })?,
        None => CableType {
            name: name.clone(),
            z0: f64::NAN,
            velocity: f64::NAN,
            r_per_m: 0.0,
            loss: None,
            source: String::new(),
        },
    };
    let mut overridden = Vec::new();

    // Propagation: exactly one way of giving the speed (or none, to keep the preset's).
    let lc = c.inductance.is_some() || c.capacitance.is_some();
    let ways = [c.velocity_factor.is_some(), c.delay.is_some(), lc];
    if ways.iter().filter(|w| **w).count() > 1 {
        return Err(src.error(
            key.span(),
            path("velocity_factor"),
            format!("cable \"{name}\" gives its speed more than one way"),
            "keep one of `velocity_factor`, `delay`, or `inductance` + `capacitance`",
        ));
    }
    if let Some(z) = &c.impedance {
        if lc {
            return Err(src.error(
                z.span(),
                path("impedance"),
                "`impedance` together with `inductance` and `capacitance` over-determines the cable",
                "remove `impedance` (it follows as sqrt(L/C)) or give `velocity_factor` instead",
            ));
        }
        out.z0 = positive(src, z, UnitKind::Resistance, &path("impedance"), "impedance")?;
        overridden.push("impedance");
    }
    if let Some(vf) = &c.velocity_factor {
        let f = &path("velocity_factor");
        let x = quantity(src, vf, UnitKind::Dimensionless, f)?;
        if !(x > 0.0 && x <= 1.0) {
            return Err(src.error(
                vf.span(),
                f,
                format!("velocity factor must be in (0, 1], got {}", written(vf)),
                "a velocity factor is the fraction of light speed, typically 0.6 to 0.9",
            ));
        }
        out.velocity = x * C0;
        overridden.push("velocity_factor");
    }
    if let Some(d) = &c.delay {
        let f = &path("delay");
        let delay = positive(src, d, UnitKind::DelayPerLength, f, "delay")?;
        out.velocity = check_speed(src, d.span(), f, 1.0 / delay, "this delay")?;
        overridden.push("delay");
    }
    if lc {
        let (Some(l), Some(cap)) = (&c.inductance, &c.capacitance) else {
            return Err(src.error(
                key.span(),
                path(if c.inductance.is_some() { "capacitance" } else { "inductance" }),
                "`inductance` and `capacitance` must be given together",
                "add the missing one, or use `impedance` with `velocity_factor`",
            ));
        };
        let l = positive(src, l, UnitKind::InductancePerLength, &path("inductance"), "inductance")?;
        let cf = &path("capacitance");
        let cp = positive(src, cap, UnitKind::CapacitancePerLength, cf, "capacitance")?;
        // Lossless line: Z0 = sqrt(L'/C'), v = 1/sqrt(L'·C').
        out.z0 = (l / cp).sqrt();
        out.velocity = check_speed(src, cap.span(), cf, 1.0 / (l * cp).sqrt(), "this L and C")?;
        overridden.push("inductance, capacitance");
    }
    if out.z0.is_nan() {
        return Err(src.error(
            key.span(),
            path("impedance"),
            format!("cable \"{name}\" has no impedance"),
            "add impedance = \"120 ohm\" (or inductance + capacitance, or a preset)",
        ));
    }
    if out.velocity.is_nan() {
        return Err(src.error(
            key.span(),
            path("velocity_factor"),
            format!("cable \"{name}\" has no propagation speed"),
            "add velocity_factor = 0.66, delay = \"5 ns/m\", or inductance + capacitance",
        ));
    }
    if let Some(r) = &c.resistance {
        let f = &path("resistance");
        out.r_per_m = non_negative(src, r, UnitKind::ResistancePerLength, f, "resistance")?;
        if out.r_per_m > MAX_RESISTANCE_PER_M {
            return Err(src.error(
                r.span(),
                f.as_str(),
                format!(
                    "cable \"{name}\" resistance {:.3e} ohm/m is beyond any cable ({MAX_RESISTANCE_PER_M:.0e} ohm/m at most): the line equations lose their meaning and the reference cannot solve them",
                    out.r_per_m
                ),
                "give the DC loop resistance of both conductors per metre (copper pairs: tens to a few hundred mohm/m); model a resistor as a node load instead",
            ));
        }
        overridden.push("resistance");
    }
    if let Some(loss) = read_loss(src, c, &name)? {
        out.loss = loss;
        overridden.push("loss");
    }
    out.source = match (&c.preset, overridden.is_empty()) {
        (None, _) => "plant file".to_string(),
        (Some(_), true) => out.source,
        (Some(_), false) => {
            format!("{}; overridden in plant file: {}", out.source, overridden.join(", "))
        }
    };
    out.name = name;
    Ok(out)
}

/// A propagation speed must not exceed the speed of light (velocity factor <= 1).
fn check_speed(src: &Source, span: std::ops::Range<usize>, field: &str, v: f64, what: &str) -> Result<f64, PlantError> {
    let vf = v / C0;
    if vf <= 1.0 + 1e-9 {
        Ok(v.min(C0))
    } else {
        Err(src.error(
            span,
            field,
            format!("{what} means a velocity factor of {vf:.3}, faster than light"),
            "a cable's delay is at least 3.34 ns/m (velocity factor at most 1)",
        ))
    }
}

/// `loss` points or `loss_coefficients`; `Ok(None)` when neither is given.
fn read_loss(src: &Source, c: &RawCable, name: &str) -> Result<Option<Option<LossModel>>, PlantError> {
    let path = |f: &str| format!("cable.{name}.{f}");
    match (&c.loss, &c.loss_coefficients) {
        (None, None) => Ok(None),
        (Some(_), Some(k)) => Err(src.error(
            k.span(),
            path("loss_coefficients"),
            "give `loss` or `loss_coefficients`, not both",
            "keep the attenuation points or the coefficients",
        )),
        (None, Some(k)) => {
            let k = k.get_ref();
            let kc = k.conductor.as_ref().map_or(Ok(0.0), |r| {
                let f = path("loss_coefficients.conductor");
                non_negative(src, r, UnitKind::ConductorLoss, &f, "conductor loss")
            })?;
            let kd = k.dielectric.as_ref().map_or(Ok(0.0), |r| {
                let f = path("loss_coefficients.dielectric");
                non_negative(src, r, UnitKind::DielectricLoss, &f, "dielectric loss")
            })?;
            let model = (kc > 0.0 || kd > 0.0).then_some(LossModel { k_c: kc, k_d: kd });
            Ok(Some(model))
        }
        (Some(points), None) => {
            let mut pts = Vec::new();
            for (i, p) in points.get_ref().iter().enumerate() {
                let f = path(&format!("loss[{i}]"));
                let at = quantity(src, &p.get_ref().at, UnitKind::Frequency, &format!("{f}.at"))?;
                let a = &p.get_ref().attenuation;
                let att = quantity(src, a, UnitKind::Attenuation, &format!("{f}.attenuation"))?;
                pts.push((at, att));
            }
            let bad = |i: usize, what: &str, value: String| {
                let p = &points.get_ref()[i];
                let span = if what == "at" { p.get_ref().at.span() } else { p.span() };
                src.error(
                    span,
                    path(&format!("loss[{i}].{what}")),
                    format!("loss cannot be fitted: {what} = {value} must be positive"),
                    "give each point as { at = \"10 MHz\", attenuation = \"6.5 dB/100m\" }",
                )
            };
            match fit_loss(&pts) {
                Ok(m) => Ok(Some((m.k_c > 0.0 || m.k_d > 0.0).then_some(m))),
                Err(FitError::Empty) => Err(src.error(
                    points.span(),
                    path("loss"),
                    "`loss` has no points",
                    "give at least one { at = .., attenuation = .. } point, or remove `loss`",
                )),
                Err(FitError::BadFrequency(i)) => Err(bad(i, "at", written(&points.get_ref()[i].get_ref().at))),
                Err(FitError::BadAttenuation(i)) => {
                    let p = &points.get_ref()[i].get_ref().attenuation;
                    Err(src.error(
                        p.span(),
                        path(&format!("loss[{i}].attenuation")),
                        format!("loss cannot be fitted: attenuation {} is negative", written(p)),
                        "a passive cable attenuates: give zero or more dB per length",
                    ))
                }
            }
        }
    }
}

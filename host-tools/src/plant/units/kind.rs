//! The kinds of quantity a plant-file field can expect, and how messages name them.

/// What a field expects; decides which units [`super::parse_quantity`] accepts.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum UnitKind {
    /// ohm (also `Ω`).
    Resistance,
    /// m (also `ft`).
    Length,
    /// s.
    Time,
    /// Hz.
    Frequency,
    /// V.
    Voltage,
    /// F.
    Capacitance,
    /// H.
    Inductance,
    /// ohm/m.
    ResistancePerLength,
    /// s/m (a delay per length, the reciprocal of a velocity).
    DelayPerLength,
    /// F/m.
    CapacitancePerLength,
    /// H/m.
    InductancePerLength,
    /// dB or Np per length (dB/m, dB/100m, dB/100ft, dB/km, Np/m); returned in Np/m.
    Attenuation,
    /// `%`, or a bare number read as a fraction (`"5 %"` = `0.05`).
    Fraction,
    /// A bare number with no unit.
    Dimensionless,
    /// Conductor-loss coefficient, Np/(m·sqrt(Hz)).
    ConductorLoss,
    /// Dielectric-loss coefficient, Np/(m·Hz).
    DielectricLoss,
}

impl UnitKind {
    /// The unit and an example, for messages: `a length in m, e.g. "23 m"`.
    pub fn describe(self) -> String {
        match self {
            UnitKind::Fraction => "a percentage, e.g. \"5 %\" (or a bare fraction such as 0.05)".into(),
            UnitKind::Dimensionless => "a plain number without a unit, e.g. 0.66".into(),
            _ => format!("{} in {}, e.g. {}", self.short_name(), self.unit(), self.example()),
        }
    }

    /// The SI unit values of this kind are written in (`ohm/m`, `Np/(m*sqrt(Hz))`).
    pub fn unit(self) -> &'static str {
        match self {
            UnitKind::Resistance => "ohm",
            UnitKind::Length => "m",
            UnitKind::Time => "s",
            UnitKind::Frequency => "Hz",
            UnitKind::Voltage => "V",
            UnitKind::Capacitance => "F",
            UnitKind::Inductance => "H",
            UnitKind::ResistancePerLength => "ohm/m",
            UnitKind::DelayPerLength => "s/m",
            UnitKind::CapacitancePerLength => "F/m",
            UnitKind::InductancePerLength => "H/m",
            UnitKind::Attenuation => "dB per length",
            UnitKind::Fraction => "%",
            UnitKind::Dimensionless => "no unit",
            UnitKind::ConductorLoss => "Np/(m*sqrt(Hz))",
            UnitKind::DielectricLoss => "Np/(m*Hz)",
        }
    }

    /// A typical value of this kind as a plant file writes it, quoted.
    pub fn example(self) -> &'static str {
        match self {
            UnitKind::Resistance => "\"120 ohm\"",
            UnitKind::Length => "\"23 m\"",
            UnitKind::Time => "\"10 ns\"",
            UnitKind::Frequency => "\"200 MHz\"",
            UnitKind::Voltage => "\"5 V\"",
            UnitKind::Capacitance => "\"47 pF\"",
            UnitKind::Inductance => "\"10 uH\"",
            UnitKind::ResistancePerLength => "\"70 mohm/m\"",
            UnitKind::DelayPerLength => "\"5 ns/m\"",
            UnitKind::CapacitancePerLength => "\"42 pF/m\"",
            UnitKind::InductancePerLength => "\"600 nH/m\"",
            UnitKind::Attenuation => "\"6.5 dB/100m\"",
            UnitKind::Fraction => "\"5 %\"",
            UnitKind::Dimensionless => "0.66",
            UnitKind::ConductorLoss => "\"2.5e-6 Np/(m*sqrt(Hz))\"",
            UnitKind::DielectricLoss => "\"3e-11 Np/(m*Hz)\"",
        }
    }

    /// The kind in words: "a length", "an attenuation per length".
    pub fn short_name(self) -> &'static str {
        match self {
            UnitKind::Resistance => "a resistance",
            UnitKind::Length => "a length",
            UnitKind::Time => "a time",
            UnitKind::Frequency => "a frequency",
            UnitKind::Voltage => "a voltage",
            UnitKind::Capacitance => "a capacitance",
            UnitKind::Inductance => "an inductance",
            UnitKind::ResistancePerLength => "a resistance per length",
            UnitKind::DelayPerLength => "a delay per length",
            UnitKind::CapacitancePerLength => "a capacitance per length",
            UnitKind::InductancePerLength => "an inductance per length",
            UnitKind::Attenuation => "an attenuation per length",
            UnitKind::Fraction => "a percentage",
            UnitKind::Dimensionless => "a plain number",
            UnitKind::ConductorLoss => "a conductor-loss coefficient",
            UnitKind::DielectricLoss => "a dielectric-loss coefficient",
        }
    }
}

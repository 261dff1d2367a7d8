//! Built-in cable types with nominal values, each with the source of its numbers.
//!
//! Every number here comes from the project's reference list (`docs/references.md`) and
//! keeps its tag there: **found** (re-read in a published table), **[memory]** (recalled),
//! **[practice]** (common practice, no single source), **[demo]** (a value of our own for a
//! demonstration, no source). A plant file names a preset with `preset = "cat5e"` or
//! `cable = "cat5e"` and may override any field. Nominal values are typical of the cable
//! class, not of one product: a real installation should use its datasheet.

use crate::plant::file::loss::fit_loss;
use crate::plant::model::{CableType, LossModel, C0};
use crate::plant::units::DB_PER_NEPER;

/// Names of all presets, in the order [`all`] returns them.
pub const NAMES: &[&str] = &[
    "coax-50-rg58",
    "coax-50-rg213",
    "coax-75-rg59",
    "coax-75-rg59-foam",
    "cat5e",
    "cat6",
    "twisted-pair-120",
    "can-bus-120",
    "motor-cable",
    "awg18-pair",
    "awg20-pair",
];

/// Every built-in cable type.
pub fn all() -> Vec<CableType> {
    NAMES.iter().filter_map(|n| find(n)).collect()
}

/// The built-in cable type called `name`, if there is one.
pub fn find(name: &str) -> Option<CableType> {
    let cable = match name {
        "coax-50-rg58" => coax_50_rg58(),
        "coax-50-rg213" => coax_50_rg213(),
        "coax-75-rg59" => coax_75_rg59(),
        "coax-75-rg59-foam" => coax_75_rg59_foam(),
        "cat5e" => cat5e(),
        "cat6" => cat6(),
        "twisted-pair-120" => twisted_pair_120(),
        "can-bus-120" => can_bus_120(),
        "motor-cable" => motor_cable(),
        "awg18-pair" => awg18_pair(),
        "awg20-pair" => awg20_pair(),
        _ => return None,
    };
    Some(cable)
}

/// The Category 5e insertion-loss limit of TIA-568 in dB per 100 m at `f_hz`:
/// IL(f) = 1.967·sqrt(f) + 0.023·f + 0.050/sqrt(f), f in MHz [memory for the formula].
pub fn cat5e_insertion_loss_db_per_100m(f_hz: f64) -> f64 {
    let f = f_hz / 1e6;
    1.967 * f.sqrt() + 0.023 * f + 0.050 / f.sqrt()
}

/// The Category 6 insertion-loss limit in dB per 100 m at `f_hz`:
/// IL(f) = 1.808·sqrt(f) + 0.017·f + 0.2/sqrt(f), f in MHz [memory].
pub fn cat6_insertion_loss_db_per_100m(f_hz: f64) -> f64 {
    let f = f_hz / 1e6;
    1.808 * f.sqrt() + 0.017 * f + 0.2 / f.sqrt()
}

/// The frequencies of the coax attenuation tables in docs/references.md, Hz.
pub const COAX_TABLE_HZ: [f64; 4] = [50e6, 150e6, 450e6, 850e6];
/// RG-58 class attenuation at [`COAX_TABLE_HZ`], dB/100 m (amateur radio handbook tables, found).
pub const RG58_DB_PER_100M: [f64; 4] = [10.8, 20.0, 35.5, 58.2];
/// RG-213 class attenuation at [`COAX_TABLE_HZ`], dB/100 m (found).
pub const RG213_DB_PER_100M: [f64; 4] = [4.9, 8.9, 16.3, 24.7];

/// Two conductors of 24 AWG copper in a loop, ohm/m: 2 × 84 mohm/m [memory].
const PAIR_24AWG_OHM_PER_M: f64 = 2.0 * 0.084;

fn cable(name: &str, z0: f64, vf: f64, r_per_m: f64, loss: Option<LossModel>, source: &str) -> CableType {
    CableType { name: name.to_string(), z0, velocity: vf * C0, r_per_m, loss, source: source.to_string() }
}

/// Fit the loss model to a dB/100 m table (the table frequencies in Hz).
fn fit_db_table(freqs: &[f64], db_per_100m: &[f64]) -> Option<LossModel> {
    let pts: Vec<(f64, f64)> = freqs.iter().zip(db_per_100m).map(|(&f, &db)| (f, db / 100.0 / DB_PER_NEPER)).collect();
    fit_loss(&pts).ok()
}

/// Fit the loss model to an insertion-loss formula at 100 log-spaced points over 1–100 MHz.
fn fit_db_formula(il: fn(f64) -> f64) -> Option<LossModel> {
    let freqs: Vec<f64> = (0..100).map(|i| 1e6 * 100f64.powf(i as f64 / 99.0)).collect();
    let db: Vec<f64> = freqs.iter().map(|&f| il(f)).collect();
    fit_db_table(&freqs, &db)
}

/// RG-58 class coax. Source says: 50 ohm, VF 0.66, 29–31 pF/ft; 1.2–1.4 dB/100 ft at
/// 10 MHz; 10.8 / 20.0 / 35.5 / 58.2 dB/100 m at 50 / 150 / 450 / 850 MHz (found).
/// No DC resistance is given there, so none is modelled (the fitted skin loss covers RF).
fn coax_50_rg58() -> CableType {
    cable(
        "coax-50-rg58",
        50.0,
        0.66,
        0.0,
        fit_db_table(&COAX_TABLE_HZ, &RG58_DB_PER_100M),
        "RG-58 class coax: 50 ohm, VF 0.66; loss fitted to 10.8/20.0/35.5/58.2 dB/100 m at \
         50/150/450/850 MHz (amateur radio handbook tables, found); no DC resistance in source",
    )
}

/// RG-213 class coax. Source says: 50 ohm; 4.9 / 8.9 / 16.3 / 24.7 dB/100 m at
/// 50 / 150 / 450 / 850 MHz (found); VF 0.66, about 101 pF/m [memory].
fn coax_50_rg213() -> CableType {
    cable(
        "coax-50-rg213",
        50.0,
        0.66,
        0.0,
        fit_db_table(&COAX_TABLE_HZ, &RG213_DB_PER_100M),
        "RG-213 class coax: 50 ohm, loss fitted to 4.9/8.9/16.3/24.7 dB/100 m at \
         50/150/450/850 MHz (found); VF 0.66 [memory]; no DC resistance in source",
    )
}

/// RG-59 class coax, solid PE. Source says: 75 ohm, VF 0.66, 21 pF/ft (found). No loss data.
fn coax_75_rg59() -> CableType {
    cable(
        "coax-75-rg59",
        75.0,
        0.66,
        0.0,
        None,
        "RG-59 class coax, solid PE: 75 ohm, VF 0.66, 21 pF/ft (found); no loss data in source",
    )
}

/// RG-59 class coax, foam dielectric. Source says: 75 ohm, VF 0.78, 17 pF/ft (found).
fn coax_75_rg59_foam() -> CableType {
    cable(
        "coax-75-rg59-foam",
        75.0,
        0.78,
        0.0,
        None,
        "RG-59 class coax, foam: 75 ohm, VF 0.78, 17 pF/ft (found); no loss data in source",
    )
}

/// Category 5e twisted pair. Source says: nominal 100 ohm, NVP about 0.65–0.70
/// [practice]; insertion loss 1.967·sqrt(f) + 0.023·f + 0.050/sqrt(f) dB/100 m, f in MHz
/// (TIA-568 [memory for the formula]); 24 AWG about 84 mohm/m per conductor [memory].
/// The loss model has no 1/sqrt(f) term, so k_c, k_d are fitted to the formula over
/// 1–100 MHz.
fn cat5e() -> CableType {
    cable(
        "cat5e",
        100.0,
        0.67,
        PAIR_24AWG_OHM_PER_M,
        fit_db_formula(cat5e_insertion_loss_db_per_100m),
        "Category 5e: 100 ohm, NVP 0.67 [practice]; loss fitted over 1-100 MHz to the TIA-568 \
         limit 1.967 sqrt(f) + 0.023 f + 0.050/sqrt(f) dB/100 m [memory for the formula]; \
         DC loop 2 x 84 mohm/m, 24 AWG [memory]",
    )
}

/// Category 6 twisted pair. Source says: 1.808·sqrt(f) + 0.017·f + 0.2/sqrt(f) dB/100 m
/// [memory]; nominal 100 ohm, NVP 0.65–0.70 [practice]. The DC resistance assumes 24 AWG
/// [memory] (many Cat 6 cables use 23 AWG, which has less).
fn cat6() -> CableType {
    cable(
        "cat6",
        100.0,
        0.67,
        PAIR_24AWG_OHM_PER_M,
        fit_db_formula(cat6_insertion_loss_db_per_100m),
        "Category 6: 100 ohm, NVP 0.67 [practice]; loss fitted over 1-100 MHz to \
         1.808 sqrt(f) + 0.017 f + 0.2/sqrt(f) dB/100 m [memory]; DC loop 2 x 84 mohm/m \
         assuming 24 AWG [memory]",
    )
}

/// RS-485 class twisted pair (TIA-485-A). Source says: 120 ohm twisted pair, terminated at
/// both ends [practice, found in vendor notes]; twisted pair carries waves at 0.6–0.7 of
/// the speed of light [practice]; 24 AWG about 84 mohm/m per conductor [memory].
fn twisted_pair_120() -> CableType {
    cable(
        "twisted-pair-120",
        120.0,
        0.66,
        PAIR_24AWG_OHM_PER_M,
        None,
        "RS-485 class pair: 120 ohm (TIA-485-A) [practice]; VF 0.66 [practice]; DC loop \
         2 x 84 mohm/m assuming 24 AWG [memory]; no loss data in source",
    )
}

/// CAN bus cable (ISO 11898-2). Source says: 95 / 120 / 140 ohm min / nominal / max,
/// 70 mohm/m, 5 ns/m (found, quoted table). The 70 mohm/m is read as per conductor (it is
/// the resistance of one 0.25 mm² copper wire [memory]), so the loop is 2 × 70 mohm/m.
fn can_bus_120() -> CableType {
    let mut c = cable(
        "can-bus-120",
        120.0,
        1.0,
        2.0 * 0.070,
        None,
        "CAN cable (ISO 11898-2 table, found, quoted): 120 ohm nominal, 5 ns/m, 70 mohm/m \
         read as per conductor, loop 2 x 70 mohm/m [memory for that reading]",
    );
    c.velocity = 1.0 / 5e-9;
    c
}

/// Shielded cable from a motor drive to its motor, for the drive demo. Source says only
/// v = 1.5e8 m/s (docs/references.md example numbers); the impedance and resistance are demo
/// values of our own [demo, practice] for a cable of a few mm².
fn motor_cable() -> CableType {
    let mut c = cable(
        "motor-cable",
        80.0,
        1.0,
        0.01,
        None,
        "motor cable for the drive demo: v = 1.5e8 m/s (docs/references.md example); 80 ohm and \
         10 mohm/m loop are demo values [demo, practice], not from a datasheet",
    );
    c.velocity = 1.5e8;
    c
}

/// A pair of 18 AWG wires. Source says: 18 AWG about 20.9 mohm/m [memory]. Only the DC
/// resistance is sourced; 100 ohm and VF 0.65 are placeholders [practice] to override.
fn awg18_pair() -> CableType {
    cable(
        "awg18-pair",
        100.0,
        0.65,
        2.0 * 0.0209,
        None,
        "pair of 18 AWG wires: DC loop 2 x 20.9 mohm/m [memory]; 100 ohm and VF 0.65 are \
         placeholders [practice], override them for real wiring",
    )
}

/// A pair of 20 AWG wires. Source says: 20 AWG about 33.3 mohm/m [memory]. Only the DC
/// resistance is sourced; 100 ohm and VF 0.65 are placeholders [practice] to override.
fn awg20_pair() -> CableType {
    cable(
        "awg20-pair",
        100.0,
        0.65,
        2.0 * 0.0333,
        None,
        "pair of 20 AWG wires: DC loop 2 x 33.3 mohm/m [memory]; 100 ohm and VF 0.65 are \
         placeholders [practice], override them for real wiring",
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plant::file::loss::alpha;

    fn db_per_100m(c: &CableType, f: f64) -> f64 {
        alpha(&c.loss.expect("preset has a loss model"), f) * 100.0 * DB_PER_NEPER
    }

    #[test]
    fn every_name_is_found_and_named_consistently() {
        assert_eq!(all().len(), NAMES.len());
        for c in all() {
            assert!(NAMES.contains(&c.name.as_str()));
            assert!(c.z0 > 0.0 && c.velocity > 0.0 && c.velocity <= C0, "{}", c.name);
            assert!(c.r_per_m >= 0.0 && !c.source.is_empty(), "{}", c.name);
        }
        assert!(find("no-such-cable").is_none());
    }

    #[test]
    fn rg58_fit_is_the_least_squares_optimum_of_its_table() {
        // The table (found) is not exactly k_c·sqrt(f) + k_d·f: the best fit misses 450 MHz
        // by about 2 dB. At the least-squares optimum the residual is orthogonal to both
        // basis functions [closed form]; check that, and the largest miss.
        let c = find("coax-50-rg58").unwrap();
        let (mut r_sqrt, mut r_lin, mut worst) = (0.0, 0.0, 0.0_f64);
        for (f, want) in COAX_TABLE_HZ.iter().zip(RG58_DB_PER_100M) {
            let r = db_per_100m(&c, *f) - want;
            r_sqrt += r * (f / 1e6).sqrt();
            r_lin += r * (f / 1e6);
            worst = worst.max(r.abs());
        }
        assert!(r_sqrt.abs() < 1e-9 && r_lin.abs() < 1e-7, "{r_sqrt} {r_lin}");
        assert!(worst < 2.1, "largest miss {worst} dB/100 m");
    }

    #[test]
    fn rg58_fit_meets_the_10_mhz_figure() {
        // 1.2–1.4 dB/100 ft at 10 MHz (found): a check the fit was not made from.
        let c = find("coax-50-rg58").unwrap();
        let per_100ft = db_per_100m(&c, 10e6) * 0.3048;
        assert!((1.2..=1.4).contains(&per_100ft), "{per_100ft} dB/100 ft");
    }
}

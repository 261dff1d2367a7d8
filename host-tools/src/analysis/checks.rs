//! Figures that need the exact reference or the host core: the DC operating point, the
//! host runner's coefficients: the line impedances the core's integer weights really give.
use super::Analysis;
use crate::compile::{err, Compiled};
use crate::host_core::run_core;
use crate::plant::{Plant, PlantError};

pub(super) fn fill(c: &Compiled, plant: &Plant, file: &str, a: &mut Analysis) -> Result<(), PlantError> {
    let e_final = c.host_drive.emf().last().copied().unwrap_or(0.0);
    if let Ok(v) = crate::reference::dc_operating_point(plant, e_final) {
        a.dc = plant.nodes.iter().map(|n| n.name.clone()).zip(v).collect();
    }
    let cr = run_core(c, 0, &[], &|_| {}).map_err(|e| {
        err(file, Default::default(), "plant", e.to_string(), "this is a compiler limitation; please report the plant")
    })?;
    a.max_impedance_error = c
        .net
        .lines
        .iter()
        .zip(&cr.effective_z)
        .map(|(l, ze)| (ze / (l.z_milliohm as f64 / 1000.0) - 1.0).abs())
        .fold(0.0, f64::max);
    Ok(())
}

//! Figures that need the exact reference or the host core: the DC operating point, the
//! host tier's capacity, and the line impedances the core's integer weights really give.
use super::Analysis;
use crate::compile::{err, Compiled};
use crate::host_core::{run_core, HOST_JUNCTIONS, HOST_MEMORY, HOST_PORTS};
use crate::plant::{Plant, PlantError};

pub(super) fn fill(c: &Compiled, plant: &Plant, file: &str, a: &mut Analysis) -> Result<(), PlantError> {
    let e_final = c.host_drive.emf().last().copied().unwrap_or(0.0);
    if let Ok(v) = crate::reference::dc_operating_point(plant, e_final) {
        a.dc = plant.nodes.iter().map(|n| n.name.clone()).zip(v).collect();
    }
    let r = &c.report;
    let (ports, juncs, mem) = (r.ports, r.junctions, r.memory_waves);
    if ports > HOST_PORTS || juncs > HOST_JUNCTIONS || mem > HOST_MEMORY {
        return Err(err(
            file,
            Default::default(),
            "plant",
            format!("plant needs {ports} line ends, {juncs} junctions, {mem} waves of delay storage; the host tier holds {HOST_PORTS}, {HOST_JUNCTIONS}, {HOST_MEMORY}"),
            "lower the sample rate or shorten the plant",
        ));
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

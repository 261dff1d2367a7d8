//! Per cable run (plant segment) of a lossy cable: the cable's Zc(s) fit, its passivity
//! enforced on the run's lines, the decision (`zc_enforce.rs`), and the network carrying it.
use super::{zc, zc_enforce, CompileOptions, Compiled, HostNetwork, ProfileKind, ZcRun};
use crate::plant::Plant;
use tidewire_core::LineLoss;

/// Fit Zc(s) once per lossy cable type in use over the plant's band (`zc::band`), enforce
/// its passivity on each cable run (plant segment) and decide per run whether it gets the
/// network (`zc_enforce.rs`). The compiled network carries them when `opts.zc_networks`.
pub(super) fn fit(c: &mut Compiled, plant: &Plant, opts: CompileOptions) {
    let fs = 1.0 / c.dt;
    let band = zc::band(fs, plant.duration);
    let frac = match c.profile {
        ProfileKind::Wide => <tidewire_core::Wide as tidewire_core::Profile>::LOSS_FRAC,
        ProfileKind::Narrow => <tidewire_core::Narrow as tidewire_core::Profile>::LOSS_FRAC,
    };
    let mut by_cable: Vec<(usize, Option<usize>)> = vec![];
    // Runs already enforced: (cable, constant port's bits, run key) and the result. A plant of
    // many equal segments (a chain of equal stubs) enforces each kind of run once.
    type Done = (usize, u64, Vec<zc_enforce::LineKey>, (f64, zc_enforce::Decision));
    let mut done: Vec<Done> = vec![];
    for (si, (seg, pieces)) in plant.segments.iter().zip(&c.segment_pieces).enumerate() {
        let Some(cable) = plant.cables.get(seg.cable) else { continue };
        let slot = match by_cable.iter().find(|(k, _)| *k == seg.cable) {
            Some((_, slot)) => *slot,
            None => {
                let slot = zc::fit(cable, fs, band).map(|f| {
                    c.report.zc.push(f);
                    c.report.zc.len() - 1
                });
                by_cable.push((seg.cable, slot));
                slot
            }
        };
        let (Some(k), Some(first)) = (slot, pieces.first()) else { continue };
        let Some(z0) = c.net.lines.get(first.line as usize).map(|l| f64::from(l.z_milliohm) / 1000.0) else { continue };
        let views: Vec<zc_enforce::LineView<'_>> = pieces
            .iter()
            .filter_map(|p| {
                let l = c.net.lines.get(p.line as usize)?;
                Some(zc_enforce::LineView { delay: l.delay, loss: c.net.losses.iter().find(|x| x.line == p.line) })
            })
            .collect();
        let key = zc_enforce::run_key(&views);
        let same = |d: &&Done| d.0 == seg.cable && d.1 == z0.to_bits() && zc_enforce::same_run(&d.2, &key);
        let (constant_error, decision) = match done.iter().find(same) {
            Some(d) => d.3.clone(),
            None => {
                let r = zc_enforce::enforce(cable, &c.report.zc[k], &views, z0, fs, frac);
                done.push((seg.cable, z0.to_bits(), key, r.clone()));
                r
            }
        };
        let lines = pieces.iter().map(|p| p.line).collect();
        let compiled = opts.zc_networks && matches!(decision, zc_enforce::Decision::Network(_));
        c.report.zc_runs.push(ZcRun { segment: si, fit: k, lines, constant_error, decision, compiled });
    }
    if opts.zc_networks {
        c.net = c.with_zc_networks();
    }
}

impl Compiled {
    /// The network with every enforced Zc(s) network of `report.zc_runs` at both ends of its
    /// lines (`LineLoss::zc`, the lines' `z_milliohm` = Z_p): what a compile with
    /// `CompileOptions::zc_networks` carries. Every line of a run gets the same network, so
    /// a series junction inside the run sees equal port resistances on both sides.
    pub fn with_zc_networks(&self) -> HostNetwork {
        let mut net = self.net.clone();
        for run in &self.report.zc_runs {
            let zc_enforce::Decision::Network(e) = &run.decision else { continue };
            for &line in &run.lines {
                if let Some(l) = net.lines.get_mut(line as usize) {
                    l.z_milliohm = e.z_p_milliohm;
                }
                match net.losses.iter_mut().find(|x| x.line == line) {
                    Some(loss) => loss.zc = Some(e.network),
                    None => net.losses.push(LineLoss {
                        line,
                        sections: 0,
                        poles: [0; tidewire_core::MAX_LOSS_SECTIONS],
                        zeros: [0; tidewire_core::MAX_LOSS_SECTIONS],
                        allpass: None,
                        zc: Some(e.network),
                    }),
                }
            }
        }
        net
    }
}

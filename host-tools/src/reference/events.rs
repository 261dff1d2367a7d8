//! Scheduled events in the exact reference: the compensation method, stage by stage.
//!
//! Between two events the plant is linear and time-invariant, so each interval has its own
//! exact network N_e (the plant with every event up to e applied). Within N_e the past is
//! reproduced by sources at the changed ports only (compensation: the part of the network
//! that changed is replaced by the current or voltage it carried, known from the earlier
//! stages), so the response on [k_e, k_e+1) is exact for the whole switched history:
//!
//! ```text
//! load port j, load of N_e open or a resistor G:  inject u_j[k] = G·v_j[k] − i_load,j[k]
//!                                                   for k < k_e (0 after)
//! load port j, load of N_e a short:                force v_j[k] at the shorted node, k < k_e
//! break of a segment at X (far part from B):       inject −i_link at X and +i_link at B
//!                                                   for k < k_break, once N_e is broken
//! ```
//!
//! v_j, i_load,j (current into the node's load, by Kirchhoff's current law at the node) and
//! i_link (current from X into the far part) are outputs of every stage, stitched into the
//! true history. Each source is a sampled input to the same damped-FFT inversion as the
//! drive (`laplace`), so the stages are the same band-limited discrete-time system. This is
//! the compensation method for switched elements of H. W. Dommel (IEEE Trans. PAS-90, 1971)
//! [memory], applied to the frequency-domain reference instead of a time-step network.
//!
//! Events take effect before sample k_e = round(at/dt) is computed, as in the compiler. A
//! break is placed at its exact distance (the core rounds it to a sample: model error).

use super::check::thevenin;
use super::laplace::{self, Plan};
use super::nodal::{load_admittance, Network, Solution};
use super::ReferenceError;
use crate::plant::{End, EventAction, Load, Node, Plant, ProbeKind, Segment, Span};
use num_complex::Complex64;

/// One event as the stages see it.
#[derive(Debug, Clone, Copy)]
enum Change {
    Load {
        node: usize,
        load: Load,
    },
    /// Segment `far` (from X) moves its from-end to node `b`.
    Break {
        far: usize,
        x: usize,
        b: usize,
    },
}

/// The plant with every break pre-split, the events as changes at samples, and the probe
/// kinds remapped to the split plant.
struct Staged {
    base: Plant,
    changes: Vec<(usize, Change)>,
    probes: Vec<ProbeKind>,
}

fn stage_plant(plant: &Plant, dt: f64, n: usize) -> Result<Staged, ReferenceError> {
    let mut base = plant.clone();
    base.events.clear();
    let mut probes: Vec<ProbeKind> = plant.probes.iter().map(|p| p.kind).collect();
    let mut changes = Vec::new();
    let mut order: Vec<&crate::plant::Event> = plant.events.iter().collect();
    order.sort_by(|a, b| a.at.total_cmp(&b.at));
    for e in order {
        let k = (e.at / dt).round();
        if !(k.is_finite() && k >= 0.0) || k >= n as f64 {
            continue; // outside the run: nothing to compare after it
        }
        let k = k as usize;
        match e.action {
            EventAction::SetLoad(node, load) => {
                if !matches!(load, Load::Open | Load::Short | Load::Resistor(_)) {
                    return Err(ReferenceError::Unsupported(
                        "a load switched while running must be open, short or a resistor".into(),
                    ));
                }
                changes.push((k, Change::Load { node, load }))
            }
            EventAction::Break { segment, distance } => {
                let seg = base
                    .segments
                    .get(segment)
                    .cloned()
                    .ok_or(ReferenceError::Unsupported("a break names a segment that does not exist".into()))?;
                if segment >= plant.segments.len() || !(distance > 0.0 && distance < seg.length) {
                    return Err(ReferenceError::Unsupported(format!(
                        "a break of segment '{}' at {distance} m (two breaks of one segment, or one at its end)",
                        seg.name
                    )));
                }
                let (x, b) = (base.nodes.len(), base.nodes.len() + 1);
                let node = |name: String, load| Node { name, load, span: Span::default() };
                base.nodes.push(node(format!("{}@break", seg.name), Load::Open));
                // Isolated until the break: any load keeps its row regular and changes nothing.
                base.nodes.push(node(format!("{}@break far side", seg.name), Load::Resistor(1.0)));
                let (near_inline, far_inline) = match seg.inline {
                    Some(i) if i.at < distance => (Some(i), None),
                    Some(i) => (None, Some(crate::plant::Inline { at: i.at - distance, ..i })),
                    None => (None, None),
                };
                let far = base.segments.len();
                base.segments.push(Segment {
                    name: format!("{} (far part)", seg.name),
                    from: x,
                    to: seg.to,
                    length: seg.length - distance,
                    inline: far_inline,
                    ..seg.clone()
                });
                let near = &mut base.segments[segment];
                near.to = x;
                near.length = distance;
                near.inline = near_inline;
                for p in probes.iter_mut() {
                    if *p == ProbeKind::Current(segment, End::To) {
                        *p = ProbeKind::Current(far, End::To);
                    }
                }
                changes.push((k, Change::Break { far, x, b }));
            }
        }
    }
    Ok(Staged { base, changes, probes })
}

/// The plant after every event inside a run of `n` samples at period `dt`: loads switched,
/// broken segments split in two with an open node at each side of the break (node and
/// segment indices of `plant` keep their meaning; new ones are appended).
pub(crate) fn final_plant(plant: &Plant, dt: f64, n: usize) -> Result<Plant, ReferenceError> {
    let st = stage_plant(plant, dt, n)?;
    let mut p = st.base;
    for (_, c) in st.changes {
        match c {
            Change::Load { node, load } => p.nodes[node].load = load,
            Change::Break { far, b, .. } => {
                p.segments[far].from = b;
                p.nodes[b].load = Load::Open;
            }
        }
    }
    Ok(p)
}

/// Current into the load of `node` (positive from the node to return), by the load's
/// admittance or, for a short, by Kirchhoff's current law at the node.
fn load_current(plant: &Plant, sol: &Solution, node: usize, s: Complex64, emf: Complex64) -> Complex64 {
    let load = plant.nodes[node].load;
    if load != Load::Short {
        return load_admittance(load, s) * sol.voltages[node];
    }
    let drive = thevenin(plant);
    let mut i =
        if drive.node == node { (emf - sol.voltages[node]) / drive.resistance } else { Complex64::new(0.0, 0.0) };
    for (k, seg) in plant.segments.iter().enumerate() {
        if seg.from == node {
            i -= sol.probe(plant, ProbeKind::Current(k, End::From));
        }
        if seg.to == node {
            i -= sol.probe(plant, ProbeKind::Current(k, End::To));
        }
    }
    i
}

/// A source of one stage: its sampled series and where it acts.
enum Source {
    Drive,
    Inject(Vec<(usize, f64)>),
    Force(usize),
}

/// The response of every probe over n samples of the drive `drive`, events included.
/// Returns the traces and the absolute inversion bound (volts or amperes).
pub(crate) fn staged_response(
    plant: &Plant,
    plan: &Plan,
    dt: f64,
    drive: &[f64],
) -> Result<(Vec<Vec<f64>>, f64), ReferenceError> {
    let n = drive.len();
    let st = stage_plant(plant, dt, n)?;
    let ports: Vec<usize> = {
        let mut p: Vec<usize> = st
            .changes
            .iter()
            .filter_map(|c| if let Change::Load { node, .. } = c.1 { Some(node) } else { None })
            .collect();
        p.sort_unstable();
        p.dedup();
        p
    };
    let breaks: Vec<(usize, usize, usize, usize)> = st
        .changes
        .iter()
        .filter_map(|&(k, c)| if let Change::Break { far, x, b } = c { Some((k, far, x, b)) } else { None })
        .collect();
    // Channels: probes, then v and i_load of each load port, then i_link of each break.
    let np = st.probes.len();
    let channels = np + 2 * ports.len() + breaks.len();
    let mut truth = vec![vec![0.0; n]; channels];
    let mut bound = 0.0;
    let mut current = st.base.clone();
    let mut bounds: Vec<usize> = st.changes.iter().map(|c| c.0).collect();
    bounds.push(n);
    let mut start = 0;
    for (stage, &end) in bounds.iter().enumerate() {
        if stage > 0 {
            match st.changes[stage - 1].1 {
                Change::Load { node, load } => current.nodes[node].load = load,
                Change::Break { far, b, .. } => {
                    current.segments[far].from = b;
                    current.nodes[b].load = Load::Open;
                }
            }
        }
        if end <= start && stage < bounds.len() - 1 {
            continue; // two events at one sample: the later one decides
        }
        let p = &current;
        let net = Network::new(p);
        let mut sources: Vec<(Source, Vec<f64>)> = vec![(Source::Drive, drive.to_vec())];
        for (c, &j) in ports.iter().enumerate() {
            // A port no event has changed yet carries its own load in N_e: nothing to emulate.
            if !st.changes[..stage].iter().any(|ch| matches!(ch.1, Change::Load { node, .. } if node == j)) {
                continue;
            }
            let (v, il) = (&truth[np + 2 * c], &truth[np + 2 * c + 1]);
            let series: Vec<f64> = (0..n)
                .map(|k| {
                    if k >= start {
                        return 0.0;
                    }
                    match p.nodes[j].load {
                        Load::Short => v[k],
                        other => load_admittance(other, Complex64::new(0.0, 0.0)).re * v[k] - il[k],
                    }
                })
                .collect();
            let src = if p.nodes[j].load == Load::Short { Source::Force(j) } else { Source::Inject(vec![(j, 1.0)]) };
            sources.push((src, series));
        }
        for (c, &(kb, far, x, b)) in breaks.iter().enumerate() {
            if p.segments[far].from == b {
                let link = &truth[np + 2 * ports.len() + c];
                let series = (0..n).map(|k| if k < kb.min(start) { link[k] } else { 0.0 }).collect();
                sources.push((Source::Inject(vec![(x, -1.0), (b, 1.0)]), series));
            }
        }
        let mut out = vec![vec![0.0; n]; channels];
        for (src, series) in &sources {
            let peak = series.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            if peak == 0.0 {
                continue;
            }
            let one = Complex64::new(1.0, 0.0);
            let zero = Complex64::new(0.0, 0.0);
            let inv = laplace::invert(plan, series, dt, channels, |s| {
                let (emf, sol) = match src {
                    Source::Drive => (one, net.solve(s, one, &[], &[])?),
                    Source::Inject(at) => {
                        let inj: Vec<(usize, Complex64)> =
                            at.iter().map(|&(j, w)| (j, Complex64::new(w, 0.0))).collect();
                        (zero, net.solve(s, zero, &inj, &[])?)
                    }
                    Source::Force(j) => (zero, net.solve(s, zero, &[], &[(*j, one)])?),
                };
                let mut h: Vec<Complex64> = st.probes.iter().map(|&k| sol.probe(p, k)).collect();
                for &j in &ports {
                    h.push(sol.voltages[j]);
                    h.push(load_current(p, &sol, j, s, emf));
                }
                for &(_, far, _, _) in &breaks {
                    h.push(sol.probe(p, ProbeKind::Current(far, End::From)));
                }
                Ok(h)
            })?;
            let largest = inv.record_peaks.iter().fold(0.0f64, |m, v| m.max(*v));
            let edge = inv.edge_peaks.iter().fold(0.0f64, |m, v| m.max(*v));
            bound += plan.wrap_bound() * largest.max(peak) + edge;
            for (o, v) in out.iter_mut().zip(inv.values) {
                for (a, b) in o.iter_mut().zip(v) {
                    *a += b;
                }
            }
        }
        for (t, o) in truth.iter_mut().zip(&out) {
            t[start..end.max(start)].copy_from_slice(&o[start..end.max(start)]);
        }
        start = end.max(start);
    }
    truth.truncate(np);
    Ok((truth, bound))
}

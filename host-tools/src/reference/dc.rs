//! DC operating point: the plant once every transient has died out.
//!
//! At s = 0 a segment is its loop resistance R = l·r_per_m (the skin and dielectric terms
//! vanish at DC), capacitors are open, a parallel RC is its resistor, a short is v = 0 and
//! the drive is E behind Rs. A segment without DC resistance is a perfect conductor: its
//! two nodes are merged into one group before the nodal solve. A part of the plant with no
//! DC path to return and no drive holds no charge and sits at 0 V (it is never excited).
//!
//! The DC current in a segment with resistance is (v_this − v_other)/R. In a group joined by
//! lossless segments the voltages cannot tell the currents apart; their DC value is the
//! s → 0 limit of the line admittance 1/(s·L'·l), so the currents split like conductances
//! 1/(L'·l): a second, "inductive" nodal solve inside the group, with the group's shorts
//! fixed at potential 0, gives them.

use super::check::thevenin;
use super::ReferenceError;
use crate::plant::{End, Load, Plant, ProbeKind};
use nalgebra::{DMatrix, DVector};

/// Group representative of node `i` (union–find with path halving).
fn find(parent: &mut [usize], mut i: usize) -> usize {
    while parent[i] != i {
        parent[i] = parent[parent[i]];
        i = parent[i];
    }
    i
}

/// DC conductance of a load to return, S (a short is handled apart).
fn load_conductance(load: Load) -> f64 {
    match load {
        Load::Resistor(r) | Load::ParallelRc { r, .. } => 1.0 / r,
        Load::Open | Load::Short | Load::Capacitor(_) | Load::SeriesRc { .. } => 0.0,
    }
}

/// Loop resistance of segment k, ohms (with the winding resistance of an in-line choke).
fn resistance(plant: &Plant, k: usize) -> f64 {
    let seg = &plant.segments[k];
    plant.cables[seg.cable].r_per_m * seg.length + seg.inline.map_or(0.0, |i| i.resistance)
}

/// Series inductance of segment k at DC, H: L'·l plus an in-line choke's.
fn inductance(plant: &Plant, k: usize) -> f64 {
    let seg = &plant.segments[k];
    plant.cables[seg.cable].l_per_m() * seg.length + seg.inline.map_or(0.0, |i| i.inductance)
}

/// Solve a real linear system; `None` when singular or not finite.
fn solve_real(a: DMatrix<f64>, b: DVector<f64>) -> Option<Vec<f64>> {
    let x = a.lu().solve(&b)?;
    x.iter().all(|v| v.is_finite()).then(|| x.iter().copied().collect())
}

/// Node voltages of a checked plant at DC for drive EMF `emf`, V.
pub(crate) fn node_voltages(plant: &Plant, emf: f64) -> Result<Vec<f64>, ReferenceError> {
    let n = plant.nodes.len();
    let mut parent: Vec<usize> = (0..n).collect();
    for (k, seg) in plant.segments.iter().enumerate() {
        if resistance(plant, k) == 0.0 {
            let (a, b) = (find(&mut parent, seg.from), find(&mut parent, seg.to));
            parent[a] = b;
        }
    }
    let group: Vec<usize> = (0..n).map(|i| find(&mut parent, i)).collect();
    // Conductance matrix over the group representatives (rows of non-representatives stay
    // identity with a zero right-hand side and are never read).
    let mut a = DMatrix::<f64>::identity(n, n);
    for (i, g) in group.iter().enumerate() {
        if *g == i {
            a[(i, i)] = 0.0;
        }
    }
    let mut rhs = DVector::<f64>::zeros(n);
    // `anchored[g]`: group g has a DC path to return of its own (load, short or drive).
    let mut anchored = vec![false; n];
    let mut shorted = vec![false; n];
    for (k, seg) in plant.segments.iter().enumerate() {
        let r = resistance(plant, k);
        if r > 0.0 {
            let (p, q) = (group[seg.from], group[seg.to]);
            a[(p, p)] += 1.0 / r;
            a[(q, q)] += 1.0 / r;
            a[(p, q)] -= 1.0 / r;
            a[(q, p)] -= 1.0 / r;
        }
    }
    for (i, node) in plant.nodes.iter().enumerate() {
        let g = load_conductance(node.load);
        a[(group[i], group[i])] += g;
        anchored[group[i]] |= g > 0.0 || node.load == Load::Short;
        shorted[group[i]] |= node.load == Load::Short;
    }
    let drive = thevenin(plant);
    let d = group[drive.node];
    a[(d, d)] += 1.0 / drive.resistance;
    rhs[d] += emf / drive.resistance;
    anchored[d] = true;
    // Groups joined by resistive segments form parts; a part with no anchor floats.
    let mut part: Vec<usize> = (0..n).collect();
    for (k, seg) in plant.segments.iter().enumerate() {
        if resistance(plant, k) > 0.0 {
            let (p, q) = (find(&mut part, group[seg.from]), find(&mut part, group[seg.to]));
            part[p] = q;
        }
    }
    let mut part_anchored = vec![false; n];
    for g in 0..n {
        if group[g] == g && anchored[g] {
            let p = find(&mut part, g);
            part_anchored[p] = true;
        }
    }
    for g in 0..n {
        let floating = group[g] == g && !part_anchored[find(&mut part, g)];
        if group[g] == g && (shorted[g] || floating) {
            a.row_mut(g).fill(0.0);
            a.column_mut(g).fill(0.0);
            a[(g, g)] = 1.0;
            rhs[g] = 0.0;
        }
    }
    let v = solve_real(a, rhs).ok_or(ReferenceError::Singular { sigma: 0.0, f_hz: 0.0 })?;
    Ok(group.iter().map(|&g| v[g]).collect())
}

/// The DC value of each probe of a checked plant for drive EMF `emf` (V or A).
pub(crate) fn probe_values(plant: &Plant, emf: f64) -> Result<Vec<f64>, ReferenceError> {
    let v = node_voltages(plant, emf)?;
    plant
        .probes
        .iter()
        .map(|p| match p.kind {
            ProbeKind::Voltage(n) => Ok(v[n]),
            ProbeKind::Current(k, end) => segment_current(plant, &v, emf, k, end),
        })
        .collect()
}

/// DC current from the node into segment k at `end`, A.
fn segment_current(plant: &Plant, v: &[f64], emf: f64, k: usize, end: End) -> Result<f64, ReferenceError> {
    let seg = &plant.segments[k];
    let (here, far) = match end {
        End::From => (seg.from, seg.to),
        End::To => (seg.to, seg.from),
    };
    let r = resistance(plant, k);
    if r > 0.0 {
        return Ok((v[here] - v[far]) / r);
    }
    let phi = inductive_potentials(plant, v, emf, k)?;
    let l = inductance(plant, k);
    Ok((phi[here] - phi[far]) / l)
}

/// Potentials of the inductive solve in the lossless group that holds segment `k`.
///
/// Each node of the group receives from outside the group the current
/// I_ext = (E − v)/Rs (drive) − G_load·v − (currents into resistive segments); the group's
/// lossless segments carry it with conductances 1/(L'·l). Shorted nodes sit at potential 0;
/// without a short one node is the reference (the injections then sum to zero by KCL).
fn inductive_potentials(plant: &Plant, v: &[f64], emf: f64, k: usize) -> Result<Vec<f64>, ReferenceError> {
    let n = plant.nodes.len();
    let lossless = |j: usize| resistance(plant, j) == 0.0;
    let mut parent: Vec<usize> = (0..n).collect();
    for (j, seg) in plant.segments.iter().enumerate() {
        if lossless(j) {
            let (a, b) = (find(&mut parent, seg.from), find(&mut parent, seg.to));
            parent[a] = b;
        }
    }
    let target = find(&mut parent, plant.segments[k].from);
    let members: Vec<bool> = (0..n).map(|i| find(&mut parent, i) == target).collect();
    let mut inject = vec![0.0; n];
    let drive = thevenin(plant);
    inject[drive.node] += (emf - v[drive.node]) / drive.resistance;
    for (i, node) in plant.nodes.iter().enumerate() {
        inject[i] -= load_conductance(node.load) * v[i];
    }
    let mut a = DMatrix::<f64>::identity(n, n);
    for i in 0..n {
        if members[i] {
            a[(i, i)] = 0.0;
        }
    }
    for (j, seg) in plant.segments.iter().enumerate() {
        if lossless(j) {
            let w = 1.0 / inductance(plant, j);
            let (p, q) = (seg.from, seg.to);
            a[(p, p)] += w;
            a[(q, q)] += w;
            a[(p, q)] -= w;
            a[(q, p)] -= w;
        } else {
            let r = resistance(plant, j);
            inject[seg.from] -= (v[seg.from] - v[seg.to]) / r;
            inject[seg.to] -= (v[seg.to] - v[seg.from]) / r;
        }
    }
    let mut rhs = DVector::<f64>::from_vec(inject);
    let mut fixed: Vec<usize> = (0..n).filter(|&i| members[i] && plant.nodes[i].load == Load::Short).collect();
    if fixed.is_empty() {
        fixed.push(target);
    }
    for i in 0..n {
        if !members[i] || fixed.contains(&i) {
            a.row_mut(i).fill(0.0);
            a.column_mut(i).fill(0.0);
            a[(i, i)] = 1.0;
            rhs[i] = 0.0;
        }
    }
    solve_real(a, rhs).ok_or(ReferenceError::Singular { sigma: 0.0, f_hz: 0.0 })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plant::{CableType, Drive, Node, Probe, Segment, Span, Tolerances, Waveform};

    fn cable(r_per_m: f64) -> CableType {
        CableType {
            name: format!("r{r_per_m}"),
            z0: 100.0,
            velocity: 2e8,
            r_per_m,
            loss: None,
            source: "unit test".into(),
        }
    }

    fn plant(loads: &[Load], segs: &[(usize, usize, usize, f64)], drive_node: usize) -> Plant {
        Plant {
            name: "unit".into(),
            notes: vec![],
            sample_rate: 1e9,
            duration: 1e-6,
            cables: vec![cable(0.0), cable(0.5)],
            nodes: loads
                .iter()
                .enumerate()
                .map(|(i, &load)| Node { name: format!("n{i}"), load, span: Span::default() })
                .collect(),
            segments: segs
                .iter()
                .enumerate()
                .map(|(i, &(from, to, c, length))| Segment {
                    name: format!("s{i}"),
                    from,
                    to,
                    cable: c,
                    length,
                    span: Span::default(),
                    inline: None,
                })
                .collect(),
            drive: Drive::Source {
                node: drive_node,
                emf: Waveform::Step { amplitude: 1.0, delay: 0.0, rise: 0.0 },
                rs: 10.0,
            },
            probes: vec![],
            tolerances: Tolerances::default(),
            zc_networks: true,
            events: vec![],
            lattice_path: vec![],
        }
    }

    #[test]
    fn divider_through_lossless_and_lossy_segments() {
        // [closed form] 10 ohm source, 2 m at 0.5 ohm/m (1 ohm), a lossless 5 m, 39 ohm load:
        // v_load = 2·39/(10 + 1 + 39); capacitor-only node floats with its neighbours.
        let p = plant(
            &[Load::Capacitor(1e-9), Load::Open, Load::Resistor(39.0), Load::Capacitor(1e-9)],
            &[(0, 1, 1, 2.0), (1, 2, 0, 5.0), (2, 3, 0, 1.0)],
            0,
        );
        let v = node_voltages(&p, 2.0).unwrap();
        let want = 2.0 * 39.0 / 50.0;
        for (i, x) in v.iter().enumerate().skip(1) {
            assert!((x - want).abs() < 1e-14, "node {i}: {x}");
        }
        assert!((v[0] - 2.0 * 40.0 / 50.0).abs() < 1e-14);
    }

    #[test]
    fn part_without_a_path_to_return_sits_at_zero_and_short_is_zero() {
        // [closed form] an unconnected island keeps no charge; a short holds v = 0 and the
        // source then sees Rs + R_segment: current 1/(10 + 1).
        let mut p =
            plant(&[Load::Open, Load::Short, Load::Capacitor(1e-9), Load::Open], &[(0, 1, 1, 2.0), (2, 3, 1, 4.0)], 0);
        p.probes.push(Probe { name: "i".into(), kind: ProbeKind::Current(0, End::From) });
        let v = node_voltages(&p, 1.0).unwrap();
        assert_eq!((v[1], v[2], v[3]), (0.0, 0.0, 0.0));
        let i = probe_values(&p, 1.0).unwrap()[0];
        assert!((i - 1.0 / 11.0).abs() < 1e-15);
    }

    #[test]
    fn parallel_lossless_paths_share_current_by_inductance() {
        // [closed form] two lossless segments of 1 m and 3 m in parallel into a short share
        // the DC current as the s -> 0 limit of 1/(s·L'·l): 3/4 and 1/4 of E/Rs.
        let mut p = plant(&[Load::Open, Load::Short], &[(0, 1, 0, 1.0), (0, 1, 0, 3.0)], 0);
        for k in 0..2 {
            p.probes.push(Probe { name: format!("i{k}"), kind: ProbeKind::Current(k, End::From) });
        }
        let i = probe_values(&p, 1.0).unwrap();
        assert!((i[0] - 0.75 / 10.0).abs() < 1e-14 && (i[1] - 0.25 / 10.0).abs() < 1e-14, "{i:?}");
    }
}

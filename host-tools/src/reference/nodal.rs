//! Nodal analysis of the whole plant at one complex frequency.
//!
//! Unknowns are the node voltages V (against the return conductor). Kirchhoff's current law
//! at every node, currents leaving the node counted positive:
//!
//! ```text
//! sum over line ends at the node of (Y11·v_here + Y12·v_far) + Y_load·v + (v − E)/Rs = 0
//! ```
//!
//! so the matrix collects each segment's two-port ([`super::line`]), each load's admittance
//! and the drive's Norton conductance 1/Rs, and the right-hand side is the Norton current
//! E/Rs at the drive node. E = 1 V: every result is a transfer function per volt of EMF.
//! A short is an exact constraint v = 0 (its row and column are replaced by the identity)
//! rather than a huge conductance, so no precision is lost next to it.

use super::check::thevenin;
use super::line::{two_port, TwoPort};
use super::sparse::Pattern;
use super::ReferenceError;
use crate::plant::{End, Load, Plant, ProbeKind};
use nalgebra::{DMatrix, DVector};
use num_complex::Complex64;
use std::f64::consts::PI;

/// Admittance of a load to return at complex frequency s, S (a short is handled apart).
pub(crate) fn load_admittance(load: Load, s: Complex64) -> Complex64 {
    let zero = Complex64::new(0.0, 0.0);
    match load {
        Load::Open | Load::Short => zero,
        Load::Resistor(r) => Complex64::new(1.0 / r, 0.0),
        Load::Capacitor(c) => s * c,
        // Y = 1/(R + 1/(sC)) = sC/(1 + sRC): finite at s = 0, where it is 0.
        Load::SeriesRc { r, c } => s * c / (1.0 + s * r * c),
        Load::ParallelRc { r, c } => 1.0 / r + s * c,
    }
}

/// The solved plant at one complex frequency: node voltages and segment two-ports.
///
/// A segment with an in-line choke is two two-ports (from..at, at..to) with the choke's
/// series admittance 1/(R + sL) between two internal nodes; `ends[k]` names, for each end of
/// segment k, the two-port at that end and the node at its other side.
pub(crate) struct Solution {
    pub voltages: Vec<Complex64>,
    pub ends: Vec<[(TwoPort, usize); 2]>,
}

impl Solution {
    /// The value of probe kind `kind`: a node voltage, or the current from the node into
    /// the segment at the given end, i = Y11·v_this + Y12·v_other.
    pub fn probe(&self, plant: &Plant, kind: ProbeKind) -> Complex64 {
        match kind {
            ProbeKind::Voltage(n) => self.voltages[n],
            ProbeKind::Current(k, end) => {
                let seg = &plant.segments[k];
                let (here, (tp, other)) = match end {
                    End::From => (seg.from, self.ends[k][0]),
                    End::To => (seg.to, self.ends[k][1]),
                };
                tp.y11 * self.voltages[here] + tp.y12 * self.voltages[other]
            }
        }
    }
}

/// Solve the nodal equations of a checked plant at s (Re s > 0 or s on the jω axis away
/// from 0), per volt of drive EMF.
pub(crate) fn solve(plant: &Plant, s: Complex64) -> Result<Solution, ReferenceError> {
    Network::new(plant).solve(s, Complex64::new(1.0, 0.0), &[], &[])
}

/// One two-port or admittance between unknowns p and q at one frequency (q = p for a
/// shunt): the matrix gains y11 at (p, p) and (q, q) and y12 at (p, q) and (q, p).
struct Stamp {
    p: usize,
    q: usize,
    y11: Complex64,
    y12: Complex64,
}

/// The plant's nodal structure, set up once and solved at many frequencies.
///
/// Unknowns are the node voltages plus two internal nodes per in-line choke; a shorted
/// node is an exact constraint v = 0 and is left out of the unknowns (so no precision is
/// lost next to it). The sparsity pattern and its elimination order ([`super::sparse`])
/// are fixed here; each frequency refills the values only.
pub(crate) struct Network<'a> {
    plant: &'a Plant,
    /// All voltages: nodes, then the choke's internal nodes.
    total: usize,
    /// Unknown index of each voltage, None for a shorted node.
    unknown: Vec<Option<usize>>,
    pattern: Pattern,
    /// Where each frequency's stamps go in the value array (built with `pattern`).
    slots: Vec<[usize; 3]>,
}

impl<'a> Network<'a> {
    /// The structure of a checked plant.
    pub fn new(plant: &'a Plant) -> Network<'a> {
        let inner = 2 * plant.segments.iter().filter(|s| s.inline.is_some()).count();
        let total = plant.nodes.len() + inner;
        let mut unknown = vec![None; total];
        let mut count = 0;
        for (i, u) in unknown.iter_mut().enumerate() {
            let short = plant.nodes.get(i).is_some_and(|n| n.load == Load::Short);
            if !short {
                *u = Some(count);
                count += 1;
            }
        }
        let pairs = Self::pairs(plant);
        let couplings: Vec<(usize, usize)> =
            pairs.iter().filter_map(|&(p, q)| Some((unknown[p]?, unknown[q]?))).collect();
        let pattern = Pattern::new(count, &couplings);
        let slot = |i: Option<usize>, j: Option<usize>| match (i, j) {
            (Some(i), Some(j)) => pattern.position(i, j),
            _ => usize::MAX,
        };
        let slots = pairs
            .iter()
            .map(|&(p, q)| {
                let (up, uq) = (unknown[p], unknown[q]);
                if p == q {
                    [slot(up, up), usize::MAX, usize::MAX]
                } else {
                    [slot(up, up), slot(uq, uq), slot(up, uq)]
                }
            })
            .collect();
        Network { plant, total, unknown, pattern, slots }
    }

    /// The (p, q) of every stamp, in the order `stamps` produces them.
    fn pairs(plant: &Plant) -> Vec<(usize, usize)> {
        let mut out = Vec::new();
        let mut next = plant.nodes.len();
        for seg in &plant.segments {
            match seg.inline {
                None => out.push((seg.from, seg.to)),
                Some(_) => {
                    out.extend([(seg.from, next), (next + 1, seg.to), (next, next + 1)]);
                    next += 2;
                }
            }
        }
        out.extend((0..plant.nodes.len()).map(|i| (i, i)));
        let d = thevenin(plant).node;
        out.push((d, d));
        out
    }

    /// Every stamp at s, in `pairs` order, and the segment ends for current probes.
    fn stamps(&self, s: Complex64) -> (Vec<Stamp>, Vec<[(TwoPort, usize); 2]>) {
        let plant = self.plant;
        let mut st = Vec::with_capacity(self.slots.len());
        let mut ends = Vec::with_capacity(plant.segments.len());
        let mut next = plant.nodes.len();
        for seg in &plant.segments {
            let cable = &plant.cables[seg.cable];
            match seg.inline {
                None => {
                    let tp = two_port(cable, seg.length, s);
                    st.push(Stamp { p: seg.from, q: seg.to, y11: tp.y11, y12: tp.y12 });
                    ends.push([(tp, seg.to), (tp, seg.from)]);
                }
                Some(inl) => {
                    // from —[line, at]— m1 —[R + sL]— m2 —[line, length − at]— to
                    let (m1, m2) = (next, next + 1);
                    next += 2;
                    let t1 = two_port(cable, inl.at, s);
                    let t2 = two_port(cable, seg.length - inl.at, s);
                    let y = 1.0 / (Complex64::new(inl.resistance, 0.0) + s * inl.inductance);
                    st.push(Stamp { p: seg.from, q: m1, y11: t1.y11, y12: t1.y12 });
                    st.push(Stamp { p: m2, q: seg.to, y11: t2.y11, y12: t2.y12 });
                    st.push(Stamp { p: m1, q: m2, y11: y, y12: -y });
                    ends.push([(t1, m1), (t2, m2)]);
                }
            }
        }
        let zero = Complex64::new(0.0, 0.0);
        for (i, node) in plant.nodes.iter().enumerate() {
            st.push(Stamp { p: i, q: i, y11: load_admittance(node.load, s), y12: zero });
        }
        let drive = thevenin(plant);
        st.push(Stamp { p: drive.node, q: drive.node, y11: Complex64::new(1.0 / drive.resistance, 0.0), y12: zero });
        (st, ends)
    }

    /// Solve at s for a drive EMF `emf`, currents `inject` (node, A) injected into nodes,
    /// and voltages `forced` (node, V) at shorted nodes (a source in place of the short;
    /// ignored at other nodes); the voltages are linear in all three.
    pub fn solve(
        &self,
        s: Complex64,
        emf: Complex64,
        inject: &[(usize, Complex64)],
        forced: &[(usize, Complex64)],
    ) -> Result<Solution, ReferenceError> {
        let (sigma, f_hz) = (s.re, s.im / (2.0 * PI));
        let (st, ends) = self.stamps(s);
        let n = self.pattern.len();
        let mut b = vec![Complex64::new(0.0, 0.0); n];
        let drive = thevenin(self.plant);
        if let Some(u) = self.unknown[drive.node] {
            b[u] += emf / drive.resistance;
        }
        for &(node, i) in inject {
            if let Some(u) = self.unknown.get(node).copied().flatten() {
                b[u] += i;
            }
        }
        let forced_at = |node: usize| -> Complex64 {
            forced.iter().filter(|f| f.0 == node && self.unknown[node].is_none()).map(|f| f.1).sum()
        };
        if !forced.is_empty() {
            // A known voltage V_p at a shorted node moves −Y12·V_p to the right-hand side of
            // each neighbouring unknown.
            for t in st.iter().filter(|t| t.p != t.q) {
                match (self.unknown[t.p], self.unknown[t.q]) {
                    (None, Some(q)) => b[q] -= t.y12 * forced_at(t.p),
                    (Some(p), None) => b[p] -= t.y12 * forced_at(t.q),
                    _ => {}
                }
            }
        }
        let mut vals = vec![Complex64::new(0.0, 0.0); self.pattern.values_len()];
        for (stamp, slot) in st.iter().zip(&self.slots) {
            for (k, y) in [(slot[0], stamp.y11), (slot[1], stamp.y11), (slot[2], stamp.y12)] {
                if k != usize::MAX {
                    vals[k] += y;
                }
            }
        }
        if vals.iter().any(|v| !v.re.is_finite() || !v.im.is_finite()) {
            return Err(ReferenceError::NonFinite { sigma, f_hz });
        }
        let x = if self.pattern.factor(&mut vals, 1e-10).is_ok() {
            self.pattern.solve(&vals, &mut b);
            b
        } else {
            self.dense(&st, b).ok_or(ReferenceError::Singular { sigma, f_hz })?
        };
        if x.iter().any(|v| !v.re.is_finite() || !v.im.is_finite()) {
            return Err(ReferenceError::Singular { sigma, f_hz });
        }
        let voltages = self.unknown.iter().map(|u| u.map_or(Complex64::new(0.0, 0.0), |u| x[u])).collect::<Vec<_>>();
        debug_assert_eq!(voltages.len(), self.total);
        Ok(Solution { voltages, ends })
    }

    /// Dense LU with partial pivoting of the same system: the fallback for a pivot the
    /// sparse elimination cannot take (a point on the jω axis, a degenerate plant).
    fn dense(&self, st: &[Stamp], b: Vec<Complex64>) -> Option<Vec<Complex64>> {
        let n = b.len();
        let mut a = DMatrix::<Complex64>::zeros(n, n);
        for t in st {
            let (p, q) = (self.unknown[t.p], self.unknown[t.q]);
            if let Some(p) = p {
                a[(p, p)] += t.y11;
            }
            if t.p != t.q {
                if let Some(q) = q {
                    a[(q, q)] += t.y11;
                }
                if let (Some(p), Some(q)) = (p, q) {
                    a[(p, q)] += t.y12;
                    a[(q, p)] += t.y12;
                }
            }
        }
        a.lu().solve(&DVector::from_vec(b)).map(|v| v.iter().copied().collect())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plant::{CableType, Drive, Node, Probe, Segment, Span, Tolerances, Waveform};

    fn plant(load: Load, rs: f64, length: f64) -> Plant {
        let node = |name: &str, load| Node { name: name.into(), load, span: Span::default() };
        Plant {
            name: "unit".into(),
            notes: vec![],
            sample_rate: 1e9,
            duration: 1e-6,
            cables: vec![CableType {
                name: "c".into(),
                z0: 50.0,
                velocity: 2e8,
                r_per_m: 0.0,
                loss: None,
                source: "unit test".into(),
            }],
            nodes: vec![node("a", Load::Open), node("b", load)],
            segments: vec![Segment {
                name: "s".into(),
                from: 0,
                to: 1,
                cable: 0,
                length,
                span: Span::default(),
                inline: None,
            }],
            drive: Drive::Source { node: 0, emf: Waveform::Step { amplitude: 1.0, delay: 0.0, rise: 0.0 }, rs },
            probes: vec![Probe { name: "i".into(), kind: ProbeKind::Current(0, End::To) }],
            tolerances: Tolerances::default(),
            events: vec![],
            lattice_path: vec![],
            zc_networks: true,
        }
    }

    #[test]
    fn load_admittances_follow_their_impedances() {
        // [closed form] Y = sC; 1/(R + 1/(sC)); 1/R + sC.
        let s = Complex64::new(1.0e5, 3.0e6);
        let (r, c) = (47.0, 2.2e-9);
        let series = 1.0 / (r + 1.0 / (s * c));
        assert!((load_admittance(Load::SeriesRc { r, c }, s) - series).norm() < 1e-15);
        assert!((load_admittance(Load::ParallelRc { r, c }, s) - (1.0 / r + s * c)).norm() < 1e-15);
        assert!((load_admittance(Load::Capacitor(c), s) - s * c).norm() < 1e-15);
    }

    #[test]
    fn input_impedance_of_a_loaded_line_matches_the_textbook_formula() {
        // [closed form] Z_in = Z0·(Z_L + Z0·tanh(x))/(Z0 + Z_L·tanh(x)), x = s·l/v; with the
        // drive behind Rs, v_in = Z_in/(Rs + Z_in).
        let rl = 200.0;
        let p = plant(Load::Resistor(rl), 30.0, 11.0);
        let s = Complex64::new(2.0e6, 2.0 * PI * 4.4e7);
        let x = s * 11.0 / 2e8;
        let z_in = 50.0 * (rl + 50.0 * x.tanh()) / (50.0 + rl * x.tanh());
        let sol = solve(&p, s).unwrap();
        let want = z_in / (30.0 + z_in);
        assert!((sol.voltages[0] - want).norm() < 1e-12 * want.norm());
        // The current into the line at its far end flows back out of the load: −v_L/R_L.
        let i_to = sol.probe(&p, ProbeKind::Current(0, End::To));
        assert!((i_to + sol.voltages[1] / rl).norm() < 1e-12 * i_to.norm());
    }

    #[test]
    fn a_short_is_an_exact_zero_and_takes_the_line_current() {
        // [closed form] shorted far end: v_L = 0 exactly; current into the short equals
        // E/(Rs + Z0·tanh(x)) / cosh(x).
        let p = plant(Load::Short, 50.0, 3.0);
        let s = Complex64::new(1.0e6, 2.0 * PI * 1.0e7);
        let sol = solve(&p, s).unwrap();
        assert_eq!(sol.voltages[1], Complex64::new(0.0, 0.0));
        let x = s * 3.0 / 2e8;
        let i_in = 1.0 / (50.0 + 50.0 * x.tanh());
        let i_short = i_in / x.cosh();
        let i_to = sol.probe(&p, ProbeKind::Current(0, End::To));
        assert!((i_to + i_short).norm() < 1e-12 * i_short.norm());
    }
}

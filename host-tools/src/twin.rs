//! The f64 twin of the delay-line model: the compiled network (same quantized delays, same
//! lumping, same elements) run in floating point with nominal coefficients.
//!
//! Comparing the core with the twin isolates arithmetic error (fixed point, coefficient
//! rounding); comparing the twin with the exact reference isolates model error (delay
//! quantization, lumped resistance, bilinear elements). The rig port is modelled ideally:
//! the device under test's EMF behind its resistance, at the port node, with no latency
//! (the core's latency compensation is what the comparison checks).
//!
//! Wave conventions as in the core: v = a + b, i = (a − b)/Z0 at every line end.

use crate::compile::{Compiled, CoreAction, HostDrive};
use tidewire_core::{Drive, ElementKind, Junction, ProbeKind, Shunt, Side};

/// Time series of one run: per probe (V or A), and the a-waves at both ends of every line
/// (for the lattice view), if recorded.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Recording {
    pub probes: Vec<Vec<f64>>,
    /// `line_a[line][n] = (a at end A, a at end B)` in volts, when recorded.
    pub line_a: Vec<Vec<(f64, f64)>>,
    /// Largest |wave| seen anywhere, V.
    pub peak_wave: f64,
}

/// A line's arrival filter at one end: port, loss sections (a, g, gb), their state
/// (x[n−1], y[n−1]), and the fractional-delay lattice (a, c, state s) if any.
type Filter = (usize, Vec<(f64, f64, f64)>, Vec<(f64, f64)>, Option<(f64, f64, f64)>);

struct State {
    shunt: Vec<Shunt>,
    broken: Vec<bool>,
}

/// Run the twin for `samples` samples; record line-end waves of the lines in `record`.
pub fn run(c: &Compiled, samples: usize, record: &[u16]) -> Recording {
    let nl = c.net.lines.len();
    let z: Vec<f64> = c.net.lines.iter().map(|l| l.z_milliohm as f64 / 1000.0).collect();
    // rings[2l + s]: waves travelling towards end s of line l.
    let mut rings: Vec<Vec<f64>> = (0..2 * nl).map(|p| vec![0.0; c.net.lines[p / 2].delay as usize]).collect();
    let mut pos = vec![0usize; 2 * nl];
    let mut a = vec![0.0; 2 * nl];
    let mut b = vec![0.0; 2 * nl];
    let mut el_state = vec![0.0; c.net.elements.len()];
    // In-line chokes: the inductor's wave b_L per junction.
    let mut choke = vec![0.0; c.net.junctions.len()];
    // Loss filters at both ends of lossy lines: (port, sections (a, g, gb), state (x1, y1)).
    let mut filters: Vec<Filter> = vec![];
    for l in &c.net.losses {
        let q = crate::compile::loss::quantized(l, 30);
        // The lattice with the core's coefficients truncated at Q30 (the wide profile's).
        let ap = l.allpass.and_then(|ap| tidewire_core::quantize::allpass(ap.a, ap.c, 30));
        let ap = ap.map(|(a, c)| (a as f64 / (1u64 << 30) as f64, c as f64 / (1u64 << 30) as f64, 0.0));
        for side in 0..2 {
            filters.push((2 * l.line as usize + side, q.clone(), vec![(0.0, 0.0); q.len()], ap));
        }
    }
    let mut el_a = vec![0.0; c.net.elements.len()];
    let mut st = State {
        shunt: c
            .net
            .junctions
            .iter()
            .map(|j| if let Junction::Node { shunt } = j { *shunt } else { Shunt::Open })
            .collect(),
        broken: vec![false; c.net.junctions.len()],
    };
    // Ports of each junction.
    let mut at: Vec<Vec<usize>> = vec![vec![]; c.net.junctions.len()];
    for (i, l) in c.net.lines.iter().enumerate() {
        at[l.a as usize].push(2 * i);
        at[l.b as usize].push(2 * i + 1);
    }
    let mut els_at: Vec<Vec<usize>> = vec![vec![]; c.net.junctions.len()];
    for (k, e) in c.net.elements.iter().enumerate() {
        els_at[e.junction as usize].push(k);
    }
    let (drive_j, g_src) = match (c.net.drive, &c.host_drive) {
        (Drive::Source { junction, milliohm }, _) => (Some(junction as usize), 1000.0 / milliohm as f64),
        (Drive::Rig { junction, .. }, HostDrive::Rig { dut_resistance, .. }) => {
            (Some(junction as usize), 1.0 / dut_resistance)
        }
        _ => (None, 0.0),
    };
    let mut out = Recording { probes: vec![Vec::with_capacity(samples); c.net.probes.len()], ..Recording::default() };
    out.line_a = vec![Vec::with_capacity(samples); record.len()];
    let mut ev = c.events.iter().peekable();
    for n in 0..samples {
        while let Some(e) = ev.next_if(|e| e.sample <= n) {
            match e.action {
                CoreAction::SetShunt(j, s) => st.shunt[j as usize] = s,
                CoreAction::Break(j) => st.broken[j as usize] = true,
            }
        }
        let e = c.host_drive.emf_at(n);
        for p in 0..2 * nl {
            b[p] = rings[p][pos[p]];
        }
        // y = g·x − gb·x[n−1] + a·y[n−1] per section, on the wave arriving at the end.
        // Then the fractional delay: y = a·x + c·s, s' = c·x − a·s.
        for (port, q, st, ap) in filters.iter_mut() {
            let mut x = b[*port];
            for ((a, g, gb), (x1, y1)) in q.iter().zip(st.iter_mut()) {
                let y = g * x - gb * *x1 + a * *y1;
                *x1 = x;
                *y1 = y;
                x = y;
            }
            if let Some((a, c, s)) = ap {
                let y = *a * x + *c * *s;
                *s = *c * x - *a * *s;
                x = y;
            }
            b[*port] = x;
        }
        for (j, junc) in c.net.junctions.iter().enumerate() {
            match junc {
                Junction::SeriesInductor { port_milliohm, milliohm } => {
                    let (p, q) = (at[j][0], at[j][1]);
                    let (rl, r) = (*port_milliohm as f64 / 1000.0, *milliohm as f64 / 1000.0);
                    // x = b1 − b2 − b_L, I = 2x/(Z1 + Z2 + R_L + R); a1 = b1 − Z1·I,
                    // a2 = b2 + Z2·I, a_L = b_L + R_L·I; bilinear inductor: next b_L = −a_L.
                    let i = 2.0 * (b[p] - b[q] - choke[j]) / (z[p / 2] + z[q / 2] + rl + r);
                    a[p] = b[p] - z[p / 2] * i;
                    a[q] = b[q] + z[q / 2] * i;
                    choke[j] = -(choke[j] + rl * i);
                }
                Junction::Series { milliohm } => {
                    let (p, q) = (at[j][0], at[j][1]);
                    let r = *milliohm as f64 / 1000.0;
                    // I = 2(b1 − b2)/(Z1 + Z2 + R), a1 = b1 − Z1·I, a2 = b2 + Z2·I
                    let i = 2.0 * (b[p] - b[q]) / (z[p / 2] + z[q / 2] + r);
                    a[p] = b[p] - z[p / 2] * i;
                    a[q] = b[q] + z[q / 2] * i;
                }
                _ => {
                    if st.broken[j] {
                        for &p in &at[j] {
                            a[p] = b[p];
                        }
                        for &k in &els_at[j] {
                            el_a[k] = el_state[k];
                        }
                        continue;
                    }
                    // v = (Σ 2·b_k/Z_k + E·G_src) / (Σ 1/Z_k + G_src + G_shunt)
                    let (mut num, mut den) = (0.0, 0.0);
                    for &p in &at[j] {
                        num += 2.0 * b[p] / z[p / 2];
                        den += 1.0 / z[p / 2];
                    }
                    for &k in &els_at[j] {
                        let el = &c.net.elements[k];
                        let g = 1000.0 / (el.port_milliohm as f64 + el.series_milliohm as f64);
                        num += 2.0 * el_state[k] * g;
                        den += g;
                    }
                    // drive_j is set only for a source or a rig port's device model.
                    if drive_j == Some(j) {
                        num += e * g_src;
                        den += g_src;
                    }
                    let v = match st.shunt[j] {
                        Shunt::Short => 0.0,
                        Shunt::Resistor { milliohm } => num / (den + 1000.0 / milliohm as f64),
                        _ => num / den,
                    };
                    for &p in &at[j] {
                        a[p] = v - b[p];
                    }
                    for &k in &els_at[j] {
                        el_a[k] = v - el_state[k];
                    }
                }
            }
        }
        for (k, pr) in c.net.probes.iter().enumerate() {
            let p = 2 * pr.line as usize + (pr.side == Side::B) as usize;
            let val = if pr.kind == ProbeKind::Current { (a[p] - b[p]) / z[p / 2] } else { a[p] + b[p] };
            out.probes[k].push(val);
        }
        for (k, l) in record.iter().enumerate() {
            let l = *l as usize;
            out.line_a[k].push((a[2 * l], a[2 * l + 1]));
        }
        // Reactances: a_c = b + μ·(a − b), μ = R_p/(R_p + R_s); next state a_c (−a_c for L).
        for (k, el) in c.net.elements.iter().enumerate() {
            let mu = el.port_milliohm as f64 / (el.port_milliohm as f64 + el.series_milliohm as f64);
            let ac = el_state[k] + mu * (el_a[k] - el_state[k]);
            el_state[k] = if el.kind == ElementKind::Inductor { -ac } else { ac };
        }
        for p in 0..2 * nl {
            out.peak_wave = out.peak_wave.max(a[p].abs()).max(b[p].abs());
            let q = p ^ 1; // the wave leaving end p travels towards the other end
            let i = pos[q];
            rings[q][i] = a[p];
        }
        for p in 0..2 * nl {
            pos[p] = (pos[p] + 1) % rings[p].len();
        }
    }
    out
}

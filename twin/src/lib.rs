//! The f64 twin of the delay-line model: a core network (same quantized delays, same
//! lumping, same elements, same loss sections) run in floating point, sample by sample.
//! One twin serves the host tools (`tidewire_host::twin`, nominal coefficients, volts and
//! amps) and the core's own tests (nominal, or the core's integer coefficients in f64 so
//! that only arithmetic error is left between the two).
//!
//! Comparing the core with the twin isolates arithmetic error (fixed point, coefficient
//! rounding); comparing the twin with the exact reference isolates model error (delay
//! quantization, lumped resistance, bilinear elements).
//!
//! Wave conventions as in the core: v = a + b, i = (a − b)/Z0 at every line end; `a`
//! enters the line, `b` leaves it toward the junction. One arm per junction kind in
//! [`Twin::step`]: a new kind of junction or element is one more arm there.

use tidewire_core::{Drive, ElementKind, Junction, Network, ProbeKind, Shunt, Side};

/// The core's integer coefficients, to run the twin with them instead of nominal ones:
/// line weights g, exponent c of the weight unit (g = floor(2^c/Z[mΩ])), fractional bits
/// of series and element coefficients, cap of a node's total weight.
#[derive(Debug, Clone)]
pub struct Quantized {
    pub g: Vec<u64>,
    pub exponent: u32,
    pub series_frac: u32,
    pub total_max: u64,
    /// Fraction bits of the fractional-delay allpass coefficients (`Profile::LOSS_FRAC`).
    pub allpass_frac: u32,
}

impl Quantized {
    /// The core's weight of a resistance: floor(2^c / R[mΩ]).
    fn weight(&self, milliohm: u32) -> f64 {
        ((1u128 << self.exponent) / u128::from(milliohm.max(1))) as f64
    }

    /// The core's weight of a sum of resistances (an element's port and series parts).
    fn weight_u64(&self, milliohm: u64) -> f64 {
        ((1u128 << self.exponent) / u128::from(milliohm.max(1))) as f64
    }

    /// A fraction as the core rounds it: floor(num·2^F/den)/2^F.
    fn fraction(&self, num: u128, den: u128) -> f64 {
        ((num << self.series_frac) / den.max(1)) as f64 / (1u64 << self.series_frac) as f64
    }
}

/// A line's arrival filter at one end: port, loss sections (a, g, gb), their state
/// (x[n−1], y[n−1]), and the fractional-delay lattice (a, c, state s) if any.
struct Filter {
    port: usize,
    sections: Vec<(f64, f64, f64)>,
    state: Vec<(f64, f64)>,
    allpass: Option<(f64, f64, f64)>,
    /// The line's allpass as designed, to quantize it again at a profile's bits.
    design: Option<tidewire_core::Allpass>,
}

/// The lattice coefficients (a, c) of a line's allpass truncated at `frac` bits, as the
/// core quantizes them (`tidewire_core::quantize::allpass`), with its state at rest.
fn allpass_at(design: Option<tidewire_core::Allpass>, frac: u32) -> Option<(f64, f64, f64)> {
    let ap = design?;
    let (a, c) = tidewire_core::quantize::allpass(ap.a, ap.c, frac)?;
    let one = (1u64 << frac) as f64;
    Some((a as f64 / one, c as f64 / one, 0.0))
}

/// How a line end's characteristic-impedance network passes waves to its line
/// (`docs/zc-model.md`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ZcRealisation {
    /// The node sees the end as the arriving wave's source 2·b behind Zc(s) = Z_inf + Σ
    /// sections, and sends a = v − b into the line, v the node voltage (J. Marti's line
    /// model in wave form: the forward quantity (v + Zc·i)/2 = v − b is what propagates).
    NodeWave,
    /// A lossless series adaptor between the node and the line (port Z_inf): the line gets
    /// a = v_line − b with v_line = v − Σ v_sections. Passive, but it transmits
    /// 2·Z_inf·i instead of 2·Zc·i: kept to show why it is not the model.
    SeriesAdaptor,
}

/// A characteristic-impedance network at one line end: Z_inf in series with parallel RC
/// sections, each a bilinear wave-digital one-port with port resistance r_i and emitted
/// wave k_i·s_i (s_i its capacitor's state; the port is reflection-free).
#[derive(Debug, Clone)]
struct ZcEnd {
    /// Z_inf + Σ r_i, ohms: the resistance the node sees.
    port: f64,
    /// (r_i, k_i) per section.
    sections: Vec<(f64, f64)>,
    state: Vec<f64>,
    how: ZcRealisation,
}

impl ZcEnd {
    /// The wave the end presents to the node: the arriving wave plus every section's.
    fn incident(&self, b: f64) -> f64 {
        b + self.sections.iter().zip(&self.state).map(|((_, k), s)| k * s).sum::<f64>()
    }

    /// After the node voltage v: the current i into the end, i = (v − 2·b_p)/port; each
    /// section's voltage v_i = 2·k_i·s_i + r_i·i, its capacitor's next state v_i − s_i.
    /// Returns (i, Σ v_i).
    fn update(&mut self, v: f64, b: f64, open: bool) -> (f64, f64) {
        let i = if open { 0.0 } else { (v - 2.0 * self.incident(b)) / self.port };
        let mut drop = 0.0;
        for ((r, k), s) in self.sections.iter().zip(self.state.iter_mut()) {
            let vi = 2.0 * k * *s + r * i;
            drop += vi;
            *s = vi - *s;
        }
        (i, drop)
    }
}

/// The network and its state.
pub struct Twin {
    lines: Vec<tidewire_core::Line>,
    junctions: Vec<Junction>,
    elements: Vec<tidewire_core::Element>,
    probes: Vec<tidewire_core::Probe>,
    coef: Option<Quantized>,
    /// Line impedance per line, ohms.
    z: Vec<f64>,
    /// Ports (2·line + side) at each junction; elements at each junction.
    at: Vec<Vec<usize>>,
    els_at: Vec<Vec<usize>>,
    /// rings[p]: waves travelling towards port p; pos[p] the read position.
    rings: Vec<Vec<f64>>,
    pos: Vec<usize>,
    a: Vec<f64>,
    b: Vec<f64>,
    el_state: Vec<f64>,
    el_a: Vec<f64>,
    /// In-line chokes: the inductor's wave b_L per junction.
    choke: Vec<f64>,
    filters: Vec<Filter>,
    shunt: Vec<Shunt>,
    broken: Vec<bool>,
    /// Nodes a series branch joins (scattered by `branch`, not `node`).
    linked: Vec<bool>,
    /// The source: junction and conductance (1/Ω, or the core's weight when quantized).
    source: Option<(usize, f64)>,
    out: Vec<f64>,
    /// Largest |wave| seen anywhere so far, in the units of the drive.
    pub peak_wave: f64,
    /// Characteristic-impedance networks by port (see [`Twin::set_zc`]).
    zc: Vec<Option<ZcEnd>>,
    /// Per port with a Zc network: (current into the end, voltage across the sections).
    zc_io: Vec<(f64, f64)>,
}

/// Fractional bits at which the twin runs loss sections: the core's quantization at its
/// finest (`tidewire_core::quantize::loss_section`), so the twin's filters are the
/// designed ones to within 2^−30.
pub const LOSS_FRAC: u32 = 30;

impl Twin {
    /// The twin of `net` with nominal coefficients (1/Z, exact fractions). A source drive is
    /// the EMF behind its resistance; a rig drive has no source until [`Twin::set_source`].
    pub fn new(net: &Network<'_>) -> Twin {
        let nl = net.lines.len();
        let nj = net.junctions.len();
        let mut at: Vec<Vec<usize>> = vec![vec![]; nj];
        for (i, l) in net.lines.iter().enumerate() {
            if let Some(v) = at.get_mut(l.a as usize) {
                v.push(2 * i);
            }
            if let Some(v) = at.get_mut(l.b as usize) {
                v.push(2 * i + 1);
            }
        }
        let mut els_at: Vec<Vec<usize>> = vec![vec![]; nj];
        for (k, e) in net.elements.iter().enumerate() {
            if let Some(v) = els_at.get_mut(e.junction as usize) {
                v.push(k);
            }
        }
        let mut filters = vec![];
        for l in net.losses {
            let sections: Vec<(f64, f64, f64)> = (0..l.sections as usize)
                .map(|k| {
                    let one = (1u64 << LOSS_FRAC) as f64;
                    // The core refuses a section its quantization refuses; pass-through here.
                    let (a, g, gb) =
                        tidewire_core::quantize::loss_section(i64::from(l.poles[k]), i64::from(l.zeros[k]), LOSS_FRAC)
                            .unwrap_or((0, 1 << LOSS_FRAC, 0));
                    (a as f64 / one, g as f64 / one, gb as f64 / one)
                })
                .collect();
            for side in 0..2 {
                let state = vec![(0.0, 0.0); sections.len()];
                let (design, port) = (l.allpass, 2 * l.line as usize + side);
                let allpass = allpass_at(design, LOSS_FRAC);
                filters.push(Filter { port, sections: sections.clone(), state, allpass, design });
            }
        }
        let source = match net.drive {
            Drive::Source { junction, milliohm } => Some((junction as usize, 1000.0 / f64::from(milliohm.max(1)))),
            _ => None,
        };
        let mut twin = Twin {
            lines: net.lines.to_vec(),
            junctions: net.junctions.to_vec(),
            elements: net.elements.to_vec(),
            probes: net.probes.to_vec(),
            coef: None,
            z: net.lines.iter().map(|l| f64::from(l.z_milliohm) / 1000.0).collect(),
            at,
            els_at,
            rings: (0..2 * nl).map(|p| vec![0.0; net.lines[p / 2].delay.max(1) as usize]).collect(),
            pos: vec![0; 2 * nl],
            a: vec![0.0; 2 * nl],
            b: vec![0.0; 2 * nl],
            el_state: vec![0.0; net.elements.len()],
            el_a: vec![0.0; net.elements.len()],
            choke: vec![0.0; nj],
            filters,
            shunt: net
                .junctions
                .iter()
                .map(|j| if let Junction::Node { shunt } = j { *shunt } else { Shunt::Open })
                .collect(),
            broken: vec![false; nj],
            linked: (0..nj)
                .map(|j| {
                    net.junctions
                        .iter()
                        .any(|x| matches!(*x, Junction::Branch { a, b, .. } if a as usize == j || b as usize == j))
                })
                .collect(),
            source,
            out: vec![0.0; net.probes.len()],
            peak_wave: 0.0,
            zc: vec![None; 2 * nl],
            zc_io: vec![(0.0, 0.0); 2 * nl],
        };
        twin.zc_from_network(net, 30);
        twin
    }

    /// Read the Zc(s) networks the network itself carries (`LineLoss::zc`, Q30), node-wave
    /// form at both ends: r_i = ρ_i·Z_p, Z_inf = Z_p − Σ r_i with Z_p the line's impedance;
    /// k_i and ρ_i truncated to `frac` bits as the core quantizes them
    /// ([`tidewire_core::quantize::zc_section`]; 30: as given).
    fn zc_from_network(&mut self, net: &Network<'_>, frac: u32) {
        let one = (1u64 << frac.min(30)) as f64;
        for l in net.losses {
            let (Some(zc), Some(line)) = (l.zc, net.lines.get(l.line as usize)) else { continue };
            let zp = f64::from(line.z_milliohm) / 1000.0;
            let n = (zc.sections as usize).min(tidewire_core::MAX_ZC_SECTIONS);
            let sections: Vec<(f64, f64)> = (0..n)
                .map(|i| {
                    let (k, rho) =
                        tidewire_core::quantize::zc_section(zc.k[i], zc.rho[i], frac.min(30)).unwrap_or((0, 0));
                    (f64::from(rho) / one * zp, f64::from(k) / one)
                })
                .collect();
            let z_inf = zp - sections.iter().map(|(r, _)| r).sum::<f64>();
            self.set_zc(l.line as usize, z_inf, &sections, ZcRealisation::NodeWave);
        }
    }

    /// The same network with the core's integer coefficients `q` (f64 arithmetic). Probes
    /// then read as the core's raw probes do: a + b, or a − b for a current.
    pub fn quantized(net: &Network<'_>, q: Quantized) -> Twin {
        let mut t = Twin::new(net);
        if let Drive::Source { junction, milliohm } = net.drive {
            t.source = Some((junction as usize, q.weight(milliohm)));
        }
        // The allpass with the profile's coefficient bits (the loss sections stay at Q30).
        for f in t.filters.iter_mut() {
            f.allpass = allpass_at(f.design, q.allpass_frac);
        }
        // Zc(s) networks with the profile's coefficient bits (the same `LOSS_FRAC`).
        t.zc_from_network(net, q.allpass_frac);
        t.coef = Some(q);
        t
    }

    /// Put an EMF source behind `conductance` (1/Ω) at `junction` (the rig port's device
    /// model: the device's EMF behind its resistance, with no latency).
    pub fn set_source(&mut self, junction: usize, conductance: f64) {
        self.source = Some((junction, conductance));
    }

    /// Give both ends of `line` a characteristic-impedance network: `z_inf` ohms in series
    /// with wave-digital parallel RC sections (r_i ohms, k_i), as `ZcFit::wave_sections`
    /// gives them. Both ends, also at series junctions: the node-wave form keeps current
    /// continuity through a line at DC only when both its ends have the same network
    /// (`docs/zc-model.md`). Nominal coefficients at series junctions (the quantized twin's
    /// series coefficient does not apply to a Zc port).
    pub fn set_zc(&mut self, line: usize, z_inf: f64, sections: &[(f64, f64)], how: ZcRealisation) {
        let port = z_inf + sections.iter().map(|(r, _)| r).sum::<f64>();
        for side in 0..2 {
            if let Some(slot) = self.zc.get_mut(2 * line + side) {
                let state = vec![0.0; sections.len()];
                *slot = Some(ZcEnd { port, sections: sections.to_vec(), state, how });
            }
        }
    }

    /// A scheduled load change at a node.
    pub fn set_shunt(&mut self, junction: usize, shunt: Shunt) {
        if let Some(s) = self.shunt.get_mut(junction) {
            *s = shunt;
        }
    }

    /// A scheduled break: the node parts, every port reflects what arrives (a = b).
    pub fn set_broken(&mut self, junction: usize) {
        if let Some(b) = self.broken.get_mut(junction) {
            *b = true;
        }
    }

    fn g(&self, port: usize) -> f64 {
        match &self.coef {
            Some(q) => q.g[port / 2] as f64,
            None => 1.0 / self.z[port / 2],
        }
    }

    fn g_of_milliohm(&self, m: u32) -> f64 {
        match &self.coef {
            Some(q) => q.weight(m),
            None => 1000.0 / f64::from(m.max(1)),
        }
    }

    /// The a-waves at both ends of `line` after the last step (for the lattice view).
    pub fn line_a(&self, line: usize) -> (f64, f64) {
        (self.a[2 * line], self.a[2 * line + 1])
    }

    /// One sample with source EMF `emf`; returns the probe values: voltage a + b, current
    /// (a − b)/Z0 (nominal) or a − b (quantized, as the core's raw probe).
    pub fn step(&mut self, emf: f64) -> &[f64] {
        for p in 0..self.b.len() {
            self.b[p] = self.rings[p][self.pos[p]];
        }
        // y = g·x − gb·x[n−1] + a·y[n−1] per section, on the wave arriving at the end.
        for f in self.filters.iter_mut() {
            let mut x = self.b[f.port];
            for ((a, g, gb), (x1, y1)) in f.sections.iter().zip(f.state.iter_mut()) {
                let y = g * x - gb * *x1 + a * *y1;
                *x1 = x;
                *y1 = y;
                x = y;
            }
            // Then the fractional delay: y = a·x + c·s, s' = c·x − a·s.
            if let Some((a, c, s)) = f.allpass.as_mut() {
                let y = *a * x + *c * *s;
                *s = *c * x - *a * *s;
                x = y;
            }
            self.b[f.port] = x;
        }
        for j in 0..self.junctions.len() {
            match self.junctions[j] {
                Junction::SeriesInductor { port_milliohm, milliohm } => {
                    let (p, q) = (self.at[j][0], self.at[j][1]);
                    let (rl, r) = (f64::from(port_milliohm) / 1000.0, f64::from(milliohm) / 1000.0);
                    let ((b1, z1), (b2, z2)) = (self.port_source(p), self.port_source(q));
                    // x = b1 − b2 − b_L, I = 2x/(Z1 + Z2 + R_L + R); a1 = b1 − Z1·I,
                    // a2 = b2 + Z2·I, a_L = b_L + R_L·I; bilinear inductor: next b_L = −a_L.
                    let i = 2.0 * (b1 - b2 - self.choke[j]) / (z1 + z2 + rl + r);
                    self.leave(p, 2.0 * b1 - z1 * i);
                    self.leave(q, 2.0 * b2 + z2 * i);
                    self.choke[j] = -(self.choke[j] + rl * i);
                }
                Junction::Series { milliohm }
                    if self.zc[self.at[j][0]].is_some() || self.zc[self.at[j][1]].is_some() =>
                {
                    // Lines with Zc ends (nominal only): each end a source 2·b_p behind its
                    // port resistance, I = 2(b1 − b2)/(Z1 + Z2 + R) from end 1 to end 2.
                    let (p, q) = (self.at[j][0], self.at[j][1]);
                    let ((b1, z1), (b2, z2)) = (self.port_source(p), self.port_source(q));
                    let i = 2.0 * (b1 - b2) / (z1 + z2 + f64::from(milliohm) / 1000.0);
                    self.leave(p, 2.0 * b1 - z1 * i);
                    self.leave(q, 2.0 * b2 + z2 * i);
                }
                Junction::Series { milliohm } => {
                    let (p, q) = (self.at[j][0], self.at[j][1]);
                    let (z1, z2) = (self.z[p / 2], self.z[q / 2]);
                    // I = 2(b1 − b2)/(Z1 + Z2 + R), a1 = b1 − Z1·I, a2 = b2 + Z2·I; the core
                    // uses one coefficient c = floor(2Z·2^F/(2Z + R))/2^F (equal Z).
                    let (c1, c2) = match &self.coef {
                        Some(qz) => {
                            let z = u128::from(self.lines[p / 2].z_milliohm);
                            let c = qz.fraction(2 * z, 2 * z + u128::from(milliohm));
                            (c, c)
                        }
                        None => {
                            let r = f64::from(milliohm) / 1000.0;
                            (2.0 * z1 / (z1 + z2 + r), 2.0 * z2 / (z1 + z2 + r))
                        }
                    };
                    let x = self.b[p] - self.b[q];
                    self.a[p] = self.b[p] - c1 * x;
                    self.a[q] = self.b[q] + c2 * x;
                }
                Junction::Branch { a, b, port_milliohm, milliohm } => {
                    self.branch(j, a as usize, b as usize, port_milliohm, milliohm, emf)
                }
                // A node a series branch joins is scattered by its branch.
                Junction::Node { .. } if self.linked[j] => {}
                _ => self.node(j, emf),
            }
        }
        let quantized = self.coef.is_some();
        for (k, pr) in self.probes.iter().enumerate() {
            let p = 2 * pr.line as usize + usize::from(pr.side == Side::B);
            let zc = self.zc[p].as_ref().map(|e| e.how);
            let zc_port = self.zc[p].as_ref().map_or(1.0, |e| e.port);
            self.out[k] = match (pr.kind, quantized) {
                // A Zc end: the current through its network (as the core's raw read-out,
                // Z_p·i = a_p − b_p, when quantized), the node's voltage.
                (ProbeKind::Current, false) if zc.is_some() => self.zc_io[p].0,
                (ProbeKind::Current, true) if zc.is_some() => self.zc_io[p].0 * zc_port,
                _ if zc == Some(ZcRealisation::SeriesAdaptor) => self.a[p] + self.b[p] + self.zc_io[p].1,
                (ProbeKind::Current, false) => (self.a[p] - self.b[p]) / self.z[p / 2],
                (ProbeKind::Current, true) => self.a[p] - self.b[p],
                _ => self.a[p] + self.b[p],
            };
        }
        // Reactances: a_c = b + μ·(a − b), μ = R_p/(R_p + R_s); next state a_c (−a_c for L).
        for k in 0..self.elements.len() {
            let el = self.elements[k];
            let mu = match &self.coef {
                Some(q) => q.fraction(
                    u128::from(el.port_milliohm),
                    u128::from(el.port_milliohm) + u128::from(el.series_milliohm),
                ),
                None => f64::from(el.port_milliohm) / (f64::from(el.port_milliohm) + f64::from(el.series_milliohm)),
            };
            let ac = self.el_state[k] + mu * (self.el_a[k] - self.el_state[k]);
            self.el_state[k] = if el.kind == ElementKind::Inductor { -ac } else { ac };
        }
        for p in 0..self.a.len() {
            self.peak_wave = self.peak_wave.max(self.a[p].abs()).max(self.b[p].abs());
            // The wave leaving port p travels towards its partner (p ^ 1).
            let q = p ^ 1;
            let i = self.pos[q];
            self.rings[q][i] = self.a[p];
        }
        for p in 0..self.b.len() {
            self.pos[p] = (self.pos[p] + 1) % self.rings[p].len();
        }
        &self.out
    }

    /// A series branch (R + L) from node `a` to node `b` (see `Junction::Branch`): with each
    /// node's open-circuit voltage v0 = N/G (N = Σ 2·g_k·b_k + E·G_src, G its whole weight),
    /// i = (v0_a − v0_b − 2·b_L)/(R + R_L + 1/G_a + 1/G_b), v_a = v0_a − i/G_a,
    /// v_b = v0_b + i/G_b, a_L = b_L + R_L·i, next b_L = −a_L. Quantized: the core's integer
    /// weights and its port numbers n_l = round(R_L·K), n_r = floor(R·K), K = G_a·G_b/2^c.
    fn branch(&mut self, j: usize, a: usize, b: usize, port_milliohm: u32, milliohm: u32, emf: f64) {
        let (na, ga) = self.node_sums(a, emf);
        let (nb, gb) = self.node_sums(b, emf);
        let (rl, r) = match &self.coef {
            Some(q) => {
                let c = q.exponent;
                let k = (ga as u128) * (gb as u128);
                let nl = (u128::from(port_milliohm) * k + (1u128 << (c - 1))) >> c;
                let nr = (u128::from(milliohm) * k) >> c;
                (nl as f64 / (ga * gb), nr as f64 / (ga * gb))
            }
            None => (f64::from(port_milliohm) / 1000.0, f64::from(milliohm) / 1000.0),
        };
        let (va0, vb0) = (na / ga, nb / gb);
        let s = self.choke[j];
        let i = (va0 - vb0 - 2.0 * s) / (r + rl + 1.0 / ga + 1.0 / gb);
        self.set_node(a, va0 - i / ga);
        self.set_node(b, vb0 + i / gb);
        self.choke[j] = -(s + rl * i);
    }

    /// N = Σ 2·g_k·b_k (+ E·G_src) and G = Σ g_k (+ G_src + G_shunt) of node `j`: its
    /// whole weight, as a series branch sees the node.
    fn node_sums(&self, j: usize, emf: f64) -> (f64, f64) {
        let (num, den) = self.port_sums(j, emf);
        match self.shunt[j] {
            Shunt::Resistor { milliohm } => (num, den + self.g_of_milliohm(milliohm)),
            _ => (num, den),
        }
    }

    /// N = Σ 2·g_k·b_k (+ E·G_src) and Σ g_k (+ G_src) over the ports of node `j` (a Zc end
    /// counts with its incident wave and port resistance), without the shunt.
    fn port_sums(&self, j: usize, emf: f64) -> (f64, f64) {
        let (mut num, mut den) = (0.0, 0.0);
        for &p in &self.at[j] {
            let (b, g) = match &self.zc[p] {
                Some(end) => (end.incident(self.b[p]), self.g_of_port(end.port)),
                None => (self.b[p], self.g(p)),
            };
            num += 2.0 * b * g;
            den += g;
        }
        for &k in &self.els_at[j] {
            let el = self.elements[k];
            let g = match &self.coef {
                Some(q) => q.weight_u64(u64::from(el.port_milliohm) + u64::from(el.series_milliohm)),
                None => 1000.0 / (f64::from(el.port_milliohm) + f64::from(el.series_milliohm)),
            };
            num += 2.0 * self.el_state[k] * g;
            den += g;
        }
        if let Some((sj, gs)) = self.source {
            if sj == j {
                num += emf * gs;
                den += gs;
            }
        }
        (num, den)
    }

    /// Every port of node `j` leaves with a_k = v − b_k (a Zc end also updates its sections,
    /// and the series adaptor takes their voltage off the wave into the line).
    fn set_node(&mut self, j: usize, v: f64) {
        for &p in &self.at[j] {
            self.a[p] = v - self.b[p];
            if let Some(end) = self.zc[p].as_mut() {
                let (i, drop) = end.update(v, self.b[p], false);
                self.zc_io[p] = (i, drop);
                if end.how == ZcRealisation::SeriesAdaptor {
                    self.a[p] -= drop;
                }
            }
        }
        for &k in &self.els_at[j] {
            self.el_a[k] = v - self.el_state[k];
        }
    }

    /// A node: v = (Σ 2·g_k·b_k + E·G_src) / (Σ g_k + G_src + G_shunt), every port a_k = v − b_k;
    /// a short has v = 0; a broken node reflects every port (a = b).
    fn node(&mut self, j: usize, emf: f64) {
        if self.broken[j] {
            for &p in &self.at[j] {
                self.a[p] = self.b[p];
                if let Some(end) = self.zc[p].as_mut() {
                    // An open end: no current, the sections discharge into their resistors.
                    self.zc_io[p] = end.update(0.0, self.b[p], true);
                }
            }
            for &k in &self.els_at[j] {
                self.el_a[k] = self.el_state[k];
            }
            return;
        }
        let (num, den) = self.port_sums(j, emf);
        let cap = self.coef.as_ref().map_or(f64::INFINITY, |q| q.total_max as f64);
        let v = match self.shunt[j] {
            Shunt::Short => 0.0,
            Shunt::Resistor { milliohm } => num / (den + self.g_of_milliohm(milliohm)).min(cap),
            _ => num / den,
        };
        self.set_node(j, v);
    }

    /// What port `p` presents to a series junction: its incident wave and its resistance
    /// (a Zc end's, or the line's own).
    fn port_source(&self, p: usize) -> (f64, f64) {
        match &self.zc[p] {
            Some(end) => (end.incident(self.b[p]), end.port),
            None => (self.b[p], self.z[p / 2]),
        }
    }

    /// Port `p` at voltage `v` (a series junction's side): the wave into its line, a = v − b
    /// (less the sections' voltage for the series adaptor), and its Zc sections' update.
    fn leave(&mut self, p: usize, v: f64) {
        self.a[p] = v - self.b[p];
        if let Some(end) = self.zc[p].as_mut() {
            let (i, drop) = end.update(v, self.b[p], false);
            self.zc_io[p] = (i, drop);
            if end.how == ZcRealisation::SeriesAdaptor {
                self.a[p] -= drop;
            }
        }
    }

    /// The node weight of a Zc end's port resistance (ohms): 1/R, or the core's weight.
    fn g_of_port(&self, ohm: f64) -> f64 {
        match &self.coef {
            Some(q) => q.weight_u64((ohm * 1000.0).round().max(1.0) as u64),
            None => 1.0 / ohm,
        }
    }

    /// Stored energy Σ w²/Z0 over all ring contents and fractional-delay states (a lattice's
    /// state is a wave of its line).
    pub fn energy(&self) -> f64 {
        let rings: f64 =
            self.rings.iter().enumerate().map(|(p, r)| r.iter().map(|w| w * w).sum::<f64>() / self.z[p / 2]).sum();
        let lattices: f64 =
            self.filters.iter().filter_map(|f| f.allpass.map(|(_, _, s)| s * s / self.z[f.port / 2])).sum();
        rings + lattices
    }
}

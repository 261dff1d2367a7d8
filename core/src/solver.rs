//! The solver: state, the per-sample loop and read-out.
//!
//! Per sample, in this order (every loop bounded by the validated port and junction counts):
//! 1. every junction turns the waves arriving at its ports (b) into outgoing waves (a), one
//!    loop per junction kind over its run table (`scatter.rs`), then the series branches;
//! 2. probes and the drive output are read from a and b of this sample;
//! 3. every port's a is written into the ring of the line towards its partner end, every
//!    ring cursor advances by one, and the b of the next sample is read at the new cursor.
//!
//! A ring of length d read and written at the same cursor delays by exactly d samples, so the
//! cost per sample is independent of the delay (no data is shifted).
//!
//! No-panic rule: once `load` has succeeded, nothing reachable from `step`, `process` or the
//! read-out can panic. All indexing goes through `get`/`get_mut` (whose `None` arm is dead
//! after validation) or masks, arithmetic is wrapping or saturating where the ranges were
//! argued, and no division happens here.

mod lines;
#[cfg(test)]
mod rest_tests;
mod scatter;

pub(crate) use lines::{loss_group, LOSS_GROUPS};
pub(crate) use scatter::{NodeRun, PairRun, NODE_GROUPS, N_PORT, ONE_PORT, OPEN, SHORT, THREE_PORT, TWO_PORT};

use crate::network::{MAX_LOSS_SECTIONS, MAX_PROBES, MAX_ZC_SECTIONS};
use crate::profile::Profile;

/// Size of the rig-port history ring (a power of two > MAX_RIG_LATENCY).
pub(crate) const HIST: usize = 64;

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Mode {
    /// Parallel scattering through the node voltage.
    Scatter,
    /// v = 0: a = −b.
    Short,
    /// Node split into open ends: a = b.
    Broken,
    /// One end of a series branch ([`JunctionRt::Branch`]), which scatters it: its record
    /// holds its weight with the link port (total = 2G) and that total's reciprocal.
    Linked,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum JunctionRt {
    Unused,
    Node {
        first: u16,
        count: u16,
        mode: Mode,
        short: bool,
        broken: bool,
        g_src: u32,
        /// Σ port weights + source weight (the part of the total that is not the shunt).
        g_ports: u64,
        recip: u32,
        shift: u32,
        /// The total weight (ports, source and shunt) the node divides by.
        total: u64,
    },
    Series {
        p: u16,
        q: u16,
        c: u32,
    },
    /// Series inductor: coefficients (its state runs in its [`PairRun`]).
    SeriesL {
        p: u16,
        q: u16,
        c: u32,
        rho: u32,
    },
    Rig {
        port: u16,
    },
    /// A series branch between linked nodes `a` and `b` (their records hold the node side):
    /// port numbers n_a, n_b, n_l, their sum with the resistor's `n`, its reciprocal, and
    /// the inductor's wave s = b_L.
    Branch {
        a: u16,
        b: u16,
        na: u32,
        nb: u32,
        nl: u32,
        n: u32,
        recip: u32,
        shift: u32,
        s: i32,
    },
}

/// A reactive one-port's port and adaptor coefficient.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct ElementRt {
    pub port: u16,
    pub mu: u32,
    pub negate: bool,
}

/// One port's loss filter: coefficients and state per section.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct LossRt<W: Copy> {
    pub port: u16,
    /// This end in network order, 2·loss + side (the records run grouped, `lines.rs`).
    pub end: u16,
    pub sections: u8,
    pub g: [u32; MAX_LOSS_SECTIONS],
    pub gb: [i32; MAX_LOSS_SECTIONS],
    pub a: [u32; MAX_LOSS_SECTIONS],
    /// The first section's x[n−1]; per section y[n−1] and the quantization residue (not a
    /// wave, `Profile::loss_section`). Section k >= 1 takes its x[n−1] from section k − 1's
    /// y[n−1] (its input is that section's output), so it keeps no state of its own.
    pub x1: W,
    pub y1: [W; MAX_LOSS_SECTIONS],
    pub r1: [W; MAX_LOSS_SECTIONS],
    /// Fractional-delay allpass after the sections: whether present, its lattice
    /// coefficients (a, c) in `LOSS_FRAC` bits, and its state s.
    pub ap: bool,
    pub ap_a: i32,
    pub ap_c: u32,
    pub ap_s: W,
    /// Zc(s) network at this end ([`crate::ZcNetwork`], node-wave form): sections in use
    /// (0: none), k_i, 2k_i − 1 and ρ_i in `LOSS_FRAC` bits, the states s_i, this sample's
    /// c = Σ k_i·s_i, and the junction's outgoing wave a_p kept while the ring takes
    /// a_p + c.
    pub zc_n: u8,
    pub zc_k: [u32; MAX_ZC_SECTIONS],
    pub zc_pole: [i32; MAX_ZC_SECTIONS],
    pub zc_rho: [u32; MAX_ZC_SECTIONS],
    pub zc_s: [W; MAX_ZC_SECTIONS],
    pub zc_c: W,
    pub zc_ap: W,
}

impl<W: Copy> LossRt<W> {
    /// A record with no section, no allpass and no Zc network (all states `zero`).
    pub(crate) const fn empty(port: u16, zero: W) -> Self {
        LossRt {
            port,
            end: 0,
            sections: 0,
            g: [0; MAX_LOSS_SECTIONS],
            gb: [0; MAX_LOSS_SECTIONS],
            a: [0; MAX_LOSS_SECTIONS],
            x1: zero,
            y1: [zero; MAX_LOSS_SECTIONS],
            r1: [zero; MAX_LOSS_SECTIONS],
            ap: false,
            ap_a: 0,
            ap_c: 0,
            ap_s: zero,
            zc_n: 0,
            zc_k: [0; MAX_ZC_SECTIONS],
            zc_pole: [0; MAX_ZC_SECTIONS],
            zc_rho: [0; MAX_ZC_SECTIONS],
            zc_s: [zero; MAX_ZC_SECTIONS],
            zc_c: zero,
            zc_ap: zero,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum DriveRt {
    None,
    Source { port: u16 },
    Rig { port: u16 },
}

/// One port's delay ring, packed so the line pass reads one record per port: the ring
/// occupies `mem[start..end]`, `cursor` is where this sample's wave is written, and
/// `partner` is the port whose outgoing wave a travels towards this one.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Ring {
    pub cursor: u32,
    pub start: u32,
    pub end: u32,
    pub partner: u32,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct ProbeRt {
    pub current: bool,
    pub port: u16,
    pub z_milliohm: u32,
}

/// A fixed-capacity real-time solver.
///
/// * `P`: the number profile ([`crate::Wide`] or [`crate::Narrow`]);
/// * `PORTS`: line ends (two per line);
/// * `JUNCS`: junctions;
/// * `MEM`: delay storage in waves (the sum of all one-way delays, both directions);
/// * `LOSSES`: line ends with a loss filter (two per lossy line; 0 by default, so a solver
///   for lossless plants carries no filter state).
///
/// `Solver::new()` is `const`, so a solver can live in a `static`.
pub struct Solver<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize = 0> {
    pub(crate) g: [u32; PORTS],
    pub(crate) rings: [Ring; PORTS],
    pub(crate) port_of: [u16; PORTS],
    pub(crate) a: [P::Wave; PORTS],
    pub(crate) b: [P::Wave; PORTS],
    pub(crate) mem: [P::Wave; MEM],
    pub(crate) juncs: [JunctionRt; JUNCS],
    /// The junction pass's run tables, built from `juncs` (`configure/schedule.rs`): the
    /// scattering, short and open nodes grouped by kind (group k is
    /// `nodes[node_bounds[k]..node_bounds[k + 1]]`, see `scatter.rs`), the series resistors (`pairs[..n_series]`) and chokes
    /// (`pairs[n_series..n_pairs]`), and the rig port's junction port.
    pub(crate) nodes: [NodeRun; JUNCS],
    pub(crate) node_bounds: [u16; NODE_GROUPS + 1],
    pub(crate) pairs: [PairRun; JUNCS],
    pub(crate) n_series: u16,
    pub(crate) n_pairs: u16,
    pub(crate) rig_junction: Option<u16>,
    pub(crate) elements: [ElementRt; PORTS],
    pub(crate) n_elements: usize,
    /// The loss filters in run order, grouped by kind (`lines.rs`): group k is
    /// `losses[loss_bounds[k]..loss_bounds[k + 1]]`, within a group in network order.
    pub(crate) losses: [LossRt<P::Wave>; LOSSES],
    pub(crate) loss_bounds: [u16; LOSS_GROUPS + 1],
    pub(crate) n_losses: usize,
    pub(crate) probes: [ProbeRt; MAX_PROBES],
    pub(crate) probe_out: [i32; MAX_PROBES],
    pub(crate) hist: [P::Wave; HIST],
    pub(crate) hist_pos: usize,
    pub(crate) rig_latency: usize,
    pub(crate) n_ports: usize,
    pub(crate) n_lines: usize,
    pub(crate) n_juncs: usize,
    pub(crate) n_probes: usize,
    pub(crate) mem_used: usize,
    pub(crate) exponent: u32,
    pub(crate) drive: DriveRt,
    /// Whether any junction is a series branch (then the branch pass runs).
    pub(crate) branches: bool,
    /// Whether any line end has a Zc(s) network (then its post-step runs).
    pub(crate) zc: bool,
    pub(crate) io_shift: u32,
    pub(crate) volts_per_code: f32,
}

impl<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize>
    Solver<P, PORTS, JUNCS, MEM, LOSSES>
{
    /// An empty solver (no network: `step` returns 0). Load a network with [`Self::load`].
    pub const fn new() -> Self {
        Solver {
            g: [0; PORTS],
            rings: [Ring { cursor: 0, start: 0, end: 0, partner: 0 }; PORTS],
            port_of: [0; PORTS],
            a: [P::ZERO; PORTS],
            b: [P::ZERO; PORTS],
            mem: [P::ZERO; MEM],
            juncs: [JunctionRt::Unused; JUNCS],
            nodes: [NodeRun::EMPTY; JUNCS],
            node_bounds: [0; NODE_GROUPS + 1],
            pairs: [PairRun::EMPTY; JUNCS],
            n_series: 0,
            n_pairs: 0,
            rig_junction: None,
            elements: [ElementRt { port: 0, mu: 0, negate: false }; PORTS],
            n_elements: 0,
            losses: [LossRt::empty(0, P::ZERO); LOSSES],
            loss_bounds: [0; LOSS_GROUPS + 1],
            n_losses: 0,
            probes: [ProbeRt { current: false, port: 0, z_milliohm: 1 }; MAX_PROBES],
            probe_out: [0; MAX_PROBES],
            hist: [P::ZERO; HIST],
            hist_pos: 0,
            rig_latency: 0,
            n_ports: 0,
            n_lines: 0,
            n_juncs: 0,
            n_probes: 0,
            mem_used: 0,
            exponent: 0,
            drive: DriveRt::None,
            branches: false,
            zc: false,
            io_shift: 0,
            volts_per_code: 1.0,
        }
    }

    /// Zero every wave and rewind every ring: the plant at rest. Configuration is kept.
    pub fn reset(&mut self) {
        self.mem.iter_mut().for_each(|w| *w = P::ZERO);
        self.a.iter_mut().for_each(|w| *w = P::ZERO);
        self.b.iter_mut().for_each(|w| *w = P::ZERO);
        self.hist.iter_mut().for_each(|w| *w = P::ZERO);
        self.probe_out.iter_mut().for_each(|w| *w = 0);
        self.hist_pos = 0;
        for j in self.juncs.iter_mut() {
            if let JunctionRt::Branch { s, .. } = j {
                *s = 0;
            }
        }
        self.pairs.iter_mut().for_each(|r| r.s = 0);
        for l in self.losses.iter_mut() {
            l.x1 = P::ZERO;
            l.y1 = [P::ZERO; MAX_LOSS_SECTIONS];
            l.r1 = [P::ZERO; MAX_LOSS_SECTIONS];
            l.ap_s = P::ZERO;
            l.zc_s = [P::ZERO; MAX_ZC_SECTIONS];
            l.zc_c = P::ZERO;
            l.zc_ap = P::ZERO;
        }
        for r in self.rings.iter_mut() {
            r.cursor = r.start;
        }
    }

    /// Advance one sample. `input` is the drive's input code (source EMF, or the rig's
    /// measured pin voltage); the result is the drive's output code (the node voltage at a
    /// source, or the DAC drive 2·b at a rig port). Bounded time, O(ports), never panics.
    pub fn step(&mut self, input: i16) -> i16 {
        let e = P::from_code(input, self.io_shift);

        // Rig port: the pin voltage v was measured while the DAC still showed the wave sent
        // `latency` samples ago, so a = v − b[n − latency].
        let mut rig_back = P::ZERO;
        if let DriveRt::Rig { port } = self.drive {
            let now = self.b.get(port as usize).copied().unwrap_or(P::ZERO);
            if let Some(h) = self.hist.get_mut(self.hist_pos & (HIST - 1)) {
                *h = now;
            }
            let back = self.hist_pos.wrapping_sub(self.rig_latency) & (HIST - 1);
            rig_back = self.hist.get(back).copied().unwrap_or(P::ZERO);
            self.hist_pos = self.hist_pos.wrapping_add(1) & (HIST - 1);
        }

        self.scatter(e, rig_back);
        if self.branches {
            self.scatter_branches(e);
        }

        // Read-out of this sample.
        // At the rig port the pin shows the wave the DAC sent `latency` samples ago, not this
        // sample's b (which the DAC shows only `latency` samples from now): the pin voltage
        // is a + b[n − latency] = v as measured, and its current (a − b[n − latency])/Z0.
        let rig_port = match self.drive {
            DriveRt::Rig { port } => Some(port),
            _ => None,
        };
        let n_probes = self.n_probes.min(MAX_PROBES);
        for (out, pr) in self.probe_out.iter_mut().zip(self.probes.iter()).take(n_probes) {
            let i = pr.port as usize;
            let a = self.a.get(i).copied().unwrap_or(P::ZERO);
            let b = if rig_port == Some(pr.port) { rig_back } else { self.b.get(i).copied().unwrap_or(P::ZERO) };
            *out = if pr.current { P::diff(a, b) } else { P::sum(a, b) };
        }
        let output = match self.drive {
            DriveRt::None => 0,
            DriveRt::Source { port } => {
                let i = port as usize;
                let a = self.a.get(i).copied().unwrap_or(P::ZERO);
                let b = self.b.get(i).copied().unwrap_or(P::ZERO);
                P::to_code(P::sum(a, b), self.io_shift)
            }
            DriveRt::Rig { port } => {
                let b = self.b.get(port as usize).copied().unwrap_or(P::ZERO);
                P::to_code(P::sum(b, b), self.io_shift)
            }
        };

        // Reactances: the wave a node sent into an element port becomes the element's new
        // state (its next b), through the series-resistor adaptor.
        let n_el = self.n_elements.min(PORTS);
        for el in self.elements.iter().take(n_el) {
            let i = el.port as usize;
            let b = self.b.get(i).copied().unwrap_or(P::ZERO);
            if let Some(a) = self.a.get_mut(i) {
                *a = P::adapt(b, *a, el.mu, el.negate);
            }
        }

        self.propagate();
        output
    }

    /// Branch pass: every series branch and its two linked nodes, as a wave-digital tree
    /// (see [`crate::Junction::Branch`]): each node sends w (stage 1, reflection-free), the
    /// series adaptor returns r_a, r_b and the inductor's a_L (stage 2), each node scatters
    /// with its link wave (stage 3); the inductor's next wave is b_L = −a_L.
    #[inline(never)]
    fn scatter_branches(&mut self, e: P::Wave) {
        let n = self.n_juncs.min(JUNCS);
        for j in 0..n {
            let Some(JunctionRt::Branch { a, b, na, nb, nl, n, recip, shift, s }) = self.juncs.get(j).copied() else {
                continue;
            };
            let side = |k: u16| match self.juncs.get(k as usize).copied() {
                Some(JunctionRt::Node { first, count, g_src, recip, shift, total, .. }) => {
                    let lo = first as usize;
                    Some((lo, lo.saturating_add(count as usize), g_src, recip, shift, total))
                }
                _ => None,
            };
            let (Some(sa), Some(sb)) = (side(a), side(b)) else {
                continue;
            };
            let open = |(lo, hi, g_src, recip, shift, total): (usize, usize, u32, u32, u32, u64)| match (
                self.b.get(lo..hi),
                self.g.get(lo..hi),
            ) {
                (Some(bs), Some(gs)) => P::branch_open(bs, gs, e, g_src, recip, shift, total),
                _ => P::ZERO,
            };
            let (wa, wb) = (open(sa), open(sb));
            let (ra, rb, al) = P::branch_series(wa, wb, P::wave_from_i32(s), na, nb, nl, recip, shift, n);
            for ((lo, hi, g_src, recip, shift, total), r) in [(sa, ra), (sb, rb)] {
                // total = 2G (load), so the link weight G = total/2 < 2^31.
                let link = (total >> 1) as u32;
                if let (Some(bs), Some(gs), Some(as_)) =
                    (self.b.get(lo..hi), self.g.get(lo..hi), self.a.get_mut(lo..hi))
                {
                    P::branch_node(bs, gs, as_, e, g_src, link, r, recip, shift, total);
                }
            }
            if let Some(JunctionRt::Branch { s, .. }) = self.juncs.get_mut(j) {
                *s = P::neg(al).into();
            }
        }
    }

    /// The DAC drive code the next `step` of a rig port will return (it depends only on
    /// waves already in the lines, not on the pin voltage about to be read); 0 without a rig.
    pub fn rig_drive(&self) -> i16 {
        match self.drive {
            DriveRt::Rig { port } => {
                let b = self.b.get(port as usize).copied().unwrap_or(P::ZERO);
                P::to_code(P::sum(b, b), self.io_shift)
            }
            _ => 0,
        }
    }

    /// Run a block: `output[k] = step(input[k])` for the common length of both slices.
    pub fn process(&mut self, input: &[i16], output: &mut [i16]) {
        for (x, y) in input.iter().zip(output.iter_mut()) {
            *y = self.step(*x);
        }
    }

    /// Raw read-out of probe `k` after the last step, in wave LSBs: a + b (voltage) or
    /// a − b (current · Z0). 0 for a probe that does not exist.
    pub fn probe_raw(&self, k: usize) -> i32 {
        if k < self.n_probes {
            self.probe_out.get(k).copied().unwrap_or(0)
        } else {
            0
        }
    }

    /// True when the plant holds nothing that a later step could send out: every wave in
    /// every line and at every port, the rig port's latency history, and every state is
    /// exactly zero (loss sections' x[n−1] and y[n−1], allpass and Zc(s) section states,
    /// choke and series-branch states). The loss sections' quantization residues are not
    /// waves and may stay: with every wave zero a residue alone never makes one
    /// (`Profile::loss_section`).
    pub fn is_at_rest(&self) -> bool {
        let z = P::ZERO;
        let zero = |w: &[P::Wave], n: usize| w.iter().take(n).all(|w| *w == z);
        let waves = |w: &[P::Wave]| zero(w, w.len());
        let lines = zero(&self.mem, self.mem_used)
            && zero(&self.a, self.n_ports)
            && zero(&self.b, self.n_ports)
            && waves(&self.hist);
        let losses =
            self.losses.iter().take(self.n_losses).all(|l| l.x1 == z && waves(&l.y1) && l.ap_s == z && waves(&l.zc_s));
        let pairs = self.pairs.iter().take(usize::from(self.n_pairs)).all(|p| p.s == 0);
        let branches =
            self.juncs.iter().take(self.n_juncs).all(|j| !matches!(j, JunctionRt::Branch { s, .. } if *s != 0));
        lines && losses && pairs && branches
    }

    /// The waves (a, b) at one end of a line after the last step, raw wave LSBs (read-out
    /// for host views such as the lattice map; (0, 0) for a line that does not exist).
    pub fn line_end_waves(&self, line: usize, side_b: bool) -> (i32, i32) {
        if line >= self.n_lines {
            return (0, 0);
        }
        let p = self.port_of.get(crate::configure::end_index(line, side_b)).copied().unwrap_or(0) as usize;
        let a = self.a.get(p).copied().unwrap_or(P::ZERO).into();
        let b = self.b.get(p).copied().unwrap_or(P::ZERO).into();
        (a, b)
    }

    /// Number of configured probes.
    pub fn probe_count(&self) -> usize {
        self.n_probes
    }

    /// Volts per wave LSB.
    pub fn volts_per_lsb(&self) -> f32 {
        self.volts_per_code / (1u32 << self.io_shift.min(31)) as f32
    }

    /// Probe `k` in volts or amperes (host convenience; floating point, not for the loop).
    pub fn probe_value(&self, k: usize) -> f32 {
        let raw = self.probe_raw(k) as f32 * self.volts_per_lsb();
        match self.probes.get(k) {
            Some(p) if p.current => raw / (p.z_milliohm as f32 / 1000.0),
            _ => raw,
        }
    }

    /// One step in volts (host convenience): the input is rounded to the nearest code.
    pub fn step_volts(&mut self, volts: f32) -> f32 {
        let code = (volts / self.volts_per_code).clamp(i16::MIN as f32, i16::MAX as f32);
        let code = if code >= 0.0 { (code + 0.5) as i16 } else { (code - 0.5) as i16 };
        self.step(code) as f32 * self.volts_per_code
    }

    /// Probe `k`'s raw value for every sample of a block run with [`Self::process`]-like
    /// stepping: `probe_trace[n] = probe_raw(k)` after `step(input[n])`.
    pub fn process_with_probe(&mut self, input: &[i16], output: &mut [i16], k: usize, probe: &mut [i32]) {
        for ((x, y), p) in input.iter().zip(output.iter_mut()).zip(probe.iter_mut()) {
            *y = self.step(*x);
            *p = self.probe_raw(k);
        }
    }
}

impl<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize> Default
    for Solver<P, PORTS, JUNCS, MEM, LOSSES>
{
    fn default() -> Self {
        Self::new()
    }
}

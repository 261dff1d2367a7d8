//! (Frozen copy of `core/src/solver.rs` at c696084, see `mod.rs`; host read-outs trimmed.)
//!
//! The solver: state, the per-sample loop and read-out.
//!
//! Per sample, in this order (every loop bounded by the validated port and junction counts):
//! 1. every junction turns the waves arriving at its ports (b) into outgoing waves (a);
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

use super::network::{MAX_LOSS_SECTIONS, MAX_PROBES};
use super::profile::Profile;

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
    Rig {
        port: u16,
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
    pub sections: u8,
    pub g: [u32; MAX_LOSS_SECTIONS],
    pub gb: [i32; MAX_LOSS_SECTIONS],
    pub a: [u32; MAX_LOSS_SECTIONS],
    /// x[n−1] and y[n−1] of each section.
    pub x1: [W; MAX_LOSS_SECTIONS],
    pub y1: [W; MAX_LOSS_SECTIONS],
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum DriveRt {
    None,
    Source { port: u16 },
    Rig { port: u16 },
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
    pub(crate) cursor: [u32; PORTS],
    pub(crate) start: [u32; PORTS],
    pub(crate) end: [u32; PORTS],
    pub(crate) partner: [u16; PORTS],
    pub(crate) port_of: [u16; PORTS],
    pub(crate) a: [P::Wave; PORTS],
    pub(crate) b: [P::Wave; PORTS],
    pub(crate) mem: [P::Wave; MEM],
    pub(crate) juncs: [JunctionRt; JUNCS],
    pub(crate) elements: [ElementRt; PORTS],
    pub(crate) n_elements: usize,
    pub(crate) losses: [LossRt<P::Wave>; LOSSES],
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
            cursor: [0; PORTS],
            start: [0; PORTS],
            end: [0; PORTS],
            partner: [0; PORTS],
            port_of: [0; PORTS],
            a: [P::ZERO; PORTS],
            b: [P::ZERO; PORTS],
            mem: [P::ZERO; MEM],
            juncs: [JunctionRt::Unused; JUNCS],
            elements: [ElementRt { port: 0, mu: 0, negate: false }; PORTS],
            n_elements: 0,
            losses: [LossRt {
                port: 0,
                sections: 0,
                g: [0; MAX_LOSS_SECTIONS],
                gb: [0; MAX_LOSS_SECTIONS],
                a: [0; MAX_LOSS_SECTIONS],
                x1: [P::ZERO; MAX_LOSS_SECTIONS],
                y1: [P::ZERO; MAX_LOSS_SECTIONS],
            }; LOSSES],
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
        for l in self.losses.iter_mut() {
            l.x1 = [P::ZERO; MAX_LOSS_SECTIONS];
            l.y1 = [P::ZERO; MAX_LOSS_SECTIONS];
        }
        for (c, s) in self.cursor.iter_mut().zip(self.start.iter()) {
            *c = *s;
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
            self.hist_pos = (self.hist_pos + 1) & (HIST - 1);
        }

        self.scatter(e, rig_back);

        // Read-out of this sample.
        let n_probes = self.n_probes.min(MAX_PROBES);
        for (out, pr) in self.probe_out.iter_mut().zip(self.probes.iter()).take(n_probes) {
            let i = pr.port as usize;
            let (a, b) = (self.a.get(i).copied().unwrap_or(P::ZERO), self.b.get(i).copied().unwrap_or(P::ZERO));
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

    /// Junction pass: b → a at every junction.
    #[inline(always)]
    fn scatter(&mut self, e: P::Wave, rig_back: P::Wave) {
        let n = self.n_juncs.min(JUNCS);
        for j in self.juncs.iter().take(n) {
            match *j {
                JunctionRt::Node { first, count, mode, g_src, recip, shift, total, .. } => {
                    let lo = first as usize;
                    let hi = lo + count as usize;
                    let (Some(bs), Some(gs), Some(as_)) =
                        (self.b.get(lo..hi), self.g.get(lo..hi), self.a.get_mut(lo..hi))
                    else {
                        continue;
                    };
                    match mode {
                        Mode::Scatter => {
                            // v = (2·Σ G_k·b_k + E·G_src) / G_total;  a_k = trunc(v − b_k)
                            P::node_scatter(bs, gs, as_, e, g_src, recip, shift, total);
                        }
                        Mode::Short => {
                            for (ak, bk) in as_.iter_mut().zip(bs.iter()) {
                                *ak = P::neg(*bk);
                            }
                        }
                        Mode::Broken => as_.copy_from_slice(bs),
                    }
                }
                JunctionRt::Series { p, q, c } => {
                    let b1 = self.b.get(p as usize).copied().unwrap_or(P::ZERO);
                    let b2 = self.b.get(q as usize).copied().unwrap_or(P::ZERO);
                    let (a1, a2) = P::series(b1, b2, c);
                    if let Some(x) = self.a.get_mut(p as usize) {
                        *x = a1;
                    }
                    if let Some(x) = self.a.get_mut(q as usize) {
                        *x = a2;
                    }
                }
                JunctionRt::Rig { port } => {
                    if let Some(x) = self.a.get_mut(port as usize) {
                        *x = P::sub(e, rig_back);
                    }
                }
                JunctionRt::Unused => {}
            }
        }
    }

    /// Line pass: write each a into the ring towards the partner end, advance, read next b.
    #[inline(always)]
    fn propagate(&mut self) {
        let n = self.n_ports.min(PORTS);
        let rings = self
            .cursor
            .iter_mut()
            .zip(self.start.iter())
            .zip(self.end.iter())
            .zip(self.partner.iter())
            .zip(self.b.iter_mut())
            .take(n);
        for ((((c, s), e), p), b) in rings {
            let val = self.a.get(*p as usize).copied().unwrap_or(P::ZERO);
            if let Some(m) = self.mem.get_mut(*c as usize) {
                *m = val;
            }
            let next = c.wrapping_add(1);
            *c = if next == *e { *s } else { next };
            *b = self.mem.get(*c as usize).copied().unwrap_or(P::ZERO);
        }
        // Lossy lines: the wave arriving at each end passes the line's loss filter (an LTI
        // filter commutes with the delay, so filtering at the arrival is the same line).
        let n_loss = self.n_losses.min(LOSSES);
        for l in self.losses.iter_mut().take(n_loss) {
            let Some(b) = self.b.get_mut(l.port as usize) else {
                continue;
            };
            let mut x = *b;
            let k = (l.sections as usize).min(MAX_LOSS_SECTIONS);
            let sections = l.x1.iter_mut().zip(l.y1.iter_mut()).zip(l.g.iter().zip(l.gb.iter()).zip(l.a.iter()));
            for ((x1, y1), ((g, gb), a)) in sections.take(k) {
                let y = P::loss_section(x, *x1, *y1, *g, *gb, *a);
                *x1 = x;
                *y1 = y;
                x = y;
            }
            *b = x;
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

    /// Number of configured probes.
    pub fn probe_count(&self) -> usize {
        self.n_probes
    }
}

impl<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize> Default
    for Solver<P, PORTS, JUNCS, MEM, LOSSES>
{
    fn default() -> Self {
        Self::new()
    }
}

//! For code that `tidewire compile --rust` emits: a plant-specialised solver.
//!
//! The specialised form is the generic [`Solver`]'s arithmetic with the data-driven parts
//! removed: it calls the same [`crate::Profile`] operations, in the same order, on the same
//! integer coefficients, so it is bit-exact with the generic solver. This module is the one
//! place both meet:
//!
//! * [`Plan`] reads out what a loaded generic solver runs (port weights and delays, junction,
//!   element, loss-filter, probe and drive records), so the emitter writes the coefficients the
//!   core itself computed and validated (nothing is recomputed on the host);
//! * [`NodeCoef`] and [`node_coefficients`] give a specialised solver the run-time part of a
//!   switchable node (its shunt and break) with the same checks as [`Solver::set_shunt`].
//!
//! Not meant to be called by hand; its items are stable as long as the emitter and the core
//! come from the same release (the generated source names the core's image format version).

use crate::configure::{apply_shunt, passive_node, TOP};
use crate::error::ConfigError;
use crate::network::{Shunt, MAX_LOSS_SECTIONS};
use crate::profile::Profile;
use crate::solver::{DriveRt, JunctionRt, Mode, Solver};

/// One port (line end or element port) as loaded.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PortPlan {
    /// Integer weight g of the port.
    pub weight: u32,
    /// Delay of the ring this port reads from, samples (>= 1; 1 for an element's state).
    pub delay: u32,
    /// The port whose outgoing wave travels towards this one (itself for an element).
    pub partner: u16,
    /// True for a reactive element's port (its ring feeds itself through the adaptor).
    pub element: bool,
}

/// One junction as loaded.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum JunctionPlan {
    /// A parallel node over ports `first..first + count`.
    Node {
        /// First port.
        first: u16,
        /// Port count.
        count: u16,
        /// Source weight (0 without a source here).
        g_src: u32,
        /// Σ port weights (without the source).
        port_sum: u64,
        /// Smallest port weight.
        port_min: u64,
        /// Division coefficients and mode as loaded.
        coef: NodeCoef,
    },
    /// Series resistor between ports p and q.
    Series {
        /// First port.
        p: u16,
        /// Second port.
        q: u16,
        /// c = 2Z/(2Z + R) in `SERIES_FRAC` bits.
        c: u32,
    },
    /// Series inductor between ports p and q.
    SeriesInductor {
        /// First port.
        p: u16,
        /// Second port.
        q: u16,
        /// c in `CHOKE_FRAC` bits.
        c: u32,
        /// rho in `CHOKE_FRAC` bits.
        rho: u32,
    },
    /// Rig port on `port`.
    Rig {
        /// The port.
        port: u16,
    },
    /// A series branch between nodes `a` and `b` (whose [`JunctionPlan::Node`] records then
    /// hold total = 2G, the weight with the link port; see [`crate::Junction::Branch`]).
    Branch {
        /// The node the current leaves.
        a: u16,
        /// The node the current enters.
        b: u16,
        /// Port numbers of the series adaptor: links a, b and the inductor.
        na: u32,
        /// See `na`.
        nb: u32,
        /// See `na`.
        nl: u32,
        /// Σ of the port numbers with the resistor's.
        n: u32,
        /// Reciprocal of `n`.
        recip: u32,
        /// Shift of the reciprocal.
        shift: u32,
    },
}

/// A reactive element's adaptor, as loaded.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ElementPlan {
    /// Its port.
    pub port: u16,
    /// μ in `SERIES_FRAC` bits.
    pub mu: u32,
    /// Inductor (negated reflection).
    pub negate: bool,
}

/// One line end's loss filter, as loaded.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LossPlan {
    /// The port whose arriving wave it filters.
    pub port: u16,
    /// Sections in use.
    pub sections: u8,
    /// g per section (`LOSS_FRAC` bits).
    pub g: [u32; MAX_LOSS_SECTIONS],
    /// g·b per section.
    pub gb: [i32; MAX_LOSS_SECTIONS],
    /// Pole a per section.
    pub a: [u32; MAX_LOSS_SECTIONS],
    /// The fractional-delay allpass after the sections, (a, c) in `LOSS_FRAC` bits
    /// (`Profile::allpass`), if the line has one.
    pub allpass: Option<(i32, u32)>,
    /// The Zc(s) network at this end, if the line has one.
    pub zc: Option<ZcPlan>,
}

/// One line end's Zc(s) network, as loaded (`Profile::zc_pre`, `Profile::zc_post`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ZcPlan {
    /// Sections in use.
    pub sections: u8,
    /// k_i (`LOSS_FRAC` bits).
    pub k: [u32; crate::network::MAX_ZC_SECTIONS],
    /// 2k_i − 1 (`LOSS_FRAC` bits).
    pub pole: [i32; crate::network::MAX_ZC_SECTIONS],
    /// ρ_i (`LOSS_FRAC` bits).
    pub rho: [u32; crate::network::MAX_ZC_SECTIONS],
}

/// A probe, as loaded.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ProbePlan {
    /// a − b (current) instead of a + b (voltage).
    pub current: bool,
    /// The port it reads.
    pub port: u16,
}

/// The drive, as loaded.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DrivePlan {
    /// No drive.
    None,
    /// Test source at the node whose first port is `port`.
    Source {
        /// First port of the source's node.
        port: u16,
    },
    /// Rig port.
    Rig {
        /// The rig port's port.
        port: u16,
        /// Latency, samples.
        latency: u16,
    },
}

/// The run-time part of a node: its division coefficients and its mode.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct NodeCoef {
    /// Reciprocal of `total` (see [`crate::profile::reciprocal`]).
    pub recip: u32,
    /// Its shift.
    pub shift: u32,
    /// Total weight the node divides by.
    pub total: u64,
    /// Exact short (a = −b).
    pub short: bool,
    /// Split into open ends (a = b).
    pub broken: bool,
    /// A lone open line end (one port, no source, no shunt): reflects a = b exactly
    /// (`configure::mode::lone_open`), whether broken or not.
    pub open: bool,
}

impl NodeCoef {
    /// True when the node scatters through its node voltage (neither shorted, broken nor a
    /// lone open end).
    #[inline(always)]
    pub const fn scatters(&self) -> bool {
        !self.short && !self.broken && !self.open
    }
    /// True when every port reflects a = b (broken, or a lone open end).
    #[inline(always)]
    pub const fn reflects(&self) -> bool {
        self.broken || self.open
    }
}

/// The node's coefficients with `shunt` in place (keeping its break), checked exactly as
/// [`Solver::set_shunt`] checks them: the same reciprocal, the same passivity condition.
/// `exponent` is the weight exponent c ([`Solver::weight_exponent`]).
pub fn node_coefficients<P: Profile>(
    junction: u16,
    g_src: u32,
    port_sum: u64,
    port_min: u64,
    exponent: u32,
    old: NodeCoef,
    shunt: Shunt,
) -> Result<NodeCoef, ConfigError> {
    let refused = ConfigError::CoefficientOutOfRange { junction };
    let g_ports = port_sum.checked_add(u64::from(g_src)).ok_or(refused)?;
    let mut rt = JunctionRt::Node {
        first: 0,
        // Only whether the node has one port matters here (a lone open end,
        // `configure::mode::lone_open`): weights are >= 1, so one port is port_min == port_sum.
        count: if port_min == port_sum { 1 } else { 2 },
        mode: Mode::Scatter,
        short: old.short,
        broken: old.broken,
        g_src,
        g_ports,
        recip: old.recip,
        shift: old.shift,
        total: old.total,
    };
    apply_shunt::<P>(&mut rt, shunt, exponent.min(TOP)).map_err(|_| refused)?;
    if !passive_node::<P>(&rt, port_sum, port_min) {
        return Err(refused);
    }
    match rt {
        JunctionRt::Node { recip, shift, total, short, broken, mode, .. } => {
            Ok(NodeCoef { recip, shift, total, short, broken, open: mode == Mode::Broken && !broken })
        }
        _ => Err(refused),
    }
}

/// What a loaded generic solver runs, read out for the emitter.
pub struct Plan<'s, P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize> {
    s: &'s Solver<P, PORTS, JUNCS, MEM, LOSSES>,
}

impl<'s, P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize>
    Plan<'s, P, PORTS, JUNCS, MEM, LOSSES>
{
    /// The plan of `solver` (empty if it has no network loaded).
    pub fn of(solver: &'s Solver<P, PORTS, JUNCS, MEM, LOSSES>) -> Self {
        Plan { s: solver }
    }

    /// Every port in order.
    pub fn ports(&self) -> impl Iterator<Item = PortPlan> + '_ {
        let is_element = |p: usize| self.elements().any(|e| e.port as usize == p);
        self.s.rings.iter().zip(self.s.g.iter()).take(self.s.n_ports).enumerate().map(move |(p, (r, g))| PortPlan {
            weight: *g,
            delay: r.end.saturating_sub(r.start),
            partner: r.partner as u16, // ports < 2^16 (shape check)
            element: is_element(p),
        })
    }

    /// Every junction in order.
    pub fn junctions(&self) -> impl Iterator<Item = JunctionPlan> + '_ {
        self.s.juncs.iter().take(self.s.n_juncs).map(|j| match *j {
            JunctionRt::Node { first, count, g_src, recip, shift, total, short, broken, mode, .. } => {
                let ports = self.s.g.iter().skip(first as usize).take(count as usize);
                JunctionPlan::Node {
                    first,
                    count,
                    g_src,
                    port_sum: ports.clone().fold(0u64, |s, g| s.saturating_add(u64::from(*g))),
                    port_min: ports.map(|g| u64::from(*g)).min().unwrap_or(0),
                    coef: NodeCoef { recip, shift, total, short, broken, open: mode == Mode::Broken && !broken },
                }
            }
            JunctionRt::Series { p, q, c } => JunctionPlan::Series { p, q, c },
            JunctionRt::SeriesL { p, q, c, rho, .. } => JunctionPlan::SeriesInductor { p, q, c, rho },
            JunctionRt::Rig { port } => JunctionPlan::Rig { port },
            JunctionRt::Branch { a, b, na, nb, nl, n, recip, shift, .. } => {
                JunctionPlan::Branch { a, b, na, nb, nl, n, recip, shift }
            }
            // Not reachable after a successful load (every record is written).
            JunctionRt::Unused => JunctionPlan::Rig { port: u16::MAX },
        })
    }

    /// Every reactive element in order.
    pub fn elements(&self) -> impl Iterator<Item = ElementPlan> + '_ {
        self.s.elements.iter().take(self.s.n_elements).map(|e| ElementPlan { port: e.port, mu: e.mu, negate: e.negate })
    }

    /// Every loss filter in network order (2·loss + side; the solver runs them grouped by
    /// kind, which gives the same integers: each end filters only its own port).
    pub fn losses(&self) -> impl Iterator<Item = LossPlan> + '_ {
        let loaded = || self.s.losses.iter().take(self.s.n_losses);
        let by_end = (0..self.s.n_losses).filter_map(move |e| loaded().find(|l| usize::from(l.end) == e));
        by_end.map(|l| LossPlan {
            port: l.port,
            sections: l.sections,
            g: l.g,
            gb: l.gb,
            a: l.a,
            allpass: l.ap.then_some((l.ap_a, l.ap_c)),
            zc: (l.zc_n != 0).then_some(ZcPlan { sections: l.zc_n, k: l.zc_k, pole: l.zc_pole, rho: l.zc_rho }),
        })
    }

    /// Every probe in order.
    pub fn probes(&self) -> impl Iterator<Item = ProbePlan> + '_ {
        self.s.probes.iter().take(self.s.n_probes).map(|p| ProbePlan { current: p.current, port: p.port })
    }

    /// The drive.
    pub fn drive(&self) -> DrivePlan {
        match self.s.drive {
            DriveRt::None => DrivePlan::None,
            DriveRt::Source { port } => DrivePlan::Source { port },
            DriveRt::Rig { port } => DrivePlan::Rig { port, latency: self.s.rig_latency as u16 },
        }
    }

    /// Waves carry `io_shift` more fractional bits than I/O codes.
    pub fn io_shift(&self) -> u32 {
        self.s.io_shift
    }

    /// The weight exponent c.
    pub fn exponent(&self) -> u32 {
        self.s.exponent
    }
}

//! Building a solver from a [`Network`]: validation, port layout, delay rings and the integer
//! coefficients. Runs once at load and again (partly) on `set_shunt`; may divide, never on the
//! per-sample path.
//!
//! Weights: every line gets one integer conductance g = floor(2^c / Z0[mΩ]) shared by both of
//! its ends, with one exponent c for the whole network chosen as large as the profile's
//! per-node weight budget allows (`Profile::WEIGHT_BITS`). One weight per line, identical at
//! both ends, is what makes the fixed-point energy argument hold across the network:
//! E = Σ_lines g·(a² + b²) never grows at a junction whose node voltage is quantized toward
//! zero (see the crate documentation).

mod branch;
mod loss;
mod mode;
mod passive;
mod schedule;
mod shape;
mod weights;
mod zc;

use crate::error::{BuildError, ConfigError, Table};
use crate::network::{ElementKind, Junction, Network, ProbeKind, Shunt, Side};
use crate::profile::{reciprocal, Profile};
use crate::solver::{loss_group, DriveRt, ElementRt, JunctionRt, Mode, ProbeRt, Solver, LOSS_GROUPS, NODE_GROUPS};
use loss::loss_record;
pub(crate) use mode::{lone_open, mode_of};
pub(crate) use passive::node_ok as passive_node;
use shape::{cap, ports_at, Shape};
use weights::weight;
pub(crate) use weights::TOP;
pub use zc::{passivity_margin as zc_passivity_margin, ZcMargin, MAX_MARGIN_EVALUATIONS};

/// `slot[i] = v` for an index the checks above keep in range; out of range (unreachable after
/// validation) it writes nothing instead of panicking, so `load` has no panic path.
fn set<T>(slot: &mut [T], i: usize, v: T) {
    if let Some(x) = slot.get_mut(i) {
        *x = v;
    }
}

/// Index of a line end in `port_of`: 2·line + side (saturating; lines < 2^16).
pub(crate) fn end_index(line: usize, side_b: bool) -> usize {
    line.saturating_mul(2).saturating_add(usize::from(side_b))
}

/// `table[i]` as an index (0 if out of range, unreachable after validation; no panic path).
fn at(table: &[u16], i: usize) -> usize {
    table.get(i).copied().unwrap_or(0) as usize
}

/// One loss section's coefficients from its pole and zero (Q30), in the profile's
/// `LOSS_FRAC` bits, as `(g, gb, a)`: the one quantization, [`crate::quantize::loss_section`]
/// (DC-exact: g − gb = one − a). `None` for a section that is not an attenuating shelf
/// (needs −1 < zero < pole < 1, and after quantization a > 0, g > 0, gb >= −g).
pub fn quantize_loss_section<P: Profile>(pole: u32, zero: i32) -> Option<(u32, i32, u32)> {
    let (a, g, gb) = crate::quantize::loss_section(i64::from(pole), i64::from(zero), P::LOSS_FRAC)?;
    // Still a section that only attenuates: 0 < a, effective zero at or below the pole
    // (gb <= a, see `quantize::loss_section`), |zero| <= 1.
    if a <= 0 || g <= 0 || gb > a || gb < g.checked_neg()? || g >= 1 << 31 {
        return None;
    }
    Some((u32::try_from(g).ok()?, i32::try_from(gb).ok()?, u32::try_from(a).ok()?))
}

/// A fractional-delay allpass's lattice coefficients (a, c) from Q30, in the profile's
/// `LOSS_FRAC` bits, truncated toward zero: the one quantization,
/// [`crate::quantize::allpass`]. Passivity and range are checked by `load`.
pub fn quantize_allpass<P: Profile>(a: i32, c: u32) -> Option<(i32, u32)> {
    crate::quantize::allpass(a, c, P::LOSS_FRAC)
}

/// Check everything `load` checks that does not depend on a solver's capacities: the shape,
/// the weight unit and the passivity of every quantized junction, element and loss section.
/// The host compiler calls this so a plant the core would refuse is refused with a located
/// error. Returns the weight exponent c.
pub fn check<P: Profile>(net: &Network<'_>) -> Result<u32, BuildError> {
    let shape = shape::check::<P>(net, usize::MAX, usize::MAX, usize::MAX)?;
    let k = weights::shift::<P>(net, &shape)?;
    let c = TOP.saturating_sub(k); // k <= TOP
    for l in net.lines {
        line_weight(l.z_milliohm, k, l.a)?;
    }
    let mut first = 0usize;
    for (j, junc) in net.junctions.iter().enumerate() {
        let count = ports_at(net, j);
        let (sum, min) = port_weights(net, j, k);
        let rt = junction_record::<P>(net, &shape, j, *junc, first, count, sum, k)?;
        let ok = match rt {
            JunctionRt::Node { .. } => passive::node_ok::<P>(&rt, sum, min),
            JunctionRt::Branch { a, b, .. } => {
                let node = |n: u16| branch::node_record::<P>(net, &shape, j, n, k);
                passive::branch_ok::<P>(&rt, &node(a)?, &node(b)?)
            }
            _ => passive::two_port_ok::<P>(&rt),
        };
        if !ok {
            return Err(BuildError::NotPassive { junction: j as u16 });
        }
        first = first.saturating_add(count); // <= ports <= 2^16
    }
    for (n, e) in net.elements.iter().enumerate() {
        if !passive::element_ok::<P>(element_mu::<P>(e.port_milliohm, e.series_milliohm)) {
            return Err(BuildError::BadElement { element: n as u16 });
        }
    }
    for (n, ll) in net.losses.iter().enumerate() {
        loss_record::<P>(ll, 0, n)?;
        zc::check_line::<P>(net, ll, shape.rig.map(|r| r.2))?;
    }
    Ok(c)
}

/// A line's weight as stored (u32), or an error if it does not fit (a line whose ends meet
/// no scattering node, so the node budget did not bound it).
fn line_weight(z_milliohm: u32, k: u32, junction: u16) -> Result<u32, BuildError> {
    // A weight of 0 (an impedance above 2^(TOP − k) mΩ) would leave the line out of every
    // energy sum, so it is refused even where only series junctions touch the line.
    u32::try_from(weight(u64::from(z_milliohm), k))
        .ok()
        .filter(|g| *g >= 1)
        .ok_or(BuildError::CoefficientOutOfRange { junction })
}

/// Σ and min of the port weights (line ends, element ports; no source) of junction `j`.
fn port_weights(net: &Network<'_>, j: usize, k: u32) -> (u64, u64) {
    let ends =
        net.lines.iter().flat_map(|l| core::iter::repeat_n(weight(u64::from(l.z_milliohm), k), shape::ends_of(l, j)));
    let elems =
        net.elements.iter().filter(|e| e.junction as usize == j).map(|e| weight(weights::element_milliohm(e), k));
    ends.chain(elems).fold((0u64, u64::MAX), |(s, m), g| (s.saturating_add(g), m.min(g)))
}

/// μ = R_p/(R_p + R_s) in `SERIES_FRAC` bits, rounded down (<= 1).
fn element_mu<P: Profile>(port_milliohm: u32, series_milliohm: u32) -> u32 {
    let rp = u128::from(port_milliohm);
    // rp, series < 2^32: the shift and the sum are exact in u128.
    let mu = (rp << P::SERIES_FRAC).checked_div(rp.saturating_add(u128::from(series_milliohm))).unwrap_or(0);
    u32::try_from(mu).unwrap_or(0)
}

/// The run-time record of junction `j` (whose ports start at `first`), with the sum of its
/// port weights `port_sum` at shift k.
#[allow(clippy::too_many_arguments)]
fn junction_record<P: Profile>(
    net: &Network<'_>,
    shape: &Shape,
    j: usize,
    junc: Junction,
    first: usize,
    count: usize,
    port_sum: u64,
    k: u32,
) -> Result<JunctionRt, BuildError> {
    let junction = j as u16; // j < 2^16 (shape check)
    let out_of_range = BuildError::CoefficientOutOfRange { junction };
    let (first16, count16) =
        (u16::try_from(first).map_err(|_| out_of_range)?, u16::try_from(count).map_err(|_| out_of_range)?);
    if shape.rig.is_some_and(|r| r.0 == j) {
        return Ok(JunctionRt::Rig { port: first16 });
    }
    let z = u128::from(shape::first_z(net, j));
    Ok(match junc {
        Junction::Node { shunt } => {
            let g_src = match shape.src {
                Some((sj, mohm)) if sj == j => u32::try_from(weight(u64::from(mohm), k)).map_err(|_| out_of_range)?,
                _ => 0,
            };
            let mut rt = JunctionRt::Node {
                first: first16,
                count: count16,
                mode: Mode::Scatter,
                short: false,
                broken: false,
                g_src,
                g_ports: port_sum.checked_add(u64::from(g_src)).ok_or(out_of_range)?,
                recip: 0,
                shift: 0,
                total: 0,
            };
            apply_shunt::<P>(&mut rt, shunt, TOP.saturating_sub(k)).map_err(|_| out_of_range)?;
            if branch::branch_of(net, j).is_some() {
                branch::link_node::<P>(&mut rt).ok_or(out_of_range)?;
            }
            rt
        }
        Junction::Branch { a, b, .. } => {
            let (_, _, na, nb, nl, n) = branch::numbers::<P>(net, shape, j, k).ok_or(out_of_range)?;
            let (recip, shift) = reciprocal(u64::from(n), P::RECIP_BITS, false).ok_or(out_of_range)?;
            JunctionRt::Branch { a, b, na, nb, nl, n, recip, shift, s: 0 }
        }
        Junction::Series { milliohm } => {
            // Both ends have impedance z (shape check); c = 2Z/(2Z + R) <= 1, rounded down.
            // z, milliohm < 2^32: every term below is exact in u128.
            let two_z = z.saturating_mul(2);
            let c = (two_z << P::SERIES_FRAC).checked_div(two_z.saturating_add(u128::from(milliohm))).unwrap_or(0);
            JunctionRt::Series {
                p: first16,
                q: first16.wrapping_add(1),
                c: u32::try_from(c).map_err(|_| out_of_range)?,
            }
        }
        Junction::SeriesInductor { port_milliohm, milliohm } => {
            // c = 2Z/ΣR and rho = R_L/ΣR, both rounded down, so c + rho <= 1: the quantized
            // adaptor is a passive one (lossless for c + rho = 1, a slightly different R_L,
            // plus the winding resistance).
            // z, port_milliohm, milliohm < 2^32: every term below is exact in u128.
            let two_z = z.saturating_mul(2);
            let sum = two_z.saturating_add(u128::from(port_milliohm)).saturating_add(u128::from(milliohm));
            let c = (two_z << P::CHOKE_FRAC).checked_div(sum).unwrap_or(0);
            // Without winding resistance the adaptor must stay lossless (c + rho = 1 exactly),
            // or the rounding would act as a resistor at DC.
            let rho = if milliohm == 0 {
                (1u128 << P::CHOKE_FRAC).saturating_sub(c)
            } else {
                (u128::from(port_milliohm) << P::CHOKE_FRAC).checked_div(sum).unwrap_or(0)
            };
            JunctionRt::SeriesL {
                p: first16,
                q: first16.wrapping_add(1),
                c: u32::try_from(c).map_err(|_| out_of_range)?,
                rho: u32::try_from(rho).map_err(|_| out_of_range)?,
            }
        }
    })
}

impl<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize>
    Solver<P, PORTS, JUNCS, MEM, LOSSES>
{
    /// Validate `net`, compute every coefficient and reset the state. On error the solver is
    /// left empty (it steps as a network without drive).
    ///
    /// Phases: the shape against the capacities (nothing written yet), the weight unit, the
    /// port layout, loss filters, delay rings, weights, junction records and their run tables
    /// (`configure/schedule.rs`), probes and drive,
    /// and last a check that every quantized junction, element and loss section is passive.
    pub fn load(&mut self, net: &Network<'_>) -> Result<(), BuildError> {
        let r = self.load_inner(net);
        if r.is_err() {
            self.clear();
        }
        r
    }

    fn load_inner(&mut self, net: &Network<'_>) -> Result<(), BuildError> {
        let shape = shape::check::<P>(net, PORTS, JUNCS, LOSSES)?;
        let k = weights::shift::<P>(net, &shape)?;
        self.exponent = TOP.saturating_sub(k); // k <= TOP
        self.layout_ports(net);
        self.build_losses(net, shape.rig.map(|r| r.2))?;
        self.build_rings(net, &shape)?;
        self.build_weights(net, k)?;
        self.build_junctions(net, &shape, k)?;
        self.schedule_nodes();
        self.schedule_pairs()?;
        self.branches = net.junctions.iter().any(|j| matches!(j, Junction::Branch { .. }));
        self.build_probes(net);
        self.build_drive(net, &shape);
        self.check_passive()?;
        self.io_shift = u32::from(net.io_shift);
        self.volts_per_code = net.volts_per_code;
        self.reset();
        Ok(())
    }

    /// Ports grouped by junction, in junction order: each junction's line ends, then its
    /// element ports. `port_of[2·line + side]` is the port of a line end.
    fn layout_ports(&mut self, net: &Network<'_>) {
        let mut p = 0usize;
        for j in 0..net.junctions.len() {
            for (i, l) in net.lines.iter().enumerate() {
                if l.a as usize == j {
                    set(&mut self.port_of, end_index(i, false), p as u16);
                    p = p.saturating_add(1); // <= ports <= 2^16
                }
                if l.b as usize == j {
                    set(&mut self.port_of, end_index(i, true), p as u16);
                    p = p.saturating_add(1); // <= ports <= 2^16
                }
            }
            for (k, e) in net.elements.iter().enumerate() {
                if e.junction as usize == j {
                    let mu = element_mu::<P>(e.port_milliohm, e.series_milliohm);
                    let negate = matches!(e.kind, ElementKind::Inductor);
                    set(&mut self.elements, k, ElementRt { port: p as u16, mu, negate });
                    p = p.saturating_add(1); // <= ports <= 2^16
                }
            }
        }
        self.n_elements = net.elements.len();
        self.n_ports = p;
        self.n_lines = net.lines.len();
    }

    /// Rings: the ring a port reads from carries the wave towards it. Each reactance keeps its
    /// state in a ring of one sample that feeds itself. Every end is formed with checked
    /// arithmetic (a 32-bit `usize` cannot wrap) and checked against `MEM`.
    fn build_rings(&mut self, net: &Network<'_>, shape: &Shape) -> Result<(), BuildError> {
        let mut mem = 0usize;
        let place = |s: &mut Self, port: usize, d: u32, mem: &mut usize| -> Result<(), BuildError> {
            let end = usize::try_from(d).ok().and_then(|d| mem.checked_add(d)).unwrap_or(usize::MAX);
            cap(Table::DelayStorage, end, MEM.min(u32::MAX as usize))?;
            if let Some(r) = s.rings.get_mut(port) {
                r.start = *mem as u32;
                r.end = end as u32;
            }
            *mem = end;
            Ok(())
        };
        for (i, l) in net.lines.iter().enumerate() {
            let (pa, pb) = (at(&self.port_of, end_index(i, false)), at(&self.port_of, end_index(i, true)));
            if let Some(r) = self.rings.get_mut(pa) {
                r.partner = pb as u32;
            }
            if let Some(r) = self.rings.get_mut(pb) {
                r.partner = pa as u32;
            }
            let (mut d_into_a, mut d_into_b) = (l.delay, l.delay);
            if let Some((rj, lat, rl)) = shape.rig {
                if rl == i {
                    // The latency comes out of the direction towards the rig port only, so
                    // every wave inside the plant keeps its physical timing relative to the
                    // pin's ADC samples; the early return is what the DAC latency delays.
                    // delay > latency (shape check), so d_in >= 1.
                    let d_in = l.delay.saturating_sub(u32::from(lat)).max(1);
                    if l.a as usize == rj {
                        d_into_a = d_in;
                    } else {
                        d_into_b = d_in;
                    }
                }
            }
            place(self, pa, d_into_a, &mut mem)?;
            place(self, pb, d_into_b, &mut mem)?;
        }
        for n in 0..self.n_elements.min(PORTS) {
            let port = self.elements.get(n).map_or(0, |e| e.port as usize);
            if let Some(r) = self.rings.get_mut(port) {
                r.partner = port as u32;
            }
            place(self, port, 1, &mut mem)?;
        }
        self.mem_used = mem;
        Ok(())
    }

    /// Port weights at shift k: a line's weight at both of its ends, element ports their own.
    fn build_weights(&mut self, net: &Network<'_>, k: u32) -> Result<(), BuildError> {
        for (i, l) in net.lines.iter().enumerate() {
            let g = line_weight(l.z_milliohm, k, l.a)?;
            set(&mut self.g, at(&self.port_of, end_index(i, false)), g);
            set(&mut self.g, at(&self.port_of, end_index(i, true)), g);
        }
        for (n, e) in net.elements.iter().enumerate() {
            let g = weight(weights::element_milliohm(e), k);
            let g = u32::try_from(g).map_err(|_| BuildError::BadElement { element: n as u16 })?;
            let port = self.elements.get(n).map_or(0, |el| el.port as usize);
            set(&mut self.g, port, g);
        }
        Ok(())
    }

    /// Junction run-time records.
    fn build_junctions(&mut self, net: &Network<'_>, shape: &Shape, k: u32) -> Result<(), BuildError> {
        let mut first = 0usize;
        for (j, junc) in net.junctions.iter().enumerate() {
            let count = ports_at(net, j);
            let sum = self.port_weight_sum(first, count);
            let rt = junction_record::<P>(net, shape, j, *junc, first, count, sum, k)?;
            set(&mut self.juncs, j, rt);
            first = first.saturating_add(count); // <= ports <= 2^16
        }
        self.n_juncs = net.junctions.len();
        Ok(())
    }

    /// Σ of the stored weights of ports first..first + count (saturating; checked later).
    fn port_weight_sum(&self, first: usize, count: usize) -> u64 {
        self.g.iter().skip(first).take(count).fold(0u64, |s, g| s.saturating_add(u64::from(*g)))
    }

    fn build_probes(&mut self, net: &Network<'_>) {
        for (k, pr) in net.probes.iter().enumerate() {
            let z_milliohm = net.lines.get(pr.line as usize).map_or(1, |l| l.z_milliohm);
            let port = at(&self.port_of, end_index(pr.line as usize, pr.side == Side::B)) as u16;
            set(&mut self.probes, k, ProbeRt { current: pr.kind == ProbeKind::Current, port, z_milliohm });
        }
        self.n_probes = net.probes.len();
    }

    fn build_drive(&mut self, net: &Network<'_>, shape: &Shape) {
        let port_at = |j: usize| (0..j).map(|jj| ports_at(net, jj)).sum::<usize>() as u16;
        self.rig_latency = 0;
        self.drive = match (shape.src, shape.rig) {
            (Some((j, _)), _) => DriveRt::Source { port: port_at(j) },
            (None, Some((j, lat, _))) => {
                self.rig_latency = lat as usize;
                DriveRt::Rig { port: port_at(j) }
            }
            _ => DriveRt::None,
        };
    }

    /// The last phase: every record as built is passive (see the `passive` module), checked
    /// from its integer coefficients.
    fn check_passive(&self) -> Result<(), BuildError> {
        for (j, rt) in self.juncs.iter().enumerate().take(self.n_juncs) {
            let ok = match *rt {
                JunctionRt::Node { first, count, .. } => {
                    let ports = self.g.iter().skip(first as usize).take(count as usize);
                    let in_range = (first as usize).saturating_add(count as usize) <= self.n_ports;
                    let min = ports.clone().map(|g| u64::from(*g)).min().unwrap_or(0);
                    in_range && passive::node_ok::<P>(rt, self.port_weight_sum(first as usize, count as usize), min)
                }
                JunctionRt::Branch { a, b, .. } => {
                    let node = |n: u16| self.juncs.get(n as usize).copied().unwrap_or(JunctionRt::Unused);
                    passive::branch_ok::<P>(rt, &node(a), &node(b))
                }
                _ => passive::two_port_ok::<P>(rt),
            };
            if !ok {
                return Err(BuildError::NotPassive { junction: j as u16 });
            }
        }
        for (n, el) in self.elements.iter().enumerate().take(self.n_elements) {
            if !passive::element_ok::<P>(el.mu) {
                return Err(BuildError::BadElement { element: n as u16 });
            }
        }
        if let Some(bad) = self.losses.iter().take(self.n_losses).find(|l| !passive::loss_ok::<P>(l)) {
            return Err(BuildError::BadLoss { loss: bad.end / 2 });
        }
        if let Some(bad) = self.losses.iter().take(self.n_losses).find(|l| !zc::zc_ok::<P>(l)) {
            return Err(BuildError::BadZc { loss: bad.end / 2 });
        }
        // The group runs read the section count and allpass flag from their group, not the
        // record: every record must sit in its own group, and the groups must cover exactly
        // the loaded filters.
        let pairs = self.loss_bounds.iter().zip(self.loss_bounds.iter().skip(1));
        let groups_ok = pairs.enumerate().all(|(g, (&lo, &hi))| {
            lo <= hi
                && self
                    .losses
                    .get(lo as usize..hi as usize)
                    .is_some_and(|run| run.iter().all(|l| loss_group(l.sections, l.ap) == g))
        });
        if !groups_ok || self.loss_bounds.last().map(|&n| n as usize) != Some(self.n_losses) {
            let bad = self.losses.first().map_or(0, |l| l.end / 2);
            return Err(BuildError::BadLoss { loss: bad });
        }
        Ok(())
    }

    /// Forget the network in place (no stack temporary of the solver's size, which a
    /// Cortex-M0 could not afford): the solver then steps as a network without drive.
    fn clear(&mut self) {
        self.n_ports = 0;
        self.n_lines = 0;
        self.n_juncs = 0;
        self.n_probes = 0;
        self.n_elements = 0;
        self.n_losses = 0;
        self.loss_bounds = [0; LOSS_GROUPS + 1];
        self.mem_used = 0;
        self.drive = DriveRt::None;
        self.branches = false;
        self.zc = false;
        self.node_bounds = [0; NODE_GROUPS + 1];
        self.n_series = 0;
        self.n_pairs = 0;
        self.rig_junction = None;
        self.reset();
    }

    /// Change a node's shunt between two samples (for example a terminator removed).
    /// The next `step` uses the new shunt; the waves in the lines are kept.
    pub fn set_shunt(&mut self, junction: u16, shunt: Shunt) -> Result<(), ConfigError> {
        let c = self.exponent;
        let j = junction as usize;
        let refused = ConfigError::CoefficientOutOfRange { junction };
        let Some(rt @ JunctionRt::Node { first, count, .. }) =
            self.juncs.get(j).copied().filter(|r| j < self.n_juncs && !branch::is_linked(r))
        else {
            return Err(ConfigError::NotANode { junction });
        };
        let mut new = rt;
        apply_shunt::<P>(&mut new, shunt, c).map_err(|_| refused)?;
        let (lo, n) = (first as usize, count as usize);
        let min = self.g.iter().skip(lo).take(n).map(|g| u64::from(*g)).min().unwrap_or(0);
        if !passive::node_ok::<P>(&new, self.port_weight_sum(lo, n), min) {
            return Err(refused);
        }
        set(&mut self.juncs, j, new);
        self.reschedule_node(j);
        Ok(())
    }

    /// Split a node into open ends (`true`: every port reflects a = b, as a broken cable
    /// would) or join it again (`false`). Takes effect at the next `step`.
    pub fn set_broken(&mut self, junction: u16, broken: bool) -> Result<(), ConfigError> {
        let j = junction as usize;
        match self.juncs.get_mut(j).filter(|r| j < self.n_juncs && !branch::is_linked(r)) {
            Some(JunctionRt::Node { mode, short, broken: b, count, g_src, g_ports, total, .. }) => {
                *b = broken;
                *mode = mode_of(*short, broken, lone_open(*count, *g_src, *g_ports, *total, *short));
            }
            _ => return Err(ConfigError::NotANode { junction }),
        }
        self.reschedule_node(j);
        Ok(())
    }

    /// The exponent c of the weight unit: a line's weight is floor(2^c / Z0[mΩ]).
    pub fn weight_exponent(&self) -> u32 {
        self.exponent
    }

    /// The integer weight of line `line` (0 if it does not exist).
    pub fn line_weight(&self, line: usize) -> u32 {
        if line < self.n_lines {
            self.port_of.get(end_index(line, false)).and_then(|p| self.g.get(*p as usize)).copied().unwrap_or(0)
        } else {
            0
        }
    }

    /// The impedance the quantized weight of `line` stands for, in ohms: 2^c / g / 1000.
    pub fn effective_impedance(&self, line: usize) -> f64 {
        let g = self.line_weight(line);
        if g == 0 {
            return f64::INFINITY;
        }
        (1u64 << self.exponent.min(63)) as f64 / g as f64 / 1000.0
    }

    /// Delay storage in use, waves.
    pub fn memory_used(&self) -> usize {
        self.mem_used
    }

    /// Ports (line ends) in use.
    pub fn port_count(&self) -> usize {
        self.n_ports
    }

    /// Junctions in use.
    pub fn junction_count(&self) -> usize {
        self.n_juncs
    }
}

/// Put `shunt` into a node record: shunt weight floor(2^c / R), new reciprocal of the total.
pub(crate) fn apply_shunt<P: Profile>(rt: &mut JunctionRt, shunt: Shunt, c: u32) -> Result<(), ()> {
    let JunctionRt::Node { count, g_ports, g_src, recip, shift, total: t, mode, short, broken, .. } = rt else {
        return Err(());
    };
    let g_sh: u64 = match shunt {
        Shunt::Open => 0,
        Shunt::Short => 0,
        Shunt::Resistor { milliohm: 0 } => return Err(()),
        Shunt::Resistor { milliohm } => {
            // 2^c <= 2^TOP = 2^62 fits 64 bits (no 128-bit division between two samples).
            (1u64 << c.min(TOP)).checked_div(u64::from(milliohm)).unwrap_or(0)
        }
    };
    let is_short = matches!(shunt, Shunt::Short);
    // A shunt so strong that the total passes the profile's division range is capped: the
    // node then stands for a slightly weaker near-short, still a passive node.
    let total = g_ports.saturating_add(g_sh).min(P::TOTAL_MAX);
    let (r, s) = if is_short { (0, 0) } else { reciprocal(total, P::RECIP_BITS, !P::EXACT_NODE).ok_or(())? };
    *t = total;
    *recip = r;
    *shift = s;
    *short = is_short;
    *mode = mode_of(is_short, *broken, lone_open(*count, *g_src, *g_ports, total, is_short));
    Ok(())
}

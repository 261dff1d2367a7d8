//! (Frozen copy of `core/src/configure.rs` at c696084, see `mod.rs`; the reconfiguration and
//! read-out methods trimmed.)
//!
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

use super::error::{BuildError, Table};
use super::network::{
    Drive, ElementKind, Junction, Network, ProbeKind, Shunt, Side, MAX_LOSS_SECTIONS, MAX_PROBES, MAX_RIG_LATENCY,
};
use super::profile::{reciprocal, Profile};
use super::solver::{DriveRt, ElementRt, JunctionRt, LossRt, Mode, ProbeRt, Solver};

/// Largest exponent of the weight unit: g62 = floor(2^62 / Z) fits a u64 for Z >= 1 mΩ.
const TOP: u32 = 62;

fn cap(table: Table, needed: usize, capacity: usize) -> Result<(), BuildError> {
    if needed > capacity {
        Err(BuildError::CapacityExceeded {
            table,
            needed: needed.min(u32::MAX as usize) as u32,
            capacity: capacity.min(u32::MAX as usize) as u32,
        })
    } else {
        Ok(())
    }
}

fn w_top(milliohm: u32) -> u64 {
    (1u64 << TOP) / milliohm.max(1) as u64
}

fn w_top_wide(milliohm: u64) -> u64 {
    (1u64 << TOP) / milliohm.max(1)
}

/// `slot[i] = v` for an index the checks above keep in range; out of range (unreachable after
/// validation) it writes nothing instead of panicking, so `load` has no panic path.
fn set<T>(slot: &mut [T], i: usize, v: T) {
    if let Some(x) = slot.get_mut(i) {
        *x = v;
    }
}

/// `table[i]` as an index (0 if out of range, unreachable after validation; no panic path).
fn at(table: &[u16], i: usize) -> usize {
    table.get(i).copied().unwrap_or(0) as usize
}

fn mode_of(short: bool, broken: bool) -> Mode {
    if broken {
        Mode::Broken
    } else if short {
        Mode::Short
    } else {
        Mode::Scatter
    }
}

impl<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize>
    Solver<P, PORTS, JUNCS, MEM, LOSSES>
{
    /// Validate `net`, compute every coefficient and reset the state. On error the solver is
    /// left empty (it steps as a network without drive).
    pub fn load(&mut self, net: &Network<'_>) -> Result<(), BuildError> {
        let r = self.load_inner(net);
        if r.is_err() {
            self.clear();
        }
        r
    }

    fn load_inner(&mut self, net: &Network<'_>) -> Result<(), BuildError> {
        let nl = net.lines.len();
        let nj = net.junctions.len();
        let ne = net.elements.len();
        cap(Table::Ports, nl * 2 + ne, PORTS)?;
        cap(Table::Junctions, nj, JUNCS)?;
        cap(Table::Probes, net.probes.len(), MAX_PROBES)?;
        cap(Table::Lines, nl, u16::MAX as usize)?;
        if net.io_shift > P::MAX_IO_SHIFT {
            return Err(BuildError::IoShiftTooLarge { io_shift: net.io_shift, max: P::MAX_IO_SHIFT });
        }
        for (i, l) in net.lines.iter().enumerate() {
            let line = i as u16;
            if l.z_milliohm == 0 {
                return Err(BuildError::ZeroImpedance { line });
            }
            if l.delay == 0 {
                return Err(BuildError::ZeroDelay { line });
            }
            for j in [l.a, l.b] {
                if j as usize >= nj {
                    return Err(BuildError::JunctionOutOfRange { line, junction: j });
                }
            }
        }
        let ends_at =
            |j: usize| net.lines.iter().map(|l| (l.a as usize == j) as u16 + (l.b as usize == j) as u16).sum::<u16>();
        let elems_at = |j: usize| net.elements.iter().filter(|e| e.junction as usize == j).count() as u16;
        let ports_at = |j: usize| ends_at(j) + elems_at(j);
        for (k, e) in net.elements.iter().enumerate() {
            let ok = matches!(net.junctions.get(e.junction as usize), Some(Junction::Node { .. }));
            if !ok || e.port_milliohm == 0 {
                return Err(BuildError::BadElement { element: k as u16 });
            }
        }

        // Junction shape checks.
        let mut series_z = [0u32; JUNCS];
        for (j, junc) in net.junctions.iter().enumerate() {
            let junction = j as u16;
            let ends = ends_at(j);
            match *junc {
                Junction::Node { shunt } => {
                    if ends == 0 {
                        return Err(BuildError::DanglingJunction { junction });
                    }
                    if let Shunt::Resistor { milliohm: 0 } = shunt {
                        return Err(BuildError::ZeroResistance { junction });
                    }
                }
                Junction::Series { milliohm } => {
                    if ends != 2 {
                        return Err(BuildError::SeriesNeedsTwoEnds { junction, ends });
                    }
                    let mut zs = net
                        .lines
                        .iter()
                        .flat_map(|l| [(l.a, l.z_milliohm), (l.b, l.z_milliohm)])
                        .filter(|(jj, _)| *jj as usize == j)
                        .map(|(_, z)| z);
                    let (z1, z2) = (zs.next().unwrap_or(0), zs.next().unwrap_or(0));
                    if z1 != z2 {
                        return Err(BuildError::SeriesImpedanceMismatch { junction });
                    }
                    if let Some(slot) = series_z.get_mut(j) {
                        *slot = z1;
                    }
                    if milliohm == 0 {
                        return Err(BuildError::ZeroResistance { junction });
                    }
                }
            }
        }

        // Drive checks.
        let (src_j, src_mohm, rig) = match net.drive {
            Drive::None => (None, 0, None),
            Drive::Source { junction, milliohm } => {
                let j = junction as usize;
                match net.junctions.get(j) {
                    None => return Err(BuildError::IndexOutOfRange { table: Table::Junctions, index: junction }),
                    Some(Junction::Series { .. }) => return Err(BuildError::DriveOnSeries { junction }),
                    Some(_) => {}
                }
                if milliohm == 0 {
                    return Err(BuildError::ZeroResistance { junction });
                }
                (Some(j), milliohm, None)
            }
            Drive::Rig { junction, latency } => {
                let j = junction as usize;
                match net.junctions.get(j) {
                    None => return Err(BuildError::IndexOutOfRange { table: Table::Junctions, index: junction }),
                    Some(Junction::Series { .. }) => return Err(BuildError::DriveOnSeries { junction }),
                    Some(Junction::Node { shunt: Shunt::Open }) if ends_at(j) == 1 && elems_at(j) == 0 => {}
                    Some(_) => return Err(BuildError::BadRigNode { junction }),
                }
                let line = net.lines.iter().position(|l| l.a as usize == j || l.b as usize == j);
                let delay = line.and_then(|i| net.lines.get(i)).map_or(0, |l| l.delay);
                if latency > MAX_RIG_LATENCY || delay < latency as u32 + 1 {
                    return Err(BuildError::RigLatencyTooLong { latency, delay });
                }
                (None, 0, Some((j, latency, line.unwrap_or(0))))
            }
        };

        // Port layout: ports grouped by junction, in junction order.
        let mut p = 0usize;
        for j in 0..nj {
            for (i, l) in net.lines.iter().enumerate() {
                if l.a as usize == j {
                    set(&mut self.port_of, 2 * i, p as u16);
                    p += 1;
                }
                if l.b as usize == j {
                    set(&mut self.port_of, 2 * i + 1, p as u16);
                    p += 1;
                }
            }
            for (k, e) in net.elements.iter().enumerate() {
                if e.junction as usize == j {
                    let rp = e.port_milliohm as u128;
                    let mu = (rp << P::SERIES_FRAC).checked_div(rp + e.series_milliohm as u128).unwrap_or(0);
                    let negate = matches!(e.kind, ElementKind::Inductor);
                    set(&mut self.elements, k, ElementRt { port: p as u16, mu: mu as u32, negate });
                    p += 1;
                }
            }
        }
        self.n_elements = ne;

        // Loss filters: one per lossy line, applied at both of its ends.
        cap(Table::Losses, 2 * net.losses.len(), LOSSES)?;
        let mut nloss = 0usize;
        for (k, ll) in net.losses.iter().enumerate() {
            let bad = BuildError::BadLoss { loss: k as u16 };
            let li = ll.line as usize;
            let n = ll.sections as usize;
            if li >= nl || n == 0 || n > MAX_LOSS_SECTIONS || net.losses.iter().take(k).any(|o| o.line == ll.line) {
                return Err(bad);
            }
            let mut rt = LossRt {
                port: 0,
                sections: ll.sections,
                g: [0; MAX_LOSS_SECTIONS],
                gb: [0; MAX_LOSS_SECTIONS],
                a: [0; MAX_LOSS_SECTIONS],
                x1: [P::ZERO; MAX_LOSS_SECTIONS],
                y1: [P::ZERO; MAX_LOSS_SECTIONS],
            };
            let one = 1u64 << P::LOSS_FRAC;
            let coefs =
                ll.poles.iter().zip(ll.zeros.iter()).zip(rt.g.iter_mut().zip(rt.gb.iter_mut()).zip(rt.a.iter_mut()));
            for ((pole, zero), ((rg, rgb), ra)) in coefs.take(n) {
                let (pole, zero) = (*pole as i64, *zero as i64);
                let one = one as i64;
                if pole >= 1 << 30 || zero >= pole || zero <= -(1 << 30) {
                    return Err(bad);
                }
                let a = pole >> (30 - P::LOSS_FRAC);
                let b = zero >> (30 - P::LOSS_FRAC); // floor: b only moves away from a
                                                     // g = floor((1 − a)/(1 − b)), g·b rounded up: the DC gain (g − gb)/(1 − a)
                                                     // is at most 1 and the effective zero gb/g stays at or above b.
                let g = ((one - a) << P::LOSS_FRAC) / (one - b).max(1);
                let gb = (g * b).div_euclid(one) + ((g * b).rem_euclid(one) != 0) as i64;
                // Still a section that only attenuates: 0 < a, effective zero below the pole.
                if a <= 0 || g <= 0 || gb * one >= a * g || g >= 1 << 31 {
                    return Err(bad);
                }
                *rg = g as u32;
                *rgb = gb as i32;
                *ra = a as u32;
            }
            for side in 0..2 {
                let mut r = rt;
                r.port = at(&self.port_of, 2 * li + side) as u16;
                set(&mut self.losses, nloss, r);
                nloss += 1;
            }
        }
        self.n_losses = nloss;
        self.n_ports = p;
        self.n_lines = nl;

        // Rings and weights. The ring a port reads from carries the wave towards it.
        let mut mem = 0usize;
        for (i, l) in net.lines.iter().enumerate() {
            let (pa, pb) = (at(&self.port_of, 2 * i), at(&self.port_of, 2 * i + 1));
            set(&mut self.partner, pa, pb as u16);
            set(&mut self.partner, pb, pa as u16);
            let (mut d_into_a, mut d_into_b) = (l.delay, l.delay);
            if let Some((rj, lat, rl)) = rig {
                if rl == i {
                    // The latency comes out of the direction towards the rig port only, so
                    // every wave inside the plant keeps its physical timing relative to the
                    // pin's ADC samples; the early return is what the DAC latency delays.
                    let (d_in, d_out) = (l.delay - lat as u32, l.delay);
                    if l.a as usize == rj {
                        (d_into_a, d_into_b) = (d_in, d_out);
                    } else {
                        (d_into_b, d_into_a) = (d_in, d_out);
                    }
                }
            }
            for (port, d) in [(pa, d_into_a), (pb, d_into_b)] {
                let end = mem + d as usize;
                cap(Table::DelayStorage, end, MEM)?;
                set(&mut self.start, port, mem as u32);
                set(&mut self.end, port, end as u32);
                mem = end;
            }
        }
        // Each reactance keeps its state in a ring of one sample that feeds itself.
        for el in self.elements.iter().take(ne) {
            let port = el.port as usize;
            cap(Table::DelayStorage, mem + 1, MEM)?;
            set(&mut self.partner, port, port as u16);
            set(&mut self.start, port, mem as u32);
            set(&mut self.end, port, mem as u32 + 1);
            mem += 1;
        }
        self.mem_used = mem;

        // Weight exponent: the largest c with every node's Σ g + g_src within the budget.
        let budget = 1u64 << P::WEIGHT_BITS;
        let node_sum = |j: usize, k: u32| -> u64 {
            let mut s: u64 = net
                .lines
                .iter()
                .map(|l| ((l.a as usize == j) as u64 + (l.b as usize == j) as u64) * (w_top(l.z_milliohm) >> k))
                .sum();
            s += net
                .elements
                .iter()
                .filter(|e| e.junction as usize == j)
                .map(|e| w_top_wide(e.port_milliohm as u64 + e.series_milliohm as u64) >> k)
                .sum::<u64>();
            if src_j == Some(j) {
                s += w_top(src_mohm) >> k;
            }
            s
        };
        let is_scatter_node =
            |j: usize| matches!(net.junctions.get(j), Some(Junction::Node { .. })) && rig.is_none_or(|r| r.0 != j);
        let mut k = 0u32;
        while k < TOP && (0..nj).any(|j| is_scatter_node(j) && node_sum(j, k) > budget) {
            k += 1;
        }
        let c = TOP - k;
        self.exponent = c;
        for (i, l) in net.lines.iter().enumerate() {
            let g = w_top(l.z_milliohm) >> k;
            set(&mut self.g, at(&self.port_of, 2 * i), g as u32);
            set(&mut self.g, at(&self.port_of, 2 * i + 1), g as u32);
        }
        for (el, e) in self.elements.iter().zip(net.elements.iter()) {
            set(
                &mut self.g,
                el.port as usize,
                (w_top_wide(e.port_milliohm as u64 + e.series_milliohm as u64) >> k) as u32,
            );
        }

        // Junction run-time records.
        let mut first = 0usize;
        for (j, junc) in net.junctions.iter().enumerate() {
            let junction = j as u16;
            let count = ports_at(j) as usize;
            let rt = match *junc {
                _ if rig.is_some_and(|r| r.0 == j) => JunctionRt::Rig { port: first as u16 },
                Junction::Node { shunt } => {
                    if (first..first + count).any(|q| self.g.get(q).is_none_or(|g| *g == 0)) {
                        return Err(BuildError::CoefficientOutOfRange { junction });
                    }
                    let g_src = if src_j == Some(j) { (w_top(src_mohm) >> k) as u32 } else { 0 };
                    let g_ports =
                        self.g.get(first..first + count).unwrap_or(&[]).iter().map(|g| *g as u64).sum::<u64>()
                            + g_src as u64;
                    let mut rt = JunctionRt::Node {
                        first: first as u16,
                        count: count as u16,
                        mode: Mode::Scatter,
                        short: false,
                        broken: false,
                        g_src,
                        g_ports,
                        recip: 0,
                        shift: 0,
                        total: 0,
                    };
                    apply_shunt::<P>(&mut rt, shunt, c).map_err(|_| BuildError::CoefficientOutOfRange { junction })?;
                    rt
                }
                Junction::Series { milliohm } => {
                    let (p, q) = (first, first + 1);
                    // Both ends of a series junction belong to lines of equal impedance (checked
                    // above); c = 2Z/(2Z + R) <= 1, rounded down.
                    let z = series_z.get(j).copied().unwrap_or(0) as u128;
                    let c = ((2 * z) << P::SERIES_FRAC).checked_div(2 * z + milliohm as u128).unwrap_or(0);
                    JunctionRt::Series { p: p as u16, q: q as u16, c: c as u32 }
                }
            };
            set(&mut self.juncs, j, rt);
            first += count;
        }
        self.n_juncs = nj;

        // Probes.
        for (k, pr) in net.probes.iter().enumerate() {
            let l = net
                .lines
                .get(pr.line as usize)
                .ok_or(BuildError::IndexOutOfRange { table: Table::Probes, index: k as u16 })?;
            let port = at(&self.port_of, 2 * pr.line as usize + (pr.side == Side::B) as usize) as u16;
            set(
                &mut self.probes,
                k,
                ProbeRt { current: pr.kind == ProbeKind::Current, port, z_milliohm: l.z_milliohm },
            );
        }
        self.n_probes = net.probes.len();

        // Drive.
        let port_at = |j: usize| {
            let mut first = 0usize;
            for jj in 0..j {
                first += ports_at(jj) as usize;
            }
            first as u16
        };
        self.drive = match (src_j, rig) {
            (Some(j), _) => DriveRt::Source { port: port_at(j) },
            (None, Some((j, lat, _))) => {
                self.rig_latency = lat as usize;
                DriveRt::Rig { port: port_at(j) }
            }
            _ => DriveRt::None,
        };
        self.io_shift = net.io_shift as u32;
        self.volts_per_code = net.volts_per_code;
        self.reset();
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
        self.mem_used = 0;
        self.drive = DriveRt::None;
        self.reset();
    }
}

/// Put `shunt` into a node record: shunt weight floor(2^c / R), new reciprocal of the total.
fn apply_shunt<P: Profile>(rt: &mut JunctionRt, shunt: Shunt, c: u32) -> Result<(), ()> {
    let JunctionRt::Node { g_ports, recip, shift, total: t, mode, short, broken, .. } = rt else {
        return Err(());
    };
    let g_sh: u64 = match shunt {
        Shunt::Open => 0,
        Shunt::Short => 0,
        Shunt::Resistor { milliohm: 0 } => return Err(()),
        Shunt::Resistor { milliohm } => ((1u128 << c) / milliohm as u128).min(u64::MAX as u128 / 2) as u64,
    };
    let is_short = matches!(shunt, Shunt::Short);
    // A shunt so strong that the total passes the profile's division range is capped: the
    // node then stands for a slightly weaker near-short, still a passive node.
    let total = g_ports.saturating_add(g_sh).min(P::TOTAL_MAX);
    let (r, s) = if is_short { (0, 0) } else { reciprocal(total, P::RECIP_BITS).ok_or(())? };
    *t = total;
    *recip = r;
    *shift = s;
    *short = is_short;
    *mode = mode_of(is_short, *broken);
    Ok(())
}

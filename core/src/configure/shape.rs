//! Phase 1 of `load`: the network's shape, checked before anything is written. Capacities,
//! indices, junction kinds, the drive and the loss-filter table; every count is formed with
//! checked arithmetic, so a hostile description (huge tables, indices past the end, delays
//! near `u32::MAX`) is refused with an error instead of wrapping.

use crate::error::{BuildError, Table};
use crate::network::{Drive, Junction, Network, Shunt, MAX_LOSS_SECTIONS, MAX_PROBES, MAX_RIG_LATENCY};

/// Port and junction indices are `u16` in the run-time records: at most 2^16 of each.
const INDEX_LIMIT: usize = 1 << 16;

/// What the later phases need to know about the drive.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Shape {
    /// Test source: its node and resistance (milliohms, > 0).
    pub src: Option<(usize, u32)>,
    /// Rig port: its node, latency, and the index of its one line.
    pub rig: Option<(usize, u16, usize)>,
}

impl Shape {
    /// True for a node that scatters through its node voltage (every node but a rig port).
    pub fn is_scatter_node(&self, net: &Network<'_>, j: usize) -> bool {
        matches!(net.junctions.get(j), Some(Junction::Node { .. })) && self.rig.is_none_or(|r| r.0 != j)
    }
}

pub(crate) fn cap(table: Table, needed: usize, capacity: usize) -> Result<(), BuildError> {
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

/// How many ends of line `l` are at junction `j` (0, 1 or 2).
pub(crate) fn ends_of(l: &crate::network::Line, j: usize) -> usize {
    match (l.a as usize == j, l.b as usize == j) {
        (true, true) => 2,
        (false, false) => 0,
        _ => 1,
    }
}

/// Line ends attached to junction `j`.
pub(crate) fn ends_at(net: &Network<'_>, j: usize) -> usize {
    net.lines.iter().map(|l| ends_of(l, j)).fold(0, usize::saturating_add)
}

/// Reactive elements hanging from junction `j`.
pub(crate) fn elems_at(net: &Network<'_>, j: usize) -> usize {
    net.elements.iter().filter(|e| e.junction as usize == j).count()
}

/// Ports (line ends and element ports) of junction `j`.
pub(crate) fn ports_at(net: &Network<'_>, j: usize) -> usize {
    ends_at(net, j).saturating_add(elems_at(net, j))
}

/// The impedance (milliohms) of the first line end at junction `j` (0 if none).
pub(crate) fn first_z(net: &Network<'_>, j: usize) -> u32 {
    net.lines
        .iter()
        .flat_map(|l| [(l.a, l.z_milliohm), (l.b, l.z_milliohm)])
        .find(|(jj, _)| *jj as usize == j)
        .map_or(0, |(_, z)| z)
}

/// Check the shape of `net` against the capacities (ports, junctions, loss ends).
pub(crate) fn check<P: crate::profile::Profile>(
    net: &Network<'_>,
    ports_cap: usize,
    juncs_cap: usize,
    losses_cap: usize,
) -> Result<Shape, BuildError> {
    let nl = net.lines.len();
    let nj = net.junctions.len();
    let ports = nl.checked_mul(2).and_then(|n| n.checked_add(net.elements.len())).unwrap_or(usize::MAX);
    cap(Table::Ports, ports, ports_cap.min(INDEX_LIMIT))?;
    cap(Table::Junctions, nj, juncs_cap.min(INDEX_LIMIT))?;
    cap(Table::Probes, net.probes.len(), MAX_PROBES)?;
    cap(Table::Lines, nl, INDEX_LIMIT)?;
    cap(Table::Losses, net.losses.len().saturating_mul(2), losses_cap)?;
    if net.io_shift > P::MAX_IO_SHIFT {
        return Err(BuildError::IoShiftTooLarge { io_shift: net.io_shift, max: P::MAX_IO_SHIFT });
    }
    lines(net)?;
    elements(net)?;
    junctions(net)?;
    losses(net)?;
    probes(net)?;
    drive(net)
}

fn lines(net: &Network<'_>) -> Result<(), BuildError> {
    let nj = net.junctions.len();
    for (i, l) in net.lines.iter().enumerate() {
        let line = i as u16; // i < 2^16 (capacity check)
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
    Ok(())
}

fn elements(net: &Network<'_>) -> Result<(), BuildError> {
    for (k, e) in net.elements.iter().enumerate() {
        let ok = matches!(net.junctions.get(e.junction as usize), Some(Junction::Node { .. }));
        if !ok || e.port_milliohm == 0 {
            return Err(BuildError::BadElement { element: k as u16 });
        }
    }
    Ok(())
}

fn junctions(net: &Network<'_>) -> Result<(), BuildError> {
    for (j, junc) in net.junctions.iter().enumerate() {
        let junction = j as u16;
        let ends = ends_at(net, j);
        match *junc {
            Junction::Node { shunt } => {
                if ends == 0 {
                    return Err(BuildError::DanglingJunction { junction });
                }
                if let Shunt::Resistor { milliohm: 0 } = shunt {
                    return Err(BuildError::ZeroResistance { junction });
                }
            }
            Junction::Series { milliohm } | Junction::SeriesInductor { port_milliohm: milliohm, .. } => {
                if ends != 2 {
                    return Err(BuildError::SeriesNeedsTwoEnds { junction, ends: ends.min(u16::MAX as usize) as u16 });
                }
                let mut zs = net
                    .lines
                    .iter()
                    .flat_map(|l| [(l.a, l.z_milliohm), (l.b, l.z_milliohm)])
                    .filter(|(jj, _)| *jj as usize == j)
                    .map(|(_, z)| z);
                if zs.next() != zs.next() {
                    return Err(BuildError::SeriesImpedanceMismatch { junction });
                }
                if milliohm == 0 {
                    return Err(BuildError::ZeroResistance { junction });
                }
            }
            Junction::Branch { a, b, .. } => branch(net, j, a, b, ends)?,
        }
    }
    Ok(())
}

/// A series branch: no line end of its own, two different plain nodes (not a short, not the
/// rig port), neither linked by another branch.
fn branch(net: &Network<'_>, j: usize, a: u16, b: u16, ends: usize) -> Result<(), BuildError> {
    let bad = BuildError::BadBranch { junction: j as u16 };
    let plain = |n: u16| {
        let rig = matches!(net.drive, Drive::Rig { junction, .. } if junction == n);
        let node = matches!(net.junctions.get(n as usize), Some(Junction::Node { shunt }) if *shunt != Shunt::Short);
        node && !rig
    };
    let shared = net.junctions.iter().enumerate().any(|(o, x)| match *x {
        Junction::Branch { a: oa, b: ob, .. } => o != j && [oa, ob].iter().any(|n| *n == a || *n == b),
        _ => false,
    });
    if ends != 0 || a == b || !plain(a) || !plain(b) || shared {
        return Err(bad);
    }
    Ok(())
}

fn losses(net: &Network<'_>) -> Result<(), BuildError> {
    for (k, ll) in net.losses.iter().enumerate() {
        let n = ll.sections as usize;
        let dup = net.losses.iter().take(k).any(|o| o.line == ll.line);
        let empty = n == 0 && ll.allpass.is_none();
        if ll.line as usize >= net.lines.len() || empty || n > MAX_LOSS_SECTIONS || dup {
            return Err(BuildError::BadLoss { loss: k as u16 });
        }
    }
    Ok(())
}

fn probes(net: &Network<'_>) -> Result<(), BuildError> {
    for (k, pr) in net.probes.iter().enumerate() {
        if pr.line as usize >= net.lines.len() {
            return Err(BuildError::IndexOutOfRange { table: Table::Probes, index: k as u16 });
        }
    }
    Ok(())
}

fn drive(net: &Network<'_>) -> Result<Shape, BuildError> {
    let on_node = |junction: u16| match net.junctions.get(junction as usize) {
        None => Err(BuildError::IndexOutOfRange { table: Table::Junctions, index: junction }),
        Some(Junction::Series { .. } | Junction::SeriesInductor { .. } | Junction::Branch { .. }) => {
            Err(BuildError::DriveOnSeries { junction })
        }
        Some(Junction::Node { shunt }) => Ok(*shunt),
    };
    match net.drive {
        Drive::None => Ok(Shape { src: None, rig: None }),
        Drive::Source { junction, milliohm } => {
            on_node(junction)?;
            if milliohm == 0 {
                return Err(BuildError::ZeroResistance { junction });
            }
            Ok(Shape { src: Some((junction as usize, milliohm)), rig: None })
        }
        Drive::Rig { junction, latency } => {
            let j = junction as usize;
            let shunt = on_node(junction)?;
            if shunt != Shunt::Open || ends_at(net, j) != 1 || elems_at(net, j) != 0 {
                return Err(BuildError::BadRigNode { junction });
            }
            let line = net.lines.iter().position(|l| l.a as usize == j || l.b as usize == j).unwrap_or(0);
            let delay = net.lines.get(line).map_or(0, |l| l.delay);
            // delay > latency, so the shortened direction keeps delay − latency >= 1 samples.
            if latency > MAX_RIG_LATENCY || delay <= u32::from(latency) {
                return Err(BuildError::RigLatencyTooLong { latency, delay });
            }
            Ok(Shape { src: None, rig: Some((j, latency, line)) })
        }
    }
}

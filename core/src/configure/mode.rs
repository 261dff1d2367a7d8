//! Which rule a node record runs: scatter, short, or open end (`Mode`).

use crate::solver::Mode;

/// A lone open line end: one port, no source, no shunt. Its exact node voltage is 2·b, so it
/// reflects a = b exactly; the node rule's v' just below 2·b (`Profile::node_scatter`) would
/// send b − 1 at every reflection, a loss the network does not have (a resonant stub would
/// lose one LSB per round trip). So it runs as an open end (`Mode::Broken`: a = b).
pub(crate) fn lone_open(count: u16, g_src: u32, g_ports: u64, total: u64, short: bool) -> bool {
    count == 1 && g_src == 0 && total == g_ports && !short
}

pub(crate) fn mode_of(short: bool, broken: bool, open: bool) -> Mode {
    if broken || open {
        Mode::Broken
    } else if short {
        Mode::Short
    } else {
        Mode::Scatter
    }
}

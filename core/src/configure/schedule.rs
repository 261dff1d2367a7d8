//! The junction pass's run tables (`solver/scatter.rs`), built from the junction records:
//! scattering nodes grouped by port count, shorted nodes, open nodes, series resistors,
//! chokes and the rig port, each kind a plain array the pass walks without dispatch. Built at
//! load; the node groups again whenever `set_shunt` or `set_broken` changes a node's mode
//! (O(junctions), between samples, no allocation).

use super::set;
use crate::profile::Profile;
use crate::solver::{JunctionRt, Mode, NodeRun, PairRun, Solver};
use crate::solver::{NODE_GROUPS, N_PORT, ONE_PORT, OPEN, SHORT, THREE_PORT, TWO_PORT};

/// The group of a node record, or `None` for a linked node (its branch scatters it).
fn group_of(mode: Mode, count: u16) -> Option<usize> {
    match (mode, count) {
        (Mode::Scatter, 1) => Some(ONE_PORT),
        (Mode::Scatter, 2) => Some(TWO_PORT),
        (Mode::Scatter, 3) => Some(THREE_PORT),
        (Mode::Scatter, _) => Some(N_PORT),
        (Mode::Short, _) => Some(SHORT),
        (Mode::Broken, _) => Some(OPEN),
        (Mode::Linked, _) => None,
    }
}

impl<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize>
    Solver<P, PORTS, JUNCS, MEM, LOSSES>
{
    /// The node groups, in group order and within a group in network order. Every node of
    /// the first `n_juncs` records is in at most one group, so the ends stay <= `n_juncs`
    /// <= JUNCS (< 2^16, shape check).
    pub(super) fn schedule_nodes(&mut self) {
        let mut ends = [0u16; NODE_GROUPS];
        let mut n = 0usize;
        for (k, end) in ends.iter_mut().enumerate() {
            for rt in self.juncs.iter().take(self.n_juncs) {
                let JunctionRt::Node { first, count, mode, g_src, recip, shift, total, hold, .. } = *rt else {
                    continue;
                };
                if group_of(mode, count) == Some(k) {
                    set(&mut self.nodes, n, NodeRun { first, count, g_src, recip, shift, hold, total });
                    n = n.saturating_add(1);
                }
            }
            *end = n.min(JUNCS) as u16;
        }
        self.node_ends = ends;
    }

    /// Series resistors, then chokes (states zero), and the rig port. At load only: the
    /// two-ports are not switchable, and their states must survive a node's change.
    pub(super) fn schedule_pairs(&mut self) {
        let mut n = 0usize;
        for rt in self.juncs.iter().take(self.n_juncs) {
            if let JunctionRt::Series { p, q, c } = *rt {
                set(&mut self.pairs, n, PairRun { p, q, c, rho: 0, s: 0 });
                n = n.saturating_add(1);
            }
        }
        self.n_series = n.min(JUNCS) as u16;
        for rt in self.juncs.iter().take(self.n_juncs) {
            if let JunctionRt::SeriesL { p, q, c, rho } = *rt {
                set(&mut self.pairs, n, PairRun { p, q, c, rho, s: 0 });
                n = n.saturating_add(1);
            }
        }
        self.n_pairs = n.min(JUNCS) as u16;
        self.rig_junction = self.juncs.iter().take(self.n_juncs).find_map(|rt| match *rt {
            JunctionRt::Rig { port } => Some(port),
            _ => None,
        });
    }
}

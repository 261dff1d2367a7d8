//! The junction pass's run tables (`solver/scatter.rs`), built from the junction records:
//! scattering nodes grouped by port count, shorted nodes, open nodes, series resistors,
//! chokes and the rig port, each kind a plain array the pass walks without dispatch. Built at
//! load; an event (`set_shunt`, `set_broken`) then moves only its node's entry between samples
//! (no allocation).

use super::set;
use crate::error::BuildError;
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

/// A node record's group and its entry in the node groups; `None` for a junction that is not
/// a node, or a linked node (its branch scatters it).
fn run_of(rt: &JunctionRt) -> Option<(usize, NodeRun)> {
    let JunctionRt::Node { first, count, mode, g_src, recip, shift, total, .. } = *rt else {
        return None;
    };
    Some((group_of(mode, count)?, NodeRun { first, count, g_src, recip, shift, total }))
}

/// Every entry one slot down, the first to the last (`rotate_left(1)` without its assertion,
/// a panic path the firmware's link check would find).
fn rotate_down(s: &mut [NodeRun]) {
    if let Some((first, rest)) = s.split_first_mut() {
        let saved = *first;
        let mut prev = first;
        for x in rest {
            *prev = *x;
            prev = x;
        }
        *prev = saved;
    }
}

/// Every entry one slot up, the last to the first (`rotate_right(1)`).
fn rotate_up(s: &mut [NodeRun]) {
    if let Some((last, rest)) = s.split_last_mut() {
        let saved = *last;
        let mut next = last;
        for x in rest.iter_mut().rev() {
            *next = *x;
            next = x;
        }
        *next = saved;
    }
}

impl<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize>
    Solver<P, PORTS, JUNCS, MEM, LOSSES>
{
    /// The node groups, in group order and within a group in network order. Every node of
    /// the first `n_juncs` records is in at most one group, so the bounds stay <= `n_juncs`
    /// <= JUNCS (< 2^16, shape check). Two passes (count, then place: a stable counting
    /// sort), not one pass per group, which cost 137 instructions per junction on the M4 when
    /// every event rebuilt the groups (`docs/firmware.md`, "Events between samples"); events
    /// now use [`Self::reschedule_node`], which falls back to this.
    pub(super) fn schedule_nodes(&mut self) {
        let mut bounds = [0u16; NODE_GROUPS + 1];
        for (g, _) in self.juncs.iter().take(self.n_juncs).filter_map(run_of) {
            if let Some(b) = bounds.get_mut(g.saturating_add(1)) {
                *b = b.saturating_add(1);
            }
        }
        let mut sum = 0u16;
        for b in bounds.iter_mut() {
            sum = sum.saturating_add(*b).min(JUNCS as u16);
            *b = sum;
        }
        let mut next = bounds;
        for (g, run) in self.juncs.iter().take(self.n_juncs).filter_map(run_of) {
            if let Some(n) = next.get_mut(g) {
                set(&mut self.nodes, *n as usize, run);
                *n = n.saturating_add(1);
            }
        }
        self.node_bounds = bounds;
    }

    /// Junction `j`'s node record changed (`set_shunt`, `set_broken`): its entry is updated
    /// in place, or moved to its new group (one rotation of the entries between its old and
    /// new slot, the bounds between shifted by one), into the place a full
    /// [`Self::schedule_nodes`] gives it (`schedule_tests.rs` checks every event against
    /// one). An event lands on the sample after it, and the full rebuild cost about 66
    /// instructions per junction on the M4 (`docs/firmware.md`, "Events between samples").
    /// Anything unexpected (the entry not found, a linked node) falls back to the rebuild.
    pub(super) fn reschedule_node(&mut self, j: usize) {
        let Some((to, run)) = self.juncs.get(j).and_then(run_of) else {
            return self.schedule_nodes();
        };
        let (first, count) = (run.first, run.count);
        let bounds = self.node_bounds;
        let bound = |g: usize| bounds.get(g).map_or(0, |&b| usize::from(b));
        let end = bound(NODE_GROUPS).min(JUNCS);
        let group_at = |i: usize| (0..NODE_GROUPS).find(|&g| i < bound(g.saturating_add(1)));
        let found = self.nodes.iter().take(end).position(|r| r.first == first && r.count == count);
        let Some(i) = found else {
            return self.schedule_nodes();
        };
        let Some(from) = group_at(i) else { return self.schedule_nodes() };
        if from == to {
            set(&mut self.nodes, i, run);
            return;
        }
        // The slot in group `to` that keeps network order (ports are numbered in it).
        let (lo, hi) = (bound(to), bound(to.saturating_add(1)));
        let p = self.nodes.iter().enumerate().take(hi).skip(lo).find(|(_, r)| r.first > first).map_or(hi, |(k, _)| k);
        if to > from {
            // Entries i+1 .. p move down by one; the node lands at p − 1.
            if let Some(s) = self.nodes.get_mut(i..p) {
                rotate_down(s);
            }
            set(&mut self.nodes, p.saturating_sub(1), run);
            for b in self.node_bounds.iter_mut().take(to.saturating_add(1)).skip(from.saturating_add(1)) {
                *b = b.saturating_sub(1);
            }
        } else {
            // Entries p .. i−1 move up by one; the node lands at p.
            if let Some(s) = self.nodes.get_mut(p..=i) {
                rotate_up(s);
            }
            set(&mut self.nodes, p, run);
            for b in self.node_bounds.iter_mut().take(from.saturating_add(1)).skip(to.saturating_add(1)) {
                *b = b.saturating_add(1);
            }
        }
    }

    /// Series resistors, then chokes (states zero), and the rig port. At load only: the
    /// two-ports are not switchable, and their states must survive a node's change. A
    /// two-port whose ports are not adjacent (p, p + 1), which the junction records never
    /// build, is refused rather than trusted: the junction pass reads both ports as a pair.
    pub(super) fn schedule_pairs(&mut self) -> Result<(), BuildError> {
        let mut n = 0usize;
        for want_choke in [false, true] {
            for (j, rt) in self.juncs.iter().enumerate().take(self.n_juncs) {
                let (p, q, c, rho) = match *rt {
                    JunctionRt::Series { p, q, c } if !want_choke => (p, q, c, 0),
                    JunctionRt::SeriesL { p, q, c, rho } if want_choke => (p, q, c, rho),
                    _ => continue,
                };
                if p.checked_add(1) != Some(q) {
                    return Err(BuildError::CoefficientOutOfRange { junction: j as u16 });
                }
                set(&mut self.pairs, n, PairRun { p, c, rho, s: 0 });
                n = n.saturating_add(1);
            }
            if !want_choke {
                self.n_series = n.min(JUNCS) as u16;
            }
        }
        self.n_pairs = n.min(JUNCS) as u16;
        self.rig_junction = self.juncs.iter().take(self.n_juncs).find_map(|rt| match *rt {
            JunctionRt::Rig { port } => Some(port),
            _ => None,
        });
        Ok(())
    }
}

#[cfg(test)]
#[path = "schedule_tests.rs"]
mod tests;

//! The junction pass of [`Solver::step`]: b → a at every junction, one tight loop per
//! junction kind over a plain array of records (built at load by
//! `configure/schedule.rs`), instead of one enum matched per junction.
//!
//! The junctions of one sample are independent of each other (each reads the arriving waves
//! b of its own ports and writes the outgoing waves a of its own ports; a choke also its own
//! state), so running them grouped by kind instead of in network order gives the same
//! integers. Linked nodes and their series branches run afterwards, in the branch pass.
//!
//! This file is the one place where the per-sample arithmetic of a node, a series resistor,
//! a choke, a short, an open end and the rig port is called. Same no-panic rule as the rest
//! of the per-sample path (see the parent module): a record whose ports lie outside the
//! tables (impossible after `load`) does nothing.

use super::Solver;
use crate::profile::Profile;

/// A scattering node's run-time record: its ports `first..first + count` and the
/// coefficients of `Profile::node_scatter` (a short or an open node uses only the ports).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct NodeRun {
    pub first: u16,
    pub count: u16,
    pub g_src: u32,
    pub recip: u32,
    pub shift: u32,
    pub total: u64,
}

impl NodeRun {
    pub(crate) const EMPTY: NodeRun = NodeRun { first: 0, count: 0, g_src: 0, recip: 0, shift: 0, total: 0 };
}

/// A two-port between ports `p` and p + 1: a series resistor (coefficient `c`) or a choke
/// (coefficients `c`, `rho` and its state s = −(2Z/R_L)·b_L, see `Profile::series_l`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct PairRun {
    pub p: u16,
    pub c: u32,
    pub rho: u32,
    pub s: i32,
}

impl PairRun {
    pub(crate) const EMPTY: PairRun = PairRun { p: 0, c: 0, rho: 0, s: 0 };
}

/// The node groups of `Solver::nodes`, in this order: group k is
/// `nodes[node_bounds[k]..node_bounds[k + 1]]`, `node_bounds[0] = 0`.
pub(crate) const ONE_PORT: usize = 0;
pub(crate) const TWO_PORT: usize = 1;
pub(crate) const THREE_PORT: usize = 2;
pub(crate) const N_PORT: usize = 3;
pub(crate) const SHORT: usize = 4;
pub(crate) const OPEN: usize = 5;
pub(crate) const NODE_GROUPS: usize = 6;

/// The records of node group `k`, or `None` if it is empty (or, impossible after the
/// schedule builder, its bounds are out of order). `k` is a constant at every call, so the
/// bounds are two loads; an empty group costs a compare and a branch, not the slice's checks
/// (a small plant has most groups empty).
#[inline(always)]
fn group<'a>(nodes: &'a [NodeRun], bounds: &[u16; NODE_GROUPS + 1], k: usize) -> Option<&'a [NodeRun]> {
    let [lo, hi] = *bounds.get(k..)?.first_chunk::<2>()?;
    if lo == hi {
        return None;
    }
    nodes.get(lo as usize..hi as usize)
}

impl<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize>
    Solver<P, PORTS, JUNCS, MEM, LOSSES>
{
    /// Junction pass: b → a at every junction that is not part of a series branch.
    #[inline(always)]
    pub(super) fn scatter(&mut self, e: P::Wave, rig_back: P::Wave) {
        let Self { nodes, node_bounds, pairs, n_series, n_pairs, rig_junction, b, g, a, .. } = self;
        let (b, g) = (&*b, &*g);
        // v = (2·Σ G_k·b_k + E·G_src) / G_total; a_k = trunc(v' − b_k) with v' the exact v
        // (Narrow) or strictly between 0 and v (Wide; `Profile::node_scatter`). Nodes of 1, 2
        // and 3 ports (line ends, drops, taps: most of a plant) run on fixed-size arrays, so
        // the compiler unrolls them exactly (in the profiles that ask for it,
        // `Profile::FIXED_NODES`); the arithmetic is the same `node_scatter`.
        if P::FIXED_NODES {
            for r in group(nodes, node_bounds, ONE_PORT).unwrap_or(&[]) {
                node::<P, 1>(b, g, a, r, e);
            }
            for r in group(nodes, node_bounds, TWO_PORT).unwrap_or(&[]) {
                node::<P, 2>(b, g, a, r, e);
            }
            for r in group(nodes, node_bounds, THREE_PORT).unwrap_or(&[]) {
                node::<P, 3>(b, g, a, r, e);
            }
            for r in group(nodes, node_bounds, N_PORT).unwrap_or(&[]) {
                node_any::<P>(b, g, a, r, e);
            }
        } else {
            // The groups of scattering nodes are contiguous: one loop, one copy of the code.
            let end = node_bounds.get(N_PORT + 1).copied().unwrap_or(0) as usize;
            for r in nodes.get(..end).unwrap_or(&[]) {
                node_any::<P>(b, g, a, r, e);
            }
        }
        // v = 0: a = −b.
        for r in group(nodes, node_bounds, SHORT).unwrap_or(&[]) {
            let (lo, hi) = ports(r);
            if let (Some(bs), Some(as_)) = (b.get(lo..hi), a.get_mut(lo..hi)) {
                for (ak, bk) in as_.iter_mut().zip(bs.iter()) {
                    *ak = P::neg(*bk);
                }
            }
        }
        // A broken node, or a lone open end: a = b.
        for r in group(nodes, node_bounds, OPEN).unwrap_or(&[]) {
            let (lo, hi) = ports(r);
            if let (Some(bs), Some(as_)) = (b.get(lo..hi), a.get_mut(lo..hi)) {
                as_.copy_from_slice(bs);
            }
        }
        let n_series = usize::from(*n_series);
        let (series, chokes) = pairs.split_at_mut(n_series.min(JUNCS));
        if n_series != 0 {
            series_pass::<P>(series, b, a);
        }
        let n_chokes = usize::from(*n_pairs).saturating_sub(n_series);
        if n_chokes != 0 {
            choke_pass::<P>(chokes.get_mut(..n_chokes).unwrap_or(&mut []), b, a);
        }
        // Rig port: a = v − b[n − latency] (see `step`).
        if let Some(x) = rig_junction.and_then(|port| a.get_mut(port as usize)) {
            *x = P::sub(e, rig_back);
        }
    }
}

/// Series resistors: `Profile::series` on each pair of ports. A two-port's ports are
/// adjacent (checked by the schedule builder), so one range check covers both.
#[inline(always)]
fn series_pass<P: Profile>(series: &[PairRun], b: &[P::Wave], a: &mut [P::Wave]) {
    for r in series {
        if let (Some([b1, b2]), Some([a1, a2])) = (pair(b, r.p), pair_mut(a, r.p)) {
            (*a1, *a2) = P::series(*b1, *b2, r.c);
        }
    }
}

/// Chokes: `Profile::series_l` on each pair of ports, and the choke's new state.
#[inline(always)]
fn choke_pass<P: Profile>(chokes: &mut [PairRun], b: &[P::Wave], a: &mut [P::Wave]) {
    for r in chokes {
        if let (Some([b1, b2]), Some([a1, a2])) = (pair(b, r.p), pair_mut(a, r.p)) {
            let s_next;
            (*a1, *a2, s_next) = P::series_l(*b1, *b2, P::wave_from_i32(r.s), r.c, r.rho);
            r.s = s_next.into();
        }
    }
}

/// The two waves at ports p and p + 1 (`None` past the table, impossible after `load`).
#[inline(always)]
fn pair<W>(w: &[W], p: u16) -> Option<&[W; 2]> {
    w.get(p as usize..).and_then(|s| s.first_chunk::<2>())
}

/// [`pair`], mutable.
#[inline(always)]
fn pair_mut<W>(w: &mut [W], p: u16) -> Option<&mut [W; 2]> {
    w.get_mut(p as usize..).and_then(|s| s.first_chunk_mut::<2>())
}

/// A node record's port range (first, first + count).
#[inline(always)]
fn ports(r: &NodeRun) -> (usize, usize) {
    let lo = r.first as usize;
    (lo, lo.saturating_add(r.count as usize))
}

/// A scattering node of exactly `N` ports: the waves, weights and outputs as `[_; N]`
/// arrays, so `node_scatter` is unrolled for this count (`Profile::FIXED_NODES`).
#[inline(always)]
fn node<P: Profile, const N: usize>(b: &[P::Wave], g: &[u32], a: &mut [P::Wave], r: &NodeRun, e: P::Wave) {
    let lo = r.first as usize;
    let bs = b.get(lo..).and_then(|s| s.first_chunk::<N>());
    let gs = g.get(lo..).and_then(|s| s.first_chunk::<N>());
    let as_ = a.get_mut(lo..).and_then(|s| s.first_chunk_mut::<N>());
    if let (Some(bs), Some(gs), Some(as_)) = (bs, gs, as_) {
        P::node_scatter(bs, gs, as_, e, r.g_src, r.recip, r.shift, r.total);
    }
}

/// A scattering node of any number of ports (slices).
#[inline(always)]
fn node_any<P: Profile>(b: &[P::Wave], g: &[u32], a: &mut [P::Wave], r: &NodeRun, e: P::Wave) {
    let (lo, hi) = ports(r);
    if let (Some(bs), Some(gs), Some(as_)) = (b.get(lo..hi), g.get(lo..hi), a.get_mut(lo..hi)) {
        P::node_scatter(bs, gs, as_, e, r.g_src, r.recip, r.shift, r.total);
    }
}

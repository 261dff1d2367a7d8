//! The line pass of [`Solver::step`]: every port's outgoing wave into the ring towards its
//! partner end, the arrival filters of lossy lines and fractional delays, and the Zc(s)
//! ends' post- and pre-steps (`docs/zc-model.md`). Same no-panic rule as the rest of the
//! per-sample path (see the parent module).
//!
//! The arrival filters run as flat runs: at load (`configure/loss.rs`, `build_losses`) the loss
//! records are laid out grouped by [`loss_group`], and each group is a tight loop whose
//! section count and allpass flag are constants (the sections unrolled). The ends of one
//! sample are independent (each filters its own port's b with its own state), so the group
//! order gives the same integers as network order.

use super::{LossRt, Ring, Solver};
use crate::network::{MAX_LOSS_SECTIONS, MAX_ZC_SECTIONS};
use crate::profile::Profile;

impl<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize>
    Solver<P, PORTS, JUNCS, MEM, LOSSES>
{
    /// Line pass: write each a into the ring towards the partner end, advance, read next b.
    #[inline(always)]
    pub(super) fn propagate(&mut self) {
        let n_loss = self.n_losses.min(LOSSES);
        if self.zc {
            // Zc(s) ends, post-step: the sections take d = a_p − b_p, and the ring takes
            // a = a_p + c (`docs/zc-model.md`) while the port keeps a_p (restored below), so
            // probes and host views stay in junction terms.
            for l in self.losses.iter_mut().take(n_loss) {
                if l.zc_n == 0 {
                    continue;
                }
                let (Some(a), Some(b)) = (self.a.get_mut(l.port as usize), self.b.get(l.port as usize)) else {
                    continue;
                };
                l.zc_ap = *a;
                let n = (l.zc_n as usize).min(MAX_ZC_SECTIONS);
                *a = P::zc_post(*a, *b, l.zc_c, &mut l.zc_s, &l.zc_pole, &l.zc_rho, n);
            }
        }
        let n = self.n_ports.min(PORTS);
        let (a, mem) = (&self.a, &mut self.mem);
        for (r, b) in self.rings.iter_mut().zip(self.b.iter_mut()).take(n) {
            *b = ring_pass::<P, MEM>(r, a, mem);
        }
        // Lossy lines and fractional delays: the wave arriving at each end passes the line's
        // loss sections, then its allpass (LTI filters commute with the delay, so filtering
        // at the arrival is the same line). One loop per group, the last one general.
        let (losses, bounds, b) = (&mut self.losses, &self.loss_bounds, &mut self.b);
        if let Some(run) = group(losses, bounds, ONE_SECTION) {
            arrival_run::<P>(run, b, |l, x| arrival_filter::<P>(l, x, 1, false));
        }
        if let Some(run) = group(losses, bounds, TWO_SECTIONS) {
            arrival_run::<P>(run, b, |l, x| arrival_filter::<P>(l, x, 2, false));
        }
        if let Some(run) = group(losses, bounds, ALLPASS_ONLY) {
            arrival_run::<P>(run, b, |l, x| arrival_filter::<P>(l, x, 0, true));
        }
        if let Some(run) = group(losses, bounds, OTHER_FILTERS) {
            arrival_run::<P>(run, b, |l, x| {
                let k = (l.sections as usize).min(MAX_LOSS_SECTIONS);
                arrival_filter::<P>(l, x, k, l.ap)
            });
        }
        if self.zc {
            // Zc(s) ends, pre-step: the junction sees b_p = b + c, c = Σ k_i·s_i (b after the
            // arrival filter above); the port's a goes back to the junction's a_p. A loop of
            // its own, so plants without Zc ends pay only the flag.
            for l in self.losses.iter_mut().take(n_loss) {
                if l.zc_n == 0 {
                    continue;
                }
                let n = (l.zc_n as usize).min(MAX_ZC_SECTIONS);
                if let Some(b) = self.b.get_mut(l.port as usize) {
                    let (c, bp) = P::zc_pre(*b, &l.zc_s, &l.zc_k, n);
                    l.zc_c = c;
                    *b = bp;
                }
                if let Some(a) = self.a.get_mut(l.port as usize) {
                    *a = l.zc_ap;
                }
            }
        }
    }
}

/// One port's ring: write its partner's outgoing wave at the cursor, advance the cursor
/// (back to `start` at `end`), and return the wave at the new cursor, this port's next b.
///
/// Two schedules of the same operations, per target (`cargo run -p xtask -- firmware`,
/// 3 Dec 2026, instructions per sample of the largest plants): reading the whole record
/// first saves 142 on the M4 wide p85 plant (the compiler otherwise reloads the cursor after
/// the store into `mem`), but costs 197 on the M0 narrow p34 plant (register pressure on
/// ARMv6-M's eight low registers), which keeps the store-first order.
#[inline(always)]
fn ring_pass<P: Profile, const MEM: usize>(r: &mut Ring, a: &[P::Wave], mem: &mut [P::Wave; MEM]) -> P::Wave {
    #[cfg(not(tidewire_no_cond_select))]
    {
        let (cursor, start, end, partner) = (r.cursor, r.start, r.end, r.partner);
        let next = cursor.wrapping_add(1);
        let next = if next == end { start } else { next };
        r.cursor = next;
        let val = a.get(partner as usize).copied().unwrap_or(P::ZERO);
        if let Some(m) = mem.get_mut(cursor as usize) {
            *m = val;
        }
        mem.get(next as usize).copied().unwrap_or(P::ZERO)
    }
    #[cfg(tidewire_no_cond_select)]
    {
        let val = a.get(r.partner as usize).copied().unwrap_or(P::ZERO);
        if let Some(m) = mem.get_mut(r.cursor as usize) {
            *m = val;
        }
        let next = r.cursor.wrapping_add(1);
        r.cursor = if next == r.end { r.start } else { next };
        mem.get(r.cursor as usize).copied().unwrap_or(P::ZERO)
    }
}

/// The loss-filter groups of `Solver::losses`, in this order: group k is
/// `losses[loss_bounds[k]..loss_bounds[k + 1]]`, `loss_bounds[0] = 0`. The usual ends run
/// with constant counts: one or two loss sections, a fractional delay alone (an allpass on a
/// lossless line); every other end (sections with an allpass, three or more sections) runs
/// the general filter, which reads both from its record (a group of its own for two sections
/// and an allpass was measured and kept out: docs/firmware.md). Each group
/// costs code in every generic step (the Cortex-M0's flash is nearly full), so only these.
pub(crate) const ONE_SECTION: usize = 0;
pub(crate) const TWO_SECTIONS: usize = 1;
pub(crate) const ALLPASS_ONLY: usize = 2;
pub(crate) const OTHER_FILTERS: usize = 3;
pub(crate) const LOSS_GROUPS: usize = 4;

/// The group of a loss filter with `sections` sections and an allpass or not.
pub(crate) fn loss_group(sections: u8, allpass: bool) -> usize {
    match (sections, allpass) {
        (1, false) => ONE_SECTION,
        (2, false) => TWO_SECTIONS,
        (0, true) => ALLPASS_ONLY,
        _ => OTHER_FILTERS,
    }
}

/// The records of loss group `k`, or `None` if it is empty (or, impossible after the
/// loader, its bounds are out of order); `k` is a constant at every call.
#[inline(always)]
fn group<'a, W: Copy>(
    losses: &'a mut [LossRt<W>],
    bounds: &[u16; LOSS_GROUPS + 1],
    k: usize,
) -> Option<&'a mut [LossRt<W>]> {
    let [lo, hi] = *bounds.get(k..)?.first_chunk::<2>()?;
    if lo == hi {
        return None;
    }
    losses.get_mut(lo as usize..hi as usize)
}

/// One group's run: every end's b through `filter`.
#[inline(always)]
fn arrival_run<P: Profile>(
    run: &mut [LossRt<P::Wave>],
    b: &mut [P::Wave],
    filter: impl Fn(&mut LossRt<P::Wave>, P::Wave) -> P::Wave,
) {
    for l in run.iter_mut() {
        if let Some(b) = b.get_mut(l.port as usize) {
            *b = filter(l, *b);
        }
    }
}

/// A lossy or fractional line end's arrival filter: its first `k` loss sections, then its
/// allpass if `ap`; returns the filtered wave. Section k >= 1's previous input is section
/// k − 1's previous output (y1[k − 1] before this sample's update), so only the first
/// section keeps an x1 (both start at zero, `reset` and load, and stay equal).
#[inline(always)]
fn arrival_filter<P: Profile>(l: &mut LossRt<P::Wave>, mut x: P::Wave, k: usize, ap: bool) -> P::Wave {
    let mut x1 = l.x1;
    l.x1 = x;
    let state = l.y1.iter_mut().zip(l.r1.iter_mut());
    let sections = state.zip(l.g.iter().zip(l.gb.iter()).zip(l.a.iter()));
    for ((y1, r1), ((g, gb), a)) in sections.take(k) {
        let (y, r) = P::loss_section(x, x1, *y1, *r1, *g, *gb, *a);
        x1 = *y1;
        (*y1, *r1) = (y, r);
        x = y;
    }
    if ap {
        // Lattice: y = a·x + c·s, s' = c·x − a·s (`Profile::allpass`).
        let (y, s_next) = P::allpass(x, l.ap_s, l.ap_a, l.ap_c);
        l.ap_s = s_next;
        x = y;
    }
    x
}

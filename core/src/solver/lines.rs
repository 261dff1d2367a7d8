//! The line pass of [`Solver::step`]: every port's outgoing wave into the ring towards its
//! partner end, the arrival filters of lossy lines and fractional delays, and the Zc(s)
//! ends' post- and pre-steps (`docs/zc-model.md`). Same no-panic rule as the rest of the
//! per-sample path (see the parent module).

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
            // probes, the hold rule and host views stay in junction terms.
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
        // at the arrival is the same line).
        for l in self.losses.iter_mut().take(n_loss) {
            let Some(b) = self.b.get_mut(l.port as usize) else {
                continue;
            };
            *b = arrival_filter::<P>(l, *b);
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

/// A lossy or fractional line end's arrival filter: its loss sections, then its allpass;
/// returns the filtered wave.
#[inline(always)]
fn arrival_filter<P: Profile>(l: &mut LossRt<P::Wave>, mut x: P::Wave) -> P::Wave {
    let k = (l.sections as usize).min(MAX_LOSS_SECTIONS);
    let state = l.x1.iter_mut().zip(l.y1.iter_mut()).zip(l.r1.iter_mut());
    let sections = state.zip(l.g.iter().zip(l.gb.iter()).zip(l.a.iter()));
    for (((x1, y1), r1), ((g, gb), a)) in sections.take(k) {
        let (y, r) = P::loss_section(x, *x1, *y1, *r1, *g, *gb, *a);
        (*x1, *y1, *r1) = (x, y, r);
        x = y;
    }
    if l.ap {
        // Lattice: y = a·x + c·s, s' = c·x − a·s (`Profile::allpass`).
        let (y, s_next) = P::allpass(x, l.ap_s, l.ap_a, l.ap_c);
        l.ap_s = s_next;
        x = y;
    }
    x
}

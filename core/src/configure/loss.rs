//! A loss filter's run-time record at load: its sections, allpass and Zc(s) network,
//! quantized to the profile's `LOSS_FRAC` bits and checked (`passive.rs`, `zc.rs`).

use super::{at, end_index, passive, quantize_allpass, quantize_loss_section, set, zc};
use crate::error::BuildError;
use crate::network::{Network, MAX_LOSS_SECTIONS};
use crate::profile::Profile;
use crate::solver::{loss_group, LossRt, Solver, LOSS_GROUPS};

impl<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize>
    Solver<P, PORTS, JUNCS, MEM, LOSSES>
{
    /// Loss filters: one per lossy line, applied at both of its ends, laid out in run order:
    /// grouped by [`loss_group`] (`solver/lines.rs`), within a group in network order, each
    /// record knowing its network end for errors and host views. The shape check bounds the
    /// count by LOSSES (< 2^16 ends), so the bounds fit.
    pub(super) fn build_losses(&mut self, net: &Network<'_>, rig_line: Option<usize>) -> Result<(), BuildError> {
        // Network order first, so the error reported is the first bad filter's.
        for (k, ll) in net.losses.iter().enumerate() {
            loss_record::<P>(ll, 0, k)?;
            zc::check_line::<P>(net, ll, rig_line)?;
        }
        let mut bounds = [0u16; LOSS_GROUPS + 1];
        let mut nloss = 0usize;
        for (g, bound) in bounds.iter_mut().skip(1).enumerate() {
            for (k, ll) in net.losses.iter().enumerate() {
                if loss_group(ll.sections, ll.allpass.is_some()) != g {
                    continue;
                }
                let li = ll.line as usize;
                for side in 0..2 {
                    let port = at(&self.port_of, end_index(li, side == 1)) as u16;
                    let mut rt = loss_record::<P>(ll, port, k)?;
                    rt.end = end_index(k, side == 1).min(u16::MAX as usize) as u16;
                    set(&mut self.losses, nloss, rt);
                    nloss = nloss.saturating_add(1);
                }
            }
            *bound = nloss.min(LOSSES) as u16;
        }
        self.loss_bounds = bounds;
        self.n_losses = nloss;
        self.zc = net.losses.iter().any(|l| l.zc.is_some());
        Ok(())
    }
}

/// The run-time record of one loss filter (loss filter `index` of the network):
/// [`BuildError::BadLoss`] if a section does not quantize to an attenuating shelf (see
/// [`quantize_loss_section`]) or the allpass is not passive, [`BuildError::BadZc`] if its
/// Zc(s) network is out of range (`configure/zc.rs`).
pub(super) fn loss_record<P: Profile>(
    ll: &crate::network::LineLoss,
    port: u16,
    index: usize,
) -> Result<LossRt<P::Wave>, BuildError> {
    let loss = index.min(u16::MAX as usize) as u16;
    let bad = BuildError::BadLoss { loss };
    let mut rt = LossRt::empty(port, P::ZERO);
    rt.sections = ll.sections;
    let n = ll.sections as usize;
    if (n == 0 && ll.allpass.is_none()) || n > MAX_LOSS_SECTIONS {
        return Err(bad);
    }
    if let Some(ap) = ll.allpass {
        (rt.ap_a, rt.ap_c) = quantize_allpass::<P>(ap.a, ap.c).ok_or(bad)?;
        rt.ap = true;
    }
    let coefs = ll.poles.iter().zip(ll.zeros.iter()).zip(rt.g.iter_mut().zip(rt.gb.iter_mut()).zip(rt.a.iter_mut()));
    for ((pole, zero), ((rg, rgb), ra)) in coefs.take(n) {
        (*rg, *rgb, *ra) = quantize_loss_section::<P>(*pole, *zero).ok_or(bad)?;
    }
    if let Some(net) = ll.zc {
        zc::record::<P>(&net, &mut rt).ok_or(BuildError::BadZc { loss })?;
    }
    if !passive::loss_ok::<P>(&rt) {
        return Err(bad);
    }
    Ok(rt)
}

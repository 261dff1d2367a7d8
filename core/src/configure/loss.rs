//! A loss filter's run-time record at load: its sections, allpass and Zc(s) network,
//! quantized to the profile's `LOSS_FRAC` bits and checked (`passive.rs`, `zc.rs`).

use super::{passive, quantize_allpass, quantize_loss_section, zc};
use crate::error::BuildError;
use crate::network::MAX_LOSS_SECTIONS;
use crate::profile::Profile;
use crate::solver::LossRt;

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

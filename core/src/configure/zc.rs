//! Zc(s) networks of lossy lines at load time: the quantized coefficients with their range
//! checks, and the passivity margin of a line's realised two-port, computed from the
//! integers. Never on the per-sample path (floating point, `libm`).
//!
//! **Why a frequency check.** An end in node-wave form ([`crate::ZcNetwork`]) shifts both of
//! its waves by the same c = Σ k_i·s_i (b_p = b + c toward the junction, a = a_p + c toward
//! the line), so it is not a lossless adaptor between constant port resistances and the
//! energy argument of `passive.rs` does not cover it (`docs/zc-model.md`). What is passive
//! or not is the whole line with its two ends: a two-port whose even and odd admittances are
//! (closed form from v2 − Zc·i2 = A·(v1 + Zc·i1) and the same with 1 and 2 exchanged)
//!
//!   Y_e = (1 − A)/(Zc·(1 + A)),   Y_o = (1 + A)/(Zc·(1 − A)),   A = H(z)·z^−N,
//!
//! with H the quantized loss sections and allpass, N the whole delay and Zc the quantized
//! network, all at z = e^{jω}. The realised Zc follows from the difference equations
//! (c = (Zc − Z_p)·i/2 with s_i' = (2k_i − 1)·s_i + ρ_i·Z_p·i):
//!
//!   Zc(z)/Z_p = 1 + Σ_i 2·k_i·ρ_i/(z + 1 − 2k_i),
//!
//! the bilinear image of Z_inf + Σ R_i/(1 + s·R_i·C_i). The two-port is passive at ω iff
//! Re Y_e >= 0 and Re Y_o >= 0; the margin is the least cos(arg Y) over both.
//!
//! **The grid.** A coarse grid resolves H and Zc (geometric near 0 and near π down to
//! π·2^−36, below the closest pole a quantized coefficient allows, and at most π/1024 wide).
//! Where |A| = |H| = h < 1, w = (1 − A)/(1 + A) lies in the image of the disc |A| <= h,
//! so |arg w| <= asin(2h/(1 + h²)) whatever the delay: the **delay-independent sufficient
//! test** cos(arg Zc) >= 2h/(1 + h²) holds iff cos(|arg Zc| + asin(2h/(1 + h²))) >= 0, and
//! that cosine is a lower bound of cos(arg Y) for both admittances. A coarse cell whose two
//! ends pass it is passive whatever the delay (its end's exact value is what the figure
//! records); every other cell (near DC, where h → 1 and the line is electrically short, the
//! test cannot pass) is sampled densely, at least 16 points per cycle of ω·(N + 1), with the
//! exact admittances. The figure is the least exact value over the points evaluated; its
//! sign is what `load` decides on. Between grid points nothing is proven: H and Zc are
//! smooth on the coarse grid's scale, and the dense step resolves the delay's phase.

use crate::error::BuildError;
use crate::network::{LineLoss, Network, ZcNetwork, MAX_ZC_SECTIONS};
use crate::profile::Profile;
use crate::solver::LossRt;
#[cfg(feature = "zc-check")]
use core::f64::consts::PI;

/// The most exact evaluations one margin may take (dense cells); past it the line is not
/// verified (a very long line whose loss is too weak to pass the sufficient test).
pub const MAX_MARGIN_EVALUATIONS: u64 = 1 << 20;

/// The least passivity margin of one line's realised two-port.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ZcMargin {
    /// Least cos(arg Y) over the even and odd admittances and the points evaluated (>= 0:
    /// passive on the grid, see the module docs).
    pub least: f64,
    /// Where, in radians per sample (0..=π).
    pub omega: f64,
    /// Exact evaluations the dense cells took.
    pub evaluations: u64,
}

/// Fill the Zc fields of a loss record from `zc` at the profile's `LOSS_FRAC` bits; `None`
/// for a network outside the ranges [`zc_ok`] checks.
pub(crate) fn record<P: Profile>(zc: &ZcNetwork, rt: &mut LossRt<P::Wave>) -> Option<()> {
    let n = zc.sections as usize;
    if !(1..=MAX_ZC_SECTIONS).contains(&n) {
        return None;
    }
    let one = 1i64.checked_shl(P::LOSS_FRAC)?;
    let fields =
        zc.k.iter().zip(zc.rho.iter()).zip(rt.zc_k.iter_mut().zip(rt.zc_pole.iter_mut()).zip(rt.zc_rho.iter_mut()));
    for ((k, rho), ((rk, rp), rr)) in fields.take(n) {
        let (kq, rq) = crate::quantize::zc_section(*k, *rho, P::LOSS_FRAC)?;
        *rk = kq;
        *rr = rq;
        // 2k − 1 in (−1, 1) once 0 < k < 1 is checked: |.| < 2^LOSS_FRAC, fits an i32.
        *rp = i32::try_from(i64::from(kq).checked_mul(2)?.checked_sub(one)?).ok()?;
    }
    rt.zc_n = zc.sections;
    zc_ok::<P>(rt).then_some(())
}

/// A loss record's Zc coefficients, from the integers: no network, or 1..=MAX_ZC_SECTIONS
/// sections with 0 < k_q < 1, pole = 2k_q − 1, ρ_q > 0 and Σ ρ_q < 1 (in `LOSS_FRAC` bits),
/// and loss sections on the line (a Zc network on a lossless line is active: with A = z^−N,
/// Re Y_e = tan(ωN/2)·Im(Zc)/|Zc|² changes sign).
pub(crate) fn zc_ok<P: Profile>(rt: &LossRt<P::Wave>) -> bool {
    let n = rt.zc_n as usize;
    if n == 0 {
        return true;
    }
    let one = 1i64 << P::LOSS_FRAC;
    let pairs = rt.zc_k.iter().copied().zip(rt.zc_rho.iter().copied()).take(n);
    // The pole 2k − 1 is the loader's own (`record`); operands < 2^32, exact in i64.
    let mut poles = rt.zc_k.iter().zip(rt.zc_pole.iter()).take(n);
    let poles_ok = poles.all(|(k, p)| i64::from(*p) == i64::from(*k).saturating_mul(2).saturating_sub(one));
    ranges_ok(rt.sections, n, pairs, P::LOSS_FRAC) && poles_ok
}

/// The range rule on a network's coefficients as the core holds them (k_q, ρ_q at `frac`
/// bits): loss sections on the line (`loss_sections` >= 1), 1..=MAX_ZC_SECTIONS sections,
/// 0 < k_q < one, ρ_q > 0 and Σ ρ_q < one. Shared by the loader ([`zc_ok`]) and the margin
/// ([`passivity_margin`]), so a margin exists only for a network `load` takes.
fn ranges_ok(loss_sections: u8, n: usize, pairs: impl Iterator<Item = (u32, u32)> + Clone, frac: u32) -> bool {
    let Some(one) = 1i64.checked_shl(frac) else { return false };
    // Operands < 2^32: exact in i64 (saturating only for the lint).
    let each = pairs.clone().all(|(k, r)| i64::from(k) > 0 && i64::from(k) < one && r > 0);
    let sum = pairs.fold(0i64, |s, (_, r)| s.saturating_add(i64::from(r)));
    loss_sections >= 1 && (1..=MAX_ZC_SECTIONS).contains(&n) && each && sum < one
}

/// Check a line's Zc network at load: the line has loss sections, is not the rig port's line
/// (its two directions have different delays there; not supported), and its two-port's
/// margin ([`passivity_margin`]) is >= 0.
pub(crate) fn check_line<P: Profile>(
    net: &Network<'_>,
    ll: &LineLoss,
    rig_line: Option<usize>,
) -> Result<(), BuildError> {
    if ll.zc.is_none() {
        return Ok(());
    }
    let line = ll.line;
    if rig_line == Some(line as usize) {
        return Err(BuildError::ZcOnRigLine { line });
    }
    let delay = net.lines.get(line as usize).map_or(0, |l| l.delay);
    match passivity_margin(ll, delay, P::LOSS_FRAC) {
        Some(m) if m.least >= 0.0 => Ok(()),
        _ => Err(BuildError::ZcNotPassive { line }),
    }
}

#[cfg(feature = "zc-check")]
mod float {
    use super::*;
    use crate::network::MAX_LOSS_SECTIONS;

    /// A complex number (the few operations the margin needs).
    #[derive(Debug, Clone, Copy)]
    pub(super) struct C {
        re: f64,
        im: f64,
    }

    impl C {
        const ONE: C = C { re: 1.0, im: 0.0 };
        fn new(re: f64, im: f64) -> C {
            C { re, im }
        }
        fn add(self, o: C) -> C {
            C::new(self.re + o.re, self.im + o.im)
        }
        fn mul(self, o: C) -> C {
            C::new(self.re * o.re - self.im * o.im, self.re * o.im + self.im * o.re)
        }
        fn scale(self, x: f64) -> C {
            C::new(self.re * x, self.im * x)
        }
        fn conj(self) -> C {
            C::new(self.re, -self.im)
        }
        fn norm2(self) -> f64 {
            self.re * self.re + self.im * self.im
        }
        fn norm(self) -> f64 {
            libm::sqrt(self.norm2())
        }
        fn div(self, o: C) -> C {
            self.mul(o.conj()).scale(1.0 / o.norm2())
        }
        /// cos(arg self), NaN for 0.
        fn cos_arg(self) -> f64 {
            self.re / self.norm()
        }
        fn unit(phase: f64) -> C {
            let (s, c) = libm::sincos(phase);
            C::new(c, s)
        }
    }

    /// The realised line at `frac` bits, as numbers: loss sections (a, g, gb), the allpass
    /// (a, a² + c², 1 − a² − c²) and the Zc sections (k, ρ), all over 2^frac.
    pub(super) struct Realised {
        loss: [(f64, f64, f64); MAX_LOSS_SECTIONS],
        n_loss: usize,
        allpass: Option<(f64, f64, f64)>,
        zc: [(f64, f64); MAX_ZC_SECTIONS],
        n_zc: usize,
    }

    /// The line's arrival filter H (loss sections and allpass, without the delay) at one
    /// frequency, in the form the margin needs without cancellation near DC: 1 − |H|², |H|²
    /// and arg H (forming 1 − A from A ≈ 1 loses every digit below ω ≈ 1e−8, where the
    /// DC-exact sections make |H| = 1 at DC).
    #[derive(Debug, Clone, Copy)]
    pub(super) struct Arrival {
        loss: f64,
        mag2: f64,
        phase: f64,
    }

    impl Arrival {
        /// Cascade one more factor of 1 − |F|² = `l`, |F|² = `m`, arg F = `p`:
        /// 1 − |H·F|² = (1 − |H|²) + |H|²·(1 − |F|²), no difference of near-equal terms.
        fn then(self, l: f64, m: f64, p: f64) -> Arrival {
            Arrival { loss: self.loss + self.mag2 * l, mag2: self.mag2 * m, phase: self.phase + p }
        }
    }

    impl Realised {
        pub(super) fn new(ll: &LineLoss, zc: &ZcNetwork, frac: u32) -> Option<Realised> {
            let one = f64::from(1u32.checked_shl(frac)?);
            let n_loss = (ll.sections as usize).min(MAX_LOSS_SECTIONS);
            let mut loss = [(0.0, 0.0, 0.0); MAX_LOSS_SECTIONS];
            for ((slot, pole), zero) in loss.iter_mut().zip(ll.poles.iter()).zip(ll.zeros.iter()).take(n_loss) {
                let (a, g, gb) = crate::quantize::loss_section(i64::from(*pole), i64::from(*zero), frac)?;
                // |a|, |g|, |gb| < 2^32: exact in f64.
                *slot = (a as f64 / one, g as f64 / one, gb as f64 / one);
            }
            let allpass = match ll.allpass {
                Some(ap) => {
                    let (a, c) = crate::quantize::allpass(ap.a, ap.c, frac)?;
                    // 1 − a² − c² from the integers (exact in i128; a² + c² <= one² is a
                    // load check), so a lossless allpass has exactly 0 there.
                    let (ai, ci) = (i128::from(a), i128::from(c));
                    let one2 = 1i128.checked_shl(frac.checked_mul(2)?)?;
                    let rest = one2.checked_sub(ai.checked_mul(ai)?.checked_add(ci.checked_mul(ci)?)?)?;
                    let (a, c) = (f64::from(a) / one, f64::from(c) / one);
                    Some((a, a * a + c * c, rest as f64 / (one * one)))
                }
                None => None,
            };
            // The loader's range rule ([`ranges_ok`]) on the coefficients as the core holds them.
            let n_zc = zc.sections as usize;
            let mut held = [(0u32, 0u32); MAX_ZC_SECTIONS];
            for ((slot, k), rho) in held.iter_mut().zip(zc.k.iter()).zip(zc.rho.iter()).take(n_zc) {
                *slot = crate::quantize::zc_section(*k, *rho, frac)?;
            }
            if !ranges_ok(ll.sections, n_zc, held.iter().copied().take(n_zc), frac) {
                return None;
            }
            let zcs = held.map(|(k, rho)| (f64::from(k) / one, f64::from(rho) / one));
            Some(Realised { loss, n_loss, allpass, zc: zcs, n_zc })
        }

        /// H(e^{jω}) as an [`Arrival`] and Zc(e^{jω})/Z_p.
        pub(super) fn at(&self, w: f64) -> (Arrival, C) {
            // 1 − cos ω = 2·sin²(ω/2), exact in relative terms down to the smallest ω.
            let s2 = {
                let s = libm::sin(w / 2.0);
                4.0 * s * s
            };
            let (sin, cos) = libm::sincos(w);
            let mut h = Arrival { loss: 0.0, mag2: 1.0, phase: 0.0 };
            for &(a, g, gb) in self.loss.iter().take(self.n_loss) {
                // y = g·x − gb·x[n−1] + a·y[n−1]: F = (g − gb·z⁻¹)/(1 − a·z⁻¹), so
                // |den|² = (1 − a)² + a·s2, |num|² = (g − gb)² + g·gb·s2 and
                // |den|² − |num|² = ((1 − a) − (g − gb))·((1 − a) + (g − gb)) + (a − g·gb)·s2,
                // the first product exactly 0 for the DC-exact sections (g − gb = 1 − a).
                let (da, dg) = (1.0 - a, g - gb);
                let den = da * da + a * s2;
                let num = dg * dg + g * gb * s2;
                let l = ((da - dg) * (da + dg) + (a - g * gb) * s2) / den;
                let p = libm::atan2(gb * sin, g - gb * cos) - libm::atan2(a * sin, 1.0 - a * cos);
                h = h.then(l, num / den, p);
            }
            if let Some((a, r2, rest)) = self.allpass {
                // y = a·x + c·s, s' = c·x − a·s: F = (a + r2·z⁻¹)/(1 + a·z⁻¹), r2 = a² + c²;
                // |den|² − |num|² = (1 − r2)·(1 + r2 + 2a·cos ω).
                let den = 1.0 + a * a + 2.0 * a * cos;
                let num = a * a + r2 * r2 + 2.0 * a * r2 * cos;
                let l = rest * (1.0 + r2 + 2.0 * a * cos) / den;
                let p = libm::atan2(-r2 * sin, a + r2 * cos) - libm::atan2(-a * sin, 1.0 + a * cos);
                h = h.then(l, num / den, p);
            }
            let z = C::unit(w);
            let mut zc = C::ONE;
            for &(k, rho) in self.zc.iter().take(self.n_zc) {
                zc = zc.add(C::new(2.0 * k * rho, 0.0).div(z.add(C::new(1.0 - 2.0 * k, 0.0))));
            }
            (h, zc)
        }
    }

    /// The delay-independent lower bound of cos(arg Y) (see the module docs): >= 0 iff
    /// cos(arg Zc) >= 2h/(1 + h²).
    pub(super) fn bound(h: Arrival, zc: C) -> f64 {
        let m2 = h.mag2;
        let (sh, ch) = (2.0 * libm::sqrt(m2) / (1.0 + m2), h.loss / (1.0 + m2));
        let n = zc.norm();
        let (cz, sz) = (zc.re / n, libm::fabs(zc.im) / n);
        let b = cz * ch - sz * sh;
        if b.is_finite() {
            b
        } else {
            -1.0
        }
    }

    /// The least cos(arg Y) of both admittances at one frequency, with A = H·e^{−jωN}:
    /// Y_e ∝ ((1 − |A|²) − 2j·Im A)·conj(Zc) and Y_o ∝ ((1 − |A|²) + 2j·Im A)·conj(Zc)
    /// (multiplying (1 ∓ A)/(1 ± A) by |1 ± A|² > 0 keeps the argument).
    pub(super) fn exact(h: Arrival, zc: C, w: f64, delay: u32) -> f64 {
        let im_a = libm::sqrt(h.mag2) * libm::sin(h.phase - w * f64::from(delay));
        let ye = C::new(h.loss, -2.0 * im_a).mul(zc.conj()).cos_arg();
        let yo = C::new(h.loss, 2.0 * im_a).mul(zc.conj()).cos_arg();
        // A = ±1 exactly (a lossless pole of one admittance) counts as passive there.
        match (ye.is_nan(), yo.is_nan()) {
            (true, true) => 1.0,
            (true, false) => yo,
            (false, true) => ye,
            (false, false) => ye.min(yo),
        }
    }
}
#[cfg(feature = "zc-check")]
use float::{bound, exact, Realised};

/// The least passivity margin of one line with the Zc network `ll.zc` at both ends, from
/// the integers at `frac` bits: the quantized loss sections and allpass of `ll`, the whole
/// delay `delay` and the quantized Zc coefficients (see the module docs for the grid and
/// what is and is not proven). `None` for a line without a Zc network, a network outside the
/// loader's ranges at `frac` bits (as `load` checks them: loss sections on the line, 0 < k <
/// 1, ρ > 0, Σ ρ < 1), or a line that needs more than [`MAX_MARGIN_EVALUATIONS`]: `load`
/// refuses each of these.
///
/// Without the crate feature `zc-check` there is no floating point in the core and this
/// returns `None` for every line: `load` then refuses every line with a Zc(s) network.
#[cfg(not(feature = "zc-check"))]
pub fn passivity_margin(_ll: &LineLoss, _delay: u32, _frac: u32) -> Option<ZcMargin> {
    None
}

/// The least passivity margin of one line (see the `zc-check` version's documentation).
#[cfg(feature = "zc-check")]
pub fn passivity_margin(ll: &LineLoss, delay: u32, frac: u32) -> Option<ZcMargin> {
    let zc = ll.zc?;
    let r = Realised::new(ll, &zc, frac)?;
    // Dense step: 16 points per cycle of ω·(N + 1) (the +1 for the filters' own delay).
    let dense = 2.0 * PI / (16.0 * (f64::from(delay) + 1.0));
    let floor = PI * libm::exp2(-36.0);
    let mut out = ZcMargin { least: f64::INFINITY, omega: 0.0, evaluations: 0 };
    let note = |m: f64, w: f64, out: &mut ZcMargin| {
        if m < out.least {
            out.least = m;
            out.omega = w;
        }
    };
    let mut w = floor;
    let (h, z) = r.at(w);
    let mut left = (h, z, bound(h, z));
    while w < PI {
        let step = (w / 32.0).min((PI - w) / 32.0).min(PI / 1024.0).max(floor);
        let next = (w + step).min(PI);
        let (h, z) = r.at(next);
        let right = (h, z, bound(h, z));
        if left.2 >= 0.0 && right.2 >= 0.0 {
            // Passive over the cell by the bound; the figure is the exact value at its end.
            note(exact(right.0, right.1, next, delay), next, &mut out);
        } else {
            // At least 2 points (the cell's ends), then ceil(width / dense) intervals.
            let cells = libm::ceil((next - w) / dense).max(1.0);
            out.evaluations = out.evaluations.saturating_add(cells as u64).saturating_add(1);
            if out.evaluations > MAX_MARGIN_EVALUATIONS {
                return None;
            }
            let mut i = 0.0;
            while i <= cells {
                let wi = w + (next - w) * (i / cells);
                let (h, z) = r.at(wi);
                note(exact(h, z, wi, delay), wi, &mut out);
                i += 1.0;
            }
        }
        left = right;
        w = next;
    }
    out.least.is_finite().then_some(out)
}

//! Passivity enforcement of a fitted Zc(s) network on the lines it sits on, and its
//! realisation as the core's [`ZcNetwork`] (Q30 coefficients, port resistance Z_p in mΩ).
//!
//! **The condition.** One line with the same network at both ends, in node-wave form, has
//! even and odd admittances Y_e = (1 − A)/(Zc·(1 + A)), Y_o = (1 + A)/(Zc·(1 − A)), A(z)
//! the line's realised propagation (whole delay, quantized loss sections, allpass)
//! [closed form from v2 − Zc·i2 = A·(v1 + Zc·i1) and the same with 1 and 2 exchanged].
//! Multiplying out, (1 ∓ A)/(1 ± A) ∝ (1 − |A|²) ∓ 2j·Im A, so the two-port is passive at a
//! frequency iff
//!
//!   L = (1 − |A|²)·Re Zc  >=  P = 2·|Im A|·|Im Zc|
//!
//! (the loss the line takes out must pay for the reactive power the network's phase puts in).
//! Near DC both sides go as ω², so the condition has a finite DC limit. The margin reported is
//! m = (L − P)/(L + P) in [−1, 1]: >= 0 is passive, and it does not vanish at DC.
//!
//! **The grid.** The whole delay turns A's phase fast on a long line; Im A between two grid
//! points is bounded by |Im A| + |A|·δφ, δφ the largest phase change of A to the half-way
//! points on either side, and P uses that bound (capped at |A|). Points: 1024 log-spaced
//! from fs·10⁻⁶ (a decade below the lowest fit band) and 4096 evenly spaced up to Nyquist.
//!
//! **The enforcement** (after the "perturb the residues" family of passivity enforcement,
//! Gustavsen & Semlyen 2001 [memory], in a simple form): the sections' resistances R_i are
//! scaled by factors λ_i in [0, 1] (time constants kept), Z_inf refitted by least squares,
//! the network quantized as the core holds it, until the least margin over every line of the
//! cable run, at Q30 and at the profile's LOSS_FRAC bits, is at least [`SAFETY`] and the core's
//! own load-time check (`tidewire_core::configure::zc_passivity_margin`, the same condition
//! as cos(arg Y) >= 0 on its grid) accepts every line, so the loader never refuses what the
//! compiler emits. Two
//! searches, the one with the smaller Zc error kept: (a) one common λ, bisected; (b) the
//! slowest section's λ bisected alone, and where even 0 does not suffice, that section
//! dropped and the next slowest bisected. At λ = 0 the network is the constant
//! Z_inf, passive on any line whose loss filter attenuates. Then the per-run decision: the
//! network is kept only when its largest |Zc_realised − Zc|/|Zc| over the fit band is below
//! the constant port's |Z0 − Zc|/|Zc|.
use super::loss::quantized;
use super::zc::{target, ZcFit};
use crate::plant::CableType;
use num_complex::Complex64;
use std::f64::consts::PI;
use tidewire_core::{Allpass, LineLoss, ZcNetwork, MAX_LOSS_SECTIONS, MAX_ZC_SECTIONS};

/// The least margin m an emitted network must keep on every line (see the module doc):
/// m >= 0.02 means L >= P·(1 + m)/(1 − m), the line's loss exceeds the network's reactive
/// term by 4 % at least, a cushion for the grid and the core's truncation.
pub const SAFETY: f64 = 0.02;

/// Bisection steps on the scale factor (λ to 2⁻¹⁴).
const BISECTIONS: usize = 14;

/// Points of the fit band the error after enforcement is measured at.
const ERROR_POINTS: usize = 64;

/// One enforced network of a cable run (one plant segment, all its core lines).
#[derive(Debug, Clone, PartialEq)]
pub struct Enforced {
    /// The scale λ_i of each section's resistance, by increasing time constant (1: the fit
    /// as is; 0: the section dropped).
    pub scales: Vec<f64>,
    /// Z_inf after the refit, ohms.
    pub z_inf: f64,
    /// The core's network and its port resistance Z_p, mΩ (the lines' `z_milliohm`).
    pub network: ZcNetwork,
    pub z_p_milliohm: u32,
    /// Largest |Zc_realised − Zc|/|Zc| over the fit band.
    pub max_rel_error: f64,
    /// The least margin over the run's lines and both bit widths, and where (Hz).
    pub margin: (f64, f64),
}

/// The outcome for one cable run.
#[derive(Debug, Clone, PartialEq)]
pub enum Decision {
    /// The run gets this network at every end of every line.
    Network(Enforced),
    /// No network: why (and the best enforced network, if there was one).
    Refused { reason: String, best: Option<Enforced> },
}

/// One line as the enforcement sees it: its whole delay and its arrival filter.
pub struct LineView<'a> {
    pub delay: u32,
    pub loss: Option<&'a LineLoss>,
}

/// What of a line [`enforce`] reads: its delay and its loss design (the Zc(s) network it
/// would carry is what is being decided).
pub type LineKey = (u32, Option<(u8, [u32; MAX_LOSS_SECTIONS], [i32; MAX_LOSS_SECTIONS], Option<Allpass>)>);

impl LineView<'_> {
    /// The line as [`enforce`] sees it: two lines of equal key get the same decision.
    pub fn key(&self) -> LineKey {
        (self.delay, self.loss.map(|x| (x.sections, x.poles, x.zeros, x.allpass)))
    }
}

/// A run as [`enforce`] sees it, for one cable at one constant port: the distinct keys of its
/// lines. Runs whose keys are the same set get the same result (the decision depends on
/// nothing else), so a plant of many equal stubs enforces once ([`same_run`]).
pub fn run_key(lines: &[LineView<'_>]) -> Vec<LineKey> {
    distinct(lines).iter().map(|l| l.key()).collect()
}

/// The lines of a run, each distinct [`LineView::key`] once (the first of its kind).
fn distinct<'a, 'b>(lines: &'a [LineView<'b>]) -> Vec<&'a LineView<'b>> {
    let mut d: Vec<&LineView<'_>> = vec![];
    for l in lines {
        if !d.iter().any(|x| x.key() == l.key()) {
            d.push(l);
        }
    }
    d
}

/// Whether two [`run_key`]s hold the same lines (each key appears once in either).
pub fn same_run(a: &[LineKey], b: &[LineKey]) -> bool {
    a.len() == b.len() && a.iter().all(|k| b.contains(k))
}

/// Quantize Z_inf + sections (R_i, τ_i) at sample period `dt` to the core's network:
/// k_i = r_i/(T/2C_i) rounded, ρ_i = r_i/Z_p rounded down (so Σ ρ_i < 1 holds), Z_p in mΩ.
/// A section whose k or ρ the core would truncate to zero at its `frac` bits is dropped
/// (and Z_p is the sum of what is kept: dropping one only raises the others' ρ). `None`
/// when nothing is left or a value is out of the core's range.
pub fn realise(z_inf: f64, sections: &[(f64, f64)], dt: f64, frac: u32) -> Option<(ZcNetwork, u32)> {
    let fit = ZcFit { z_inf, sections: sections.to_vec(), ..ZcFit::default() };
    let one = (1u64 << 30) as f64;
    // The least Q30 value that survives the core's truncation to `frac` bits.
    let lsb = (1u64 << 30u32.saturating_sub(frac.min(30))) as f64;
    let mut waves: Vec<(f64, f64)> =
        fit.wave_sections(dt).into_iter().filter(|(_, k)| (k * one).round() >= lsb).collect();
    let z_p = |w: &[(f64, f64)]| z_inf + w.iter().map(|(r, _)| r).sum::<f64>();
    let first = z_p(&waves);
    waves.retain(|(r, _)| (r / first * one).floor() >= lsb);
    let z_p = z_p(&waves);
    let z_p_milliohm = super::to_milliohm(z_p)?;
    let mut net = ZcNetwork { sections: 0, k: [0; MAX_ZC_SECTIONS], rho: [0; MAX_ZC_SECTIONS] };
    for (r, k) in waves.into_iter().take(MAX_ZC_SECTIONS) {
        let (kq, rq) = ((k * one).round(), (r / z_p * one).floor());
        if !(kq >= lsb && kq < one && rq >= lsb && rq < one) {
            continue;
        }
        let i = net.sections as usize;
        (net.k[i], net.rho[i]) = (kq as u32, rq as u32);
        net.sections += 1;
    }
    let sum: u64 = net.rho.iter().map(|r| u64::from(*r)).sum();
    (net.sections > 0 && sum < 1 << 30).then_some((net, z_p_milliohm))
}

/// Zc of the realised network at frequency `f`, with its coefficients truncated to `bits`
/// (30: as stored). With d = Z_p·i the current into the end times Z_p, the section state
/// s' = (2k − 1)·s + ρ·d and the end's voltage v = 2·b + Z_p·i + 2·Σ k·s, so
///
///   Zc(z) = Z_p·(1 + Σ_i 2·k_i·ρ_i/(z − 2·k_i + 1)),   z = e^{jωT}
///
/// (for unquantized values this is Z_inf + Σ R_i/(1 + s·τ_i) at the bilinear s).
pub fn realised_zc(net: &ZcNetwork, z_p_milliohm: u32, bits: u32, f: f64, fs: f64) -> Complex64 {
    let shift = 30 - bits.min(30);
    let one = (1u64 << bits.min(30)) as f64;
    let z = Complex64::from_polar(1.0, 2.0 * PI * f / fs);
    let n = (net.sections as usize).min(MAX_ZC_SECTIONS);
    let sum: Complex64 = (0..n)
        .map(|i| {
            let k = f64::from(net.k[i] >> shift) / one;
            let rho = f64::from(net.rho[i] >> shift) / one;
            2.0 * k * rho / (z - 2.0 * k + 1.0)
        })
        .sum();
    f64::from(z_p_milliohm) / 1000.0 * (1.0 + sum)
}

/// The line's arrival filter at ω (rad/sample): loss sections and allpass with the
/// profile's `frac` bits, as the core quantizes them (the whole delay apart).
fn arrival_filter(loss: Option<&LineLoss>, frac: u32) -> impl Fn(f64) -> Complex64 {
    let sections = loss.map(|l| quantized(l, frac)).unwrap_or_default();
    // (a_q, a_q² + c_q²): the realised allpass, from the one quantization the core uses.
    let lattice = loss.and_then(|l| l.allpass).map(|ap| super::fraction::quantized(ap, frac));
    move |w| {
        let z1 = Complex64::from_polar(1.0, -w);
        let mut h = Complex64::new(1.0, 0.0);
        for &(p, g, gb) in &sections {
            h *= (g - gb * z1) / (1.0 - p * z1);
        }
        if let Some((ap, k)) = lattice {
            // y = a·x + c·s, s' = c·x − a·s: Y/X = (a + (a² + c²)·z⁻¹)/(1 + a·z⁻¹).
            h *= (ap + k * z1) / (1.0 + ap * z1);
        }
        h
    }
}

/// A grid of `log` log-spaced frequencies from `lo` and `lin` evenly spaced ones up to
/// Nyquist, merged: (frequency, half the larger distance to its two neighbours), Hz.
fn grid(fs: f64, lo: f64, log: usize, lin: usize) -> Vec<(f64, f64)> {
    let hi = 0.5 * fs * (1.0 - 0.5 / lin as f64);
    let ratio = (hi / lo).powf(1.0 / (log - 1) as f64);
    let mut f: Vec<f64> = (0..log).map(|i| lo * ratio.powi(i as i32)).collect();
    f.extend((1..lin).map(|k| 0.5 * fs * k as f64 / lin as f64));
    f.sort_by(f64::total_cmp);
    f.dedup();
    (0..f.len())
        .map(|i| {
            let below = if i > 0 { f[i] - f[i - 1] } else { f[i] };
            let above = f.get(i + 1).map_or(0.5 * fs - f[i], |g| g - f[i]);
            (f[i], 0.5 * below.max(above))
        })
        .collect()
}

/// The compiler's grid: 1024 log-spaced points from fs·10⁻⁶, 4096 evenly spaced.
fn compiler_grid(fs: f64) -> Vec<(f64, f64)> {
    grid(fs, fs * 1e-6, 1024, 4096)
}

/// One line's realised propagation A on a grid, and per point the phase cushion δφ: the
/// most A's phase turns from the point to the half-way points on either side, the whole
/// delay's 2π·h·N/fs exactly, the filter's as half its turn to the farther neighbour.
pub struct Response {
    f: Vec<f64>,
    a: Vec<Complex64>,
    dphi: Vec<f64>,
}

impl Response {
    fn of(line: &LineView<'_>, fs: f64, frac: u32, grid: &[(f64, f64)], cushion: bool) -> Response {
        let filter = arrival_filter(line.loss, frac);
        let w = |f: f64| 2.0 * PI * f / fs;
        let h: Vec<Complex64> = grid.iter().map(|(f, _)| filter(w(*f))).collect();
        let n = f64::from(line.delay);
        let a = grid.iter().zip(&h).map(|((f, _), h)| h * Complex64::from_polar(1.0, -w(*f) * n)).collect();
        let dphi = (0..grid.len())
            .map(|i| {
                if !cushion {
                    return 0.0;
                }
                let turn = |j: usize| h.get(j).map_or(0.0, |g| (g / h[i]).arg().abs());
                w(grid[i].1) * n + 0.5 * turn(i.wrapping_sub(1)).max(turn(i + 1))
            })
            .collect();
        Response { f: grid.iter().map(|g| g.0).collect(), a, dphi }
    }

    /// The least margin m (module doc) with Zc `zc[i]` at the grid's points, and where (Hz).
    fn margin(&self, zc: &[Complex64]) -> (f64, f64) {
        let mut worst = (f64::INFINITY, 0.0);
        for ((a, z), (dphi, f)) in self.a.iter().zip(zc).zip(self.dphi.iter().zip(&self.f)) {
            // |A|² of a lossless line is 1 to rounding (a few 1e-16): that is no loss.
            let attenuation = 1.0 - a.norm_sqr();
            let loss = if attenuation.abs() < 1e-14 { 0.0 } else { attenuation } * z.re;
            let im_a = (a.im.abs() + a.norm() * dphi).min(a.norm());
            let reactive = 2.0 * im_a * z.im.abs();
            let total = loss.abs() + reactive;
            if total <= 1e-300 {
                continue;
            }
            let m = (loss - reactive) / total;
            if m < worst.0 {
                worst = (m, *f);
            }
        }
        worst
    }
}

/// The least margin m (module doc) of one line with Zc `zc(f)` at both ends, and where (Hz),
/// on the compiler's grid with the phase cushion.
pub fn line_margin(zc: &dyn Fn(f64) -> Complex64, line: &LineView<'_>, fs: f64, frac: u32) -> (f64, f64) {
    let g = compiler_grid(fs);
    let z: Vec<Complex64> = g.iter().map(|(f, _)| zc(*f)).collect();
    Response::of(line, fs, frac, &g, true).margin(&z)
}

/// The same on a `finer` times finer grid (1024·`finer` log-spaced points from fs·10⁻⁷,
/// 4096·`finer` evenly spaced) without the cushion: the exact condition at each point, to
/// check [`line_margin`] independently (tests).
pub fn fine_margin(zc: &dyn Fn(f64) -> Complex64, line: &LineView<'_>, fs: f64, frac: u32, finer: usize) -> f64 {
    let g = grid(fs, fs * 1e-7, 1024 * finer, 4096 * finer);
    let z: Vec<Complex64> = g.iter().map(|(f, _)| zc(*f)).collect();
    Response::of(line, fs, frac, &g, false).margin(&z).0
}

/// The least margin of a realised network over the lines' responses (on one grid), at Q30
/// and at `frac` bits.
fn network_margin(net: &ZcNetwork, z_p: u32, lines: &[Response], fs: f64, frac: u32) -> (f64, f64) {
    let mut worst = (f64::INFINITY, 0.0);
    let Some(first) = lines.first() else { return worst };
    for bits in [30, frac] {
        let zc: Vec<Complex64> = first.f.iter().map(|f| realised_zc(net, z_p, bits, *f, fs)).collect();
        for l in lines {
            let m = l.margin(&zc);
            if m.0 < worst.0 {
                worst = m;
            }
        }
    }
    worst
}

/// The fit band's frequencies and the cable's Zc there.
fn band_targets(cable: &CableType, fit: &ZcFit) -> Vec<(f64, Complex64)> {
    let (lo, hi) = fit.band;
    (0..ERROR_POINTS)
        .map(|i| lo * (hi / lo).powf(i as f64 / (ERROR_POINTS - 1) as f64))
        .map(|f| (f, target(cable, f)))
        .collect()
}

/// The network with section i scaled by `scales[i]`, Z_inf refitted, realised and measured.
fn candidate(
    fit: &ZcFit,
    targets: &[(f64, Complex64)],
    scales: &[f64],
    lines: &[Response],
    fs: f64,
    frac: u32,
) -> Option<Enforced> {
    let sections: Vec<(f64, f64)> = fit.sections.iter().zip(scales).map(|(&(r, tau), x)| (r * x, tau)).collect();
    // Z_inf minimising Σ |Z_inf + S(f) − Zc(f)|²/|Zc(f)|² over the band (S the sections).
    let s_at = |f: f64| ZcFit { z_inf: 0.0, sections: sections.clone(), ..ZcFit::default() }.at(f, fs);
    let (num, den) = targets.iter().fold((0.0, 0.0), |(n, d), (f, t)| {
        let w = 1.0 / t.norm_sqr();
        (n + w * (t - s_at(*f)).re, d + w)
    });
    let z_inf = num / den;
    if !(z_inf.is_finite() && z_inf > 0.0) {
        return None;
    }
    let (network, z_p_milliohm) = realise(z_inf, &sections, 1.0 / fs, frac)?;
    let max_rel_error = targets
        .iter()
        .map(|(f, t)| (realised_zc(&network, z_p_milliohm, 30, *f, fs) - t).norm() / t.norm())
        .fold(0.0, f64::max);
    let margin = network_margin(&network, z_p_milliohm, lines, fs, frac);
    Some(Enforced { scales: scales.to_vec(), z_inf, network, z_p_milliohm, max_rel_error, margin })
}

/// Enforce passivity of `fit` (of `cable`) on the cable run `lines`, whose constant port is
/// `z0` ohms, and decide whether the run gets the network (module doc). Also returns the
/// constant port's error, largest |Z0 − Zc|/|Zc| over the band.
pub fn enforce(cable: &CableType, fit: &ZcFit, lines: &[LineView<'_>], z0: f64, fs: f64, frac: u32) -> (f64, Decision) {
    let targets = band_targets(cable, fit);
    let g = compiler_grid(fs);
    // The pieces of a run are mostly alike (same delay, same loss design): each distinct
    // one once.
    let distinct = distinct(lines);
    let responses: Vec<Response> = distinct.iter().map(|l| Response::of(l, fs, frac, &g, true)).collect();
    let run = Run { views: &distinct, responses: &responses };
    let constant_error = targets.iter().map(|(_, t)| (z0 - t).norm() / t.norm()).fold(0.0, f64::max);
    (constant_error, decide(fit, &targets, &run, constant_error, fs, frac))
}

/// The distinct lines of a run: as the core's loader sees them, and their responses on the
/// compiler's grid.
struct Run<'a, 'b> {
    views: &'a [&'a LineView<'b>],
    responses: &'a [Response],
}

/// Whether the core's loader accepts `net` on every line of the run: its own margin
/// (`tidewire_core::configure::zc_passivity_margin`, from the integers at `frac` bits) is
/// at least 0 on each. The compiler's margin m >= [`SAFETY`] steers the search; this is the gate,
/// so that nothing the compiler emits is refused at load (a line without loss sections
/// cannot carry a network at all).
fn core_accepts(net: &ZcNetwork, views: &[&LineView<'_>], frac: u32) -> bool {
    views.iter().all(|v| {
        let Some(loss) = v.loss else { return false };
        let line = LineLoss { zc: Some(*net), ..*loss };
        tidewire_core::configure::zc_passivity_margin(&line, v.delay, frac).is_some_and(|m| m.least >= 0.0)
    })
}

fn decide(
    fit: &ZcFit,
    targets: &[(f64, Complex64)],
    run: &Run<'_, '_>,
    constant_error: f64,
    fs: f64,
    frac: u32,
) -> Decision {
    let lines = run.responses;
    let ok = |e: &Enforced| e.margin.0 >= SAFETY && core_accepts(&e.network, run.views, frac);
    let n = fit.sections.len();
    let try_scales = |scales: &[f64]| candidate(fit, targets, scales, lines, fs, frac).filter(ok);
    // The largest value of one scale in [0, 1) that keeps the margin, the others as `set`
    // puts them (the margin falls as a section's resistance grows).
    let bisect = |set: &dyn Fn(f64) -> Vec<f64>| {
        let (mut lo, mut hi, mut best) = (0.0, 1.0, None);
        for _ in 0..BISECTIONS {
            let mid = 0.5 * (lo + hi);
            match try_scales(&set(mid)) {
                Some(e) => {
                    lo = mid;
                    best = Some(e);
                }
                None => hi = mid,
            }
        }
        best
    };
    let best = match try_scales(&vec![1.0; n]) {
        Some(e) => Some(e),
        None => {
            // (a) One common scale of every section.
            let common = bisect(&|x| vec![x; n]);
            // (b) The slowest sections first, one at a time (the violations sit at the
            // bottom of the band): scale the slowest down until the margin holds; where
            // even zero does not suffice, drop it and go on to the next.
            let mut scales = vec![1.0; n];
            let mut slowest_first = None;
            for i in (0..n).rev() {
                let found = bisect(&|x| {
                    let mut v = scales.clone();
                    v[i] = x;
                    v
                });
                if found.is_some() {
                    slowest_first = found;
                    break;
                }
                scales[i] = 0.0;
            }
            // The one with the smaller Zc error.
            [common, slowest_first].into_iter().flatten().min_by(|a, b| a.max_rel_error.total_cmp(&b.max_rel_error))
        }
    };
    match best {
        Some(e) if e.max_rel_error < constant_error => Decision::Network(e),
        Some(e) => Decision::Refused {
            reason: format!(
                "after passivity enforcement (sections scaled by {}) its Zc error {:.3} % is not below the constant port's {:.3} %",
                scales_text(&e.scales),
                100.0 * e.max_rel_error,
                100.0 * constant_error
            ),
            best: Some(e),
        },
        None => Decision::Refused {
            reason: format!(
                "no scale of its RC sections keeps every line passive with a margin of {SAFETY} and passes the core's load-time check (the loss filters take out too little)"
            ),
            best: None,
        },
    }
}

/// The sections' scales as text: "1.000 1.000 0.950 0.412" (by increasing time constant).
pub fn scales_text(scales: &[f64]) -> String {
    scales.iter().map(|x| format!("{x:.3}")).collect::<Vec<_>>().join(" ")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn realised_zc_is_the_fit_at_the_bilinear_frequency() {
        // Z_inf 100 Ω + 20 Ω with τ = 50 samples, at 100 MS/s: the Q30 realisation is the
        // fitted function at s = j·(2/T)·tan(ωT/2) to the rounding of Z_p (1 mΩ).
        let fs = 100e6;
        let fit = ZcFit { z_inf: 100.0, sections: vec![(20.0, 50.0 / fs), (5.0, 3.0 / fs)], ..ZcFit::default() };
        let (net, zp) = realise(fit.z_inf, &fit.sections, 1.0 / fs, 30).unwrap();
        assert_eq!(net.sections, 2);
        for f in [1e3, 1e5, 1e6, 1e7, 4.9e7] {
            let (got, want) = (realised_zc(&net, zp, 30, f, fs), fit.at(f, fs));
            assert!((got - want).norm() < 2e-5 * want.norm(), "{f}: {got} vs {want}");
        }
        // DC: Z_inf + Σ R_i; Nyquist: Z_inf (the capacitors short the sections).
        assert!((realised_zc(&net, zp, 30, 0.0, fs).re - 125.0).abs() < 2e-3);
        assert!((realised_zc(&net, zp, 30, 0.5 * fs, fs).re - 100.0).abs() < 2e-3);
    }

    #[test]
    fn a_lossless_line_with_a_rising_zc_is_active_and_a_constant_port_is_not() {
        // No loss filter: |A| = 1, L = 0, so any Im Zc ≠ 0 makes the two-port active; a real
        // Zc leaves L = P = 0 everywhere (no margin to report, the lossless line is lossless).
        let fs = 100e6;
        let (net, zp) = realise(100.0, &[(20.0, 50.0 / fs)], 1.0 / fs, 30).unwrap();
        let line = LineView { delay: 10, loss: None };
        let (m, _) = line_margin(&|f| realised_zc(&net, zp, 30, f, fs), &line, fs, 30);
        assert!(m < -0.99, "{m}");
        let (m, _) = line_margin(&|_| Complex64::new(100.0, 0.0), &line, fs, 30);
        assert!(m.is_infinite(), "{m}");
    }

    #[test]
    fn a_run_no_scale_can_make_passive_gets_no_network() {
        // A lossy cable's fit on a line without an arrival filter (|A| = 1): any section
        // makes it active, and with every section scaled away nothing of the network is
        // left, so the run keeps its constant port and says why.
        let c = crate::plant::presets::find("cat5e").unwrap();
        let fs = 100e6;
        let fit = super::super::zc::fit(&c, fs, super::super::zc::band(fs, 4e-6)).unwrap();
        let lines = [LineView { delay: 10, loss: None }];
        let (e0, d) = enforce(&c, &fit, &lines, c.z0, fs, 30);
        assert!(e0 > 0.1, "constant port error {e0}");
        match d {
            Decision::Refused { reason, best: None } => assert!(reason.contains("no scale"), "{reason}"),
            other => panic!("{other:?}"),
        }
    }
}

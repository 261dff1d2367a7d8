//! Exact oracles for every fixed-point operation of both profiles: each operation's result is
//! compared with the same formula evaluated in i128 (no overflow possible), over random
//! inputs covering the operation's whole documented range. This is the check that the
//! double-width arithmetic is exact where the docs say so, and that every outgoing quantity
//! is its exact value truncated toward zero, then saturated.

use proptest::prelude::*;
use tidewire_core::configure::quantize_loss_section;
use tidewire_core::profile::reciprocal;
use tidewire_core::{Narrow, Profile, Wide};

fn config() -> ProptestConfig {
    // `PROPTEST_CASES` (the soak command) raises the count.
    let cases = std::env::var("PROPTEST_CASES").ok().and_then(|c| c.parse().ok()).unwrap_or(2048);
    ProptestConfig { cases, ..ProptestConfig::default() }
}

/// Largest and smallest wave of profile P.
fn wave_range<P: Profile>() -> (i128, i128) {
    (P::wave_from_i32(i32::MIN).into() as i128, P::wave_from_i32(i32::MAX).into() as i128)
}

/// A wave from a uniform u32 spread over the profile's whole range.
fn wave<P: Profile>(u: u32) -> P::Wave {
    let (lo, hi) = wave_range::<P>();
    let span = (hi - lo + 1) as u128;
    P::wave_from_i32((lo + (u as u128 % span) as i128) as i32)
}

fn w<P: Profile>(x: P::Wave) -> i128 {
    x.into() as i128
}

/// floor(n / 2^f), saturated to the profile's wave range. Narrow clamps exactly. Wide (f >= 1)
/// clamps only the high word h = floor(n / 2^32) to [−2^(f−1), 2^(f−1)) and keeps the low
/// word's bits: h·2^(32−f) + floor((n mod 2^32) / 2^f) (`floor_sat64`), which is the floor
/// wherever the floor fits an i32; where it does not, `sat_is_toward_zero` below checks
/// what the docs claim of it.
fn floor_sat<P: Profile>(n: i128, f: u32) -> i128 {
    let (lo, hi) = wave_range::<P>();
    if P::EXACT_NODE || f == 0 {
        return n.div_euclid(1i128 << f).clamp(lo, hi);
    }
    let lim = 1i128 << (f - 1);
    let h = n.div_euclid(1i128 << 32).clamp(-lim, lim - 1);
    h * (1i128 << (32 - f)) + n.rem_euclid(1i128 << 32) / (1i128 << f)
}

/// trunc(n / 2^f) toward zero, then saturated as in [`floor_sat`]: the floor of n biased by
/// 2^f − 1 where n < 0.
fn trunc_sat<P: Profile>(n: i128, f: u32) -> i128 {
    floor_sat::<P>(if n < 0 { n + (1i128 << f) - 1 } else { n }, f)
}

/// What the wide saturation promises where the quotient q does not fit: the same sign, no
/// larger magnitude (the passive bound), and within 2^(32−f) of the i32 limit.
fn sat_is_toward_zero(n: i128, f: u32) -> Result<(), TestCaseError> {
    let q = n.div_euclid(1i128 << f);
    let got = floor_sat::<Wide>(n, f);
    let limit = q.clamp(i32::MIN as i128, i32::MAX as i128);
    if q == limit {
        prop_assert_eq!(got, q);
    } else {
        prop_assert!(got.signum() == q.signum() && got.abs() <= q.abs(), "q {} got {}", q, got);
        prop_assert!((got - limit).abs() < (1i128 << (32 - f)), "q {} got {}", q, got);
        prop_assert!(got >= i32::MIN as i128 && got <= i32::MAX as i128);
    }
    Ok(())
}

fn check_series<P: Profile>(u1: u32, u2: u32, c: u64) -> Result<(), TestCaseError> {
    let c = (c % ((1u64 << P::SERIES_FRAC) + 1)) as u32;
    let (b1, b2) = (wave::<P>(u1), wave::<P>(u2));
    let (a1, a2) = P::series(b1, b2, c);
    let x = w::<P>(b1) - w::<P>(b2);
    let f = P::SERIES_FRAC;
    prop_assert_eq!(w::<P>(a1), trunc_sat::<P>((w::<P>(b1) << f) - c as i128 * x, f));
    prop_assert_eq!(w::<P>(a2), trunc_sat::<P>((w::<P>(b2) << f) + c as i128 * x, f));
    // Energy [closed form]: a1² + a2² = b1² + b2² − 2y·(x − y) for a1 = b1 − y, a2 = b2 + y,
    // <= b1² + b2² for y = c·x (0 <= c <= 1), and truncation only lowers each |a|.
    let sq = |v: P::Wave| w::<P>(v) * w::<P>(v);
    prop_assert!(sq(a1) + sq(a2) <= sq(b1) + sq(b2));
    Ok(())
}

fn check_series_l<P: Profile>(u: [u32; 3], c: u64, rho: u64) -> Result<(), TestCaseError> {
    let one = 1u64 << P::CHOKE_FRAC;
    let c = c % (one + 1);
    let rho = rho % (one - c + 1); // c + rho <= 1
    let (b1, b2, s) = (wave::<P>(u[0]), wave::<P>(u[1]), wave::<P>(u[2]));
    let (a1, a2, s2) = P::series_l(b1, b2, s, c as u32, rho as u32);
    let f = P::CHOKE_FRAC;
    let y = c as i128 * (w::<P>(b1) - w::<P>(b2)) + rho as i128 * w::<P>(s);
    prop_assert_eq!(w::<P>(a1), trunc_sat::<P>((w::<P>(b1) << f) - y, f));
    prop_assert_eq!(w::<P>(a2), trunc_sat::<P>((w::<P>(b2) << f) + y, f));
    prop_assert_eq!(w::<P>(s2), trunc_sat::<P>(2 * y - (w::<P>(s) << f), f));
    // Energy [closed form], with the state's weight ρ/(2c) against the lines' 1 (the inductor
    // port R_L holds b_L²/R_L = s²·R_L/(4Z) with s = −(2Z/R_L)·b_L, and ρ/(2c) = R_L/(4Z)):
    // for outputs b1 − y, b2 + y, 2y − s the change is (2/c)·((c + ρ)·y² − y·y_e), y_e the
    // exact y, <= 0 at y = y_e (c + ρ <= 1); truncating each output toward zero only lowers it.
    // Times 2c (integers): 2c·(a1² + a2²) + ρ·s'² <= 2c·(b1² + b2²) + ρ·s².
    let sq = |v: P::Wave| w::<P>(v) * w::<P>(v);
    let (ci, ri) = (c as i128, rho as i128);
    prop_assert!(2 * ci * (sq(a1) + sq(a2)) + ri * sq(s2) <= 2 * ci * (sq(b1) + sq(b2)) + ri * sq(s));
    Ok(())
}

fn check_adapt<P: Profile>(u1: u32, u2: u32, mu: u64, negate: bool) -> Result<(), TestCaseError> {
    let mu = (mu % ((1u64 << P::SERIES_FRAC) + 1)) as u32;
    let (b, a) = (wave::<P>(u1), wave::<P>(u2));
    let got = P::adapt(b, a, mu, negate);
    let f = P::SERIES_FRAC;
    let m = ((w::<P>(b) << f) + mu as i128 * (w::<P>(a) - w::<P>(b))) / (1i128 << f);
    let (lo, hi) = wave_range::<P>();
    prop_assert_eq!(w::<P>(got), (if negate { -m } else { m }).clamp(lo, hi));
    // Energy [closed form]: the element (reactance of port resistance R_p behind R_s, node
    // port R_1 = R_p + R_s, μ = R_p/R_1) stores b²/R_p and receives (a² − b²)/R_1, so it is
    // passive iff b'² <= (1 − μ)·b² + μ·a²; the exact b' = (1 − μ)·b + μ·a meets it by
    // convexity, and truncation only lowers |b'|. Times 2^f: 2^f·b'² <= (2^f − μ)·b² + μ·a².
    let sq = |v: P::Wave| w::<P>(v) * w::<P>(v);
    let one = 1i128 << f;
    prop_assert!(one * sq(got) <= (one - mu as i128) * sq(b) + mu as i128 * sq(a));
    Ok(())
}

fn check_loss<P: Profile>(pole: u32, zero_frac: f64, u: [u32; 4]) -> Result<(), TestCaseError> {
    let pole = pole % (1 << 30);
    let zero = ((pole as f64) * (2.0 * zero_frac - 1.0)) as i32;
    let Some((g, gb, a)) = quantize_loss_section::<P>(pole, zero) else {
        return Ok(()); // refused by the loader; not an input of the per-sample path
    };
    // The quantization is DC-exact: g − gb = one − a.
    let f = P::LOSS_FRAC;
    prop_assert_eq!(i128::from(g) - i128::from(gb), (1i128 << f) - i128::from(a));
    let (x, x1, y1) = (wave::<P>(u[0]), wave::<P>(u[1]), wave::<P>(u[2]));
    // The residue, anywhere in its range [0, 2^f).
    let r1 = P::wave_from_i32((u[3] % (1u32 << f)) as i32);
    let (y, r) = P::loss_section(x, x1, y1, r1, g, gb, a);
    // The exact output minus the input plus the residue, floored; the remainder is the new
    // residue; the floor added back to the input, saturated.
    let d = g as i128 * w::<P>(x) - gb as i128 * w::<P>(x1) + a as i128 * w::<P>(y1) - (w::<P>(x) << f) + w::<P>(r1);
    let q = d.div_euclid(1i128 << f);
    prop_assert_eq!(w::<P>(y), floor_sat::<P>((w::<P>(x) + q) << f, f));
    prop_assert_eq!(w::<P>(r), d.rem_euclid(1i128 << f));
    Ok(())
}

/// The fractional-delay lattice over its whole accepted coefficient range (|a| <= 1/2,
/// 0 < c, a² + c² <= 1 at `LOSS_FRAC` bits, c taken anywhere up to the norm's limit) and
/// any waves: y = trunc(a·x + c·s), s' = trunc(c·x − a·s), each then saturated; and the
/// energy inequality the crate docs argue, y² + s'² <= x² + s², checked in i128.
fn check_allpass<P: Profile>(au: u32, cu: u32, u: [u32; 2]) -> Result<(), TestCaseError> {
    let one = 1i128 << P::LOSS_FRAC;
    let a = (au as i128 % (one + 1)) - one / 2; // in [−1/2, 1/2]
    let c_max = ((one * one - a * a) as f64).sqrt() as i128;
    let c_max = (c_max - 2..=c_max + 2).filter(|c| a * a + c * c <= one * one).max().unwrap_or(0);
    let c = 1 + cu as i128 % c_max; // in [1, c_max]
    let (x, st) = (wave::<P>(u[0]), wave::<P>(u[1]));
    let (y, s2) = P::allpass(x, st, a as i32, c as u32);
    let f = P::LOSS_FRAC;
    prop_assert_eq!(w::<P>(y), trunc_sat::<P>(a * w::<P>(x) + c * w::<P>(st), f));
    prop_assert_eq!(w::<P>(s2), trunc_sat::<P>(c * w::<P>(x) - a * w::<P>(st), f));
    let (xi, si, yi, s2i) = (w::<P>(x), w::<P>(st), w::<P>(y), w::<P>(s2));
    prop_assert!(yi * yi + s2i * s2i <= xi * xi + si * si, "energy grew: a {} c {} x {} s {}", a, c, xi, si);
    Ok(())
}

/// A Zc(s) end over its whole accepted coefficient range (0 < k < 1, ρ > 0, Σ ρ < 1 at
/// `LOSS_FRAC` bits) and any waves and states: the pre-step c = trunc(Σ k_i·s_i), b_p =
/// sat(b + c), and the post-step s_i' = trunc((2k_i − 1)·s_i + ρ_i·(a_p − b_p)), a =
/// sat(a_p + c), each one exact sum truncated toward zero and saturated, in i128.
fn check_zc<P: Profile>(ku: [u32; 4], ru: [u32; 4], n: usize, u: [u32; 6]) -> Result<(), TestCaseError> {
    use tidewire_core::MAX_ZC_SECTIONS;
    let one = 1i128 << P::LOSS_FRAC;
    let n = 1 + n % MAX_ZC_SECTIONS;
    let mut k = [0u32; MAX_ZC_SECTIONS];
    let mut pole = [0i32; MAX_ZC_SECTIONS];
    let mut rho = [0u32; MAX_ZC_SECTIONS];
    let mut left = one - 1; // Σ ρ < one
    for i in 0..n {
        let ki = 1 + ku[i] as i128 % (one - 1); // in [1, one − 1]
        k[i] = ki as u32;
        pole[i] = (2 * ki - one) as i32;
        let ri = if left > (n - i) as i128 { 1 + ru[i] as i128 % (left - (n - i - 1) as i128) } else { 1 };
        left -= ri;
        rho[i] = ri as u32;
    }
    let mut s = [P::ZERO; MAX_ZC_SECTIONS];
    for i in 0..MAX_ZC_SECTIONS {
        s[i] = wave::<P>(u[i]);
    }
    let (b, ap) = (wave::<P>(u[4]), wave::<P>(u[5]));
    let (c, bp) = P::zc_pre(b, &s, &k, n);
    let sum: i128 = (0..n).map(|i| k[i] as i128 * w::<P>(s[i])).sum();
    prop_assert_eq!(w::<P>(c), trunc_sat::<P>(sum, P::LOSS_FRAC));
    prop_assert_eq!(w::<P>(bp), trunc_sat::<P>(w::<P>(b) + w::<P>(c), 0));
    let before = s;
    let out = P::zc_post(ap, bp, c, &mut s, &pole, &rho, n);
    for i in 0..MAX_ZC_SECTIONS {
        let want = if i < n {
            trunc_sat::<P>(
                pole[i] as i128 * w::<P>(before[i]) + rho[i] as i128 * (w::<P>(ap) - w::<P>(bp)),
                P::LOSS_FRAC,
            )
        } else {
            w::<P>(before[i]) // sections not in use are left alone
        };
        prop_assert_eq!(w::<P>(s[i]), want, "section {}", i);
    }
    prop_assert_eq!(w::<P>(out), trunc_sat::<P>(w::<P>(ap) + w::<P>(c), 0));
    // With d = 0 (an open end) a section's state shrinks strictly: |2k − 1| < 1.
    let mut s0 = before;
    let _ = P::zc_post(bp, bp, c, &mut s0, &pole, &rho, n);
    for i in 0..n {
        prop_assert!(w::<P>(s0[i]).abs() < w::<P>(before[i]).abs() || before[i] == P::ZERO);
    }
    Ok(())
}

/// A node: up to 8 ports, weights with Σ g + g_src <= 2^WEIGHT_BITS, a total between that sum
/// and `TOTAL_MAX` (a shunt of any strength), any waves and source EMF.
///
/// The node rule (`Profile::node_scatter`) in i128; Wide runs the cheap rule: N = 2·Σ g_k·b_k + g_src·e, q formed from
/// |N| and the reciprocal as two floored partial products and capped at 2^31 − 1,
/// v' = sign(N)·(q + ε), s = sat(floor(v') − b_k) and a_k = s + [s < 0, N != 0]; Narrow the
/// exact node (v' = v, the same per-port formula with its exact floor and fraction). Checked as well, against the exact v = N/total: q < |v|
/// (what passivity needs), q >= |v| − 3 (what accuracy needs), and the node identity: the
/// ports' outgoing energy is at most the incoming Σ g·b² + g_src·e²/4,
/// strictly below it when N != 0 and e = 0.
fn check_node<P: Profile>(
    ports: &[(u32, u32)],
    src: (u32, u32),
    shunt: u64,
    strong: bool,
) -> Result<(), TestCaseError> {
    let budget = 1u64 << P::WEIGHT_BITS;
    let n = ports.len() as u64 + 1;
    // Weights split the budget among ports and source at random, each >= 1.
    let share = (budget / n).max(1);
    let g: Vec<u32> = ports.iter().map(|(gu, _)| (1 + *gu as u64 % share) as u32).collect();
    let g_src = (src.0 as u64 % share) as u32;
    let sum: u64 = g.iter().map(|x| *x as u64).sum::<u64>() + g_src as u64;
    prop_assume!(sum >= 2);
    let extra = if strong { shunt % (P::TOTAL_MAX - sum + 1) } else { shunt % (4 * sum) };
    let total = (sum + extra).min(P::TOTAL_MAX);
    let Some((r, s)) = reciprocal(total, P::RECIP_BITS, !P::EXACT_NODE) else {
        return Err(TestCaseError::fail("no reciprocal"));
    };
    let b: Vec<P::Wave> = ports.iter().map(|(_, bu)| wave::<P>(*bu)).collect();
    let e = wave::<P>(src.1);
    let mut a = vec![P::ZERO; b.len()];
    P::node_scatter(&b, &g, &mut a, e, g_src, r, s, total);
    let num: i128 =
        2 * b.iter().zip(&g).map(|(b, g)| w::<P>(*b) * *g as i128).sum::<i128>() + g_src as i128 * w::<P>(e);
    let (lo, hi) = wave_range::<P>();
    // Wide's split product (`quotient64`: two 32x32 products), in u128.
    let (mag, r128) = (num.unsigned_abs(), r as u128);
    let bits = P::RECIP_BITS;
    let x = (mag >> bits) * r128 + (((mag & ((1u128 << bits) - 1)) * r128) >> bits);
    let q = (x >> s) as i128;
    let t = total as i128;
    if num != 0 && !P::EXACT_NODE {
        prop_assert!(q * t < num.abs(), "q {} not below |v| = {}/{}", q, num, t);
        prop_assert!((q + 3) * t >= num.abs(), "q {} more than 3 below |v| = {}/{}", q, num, t);
    }
    // Wide: the cap (a smaller |v'| is as passive), v' = sign(N)·(q + ε). Narrow: the exact
    // node, v' = v (floor and "remainder nonzero" of |N|/total). Then floor(v') and whether
    // v' has a fraction.
    let (q, f) = if !P::EXACT_NODE {
        (q.min(i32::MAX as i128), (num != 0) as i128)
    } else {
        (num.abs() / t, (num.abs() % t != 0) as i128)
    };
    let (fl, nz) = match num.signum() {
        0 => (0, 0),
        1 => (q, f),
        _ => (-q - f, f),
    };
    let cheap: Vec<i128> = b
        .iter()
        .map(|bk| {
            // `Acc::port`: Wide saturates, then truncates toward zero; Narrow the other way.
            let m = fl - w::<P>(*bk);
            if P::EXACT_NODE {
                (m + ((m < 0) as i128 & nz)).clamp(lo, hi)
            } else {
                let s = m.clamp(lo, hi);
                s + ((s < 0) as i128 & nz)
            }
        })
        .collect();
    for (k, c) in cheap.iter().enumerate() {
        prop_assert_eq!(w::<P>(a[k]), *c, "port {} of {:?}, g {:?}, total {}", k, b, g, total);
    }
    // The node identity, in units of 1/4 (the source's incident wave is e/2).
    let e2 = w::<P>(e);
    let incoming: i128 =
        4 * b.iter().zip(&g).map(|(b, g)| *g as i128 * w::<P>(*b).pow(2)).sum::<i128>() + g_src as i128 * e2 * e2;
    let outgoing: i128 = 4 * cheap.iter().zip(&g).map(|(a, g)| *g as i128 * a * a).sum::<i128>();
    prop_assert!(outgoing <= incoming, "node energy grew: {} > {}", outgoing, incoming);
    if num != 0 && e2 == 0 && !P::EXACT_NODE {
        prop_assert!(outgoing < incoming, "a Wide node with N != 0 lost nothing");
    }
    Ok(())
}

fn check_codes<P: Profile>(code: i16, u: u32, u2: u32, shift: u8) -> Result<(), TestCaseError> {
    let shift = (shift % (P::MAX_IO_SHIFT + 1)) as u32;
    let (lo, hi) = wave_range::<P>();
    prop_assert_eq!(w::<P>(P::from_code(code, shift)), ((code as i128) << shift).clamp(lo, hi));
    let x = u as i32;
    let want = (x as i128 / (1i128 << shift)).clamp(i16::MIN as i128, i16::MAX as i128);
    if P::MAX_IO_SHIFT > 0 || shift == 0 {
        prop_assert_eq!(P::to_code(x, shift) as i128, want);
    }
    let (a, b) = (wave::<P>(u), wave::<P>(u2));
    let i32r = |v: i128| v.clamp(i32::MIN as i128, i32::MAX as i128);
    prop_assert_eq!(P::sum(a, b) as i128, i32r(w::<P>(a) + w::<P>(b)));
    prop_assert_eq!(P::diff(a, b) as i128, i32r(w::<P>(a) - w::<P>(b)));
    prop_assert_eq!(w::<P>(P::sub(a, b)), (w::<P>(a) - w::<P>(b)).clamp(lo, hi));
    prop_assert_eq!(w::<P>(P::neg(a)), (-w::<P>(a)).clamp(lo, hi));
    let x = u as i32;
    prop_assert_eq!(w::<P>(P::wave_from_i32(x)), (x as i128).clamp(lo, hi));
    Ok(())
}

/// Ports (weight, wave), source (weight, EMF), shunt weight, strong shunt.
type NodeInputs = (Vec<(u32, u32)>, (u32, u32), u64, bool);

fn node_inputs() -> impl Strategy<Value = NodeInputs> {
    (
        proptest::collection::vec((any::<u32>(), any::<u32>()), 1..9),
        (any::<u32>(), any::<u32>()),
        any::<u64>(),
        any::<bool>(),
    )
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn wide_saturation_is_toward_zero(n: i64, big in any::<bool>(), f in 29u32..=30) {
        // Half the cases near the edge of the range, where the quotient does not fit.
        let n = if big { n } else { n >> 24 };
        sat_is_toward_zero(n as i128, f)?;
    }

    #[test]
    fn series_is_exact_then_truncated(u1: u32, u2: u32, c: u64) {
        check_series::<Wide>(u1, u2, c)?;
        check_series::<Narrow>(u1, u2, c)?;
    }

    #[test]
    fn series_inductor_is_exact_then_truncated(u: [u32; 3], c: u64, rho: u64) {
        check_series_l::<Wide>(u, c, rho)?;
        check_series_l::<Narrow>(u, c, rho)?;
    }

    #[test]
    fn element_adaptor_is_exact_then_truncated(u1: u32, u2: u32, mu: u64, negate: bool) {
        check_adapt::<Wide>(u1, u2, mu, negate)?;
        check_adapt::<Narrow>(u1, u2, mu, negate)?;
    }

    #[test]
    fn loss_section_is_exact_then_floored_with_its_residue_fed_back(pole: u32, zero_frac in 0.0f64..1.0, u: [u32; 4]) {
        check_loss::<Wide>(pole, zero_frac, u)?;
        check_loss::<Narrow>(pole, zero_frac, u)?;
    }

    #[test]
    fn allpass_is_exact_then_truncated_and_passive(au: u32, cu: u32, u: [u32; 2]) {
        check_allpass::<Wide>(au, cu, u)?;
        check_allpass::<Narrow>(au, cu, u)?;
    }

    #[test]
        fn zc_end_is_exact_then_truncated(ku: [u32; 4], ru: [u32; 4], n in 0usize..4, u: [u32; 6]) {
        check_zc::<Wide>(ku, ru, n, u)?;
        check_zc::<Narrow>(ku, ru, n, u)?;
    }

    #[test]
    fn node_is_the_cheap_rule_and_passive((ports, src, shunt, strong) in node_inputs()) {
        check_node::<Wide>(&ports, src, shunt, strong)?;
        check_node::<Narrow>(&ports, src, shunt, strong)?;
    }

    #[test]
    fn codes_and_sums_are_exact_then_saturated(code: i16, u: u32, u2: u32, shift: u8) {
        check_codes::<Wide>(code, u, u2, shift)?;
        check_codes::<Narrow>(code, u, u2, shift)?;
    }

    #[test]
    fn reciprocal_is_rounded_down_and_normalized(t in 2u64..u64::MAX) {
        for (bits, strict) in [(16u32, false), (32, true)] {
            let (r, s) = reciprocal(t, bits, strict).unwrap();
            if r == 0 {
                prop_assert_eq!(s, 0);
                continue;
            }
            let p = bits + s;
            prop_assert!(r >> (bits - 1) == 1);
            let (rt, one) = ((r as u128) * (t as u128), 1u128 << p);
            if strict {
                // r·t < 2^p <= (r + 1)·t: strictly below 2^p/t, and the largest such r.
                prop_assert!(rt < one && rt + t as u128 >= one);
            } else {
                // r <= 2^p/t < r + 1
                prop_assert!(rt <= one && rt + t as u128 > one);
            }
        }
    }
}

/// The series branch's three stages (`branch_open`, `branch_series`, `branch_node`) against
/// their formulas in i128, over the whole documented range: node weights with the link port
/// 2G <= 2^WEIGHT_BITS, port numbers n_a, n_b, n_l, n_r <= 2^(WEIGHT_BITS − 1),
/// n <= 2^WEIGHT_BITS, waves anywhere in the profile's range (extremes included).
fn check_branch<P: Profile>(us: [u32; 8], gs: [u32; 3], ns: [u32; 4], pick: u32) -> Result<(), TestCaseError> {
    let wb = P::WEIGHT_BITS;
    let half = 1u64 << (wb - 1);
    // Extremes (the wave range's ends) for a quarter of the cases.
    let ext = |u: u32| {
        if pick.is_multiple_of(4) {
            if u.is_multiple_of(2) {
                P::wave_from_i32(i32::MIN)
            } else {
                P::wave_from_i32(i32::MAX)
            }
        } else {
            wave::<P>(u)
        }
    };
    let b: Vec<P::Wave> = us[..3].iter().map(|u| ext(*u)).collect();
    let e = ext(us[3]);
    // Port weights g_k >= 1 and g_src with Σ <= G <= 2^(WB − 1).
    let g: Vec<u32> = gs.iter().map(|x| 1 + (*x as u64 % (half / 4)) as u32).collect();
    let g_src = (us[4] as u64 % (half / 4)) as u32;
    let sum = g.iter().map(|x| *x as u64).sum::<u64>() + g_src as u64;
    let big = pick.is_multiple_of(3); // G at its largest for a third of the cases
    let gg = if big { half } else { sum + (us[5] as u64 % (half - sum + 1)) };
    let total = 2 * gg;
    let (r, s) = reciprocal(total, P::RECIP_BITS, false).unwrap();
    let num: i128 =
        2 * b.iter().zip(&g).map(|(b, g)| w::<P>(*b) * *g as i128).sum::<i128>() + g_src as i128 * w::<P>(e);
    let (lo, hi) = wave_range::<P>();
    // Stage 1: w = trunc(num/total), saturated.
    let got = P::branch_open(&b, &g, e, g_src, r, s, total);
    prop_assert_eq!(w::<P>(got), (num / total as i128).clamp(lo, hi));
    // Stage 3 with a link wave.
    let link_r = ext(us[6]);
    let mut a = vec![P::ZERO; 3];
    P::branch_node(&b, &g, &mut a, e, g_src, gg as u32, link_r, r, s, total);
    let num3 = num + 2 * gg as i128 * w::<P>(link_r);
    for (ak, bk) in a.iter().zip(&b) {
        let want = ((num3 - w::<P>(*bk) * total as i128) / total as i128).clamp(lo, hi);
        prop_assert_eq!(w::<P>(*ak), want);
    }
    // The linked node's exact identity (lines, source at e/2, link port of weight G at r) in
    // units of 1/4: the lines never receive more than it brings in.
    let e2 = w::<P>(e);
    let incoming: i128 = 4 * b.iter().zip(&g).map(|(b, g)| *g as i128 * w::<P>(*b).pow(2)).sum::<i128>()
        + g_src as i128 * e2 * e2
        + 4 * gg as i128 * w::<P>(link_r).pow(2);
    let outgoing: i128 = 4 * a.iter().zip(&g).map(|(a, g)| *g as i128 * w::<P>(*a).pow(2)).sum::<i128>();
    prop_assert!(outgoing <= incoming, "linked node energy grew: {} > {}", outgoing, incoming);
    // Stage 2: port numbers within the budget, n = Σ with the resistor's.
    // n_a at its largest in the big cases (the quotient then reaches 5/2 of the wave range).
    let na = if big { half } else { 1 + ns[0] as u64 % half };
    let nb = 1 + ns[1] as u64 % (half - na / 2);
    let nl = (ns[2] as u64 % (half + 1)).min((1u64 << wb) - na - nb);
    let nk = [na, nb, nl];
    let nr = (ns[3] as u64 % (half + 1)).min((1u64 << wb) - na - nb - nl);
    let n = na + nb + nl + nr;
    let (rn, sn) = reciprocal(n, P::RECIP_BITS, false).unwrap();
    let (wa, wbv, st) = (ext(us[0]), ext(us[6]), ext(us[7]));
    let (ra, rb, al) = P::branch_series(wa, wbv, st, nk[0] as u32, nk[1] as u32, nk[2] as u32, rn, sn, n as u32);
    let x = w::<P>(wa) - w::<P>(wbv) - w::<P>(st);
    let n = n as i128;
    let out = |v: P::Wave, k: u64, sign: i128| ((w::<P>(v) * n + sign * 2 * k as i128 * x) / n).clamp(lo, hi);
    prop_assert_eq!(w::<P>(ra), out(wa, nk[0], -1));
    prop_assert_eq!(w::<P>(rb), out(wbv, nk[1], 1));
    prop_assert_eq!(w::<P>(al), out(st, nk[2], 1));
    Ok(())
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn series_branch_stages_are_their_exact_values_truncated(
        us in any::<[u32; 8]>(), gs in any::<[u32; 3]>(), ns in any::<[u32; 4]>(), pick in any::<u32>(),
    ) {
        check_branch::<Wide>(us, gs, ns, pick)?;
        check_branch::<Narrow>(us, gs, ns, pick)?;
    }
}

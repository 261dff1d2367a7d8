//! Unit tests of the profiles' arithmetic (the i128 oracles are in `core/tests/oracle.rs`).
extern crate std;
use super::*;
use std::{vec, vec::Vec};

#[test]
fn reciprocal_is_rounded_down_and_normalized() {
    for &t in &[2u64, 3, 5, 7, 1000, 1 << 20, (1 << 30) + 12345, u64::MAX / 3] {
        for (bits, strict) in [(16u32, false), (32, true), (16, true), (32, false)] {
            let (r, s) = reciprocal(t, bits, strict).unwrap();
            if r == 0 {
                continue;
            }
            assert!(r >> (bits - 1) == 1, "normalized: t={t} bits={bits} r={r}");
            let p = bits + s;
            let (rt, one) = ((r as u128) * (t as u128), 1u128 << p);
            if strict {
                // r·t < 2^p <= (r + 1)·t: below 2^p/t strictly, and the largest such r.
                assert!(rt < one && rt + t as u128 >= one, "strict t={t} bits={bits}");
            } else {
                // r <= 2^p/t < r + 1
                assert!(rt <= one && rt + t as u128 > one, "floor t={t} bits={bits}");
            }
        }
    }
    assert_eq!(reciprocal(1, 32, true), None);
}

/// The 64-bit shortcut of the reciprocal's division gives the 128-bit quotient, on both sides
/// of its boundary (p = 63 in 64 bits, p = 64 in 128).
#[test]
fn division_in_64_bits_is_the_128_bit_quotient() {
    for p in [1u32, 31, 32, 62, 63, 64, 65, 93] {
        for t in [2u64, 3, 7, 1000, 12345, (1 << 30) - 1, (1 << 31) + 1, u64::MAX >> 1, u64::MAX] {
            for strict in [false, true] {
                let want = ((1u128 << p) - u128::from(strict)) / u128::from(t);
                assert_eq!(div_pow2(p, strict, t), Some(want), "p={p} t={t} strict={strict}");
            }
        }
    }
}

/// q as the profile's split product forms it (`quotient64`, `floor_div32`'s estimate), in u128.
fn split_quotient(mag: u128, r: u32, s: u32, bits: u32) -> i128 {
    let r = r as u128;
    let x = (mag >> bits) * r + (((mag & ((1 << bits) - 1)) * r) >> bits);
    (x >> s) as i128
}

/// A node case: incoming waves, their weights, source EMF, source weight, total weight.
type Case<'a, W> = (&'a [W], &'a [u32], W, u32, u64);

/// Reference of the node rule in i128: Wide, q as the split product forms it, capped at
/// 2^31 − 1, v' = sign(N)·(q + ε); Narrow, v' = v exactly; s = sat(floor(v') − b_k),
/// a_k = s + [s < 0 and v' has a fraction].
/// Also checks 0 <= q < |v| for N != 0, the one property the rule's passivity rests on.
fn cheap_node(b: &[i64], g: &[u64], e: i64, gs: u64, total: u64, bits: u32, range: (i64, i64)) -> Vec<i64> {
    let (lo, hi) = range;
    let (r, s) = reciprocal(total, bits, bits == 32).unwrap();
    let num: i128 = 2 * b.iter().zip(g).map(|(b, g)| *b as i128 * *g as i128).sum::<i128>() + gs as i128 * e as i128;
    let q = split_quotient(num.unsigned_abs(), r, s, bits);
    if num != 0 && bits == 32 {
        assert!(q * (total as i128) < num.abs(), "q {q} not below |v| = {num}/{total}");
    }
    // Wide: the cheap rule (v' = sign(N)·(q + ε), q capped); Narrow: the exact node
    // (floor and "remainder nonzero" of |N|/total).
    let (q, f) = if bits == 32 {
        // Wide
        (q.min(i32::MAX as i128), (num != 0) as i128)
    } else {
        (num.abs() / total as i128, (num.abs() % total as i128 != 0) as i128)
    };
    let (fl, nz) = match num.signum() {
        0 => (0, 0),
        1 => (q, f),
        _ => (-q - f, f),
    };
    b.iter()
        .map(|bk| {
            let m = fl - *bk as i128;
            let a = if bits == 32 {
                let s = m.clamp(lo as i128, hi as i128); // Wide: saturate, then truncate
                s + ((s < 0) as i128 & nz)
            } else {
                (m + ((m < 0) as i128 & nz)).clamp(lo as i128, hi as i128)
            };
            a as i64
        })
        .collect()
}

#[test]
fn node_scatter_is_the_cheap_rule() {
    let cases: &[Case<i32>] = &[
        (&[1000, -999], &[3, 5], 0, 0, 8),
        (&[i32::MAX, i32::MAX], &[1 << 29, 1 << 29], 0, 0, 1 << 30),
        (&[i32::MIN, i32::MAX, -5], &[1 << 28, 1 << 28, 1 << 28], 0, 0, 3 << 28),
        (&[-7, 13, 2], &[1234567, 7654321, 99], 5, 77, 1234567 + 7654321 + 99 + 77 + 1000),
        (&[1], &[3], 0, 3, 9),
        (&[123456789], &[1000], 0, 0, 1 << 61),
        (&[4, -4], &[2, 2], 0, 0, 4),
    ];
    for &(b, g, e, gs, total) in cases {
        let (r, s) = reciprocal(total, 32, true).unwrap();
        let mut a = vec![0i32; b.len()];
        Wide::node_scatter(b, g, &mut a, e, gs, r, s, total);
        let b64: Vec<i64> = b.iter().map(|x| *x as i64).collect();
        let g64: Vec<u64> = g.iter().map(|x| *x as u64).collect();
        let want = cheap_node(&b64, &g64, e as i64, gs as u64, total, 32, (i32::MIN as i64, i32::MAX as i64));
        assert_eq!(a.iter().map(|x| *x as i64).collect::<Vec<_>>(), want, "case {b:?} {g:?} total {total}");
    }
    // The exact node voltage 2 (v = 2·(3·3)/9) is an integer; v' is just below it, so the
    // port that the exact rule gives exactly 2 − 3 = −1 gets trunc(−1 − ε) = −1 and the
    // exact 2 − 0 = 2 of a second port becomes trunc(2 − ε) = 1: the node loses energy.
    let (r, s) = reciprocal(9, 32, true).unwrap();
    let mut a = [0i32; 2];
    Wide::node_scatter(&[3, 0], &[3, 3], &mut a, 0, 0, r, s, 9);
    assert_eq!(a, [-1, 1]);
}

#[test]
fn narrow_node_scatter_is_the_exact_node() {
    let cases: &[Case<i16>] = &[
        (&[12000, -32768, 517], &[5000, 7000, 4000], 0, 0, 16001),
        (&[i16::MAX, i16::MIN], &[8000, 8000], 0, 0, 16000),
        (&[1], &[3], 0, 3, 9),
        (&[-3, 7], &[100, 200], 1000, 50, (1 << 30) - 1),
        (&[-5, 5], &[8, 8], 0, 0, 16),
    ];
    for &(b, g, e, gs, total) in cases {
        let (r, s) = reciprocal(total, 16, false).unwrap();
        let mut a = vec![0i16; b.len()];
        Narrow::node_scatter(b, g, &mut a, e, gs, r, s, total);
        let b64: Vec<i64> = b.iter().map(|x| *x as i64).collect();
        let g64: Vec<u64> = g.iter().map(|x| *x as u64).collect();
        let want = cheap_node(&b64, &g64, e as i64, gs as u64, total, 16, (i16::MIN as i64, i16::MAX as i64));
        assert_eq!(a.iter().map(|x| *x as i64).collect::<Vec<_>>(), want);
    }
}

#[test]
fn matched_load_reflects_at_most_two_lsb() {
    // One line of weight g into a shunt of the same weight: the exact v = b and a = 0; the
    // cheap rule's v' lies strictly between 0 and b, so a = trunc(v' − b) is 0 when
    // q = |b| − 1 (v' within one LSB of b) and never larger than |b| − q in magnitude,
    // with the sign of −b (a matched load never reflects with the wave's own sign).
    for g in [3u32, 1000, 123_456_789, (1 << 29) + 7] {
        let t = 2 * g as u64;
        let (r, s) = reciprocal(t, 32, true).unwrap();
        for b in [1i32, -1, 7, 1 << 20, -(1 << 30), i32::MAX, i32::MIN] {
            let mut a = [99i32];
            Wide::node_scatter(&[b], &[g], &mut a, 0, 0, r, s, t);
            assert!(a[0] == 0 || (a[0].signum() == -b.signum() && a[0].unsigned_abs() <= 2), "g {g} b {b}: {}", a[0]);
        }
    }
    for g in [3u32, 1000, 8191] {
        let t = 2 * g as u64;
        let (r, s) = reciprocal(t, 16, false).unwrap();
        for b in [1i16, -1, 7, 12345, i16::MIN, i16::MAX] {
            let mut a = [99i16];
            Narrow::node_scatter(&[b], &[g], &mut a, 0, 0, r, s, t);
            assert!(a[0] == 0 || (a[0].signum() == -b.signum() && a[0].unsigned_abs() <= 2), "g {g} b {b}: {}", a[0]);
        }
    }
}

#[test]
fn series_truncates_each_output_toward_zero() {
    // c = 1/2: a1 = trunc(b1 − x/2), a2 = trunc(b2 + x/2).
    let half = 1u32 << (Wide::SERIES_FRAC - 1);
    assert_eq!(Wide::series(3, 0, half), (1, 1)); // exact 1.5, 1.5
    assert_eq!(Wide::series(-3, 0, half), (-1, -1));
    assert_eq!(Wide::series(1, 0, half), (0, 0)); // exact 0.5, 0.5
    let half = 1u32 << (Narrow::SERIES_FRAC - 1);
    assert_eq!(Narrow::series(-3, 0, half), (-1, -1));
    assert_eq!(Narrow::series(i16::MAX, i16::MIN, 1 << Narrow::SERIES_FRAC), (i16::MIN, i16::MAX));
}

#[test]
fn one_compare_saturation_and_biased_shift_equal_their_definitions() {
    let mut t: i64 = 0x1234_5678_9abc_def1;
    let edges64 = [i64::MIN + 1, -(1 << 62), i32::MIN as i64 - 1, i32::MIN as i64, -1, 0, 1, i32::MAX as i64];
    for k in 0..20_000 {
        // xorshift64, then every magnitude from 2^0 to 2^62
        t ^= t << 13;
        t ^= t >> 7;
        t ^= t << 17;
        let n = if k < edges64.len() { edges64[k] } else { t >> (k % 63) };
        assert_eq!(sat64_to_i32(n), n.clamp(i32::MIN as i64, i32::MAX as i64) as i32, "{n}");
        let n32 = n as i32;
        // The ARMv6-M saturation (the one the M0 firmware runs) against the clamp.
        for x in [n32, n32 >> 14, n32 >> 16] {
            assert_eq!(sat_i16_masked(x), x.clamp(i16::MIN as i32, i16::MAX as i32) as i16, "{x}");
        }
        for f in [0u32, 13, 14, 31] {
            let want = (n32 as i128 / (1i128 << f)) as i32;
            assert_eq!(trunc_shr32(n32, f), want, "{n32} >> {f}");
        }
        for f in [13u32, 14, 29, 30] {
            let m = (n.unsigned_abs() >> f) as i64;
            let want = if n < 0 { -m } else { m };
            assert_eq!(trunc_shr64(n, f), want, "{n} >> {f}");
        }
    }
}

#[test]
fn masked_saturation_equals_the_clamp_near_the_limits() {
    // Every i32 within 2^17 of either i16 limit, of zero and of either i32 limit.
    let centres = [i16::MIN as i32, 0, i16::MAX as i32, i32::MIN + (1 << 17), i32::MAX - (1 << 17)];
    for c in centres {
        for d in -(1i32 << 17)..=(1 << 17) {
            let x = c.wrapping_add(d);
            let want = x.clamp(i16::MIN as i32, i16::MAX as i32) as i16;
            assert_eq!(sat_i16_masked(x), want, "{x}");
            // The veiled form the narrow node runs (its veil is 0 at run time).
            assert_eq!(sat_i16_hiding(x, |f| f | veil()), want, "{x}");
            assert_eq!(sat_i16_veiled(x, veil()), want, "{x}");
        }
    }
}

#[test]
fn codes_round_toward_zero_and_saturate() {
    assert_eq!(Wide::to_code(-4097, 12), -1);
    assert_eq!(Wide::to_code(4097, 12), 1);
    assert_eq!(Wide::to_code(i32::MAX, 0), i16::MAX);
    assert_eq!(Wide::from_code(-3, 12), -3 * 4096);
    assert_eq!(Narrow::to_code(70000, 0), i16::MAX);
    assert_eq!(Narrow::to_code(-17, 4), -1);
    assert_eq!(Narrow::to_code(-15, 4), 0);
    assert_eq!(Narrow::to_code(i16::MAX as i32 * 2, 4), 4095);
    assert_eq!(Narrow::from_code(-3, 4), -48);
    // A code beyond the 12-bit range saturates the wave instead of wrapping.
    assert_eq!(Narrow::from_code(i16::MAX, 4), i16::MAX);
    assert_eq!(Narrow::from_code(i16::MIN, 4), i16::MIN);
}

#[test]
fn the_shift_toward_zero_is_the_exact_quotient() {
    // Against i128 truncating division on the edges and a spread of values, every shift.
    let xs =
        [i32::MIN, i32::MIN + 1, -65537, -65536, -4097, -4096, -17, -16, -15, -1, 0, 1, 15, 16, 17, 4097, i32::MAX];
    for shift in 0..32u32 {
        for &x in
            xs.iter().chain((0..2000i64).map(|k| (k * 2_147_483 - 2_000_000_000) as i32).collect::<Vec<_>>().iter())
        {
            let want = (x as i128 / (1i128 << shift)) as i32;
            assert_eq!(trunc_shr32_dyn(x, shift), want, "{x} >> {shift}");
            assert_eq!(trunc_shr32(x, shift), want, "{x} >> {shift}");
        }
    }
}

//! Hostile frames against the rig-side decoder: random bytes, flipped bits, truncated,
//! oversized and wrong-version frames, bodies that are not requests, chunks out of order,
//! corrupt images. Every one must get an error reply, nothing may panic, and the running
//! plant must be untouched: a twin rig that never sees the hostile frames produces the same
//! DAC codes, probes and status sample after sample.
//!
//! `cargo test -p tidewire-link --test hostile` throws 2 000 frames (and the property tests
//! their cases); the soak, `cargo test --release -p tidewire-link --test hostile -- --ignored`,
//! throws 100 000.
mod common;

use common::*;
use proptest::prelude::*;
use tidewire_link::message::MAX_CHUNK;
use tidewire_link::{pack, LinkError, Reader, Reply, Request, MAX_FRAME, MAX_WIRE, NO_SEQ, PROTOCOL_VERSION};

/// xorshift64*: reproducible hostile input without a dependency.
struct Rng(u64);
impl Rng {
    fn next(&mut self) -> u64 {
        let mut x = self.0;
        x ^= x >> 12;
        x ^= x << 25;
        x ^= x >> 27;
        self.0 = x;
        x.wrapping_mul(0x2545_f491_4f6c_dd1d)
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n as u64) as usize
    }
    fn bytes(&mut self, n: usize) -> Vec<u8> {
        (0..n).map(|_| self.next() as u8).collect()
    }
}

/// A valid packed frame (no delimiter) around arbitrary body bytes.
fn framed(version: u8, seq: u16, body: &[u8]) -> Vec<u8> {
    use crc::{Crc, CRC_32_ISCSI};
    let mut raw = vec![version];
    raw.extend_from_slice(&seq.to_le_bytes());
    raw.extend_from_slice(body);
    let crc = Crc::<u32>::new(&CRC_32_ISCSI).checksum(&raw);
    raw.extend_from_slice(&crc.to_le_bytes());
    let mut out = vec![0u8; raw.len() + raw.len() / 254 + 2];
    let n = cobs::encode(&raw, &mut out);
    out.truncate(n);
    out
}

fn packed(req: &Request<'_>) -> Vec<u8> {
    let mut wire = [0u8; MAX_WIRE];
    let n = pack(PROTOCOL_VERSION, 77, req, &mut wire).expect("packs");
    wire[..n - 1].to_vec()
}

/// One hostile packed frame (never a valid request in the rig's present state).
fn hostile(rng: &mut Rng) -> Vec<u8> {
    let status = packed(&Request::Status);
    match rng.below(9) {
        // Random bytes (COBS may or may not accept them; the CRC will not).
        0 => {
            let n = 1 + rng.below(300);
            rng.bytes(n).into_iter().map(|b| b.max(1)).collect()
        }
        // A valid frame with one bit flipped.
        1 => {
            let mut f = packed(&Request::Schedule { at: 5000, action: tidewire_link::Action::Break { junction: 1 } });
            let i = rng.below(f.len());
            f[i] ^= 1 << rng.below(8);
            if f[i] == 0 {
                f[i] = 0x55;
            }
            f
        }
        // Truncated.
        2 => {
            let f = status.clone();
            f[..rng.below(f.len())].to_vec()
        }
        // Oversized: a valid CRC around a body longer than a frame may be.
        3 => {
            let n = MAX_FRAME + rng.below(200);
            framed(PROTOCOL_VERSION, 3, &rng.bytes(n))
        }
        // Another protocol version.
        4 => framed(PROTOCOL_VERSION.wrapping_add(1 + rng.below(250) as u8), 4, &[11]),
        // A valid CRC around a body that is not a request (or has bytes left over).
        5 => loop {
            let n = 1 + rng.below(40);
            let body = rng.bytes(n);
            if postcard::take_from_bytes::<Request<'_>>(&body).map(|(_, rest)| rest.is_empty()).unwrap_or(false) {
                continue;
            }
            break framed(PROTOCOL_VERSION, 5, &body);
        },
        // A chunk or commit with no upload in progress.
        6 => {
            if rng.below(2) == 0 {
                let (offset, n) = (rng.below(100) as u32, rng.below(MAX_CHUNK));
                packed(&Request::LoadChunk { offset, data: &rng.bytes(n) })
            } else {
                packed(&Request::LoadCommit)
            }
        }
        // Events and captures the plant cannot take.
        7 => match rng.below(3) {
            0 => packed(&Request::Schedule {
                at: 1 << 40,
                action: tidewire_link::Action::Break { junction: 3 + rng.below(1000) as u16 },
            }),
            1 => packed(&Request::Arm {
                probes: [5u8].into_iter().collect(),
                length: 10,
                trigger: tidewire_link::Trigger::OnEvent,
            }),
            _ => packed(&Request::ReadCapture { column: 0, offset: 0 }),
        },
        // An empty-looking frame: the COBS code byte alone, or codes pointing past the end.
        _ => vec![1 + rng.below(254) as u8; 1 + rng.below(3)],
    }
}

/// Throw `count` hostile frames at a running rig, one sample between frames, and compare
/// with the twin after every one. A corrupt image upload is interleaved every 97 frames.
fn throw(count: usize, seed: u64) {
    let mut rig = running_rig();
    let mut twin = running_rig();
    let mut rng = Rng(seed);
    for k in 0..count {
        let mut f = hostile(&mut rng);
        let (seq, reply) =
            if f.is_empty() { (NO_SEQ, Reply::Error(LinkError::Truncated)) } else { raw(&mut rig, &mut f) };
        assert!(matches!(reply, Reply::Error(_)), "frame {k} was accepted: {reply:?} (seq {seq})");
        if k % 97 == 0 {
            let mut img = image(&network('b'));
            let i = 16 + rng.below(img.len() - 16);
            img[i] ^= 1 + rng.below(255) as u8;
            assert!(matches!(load(&mut rig, &img), Reply::Error(LinkError::Image(_))));
        }
        assert_eq!(tick(&mut rig), tick(&mut twin), "frame {k} changed the plant");
        assert_eq!(rig.status(), twin.status(), "frame {k} changed the rig");
        assert_eq!(
            (rig.solver().probe_raw(0), rig.solver().probe_raw(1)),
            (twin.solver().probe_raw(0), twin.solver().probe_raw(1))
        );
    }
}

#[test]
fn two_thousand_hostile_frames_change_nothing() {
    throw(2000, 0x1234_5678_9abc_def1);
}

#[test]
#[ignore = "soak: run with --release -- --ignored"]
fn soak_one_hundred_thousand_hostile_frames() {
    throw(100_000, 0x0fed_cba9_8765_4321);
}

#[test]
fn the_reader_survives_any_byte_stream_and_reports_oversize() {
    let mut rd = Reader::new();
    let mut rig = running_rig();
    let mut rng = Rng(99);
    let mut frames = 0;
    for _ in 0..200_000 {
        let b = if rng.below(50) == 0 { 0 } else { rng.next() as u8 };
        if let Some(got) = rd.push(b) {
            frames += 1;
            let mut out = [0u8; MAX_WIRE];
            match got {
                Ok(f) => assert!(rig.handle_frame(f, &mut out) > 0),
                Err(e) => assert_eq!(e, LinkError::Oversized),
            }
        }
    }
    assert!(frames > 1000);
    // A run of non-zero bytes longer than any frame is reported once, at its delimiter.
    let mut rd = Reader::new();
    assert!((0..MAX_WIRE + 10).all(|_| rd.push(7).is_none()));
    assert!(matches!(rd.push(0), Some(Err(LinkError::Oversized))));
    assert!(rd.push(0).is_none(), "then an empty frame is skipped");
}

proptest! {
    /// Any bytes as a frame: an error reply or a valid request; if an error, nothing changed.
    #[test]
    fn any_frame_is_answered_and_a_refused_one_changes_nothing(bytes in proptest::collection::vec(1u8..=255, 0..400), flip in any::<usize>()) {
        let mut rig = running_rig();
        let mut twin = running_rig();
        let mut f = if bytes.is_empty() { packed(&Request::Stop) } else { bytes };
        if flip % 3 == 0 {
            // A real frame with one byte replaced.
            f = packed(&Request::LoadChunk { offset: 0, data: &[1, 2, 3] });
            let i = flip % f.len();
            f[i] = f[i].wrapping_add(1).max(1);
        }
        let (_, reply) = raw(&mut rig, &mut f);
        if matches!(reply, Reply::Error(_)) {
            prop_assert_eq!(tick(&mut rig), tick(&mut twin));
            prop_assert_eq!(rig.status(), twin.status());
        }
    }
}

proptest! {
    /// The link's own COBS decoder agrees with the `cobs` crate: on its encodings of any
    /// data, and on any zero-free bytes (same result or both refuse).
    #[test]
    fn cobs_decoder_agrees_with_the_cobs_crate(data in proptest::collection::vec(any::<u8>(), 1..600), junk in proptest::collection::vec(1u8..=255, 1..300)) {
        let mut enc = cobs::encode_vec(&data);
        let n = tidewire_link::frame::cobs_decode_in_place(&mut enc);
        prop_assert_eq!(n.map(|n| enc[..n].to_vec()), Some(data));
        let theirs = cobs::decode_vec(&junk).ok();
        let mut mine = junk.clone();
        let n = tidewire_link::frame::cobs_decode_in_place(&mut mine);
        prop_assert_eq!(n.map(|n| mine[..n].to_vec()), theirs);
    }
}

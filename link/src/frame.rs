//! Framing: every message travels as one frame
//!
//! ```text
//! COBS( version:u8 | seq:u16 LE | postcard body | CRC-32C:u32 LE ) 0x00
//! ```
//!
//! COBS (consistent overhead byte stuffing) removes every zero byte from the frame, so a zero
//! marks the end of a frame and a receiver that lost bytes resynchronises at the next zero.
//! The CRC (CRC-32C, Castagnoli polynomial) covers version, sequence number and body. A
//! reply carries the sequence number of its request; a reply to a frame whose sequence
//! number cannot be trusted (bad COBS, too short, too long, bad CRC) carries [`NO_SEQ`].

use serde::Serialize;

use crate::message::LinkError;

/// Largest unpacked frame (version + sequence number + body + CRC), bytes.
pub const MAX_FRAME: usize = 256;
/// Largest packed frame on the wire, delimiter included.
pub const MAX_WIRE: usize = cobs::max_encoding_length(MAX_FRAME) + 1;
/// Sequence number of a reply to a frame whose own number cannot be trusted.
pub const NO_SEQ: u16 = 0xffff;
/// Bytes of version and sequence number before the body.
const HEAD: usize = 3;
/// Bytes of CRC after the body.
const TAIL: usize = 4;

const CRC: crc::Crc<u32> = crc::Crc::<u32>::new(&crc::CRC_32_ISCSI);

/// Why a frame could not be packed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PackError {
    /// The message does not fit in [`MAX_FRAME`] or the output buffer is too small.
    TooLarge,
}

/// Pack `msg` with sequence number `seq` into `out` (COBS, then the zero delimiter);
/// returns the bytes written.
pub fn pack<T: Serialize>(version: u8, seq: u16, msg: &T, out: &mut [u8]) -> Result<usize, PackError> {
    let mut raw = [0u8; MAX_FRAME];
    raw[0] = version;
    raw[1..HEAD].copy_from_slice(&seq.to_le_bytes());
    let body_room = raw.get_mut(HEAD..MAX_FRAME - TAIL).ok_or(PackError::TooLarge)?;
    let n = postcard::to_slice(msg, body_room).map_err(|_| PackError::TooLarge)?.len();
    let end = HEAD + n;
    let crc = CRC.checksum(raw.get(..end).ok_or(PackError::TooLarge)?);
    raw.get_mut(end..end + TAIL).ok_or(PackError::TooLarge)?.copy_from_slice(&crc.to_le_bytes());
    let unpacked = raw.get(..end + TAIL).ok_or(PackError::TooLarge)?;
    let k = cobs::try_encode(unpacked, out).map_err(|_| PackError::TooLarge)?;
    *out.get_mut(k).ok_or(PackError::TooLarge)? = 0;
    Ok(k + 1)
}

/// An unpacked, CRC-checked frame.
#[derive(Debug, PartialEq, Eq)]
pub struct Frame<'a> {
    pub version: u8,
    pub seq: u16,
    pub body: &'a [u8],
}

/// Unpack one frame in place (`packed` without its delimiter): COBS, length, CRC. The
/// version is returned, not judged: the caller answers another version with its own.
pub fn unpack(packed: &mut [u8]) -> Result<Frame<'_>, LinkError> {
    let n = cobs_decode_in_place(packed).ok_or(LinkError::Framing)?;
    let raw = packed.get(..n).ok_or(LinkError::Framing)?;
    if n < HEAD + TAIL {
        return Err(LinkError::Truncated);
    }
    if n > MAX_FRAME {
        return Err(LinkError::Oversized);
    }
    let (covered, crc) = raw.split_at(n - TAIL);
    let stored = u32::from_le_bytes([crc[0], crc[1], crc[2], crc[3]]);
    if CRC.checksum(covered) != stored {
        return Err(LinkError::Crc);
    }
    let (head, body) = covered.split_at(HEAD);
    Ok(Frame { version: head[0], seq: u16::from_le_bytes([head[1], head[2]]), body })
}

/// COBS decoding in place, written with checked indexing so that no panic is reachable
/// from a received byte (the `cobs` crate's decoder indexes directly, which the firmware's
/// no-panic link check cannot see through). Encoding uses the `cobs` crate; the tests check
/// this decoder against its decoder on random input.
///
/// Each block is a code byte c (1..=255) followed by c − 1 data bytes; a block with c < 255
/// that is not the last one stands for its data followed by a zero. Returns the decoded
/// length, or None for a zero byte or a block running past the end.
pub fn cobs_decode_in_place(buf: &mut [u8]) -> Option<usize> {
    let (mut src, mut dst) = (0usize, 0usize);
    let end = buf.len();
    if end == 0 {
        return None;
    }
    while src < end {
        let code = *buf.get(src)? as usize;
        if code == 0 || src + code > end {
            return None;
        }
        src += 1;
        for _ in 1..code {
            let b = *buf.get(src)?;
            if b == 0 {
                return None;
            }
            *buf.get_mut(dst)? = b;
            src += 1;
            dst += 1;
        }
        if code != 0xff && src < end {
            *buf.get_mut(dst)? = 0;
            dst += 1;
        }
    }
    Some(dst)
}

/// Collects wire bytes into packed frames.
///
/// Bytes beyond [`MAX_WIRE`] before a delimiter are dropped and the frame is reported
/// oversized at its delimiter; empty frames (two delimiters in a row) are skipped.
pub struct Reader {
    buf: [u8; MAX_WIRE],
    len: usize,
    overflow: bool,
}

impl Default for Reader {
    fn default() -> Self {
        Self::new()
    }
}

impl Reader {
    /// An empty reader.
    pub const fn new() -> Self {
        Reader { buf: [0; MAX_WIRE], len: 0, overflow: false }
    }

    /// Take one wire byte. At a delimiter ending a frame, returns the packed frame (to hand
    /// to [`unpack`]) or [`LinkError::Oversized`].
    pub fn push(&mut self, byte: u8) -> Option<Result<&mut [u8], LinkError>> {
        if byte != 0 {
            match self.buf.get_mut(self.len) {
                Some(slot) => {
                    *slot = byte;
                    self.len += 1;
                }
                None => self.overflow = true,
            }
            return None;
        }
        let (len, overflow) = (self.len, self.overflow);
        self.len = 0;
        self.overflow = false;
        if overflow {
            return Some(Err(LinkError::Oversized));
        }
        if len == 0 {
            return None;
        }
        self.buf.get_mut(..len).map(Ok)
    }
}

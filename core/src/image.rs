//! The binary network image: what the host compiler writes and a rig loads at run time
//! (for example over a serial link, without reflashing).
//!
//! Layout, all integers little-endian:
//!
//! | offset | size | field |
//! |---|---|---|
//! | 0 | 4 | magic `TIDW` |
//! | 4 | 2 | format version ([`FORMAT_VERSION`]) |
//! | 6 | 2 | flags (0; reserved) |
//! | 8 | 4 | body length in bytes |
//! | 12 | 4 | CRC-32 (ISO-HDLC, the common zlib/Ethernet one) of the body |
//! | 16 | n | body: the [`Network`](crate::Network) in postcard encoding |
//!
//! Decoding checks everything before it builds anything: length, magic, version, CRC, then
//! the body is decoded into fixed-capacity storage, then [`crate::Solver::load`] validates
//! the topology. Every failure is an error value, never a panic.

use crate::error::BuildError;
use crate::profile::Profile;
use crate::solver::Solver;

/// First four bytes of every image.
pub const MAGIC: [u8; 4] = *b"TIDW";
/// The body format this core reads (2: every loss filter carries an optional
/// fractional-delay allpass, and may have no section; 3: junctions may be series branches
/// between nodes, `Junction::Branch`; 4: every loss filter carries an optional Zc(s)
/// network, `LineLoss::zc`).
pub const FORMAT_VERSION: u16 = 4;
/// Header size in bytes.
pub const HEADER_LEN: usize = 16;

const CRC: crc::Crc<u32> = crc::Crc::<u32>::new(&crc::CRC_32_ISO_HDLC);

/// CRC-32 (ISO-HDLC) of an image body.
pub fn body_crc(body: &[u8]) -> u32 {
    CRC.checksum(body)
}

/// The 16-byte header for `body`.
pub fn header(body: &[u8]) -> [u8; HEADER_LEN] {
    let mut h = [0u8; HEADER_LEN];
    h[0..4].copy_from_slice(&MAGIC);
    h[4..6].copy_from_slice(&FORMAT_VERSION.to_le_bytes());
    h[8..12].copy_from_slice(&(body.len() as u32).to_le_bytes());
    h[12..16].copy_from_slice(&body_crc(body).to_le_bytes());
    h
}

/// Why an image was refused.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum ImageError {
    /// Fewer bytes than a header.
    #[error("image truncated: {len} bytes, header needs {HEADER_LEN}")]
    Truncated {
        /// Bytes given.
        len: usize,
    },
    /// The first four bytes are not `TIDW`.
    #[error("not a tidewire image (bad magic)")]
    BadMagic,
    /// A format version this core does not read.
    #[error("image format version {found}, this core reads {FORMAT_VERSION}")]
    UnsupportedVersion {
        /// The image's format version.
        found: u16,
    },
    /// Reserved flags set.
    #[error("image flags {flags:#06x} not understood")]
    UnknownFlags {
        /// The reserved flags that are set.
        flags: u16,
    },
    /// The declared body length does not match the bytes given.
    #[error("image body is {actual} bytes, header says {declared}")]
    LengthMismatch {
        /// Body length the header declares, bytes.
        declared: u32,
        /// Body bytes given.
        actual: usize,
    },
    /// The body's CRC does not match the header.
    #[error("image CRC mismatch: stored {stored:#010x}, computed {computed:#010x}")]
    CrcMismatch {
        /// CRC-32 in the header.
        stored: u32,
        /// CRC-32 of the body.
        computed: u32,
    },
    /// The body does not decode (corrupt, or more entries than the capacity).
    #[error("image body does not decode (corrupt or over capacity)")]
    Body,
    /// The body has bytes after the network.
    #[error("image body has trailing bytes")]
    TrailingBytes,
    /// The body decoded but the network is not valid for this solver.
    #[error("image network refused: {0}")]
    Network(BuildError),
}

/// A network decoded from an image into fixed-capacity storage (`L` lines and elements, `J`
/// junctions, `K` loss filters; `K` defaults to `L`); [`crate::OwnedNetwork::network`] gives
/// the view to build a solver from.
pub type ImageNetwork<const L: usize, const J: usize, const K: usize = L> = crate::owned::HeaplessNetwork<L, J, K>;

/// Check the header and CRC of `bytes` and return the body.
pub fn body(bytes: &[u8]) -> Result<&[u8], ImageError> {
    let (head, body) = match (bytes.get(..HEADER_LEN), bytes.get(HEADER_LEN..)) {
        (Some(h), Some(b)) => (h, b),
        _ => return Err(ImageError::Truncated { len: bytes.len() }),
    };
    // Fixed offsets inside the 16-byte header (length checked above); `get` keeps the
    // restriction lints satisfied without a panic path.
    let field = |i: usize, n: usize| head.get(i..i.saturating_add(n)).unwrap_or(&[]);
    let u16_at = |i: usize| field(i, 2).try_into().map_or(0, u16::from_le_bytes);
    let u32_at = |i: usize| field(i, 4).try_into().map_or(0, u32::from_le_bytes);
    if field(0, 4) != MAGIC {
        return Err(ImageError::BadMagic);
    }
    let version = u16_at(4);
    if version != FORMAT_VERSION {
        return Err(ImageError::UnsupportedVersion { found: version });
    }
    let flags = u16_at(6);
    if flags != 0 {
        return Err(ImageError::UnknownFlags { flags });
    }
    let declared = u32_at(8);
    if declared as usize != body.len() {
        return Err(ImageError::LengthMismatch { declared, actual: body.len() });
    }
    let stored = u32_at(12);
    let computed = body_crc(body);
    if stored != computed {
        return Err(ImageError::CrcMismatch { stored, computed });
    }
    Ok(body)
}

/// Decode an image into fixed-capacity storage.
pub fn decode<const L: usize, const J: usize>(bytes: &[u8]) -> Result<ImageNetwork<L, J>, ImageError> {
    decode_sized::<L, J, L>(bytes)
}

/// [`decode`] with its own capacity `K` for loss filters. A solver decodes with `K` = its
/// loss-end capacity `LOSSES` (a lossy line takes two of them, so that is room enough), which
/// keeps the decoded network small on parts with little RAM.
pub fn decode_sized<const L: usize, const J: usize, const K: usize>(
    bytes: &[u8],
) -> Result<ImageNetwork<L, J, K>, ImageError> {
    let body = body(bytes)?;
    let (net, rest) = postcard::take_from_bytes::<ImageNetwork<L, J, K>>(body).map_err(|_| ImageError::Body)?;
    if !rest.is_empty() {
        return Err(ImageError::TrailingBytes);
    }
    Ok(net)
}

impl<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize>
    Solver<P, PORTS, JUNCS, MEM, LOSSES>
{
    /// Decode an image and load its network (header, CRC, body, then topology validation).
    ///
    /// The body is decoded table by table, in [`crate::OwnedNetwork`]'s field order (the
    /// body's), into locals of this frame, the same values [`decode_sized`] gives with
    /// `K = LOSSES`: each table is built once here instead of as a whole network moved
    /// through `Result`s (on a Cortex-M0 with 16 KB of RAM those copies of a 34-port
    /// network's tables overflowed the stack).
    pub fn load_image(&mut self, bytes: &[u8]) -> Result<(), ImageError> {
        use crate::network::{Drive, Element, Junction, Line, LineLoss, Probe, MAX_PROBES};
        use serde::Deserialize;
        let mut de = postcard::Deserializer::from_bytes(body(bytes)?);
        let e = |_| ImageError::Body;
        let lines = heapless::Vec::<Line, PORTS>::deserialize(&mut de).map_err(e)?;
        let junctions = heapless::Vec::<Junction, JUNCS>::deserialize(&mut de).map_err(e)?;
        let elements = heapless::Vec::<Element, PORTS>::deserialize(&mut de).map_err(e)?;
        let losses = heapless::Vec::<LineLoss, LOSSES>::deserialize(&mut de).map_err(e)?;
        let drive = Drive::deserialize(&mut de).map_err(e)?;
        let probes = heapless::Vec::<Probe, MAX_PROBES>::deserialize(&mut de).map_err(e)?;
        let io_shift = u8::deserialize(&mut de).map_err(e)?;
        let volts_per_code = f32::deserialize(&mut de).map_err(e)?;
        if !de.finalize().map_err(e)?.is_empty() {
            return Err(ImageError::TrailingBytes);
        }
        let net = crate::Network {
            lines: &lines,
            junctions: &junctions,
            elements: &elements,
            losses: &losses,
            drive,
            probes: &probes,
            io_shift,
            volts_per_code,
        };
        self.load(&net).map_err(ImageError::Network)
    }
}

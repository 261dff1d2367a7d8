//! The messages of the control link: what the host asks ([`Request`]) and what the rig answers
//! ([`Reply`]). Both are postcard-encoded inside a frame (see [`crate::frame`]).
//!
//! postcard encodes an enum variant by its position, so variants are only ever appended; a
//! change to an existing variant's fields bumps [`crate::PROTOCOL_VERSION`].

use heapless::Vec;
use serde::{Deserialize, Serialize};
use tidewire_core::Shunt;

/// Probes one capture may record at once.
pub const MAX_CAPTURE_PROBES: usize = 4;
/// Image bytes per [`Request::LoadChunk`] (and device-model bytes per [`Request::DutChunk`]).
pub const MAX_CHUNK: usize = 192;
/// Captured values per [`Reply::Capture`].
pub const READ_MAX: usize = 40;
/// Events the rig holds scheduled at once.
pub const MAX_EVENTS: usize = 16;

/// A request from the host.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum Request<'a> {
    /// Who are you: protocol version and capacities ([`Reply::Hello`]).
    Hello,
    /// Begin an image upload of `len` bytes (a tidewire image: header, CRC, postcard body).
    LoadBegin { len: u32 },
    /// The next bytes of the image; `offset` must equal the bytes received so far.
    LoadChunk {
        offset: u32,
        #[serde(borrow)]
        data: &'a [u8],
    },
    /// Check the whole image and load it into the standby plant; it takes effect between two
    /// samples (at once when stopped). The running plant is untouched if anything is wrong.
    LoadCommit,
    /// Reset the active plant to rest, zero the sample counter and run.
    Start,
    /// Stop running (the plant keeps its state; the DAC is held at mid-scale).
    Stop,
    /// Sample period in timer ticks (the rig's sample clock; see [`Reply::Hello`]).
    SetPeriod { ticks: u32 },
    /// Apply `action` just before sample `at` is computed (`at` >= samples run so far).
    Schedule { at: u64, action: Action },
    /// Forget every scheduled event.
    ClearEvents,
    /// Arm a capture of `probes` (indices of the plant's probes) for `length` samples.
    Arm { probes: Vec<u8, MAX_CAPTURE_PROBES>, length: u32, trigger: Trigger },
    /// Read a finished capture: column `column` (position in the armed probe list) from
    /// sample `offset` of the capture on, at most [`READ_MAX`] values.
    ReadCapture { column: u8, offset: u32 },
    /// Counters and state ([`Reply::Status`]).
    Status,
    /// Begin uploading the software model of the device under test (emulated rig only): an
    /// EMF of `len` samples (f64 volts, little-endian, in [`Request::DutChunk`]s) behind
    /// `r_device` ohms, tied to the DAC through the rig's reference resistor `r_ref` ohms;
    /// `volts_per_code` of the converters; the DAC shows the drive `latency` samples late.
    DutBegin { r_device: f64, r_ref: f64, volts_per_code: f64, latency: u16, len: u32 },
    /// The next bytes of the EMF (whole f64s); `offset` in bytes received so far.
    DutChunk {
        offset: u32,
        #[serde(borrow)]
        data: &'a [u8],
    },
}

/// A change to the running plant, as plant files express them.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum Action {
    /// A node's shunt load becomes `shunt` (open, short or a resistor).
    SetShunt { junction: u16, shunt: Shunt },
    /// The node splits into open ends (a broken cable at a point the compiler placed).
    Break { junction: u16 },
    /// A broken node joins again.
    Join { junction: u16 },
}

/// When an armed capture starts recording.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum Trigger {
    /// With sample `n` (recorded after sample n is computed).
    AtSample(u64),
    /// With the sample at which the next scheduled event is applied.
    OnEvent,
    /// With the first sample at which the raw value of plant probe `probe` crosses `level`
    /// (rising: from below to at-or-above; falling: from above to at-or-below).
    OnLevel { probe: u8, level: i32, rising: bool },
}

/// What the rig answers.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub enum Reply {
    /// Protocol version and capacities.
    Hello(Hello),
    /// Done.
    Ok,
    /// The image was accepted; `crc` is its body CRC (as in its header).
    Loaded { crc: u32 },
    /// Captured raw probe values (wave LSBs, as `Solver::probe_raw`).
    Capture { column: u8, offset: u32, values: Vec<i32, READ_MAX> },
    /// Counters and state.
    Status(Status),
    /// The request was refused; nothing changed.
    Error(LinkError),
}

/// The rig's identity and capacities.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Hello {
    pub version: u8,
    /// Solver capacity: line ends, junctions, delay storage (waves), lossy line ends.
    pub ports: u32,
    pub junctions: u32,
    pub memory: u32,
    pub losses: u32,
    /// Largest image in bytes.
    pub max_image: u32,
    /// Capture storage in values (samples × probes).
    pub capture_values: u32,
    /// Samples of device-model EMF it holds (0: no software device model, real converters).
    pub dut_samples: u32,
    /// Timer ticks per second of the sample clock, and ticks per sample now.
    pub tick_hz: u32,
    pub period_ticks: u32,
}

/// Where a capture is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum CaptureState {
    Idle,
    Armed,
    Filling {
        start: u64,
        filled: u32,
    },
    /// Finished: `length` samples from sample `start` of `columns` probes, which are
    /// `probes[..columns]` (plant probe numbers).
    Done {
        start: u64,
        length: u32,
        columns: u8,
        probes: [u8; MAX_CAPTURE_PROBES],
    },
}

/// Counters and state of the rig.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Status {
    pub running: bool,
    /// Samples computed since the last start.
    pub samples: u64,
    /// Samples whose work did not finish before the next tick, or started after it.
    pub overruns: u32,
    /// Cycles of the slowest and of the last sample (tick to DAC write).
    pub worst_cycles: u32,
    pub last_cycles: u32,
    /// Samples at which the ADC input or the DAC output sat at the end of its range.
    pub saturations: u32,
    pub period_ticks: u32,
    /// Body CRC of the active image (0: none loaded).
    pub image_crc: u32,
    pub events_pending: u8,
    pub capture: CaptureState,
}

/// Why the rig refused a frame or a request. After any of these, nothing changed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, thiserror::Error)]
pub enum LinkError {
    /// The bytes between two zero delimiters are not valid COBS.
    #[error("the rig could not unpack the frame (bad COBS)")]
    Framing,
    /// Fewer bytes than version, sequence number and CRC.
    #[error("the frame was too short")]
    Truncated,
    /// More bytes than a frame may have.
    #[error("the frame was too long")]
    Oversized,
    /// The frame CRC does not match.
    #[error("the frame CRC did not match")]
    Crc,
    /// The frame is of another protocol version; `rig` is the one this rig speaks.
    #[error("the rig speaks link protocol version {rig}")]
    Version { rig: u8 },
    /// The body does not decode into a request (or has bytes left over).
    #[error("the rig did not understand the request")]
    Body,
    /// A chunk or commit out of order; `expected` is the next offset the rig wants.
    #[error("chunk out of order: the rig expected offset {expected}")]
    OutOfOrder { expected: u32 },
    /// A chunk or commit without a begin.
    #[error("no upload in progress")]
    NoUpload,
    /// The image (or device model) is larger than the rig holds.
    #[error("too large for the rig: at most {max} bytes")]
    TooLarge { max: u32 },
    /// The image was refused (see [`ImageFault`]).
    #[error("the rig refused the image: {0:?}")]
    Image(ImageFault),
    /// A previous image is waiting for the next sample to take effect.
    #[error("the previous image has not taken effect yet")]
    Busy,
    /// No plant loaded.
    #[error("no plant loaded")]
    NotLoaded,
    /// An event or trigger at a sample already run.
    #[error("that sample has passed: the rig has run {samples}")]
    InThePast { samples: u64 },
    /// The event queue is full.
    #[error("the event queue is full ({})", MAX_EVENTS)]
    QueueFull,
    /// The junction is not a node of the active plant.
    #[error("junction {junction} is not a node of the loaded plant")]
    BadJunction { junction: u16 },
    /// A probe index the plant does not have, or an empty or repeated probe list.
    #[error("probe list empty, repeated, or naming a probe the plant lacks")]
    BadProbe,
    /// The capture does not fit: at most `max` values (samples × probes); length >= 1.
    #[error("capture does not fit: at most {max} values (samples x probes)")]
    CaptureSize { max: u32 },
    /// No finished capture to read.
    #[error("no finished capture")]
    CaptureNotReady,
    /// Column or offset outside the capture.
    #[error("column or offset outside the capture")]
    OutOfRange,
    /// This rig has real converters and no software device model.
    #[error("this rig has real converters, no software device model")]
    NoDeviceModel,
    /// A sample period outside what the timer can do.
    #[error("sample period must be {min}..={max} ticks")]
    BadPeriod { min: u32, max: u32 },
    /// The device-model parameters are not positive finite numbers, or the latency is too long.
    #[error("device model parameters not positive and finite, or latency too long")]
    BadModel,
}

/// Why an image was refused (the core's image and network checks).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum ImageFault {
    Truncated,
    BadMagic,
    Version,
    Flags,
    Length,
    Crc,
    Body,
    TrailingBytes,
    /// The network does not fit this rig or is not valid.
    Network,
}

impl From<tidewire_core::image::ImageError> for ImageFault {
    fn from(e: tidewire_core::image::ImageError) -> Self {
        use tidewire_core::image::ImageError as E;
        match e {
            E::Truncated { .. } => ImageFault::Truncated,
            E::BadMagic => ImageFault::BadMagic,
            E::UnsupportedVersion { .. } => ImageFault::Version,
            E::UnknownFlags { .. } => ImageFault::Flags,
            E::LengthMismatch { .. } => ImageFault::Length,
            E::CrcMismatch { .. } => ImageFault::Crc,
            E::Body => ImageFault::Body,
            E::TrailingBytes => ImageFault::TrailingBytes,
            _ => ImageFault::Network,
        }
    }
}

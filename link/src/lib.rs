//! The control link between a host and a tidewire rig.
//!
//! * [`frame`]: COBS-framed, CRC-32C-checked, versioned frames around a postcard body;
//! * [`message`]: the requests (load an image in chunks, start, stop, sample period, events at
//!   a sample number, capture arming and read-back, status, the emulated rig's device model)
//!   and the replies;
//! * [`rig`]: the rig-side handler and per-sample work (double-buffered plant images, event
//!   queue, capture, real-time counters), plain code that the host tests and the firmware runs;
//! * [`dut`]: the software model of the device under test used by the emulated rig.
//!
//! `no_std`, no allocation, no `unsafe`. Nothing reachable from a received byte panics: a
//! malformed, truncated, oversized, out-of-order or unknown frame gets an error reply and
//! changes nothing.
#![no_std]
#![forbid(unsafe_code)]

pub mod capture;
pub mod dut;
pub mod frame;
pub mod message;
pub mod rig;

/// The link protocol version carried by every frame. A rig answers a frame of another
/// version with [`message::LinkError::Version`].
pub const PROTOCOL_VERSION: u8 = 1;

pub use frame::{pack, unpack, Reader, MAX_FRAME, MAX_WIRE, NO_SEQ};
pub use message::{Action, CaptureState, Hello, ImageFault, LinkError, Reply, Request, Status, Trigger};
pub use rig::{Clock, Rig, MAX_IMAGE};

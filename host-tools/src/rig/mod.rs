//! The host side of the rig control link: a connection over TCP (the emulated rig's UART)
//! or a serial device ([`link`]), and the jobs built on it ([`session`]): image and device
//! model uploads, plant events, capture read-back.
pub mod link;
pub mod parts;
pub mod session;

pub use link::{RigConnection, RigError};

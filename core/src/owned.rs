//! The one owned network: a [`Network`]'s tables held in containers, with the borrowed
//! [`Network`] view the solver loads.
//!
//! The containers are type parameters so that one struct serves every owner: the image
//! reader keeps fixed-capacity `heapless::Vec`s ([`HeaplessNetwork`], no allocation), the
//! host keeps `std` vectors. Field order is the image body's order (postcard writes fields
//! in declaration order), so this struct decodes what [`Network`]'s `Serialize` writes.
use serde::Deserialize;

use crate::network::{Drive, Element, Junction, Line, LineLoss, Network, Probe, MAX_PROBES};

/// A network that owns its tables (`Li`, `Ju`, `El`, `Lo`, `Pr` are containers of lines,
/// junctions, elements, loss filters and probes).
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct OwnedNetwork<Li, Ju, El, Lo, Pr> {
    /// Lines (see [`Network::lines`]).
    pub lines: Li,
    /// Junctions (see [`Network::junctions`]).
    pub junctions: Ju,
    /// Reactive one-ports at nodes (see [`Network::elements`]).
    pub elements: El,
    /// Loss filters of lossy lines (see [`Network::losses`]).
    pub losses: Lo,
    /// The drive (see [`Network::drive`]).
    pub drive: Drive,
    /// Probes (see [`Network::probes`]).
    pub probes: Pr,
    /// Fraction bits of a wave below one I/O code (see [`Network::io_shift`]).
    pub io_shift: u8,
    /// Volts per I/O code (see [`Network::volts_per_code`]).
    pub volts_per_code: f32,
}

impl<Li, Ju, El, Lo, Pr> OwnedNetwork<Li, Ju, El, Lo, Pr>
where
    Li: AsRef<[Line]>,
    Ju: AsRef<[Junction]>,
    El: AsRef<[Element]>,
    Lo: AsRef<[LineLoss]>,
    Pr: AsRef<[Probe]>,
{
    /// The borrowed view a solver loads.
    pub fn network(&self) -> Network<'_> {
        Network {
            lines: self.lines.as_ref(),
            junctions: self.junctions.as_ref(),
            elements: self.elements.as_ref(),
            losses: self.losses.as_ref(),
            drive: self.drive,
            probes: self.probes.as_ref(),
            io_shift: self.io_shift,
            volts_per_code: self.volts_per_code,
        }
    }
}

/// A network in fixed-capacity storage: `L` lines (and at most `L` elements), `J` junctions,
/// `K` loss filters (default `L`), [`MAX_PROBES`] probes. What the image reader decodes into.
pub type HeaplessNetwork<const L: usize, const J: usize, const K: usize = L> = OwnedNetwork<
    heapless::Vec<Line, L>,
    heapless::Vec<Junction, J>,
    heapless::Vec<Element, L>,
    heapless::Vec<LineLoss, K>,
    heapless::Vec<Probe, MAX_PROBES>,
>;

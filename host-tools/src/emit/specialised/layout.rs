//! Where every port's waves live in the specialised solver.
//!
//! All line rings share one delay memory and one sample counter. Port p (arriving delay d_p)
//! owns d_p + 1 consecutive offsets [S_p, S_p + d_p] (S_p = Σ of (d + 1) over the ports
//! before it, so the spans are disjoint; their total is the span P). The wave its partner
//! sends at sample n is written at offset S_p + d_p of that sample's window, the wave arriving
//! at sample n (sent d_p samples earlier) is read at offset S_p. The window moves up by one
//! per sample, so one counter replaces every per-port cursor. The one spare slot per port is
//! what lets a junction write its outgoing waves straight into the rings while later
//! junctions still read this sample's arriving waves: no write of sample n lands on a wave
//! another port reads at sample n.
//!
//! The window of sample n starts at i = n mod P, and every access is `mem[i + offset]`: one
//! base address per sample and a constant offset per access (on the Cortex-M4 one load or
//! store with an immediate offset, where masking the position of every access took an add, a
//! bit clear and an indexed load). The memory holds three spans. Reads and writes use the
//! upper two, `mem[P + i + offset]`; every write is stored a second time one span lower, at
//! `mem[i + offset]`. When i wraps from P − 1 to 0, a wave still in flight was written at
//! P + i + w with i + w >= P, so its lower copy sits at P + (i + w − P), exactly where the
//! next period reads it. The lower copy never lands where this period still reads (it is
//! below P + i), and no later write of this period or earlier write of the next lands on it
//! before its read (that would put another port's write offset strictly inside this port's
//! span, and the spans are disjoint). So no sample copies anything: the wrap costs nothing,
//! and the slowest sample is an ordinary one (a real-time loop must meet its period in every
//! sample). An earlier layout of two spans copied the upper half down at the wrap, P waves in
//! one sample: on the firmware's 85-port plant that sample took 7.9 times the average
//! (`cargo run -p xtask -- firmware`, docs/firmware.md). The price is one store per line port
//! per sample and a third span of memory.
//!
//! A port whose arriving wave must be kept between samples (it passes a loss filter, or it
//! is a reactive element's state, a ring of one sample feeding itself) keeps it in `b[p]`.

use super::loaded::Loaded;

/// Where port p's arriving wave for the coming sample is read from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Arrival {
    /// From the delay memory at i + offset, with i the window of the coming sample.
    Memory { offset: u32 },
    /// From the state array `b[slot]`.
    State { slot: usize },
}

/// The whole layout.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Layout {
    /// The span P (>= 1): the counter's period and the window's length; the memory is 3P.
    pub span: u32,
    /// Per port: its arrival.
    pub arrival: Vec<Arrival>,
    /// Per line port: the offset its ring is written at, S_p + d_p; `None` for elements.
    pub write: Vec<Option<u32>>,
    /// Per line port: S_p, where this sample's arriving wave sits (offset S_p) and, after the
    /// writes of sample n, the next sample's (offset S_p + 1).
    pub read: Vec<Option<u32>>,
    /// Length of the state array `b`.
    pub states: usize,
}

impl Layout {
    /// The layout of `l`, or `None` if the delay memory (3P) would not fit a u32 index.
    pub fn of(l: &Loaded) -> Option<Layout> {
        let lossy: Vec<bool> = (0..l.ports.len()).map(|p| l.losses.iter().any(|x| x.port as usize == p)).collect();
        let mut start: u64 = 0;
        let mut write = Vec::with_capacity(l.ports.len());
        let mut read = Vec::with_capacity(l.ports.len());
        for port in &l.ports {
            if port.element {
                write.push(None);
                read.push(None);
                continue;
            }
            let d = u64::from(port.delay.max(1));
            write.push(Some(start + d));
            read.push(Some(start));
            start += d + 1;
        }
        let span = start.max(1);
        if span > 1 << 30 {
            return None;
        }
        let mut states = 0usize;
        let arrival = l
            .ports
            .iter()
            .zip(&read)
            .zip(&lossy)
            .map(|((port, r), lossy)| match r {
                Some(r) if !*lossy && !port.element => Arrival::Memory { offset: *r as u32 },
                _ => {
                    states += 1;
                    Arrival::State { slot: states - 1 }
                }
            })
            .collect();
        let to32 = |v: Vec<Option<u64>>| v.into_iter().map(|x| x.map(|x| x as u32)).collect();
        Some(Layout { span: span as u32, arrival, write: to32(write), read: to32(read), states })
    }
}

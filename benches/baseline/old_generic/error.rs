//! (Frozen copy of `core/src/error.rs` at c696084, see `mod.rs`; `Display` trimmed.)
//!
//! Errors of building a solver from a network description.

/// Which table a [`BuildError`] points into.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Table {
    Lines,
    Junctions,
    Probes,
    DelayStorage,
    Ports,
    /// Line ends with loss filters (the solver's `LOSSES` capacity).
    Losses,
}

/// Why a network description was refused. Indices name the offending entry.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum BuildError {
    /// A line's characteristic impedance is zero.
    ZeroImpedance { line: u16 },
    /// A line's delay is zero samples.
    ZeroDelay { line: u16 },
    /// A resistance (shunt, series or source) is zero; use `Shunt::Short` for a short.
    ZeroResistance { junction: u16 },
    /// A line end names a junction that does not exist.
    JunctionOutOfRange { line: u16, junction: u16 },
    /// The drive or a probe names a junction or line that does not exist.
    IndexOutOfRange { table: Table, index: u16 },
    /// A node has no line end: nothing can reach it.
    DanglingJunction { junction: u16 },
    /// A series junction must join exactly two line ends.
    SeriesNeedsTwoEnds { junction: u16, ends: u16 },
    /// A series junction joins two lines of different impedance. Split one sample of
    /// the first line off as a line of its own impedance instead (the host compiler does).
    SeriesImpedanceMismatch { junction: u16 },
    /// A reactive element hangs from something that is not a node, or has zero port
    /// resistance.
    BadElement { element: u16 },
    /// A loss filter names no line, a line twice, has 0 or too many sections, or a
    /// section that is not an attenuating shelf (needs 0 <= zero < pole < 1).
    BadLoss { loss: u16 },
    /// A rig port node must hold exactly one line end and no shunt.
    BadRigNode { junction: u16 },
    /// A drive is placed on a series junction.
    DriveOnSeries { junction: u16 },
    /// More entries than the solver's capacity.
    CapacityExceeded { table: Table, needed: u32, capacity: u32 },
    /// An integer coefficient does not fit its format (an impedance far outside the range
    /// of the others at its node, or a node with a vanishing total conductance).
    CoefficientOutOfRange { junction: u16 },
    /// The rig latency is not shorter than the first line's delay (the line towards the
    /// rig port keeps delay − latency >= 1 samples), or exceeds MAX_RIG_LATENCY.
    RigLatencyTooLong { latency: u16, delay: u32 },
    /// `io_shift` is larger than the number profile allows.
    IoShiftTooLarge { io_shift: u8, max: u8 },
}

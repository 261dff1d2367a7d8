//! Errors of building a solver from a network description.

/// Which table a [`BuildError`] points into.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum Table {
    /// Lines.
    Lines,
    /// Junctions.
    Junctions,
    /// Probes.
    Probes,
    /// Delay storage, waves (the solver's `MEM` capacity).
    DelayStorage,
    /// Line ends plus element ports (the solver's `PORTS` capacity).
    Ports,
    /// Line ends with loss filters (the solver's `LOSSES` capacity).
    Losses,
}

/// Why a network description was refused. Indices name the offending entry.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum BuildError {
    /// A line's characteristic impedance is zero.
    #[error("line {line}: characteristic impedance is zero")]
    ZeroImpedance {
        /// Index of the line.
        line: u16,
    },
    /// A line's delay is zero samples.
    #[error("line {line}: delay is zero samples (minimum 1)")]
    ZeroDelay {
        /// Index of the line.
        line: u16,
    },
    /// A resistance (shunt, series or source) is zero; use `Shunt::Short` for a short.
    #[error("junction {junction}: resistance is zero")]
    ZeroResistance {
        /// Index of the junction.
        junction: u16,
    },
    /// A line end names a junction that does not exist.
    #[error("line {line}: junction {junction} does not exist")]
    JunctionOutOfRange {
        /// Index of the line.
        line: u16,
        /// Index of the junction.
        junction: u16,
    },
    /// The drive or a probe names a junction or line that does not exist.
    #[error("{table:?} index {index} out of range")]
    IndexOutOfRange {
        /// The table the index points into.
        table: Table,
        /// The index that does not exist.
        index: u16,
    },
    /// A node has no line end: nothing can reach it.
    #[error("junction {junction}: no line end attached")]
    DanglingJunction {
        /// Index of the junction.
        junction: u16,
    },
    /// A series junction must join exactly two line ends.
    #[error("series junction {junction}: joins {ends} line ends, needs 2")]
    SeriesNeedsTwoEnds {
        /// Index of the junction.
        junction: u16,
        /// Line ends the junction has.
        ends: u16,
    },
    /// A series junction joins two lines of different impedance. Split one sample of
    /// the first line off as a line of its own impedance instead (the host compiler does).
    #[error("series junction {junction}: the two lines have different impedances")]
    SeriesImpedanceMismatch {
        /// Index of the junction.
        junction: u16,
    },
    /// A reactive element hangs from something that is not a node, or has zero port
    /// resistance.
    #[error("element {element}: must hang from a node and have a port resistance > 0")]
    BadElement {
        /// Index of the element.
        element: u16,
    },
    /// A loss filter names no line, a line twice, has no section and no allpass, too many
    /// sections, a section that is not an attenuating shelf (needs 0 <= zero < pole < 1),
    /// or a fractional-delay allpass that is not passive or whose pole is too close to the
    /// unit circle (needs a² + c² <= 1, c > 0, |a| <= 1/2 after quantization).
    #[error("loss filter {loss}: bad line, section or allpass coefficients")]
    BadLoss {
        /// Index of the loss filter.
        loss: u16,
    },
    /// A rig port node must hold exactly one line end and no shunt.
    #[error("rig port junction {junction}: needs exactly one line end and no shunt")]
    BadRigNode {
        /// Index of the junction.
        junction: u16,
    },
    /// A drive is placed on a series junction.
    #[error("drive on series junction {junction}")]
    DriveOnSeries {
        /// Index of the junction.
        junction: u16,
    },
    /// More entries than the solver's capacity.
    #[error("{table:?}: needs {needed}, capacity is {capacity}")]
    CapacityExceeded {
        /// The table the index points into.
        table: Table,
        /// Entries the network needs.
        needed: u32,
        /// Entries the solver holds.
        capacity: u32,
    },
    /// An integer coefficient does not fit its format (an impedance far outside the range
    /// of the others at its node, or a node with a vanishing total conductance).
    #[error("junction {junction}: coefficient out of range of its format")]
    CoefficientOutOfRange {
        /// Index of the junction.
        junction: u16,
    },
    /// A junction's quantized coefficients are not those of a passive junction (checked at
    /// load from the integer coefficients themselves; see `configure`'s `passive` module).
    #[error("junction {junction}: its quantized coefficients would not be passive")]
    NotPassive {
        /// Index of the junction.
        junction: u16,
    },
    /// The rig latency is not shorter than the first line's delay (the line towards the
    /// rig port keeps delay − latency >= 1 samples), or exceeds MAX_RIG_LATENCY.
    #[error("rig latency {latency} samples needs a first line of at least {} samples, it has {delay}", u32::from(*latency).saturating_add(1))]
    RigLatencyTooLong {
        /// The rig latency, samples.
        latency: u16,
        /// The first line's delay, samples.
        delay: u32,
    },
    /// A series branch between nodes names a junction that does not exist or is not a plain
    /// node (a series junction, a rig port, a short, another branch), names the same node
    /// twice, shares a node with another branch, or is given line ends of its own.
    #[error("branch junction {junction}: needs two different plain nodes, each in no other branch, and no line end of its own")]
    BadBranch {
        /// Index of the branch junction.
        junction: u16,
    },
    /// A loss filter's Zc(s) network is out of range: it needs 1..=MAX_ZC_SECTIONS sections,
    /// 0 < k < 1, ρ > 0 and Σ ρ < 1 after quantization, and loss sections on its line (a Zc
    /// network on a lossless line is active).
    #[error(
        "loss filter {loss}: Zc(s) network out of range (needs 1 to 4 sections, 0 < k < 1, rho > 0 and sum of rho < 1 \
         after quantization, and loss sections on the line)"
    )]
    BadZc {
        /// Index of the loss filter.
        loss: u16,
    },
    /// A lossy line's Zc(s) network and its loss filter form an active two-port: the least
    /// passivity margin (`configure::zc_passivity_margin`, computed at load from the
    /// integers) is below 0, or the check could not be completed for this line.
    #[error(
        "line {line}: its Zc(s) network and loss filter form an active two-port (least passivity margin below 0, \
         or not verifiable within the load-time budget)"
    )]
    ZcNotPassive {
        /// Index of the line.
        line: u16,
    },
    /// A Zc(s) network on the line of the rig port (its two directions have different
    /// delays there): not supported by this solver.
    #[error("line {line}: a Zc(s) network on the rig port's line is not supported")]
    ZcOnRigLine {
        /// Index of the line.
        line: u16,
    },
    /// `io_shift` is larger than the number profile allows.
    #[error("io_shift {io_shift} > maximum {max}")]
    IoShiftTooLarge {
        /// The network's `io_shift`.
        io_shift: u8,
        /// The largest `io_shift` the profile allows.
        max: u8,
    },
}

/// Why a run-time reconfiguration (`set_shunt`, `set_broken`) was refused.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum ConfigError {
    /// No such junction, or it is not a plain node (series junction, rig port, or a node a
    /// series branch joins: its weight is part of the branch's coefficients).
    #[error("junction {junction} is not a reconfigurable node")]
    NotANode {
        /// Index of the junction.
        junction: u16,
    },
    /// The new shunt's coefficient does not fit (resistance zero or too far out of range).
    #[error("junction {junction}: new shunt coefficient out of range")]
    CoefficientOutOfRange {
        /// Index of the junction.
        junction: u16,
    },
    /// A plant-specialised solver holds this node's coefficients as constants: none of the
    /// plant's events switch it. Compile the plant with an event at that node, or run the
    /// generic solver.
    #[error(
        "junction {junction} is fixed in this plant-specialised solver (no event of the plant switches it): \
         compile the plant with an event there, or run the generic solver"
    )]
    FixedNode {
        /// Index of the junction.
        junction: u16,
    },
}

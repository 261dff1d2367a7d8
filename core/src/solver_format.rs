//! `defmt::Format` for [`Solver`]: a one-line summary a firmware can log after `load`
//! (what is loaded against the capacities, and the scale), not its state arrays, which
//! would flood the link at every call. Kept beside `solver.rs`, which owns the fields.
use crate::profile::Profile;
use crate::solver::Solver;

impl<P: Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize> defmt::Format
    for Solver<P, PORTS, JUNCS, MEM, LOSSES>
{
    fn format(&self, f: defmt::Formatter<'_>) {
        defmt::write!(
            f,
            "Solver {{ lines: {=usize}, ports: {=usize}/{=usize}, junctions: {=usize}/{=usize}, delay storage: {=usize}/{=usize} waves, loss filters: {=usize}/{=usize}, probes: {=usize}, io_shift: {=u32}, rig latency: {=usize} }}",
            self.n_lines,
            self.n_ports,
            PORTS,
            self.n_juncs,
            JUNCS,
            self.mem_used,
            MEM,
            self.n_losses,
            LOSSES,
            self.n_probes,
            self.io_shift,
            self.rig_latency,
        )
    }
}

//! [`PlantStep`]: what every form of the per-sample solver offers, so firmware and host
//! code can run either form of a plant behind one interface.
//!
//! Two forms implement it:
//! * the generic [`crate::Solver`], data-driven: it loads any network (a `static` or an image
//!   received at run time) into fixed capacities;
//! * a plant-specialised solver that `tidewire compile --rust` emits for one plant: the same
//!   arithmetic (it calls the same [`crate::Profile`] operations in the same order), so every
//!   output and probe sample is bit-for-bit the generic solver's, with the coefficients as
//!   constants and the junction sequence unrolled (see [`crate::emitted`]).

use crate::error::ConfigError;
use crate::network::Shunt;

/// One sample at a time through a loaded plant; the switchable loads and breaks its events use.
pub trait PlantStep {
    /// Advance one sample. `input` is the drive's input code (source EMF, or the rig's
    /// measured pin voltage); the result is the drive's output code (the node voltage at a
    /// source, or the DAC drive 2·b at a rig port). Bounded time, never panics.
    fn step(&mut self, input: i16) -> i16;

    /// Run a block: `output[k] = step(input[k])` for the common length of both slices.
    fn process(&mut self, input: &[i16], output: &mut [i16]) {
        for (x, y) in input.iter().zip(output.iter_mut()) {
            *y = self.step(*x);
        }
    }

    /// Raw read-out of probe `k` after the last step, in wave LSBs: a + b (voltage) or
    /// a − b (current · Z0). 0 for a probe that does not exist.
    fn probe_raw(&self, k: usize) -> i32;

    /// Number of probes read out.
    fn probe_count(&self) -> usize;

    /// The DAC drive code the next `step` of a rig port will return; 0 without a rig port.
    fn rig_drive(&self) -> i16;

    /// Zero every wave and every reactive, choke and loss-filter state: the plant at rest.
    /// Switched loads and breaks keep their current setting.
    fn reset(&mut self);

    /// Change node `junction`'s shunt between two samples (the waves in the lines are kept).
    fn set_shunt(&mut self, junction: u16, shunt: Shunt) -> Result<(), ConfigError>;

    /// Split node `junction` into open ends (`true`) or join it again (`false`).
    fn set_broken(&mut self, junction: u16, broken: bool) -> Result<(), ConfigError>;
}

impl<P: crate::Profile, const PORTS: usize, const JUNCS: usize, const MEM: usize, const LOSSES: usize> PlantStep
    for crate::Solver<P, PORTS, JUNCS, MEM, LOSSES>
{
    #[inline]
    fn step(&mut self, input: i16) -> i16 {
        crate::Solver::step(self, input)
    }
    #[inline]
    fn process(&mut self, input: &[i16], output: &mut [i16]) {
        crate::Solver::process(self, input, output)
    }
    fn probe_raw(&self, k: usize) -> i32 {
        crate::Solver::probe_raw(self, k)
    }
    fn probe_count(&self) -> usize {
        crate::Solver::probe_count(self)
    }
    fn rig_drive(&self) -> i16 {
        crate::Solver::rig_drive(self)
    }
    fn reset(&mut self) {
        crate::Solver::reset(self)
    }
    fn set_shunt(&mut self, junction: u16, shunt: Shunt) -> Result<(), ConfigError> {
        crate::Solver::set_shunt(self, junction, shunt)
    }
    fn set_broken(&mut self, junction: u16, broken: bool) -> Result<(), ConfigError> {
        crate::Solver::set_broken(self, junction, broken)
    }
}

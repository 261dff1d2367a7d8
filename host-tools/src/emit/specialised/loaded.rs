//! The plan of a plant as the generic core loads it, read out into host vectors. The emitter
//! writes exactly these coefficients, so the specialised solver cannot drift from the generic
//! one: both run what the core computed and validated.
use super::EmitError;
use crate::compile::ProfileKind;
use crate::host_core::{HOST_JUNCTIONS, HOST_MEMORY, HOST_PORTS};
use tidewire_core::emitted::{DrivePlan, ElementPlan, JunctionPlan, LossPlan, Plan, PortPlan, ProbePlan};
use tidewire_core::{BuildError, Narrow, Network, Profile, Solver, Wide};

/// Everything the emitter needs, in core order.
#[derive(Debug, Clone, PartialEq)]
pub struct Loaded {
    pub ports: Vec<PortPlan>,
    pub junctions: Vec<JunctionPlan>,
    pub elements: Vec<ElementPlan>,
    pub losses: Vec<LossPlan>,
    pub probes: Vec<ProbePlan>,
    pub drive: DrivePlan,
    pub io_shift: u32,
    pub exponent: u32,
}

/// Load `net` into a generic solver of the host tier for `profile` and read its plan. Runs
/// on a worker thread with a large stack (the host-tier solver is megabytes).
pub fn load(net: &Network<'_>, profile: ProfileKind) -> Result<Loaded, EmitError> {
    std::thread::scope(|scope| {
        let worker = std::thread::Builder::new().stack_size(64 << 20).spawn_scoped(scope, || match profile {
            ProfileKind::Wide => read::<Wide>(net),
            ProfileKind::Narrow => read::<Narrow>(net),
        });
        let worker = worker.map_err(|e| EmitError::Host(e.to_string()))?;
        let loaded = worker.join().map_err(|_| EmitError::Host("the plan reader's worker died".into()))?;
        loaded.map_err(EmitError::Refused)
    })
}

fn read<P: Profile>(net: &Network<'_>) -> Result<Loaded, BuildError> {
    let mut s = Box::new(Solver::<P, HOST_PORTS, HOST_JUNCTIONS, HOST_MEMORY, HOST_PORTS>::new());
    s.load(net)?;
    let plan = Plan::of(&s);
    Ok(Loaded {
        ports: plan.ports().collect(),
        junctions: plan.junctions().collect(),
        elements: plan.elements().collect(),
        losses: plan.losses().collect(),
        probes: plan.probes().collect(),
        drive: plan.drive(),
        io_shift: plan.io_shift(),
        exponent: plan.exponent(),
    })
}

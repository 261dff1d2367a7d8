//! The host side of the bit-exactness check: the same core, plant and stimulus on the host.

use crate::plants::TestPlant;
use crate::stimulus::{run_hashed, SAMPLES, SEEDS};
use tidewire_core::{Narrow, Profile, Solver, Wide};
use tidewire_host::emit::image_bytes;

/// Host capacities: larger than any test plant (capacity never changes results).
const PORTS: usize = 256;
const JUNCS: usize = 256;
const MEM: usize = 1 << 16;
const LOSSES: usize = 256;

/// Hashes for (load path, seed index): `[source seed0, source seed1, image seed0, image seed1]`.
fn hashes_for<P: Profile>(plant: &TestPlant) -> Result<[u32; 4], String> {
    let mut s: Box<Solver<P, PORTS, JUNCS, MEM, LOSSES>> = Box::new(Solver::new());
    let mut out = [0u32; 4];
    s.load(&plant.network()).map_err(|e| format!("host load of {}: {e}", plant.name))?;
    for (i, seed) in SEEDS.iter().enumerate() {
        out[i] = run_hashed(&mut *s, *seed, SAMPLES);
    }
    s.load_image(&image_bytes(&plant.network())).map_err(|e| format!("host image load of {}: {e}", plant.name))?;
    for (i, seed) in SEEDS.iter().enumerate() {
        out[2 + i] = run_hashed(&mut *s, *seed, SAMPLES);
    }
    Ok(out)
}

/// The host hashes of `plant` on the profile named `profile` ("wide" or "narrow").
pub fn hashes(profile: &str, plant: &TestPlant) -> Result<[u32; 4], String> {
    match profile {
        "wide" => hashes_for::<Wide>(plant),
        "narrow" => hashes_for::<Narrow>(plant),
        other => Err(format!("unknown profile {other}")),
    }
}

//! The deterministic stimulus and the output hash, shared word for word by the firmware and
//! the host check (`xtask` includes this file with `#[path]`), so both sides run the same
//! samples and hash the same bytes.
//!
//! Stimulus: xorshift32 noise of i16 codes (half scale), then a step of +10000 codes with
//! small noise on top from `len / 4` on, then the noise alone again from `len / 2` on.
//! Hash: FNV-1a (32-bit) over, per sample, the step output (i16, little-endian) and then
//! every `probe_raw(k)` (i32, little-endian) for k < `probe_count()`.

use tidewire_core::PlantStep;

/// Seeds of the two stimuli every plant is run with.
pub const SEEDS: [u32; 2] = [0x2545_f491, 0x9e37_79b9];

/// Samples per run.
pub const SAMPLES: u32 = 4096;

/// The stimulus generator.
pub struct Stimulus {
    state: u32,
    n: u32,
    len: u32,
}

impl Stimulus {
    /// A stimulus of `len` samples from `seed` (a zero seed is replaced: xorshift needs != 0).
    pub const fn new(seed: u32, len: u32) -> Self {
        Stimulus { state: if seed == 0 { 1 } else { seed }, n: 0, len }
    }

    /// The next input code.
    #[inline(always)]
    pub fn next_code(&mut self) -> i16 {
        // xorshift32 (13, 17, 5).
        let mut x = self.state;
        x ^= x << 13;
        x ^= x >> 17;
        x ^= x << 5;
        self.state = x;
        let noise = ((x >> 16) as u16 as i16) >> 1;
        let n = self.n;
        self.n = n.wrapping_add(1);
        if n >= self.len / 4 && n < self.len / 2 {
            (noise >> 3).wrapping_add(10_000)
        } else {
            noise
        }
    }
}

/// FNV-1a, 32-bit.
pub struct Fnv(pub u32);

impl Default for Fnv {
    fn default() -> Self {
        Self::new()
    }
}

impl Fnv {
    /// The FNV-1a offset basis.
    pub const fn new() -> Self {
        Fnv(0x811c_9dc5)
    }

    /// Hash `bytes` into the state.
    #[inline(always)]
    pub fn bytes(&mut self, bytes: &[u8]) {
        for b in bytes {
            self.0 = (self.0 ^ *b as u32).wrapping_mul(0x0100_0193);
        }
    }
}

/// Reset `solver` (either form: the generic `Solver` or a plant-specialised one), run the
/// stimulus of `seed` through it and hash every output sample.
pub fn run_hashed<S: PlantStep>(solver: &mut S, seed: u32, len: u32) -> u32 {
    solver.reset();
    let mut stim = Stimulus::new(seed, len);
    let mut h = Fnv::new();
    let probes = solver.probe_count();
    for _ in 0..len {
        let y = solver.step(stim.next_code());
        h.bytes(&y.to_le_bytes());
        for k in 0..probes {
            h.bytes(&solver.probe_raw(k).to_le_bytes());
        }
    }
    h.0
}

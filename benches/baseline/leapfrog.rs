//! The baseline a user might otherwise write: an f64 finite-difference (leapfrog) solver of the
//! telegrapher's equations on one uniform line between a Thevenin source and a resistive (or
//! open) far end.
//!
//! It exists to be measured against the delay-line core: its cost per simulated sample is one
//! update per cell, and the number of cells grows with the cable length (cells = length /
//! (v·dt) at the largest stable step), while the core's cost per sample does not depend on
//! the delay.
//!
//! Equations (x along the line, i flowing towards +x, per-metre R', L', C', G' = 0):
//!   ∂v/∂t = −(1/C')·∂i/∂x,   ∂i/∂t = −(1/L')·(∂v/∂x + R'·i).
//! Grids: voltages v_k at the nodes x = k·dx (k = 0..=N) and integer times n·dt, currents
//! i_k at the cell centres x = (k + ½)·dx (k = 0..N) and half times (n + ½)·dt (Yee-style
//! staggering). The end nodes carry half a cell of capacitance and their lumped terminations,
//! both averaged at the half time step (the usual lumped-termination treatment of the
//! leapfrog scheme, see e.g. C. R. Paul, "Analysis of Multiconductor Transmission Lines",
//! FDTD chapter [memory]). Stability needs the Courant number v·dt/dx <= 1; at exactly 1 a
//! lossless line propagates without numerical dispersion (the "magic time step").

// Shared by `benches/versus_leapfrog.rs` and `tests/leapfrog_baseline.rs`, each of which uses
// only part of it (the bench never builds an open end, the test reads node voltages).
#![allow(dead_code)]

/// What terminates the far end of the line.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum FarEnd {
    /// Nothing connected: no current leaves the last node.
    Open,
    /// A resistor to the return conductor, in ohms (> 0).
    Resistor(f64),
}

/// A uniform line between a source and a far-end termination, in SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Setup {
    /// Characteristic impedance of the lossless line, ohms: Z0 = sqrt(L'/C').
    pub z0: f64,
    /// Propagation speed, m/s: v = 1/sqrt(L'·C').
    pub velocity: f64,
    /// Line length, metres.
    pub length: f64,
    /// Series conductor resistance R', ohms per metre (0 for a lossless line).
    pub r_per_m: f64,
    /// Time step, seconds.
    pub dt: f64,
    /// Source resistance Rs, ohms (> 0).
    pub source_ohm: f64,
    /// Far-end termination.
    pub far: FarEnd,
}

/// A leapfrog (staggered-grid finite-difference) line solver.
#[derive(Debug, Clone)]
pub struct Leapfrog {
    /// Node voltages v_0..=v_N at the current integer time.
    v: Vec<f64>,
    /// Cell currents i_0..i_N at the last half time.
    i: Vec<f64>,
    /// Current update i' = ci_keep·i − ci_dv·(v_{k+1} − v_k).
    ci_keep: f64,
    ci_dv: f64,
    /// Interior voltage update v' = v − cv·(i_k − i_{k−1}), cv = dt/(C'·dx).
    cv: f64,
    /// Source node: v0' = (src_keep·v0 + src_e·E − src_i·i_0).
    src_keep: f64,
    src_e: f64,
    src_i: f64,
    /// Far node: vN' = far_keep·vN + far_i·i_{N−1}.
    far_keep: f64,
    far_i: f64,
    /// Source EMF at the last integer time (for its half-step average).
    e_prev: f64,
}

impl Leapfrog {
    /// Build the grid with the fewest cells that keep the Courant number at or below 1.
    pub fn new(s: &Setup) -> Result<Self, String> {
        let positive = [("z0", s.z0), ("velocity", s.velocity), ("length", s.length), ("dt", s.dt)];
        for (name, x) in positive.into_iter().chain([("source_ohm", s.source_ohm)]) {
            if !(x.is_finite() && x > 0.0) {
                return Err(format!("leapfrog setup: `{name}` must be finite and > 0, got {x}"));
            }
        }
        if !(s.r_per_m.is_finite() && s.r_per_m >= 0.0) {
            return Err(format!("leapfrog setup: `r_per_m` must be finite and >= 0, got {}", s.r_per_m));
        }
        if let FarEnd::Resistor(r) = s.far {
            if !(r.is_finite() && r > 0.0) {
                return Err(format!("leapfrog setup: far-end resistor must be finite and > 0, got {r}"));
            }
        }
        // cells = length / (v·dt), rounded up so that the Courant number v·dt/dx stays <= 1
        // (the small slack absorbs the rounding of lengths that are whole multiples).
        let exact = s.length / (s.velocity * s.dt);
        let cells = ((exact - 1e-9).ceil()).max(1.0);
        if cells > 1e8 {
            return Err(format!("leapfrog setup: {cells} cells is too many"));
        }
        let cells = cells as usize;
        let dx = s.length / cells as f64;
        let l = s.z0 / s.velocity; // L' = Z0/v
        let c = 1.0 / (s.z0 * s.velocity); // C' = 1/(Z0·v)

        // (L'/dt + R'/2)·i' = (L'/dt − R'/2)·i − (v_{k+1} − v_k)/dx   (R' i averaged in time)
        let den = l / s.dt + s.r_per_m / 2.0;
        let ci_keep = (l / s.dt - s.r_per_m / 2.0) / den;
        let ci_dv = 1.0 / (dx * den);
        let cv = s.dt / (c * dx);

        // End node with half a cell of capacitance, a = C'·dx/(2·dt):
        //   source: a·(v0' − v0) = (E − (v0' + v0)/2)/Rs − i_0
        //   far:    a·(vN' − vN) = i_{N−1} − (vN' + vN)/(2·RL)   (RL = ∞ for an open end)
        let a = c * dx / (2.0 * s.dt);
        let bs = 1.0 / (2.0 * s.source_ohm);
        let bl = match s.far {
            FarEnd::Open => 0.0,
            FarEnd::Resistor(r) => 1.0 / (2.0 * r),
        };
        Ok(Leapfrog {
            v: vec![0.0; cells + 1],
            i: vec![0.0; cells],
            ci_keep,
            ci_dv,
            cv,
            src_keep: (a - bs) / (a + bs),
            src_e: 1.0 / (s.source_ohm * (a + bs)),
            src_i: 1.0 / (a + bs),
            far_keep: (a - bl) / (a + bl),
            far_i: 1.0 / (a + bl),
            e_prev: 0.0,
        })
    }

    /// Number of cells (current samples) of the grid.
    pub fn cells(&self) -> usize {
        self.i.len()
    }

    /// Advance one time step to the source EMF sample `e` (volts, at the new time); returns
    /// the source-node voltage v_0 at the new time.
    ///
    /// The termination needs E at the half step: the trapezoid (E^n + E^{n+1})/2. Taking the
    /// new sample alone would excite the odd-even (checkerboard) mode that the leapfrog grid
    /// carries undamped at Courant number 1.
    #[inline]
    pub fn step(&mut self, e: f64) -> f64 {
        let e_half = 0.5 * (self.e_prev + e);
        self.e_prev = e;
        // Currents from n − ½ to n + ½, from the voltage differences at n.
        let (ci_keep, ci_dv) = (self.ci_keep, self.ci_dv);
        for (ik, w) in self.i.iter_mut().zip(self.v.windows(2)) {
            *ik = ci_keep * *ik - ci_dv * (w[1] - w[0]);
        }
        // Interior voltages from n to n + 1, from the current differences at n + ½.
        let cv = self.cv;
        let n = self.i.len();
        if let Some(inner) = self.v.get_mut(1..n) {
            for (vk, w) in inner.iter_mut().zip(self.i.windows(2)) {
                *vk -= cv * (w[1] - w[0]);
            }
        }
        let (i_first, i_last) = (self.i.first().copied().unwrap_or(0.0), self.i.last().copied().unwrap_or(0.0));
        if let Some(v0) = self.v.first_mut() {
            *v0 = self.src_keep * *v0 + self.src_e * e_half - self.src_i * i_first;
        }
        if let Some(vn) = self.v.last_mut() {
            *vn = self.far_keep * *vn + self.far_i * i_last;
        }
        self.v.first().copied().unwrap_or(0.0)
    }

    /// Run a block: `output[k] = step(input[k])` for the common length of both slices.
    pub fn process(&mut self, input: &[f64], output: &mut [f64]) {
        for (x, y) in input.iter().zip(output.iter_mut()) {
            *y = self.step(*x);
        }
    }

    /// Voltage of node `k` (0 = source end, `cells()` = far end) at the current time.
    pub fn node_voltage(&self, k: usize) -> f64 {
        self.v.get(k).copied().unwrap_or(f64::NAN)
    }
}

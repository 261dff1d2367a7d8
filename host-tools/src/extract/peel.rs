//! Layer peeling: the impedance profile from the port's reflection impulse response.
//!
//! The plant is modelled as a Goupillaud medium: layers of equal one-way delay dt/2, so
//! that one round trip through a layer is one sample (Bruckstein & Kailath, "Inverse
//! scattering for discrete transmission-line models", SIAM Review 29(3), 1987). The wave
//! going down (into the plant) is D, the wave coming back U, both as sequences in time. At
//! the top of layer j the first sample of U is caused by interface j alone (everything
//! deeper arrives at least one sample later), so its reflection coefficient is
//!
//!   k_j = U_j[0] / D_j[0],   k = (Z_below − Z_above)/(Z_below + Z_above).
//!
//! The interface is then undone (continuity of v = D + U and i = (D − U)/Z; the chain
//! matrix, normalised by √(1 − k²) so that the numbers stay of order one):
//!
//!   D⁺ = (D − k·U)/√(1 − k²),   U⁺ = (U − k·D)/√(1 − k²),
//!
//! and the layer's delay is undone by advancing U by one sample against D (D is late by
//! dt/2 at the bottom, U early by dt/2). Multiple reflections are thereby removed exactly,
//! layer by layer. The first interface is the one between the source resistance Rs (the
//! reference of the waves) and the first cable, so Z_1 = Rs·(1 + k_0)/(1 − k_0) and
//! Z_{j+1} = Z_j·(1 + k_j)/(1 − k_j).

/// Peeling stops at a reflection this strong: the end of the line (open or short).
pub const K_END: f64 = 0.95;
/// ... or when less than this fraction of the incident amplitude still goes deeper.
pub const D_END: f64 = 0.05;

/// How the peeled profile ends.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Ending {
    /// The record ran out: the last layers continue beyond it.
    Record,
    /// A reflection of `k` (|k| >= K_END, or too little wave left) at interface `at`.
    Reflector { at: usize, k: f64 },
}

/// The impedance of each one-sample layer.
#[derive(Debug, Clone, PartialEq)]
pub struct Profile {
    /// Length of one layer: v·dt/2, m.
    pub layer: f64,
    /// Layers before the port: r started this many samples early (smoothing spreads the
    /// port's own step to negative times); they stand for the source resistance.
    pub origin: usize,
    /// z[j] is the impedance of layer j, which spans [j − origin, j + 1 − origin)·layer
    /// from the port, ohm.
    pub z: Vec<f64>,
    /// k[j] is the reflection coefficient of the interface at j·layer (k[0]: source to
    /// first cable).
    pub k: Vec<f64>,
    pub ending: Ending,
}

/// Peel `r`, the reflection impulse response against `rs` at one sample per round trip.
pub fn peel(r: &[f64], rs: f64, layer: f64, origin: usize) -> Profile {
    let n = r.len();
    let mut d: Vec<f64> = vec![0.0; n];
    if n > 0 {
        d[0] = 1.0;
    }
    let mut u = r.to_vec();
    let mut z_above = rs;
    let mut z = Vec::with_capacity(n);
    let mut ks = Vec::with_capacity(n);
    let mut ending = Ending::Record;
    for j in 0..n {
        let len = n - j;
        let (d0, u0) = (d[0], u[0]);
        if d0.abs() < D_END {
            ending = Ending::Reflector { at: j, k: if u0 >= 0.0 { 1.0 } else { -1.0 } };
            break;
        }
        let k = u0 / d0;
        if !k.is_finite() || k.abs() >= K_END {
            ending = Ending::Reflector { at: j, k: k.clamp(-1.0, 1.0) };
            break;
        }
        let c = (1.0 - k * k).sqrt();
        // D keeps its time base, U advances by one sample: both shrink by one.
        for i in 0..len.saturating_sub(1) {
            let dn = (d[i] - k * u[i]) / c;
            let un = (u[i + 1] - k * d[i + 1]) / c;
            d[i] = dn;
            u[i] = un;
        }
        d.truncate(len.saturating_sub(1));
        u.truncate(len.saturating_sub(1));
        let z_below = z_above * (1.0 + k) / (1.0 - k);
        ks.push(k);
        z.push(z_below);
        z_above = z_below;
        if d.is_empty() {
            break;
        }
    }
    Profile { layer, origin, z, k: ks, ending }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Forward model of the same medium: the reflection impulse response of layers with
    /// coefficients `k`, by direct simulation of the lattice (one half-sample per layer).
    fn forward(k: &[f64], n: usize) -> Vec<f64> {
        let m = k.len();
        // down[j]/up[j]: waves in layer j (between interface j and j+1), two half-steps.
        let mut down = vec![0.0; m];
        let mut up = vec![0.0; m];
        let mut r = vec![0.0; n];
        // One loop turn is half a sample: one layer's one-way delay.
        for half in 0..2 * n {
            let inc = if half == 0 { 1.0 } else { 0.0 };
            // Waves arriving at each interface after a full round trip.
            let mut new_down = vec![0.0; m];
            let mut new_up = vec![0.0; m];
            for j in 0..m {
                let from_above = if j == 0 { inc } else { down[j - 1] };
                let from_below = if j + 1 < m { up[j + 1] } else { 0.0 };
                // Scattering at interface j: k for a wave from above, −k from below.
                let refl_up = k[j] * from_above + (1.0 - k[j]) * from_below;
                let trans_down = (1.0 + k[j]) * from_above - k[j] * from_below;
                new_down[j] = trans_down;
                if j == 0 {
                    if half % 2 == 0 {
                        r[half / 2] = refl_up;
                    }
                } else {
                    new_up[j] = refl_up;
                }
            }
            down = new_down;
            up = new_up;
        }
        r
    }

    #[test]
    fn peeling_recovers_the_coefficients_of_a_lattice() {
        // Round trip through our own forward lattice [closed form: the lattice is exact].
        let k = [0.2, 0.0, -0.3, 0.1, 0.0, 0.5, -0.2];
        let r = forward(&k, 64);
        let p = peel(&r, 50.0, 1.0, 0);
        for (j, kk) in k.iter().enumerate() {
            assert!((p.k[j] - kk).abs() < 1e-9, "k[{j}] = {} vs {kk}", p.k[j]);
        }
    }
}

//! Merging the layer profile into uniform segments.
//!
//! Work on ln Z, where a reflection coefficient is nearly half the step (k ≈ Δln Z / 2).
//! A new segment starts where ln Z leaves the running segment's level by more than the
//! tolerance on the same side for `persist` layers in a row: the alternating ringing of a
//! band-limited edge and single noisy layers do not start one. The boundary is placed where
//! ln Z crosses the midpoint of the two levels (linear between layer centres), which for a
//! step on the grid is the interface itself and for a band-limited step its centre. A
//! segment's impedance is the median of its layers without the two next to each boundary.

/// One uniform run of the merged profile.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Run {
    /// Start, m from the port.
    pub start: f64,
    /// End, m from the port.
    pub end: f64,
    /// Impedance, ohm.
    pub z: f64,
}

impl Run {
    pub fn length(&self) -> f64 {
        self.end - self.start
    }
}

fn median(v: &[f64]) -> f64 {
    let mut s = v.to_vec();
    s.sort_by(f64::total_cmp);
    if s.is_empty() {
        return 0.0;
    }
    let m = s.len() / 2;
    if s.len() % 2 == 1 {
        s[m]
    } else {
        0.5 * (s[m - 1] + s[m])
    }
}

/// Robust spread of ln Z from layer to layer (noise), by the MAD of first differences.
pub fn log_noise(lz: &[f64]) -> f64 {
    let d: Vec<f64> = lz.windows(2).map(|w| (w[1] - w[0]).abs()).collect();
    median(&d) / 0.6745 / std::f64::consts::SQRT_2
}

/// Level of layers `a..b` of `lz`, leaving out `guard` layers at each end when it can.
fn level(lz: &[f64], a: usize, b: usize, guard: usize) -> f64 {
    if b > a + 2 * guard + 1 {
        median(&lz[a + guard..b - guard])
    } else {
        median(&lz[a..b])
    }
}

/// Merge layer impedances `z` (layer j spans [j − origin, j + 1 − origin)·`layer` m) with
/// relative tolerance `tol` (e.g. 0.03); `persist` layers in a row must leave the level to
/// start a segment. Runs before the port (negative distance) are dropped or clipped.
pub fn merge(z: &[f64], layer: f64, origin: usize, tol: f64, persist: usize) -> Vec<Run> {
    let n = z.len();
    if n == 0 {
        return vec![];
    }
    let lz: Vec<f64> = z.iter().map(|v| v.max(1e-12).ln()).collect();
    let thr = (1.0 + tol).ln().max(4.0 * log_noise(&lz));
    let persist = persist.max(1);
    let mut cuts: Vec<f64> = vec![0.0]; // boundaries in layers (fractional)
    let mut seg_start = 0usize;
    let mut i = seg_start + 1;
    while i + persist <= n {
        let lev = level(&lz, seg_start, i, 1);
        let dev = |k: usize| lz[k] - lev;
        let side = dev(i).signum();
        let left = (i..i + persist).all(|k| dev(k).abs() > thr && dev(k).signum() == side);
        if !left {
            i += 1;
            continue;
        }
        // The new level: the layers after the deviation starts, past the edge's ringing.
        let next_end = (i + persist + 4).min(n);
        let new = level(&lz, (i + 1).min(next_end - 1), next_end, 0);
        let mid = 0.5 * (lev + new);
        // Midpoint crossing between layer centres, searched around i.
        let lo = i.saturating_sub(3).max(seg_start);
        let mut cut = i as f64;
        for k in lo..(i + persist).min(n - 1) {
            let (a, b) = (lz[k] - mid, lz[k + 1] - mid);
            if a == 0.0 || a.signum() != b.signum() {
                let f = if (a - b).abs() > 0.0 { a / (a - b) } else { 0.0 };
                // Centres at k + 0.5 and k + 1.5: the interface between them is k + 1.
                cut = k as f64 + 0.5 + f;
                break;
            }
        }
        cuts.push(cut);
        seg_start = (cut.round() as usize).clamp(seg_start + 1, n - 1);
        i = seg_start + persist.max(2);
    }
    cuts.push(n as f64);
    let mut runs = Vec::with_capacity(cuts.len() - 1);
    for w in cuts.windows(2) {
        let a = (w[0].round() as usize).min(n - 1);
        let b = (w[1].round() as usize).clamp(a + 1, n);
        let (start, end) = ((w[0] - origin as f64) * layer, (w[1] - origin as f64) * layer);
        if end > 0.5 * layer {
            runs.push(Run {
                start: start.max(0.0),
                end,
                z: level(&lz, a.max(origin), b.max(origin + 1).min(n), 2).exp(),
            });
        }
    }
    absorb_short(runs, persist as f64 * layer)
}

/// Runs shorter than `min` (an edge's ringing) go to the neighbour closer in impedance.
fn absorb_short(mut runs: Vec<Run>, min: f64) -> Vec<Run> {
    while runs.len() > 1 {
        let Some(i) = (0..runs.len()).find(|&i| runs[i].length() < min) else { break };
        let dist = |j: usize| (runs[j].z / runs[i].z).ln().abs();
        let into_prev = i > 0 && (i + 1 == runs.len() || dist(i - 1) <= dist(i + 1));
        if into_prev {
            runs[i - 1].end = runs[i].end;
        } else {
            runs[i + 1].start = runs[i].start;
        }
        runs.remove(i);
    }
    runs
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn steps_on_the_grid_are_cut_at_their_interface() {
        let mut z = vec![50.0; 20];
        z.extend(vec![75.0; 30]);
        z.extend(vec![40.0; 25]);
        let runs = merge(&z, 0.1, 0, 0.03, 3);
        assert_eq!(runs.len(), 3, "{runs:?}");
        assert!((runs[0].end - 2.0).abs() < 1e-9, "{runs:?}");
        assert!((runs[1].end - 5.0).abs() < 1e-9, "{runs:?}");
        assert!((runs[1].z - 75.0).abs() < 1e-9 && (runs[2].z - 40.0).abs() < 1e-9);
    }

    #[test]
    fn alternating_ringing_does_not_start_a_segment() {
        let z: Vec<f64> =
            (0..60).map(|k| if k > 10 && k < 16 { 50.0 * (1.0 + 0.1 * (-1f64).powi(k)) } else { 50.0 }).collect();
        assert_eq!(merge(&z, 1.0, 0, 0.03, 3).len(), 1);
    }
}

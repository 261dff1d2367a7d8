//! The distance-versus-time view: the voltage along a path of segments, rebuilt from the
//! waves that enter each core line at its two ends.
//!
//! Inside a line of delay D, at k samples from end A, the forward wave is the wave that
//! entered at A k samples ago and the backward wave the one that entered at B D − k samples
//! ago: v(k, n) = a_A[n − k] + a_B[n − (D − k)] (method of characteristics).

use crate::compile::{Compiled, LinePiece};
use crate::plant::Plant;

/// A path laid out for the map: core lines in order along the path, each with its
/// orientation (true: travelled from end B to end A) and where it lies (metres).
#[derive(Debug, Clone, PartialEq)]
pub struct Path {
    pub lines: Vec<(u16, bool, f64, f64)>,
    /// Node boundaries along the path: position and name.
    pub boundaries: Vec<(f64, String)>,
}

/// Lay out `plant.lattice_path`, orienting each segment so the path is continuous.
pub fn layout(plant: &Plant, c: &Compiled) -> Option<Path> {
    let segs = &plant.lattice_path;
    let first = *segs.first()?;
    let s0 = &plant.segments[first];
    // Start at the end of the first segment that the second one does not touch.
    let mut at = match segs.get(1).map(|s| &plant.segments[*s]) {
        Some(n) if n.from == s0.from || n.to == s0.from => s0.to,
        _ => s0.from,
    };
    let mut pos = 0.0;
    let mut out = Path { lines: vec![], boundaries: vec![(0.0, plant.nodes[at].name.clone())] };
    for &si in segs {
        let seg = &plant.segments[si];
        let forward = seg.from == at;
        let pieces: Vec<LinePiece> = c.segment_pieces[si].clone();
        let ordered: Vec<LinePiece> = if forward { pieces } else { pieces.into_iter().rev().collect() };
        for p in ordered {
            let (s, e) = if forward { (p.start_m, p.end_m) } else { (seg.length - p.end_m, seg.length - p.start_m) };
            out.lines.push((p.line, !forward, pos + s, pos + e));
        }
        pos += seg.length;
        at = if forward { seg.to } else { seg.from };
        out.boundaries.push((pos, plant.nodes[at].name.clone()));
    }
    Some(out)
}

/// The map: positions (m) and values[n][x] (V) from recorded line-end waves
/// (`line_a[k]` belongs to `path.lines[k]`).
pub fn map(c: &Compiled, path: &Path, line_a: &[Vec<(f64, f64)>]) -> (Vec<f64>, Vec<Vec<f64>>) {
    let mut positions = vec![];
    let mut cols: Vec<(usize, usize, bool, usize)> = vec![]; // (record index, k, reversed, D)
    for (ri, (line, rev, s, e)) in path.lines.iter().enumerate() {
        let d = c.net.lines[*line as usize].delay as usize;
        for k in 0..d {
            positions.push(s + (e - s) * k as f64 / d as f64);
            // k counts from the path's start of this line.
            let k_from_a = if *rev { d - k } else { k };
            cols.push((ri, k_from_a, *rev, d));
        }
    }
    let n = line_a.first().map_or(0, |v| v.len());
    let at = |v: &Vec<(f64, f64)>, i: isize, b: bool| -> f64 {
        if i < 0 {
            0.0
        } else {
            v.get(i as usize).map_or(0.0, |p| if b { p.1 } else { p.0 })
        }
    };
    let values = (0..n)
        .map(|t| {
            cols.iter()
                .map(|&(ri, k, _, d)| {
                    let v = &line_a[ri];
                    at(v, t as isize - k as isize, false) + at(v, t as isize - (d as isize - k as isize), true)
                })
                .collect()
        })
        .collect();
    (positions, values)
}

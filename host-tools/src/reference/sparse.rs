//! Sparse symmetric elimination of the nodal matrix: A = L·D·Lᵀ without pivoting.
//!
//! The nodal matrix of a plant is complex symmetric (reciprocal two-ports, Y12 = Y21) and
//! as sparse as the plant's graph: a tree of segments, perhaps with a few loops. The
//! pattern does not depend on the frequency, so the ordering and the symbolic factorization
//! are done once per plant ([`Pattern::new`]) and each frequency only refills the values
//! and eliminates ([`Pattern::factor`], O(fill) work instead of the dense O(n³)).
//!
//! Ordering: greedy minimum degree. On a tree it eliminates leaves first and creates no
//! fill at all (the classic result for tree-structured systems [closed form]); a loop adds
//! fill only along itself, which is the "small reduced system" of the loop.
//!
//! No pivoting: for Re s > 0 the nodal matrix of a passive plant has a positive definite
//! real part (each two-port and load is positive real, and the drive's conductance makes
//! it definite), and a Schur complement of such a matrix keeps that property, so no pivot
//! vanishes [memory: positive-real network theory]. The caller still checks every pivot
//! against its diagonal ([`Pattern::factor`] reports a small one) and falls back to dense
//! LU with partial pivoting, so a point on the jω axis or a degenerate plant is still exact.

use num_complex::Complex64;
use std::collections::BTreeSet;

/// Ordering, filled pattern and update plan of one symmetric sparsity structure.
#[derive(Debug, Clone)]
pub(crate) struct Pattern {
    n: usize,
    /// Original index of the k-th eliminated unknown.
    order: Vec<usize>,
    /// Elimination step of each original unknown.
    step: Vec<usize>,
    /// Column k's off-diagonal entries are values[n + col_ptr[k] .. n + col_ptr[k + 1]].
    col_ptr: Vec<usize>,
    /// Step index (> k) of each off-diagonal entry's row.
    rows: Vec<usize>,
    /// Schur updates of column k: ops[op_ptr[k]..op_ptr[k + 1]] = (a, b, target) meaning
    /// values[target] −= values[a]·values[b]/d_k.
    op_ptr: Vec<usize>,
    ops: Vec<(u32, u32, u32)>,
}

impl Pattern {
    /// The pattern of an n×n symmetric matrix with the given off-diagonal couplings
    /// (i, j), i ≠ j (duplicates allowed); every diagonal entry is present.
    pub fn new(n: usize, couplings: &[(usize, usize)]) -> Pattern {
        let mut adj: Vec<BTreeSet<usize>> = vec![BTreeSet::new(); n];
        for &(i, j) in couplings {
            if i != j && i < n && j < n {
                adj[i].insert(j);
                adj[j].insert(i);
            }
        }
        // Greedy minimum degree with fill: eliminating v joins all its remaining
        // neighbours pairwise. Ties go to the lowest index, so the order is reproducible.
        let mut done = vec![false; n];
        let mut order = Vec::with_capacity(n);
        let mut fronts: Vec<Vec<usize>> = Vec::with_capacity(n);
        for _ in 0..n {
            let v = (0..n).filter(|&v| !done[v]).min_by_key(|&v| (adj[v].len(), v)).unwrap_or(0);
            done[v] = true;
            let nb: Vec<usize> = adj[v].iter().copied().collect();
            for &a in &nb {
                adj[a].remove(&v);
                for &b in &nb {
                    if a != b {
                        adj[a].insert(b);
                    }
                }
            }
            order.push(v);
            fronts.push(nb);
        }
        let mut step = vec![0; n];
        for (k, &v) in order.iter().enumerate() {
            step[v] = k;
        }
        let mut col_ptr = vec![0];
        let mut rows = Vec::new();
        for nb in &fronts {
            let mut r: Vec<usize> = nb.iter().map(|&v| step[v]).collect();
            r.sort_unstable();
            rows.extend(r);
            col_ptr.push(rows.len());
        }
        let mut p = Pattern { n, order, step, col_ptr, rows, op_ptr: vec![0], ops: Vec::new() };
        for k in 0..n {
            let (lo, hi) = (p.col_ptr[k], p.col_ptr[k + 1]);
            for a in lo..hi {
                for b in a..hi {
                    let (ra, rb) = (p.rows[a], p.rows[b]);
                    let target = p.slot(ra, rb);
                    p.ops.push(((n + a) as u32, (n + b) as u32, target as u32));
                }
            }
            p.op_ptr.push(p.ops.len());
        }
        p
    }

    /// Number of unknowns.
    pub fn len(&self) -> usize {
        self.n
    }

    /// Length of the value array (diagonal, then the filled off-diagonal entries).
    pub fn values_len(&self) -> usize {
        self.n + self.rows.len()
    }

    /// Slot of the entry at elimination steps (i, j) (symmetric).
    fn slot(&self, i: usize, j: usize) -> usize {
        if i == j {
            return i;
        }
        let (c, r) = if i < j { (i, j) } else { (j, i) };
        let cols = &self.rows[self.col_ptr[c]..self.col_ptr[c + 1]];
        // Present by construction: (c, r) is in the filled pattern.
        let at = cols.binary_search(&r).unwrap_or(0);
        self.n + self.col_ptr[c] + at
    }

    /// Slot of the entry (i, j) in original indices, for assembling the values.
    pub fn position(&self, i: usize, j: usize) -> usize {
        self.slot(self.step[i], self.step[j])
    }

    /// Factor in place: afterwards `values` holds D on the diagonal slots and L·D below.
    /// Returns the original index of a pivot that is not finite or smaller than `tiny`
    /// times its row's original diagonal (the caller then solves densely).
    pub fn factor(&self, values: &mut [Complex64], tiny: f64) -> Result<(), usize> {
        let scale: Vec<f64> = values[..self.n].iter().map(|v| v.norm()).collect();
        for k in 0..self.n {
            let d = values[k];
            if !(d.re.is_finite() && d.im.is_finite()) || d.norm() <= tiny * scale[k] || d.norm() == 0.0 {
                return Err(self.order[k]);
            }
            let inv = 1.0 / d;
            for &(a, b, t) in &self.ops[self.op_ptr[k]..self.op_ptr[k + 1]] {
                let u = values[a as usize] * values[b as usize] * inv;
                values[t as usize] -= u;
            }
        }
        Ok(())
    }

    /// Solve A·x = b with the factored values; `b` is in original order and becomes x.
    pub fn solve(&self, values: &[Complex64], b: &mut [Complex64]) {
        let n = self.n;
        let mut y: Vec<Complex64> = self.order.iter().map(|&v| b[v]).collect();
        // L·z = y, with L = (L·D)·D⁻¹ below the unit diagonal.
        for k in 0..n {
            let zk = y[k];
            let inv = 1.0 / values[k];
            for e in self.col_ptr[k]..self.col_ptr[k + 1] {
                y[self.rows[e]] -= values[n + e] * inv * zk;
            }
        }
        for k in 0..n {
            y[k] /= values[k];
        }
        // Lᵀ·x = D⁻¹·z.
        for k in (0..n).rev() {
            let inv = 1.0 / values[k];
            let mut acc = y[k];
            for e in self.col_ptr[k]..self.col_ptr[k + 1] {
                acc -= values[n + e] * inv * y[self.rows[e]];
            }
            y[k] = acc;
        }
        for (k, &v) in self.order.iter().enumerate() {
            b[v] = y[k];
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use nalgebra::{DMatrix, DVector};

    fn c(re: f64, im: f64) -> Complex64 {
        Complex64::new(re, im)
    }

    /// A complex symmetric matrix with positive definite real part on the given graph.
    fn check(n: usize, edges: &[(usize, usize)]) -> usize {
        let p = Pattern::new(n, edges);
        let mut dense = DMatrix::<Complex64>::zeros(n, n);
        let mut vals = vec![c(0.0, 0.0); p.values_len()];
        for (k, &(i, j)) in edges.iter().enumerate() {
            let y = c(1.0 + 0.1 * k as f64, 0.7 - 0.05 * k as f64);
            for (a, b, v) in [(i, i, y), (j, j, y), (i, j, -y), (j, i, -y)] {
                dense[(a, b)] += v;
            }
            vals[p.position(i, i)] += y;
            vals[p.position(j, j)] += y;
            vals[p.position(i, j)] -= y;
        }
        for i in 0..n {
            let y = c(0.02 * (i + 1) as f64, -0.3);
            dense[(i, i)] += y;
            vals[p.position(i, i)] += y;
        }
        let b: Vec<Complex64> = (0..n).map(|i| c(i as f64 - 1.5, 0.25 * i as f64)).collect();
        let want = dense.clone().lu().solve(&DVector::from_vec(b.clone())).unwrap();
        p.factor(&mut vals, 1e-12).unwrap();
        let mut x = b;
        p.solve(&vals, &mut x);
        for i in 0..n {
            assert!((x[i] - want[i]).norm() < 1e-10 * want.norm(), "unknown {i}: {} vs {}", x[i], want[i]);
        }
        p.rows.len()
    }

    #[test]
    fn a_tree_factors_without_fill_and_matches_dense_lu() {
        // [closed form] leaves-first elimination of a tree creates no fill: L has exactly
        // one off-diagonal entry per edge.
        let edges = [(0, 1), (1, 2), (1, 3), (3, 4), (3, 5), (0, 6), (6, 7)];
        assert_eq!(check(8, &edges), edges.len());
    }

    #[test]
    fn loops_and_a_long_chain_match_dense_lu() {
        let mut edges: Vec<(usize, usize)> = (0..39).map(|i| (i, i + 1)).collect();
        edges.extend([(0, 39), (10, 20)]);
        let fill = check(40, &edges);
        // A ring closes with fill along it only: far fewer than the dense 40·39/2 entries.
        assert!(fill < 120, "fill {fill}");
    }
}

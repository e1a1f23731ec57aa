//! Modified nodal analysis: the matrix of a group and its solution.
//!
//! Elements ask for the positions they stamp once, when the netlist is
//! built (`Pattern::handle`), and then add into those positions at every
//! Newton iteration with no lookup — the way SPICE keeps pointers into
//! its sparse matrix. Small groups are factored densely (LU with partial
//! pivoting); large ones with a sparse LU: a minimum-degree ordering of
//! the (structurally symmetric) nodal pattern, fill computed once, and a
//! numeric factorisation that only replays the precomputed updates.
//! `cargo bench --bench engine` measures both on nodal patterns: factor +
//! solve at n = 8 took 0.22 µs dense and 0.13 µs sparse, at 48 unknowns
//! 5.7 µs and 0.58 µs, at 512 unknowns 1.9 ms and 7.6 µs. The sparse path
//! wins from the smallest sizes on; the dense one is kept up to
//! `DENSE_MAX` for its partial pivoting (the sparse order pivots on the
//! diagonal only and falls back to dense when a pivot is too small), at a
//! cost below half a microsecond per solve.

use crate::fasthash::FastMap;

/// No position: the row or column is a fixed node (a rail or ground).
pub const NONE: u32 = u32::MAX;

/// Groups up to this many unknowns are factored densely.
pub const DENSE_MAX: usize = 12;

/// The positions of a matrix's nonzero entries.
#[derive(Clone, Debug, Default)]
pub struct Pattern {
    pub n: usize,
    entries: Vec<(u32, u32)>,
    /// (i, j) → handle: a table for small matrices, a map for large ones
    table: Vec<u32>,
    map: FastMap<(u32, u32), u32>,
}

impl Pattern {
    pub fn new(n: usize) -> Pattern {
        let mut p = Pattern {
            n,
            table: if n <= DENSE_MAX {
                vec![NONE; n * n]
            } else {
                Vec::new()
            },
            ..Pattern::default()
        };
        for i in 0..n as u32 {
            p.handle(i, i);
        }
        p
    }

    /// The position of entry (`i`, `j`), created on first use.
    pub fn handle(&mut self, i: u32, j: u32) -> u32 {
        let at = i as usize * self.n + j as usize;
        if let Some(&h) = self.table.get(at).filter(|&&h| h != NONE) {
            return h;
        }
        if self.table.is_empty()
            && let Some(&h) = self.map.get(&(i, j))
        {
            return h;
        }
        let h = self.entries.len() as u32;
        self.entries.push((i, j));
        match self.table.get_mut(at) {
            Some(slot) => *slot = h,
            None => {
                self.map.insert((i, j), h);
            }
        }
        h
    }

    pub fn len(&self) -> usize {
        self.entries.len()
    }

    pub fn is_empty(&self) -> bool {
        self.entries.is_empty()
    }

    /// Diagonal position of row `i` (always present).
    pub fn diag(&self, i: usize) -> u32 {
        i as u32
    }

    pub fn entries(&self) -> &[(u32, u32)] {
        &self.entries
    }
}

/// A factorisation that can be repeated with new values on one pattern.
#[derive(Clone, Debug)]
pub enum Lu {
    Dense(DenseLu),
    Sparse(SparseLu),
}

impl Lu {
    pub fn new(p: &Pattern) -> Lu {
        if p.n <= DENSE_MAX {
            Lu::Dense(DenseLu::new(p))
        } else {
            Lu::Sparse(SparseLu::new(p))
        }
    }

    /// Factor the matrix whose entries are `vals` (indexed by handle) and
    /// solve `A·x = b` in place. `false` when the matrix is singular.
    pub fn solve(&mut self, vals: &[f64], b: &mut [f64]) -> bool {
        match self {
            Lu::Dense(d) => d.factor(vals) && d.solve(b),
            Lu::Sparse(s) => {
                if s.factor(vals) {
                    s.solve(b);
                    true
                } else {
                    // a pivot the static order cannot take: fall back to
                    // partial pivoting for this solve
                    let mut d = DenseLu::from_sparse(s);
                    d.factor(vals) && d.solve(b)
                }
            }
        }
    }
}

/// Dense LU with partial pivoting.
#[derive(Clone, Debug)]
pub struct DenseLu {
    n: usize,
    /// scratch for the substitutions
    y: Vec<f64>,
    /// handle → row-major position
    pos: Vec<u32>,
    a: Vec<f64>,
    perm: Vec<usize>,
}

impl DenseLu {
    pub fn new(p: &Pattern) -> DenseLu {
        let n = p.n;
        DenseLu {
            n,
            pos: p.entries.iter().map(|&(i, j)| i * n as u32 + j).collect(),
            a: vec![0.0; n * n],
            perm: (0..n).collect(),
            y: vec![0.0; n],
        }
    }

    fn from_sparse(s: &SparseLu) -> DenseLu {
        let n = s.n;
        DenseLu {
            n,
            pos: s.orig.iter().map(|&(i, j)| i * n as u32 + j).collect(),
            a: vec![0.0; n * n],
            perm: (0..n).collect(),
            y: vec![0.0; n],
        }
    }

    fn factor(&mut self, vals: &[f64]) -> bool {
        let n = self.n;
        self.a.iter_mut().for_each(|x| *x = 0.0);
        for (h, &p) in self.pos.iter().enumerate() {
            if let (Some(v), Some(slot)) = (vals.get(h), self.a.get_mut(p as usize)) {
                *slot += *v;
            }
        }
        for (i, p) in self.perm.iter_mut().enumerate() {
            *p = i;
        }
        let a = &mut self.a;
        for k in 0..n {
            // pivot: the largest entry of column k at or below the diagonal
            let mut best = k;
            let mut bv = a[k * n + k].abs();
            for i in k + 1..n {
                let v = a[i * n + k].abs();
                if v > bv {
                    bv = v;
                    best = i;
                }
            }
            if bv == 0.0 || !bv.is_finite() {
                return false;
            }
            if best != k {
                for j in 0..n {
                    a.swap(k * n + j, best * n + j);
                }
                self.perm.swap(k, best);
            }
            let piv = a[k * n + k];
            for i in k + 1..n {
                let l = a[i * n + k] / piv;
                if l == 0.0 {
                    continue;
                }
                a[i * n + k] = l;
                for j in k + 1..n {
                    a[i * n + j] -= l * a[k * n + j];
                }
            }
        }
        true
    }

    fn solve(&mut self, b: &mut [f64]) -> bool {
        let n = self.n;
        if b.len() < n {
            return false;
        }
        let a = &self.a;
        let y = &mut self.y;
        for (yi, &p) in y.iter_mut().zip(&self.perm) {
            *yi = b[p];
        }
        for i in 0..n {
            let mut s = y[i];
            for j in 0..i {
                s -= a[i * n + j] * y[j];
            }
            y[i] = s;
        }
        for i in (0..n).rev() {
            let mut s = y[i];
            for j in i + 1..n {
                s -= a[i * n + j] * y[j];
            }
            y[i] = s / a[i * n + i];
        }
        b[..n].copy_from_slice(y);
        y.iter().all(|v| v.is_finite())
    }
}

/// Sparse LU on a static minimum-degree order with diagonal pivots.
#[derive(Clone, Debug)]
pub struct SparseLu {
    n: usize,
    /// the original pattern (for the dense fall-back)
    orig: Vec<(u32, u32)>,
    /// new position of old row/column i
    inv: Vec<u32>,
    /// old index at new position k
    order: Vec<u32>,
    /// handle → position in `lu`
    pos: Vec<u32>,
    lu: Vec<f64>,
    diag: Vec<u32>,
    /// per pivot k: range into `nb`/`lpos`/`upos`, and into `pairs`
    nb_start: Vec<u32>,
    nb: Vec<u32>,
    lpos: Vec<u32>,
    upos: Vec<u32>,
    pair_start: Vec<u32>,
    pairs: Vec<u32>,
}

impl SparseLu {
    pub fn new(p: &Pattern) -> SparseLu {
        let n = p.n;
        // symmetric adjacency of the pattern
        let mut adj: Vec<Vec<u32>> = vec![Vec::new(); n];
        for &(i, j) in &p.entries {
            if i != j {
                adj[i as usize].push(j);
                adj[j as usize].push(i);
            }
        }
        for a in &mut adj {
            a.sort_unstable();
            a.dedup();
        }
        // minimum degree: eliminate the node of least degree, its
        // remaining neighbours become a clique (the fill)
        let mut alive = vec![true; n];
        let mut heap: std::collections::BinaryHeap<std::cmp::Reverse<(usize, u32)>> = (0..n as u32)
            .map(|i| std::cmp::Reverse((adj[i as usize].len(), i)))
            .collect();
        let mut order = Vec::with_capacity(n);
        let mut nbs: Vec<Vec<u32>> = vec![Vec::new(); n];
        while let Some(std::cmp::Reverse((d, v))) = heap.pop() {
            let vi = v as usize;
            if !alive[vi] || adj[vi].len() != d {
                continue;
            }
            alive[vi] = false;
            let nb: Vec<u32> = adj[vi]
                .iter()
                .copied()
                .filter(|&u| alive[u as usize])
                .collect();
            for &u in &nb {
                let ui = u as usize;
                let mut merged: Vec<u32> = adj[ui]
                    .iter()
                    .copied()
                    .filter(|&w| w != v && alive[w as usize])
                    .collect();
                merged.extend(nb.iter().copied().filter(|&w| w != u));
                merged.sort_unstable();
                merged.dedup();
                adj[ui] = merged;
                heap.push(std::cmp::Reverse((adj[ui].len(), u)));
            }
            nbs[vi] = nb;
            order.push(v);
        }
        let mut inv = vec![0u32; n];
        for (k, &o) in order.iter().enumerate() {
            inv[o as usize] = k as u32;
        }
        // filled pattern in the new order: diagonal, then for each pivot
        // its later neighbours in its row (U) and its column (L)
        let mut posmap: FastMap<(u32, u32), u32> = FastMap::default();
        let mut next = 0u32;
        let mut slot = |i: u32, j: u32, posmap: &mut FastMap<(u32, u32), u32>| -> u32 {
            *posmap.entry((i, j)).or_insert_with(|| {
                next += 1;
                next - 1
            })
        };
        let diag: Vec<u32> = (0..n as u32).map(|k| slot(k, k, &mut posmap)).collect();
        let mut nb_start = Vec::with_capacity(n + 1);
        let mut nb_new = Vec::new();
        let mut lpos = Vec::new();
        let mut upos = Vec::new();
        for (k, &old) in order.iter().enumerate() {
            nb_start.push(nb_new.len() as u32);
            let old = old as usize;
            let mut later: Vec<u32> = nbs[old].iter().map(|&u| inv[u as usize]).collect();
            later.sort_unstable();
            for &j in &later {
                nb_new.push(j);
                lpos.push(slot(j, k as u32, &mut posmap));
                upos.push(slot(k as u32, j, &mut posmap));
            }
        }
        nb_start.push(nb_new.len() as u32);
        let mut pair_start = Vec::with_capacity(n + 1);
        let mut pairs = Vec::new();
        for k in 0..n {
            pair_start.push(pairs.len() as u32);
            let r = nb_start[k] as usize..nb_start[k + 1] as usize;
            for &i in &nb_new[r.clone()] {
                for &j in &nb_new[r.clone()] {
                    pairs.push(slot(i, j, &mut posmap));
                }
            }
        }
        pair_start.push(pairs.len() as u32);
        let pos: Vec<u32> = p
            .entries
            .iter()
            .map(|&(i, j)| slot(inv[i as usize], inv[j as usize], &mut posmap))
            .collect();
        let size = posmap.len();
        SparseLu {
            n,
            orig: p.entries.clone(),
            inv,
            order,
            pos,
            lu: vec![0.0; size],
            diag,
            nb_start,
            nb: nb_new,
            lpos,
            upos,
            pair_start,
            pairs,
        }
    }

    fn factor(&mut self, vals: &[f64]) -> bool {
        self.lu.iter_mut().for_each(|x| *x = 0.0);
        for (h, &p) in self.pos.iter().enumerate() {
            if let Some(v) = vals.get(h) {
                self.lu[p as usize] += *v;
            }
        }
        for k in 0..self.n {
            let piv = self.lu[self.diag[k] as usize];
            let (a, b) = (self.nb_start[k] as usize, self.nb_start[k + 1] as usize);
            let m = b - a;
            // a pivot much smaller than its column: let the dense path pivot
            let col_max = (a..b)
                .map(|t| self.lu[self.lpos[t] as usize].abs())
                .fold(0.0f64, f64::max);
            if !piv.is_finite() || piv == 0.0 || piv.abs() < 1e-13 * col_max {
                return false;
            }
            let pbase = self.pair_start[k] as usize;
            for (ai, t) in (a..b).enumerate() {
                let l = self.lu[self.lpos[t] as usize] / piv;
                self.lu[self.lpos[t] as usize] = l;
                if l == 0.0 {
                    continue;
                }
                for (bj, u) in (a..b).enumerate() {
                    let uv = self.lu[self.upos[u] as usize];
                    let q = self.pairs[pbase + ai * m + bj] as usize;
                    self.lu[q] -= l * uv;
                }
            }
        }
        true
    }

    fn solve(&self, b: &mut [f64]) {
        let n = self.n;
        let mut y: Vec<f64> = self.order.iter().map(|&o| b[o as usize]).collect();
        for k in 0..n {
            let yk = y[k];
            for t in self.nb_start[k] as usize..self.nb_start[k + 1] as usize {
                y[self.nb[t] as usize] -= self.lu[self.lpos[t] as usize] * yk;
            }
        }
        for k in (0..n).rev() {
            let mut s = y[k];
            for t in self.nb_start[k] as usize..self.nb_start[k + 1] as usize {
                s -= self.lu[self.upos[t] as usize] * y[self.nb[t] as usize];
            }
            y[k] = s / self.lu[self.diag[k] as usize];
        }
        for (old, &k) in self.inv.iter().enumerate() {
            b[old] = y[k as usize];
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A ladder network with a star at one end: both solvers must agree
    /// with each other and with the matrix.
    fn system(n: usize) -> (Pattern, Vec<f64>, Vec<f64>) {
        let mut p = Pattern::new(n);
        let mut vals = vec![0.0; n];
        let add = |p: &mut Pattern, vals: &mut Vec<f64>, i: usize, j: usize, v: f64| {
            let h = p.handle(i as u32, j as u32) as usize;
            if vals.len() <= h {
                vals.resize(h + 1, 0.0);
            }
            vals[h] += v;
        };
        for i in 0..n {
            add(&mut p, &mut vals, i, i, 1e-3);
        }
        for i in 1..n {
            let j = if i % 7 == 0 { 0 } else { i - 1 };
            let g = 1.0 / (10.0 + i as f64);
            add(&mut p, &mut vals, i, i, g);
            add(&mut p, &mut vals, j, j, g);
            add(&mut p, &mut vals, i, j, -g);
            add(&mut p, &mut vals, j, i, -g);
            // a transconductance: not symmetric in value
            add(&mut p, &mut vals, j, i, 0.01);
        }
        let b: Vec<f64> = (0..n).map(|i| (i as f64).sin()).collect();
        (p, vals, b)
    }

    #[test]
    fn sparse_and_dense_agree() {
        let (p, vals, b) = system(200);
        let mut d = DenseLu::new(&p);
        let mut x1 = b.clone();
        assert!(d.factor(&vals) && d.solve(&mut x1));
        let mut s = SparseLu::new(&p);
        let mut x2 = b.clone();
        assert!(s.factor(&vals));
        s.solve(&mut x2);
        for (a, c) in x1.iter().zip(&x2) {
            assert!((a - c).abs() < 1e-9 * a.abs().max(1.0), "{a} vs {c}");
        }
    }
}

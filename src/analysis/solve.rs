//! Nodal analysis of one island.
//!
//! Rails and ground are ideal sources, so they enter as known potentials;
//! every element is a conductance or a Norton source (a voltage source
//! with a series resistance), which keeps the nodal matrix symmetric. The
//! matrix of an island is small; it is solved densely by Gaussian
//! elimination with partial pivoting. A tiny conductance to ground on
//! every node keeps floating nodes solvable; which nodes float is decided
//! apart, from connectivity (see `Network::floating`).

use crate::fasthash::FastMap as HashMap;
use crate::model::NetId;

/// Conductance that keeps floating nodes solvable (S).
pub const GMIN: f64 = 1e-12;

/// The largest island solved densely.
pub const MAX_DENSE: usize = 2000;

pub struct Network {
    pub nodes: Vec<NetId>,
    index: HashMap<NetId, usize>,
    fixed: HashMap<NetId, f64>,
    g: Vec<f64>,
    rhs: Vec<f64>,
    /// Connectivity for floating detection: union-find over nodes plus
    /// one extra element for "a defined potential".
    parent: Vec<usize>,
}

impl Network {
    pub fn new(nodes: &[NetId], fixed: impl IntoIterator<Item = (NetId, f64)>) -> Network {
        let n = nodes.len();
        let index = nodes.iter().enumerate().map(|(i, &id)| (id, i)).collect();
        Network {
            nodes: nodes.to_vec(),
            index,
            fixed: fixed.into_iter().collect(),
            g: vec![0.0; n * n],
            rhs: vec![0.0; n],
            parent: (0..=n).collect(),
        }
    }

    fn n(&self) -> usize {
        self.nodes.len()
    }

    fn find(&mut self, mut x: usize) -> usize {
        while self.parent[x] != x {
            let p = self.parent[x];
            self.parent[x] = self.parent[p];
            x = p;
        }
        x
    }

    fn union(&mut self, a: usize, b: usize) {
        let ra = self.find(a);
        let rb = self.find(b);
        if ra != rb {
            self.parent[ra] = rb;
        }
    }

    /// Where a net enters the equations.
    fn slot(&self, net: NetId) -> Slot {
        if let Some(&v) = self.fixed.get(&net) {
            Slot::Fixed(v)
        } else if let Some(&i) = self.index.get(&net) {
            Slot::Node(i)
        } else {
            Slot::Outside
        }
    }

    /// A conductance between two nets.
    pub fn conductance(&mut self, a: NetId, b: NetId, g: f64) {
        if !(g.is_finite() && g > 0.0) {
            return;
        }
        let n = self.n();
        match (self.slot(a), self.slot(b)) {
            (Slot::Node(i), Slot::Node(j)) => {
                self.g[i * n + i] += g;
                self.g[j * n + j] += g;
                self.g[i * n + j] -= g;
                self.g[j * n + i] -= g;
                self.union(i, j);
            }
            (Slot::Node(i), Slot::Fixed(v)) | (Slot::Fixed(v), Slot::Node(i)) => {
                self.g[i * n + i] += g;
                self.rhs[i] += g * v;
                self.union(i, n);
            }
            _ => {}
        }
    }

    /// A voltage source `V(a) - V(b) = v` behind a resistance `r`.
    pub fn source(&mut self, a: NetId, b: NetId, v: f64, r: f64) {
        let r = r.max(1e-6);
        let g = 1.0 / r;
        self.conductance(a, b, g);
        let i = v * g;
        if let Slot::Node(ia) = self.slot(a) {
            self.rhs[ia] += i;
        }
        if let Slot::Node(ib) = self.slot(b) {
            self.rhs[ib] -= i;
        }
    }

    /// A source to the 0 V reference (a controller or driver output).
    pub fn source_to_ref(&mut self, a: NetId, v: f64, r: f64) {
        let r = r.max(1e-6);
        let g = 1.0 / r;
        let n = self.n();
        if let Slot::Node(i) = self.slot(a) {
            self.g[i * n + i] += g;
            self.rhs[i] += v * g;
            self.union(i, n);
        }
    }

    /// Nodes with no conducting path to a defined potential.
    pub fn floating(&mut self) -> Vec<bool> {
        let n = self.n();
        let anchor = self.find(n);
        (0..n).map(|i| self.find(i) != anchor).collect()
    }

    /// Solve; `None` if the matrix is singular or too large.
    pub fn solve(&self) -> Option<Vec<f64>> {
        let n = self.n();
        if n == 0 {
            return Some(Vec::new());
        }
        if n > MAX_DENSE {
            return None;
        }
        let mut a = self.g.clone();
        let mut b = self.rhs.clone();
        for i in 0..n {
            a[i * n + i] += GMIN;
        }
        for col in 0..n {
            let mut piv = col;
            let mut best = a[col * n + col].abs();
            for r in col + 1..n {
                let v = a[r * n + col].abs();
                if v > best {
                    best = v;
                    piv = r;
                }
            }
            if best < 1e-300 {
                return None;
            }
            if piv != col {
                for k in 0..n {
                    a.swap(col * n + k, piv * n + k);
                }
                b.swap(col, piv);
            }
            let d = a[col * n + col];
            for r in col + 1..n {
                let f = a[r * n + col] / d;
                if f == 0.0 {
                    continue;
                }
                for k in col..n {
                    a[r * n + k] -= f * a[col * n + k];
                }
                b[r] -= f * b[col];
            }
        }
        let mut x = vec![0.0; n];
        for i in (0..n).rev() {
            let mut s = b[i];
            for k in i + 1..n {
                s -= a[i * n + k] * x[k];
            }
            x[i] = s / a[i * n + i];
        }
        if x.iter().all(|v| v.is_finite()) {
            Some(x)
        } else {
            None
        }
    }

    /// Voltage of a net in a solution.
    pub fn voltage(&self, x: &[f64], net: NetId) -> Option<f64> {
        match self.slot(net) {
            Slot::Fixed(v) => Some(v),
            Slot::Node(i) => x.get(i).copied(),
            Slot::Outside => None,
        }
    }
}

#[derive(Clone, Copy)]
enum Slot {
    Node(usize),
    Fixed(f64),
    Outside,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn divider_solved_by_hand() {
        // 12 V — 10 kΩ — node — 2.2 kΩ — 0 V: V = 12·2.2/12.2 = 2.1639 V
        let mut n = Network::new(&[2], [(0, 12.0), (1, 0.0)]);
        n.conductance(0, 2, 1.0 / 10e3);
        n.conductance(2, 1, 1.0 / 2.2e3);
        let x = n.solve().unwrap_or_default();
        let v = n.voltage(&x, 2).unwrap_or(f64::NAN);
        assert!((v - 12.0 * 2.2 / 12.2).abs() < 1e-6, "{v}");
    }

    #[test]
    fn two_node_ladder_and_source() {
        // source 5 V / 100 Ω into node a; a–b 100 Ω; b–0 V 100k.
        let mut n = Network::new(&[10, 11], [(0, 0.0)]);
        n.source_to_ref(10, 5.0, 100.0);
        n.conductance(10, 11, 1.0 / 100.0);
        n.conductance(11, 0, 1.0 / 100e3);
        let x = n.solve().unwrap_or_default();
        let vb = n.voltage(&x, 11).unwrap_or(f64::NAN);
        let expect = 5.0 * 100e3 / (100e3 + 200.0);
        assert!((vb - expect).abs() < 1e-6, "{vb} vs {expect}");
        assert_eq!(n.floating(), vec![false, false]);
    }

    #[test]
    fn floating_nodes_are_found() {
        let mut n = Network::new(&[5, 6], [(0, 0.0)]);
        n.conductance(5, 6, 1e-3);
        assert_eq!(n.floating(), vec![true, true]);
        n.conductance(6, 0, 1e-5);
        assert_eq!(n.floating(), vec![false, false]);
    }
}

//! Operating points: each controller-pin assignment of a group, at both
//! corners (rails at their maximum for stress, at their minimum for
//! drive), with motors stalled and running.
//!
//! A solve starts from the last solution (warm start) or from SPICE's
//! initial junction voltages, and on failure steps gmin and then the
//! sources. A state that still fails is returned as not converged and the
//! caller reports it.

use super::groups::PinState;
use super::netlist::{Corner, Dev, Nd, Netlist};
use super::newton::{self, Engine, Excitation, ITL1};

/// Motors at stall (no back-EMF: every start passes through it) or
/// running (back-EMF from `i_rated`: what the thermal checks read).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Mode {
    Stall,
    Run,
}

/// How a solve converged.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Method {
    Newton,
    GminStepping,
    SourceStepping,
    Failed,
}

/// A solved operating point.
#[derive(Clone, Debug)]
pub struct OpPoint {
    pub x: Vec<f64>,
    pub ex: Excitation,
    pub method: Method,
    /// Nodes with no DC path to a source (their voltage is set only by
    /// the shunt conductance).
    pub floating: Vec<bool>,
}

impl OpPoint {
    pub fn converged(&self) -> bool {
        self.method != Method::Failed
    }

    pub fn v(&self, n: Nd) -> f64 {
        match n {
            Nd::Var(i) => self.x.get(i as usize).copied().unwrap_or(0.0),
            Nd::Fix(i) => self.ex.fixed.get(i as usize).copied().unwrap_or(0.0),
        }
    }

    pub fn is_floating(&self, n: Nd) -> bool {
        match n {
            Nd::Var(i) => self.floating.get(i as usize).copied().unwrap_or(false),
            Nd::Fix(_) => false,
        }
    }
}

/// The sources of one solve.
pub fn excitation(nl: &Netlist, n_pins: usize, assign: &[PinState], corner: Corner) -> Excitation {
    let mut pins = vec![None; n_pins];
    for e in &nl.elems {
        if let Dev::Pin {
            pin,
            level_max,
            level_min,
            ..
        } = e.dev
        {
            let level = match corner {
                Corner::Max => level_max,
                Corner::Min => level_min,
            };
            if let (Some(slot), Some(s)) = (pins.get_mut(pin as usize), assign.get(pin as usize)) {
                *slot = match s {
                    PinState::High => Some(level),
                    PinState::Low => Some(0.0),
                    PinState::HiZ => None,
                };
            }
        }
    }
    Excitation {
        fixed: nl.fixed_at(corner),
        pins,
        emf: vec![0.0; nl.elems.len()],
    }
}

/// Solve one operating point.
pub fn solve(nl: &Netlist, ex: Excitation, guess: Option<&[f64]>) -> OpPoint {
    let mut eng = Engine::new(nl);
    let n = nl.n;
    let mut x = vec![0.0; n];
    let mut method = Method::Failed;
    if let Some(g) = guess.filter(|g| g.len() == n) {
        x.copy_from_slice(g);
        eng.junctions_from(&x, &ex);
        if eng.newton(&mut x, &ex, None, ITL1) {
            method = Method::Newton;
        }
    }
    if method == Method::Failed {
        x.iter_mut().for_each(|v| *v = 0.0);
        eng.init_junctions();
        if eng.newton(&mut x, &ex, None, ITL1) {
            method = Method::Newton;
        }
    }
    if method == Method::Failed && gmin_stepping(&mut eng, &mut x, &ex) {
        method = Method::GminStepping;
    }
    if method == Method::Failed && source_stepping(&mut eng, &mut x, &ex) {
        method = Method::SourceStepping;
    }
    let floating = floating_nodes(nl, &x, &ex);
    OpPoint {
        x,
        ex,
        method,
        floating,
    }
}

/// gmin stepping: a conductance from every node to ground, from 10 mS
/// down by decades, each solve starting from the last.
fn gmin_stepping(eng: &mut Engine, x: &mut [f64], ex: &Excitation) -> bool {
    x.iter_mut().for_each(|v| *v = 0.0);
    eng.init_junctions();
    let mut g = 1e-2;
    while g > 1e-13 {
        eng.gstep = g;
        if !eng.newton(x, ex, None, ITL1) {
            eng.gstep = 0.0;
            return false;
        }
        g /= 10.0;
    }
    eng.gstep = 0.0;
    eng.newton(x, ex, None, ITL1)
}

/// Source stepping: every source from zero to its value, the step halved
/// after a failure.
fn source_stepping(eng: &mut Engine, x: &mut [f64], ex: &Excitation) -> bool {
    x.iter_mut().for_each(|v| *v = 0.0);
    eng.init_junctions();
    let mut s = 0.0f64;
    let mut step = 0.1f64;
    let mut last = x.to_vec();
    let mut last_js = eng.js.clone();
    while s < 1.0 {
        let next = (s + step).min(1.0);
        eng.scale = next;
        if eng.newton(x, ex, None, ITL1) {
            s = next;
            last.copy_from_slice(x);
            last_js.clone_from(&eng.js);
            step = (step * 1.5).min(0.2);
        } else {
            x.copy_from_slice(&last);
            eng.js.clone_from(&last_js);
            step /= 2.0;
            if step < 1e-4 {
                eng.scale = 1.0;
                return false;
            }
        }
    }
    eng.scale = 1.0;
    true
}

/// Nodes not joined to any source through a conductance well above the
/// shunt (1 nS): their voltage is undefined in this state.
pub fn floating_nodes(nl: &Netlist, x: &[f64], ex: &Excitation) -> Vec<bool> {
    let n = nl.n;
    let nf = nl.fixed.len();
    let mut uf = petgraph::unionfind::UnionFind::<usize>::new(n + nf + 1);
    let idx = |t: Nd| match t {
        Nd::Var(i) => i as usize,
        Nd::Fix(i) => n + i as usize,
    };
    for k in 0..nl.elems.len() {
        for (a, b, g) in newton::dc_links(nl, k, x, ex) {
            if g > 1e-9 {
                uf.union(idx(a), idx(b));
            }
        }
    }
    // every fixed node is a source
    for i in 0..nf {
        uf.union(n + i, n + nf);
    }
    let root = uf.find(n + nf);
    (0..n).map(|i| uf.find(i) != root).collect()
}

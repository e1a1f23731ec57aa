//! Newton–Raphson on the nodal equations of a group.
//!
//! Every iteration linearises each device at its (limited) junction
//! voltages, stamps the companion conductances and currents, and solves.
//! Convergence as SPICE tests it (Nagel 1975; ngspice's `NIconvTest`):
//! every node within `reltol·max(|v_new|, |v_old|) + vntol` of its last
//! value and no device limited in the iteration. On failure the caller
//! steps `gmin` (a conductance from every node to ground, from 10 mS
//! down) and then the sources (from zero up), as SPICE does.

use super::devices::{GMIN, sources};
use super::mna::{Lu, NONE};
use super::netlist::{Dev, Nd, Netlist};

/// SPICE's default relative tolerance.
pub const RELTOL: f64 = 1e-3;
/// SPICE's default absolute voltage tolerance (V).
pub const VNTOL: f64 = 1e-6;
/// SPICE's default absolute current tolerance (A).
pub const ABSTOL: f64 = 1e-12;
/// Newton iterations allowed for an operating point (SPICE's `ITL1`).
pub const ITL1: usize = 100;
/// Conductance from every node to ground (S), so that a node left with
/// no DC path (a gate whose pin is high-impedance) still solves; an
/// exported deck sets the same with `.option rshunt`.
pub const GSHUNT: f64 = 1e-12;

/// What drives the group in one solve.
#[derive(Clone, Debug)]
pub struct Excitation {
    /// Voltage of every fixed node.
    pub fixed: Vec<f64>,
    /// Level of every group pin above its reference (`None`: high-impedance).
    pub pins: Vec<Option<f64>>,
    /// Back-EMF of every element (only loads read it), signed: it opposes
    /// a current from terminal 0 to terminal 1 when positive.
    pub emf: Vec<f64>,
}

/// The integration companion of a transient step.
#[derive(Clone, Copy, Debug)]
pub struct Companion<'a> {
    /// `di/dq` of the integration formula: `1/h` (backward Euler) or
    /// `2/h` (trapezoidal).
    pub a0: f64,
    pub trap: bool,
    pub hist: &'a [Hist],
}

/// State of a reactive element at the last accepted time point.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Hist {
    /// Charge (capacitor, diode stored charge) or current (load).
    pub q: f64,
    /// Capacitive current, or the load's current.
    pub i: f64,
    /// Voltage across the element.
    pub v: f64,
}

/// A group's matrix and the Newton state of its devices.
#[derive(Clone)]
pub struct Engine<'a> {
    pub nl: &'a Netlist,
    vals: Vec<f64>,
    rhs: Vec<f64>,
    lu: Lu,
    /// Limited junction voltages of the last iteration, per element.
    pub js: Vec<[f64; 2]>,
    /// Extra conductance to ground on every node (gmin stepping).
    pub gstep: f64,
    /// Source-stepping factor.
    pub scale: f64,
    /// Newton iterations spent (for benchmarks).
    pub iterations: usize,
    /// scratch: the fixed nodes' voltages, scaled
    fixed: Vec<f64>,
    /// scratch: the right-hand side being solved
    b: Vec<f64>,
}

fn v_of(x: &[f64], fixed: &[f64], n: Nd) -> f64 {
    match n {
        Nd::Var(i) => x.get(i as usize).copied().unwrap_or(0.0),
        Nd::Fix(i) => fixed.get(i as usize).copied().unwrap_or(0.0),
    }
}

impl<'a> Engine<'a> {
    pub fn new(nl: &'a Netlist) -> Engine<'a> {
        let mut e = Engine {
            nl,
            vals: vec![0.0; nl.pattern.len()],
            rhs: vec![0.0; nl.n],
            lu: Lu::new(&nl.pattern),
            js: vec![[0.0; 2]; nl.elems.len()],
            gstep: 0.0,
            scale: 1.0,
            iterations: 0,
            fixed: Vec::new(),
            b: vec![0.0; nl.n],
        };
        e.init_junctions();
        e
    }

    /// SPICE's `MODEINITJCT`: junctions start at their critical voltage,
    /// MOSFET gates at threshold.
    pub fn init_junctions(&mut self) {
        for (k, e) in self.nl.elems.iter().enumerate() {
            self.js[k] = match &e.dev {
                Dev::Diode(d) => [d.v_init(), 0.0],
                Dev::Mos(m) => [m.vto, 0.0],
                Dev::Bjt(q) => [q.v_init(), 0.0],
                _ => [0.0, 0.0],
            };
        }
    }

    /// Junction states read from a solution (a warm start).
    pub fn junctions_from(&mut self, x: &[f64], ex: &Excitation) {
        let fixed = &ex.fixed;
        for (k, e) in self.nl.elems.iter().enumerate() {
            let v = |i: usize| v_of(x, fixed, e.t[i]);
            self.js[k] = match &e.dev {
                Dev::Diode(_) => [v(0) - v(1), 0.0],
                Dev::Mos(m) => [m.polarity * (v(1) - v(2)), m.polarity * (v(0) - v(2))],
                Dev::Bjt(q) => [q.polarity * (v(1) - v(2)), q.polarity * (v(1) - v(0))],
                _ => [0.0, 0.0],
            };
        }
    }

    fn add(&mut self, h: u32, v: f64) {
        if h != NONE
            && let Some(s) = self.vals.get_mut(h as usize)
        {
            *s += v;
        }
    }

    fn rhs_add(&mut self, n: Nd, v: f64) {
        if let Nd::Var(i) = n
            && let Some(s) = self.rhs.get_mut(i as usize)
        {
            *s += v;
        }
    }

    /// A conductance `g` between terminals 0 and 1 of element `k` with a
    /// current `ceq` from 0 to 1 in parallel.
    fn branch(&mut self, k: usize, g: f64, ceq: f64) {
        let nl = self.nl;
        let e = &nl.elems[k];
        let (a, b) = (e.t[0], e.t[1]);
        self.add(e.h[0], g);
        self.add(e.h[1], -g);
        self.add(e.h[2], -g);
        self.add(e.h[3], g);
        self.rhs_add(a, -ceq);
        self.rhs_add(b, ceq);
    }

    /// Assemble the linearised system at `x`. Returns whether any device
    /// limited its junction voltages (the iteration cannot be the last).
    pub fn load(&mut self, x: &[f64], ex: &Excitation, comp: Option<&Companion>) -> bool {
        let nl = self.nl;
        self.vals.iter_mut().for_each(|v| *v = 0.0);
        self.rhs.iter_mut().for_each(|v| *v = 0.0);
        let mut fixed = std::mem::take(&mut self.fixed);
        fixed.clear();
        fixed.extend(ex.fixed.iter().map(|v| v * self.scale));
        let mut noncon = false;
        for (k, e) in nl.elems.iter().enumerate() {
            let v = |i: usize| v_of(x, &fixed, e.t[i]);
            match &e.dev {
                Dev::Res { g } => {
                    let fix = self.fixed_term(k, &fixed, *g);
                    self.branch(k, *g, fix);
                }
                Dev::Cap { c } => {
                    if let Some(cp) = comp {
                        let h = cp.hist.get(k).copied().unwrap_or_default();
                        let g = cp.a0 * c;
                        // i = a0·(q − q_n) (− i_n for the trapezoidal rule)
                        let hist = -cp.a0 * h.q - if cp.trap { h.i } else { 0.0 };
                        let fix = self.fixed_term(k, &fixed, g);
                        self.branch(k, g, hist + fix);
                    }
                }
                Dev::Load { r, l, .. } => {
                    let emf = ex.emf.get(k).copied().unwrap_or(0.0) * self.scale;
                    let (g, i0) = match comp {
                        None => (1.0 / r, -emf / r),
                        Some(cp) => {
                            let h = cp.hist.get(k).copied().unwrap_or_default();
                            let g = 1.0 / (r + cp.a0 * l);
                            let i0 = if cp.trap {
                                g * (h.v - 2.0 * emf - r * h.i + cp.a0 * l * h.i)
                            } else {
                                g * (-emf + cp.a0 * l * h.i)
                            };
                            (g, i0)
                        }
                    };
                    let fix = self.fixed_term(k, &fixed, g);
                    self.branch(k, g, i0 + fix);
                }
                Dev::Diode(d) => {
                    let vd_new = v(0) - v(1);
                    let (vd, lim) = d.limit(vd_new, self.js[k][0]);
                    noncon |= lim;
                    self.js[k][0] = vd;
                    let (mut id, mut gd) = d.eval(vd);
                    if let Some(cp) = comp
                        && d.tt > 0.0
                    {
                        let h = cp.hist.get(k).copied().unwrap_or_default();
                        let (q, cq) = d.charge(vd);
                        id += cp.a0 * (q - h.q) - if cp.trap { h.i } else { 0.0 };
                        gd += cp.a0 * cq;
                    }
                    let ceq = id - gd * vd;
                    let fix = self.fixed_term(k, &fixed, gd);
                    self.branch(k, gd, ceq + fix);
                }
                Dev::Mos(m) => {
                    let pol = m.polarity;
                    let (vgs_n, vds_n) = (pol * (v(1) - v(2)), pol * (v(0) - v(2)));
                    let [vgs_o, vds_o] = self.js[k];
                    let (vgs, vds) = m.limit(vgs_n, vds_n, vgs_o, vds_o);
                    if (vgs - vgs_n).abs() > 1e-12 || (vds - vds_n).abs() > 1e-12 {
                        noncon = true;
                    }
                    self.js[k] = [vgs, vds];
                    let ev = m.eval(vgs, vds);
                    // physical drain current and its linearisation
                    let id = pol * ev.id;
                    let (a, b) = (ev.dvgs, ev.dvds);
                    let ceq = id - a * pol * vgs - b * pol * vds;
                    self.stamp3(
                        k,
                        &fixed,
                        [[b, a, -a - b], [0.0; 3], [-b, -a, a + b]],
                        [ceq, 0.0, -ceq],
                    );
                }
                Dev::Bjt(q) => {
                    let pol = q.polarity;
                    let (vbe_n, vbc_n) = (pol * (v(1) - v(2)), pol * (v(1) - v(0)));
                    let [vbe_o, vbc_o] = self.js[k];
                    let (vbe, vbc, lim) = q.limit(vbe_n, vbc_n, vbe_o, vbc_o);
                    noncon |= lim;
                    self.js[k] = [vbe, vbc];
                    let ev = q.eval(vbe, vbc);
                    let (ic, ib) = (pol * ev.ic, pol * ev.ib);
                    let (g1, g2, h1, h2) = (ev.dic_dvbe, ev.dic_dvbc, ev.dib_dvbe, ev.dib_dvbc);
                    let ceq_c = ic - g1 * pol * vbe - g2 * pol * vbc;
                    let ceq_b = ib - h1 * pol * vbe - h2 * pol * vbc;
                    // terminals [c, b, e]; vbe = vb − ve, vbc = vb − vc
                    let jc = [-g2, g1 + g2, -g1];
                    let jb = [-h2, h1 + h2, -h1];
                    let je = [-(jc[0] + jb[0]), -(jc[1] + jb[1]), -(jc[2] + jb[2])];
                    self.stamp3(k, &fixed, [jc, jb, je], [ceq_c, ceq_b, -(ceq_c + ceq_b)]);
                }
                Dev::Pin { pin, r, .. } => {
                    if let Some(Some(level)) = ex.pins.get(*pin as usize) {
                        let g = 1.0 / r;
                        let fix = self.fixed_term(k, &fixed, g);
                        // i(out→ref) = g·(v_out − v_ref − level)
                        self.branch(k, g, -g * level * self.scale + fix);
                    }
                }
                Dev::Drv { vth, r, invert } => {
                    let (vo, vi, vdd, vgnd) = (v(0), v(1), v(2), v(3));
                    let (f, df) = sources::driver_transfer(vi - vgnd, *vth, *invert);
                    let span = vdd - vgnd;
                    let vsrc = vgnd + span * f;
                    let g = 1.0 / r;
                    let i0 = g * (vo - vsrc);
                    // ∂i/∂(vo, vi, vdd, vgnd)
                    let jac = [g, -g * span * df, -g * f, -g * (1.0 - f) + g * span * df];
                    let mut lin = 0.0;
                    for (m, jm) in jac.iter().enumerate() {
                        let h = e.h[m];
                        self.add(h, *jm);
                        lin += jm * v(m);
                    }
                    self.rhs_add(e.t[0], -(i0 - lin) - self.fixed_cols(k, &fixed, &jac, 0));
                }
            }
        }
        let shunt = GSHUNT + self.gstep;
        for i in 0..nl.n {
            let h = nl.pattern.diag(i);
            self.add(h, shunt);
        }
        self.fixed = fixed;
        noncon
    }

    /// For a two-terminal element with conductance `g`: the current that
    /// the fixed terminals' voltages add (they are not unknowns), as an
    /// equivalent source from terminal 0 to 1.
    fn fixed_term(&self, k: usize, fixed: &[f64], g: f64) -> f64 {
        let e = &self.nl.elems[k];
        let mut s = 0.0;
        if let Nd::Fix(j) = e.t[1] {
            // row a gets +g·v_b on the right: as a source from a to b: −g·v_b
            s -= g * fixed.get(j as usize).copied().unwrap_or(0.0);
        }
        if let Nd::Fix(j) = e.t[0] {
            s += g * fixed.get(j as usize).copied().unwrap_or(0.0);
        }
        // only one side is an unknown when the other is fixed; when both
        // are fixed the element stamps nothing
        s
    }

    /// `Σ_m J_m·v_m` over the fixed columns of row `row` of element `k`.
    fn fixed_cols(&self, k: usize, fixed: &[f64], jac: &[f64], _row: usize) -> f64 {
        let e = &self.nl.elems[k];
        e.t.iter()
            .zip(jac)
            .filter_map(|(t, j)| match t {
                Nd::Fix(i) => Some(j * fixed.get(*i as usize).copied().unwrap_or(0.0)),
                Nd::Var(_) => None,
            })
            .sum()
    }

    /// A three-terminal element: currents into each terminal
    /// `i = J·v + ceq`.
    fn stamp3(&mut self, k: usize, fixed: &[f64], jac: [[f64; 3]; 3], ceq: [f64; 3]) {
        let nl = self.nl;
        let e = &nl.elems[k];
        for r in 0..3 {
            if e.t[r].var().is_none() {
                continue;
            }
            let mut fixed_part = 0.0;
            for (m, (&t, &jm)) in e.t.iter().zip(jac[r].iter()).enumerate() {
                match t {
                    Nd::Var(_) => self.add(e.h[r * 3 + m], jm),
                    Nd::Fix(j) => fixed_part += jm * fixed.get(j as usize).copied().unwrap_or(0.0),
                }
            }
            self.rhs_add(e.t[r], -(ceq[r] + fixed_part));
        }
    }

    /// Newton iterations from `x` (updated in place). `true` when converged.
    pub fn newton(
        &mut self,
        x: &mut [f64],
        ex: &Excitation,
        comp: Option<&Companion>,
        maxit: usize,
    ) -> bool {
        let mut b = std::mem::take(&mut self.b);
        let ok = self.newton_with(x, ex, comp, maxit, &mut b);
        self.b = b;
        ok
    }

    fn newton_with(
        &mut self,
        x: &mut [f64],
        ex: &Excitation,
        comp: Option<&Companion>,
        maxit: usize,
        b: &mut [f64],
    ) -> bool {
        for it in 0..maxit {
            self.iterations += 1;
            let noncon = self.load(x, ex, comp);
            b.copy_from_slice(&self.rhs);
            if !self.lu.solve(&self.vals, b) {
                return false;
            }
            let mut conv = it > 0 && !noncon;
            if conv {
                for (xn, xo) in b.iter().zip(x.iter()) {
                    if (xn - xo).abs() > RELTOL * xn.abs().max(xo.abs()) + VNTOL {
                        conv = false;
                        break;
                    }
                }
            }
            if b.iter().any(|v| !v.is_finite()) {
                return false;
            }
            x.copy_from_slice(b);
            if conv {
                return true;
            }
        }
        false
    }
}

/// The currents into each terminal of element `k` at a solution.
pub fn currents(
    nl: &Netlist,
    k: usize,
    x: &[f64],
    ex: &Excitation,
    comp: Option<&Companion>,
) -> [f64; 4] {
    let e = &nl.elems[k];
    let v = |i: usize| v_of(x, &ex.fixed, e.t[i]);
    match &e.dev {
        Dev::Res { g } => {
            let i = g * (v(0) - v(1));
            [i, -i, 0.0, 0.0]
        }
        Dev::Cap { c } => match comp {
            Some(cp) => {
                let h = cp.hist.get(k).copied().unwrap_or_default();
                let q = c * (v(0) - v(1));
                let i = cp.a0 * (q - h.q) - if cp.trap { h.i } else { 0.0 };
                [i, -i, 0.0, 0.0]
            }
            None => [0.0; 4],
        },
        Dev::Load { r, l, .. } => {
            let emf = ex.emf.get(k).copied().unwrap_or(0.0);
            let vab = v(0) - v(1);
            let i = match comp {
                None => (vab - emf) / r,
                Some(cp) => {
                    let h = cp.hist.get(k).copied().unwrap_or_default();
                    let g = 1.0 / (r + cp.a0 * l);
                    if cp.trap {
                        g * (vab + h.v - 2.0 * emf - r * h.i + cp.a0 * l * h.i)
                    } else {
                        g * (vab - emf + cp.a0 * l * h.i)
                    }
                }
            };
            [i, -i, 0.0, 0.0]
        }
        Dev::Diode(d) => {
            let vd = v(0) - v(1);
            let (mut i, _) = d.eval(vd);
            if let Some(cp) = comp
                && d.tt > 0.0
            {
                let h = cp.hist.get(k).copied().unwrap_or_default();
                let (q, _) = d.charge(vd);
                i += cp.a0 * (q - h.q) - if cp.trap { h.i } else { 0.0 };
            }
            [i, -i, 0.0, 0.0]
        }
        Dev::Mos(m) => {
            let pol = m.polarity;
            let id = pol * m.eval(pol * (v(1) - v(2)), pol * (v(0) - v(2))).id;
            [id, 0.0, -id, 0.0]
        }
        Dev::Bjt(q) => {
            let pol = q.polarity;
            let ev = q.eval(pol * (v(1) - v(2)), pol * (v(1) - v(0)));
            let (ic, ib) = (pol * ev.ic, pol * ev.ib);
            [ic, ib, -(ic + ib), 0.0]
        }
        Dev::Pin { pin, r, .. } => match ex.pins.get(*pin as usize) {
            Some(Some(level)) => {
                let i = (v(0) - v(1) - level) / r;
                [i, -i, 0.0, 0.0]
            }
            _ => [0.0; 4],
        },
        Dev::Drv { vth, r, invert } => {
            let (f, _) = sources::driver_transfer(v(1) - v(3), *vth, *invert);
            let vsrc = v(3) + (v(2) - v(3)) * f;
            let i = (v(0) - vsrc) / r;
            [i, 0.0, 0.0, 0.0]
        }
    }
}

/// Small-signal conductance of element `k` between two of its
/// terminals at a solution: what makes a node "driven" at DC.
pub fn dc_links(nl: &Netlist, k: usize, x: &[f64], ex: &Excitation) -> Vec<(Nd, Nd, f64)> {
    let e = &nl.elems[k];
    let v = |i: usize| v_of(x, &ex.fixed, e.t[i]);
    match &e.dev {
        Dev::Res { g } => vec![(e.t[0], e.t[1], *g)],
        Dev::Load { r, .. } => vec![(e.t[0], e.t[1], 1.0 / r)],
        Dev::Diode(d) => vec![(e.t[0], e.t[1], d.eval(v(0) - v(1)).1 - GMIN)],
        Dev::Mos(m) => {
            let ev = m.eval(m.polarity * (v(1) - v(2)), m.polarity * (v(0) - v(2)));
            vec![(e.t[0], e.t[2], ev.dvds.abs() + ev.dvgs.abs())]
        }
        Dev::Bjt(q) => {
            let ev = q.eval(q.polarity * (v(1) - v(2)), q.polarity * (v(1) - v(0)));
            vec![
                (e.t[1], e.t[2], ev.dib_dvbe - GMIN),
                (e.t[0], e.t[2], ev.dic_dvbe.abs() + ev.dic_dvbc.abs()),
                (e.t[1], e.t[0], ev.dib_dvbc - GMIN),
            ]
        }
        Dev::Pin { pin, r, .. } => match ex.pins.get(*pin as usize) {
            Some(Some(_)) => vec![(e.t[0], e.t[1], 1.0 / r)],
            _ => vec![],
        },
        // a driver output is a source of its own: linked to its supply
        Dev::Drv { r, .. } => vec![(e.t[0], e.t[3], 1.0 / r)],
        Dev::Cap { .. } => vec![],
    }
}

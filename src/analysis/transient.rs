//! Transient analysis of a group: implicit integration from an operating
//! point, as SPICE does it (Nagel 1975).
//!
//! - Trapezoidal rule, with backward Euler on the first step after a
//!   breakpoint (a drive edge), where the trapezoidal rule would ring.
//! - The operating point's Newton loop at every step (at most `ITL4`
//!   iterations; on failure the step is cut by 8).
//! - Step size from the local truncation error, estimated by comparing the
//!   corrector with a polynomial predictor through the previous points
//!   (Milne's device): for the trapezoidal rule `LTE ≈ |x_c − x_p|/13`
//!   with a quadratic predictor, for backward Euler `|x_c − x_p|/3` with a
//!   linear one. A step is accepted when every node voltage and load
//!   current is within `TRTOL·(reltol·|x| + abs)`, and the next step is
//!   scaled by `(tol/LTE)^(1/(order+1))`.
//! - The trapezoidal rule does not damp a stiff mode: a capacitor beside
//!   a clamp in breakdown keeps a current that flips sign at every step.
//!   When a capacitor's current alternates like that, the next step is a
//!   backward-Euler step, which removes it.
//! - No step moves a load's current by more than 5 % of the largest it
//!   has carried: a clamp letting go when the current reaches zero is a
//!   kink no polynomial predictor sees coming, and a long step would
//!   carry the current through zero into a clamp that cannot take it.
//! - Breakpoints at the corners of every pin's piecewise-linear drive,
//!   and wherever a device changes its operating region (a junction
//!   starts or stops conducting, enters breakdown, a channel pinches
//!   off): the trapezoidal rule would otherwise ring in the capacitors
//!   around a clamp that has just engaged (its current flipping sign at
//!   every step), so the step after such an event is a backward-Euler
//!   step as after a breakpoint.

use super::netlist::{Dev, Netlist};
use super::newton::{self, Companion, Engine, Excitation, Hist, RELTOL};
use super::op::OpPoint;

/// Newton iterations per time step (SPICE's `ITL4`).
pub const ITL4: usize = 10;
/// SPICE's truncation-error overestimation factor.
pub const TRTOL: f64 = 7.0;
/// Absolute error allowed per step on a node voltage (V) and a load
/// current (A).
pub const V_ABS: f64 = 1e-4;
pub const I_ABS: f64 = 1e-6;
/// The largest change of a load's current in one step, as a fraction of
/// the largest current it has carried.
pub const LOAD_STEP: f64 = 0.05;
/// The most time steps one run may take.
pub const MAX_STEPS: usize = 200_000;

/// `ARMATURE_TRACE` set: the step control reports its rejections on
/// stderr (for people debugging a circuit that will not simulate).
pub fn trace() -> bool {
    static ON: std::sync::OnceLock<bool> = std::sync::OnceLock::new();
    *ON.get_or_init(|| std::env::var_os("ARMATURE_TRACE").is_some())
}

/// How a controller pin is driven over time.
#[derive(Clone, Debug, PartialEq)]
pub enum PinWave {
    HiZ,
    /// Driven at a level until the time, high-impedance after (a
    /// controller entering reset).
    Release(f64, f64),
    /// (time, level) corners; constant before the first and after the last.
    Pwl(Vec<(f64, f64)>),
}

impl PinWave {
    pub fn at(&self, t: f64) -> Option<f64> {
        match self {
            PinWave::HiZ => None,
            PinWave::Release(level, at) => (t < *at).then_some(*level),
            PinWave::Pwl(p) => {
                let first = p.first()?;
                if t <= first.0 {
                    return Some(first.1);
                }
                for w in p.windows(2) {
                    let (a, b) = (w[0], w[1]);
                    if t <= b.0 {
                        let f = if b.0 > a.0 {
                            (t - a.0) / (b.0 - a.0)
                        } else {
                            1.0
                        };
                        return Some(a.1 + f * (b.1 - a.1));
                    }
                }
                p.last().map(|x| x.1)
            }
        }
    }
}

/// Every pin's wave.
#[derive(Clone, Debug, PartialEq)]
pub struct Schedule {
    pub pins: Vec<PinWave>,
}

impl Schedule {
    pub fn breakpoints(&self) -> Vec<f64> {
        let mut b: Vec<f64> = self
            .pins
            .iter()
            .flat_map(|p| match p {
                PinWave::Pwl(v) => v.iter().map(|x| x.0).collect(),
                PinWave::Release(_, at) => vec![*at],
                PinWave::HiZ => Vec::new(),
            })
            .collect();
        b.sort_by(f64::total_cmp);
        b.dedup_by(|a, b| (*a - *b).abs() < 1e-15);
        b
    }
}

/// What an observer sees at an accepted time point.
pub struct Step<'s> {
    pub t: f64,
    pub x: &'s [f64],
    pub ex: &'s Excitation,
    nl: &'s Netlist,
    comp: Option<Companion<'s>>,
}

impl Step<'_> {
    /// Currents into each terminal of element `k`.
    pub fn currents(&self, k: usize) -> [f64; 4] {
        newton::currents(self.nl, k, self.x, self.ex, self.comp.as_ref())
    }

    pub fn v(&self, n: super::netlist::Nd) -> f64 {
        match n {
            super::netlist::Nd::Var(i) => self.x.get(i as usize).copied().unwrap_or(0.0),
            super::netlist::Nd::Fix(i) => self.ex.fixed.get(i as usize).copied().unwrap_or(0.0),
        }
    }
}

/// Why a run stopped early.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum TranError {
    /// The step fell below the smallest allowed at this time.
    StepTooSmall,
    TooManySteps,
}

/// The state of a running transient.
#[derive(Clone)]
pub struct Sim<'a> {
    nl: &'a Netlist,
    eng: Engine<'a>,
    ex: Excitation,
    pub t: f64,
    pub x: Vec<f64>,
    /// Previous accepted points (time, solution), newest first.
    past: Vec<(f64, Vec<f64>)>,
    hist: Vec<Hist>,
    h: f64,
    after_breakpoint: bool,
    last_regions: Vec<u8>,
    /// The largest current each load element has carried.
    i_scale: Vec<f64>,
    pub steps: usize,
    pub rejected: usize,
}

impl<'a> Sim<'a> {
    /// Start at an operating point (its sources are the schedule's values
    /// at the start).
    pub fn from_op(nl: &'a Netlist, op: &OpPoint) -> Sim<'a> {
        let mut eng = Engine::new(nl);
        eng.junctions_from(&op.x, &op.ex);
        let mut hist = vec![Hist::default(); nl.elems.len()];
        for (k, e) in nl.elems.iter().enumerate() {
            let va = op.v(e.t[0]);
            let vb = e.t.get(1).map_or(0.0, |&n| op.v(n));
            hist[k] = match &e.dev {
                Dev::Cap { c } => Hist {
                    q: c * (va - vb),
                    i: 0.0,
                    v: va - vb,
                },
                Dev::Diode(d) => Hist {
                    q: d.charge(va - vb).0,
                    i: 0.0,
                    v: va - vb,
                },
                Dev::Load { .. } => Hist {
                    q: 0.0,
                    i: newton::currents(nl, k, &op.x, &op.ex, None)[0],
                    v: va - vb,
                },
                _ => Hist::default(),
            };
        }
        let i_scale = hist.iter().map(|h| h.i.abs()).collect();
        Sim {
            nl,
            eng,
            ex: op.ex.clone(),
            t: 0.0,
            x: op.x.clone(),
            past: Vec::new(),
            hist,
            h: 0.0,
            after_breakpoint: true,
            last_regions: Vec::new(),
            i_scale,
            steps: 0,
            rejected: 0,
        }
    }

    /// The current point, for an observer before the first step.
    pub fn observe<T>(&self, f: impl FnOnce(&Step) -> T) -> T {
        let step = Step {
            t: self.t,
            x: &self.x,
            ex: &self.ex,
            nl: self.nl,
            comp: None,
        };
        f(&step)
    }

    /// Advance to `t_end` (or until `obs` returns `false`), with the pins
    /// following `sched`.
    pub fn run(
        &mut self,
        sched: &Schedule,
        t_end: f64,
        h_max: f64,
        obs: &mut dyn FnMut(&Step) -> bool,
    ) -> Result<(), TranError> {
        let bps: Vec<f64> = sched
            .breakpoints()
            .into_iter()
            .filter(|&b| b > self.t + 1e-18 && b < t_end)
            .chain(std::iter::once(t_end))
            .collect();
        let mut bp_i = 0;
        let first_gap = bps.first().map_or(t_end - self.t, |b| b - self.t);
        if self.h <= 0.0 {
            self.h = (first_gap / 10.0).min(h_max).clamp(1e-15, 1e-10);
        }
        self.after_breakpoint = true;
        // a new schedule starts like a breakpoint: no history to predict
        // from across it
        self.past.clear();
        let n = self.nl.n;
        let mut xn = vec![0.0; n];
        while self.t < t_end * (1.0 - 1e-12) {
            if self.steps >= MAX_STEPS {
                return Err(TranError::TooManySteps);
            }
            let next_bp = bps.get(bp_i).copied().unwrap_or(t_end);
            let mut h = self.h.min(h_max);
            let mut hits_bp = false;
            if self.t + h >= next_bp - 1e-15 * next_bp.abs().max(1e-9) {
                h = next_bp - self.t;
                hits_bp = true;
            }
            let h_min = 1e-15_f64.max(1e-9 * (self.t.abs() + h));
            if h < h_min && !hits_bp {
                if trace() {
                    eprintln!("step too small at t={:e} h={h:e}", self.t);
                }
                return Err(TranError::StepTooSmall);
            }
            let t_new = self.t + h;
            let trap = !self.after_breakpoint;
            let a0 = if trap { 2.0 / h } else { 1.0 / h };
            // sources at the new time
            for (k, p) in sched.pins.iter().enumerate() {
                if let Some(slot) = self.ex.pins.get_mut(k) {
                    *slot = p.at(t_new);
                }
            }
            // predictor: polynomial through the last points (node
            // voltages, then load currents)
            let pred = self.predict(t_new, trap);
            xn.copy_from_slice(&pred[..n]);
            let js_saved = self.eng.js.clone();
            let ok = {
                let comp = Companion {
                    a0,
                    trap,
                    hist: &self.hist,
                };
                self.eng.newton(&mut xn, &self.ex, Some(&comp), ITL4)
            };
            if !ok {
                if trace() {
                    eprintln!("newton failed at t={t_new:e} h={h:e}");
                }
                self.eng.js = js_saved;
                self.h = h / 8.0;
                self.rejected += 1;
                if self.h < h_min {
                    return Err(TranError::StepTooSmall);
                }
                self.after_breakpoint = true;
                if trace() && self.h < h_min {
                    eprintln!("newton gave up at t={:e}", self.t);
                }
                continue;
            }
            // truncation error
            let ratio = if self.past.is_empty() {
                0.0
            } else {
                let zc = self.state(&xn, a0, trap);
                self.lte_ratio(&zc, &pred, trap)
            };
            let jump = self.load_jump(&xn, a0, trap);
            if (ratio > 1.0 || jump > 1.0) && h > 4.0 * h_min {
                if trace() && h < 1e-12 {
                    eprintln!("reject t={:e} h={h:e} lte {ratio:e} jump {jump:e}", self.t);
                }
                self.eng.js = js_saved;
                self.h = if jump > 1.0 {
                    h * (0.9 / jump).clamp(0.1, 0.5)
                } else {
                    h * (0.9 * ratio.powf(if trap { -1.0 / 3.0 } else { -0.5 })).clamp(0.1, 0.5)
                };
                self.rejected += 1;
                continue;
            }
            let regions = self.regions(&xn);
            // accept
            let cont = {
                let comp = Companion {
                    a0,
                    trap,
                    hist: &self.hist,
                };
                let step = Step {
                    t: t_new,
                    x: &xn,
                    ex: &self.ex,
                    nl: self.nl,
                    comp: Some(comp),
                };
                let c = obs(&step);
                let h = new_hist(self.nl, &self.hist, &xn, &self.ex, &comp);
                (c, h)
            };
            let (cont, new_hist) = cont;
            // the trapezoidal rule's undamped mode: a capacitor beside a
            // stiff element (a clamp in breakdown) whose current flips
            // sign at every step. One backward-Euler step removes it.
            let ringing = trap
                && self.nl.elems.iter().enumerate().any(|(k, e)| {
                    matches!(e.dev, Dev::Cap { .. } | Dev::Diode(_)) && {
                        let (a, b) = (self.hist[k].i, new_hist[k].i);
                        a * b < 0.0 && b.abs() >= 0.5 * a.abs() && b.abs() > 1e-7
                    }
                });
            let z_old = self.state_now();
            self.hist = new_hist;
            let event = regions != self.last_regions;
            self.last_regions = regions;
            self.past.insert(0, (self.t, z_old));
            self.past.truncate(2);
            self.x = xn.clone();
            self.t = t_new;
            self.steps += 1;
            let grow = if ratio > 0.0 {
                (0.9 * ratio.powf(if trap { -1.0 / 3.0 } else { -0.5 })).clamp(0.2, 2.0)
            } else {
                2.0
            };
            if hits_bp {
                bp_i += 1;
                self.after_breakpoint = true;
                let gap = bps.get(bp_i).map_or(h, |b| b - self.t);
                self.h = (h * grow).min(0.1 * gap).max(1e-15);
                self.past.clear();
            } else if event || ringing {
                self.after_breakpoint = true;
                self.h = h * grow.min(1.0);
                self.past.clear();
            } else {
                self.after_breakpoint = false;
                self.h = h * grow;
            }
            if !cont {
                return Ok(());
            }
        }
        Ok(())
    }

    /// The largest change of a load current over the step, as a multiple
    /// of 5 % of the largest current that load has carried.
    fn load_jump(&mut self, x: &[f64], a0: f64, trap: bool) -> f64 {
        let comp = Companion {
            a0,
            trap,
            hist: &self.hist,
        };
        let mut worst = 0.0f64;
        for (k, e) in self.nl.elems.iter().enumerate() {
            if let Dev::Load { .. } = e.dev {
                let i_new = newton::currents(self.nl, k, x, &self.ex, Some(&comp))[0];
                let i_old = self.hist[k].i;
                let scale = self
                    .i_scale
                    .get(k)
                    .copied()
                    .unwrap_or(0.0)
                    .max(i_old.abs())
                    .max(1e-6);
                worst = worst.max((i_new - i_old).abs() / (LOAD_STEP * scale));
            }
        }
        worst
    }

    /// The operating region of every nonlinear device at a solution
    /// (diodes first, in element order, then the switches).
    fn regions(&self, x: &[f64]) -> Vec<u8> {
        let v = |n: super::netlist::Nd| match n {
            super::netlist::Nd::Var(i) => x.get(i as usize).copied().unwrap_or(0.0),
            super::netlist::Nd::Fix(i) => self.ex.fixed.get(i as usize).copied().unwrap_or(0.0),
        };
        self.nl
            .elems
            .iter()
            .filter_map(|e| match &e.dev {
                Dev::Diode(d) => Some(d.region(v(e.t[0]) - v(e.t[1]))),
                Dev::Mos(m) => {
                    let p = m.polarity;
                    Some(m.region(p * (v(e.t[1]) - v(e.t[2])), p * (v(e.t[0]) - v(e.t[2]))))
                }
                Dev::Bjt(q) => {
                    let p = q.polarity;
                    let on = |vj: f64| (vj > 0.5) as u8;
                    Some(on(p * (v(e.t[1]) - v(e.t[2]))) | on(p * (v(e.t[1]) - v(e.t[0]))) << 1)
                }
                _ => None,
            })
            .collect()
    }

    /// Node voltages, load currents and switch currents at the last
    /// accepted point (the switch currents: so that an edge's energy is
    /// resolved where the channel current falls).
    fn state_now(&self) -> Vec<f64> {
        let mut z = self.x.clone();
        for (k, e) in self.nl.elems.iter().enumerate() {
            match e.dev {
                Dev::Load { .. } => z.push(self.hist[k].i),
                Dev::Mos(_) | Dev::Bjt(_) => {
                    z.push(newton::currents(self.nl, k, &self.x, &self.ex, None)[0])
                }
                _ => {}
            }
        }
        z
    }

    /// Node voltages and load currents of a step's solution.
    fn state(&self, x: &[f64], a0: f64, trap: bool) -> Vec<f64> {
        let comp = Companion {
            a0,
            trap,
            hist: &self.hist,
        };
        let mut z = x.to_vec();
        for (k, e) in self.nl.elems.iter().enumerate() {
            match e.dev {
                Dev::Load { .. } | Dev::Mos(_) | Dev::Bjt(_) => {
                    z.push(newton::currents(self.nl, k, x, &self.ex, Some(&comp))[0])
                }
                _ => {}
            }
        }
        z
    }

    fn predict(&self, t_new: f64, quadratic: bool) -> Vec<f64> {
        let x0 = &self.state_now();
        let t0 = self.t;
        match (self.past.first(), self.past.get(1)) {
            (Some((t1, x1)), Some((t2, x2))) if quadratic => {
                // Lagrange extrapolation through (t0, x0), (t1, x1), (t2, x2)
                let l0 = (t_new - t1) * (t_new - t2) / ((t0 - t1) * (t0 - t2));
                let l1 = (t_new - t0) * (t_new - t2) / ((t1 - t0) * (t1 - t2));
                let l2 = (t_new - t0) * (t_new - t1) / ((t2 - t0) * (t2 - t1));
                (0..x0.len())
                    .map(|i| l0 * x0[i] + l1 * x1[i] + l2 * x2[i])
                    .collect()
            }
            (Some((t1, x1)), _) if t0 > *t1 => {
                let f = (t_new - t0) / (t0 - t1);
                x0.iter().zip(x1).map(|(a, b)| a + f * (a - b)).collect()
            }
            _ => x0.clone(),
        }
    }

    /// The largest ratio of estimated truncation error to tolerance, over
    /// node voltages and load currents.
    fn lte_ratio(&self, zc: &[f64], zp: &[f64], trap: bool) -> f64 {
        let quadratic = trap && self.past.len() >= 2;
        let div = if quadratic { 13.0 } else { 3.0 };
        let z0 = self.state_now();
        let n = self.nl.n;
        let mut worst = 0.0f64;
        for i in 0..zc.len().min(zp.len()).min(z0.len()) {
            let lte = (zc[i] - zp[i]).abs() / div;
            let abs = if i < n { V_ABS } else { I_ABS };
            let tol = TRTOL * (RELTOL * zc[i].abs().max(z0[i].abs()) + abs);
            worst = worst.max(lte / tol);
        }
        worst
    }
}

fn new_hist(
    nl: &Netlist,
    hist: &[Hist],
    x: &[f64],
    ex: &Excitation,
    comp: &Companion,
) -> Vec<Hist> {
    {
        let mut out = hist.to_vec();
        for (k, e) in nl.elems.iter().enumerate() {
            let v = |n: super::netlist::Nd| match n {
                super::netlist::Nd::Var(i) => x.get(i as usize).copied().unwrap_or(0.0),
                super::netlist::Nd::Fix(i) => ex.fixed.get(i as usize).copied().unwrap_or(0.0),
            };
            let va = v(e.t[0]);
            let vb = e.t.get(1).map_or(0.0, |&n| v(n));
            let old = hist[k];
            match &e.dev {
                Dev::Cap { c } => {
                    let q = c * (va - vb);
                    let i = comp.a0 * (q - old.q) - if comp.trap { old.i } else { 0.0 };
                    out[k] = Hist { q, i, v: va - vb };
                }
                Dev::Diode(d) if d.tt > 0.0 => {
                    let q = d.charge(va - vb).0;
                    let i = comp.a0 * (q - old.q) - if comp.trap { old.i } else { 0.0 };
                    out[k] = Hist { q, i, v: va - vb };
                }
                Dev::Load { .. } => {
                    let i = newton::currents(nl, k, x, ex, Some(comp))[0];
                    out[k] = Hist {
                        q: 0.0,
                        i,
                        v: va - vb,
                    };
                }
                _ => {}
            }
        }
        out
    }
}

//! Switching edges: a switch's turn-off and turn-on simulated on its
//! group, with the circuit's own gate network, and the figures read from
//! the waveforms.
//!
//! The turn-off starts from the operating point of the state in which the
//! switch carries its largest current. At `t = 0` the controlling pins
//! move to the state that turns it off (a pin rising in a `complement`
//! pair waits for the dead time, as a timer's dead-time insertion does),
//! and the run goes on until the load current has decayed. For a PWM
//! drive the turn-on starts from the same run at `(1 − D)·T` after the
//! command, or when the switch has finished turning off if that is later,
//! so that the freewheel diode's stored charge is still there
//! (reverse recovery).
//!
//! Read from the waveforms (device polarity, `t` from the command):
//! `v_peak` largest blocking voltage; `t_off` until the channel current is
//! below 10 % of its start; `t_decay` until the load current is below
//! 10 % of its start; `e_off = ∫V_DS·I_ch dt` (channel); `e_aval` the energy
//! in the switch's own breakdown; per part the energy it absorbs and the
//! charge it carries; at turn-on `t_on` (channel current to 90 % of its
//! final value), `e_on = ∫V_DS·I_ch dt − e_rr` and `e_rr`, the part of it
//! above the final current (the recovery current of the freewheel path),
//! and each diode's peak reverse current.

use super::groups::PinState;
use super::netlist::{Dev, Nd, Netlist, Role};
use super::op::OpPoint;
use super::transient::{PinWave, Schedule, Sim, Step, TranError};

/// The ramp of a controller pin's edge [memory: a few nanoseconds].
pub const PIN_EDGE: f64 = 2e-9;

/// A sampled waveform of one edge (device polarity).
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Wave {
    pub t: Vec<f64>,
    pub vds: Vec<f64>,
    pub vgs: Vec<f64>,
    /// Channel (collector) current.
    pub id: Vec<f64>,
    /// Current of the load with the largest initial current.
    pub il: Vec<f64>,
    /// Current of the part that carries most of the freewheel charge.
    pub iclamp: Vec<f64>,
    /// The other switch of a bridge leg (local part) and its gate drive
    /// over the same run (its own polarity); empty outside a leg.
    pub partner: Option<u32>,
    pub vgs_partner: Vec<f64>,
}

/// What a simulated edge pair gives.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct EdgeResult {
    /// Switch current at the command (A, device polarity).
    pub i0: f64,
    /// The load that carried the most current, and its initial current.
    pub load: Option<u32>,
    pub il0: f64,
    pub v_peak: f64,
    /// When the switch's own command starts.
    pub t_cmd: f64,
    pub t_off: Option<f64>,
    pub t_decay: Option<f64>,
    pub e_off: f64,
    pub e_aval: f64,
    /// What each part did over the turn-off (the switch itself included:
    /// its own figures are `e_off` and `e_aval`). Shared by the switches
    /// of one run that let go at the same step.
    pub parts: std::sync::Arc<[PartEdge]>,
    /// Energy delivered into each fixed node (a rail taking back energy).
    pub rail_energy: Vec<(u32, f64)>,
    /// The switch's own body diode: charge carried forward and in breakdown.
    pub q_aval: f64,
    pub t_on: Option<f64>,
    pub e_on: f64,
    pub e_rr: f64,
    /// Peak reverse current per diode part at turn-on.
    pub i_rr: Vec<(u32, f64)>,
    pub wave_off: Wave,
    pub wave_on: Wave,
    /// The run stopped before the figures were complete.
    pub failed: Option<TranError>,
}

/// A part over a turn-off: absorbed energy, carried charge, peak current.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct PartEdge {
    pub part: u32,
    pub energy: f64,
    /// Charge carried after the switch's channel current fell below 10 %.
    pub charge: f64,
    pub i_peak: f64,
}

/// How the pins move.
#[derive(Clone, Debug)]
pub struct Command<'a> {
    pub from: &'a [PinState],
    pub to: &'a [PinState],
    /// Per pin: its level when high (at the corner).
    pub high: &'a [f64],
    /// Per pin: the dead time delaying its rising edge (0 if none).
    pub delay_rise: &'a [f64],
}

fn level(s: PinState, high: f64) -> Option<f64> {
    match s {
        PinState::High => Some(high),
        PinState::Low => Some(0.0),
        PinState::HiZ => None,
    }
}

/// The schedule of pins moving from `from` to `to` at `t0`.
pub fn schedule(cmd: &Command, t0: f64) -> Schedule {
    let pins = (0..cmd.from.len())
        .map(|j| {
            let hi = cmd.high.get(j).copied().unwrap_or(0.0);
            let a = level(cmd.from[j], hi);
            let b = cmd.to.get(j).and_then(|&s| level(s, hi));
            match (a, b) {
                (None, None) => PinWave::HiZ,
                (Some(a), None) => PinWave::Release(a, t0),
                (None, Some(b)) => PinWave::Pwl(vec![(t0, b)]),
                (Some(a), Some(b)) if (a - b).abs() < 1e-12 => PinWave::Pwl(vec![(t0, a)]),
                (Some(a), Some(b)) => {
                    let d = if b > a {
                        cmd.delay_rise.get(j).copied().unwrap_or(0.0)
                    } else {
                        0.0
                    };
                    PinWave::Pwl(vec![(t0 + d, a), (t0 + d + PIN_EDGE, b)])
                }
            }
        })
        .collect();
    Schedule { pins }
}

/// What the edge reader watches.
struct Probe {
    km: usize,
    pol: f64,
    main_load: Option<usize>,
    /// The main element and polarity of the leg's other switch.
    partner: Option<(usize, f64)>,
}

impl Probe {
    fn vds(&self, nl: &Netlist, s: &Step) -> f64 {
        let e = &nl.elems[self.km];
        self.pol * (s.v(e.t[0]) - s.v(*e.t.last().unwrap_or(&e.t[0])))
    }
    fn vgs(&self, nl: &Netlist, s: &Step) -> f64 {
        gate_drive(nl, self.km, self.pol, s)
    }
    fn ich(&self, s: &Step) -> f64 {
        self.pol * s.currents(self.km)[0]
    }
}

/// The gate (base) drive of a switch's main element, device polarity.
fn gate_drive(nl: &Netlist, km: usize, pol: f64, s: &Step) -> f64 {
    match nl.elems[km].t.as_slice() {
        [_, g, src] => pol * (s.v(*g) - s.v(*src)),
        _ => 0.0,
    }
}

/// The other switch of a bridge leg: a switch whose drain or source
/// (collector or emitter) is this one's, on a node that is not fixed.
fn leg_partner(nl: &Netlist, km: usize) -> Option<(usize, f64)> {
    let e = nl.elems.get(km)?;
    let ends = [*e.t.first()?, *e.t.last()?];
    nl.elems.iter().enumerate().find_map(|(k, o)| {
        if k == km || o.role != Role::Main || o.part == e.part {
            return None;
        }
        let pol = match &o.dev {
            Dev::Mos(m) => m.polarity,
            Dev::Bjt(q) => q.polarity,
            _ => return None,
        };
        let theirs = [*o.t.first()?, *o.t.last()?];
        ends.iter()
            .any(|n| matches!(n, Nd::Var(_)) && theirs.contains(n))
            .then_some((k, pol))
    })
}

/// Element power (absorbed) and the magnitude of its current, from its
/// terminal currents.
fn power_of(nl: &Netlist, k: usize, s: &Step, i: &[f64; 4]) -> (f64, f64) {
    let e = &nl.elems[k];
    let p: f64 = e.t.iter().zip(i.iter()).map(|(&n, &c)| s.v(n) * c).sum();
    (p, i[0].abs())
}

/// Running sums over a run.
#[derive(Default)]
struct Acc {
    last_t: Option<f64>,
    last_p: Vec<f64>,
    last_q: Vec<f64>,
    e: Vec<f64>,
    q: Vec<f64>,
    i_pk: Vec<f64>,
    /// energy and charge of junctions while reverse-biased (breakdown),
    /// and of a series resistance while its junction is
    e_rev: Vec<f64>,
    q_rev: Vec<f64>,
    e_rev_rs: Vec<f64>,
    rev: Vec<bool>,
    /// per fixed node
    last_rail: Vec<f64>,
    rail: Vec<f64>,
}

impl Acc {
    fn new(n: usize, nf: usize) -> Acc {
        Acc {
            last_p: vec![0.0; n],
            last_q: vec![0.0; n],
            e: vec![0.0; n],
            q: vec![0.0; n],
            i_pk: vec![0.0; n],
            e_rev: vec![0.0; n],
            q_rev: vec![0.0; n],
            e_rev_rs: vec![0.0; n],
            rev: vec![false; n],
            last_rail: vec![0.0; nf],
            rail: vec![0.0; nf],
            last_t: None,
        }
    }

    fn add(&mut self, nl: &Netlist, s: &Step) {
        let mut rail = vec![0.0; self.rail.len()];
        for (k, e) in nl.elems.iter().enumerate() {
            if let Dev::Diode(_) = e.dev {
                let v = s.v(e.t[0]) - s.v(e.t[1]);
                self.rev[k] = v < 0.0;
                // the series resistance before it follows its state
                if let Some(krs) = series_of(nl, k) {
                    self.rev[krs] = v < 0.0;
                }
            }
        }
        for k in 0..nl.elems.len() {
            // the element's terminal currents once: its power, its current
            // and what it draws from the rails all come from them
            let i = s.currents(k);
            let (p, q) = power_of(nl, k, s, &i);
            self.i_pk[k] = self.i_pk[k].max(q);
            if let Some(t0) = self.last_t {
                let dt = s.t - t0;
                let de = 0.5 * (p + self.last_p[k]) * dt;
                let dq = 0.5 * (q + self.last_q[k]) * dt;
                self.e[k] += de;
                self.q[k] += dq;
                if self.rev[k] {
                    match nl.elems[k].dev {
                        Dev::Diode(_) => {
                            self.e_rev[k] += de;
                            self.q_rev[k] += dq;
                        }
                        _ => self.e_rev_rs[k] += de,
                    }
                }
            }
            self.last_p[k] = p;
            self.last_q[k] = q;
            for (&n, &c) in nl.elems[k].t.iter().zip(i.iter()) {
                if let Nd::Fix(j) = n
                    && let Some(r) = rail.get_mut(j as usize)
                {
                    // the rail delivers v·i into the element
                    *r -= s.v(n) * c;
                }
            }
        }
        if let Some(t0) = self.last_t {
            let dt = s.t - t0;
            for (j, r) in rail.iter().enumerate() {
                self.rail[j] += 0.5 * (r + self.last_rail[j]) * dt;
            }
        }
        self.last_rail = rail;
        self.last_t = Some(s.t);
    }
}

/// The first time `|y|` falls below `thr` after `from`, interpolated.
pub fn first_below(t: &[f64], y: &[f64], thr: f64, from: f64) -> Option<f64> {
    for i in 1..t.len().min(y.len()) {
        if t[i] < from {
            continue;
        }
        let (a, b) = (y[i - 1].abs(), y[i].abs());
        if b < thr && a >= thr {
            let f = if a > b { (a - thr) / (a - b) } else { 1.0 };
            return Some(t[i - 1] + f * (t[i] - t[i - 1]));
        }
        if b < thr && i == 1 {
            return Some(t[0]);
        }
    }
    None
}

/// The first time `|y|` rises above `thr` after `from`, interpolated.
pub fn first_above(t: &[f64], y: &[f64], thr: f64, from: f64) -> Option<f64> {
    for i in 1..t.len().min(y.len()) {
        if t[i] < from {
            continue;
        }
        let (a, b) = (y[i - 1].abs(), y[i].abs());
        if b >= thr && a < thr {
            let f = if b > a { (thr - a) / (b - a) } else { 1.0 };
            return Some(t[i - 1] + f * (t[i] - t[i - 1]));
        }
    }
    None
}

/// Trapezoidal integral of `y` over `t`.
pub fn integral(t: &[f64], y: &[f64]) -> f64 {
    t.windows(2)
        .zip(y.windows(2))
        .map(|(tt, yy)| 0.5 * (yy[0] + yy[1]) * (tt[1] - tt[0]))
        .sum()
}

/// The inputs of one edge pair.
pub struct EdgeSpec<'a> {
    pub nl: &'a Netlist,
    /// Local part of the switch.
    pub switch: u32,
    /// The operating point of the on state.
    pub on: &'a OpPoint,
    pub off_cmd: Command<'a>,
    /// PWM frequency and largest duty of the switch (0 Hz: static).
    pub f_pwm: f64,
    pub duty_max: f64,
    /// Simulate the turn-on too.
    pub with_turn_on: bool,
    /// The group pin that controls the switch (its edge is the command
    /// `t_off` and `t_on` are measured from).
    pub ctl: usize,
}

/// When a pin's edge starts in a command (its rising edge waits for the
/// dead time).
fn command_time(cmd: &Command, pin: usize) -> f64 {
    let hi = cmd.high.get(pin).copied().unwrap_or(0.0);
    let a = cmd.from.get(pin).and_then(|&s| level(s, hi)).unwrap_or(0.0);
    let b = cmd.to.get(pin).and_then(|&s| level(s, hi)).unwrap_or(0.0);
    if b > a {
        cmd.delay_rise.get(pin).copied().unwrap_or(0.0)
    } else {
        0.0
    }
}

/// Simulate a turn-off (and a turn-on) and read the figures.
pub fn simulate(spec: &EdgeSpec) -> EdgeResult {
    simulate_many(spec, &[spec.switch])
        .pop()
        .unwrap_or_default()
}

/// One switch watched over a shared run.
struct Watch {
    sw: usize,
    probe: Probe,
    i0: f64,
    /// The initial current of the switch's load.
    il0: f64,
    body: Vec<usize>,
    wave: Wave,
    /// The step at which this switch's channel let go (below 10 % of its
    /// initial current), as an index into the run's charge snapshots.
    let_go: Option<usize>,
}

/// Simulate one command's turn-off (and turn-on) once and read the
/// figures of every switch in `switches`. Switches that one command moves
/// together (a gate net shared by many channels) switch in the same run,
/// so one run serves them all: the figures are those of separate runs,
/// which would simulate the same circuit under the same command.
pub fn simulate_many(spec: &EdgeSpec, switches: &[u32]) -> Vec<EdgeResult> {
    let nl = spec.nl;
    let loads: Vec<usize> = (0..nl.elems.len())
        .filter(|&k| matches!(nl.elems[k].dev, Dev::Load { .. }))
        .collect();
    let load_i0: Vec<f64> = loads
        .iter()
        .map(|&k| super::newton::currents(nl, k, &spec.on.x, &spec.on.ex, None)[0])
        .collect();
    let main_load = loads
        .iter()
        .zip(&load_i0)
        .max_by(|a, b| a.1.abs().total_cmp(&b.1.abs()))
        .filter(|(_, i)| i.abs() > 1e-6)
        .map(|(&k, _)| k);
    // the loads on each node, to find the load a switch carries
    let mut on_node: std::collections::HashMap<Nd, Vec<usize>> = std::collections::HashMap::new();
    for (j, &k) in loads.iter().enumerate() {
        for &n in &nl.elems[k].t {
            if matches!(n, Nd::Var(_)) {
                on_node.entry(n).or_default().push(j);
            }
        }
    }
    let mut watches: Vec<Watch> = Vec::with_capacity(switches.len());
    let mut results: Vec<Option<EdgeResult>> = Vec::with_capacity(switches.len());
    for &swp in switches {
        let sw = swp as usize;
        let Some(km) = nl.elem_index(sw, Role::Main) else {
            results.push(Some(EdgeResult::default()));
            continue;
        };
        let pol = match &nl.elems[km].dev {
            Dev::Mos(m) => m.polarity,
            Dev::Bjt(q) => q.polarity,
            _ => 1.0,
        };
        let body: Vec<usize> = nl
            .elems_of(sw)
            .iter()
            .enumerate()
            .filter(|(_, e)| matches!(e.role, Role::Body | Role::Avalanche))
            .map(|(i, _)| nl.part_start[sw] as usize + i)
            .collect();
        let i0 = pol * super::newton::currents(nl, km, &spec.on.x, &spec.on.ex, None)[0];
        // its load: the one with the most current among those on its
        // drain or source (collector or emitter); else the group's
        let ends = [
            nl.elems[km].t[0],
            *nl.elems[km].t.last().unwrap_or(&nl.elems[km].t[0]),
        ];
        let own = ends
            .iter()
            .filter_map(|n| on_node.get(n))
            .flatten()
            .map(|&j| (loads[j], load_i0[j]))
            .max_by(|a, b| a.1.abs().total_cmp(&b.1.abs()))
            .filter(|(_, i)| i.abs() > 1e-6)
            .map(|(k, _)| k);
        let load = own.or(main_load);
        let il0 = load
            .and_then(|k| loads.iter().position(|&x| x == k))
            .map_or(0.0, |i| load_i0[i]);
        let partner = leg_partner(nl, km);
        watches.push(Watch {
            sw,
            probe: Probe {
                km,
                pol,
                main_load: load,
                partner,
            },
            i0,
            il0,
            body,
            wave: Wave {
                partner: partner.map(|(k, _)| nl.elems[k].part),
                ..Wave::default()
            },
            let_go: None,
        });
        results.push(None);
    }
    if watches.is_empty() {
        return results.into_iter().map(Option::unwrap_or_default).collect();
    }
    // the longest time constant of the loads bounds the run
    let tau = nl
        .elems
        .iter()
        .filter_map(|e| match e.dev {
            Dev::Load { r, l, .. } if r > 0.0 => Some(l / r),
            _ => None,
        })
        .fold(0.0f64, f64::max);
    let t_cap = (30.0 * tau).clamp(20e-6, 2.0);
    let period = if spec.f_pwm > 0.0 {
        1.0 / spec.f_pwm
    } else {
        0.0
    };
    let t_snap = period * (1.0 - spec.duty_max).max(0.0);
    let sched = schedule(&spec.off_cmd, 0.0);
    // the turn-on starts after every pin of the turn-off has moved (the
    // partner's delayed edge included)
    let t_snap = t_snap.max(sched.breakpoints().last().copied().unwrap_or(0.0));
    let mut sim = Sim::from_op(nl, spec.on);
    let mut acc = Acc::new(nl.elems.len(), nl.fixed.len());
    let nparts = nl.part_start.len().saturating_sub(1);
    // the current of every part that may carry freewheel current
    let clamp_elems: Vec<Option<(usize, Option<usize>)>> = (0..nparts)
        .map(|p| {
            let k = nl.elem_index(p, Role::Main)?;
            matches!(
                nl.elems[k].dev,
                Dev::Diode(_) | Dev::Res { .. } | Dev::Mos(_)
            )
            .then(|| (k, nl.elem_index(p, Role::Body)))
        })
        .collect();
    let mut clamp_i: Vec<Vec<f64>> = vec![Vec::new(); nparts];
    // per element, the charge carried up to each step at which a watched
    // switch let go (one snapshot however many let go at that step)
    let mut snaps: Vec<(Vec<f64>, Vec<f64>)> = Vec::new();
    let record = |s: &Step,
                  ws: &mut [Watch],
                  acc: &mut Acc,
                  clamp_i: &mut Vec<Vec<f64>>,
                  snaps: &mut Vec<(Vec<f64>, Vec<f64>)>| {
        let mut snapped = false;
        for w in ws.iter_mut() {
            let ich = w.probe.ich(s);
            w.wave.t.push(s.t);
            w.wave.vds.push(w.probe.vds(nl, s));
            w.wave.vgs.push(w.probe.vgs(nl, s));
            if let Some((k2, pol2)) = w.probe.partner {
                w.wave.vgs_partner.push(gate_drive(nl, k2, pol2, s));
            }
            w.wave.id.push(ich);
            w.wave
                .il
                .push(w.probe.main_load.map_or(0.0, |k| s.currents(k)[0]));
            if w.let_go.is_none() && ich.abs() < 0.1 * w.i0.abs() {
                if !snapped {
                    snaps.push((acc.q.clone(), acc.q_rev.clone()));
                    snapped = true;
                }
                w.let_go = Some(snaps.len() - 1);
            }
        }
        acc.add(nl, s);
        for (v, ce) in clamp_i.iter_mut().zip(&clamp_elems) {
            if let Some((k, kb)) = *ce {
                let mut i = s.currents(k)[0];
                if let Some(kb) = kb {
                    i -= s.currents(kb)[0];
                }
                v.push(i);
            }
        }
    };
    sim.observe(|s| record(s, &mut watches, &mut acc, &mut clamp_i, &mut snaps));
    let done_off = |ws: &[Watch]| -> bool {
        ws.iter().all(|w| {
            let n = w.wave.t.len();
            n >= 3
                && w.wave.id[n - 1].abs() < 0.01 * w.i0.abs().max(1e-6)
                && w.wave.t[n - 1] > 10.0 * PIN_EDGE
        })
    };
    let decayed = |ws: &[Watch]| -> bool {
        ws.iter().all(|w| {
            w.wave.t.len() > 2
                && w.wave
                    .il
                    .last()
                    .is_none_or(|i| i.abs() < 0.02 * w.il0.abs().max(1e-9))
        })
    };
    // first part: until the turn-on may start
    let mut on_start: Option<Sim> = None;
    let mut stop_err = None;
    let h_max = (t_cap / 1000.0).max(1e-9);
    if spec.with_turn_on && period > 0.0 {
        let r = sim.run(&sched, t_cap, h_max, &mut |s| {
            record(s, &mut watches, &mut acc, &mut clamp_i, &mut snaps);
            !(s.t >= t_snap && done_off(&watches))
        });
        if let Err(e) = r {
            stop_err = Some(e);
        }
        on_start = Some(sim.clone());
    }
    if stop_err.is_none() {
        let r = sim.run(&sched, t_cap, h_max, &mut |s| {
            record(s, &mut watches, &mut acc, &mut clamp_i, &mut snaps);
            !(done_off(&watches) && decayed(&watches))
        });
        if let Err(e) = r {
            stop_err = Some(e);
        }
    }
    let t_cmd = command_time(&spec.off_cmd, spec.ctl);
    let mut outs: Vec<EdgeResult> = Vec::with_capacity(watches.len());
    let mut shared: Vec<Option<std::sync::Arc<[PartEdge]>>> = vec![None; snaps.len() + 1];
    let mut watched = vec![false; nparts];
    for w in &watches {
        if let Some(x) = watched.get_mut(w.sw) {
            *x = true;
        }
    }
    for w in &mut watches {
        let km = w.probe.km;
        let mut res = EdgeResult {
            i0: w.i0,
            load: w.probe.main_load.map(|k| nl.elems[k].part),
            il0: w.il0,
            failed: stop_err,
            ..EdgeResult::default()
        };
        let wave = std::mem::take(&mut w.wave);
        res.v_peak = wave.vds.iter().copied().fold(f64::MIN, f64::max);
        res.t_cmd = t_cmd;
        res.t_off = first_below(&wave.t, &wave.id, 0.1 * w.i0.abs(), t_cmd).map(|t| t - t_cmd);
        res.t_decay = first_below(&wave.t, &wave.il, 0.1 * w.il0.abs(), 0.0);
        res.e_off = acc.e[km];
        // per part energy and charge, shared by the switches that let go
        // at the same step
        let slot = w.let_go.map_or(0, |i| i + 1);
        if shared.get(slot).is_some_and(Option::is_none) {
            let q0 = w.let_go.and_then(|i| snaps.get(i));
            shared[slot] = Some(part_figures(nl, &acc, q0, &watched));
        }
        let parts = shared.get(slot).cloned().flatten().unwrap_or_default();
        // the switch's own breakdown: its body (or avalanche) diode while
        // reverse-biased, with the series resistance in the same current
        for &kb in &w.body {
            res.e_aval += acc.e_rev[kb];
            res.q_aval += acc.q_rev[kb];
            if let Some(krs) = series_of(nl, kb) {
                res.e_aval += acc.e_rev_rs[krs];
            }
        }
        let sw = w.sw;
        res.parts = parts;
        res.rail_energy = acc
            .rail
            .iter()
            .enumerate()
            .map(|(j, e)| (j as u32, *e))
            .collect();
        // the freewheel part whose current the plot shows
        let best = res
            .parts
            .iter()
            .filter(|x| x.part as usize != sw)
            .filter(|x| {
                nl.elem_index(x.part as usize, Role::Main)
                    .is_some_and(|k| !matches!(nl.elems[k].dev, Dev::Load { .. }))
            })
            .max_by(|a, b| a.charge.total_cmp(&b.charge))
            .map(|x| x.part as usize);
        let mut wave = wave;
        if let Some(b) = best
            && let Some(v) = clamp_i.get(b)
            && v.len() == wave.t.len()
        {
            wave.iclamp = v.clone();
        } else {
            wave.iclamp = vec![0.0; wave.t.len()];
        }
        res.wave_off = wave;
        outs.push(res);
    }
    // the turn-on, from the state at the start of the next period
    let on_sim = match on_start {
        Some(s) => Some(s),
        None if spec.with_turn_on => Some(sim),
        None => None,
    };
    if let Some(on_sim) = on_sim
        && stop_err.is_none()
    {
        turn_on(spec, on_sim, &watches, &mut outs);
    }
    let mut it = outs.into_iter();
    results
        .into_iter()
        .map(|r| r.or_else(|| it.next()).unwrap_or_default())
        .collect()
}

/// Every part's energy, peak current and the charge it carried forward
/// after the snapshot `q0` of total and reverse charge (none: no charge
/// counted), for the parts that did anything.
fn part_figures(
    nl: &Netlist,
    acc: &Acc,
    q0: Option<&(Vec<f64>, Vec<f64>)>,
    watched: &[bool],
) -> std::sync::Arc<[PartEdge]> {
    let nparts = nl.part_start.len().saturating_sub(1);
    let mut ep: Vec<PartEdge> = (0..nparts)
        .map(|p| PartEdge {
            part: p as u32,
            ..PartEdge::default()
        })
        .collect();
    for (k, e) in nl.elems.iter().enumerate() {
        let p = e.part as usize;
        if let Some(slot) = ep.get_mut(p) {
            slot.energy += acc.e[k];
            if matches!(e.role, Role::Main | Role::Body) {
                if let Some((q0, r0)) = q0 {
                    let mut dq = acc.q[k] - q0.get(k).copied().unwrap_or(0.0);
                    // a body diode in breakdown carries its own channel's
                    // load (another switch turned off by the same command
                    // avalanching), not this switch's freewheel current
                    if e.role == Role::Body {
                        dq -= acc.q_rev[k] - r0.get(k).copied().unwrap_or(0.0);
                    }
                    // nor does the channel of a switch the same command
                    // turns off: its tail is its own load's current
                    if e.role == Role::Main && watched.get(p).copied().unwrap_or(false) {
                        dq = 0.0;
                    }
                    slot.charge += dq.max(0.0);
                }
                slot.i_peak = slot.i_peak.max(acc.i_pk[k]);
            }
        }
    }
    ep.into_iter()
        .filter(|x| x.energy.abs() > 0.0 || x.charge > 0.0)
        .collect()
}

/// The turn-on of the watched switches, from the state at the start of
/// the next period.
fn turn_on(spec: &EdgeSpec, mut on_sim: Sim, watches: &[Watch], outs: &mut [EdgeResult]) {
    let nl = spec.nl;
    let nparts = nl.part_start.len().saturating_sub(1);
    let back = Command {
        from: spec.off_cmd.to,
        to: spec.off_cmd.from,
        high: spec.off_cmd.high,
        delay_rise: spec.off_cmd.delay_rise,
    };
    let t_start = on_sim.t;
    let sched_on = schedule(&back, t_start);
    let switch_parts: Vec<usize> = watches.iter().map(|w| w.sw).collect();
    let diodes: Vec<(u32, usize)> = (0..nparts)
        .filter(|p| !switch_parts.contains(p))
        .filter_map(|p| {
            let k = nl.elem_index(p, Role::Main)?;
            matches!(nl.elems[k].dev, Dev::Diode(_)).then_some((p as u32, k))
        })
        .collect();
    let mut irr = vec![0.0f64; diodes.len()];
    let n = watches.len();
    let mut waves: Vec<Wave> = vec![Wave::default(); n];
    let mut e_tot = vec![0.0; n];
    let mut last: Vec<Option<(f64, f64)>> = vec![None; n];
    let t_off_max = outs
        .iter()
        .filter_map(|r| r.t_off)
        .fold(None, |a: Option<f64>, t| Some(a.map_or(t, |a| a.max(t))));
    let span = (20.0 * t_off_max.unwrap_or(1e-6)).clamp(5e-6, 2e-3);
    let t_end = t_start + span;
    let on_vds: Vec<f64> = watches
        .iter()
        .map(|w| {
            let e = &nl.elems[w.probe.km];
            w.probe.pol * (spec.on.v(e.t[0]) - spec.on.v(*e.t.last().unwrap_or(&e.t[0])))
        })
        .collect();
    let i0_max = watches.iter().map(|w| w.i0.abs()).fold(0.0, f64::max);
    let r = on_sim.run(&sched_on, t_end, (span / 200.0).max(1e-9), &mut |s| {
        let mut all_settled = s.t > t_start + 20.0 * PIN_EDGE;
        for (j, w) in watches.iter().enumerate() {
            let vds = w.probe.vds(nl, s);
            let ich = w.probe.ich(s);
            let wv = &mut waves[j];
            wv.t.push(s.t - t_start);
            wv.vds.push(vds);
            wv.vgs.push(w.probe.vgs(nl, s));
            if let Some((k2, pol2)) = w.probe.partner {
                wv.vgs_partner.push(gate_drive(nl, k2, pol2, s));
            }
            wv.id.push(ich);
            wv.il
                .push(w.probe.main_load.map_or(0.0, |k| s.currents(k)[0]));
            let p = vds * ich;
            if let Some((t0, p0)) = last[j] {
                e_tot[j] += 0.5 * (p + p0) * (s.t - t0);
            }
            last[j] = Some((s.t, p));
            all_settled &= vds.abs() < 2.0 * on_vds[j].abs() + 0.05;
        }
        for (j, &(_, k)) in diodes.iter().enumerate() {
            irr[j] = irr[j].max(-s.currents(k)[0]);
        }
        // settled: the channels carry the load and block no more
        let settled = all_settled
            && diodes
                .iter()
                .all(|&(_, k)| s.currents(k)[0] > -1e-3 * i0_max.max(1e-3));
        !settled
    });
    let t_cmd_on = command_time(&back, spec.ctl);
    let i_rr: Vec<(u32, f64)> = diodes
        .iter()
        .zip(&irr)
        .filter(|(_, i)| **i > 0.0)
        .map(|(&(p, _), &i)| (p, i))
        .collect();
    for ((res, mut w), e_tot) in outs.iter_mut().zip(waves).zip(e_tot) {
        if let Err(e) = &r {
            res.failed = Some(*e);
        }
        let i_final = w.id.last().copied().unwrap_or(0.0);
        res.t_on = first_above(&w.t, &w.id, 0.9 * i_final.abs(), t_cmd_on).map(|t| t - t_cmd_on);
        let over: Vec<f64> =
            w.id.iter()
                .zip(&w.vds)
                .map(|(i, v)| v * (i.abs() - i_final.abs()).max(0.0))
                .collect();
        res.e_rr = integral(&w.t, &over);
        res.e_on = (e_tot - res.e_rr).max(0.0);
        res.i_rr = i_rr.clone();
        w.iclamp = vec![0.0; w.t.len()];
        w.partner = res.wave_off.partner;
        res.wave_on = w;
    }
}

/// The series resistance element feeding a junction element.
fn series_of(nl: &Netlist, k: usize) -> Option<usize> {
    let e = nl.elems.get(k)?;
    let a = e.t.first()?;
    nl.elems_of(e.part as usize)
        .iter()
        .position(|x| x.role == Role::SeriesR && x.t.get(1) == Some(a))
        .map(|i| nl.part_start[e.part as usize] as usize + i)
}

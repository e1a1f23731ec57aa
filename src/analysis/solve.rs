//! Solving a control group: every pin assignment at both corners, motors
//! stalled and running; the region of every switch in each; the edges of
//! every switch that carries load current. The result depends only on the
//! group's netlist and drive, so identical groups share it (`reuse.rs`).

use super::devices::mosfet;
use super::edges::{self, Command, EdgeResult, EdgeSpec};
use super::groups::{MAX_GROUP_PINS, PinState};
use super::netlist::{Corner, Dev, Netlist, Role};
use super::newton;
use super::op::{self, Method, Mode, OpPoint};

/// How a group pin is driven.
#[derive(Clone, Debug, PartialEq)]
pub struct PinDrive {
    pub f_pwm: f64,
    pub duty_min: f64,
    pub duty_max: f64,
    /// Index of the `complement` partner among the group's pins.
    pub partner: Option<u32>,
    pub deadtime: f64,
}

/// Where a switch is in a solved state.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Region {
    Off,
    On,
    Linear,
}

impl Region {
    pub fn name(self) -> &'static str {
        match self {
            Region::Off => "off",
            Region::On => "on",
            Region::Linear => "linear",
        }
    }
}

/// A switch at one operating point (device polarity: V and I positive
/// when it conducts normally).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Point {
    pub state: u32,
    pub corner: Corner,
    pub region: Region,
    /// The gate (base) drive enables the channel: at this drive it could
    /// carry more than the leakage floor. Whether current flows also
    /// depends on the rest of the circuit (`region`).
    pub gated: bool,
    pub v_gs: f64,
    pub v_ds: f64,
    pub i_d: f64,
}

/// A switch's currents below this are leakage, whatever its load (A).
pub const I_OFF_FLOOR: f64 = 10e-6;
/// ...and below this fraction of its largest current it is off.
pub const I_OFF_FRACTION: f64 = 0.01;

/// What the group's solutions say about one switch (local indices).
#[derive(Clone, Debug, Default, PartialEq)]
pub struct LocalSwitch {
    pub part: u32,
    /// Stall, at every state, both corners.
    pub points: Vec<Point>,
    /// Group pins whose flip moves it between off and conducting, and
    /// whether it conducts with the pin low.
    pub controls: Vec<(u32, bool)>,
    /// Group pins whose flip changes its gate drive by more than 0.1 V.
    pub drivers: Vec<u32>,
    /// The state (max corner, stall) with its largest current.
    pub best: Option<u32>,
    /// The state its edges start from: the one in which it carries the
    /// most load current (not a shoot-through current that no load draws).
    pub edge_from: Option<u32>,
    pub i_max: f64,
    /// Running mode: the largest current and its point.
    pub i_run: f64,
    pub run_point: Option<Point>,
}

/// Which transition an edge run is.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum EdgeKind {
    /// The controlling pin moves (normal switching).
    Toggle,
    /// Every pin goes high-impedance (the controller resets while the
    /// load runs).
    Reset,
}

#[derive(Clone, Debug, PartialEq)]
pub struct EdgeRun {
    pub switch: u32,
    pub kind: EdgeKind,
    pub mode: Mode,
    pub from: u32,
    pub to: Option<u32>,
    pub res: EdgeResult,
}

/// A solved group.
#[derive(Clone)]
pub struct GroupSolution {
    pub nl: Netlist,
    pub n_pins: usize,
    pub drives: Vec<PinDrive>,
    pub states: Vec<Vec<PinState>>,
    /// `ops[state][slot(corner, mode)]`.
    pub ops: Vec<[OpPoint; 4]>,
    pub switches: Vec<LocalSwitch>,
    pub edges: Vec<EdgeRun>,
    /// More pins than are enumerated.
    pub truncated: bool,
    /// Some motor has a running back-EMF (else running = stall).
    pub has_run: bool,
    pub newton_iterations: usize,
}

pub fn slot(c: Corner, m: Mode) -> usize {
    match (c, m) {
        (Corner::Max, Mode::Stall) => 0,
        (Corner::Max, Mode::Run) => 1,
        (Corner::Min, Mode::Stall) => 2,
        (Corner::Min, Mode::Run) => 3,
    }
}

impl GroupSolution {
    pub fn op(&self, state: usize, c: Corner, m: Mode) -> Option<&OpPoint> {
        self.ops.get(state).map(|o| &o[slot(c, m)])
    }

    /// Whether every operating point converged.
    pub fn converged(&self) -> bool {
        self.ops.iter().all(|o| o.iter().all(|p| p.converged()))
    }

    pub fn is_reset(&self, state: usize) -> bool {
        self.states
            .get(state)
            .is_some_and(|a| a.iter().all(|s| *s == PinState::HiZ))
    }

    pub fn switch(&self, part: u32) -> Option<&LocalSwitch> {
        self.switches.iter().find(|s| s.part == part)
    }
}

/// Every assignment of `n` pins: reset, then every high/low combination
/// the `complement` pairs allow (the first `MAX_GROUP_PINS` pins
/// enumerated, the rest low).
pub fn assignments(drives: &[PinDrive]) -> Vec<Vec<PinState>> {
    let n = drives.len();
    let mut out = vec![vec![PinState::HiZ; n]];
    let k = n.min(MAX_GROUP_PINS);
    for mask in 0u32..(1u32 << k) {
        let a: Vec<PinState> = (0..n)
            .map(|i| {
                if i < k && mask & (1 << i) != 0 {
                    PinState::High
                } else {
                    PinState::Low
                }
            })
            .collect();
        let ok = drives.iter().enumerate().all(|(i, d)| match d.partner {
            Some(p) => a.get(p as usize) != a.get(i),
            None => true,
        });
        if ok {
            out.push(a);
        }
    }
    out
}

/// The switch's terminal voltages and current at a point (device polarity).
/// Whether a switch's drive enables it: the current its channel could
/// carry at this gate voltage (saturation), or the transport current at
/// this base-emitter voltage, exceeds the leakage floor.
fn gated(nl: &Netlist, k: usize, vgs: f64) -> bool {
    match &nl.elems[k].dev {
        Dev::Mos(m) => m.i_sat(vgs) >= I_OFF_FLOOR,
        Dev::Bjt(q) => q.is * (vgs / super::devices::VT).min(700.0).exp() >= I_OFF_FLOOR,
        _ => false,
    }
}

fn switch_vi(nl: &Netlist, k: usize, op: &OpPoint) -> (f64, f64, f64, f64) {
    let e = &nl.elems[k];
    let (pol, ctl, main, reference) = match &e.dev {
        Dev::Mos(m) => (m.polarity, e.t[1], e.t[0], e.t[2]),
        Dev::Bjt(q) => (q.polarity, e.t[1], e.t[0], e.t[2]),
        _ => return (0.0, 0.0, 0.0, 1.0),
    };
    let vgs = pol * (op.v(ctl) - op.v(reference));
    let vds = pol * (op.v(main) - op.v(reference));
    let i = pol * newton::currents(nl, k, &op.x, &op.ex, None)[0];
    (vgs, vds, i, pol)
}

/// The region of a switch: off below its leakage floor; on when it drops
/// no more than twice its rated on-state voltage at that current; linear
/// in between (it drops voltage and heats, `P = V_DS·I`).
fn region(
    nl: &Netlist,
    k: usize,
    rds_on: f64,
    vce_sat: f64,
    vds: f64,
    i: f64,
    i_max: f64,
) -> Region {
    if i.abs() < (I_OFF_FRACTION * i_max).max(I_OFF_FLOOR) {
        return Region::Off;
    }
    let on = match nl.elems[k].dev {
        Dev::Mos(_) => vds.abs() <= 2.0 * i.abs() * rds_on,
        _ => vds.abs() <= 2.0 * vce_sat,
    };
    if on { Region::On } else { Region::Linear }
}

/// The rated on-state figures a switch's region is judged by.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Rated {
    pub rds_on: f64,
    pub vce_sat: f64,
}

/// Solve a group.
pub fn solve(nl: Netlist, drives: &[PinDrive], rated: &[Rated]) -> GroupSolution {
    let n_pins = drives.len();
    let states = assignments(drives);
    let mut iterations = 0;
    let has_run = nl
        .elems
        .iter()
        .any(|e| matches!(e.dev, Dev::Load { emf, .. } if emf > 0.0));
    let mut ops: Vec<[OpPoint; 4]> = Vec::with_capacity(states.len());
    let mut last: [Option<Vec<f64>>; 2] = [None, None];
    for a in &states {
        let mut solved: Vec<OpPoint> = Vec::with_capacity(4);
        for (ci, corner) in Corner::BOTH.into_iter().enumerate() {
            let ex = op::excitation(&nl, n_pins, a, corner);
            let stall = op::solve(&nl, ex.clone(), last[ci].as_deref());
            last[ci] = Some(stall.x.clone());
            let run = if has_run {
                let mut ex_run = ex;
                // the back-EMF opposes the current each motor carries at stall
                for (k, e) in nl.elems.iter().enumerate() {
                    if let Dev::Load { emf, .. } = e.dev
                        && emf > 0.0
                    {
                        let i = newton::currents(&nl, k, &stall.x, &stall.ex, None)[0];
                        ex_run.emf[k] = if i.abs() > 1e-3 { emf.copysign(i) } else { 0.0 };
                    }
                }
                op::solve(&nl, ex_run, Some(&stall.x))
            } else {
                stall.clone()
            };
            solved.push(stall);
            solved.push(run);
        }
        iterations += solved.len();
        let mut it = solved.into_iter();
        let (a0, a1, a2, a3) = (it.next(), it.next(), it.next(), it.next());
        if let (Some(a0), Some(a1), Some(a2), Some(a3)) = (a0, a1, a2, a3) {
            ops.push([a0, a1, a2, a3]);
        }
    }
    let mut sol = GroupSolution {
        nl,
        n_pins,
        drives: drives.to_vec(),
        states,
        ops,
        switches: Vec::new(),
        edges: Vec::new(),
        truncated: n_pins > MAX_GROUP_PINS,
        has_run,
        newton_iterations: iterations,
    };
    sol.switches = read_switches(&sol, rated, drives);
    sol.edges = run_edges(&sol, drives);
    sol
}

fn read_switches(sol: &GroupSolution, rated: &[Rated], drives: &[PinDrive]) -> Vec<LocalSwitch> {
    let nl = &sol.nl;
    let nparts = nl.part_start.len().saturating_sub(1);
    let mut out = Vec::new();
    for p in 0..nparts {
        let Some(k) = nl.elem_index(p, Role::Main) else {
            continue;
        };
        if !matches!(nl.elems[k].dev, Dev::Mos(_) | Dev::Bjt(_)) {
            continue;
        }
        let r = rated.get(p).copied().unwrap_or_default();
        let mut sw = LocalSwitch {
            part: p as u32,
            ..LocalSwitch::default()
        };
        for corner in Corner::BOTH {
            let vi: Vec<(f64, f64, f64, f64)> = (0..sol.states.len())
                .map(|s| match sol.op(s, corner, Mode::Stall) {
                    Some(o) => switch_vi(nl, k, o),
                    None => (0.0, 0.0, 0.0, 1.0),
                })
                .collect();
            let i_max = vi.iter().map(|x| x.2.abs()).fold(0.0f64, f64::max);
            for (s, &(vgs, vds, i, _)) in vi.iter().enumerate() {
                let reg = region(nl, k, r.rds_on, r.vce_sat, vds, i, i_max);
                sw.points.push(Point {
                    state: s as u32,
                    corner,
                    region: reg,
                    gated: gated(nl, k, vgs),
                    v_gs: vgs,
                    v_ds: vds,
                    i_d: i,
                });
                if corner == Corner::Max && !sol.is_reset(s) && i.abs() > sw.i_max {
                    sw.i_max = i.abs();
                    sw.best = Some(s as u32);
                }
            }
        }
        // the state its edges start from: most current that loads draw
        let loads: Vec<usize> = (0..nl.elems.len())
            .filter(|&k| matches!(nl.elems[k].dev, Dev::Load { .. }))
            .collect();
        if loads.is_empty() {
            sw.edge_from = sw.best;
        } else {
            let mut best_score = 0.0f64;
            for s in 0..sol.states.len() {
                if sol.is_reset(s) {
                    continue;
                }
                let Some(o) = sol.op(s, Corner::Max, Mode::Stall) else {
                    continue;
                };
                let i_sw = switch_vi(nl, k, o).2.abs();
                let i_loads: f64 = loads
                    .iter()
                    .map(|&l| newton::currents(nl, l, &o.x, &o.ex, None)[0].abs())
                    .sum();
                let score = i_sw.min(i_loads);
                if score > best_score {
                    best_score = score;
                    sw.edge_from = Some(s as u32);
                }
            }
            if sw.edge_from.is_none() {
                sw.edge_from = sw.best;
            }
        }
        // running: the largest current at the max corner
        for s in 0..sol.states.len() {
            if sol.is_reset(s) {
                continue;
            }
            if let Some(o) = sol.op(s, Corner::Max, Mode::Run) {
                let (vgs, vds, i, _) = switch_vi(nl, k, o);
                if i.abs() > sw.i_run {
                    sw.i_run = i.abs();
                    sw.run_point = Some(Point {
                        state: s as u32,
                        corner: Corner::Max,
                        region: region(nl, k, r.rds_on, r.vce_sat, vds, i, sw.i_max.max(i.abs())),
                        gated: gated(nl, k, vgs),
                        v_gs: vgs,
                        v_ds: vds,
                        i_d: i,
                    });
                }
            }
        }
        // which pins control it
        for pin in 0..sol.n_pins {
            let mut controls = None;
            let mut changes_drive = false;
            for (s, a) in sol.states.iter().enumerate() {
                if a.get(pin) != Some(&PinState::High) {
                    continue;
                }
                let mut flipped = a.clone();
                flipped[pin] = PinState::Low;
                // a complement partner flips with it
                for j in partners(drives, pin) {
                    if let Some(x) = flipped.get_mut(j) {
                        *x = flip(*x);
                    }
                }
                let Some(o) = sol.states.iter().position(|b| *b == flipped) else {
                    continue;
                };
                let ph = sw
                    .points
                    .iter()
                    .find(|x| x.corner == Corner::Max && x.state == s as u32);
                let pl = sw
                    .points
                    .iter()
                    .find(|x| x.corner == Corner::Max && x.state == o as u32);
                if let (Some(ph), Some(pl)) = (ph, pl) {
                    if (ph.v_gs - pl.v_gs).abs() > 0.1 {
                        changes_drive = true;
                    }
                    if ph.gated != pl.gated && controls.is_none() {
                        controls = Some(pl.gated);
                    }
                }
            }
            if let Some(inv) = controls {
                sw.controls.push((pin as u32, inv));
            }
            if changes_drive {
                sw.drivers.push(pin as u32);
            }
        }
        out.push(sw);
    }
    out
}

fn flip(s: PinState) -> PinState {
    match s {
        PinState::High => PinState::Low,
        PinState::Low => PinState::High,
        PinState::HiZ => PinState::HiZ,
    }
}

/// Pins that flip with `pin` (its complement partners).
fn partners(drives: &[PinDrive], pin: usize) -> Vec<usize> {
    drives
        .iter()
        .enumerate()
        .filter(|(j, d)| {
            *j != pin
                && (d.partner == Some(pin as u32)
                    || drives.get(pin).and_then(|x| x.partner) == Some(*j as u32))
        })
        .map(|(j, _)| j)
        .collect()
}

/// A switch carries load current when its largest current is at least
/// this (A); smaller switches are part of a gate network.
pub const I_LOAD_MIN: f64 = 10e-3;

/// One switch's edges: the command that turns it off, from the state with
/// the most load current.
struct EdgePlan {
    switch: u32,
    pin: u32,
    from: u32,
    to: u32,
    f_pwm: f64,
    duty_max: f64,
    reset_off: bool,
}

fn plan_edges(sol: &GroupSolution, drives: &[PinDrive]) -> Vec<EdgePlan> {
    let mut out = Vec::new();
    for sw in &sol.switches {
        let (Some(best), Some(&(pin, _))) = (sw.edge_from, sw.controls.first()) else {
            continue;
        };
        if sw.i_max < I_LOAD_MIN {
            continue;
        }
        let Some(from) = sol.states.get(best as usize) else {
            continue;
        };
        let mut to = from.clone();
        for j in std::iter::once(pin as usize).chain(partners(drives, pin as usize)) {
            if let Some(s) = to.get_mut(j) {
                *s = flip(*s);
            }
        }
        let Some(to_i) = sol.states.iter().position(|b| *b == to) else {
            continue;
        };
        // the switch must be turned off in the target state
        if sw
            .points
            .iter()
            .any(|p| p.corner == Corner::Max && p.state == to_i as u32 && p.gated)
        {
            continue;
        }
        let (f, dmax) = drives
            .get(pin as usize)
            .map_or((0.0, 1.0), |d| (d.f_pwm, d.duty_max));
        // the duty of the switch's on-time: inverted when it conducts
        // with its pin low
        let inverting = sw.controls.first().is_some_and(|c| c.1);
        let dmax = if inverting {
            drives.get(pin as usize).map_or(1.0, |d| 1.0 - d.duty_min)
        } else {
            dmax
        };
        // a reset while it conducts, when reset turns it off by another path
        let reset_off = sw
            .points
            .iter()
            .any(|p| p.corner == Corner::Max && p.state == 0 && !p.gated);
        let others_differ = sol.states.first().is_some_and(|r| *r != to);
        out.push(EdgePlan {
            switch: sw.part,
            pin,
            from: best,
            to: to_i as u32,
            f_pwm: f,
            duty_max: dmax,
            reset_off: reset_off && others_differ && sol.n_pins > 1,
        });
    }
    out
}

/// Simulate the edges of every load switch. Switches that the same
/// command turns off from the same state share one run (a gate net
/// driving many channels costs one simulation, not one per channel).
fn run_edges(sol: &GroupSolution, drives: &[PinDrive]) -> Vec<EdgeRun> {
    let nl = &sol.nl;
    let plans = plan_edges(sol, drives);
    let delay: Vec<f64> = drives
        .iter()
        .map(|d| if d.partner.is_some() { d.deadtime } else { 0.0 })
        .collect();
    let high: Vec<f64> = (0..sol.n_pins)
        .map(|j| pin_level(nl, j as u32, Corner::Max))
        .collect();
    let reset = vec![PinState::HiZ; sol.n_pins];
    let modes: &[Mode] = if sol.has_run {
        &[Mode::Stall, Mode::Run]
    } else {
        &[Mode::Stall]
    };
    // per plan: its runs, in order (toggle per mode, then reset)
    let mut runs: Vec<Vec<EdgeRun>> = (0..plans.len()).map(|_| Vec::new()).collect();
    let mut by_command: Vec<Vec<usize>> = Vec::new();
    let mut index: std::collections::HashMap<(u32, u32, u32, u64, u64), usize> =
        std::collections::HashMap::new();
    for (j, q) in plans.iter().enumerate() {
        let key = (q.pin, q.from, q.to, q.f_pwm.to_bits(), q.duty_max.to_bits());
        let slot = *index.entry(key).or_insert_with(|| {
            by_command.push(Vec::new());
            by_command.len() - 1
        });
        if let Some(v) = by_command.get_mut(slot) {
            v.push(j);
        }
    }
    for same in &by_command {
        let Some(p) = same.first().and_then(|&i| plans.get(i)) else {
            continue;
        };
        let switches: Vec<u32> = same.iter().map(|&j| plans[j].switch).collect();
        let (Some(from), Some(to)) = (
            sol.states.get(p.from as usize),
            sol.states.get(p.to as usize),
        ) else {
            continue;
        };
        for &mode in modes {
            let Some(on) = sol.op(p.from as usize, Corner::Max, mode) else {
                continue;
            };
            let last = mode == *modes.last().unwrap_or(&Mode::Stall);
            let spec = EdgeSpec {
                nl,
                switch: p.switch,
                on,
                off_cmd: Command {
                    from,
                    to,
                    high: &high,
                    delay_rise: &delay,
                },
                f_pwm: p.f_pwm,
                duty_max: p.duty_max,
                with_turn_on: last && p.f_pwm > 0.0,
                ctl: p.pin as usize,
            };
            for (&j, res) in same.iter().zip(edges::simulate_many(&spec, &switches)) {
                runs[j].push(EdgeRun {
                    switch: plans[j].switch,
                    kind: EdgeKind::Toggle,
                    mode,
                    from: p.from,
                    to: Some(p.to),
                    res,
                });
            }
        }
        let resets: Vec<usize> = same
            .iter()
            .copied()
            .filter(|&j| plans[j].reset_off)
            .collect();
        if resets.is_empty() {
            continue;
        }
        let Some(on) = sol.op(p.from as usize, Corner::Max, Mode::Stall) else {
            continue;
        };
        let switches: Vec<u32> = resets.iter().map(|&j| plans[j].switch).collect();
        let spec = EdgeSpec {
            nl,
            switch: p.switch,
            on,
            off_cmd: Command {
                from,
                to: &reset,
                high: &high,
                delay_rise: &delay,
            },
            f_pwm: 0.0,
            duty_max: 1.0,
            with_turn_on: false,
            ctl: p.pin as usize,
        };
        for (&j, res) in resets.iter().zip(edges::simulate_many(&spec, &switches)) {
            runs[j].push(EdgeRun {
                switch: plans[j].switch,
                kind: EdgeKind::Reset,
                mode: Mode::Stall,
                from: p.from,
                to: None,
                res,
            });
        }
    }
    runs.into_iter().flatten().collect()
}

/// A pin's high level at a corner.
pub fn pin_level(nl: &Netlist, pin: u32, corner: Corner) -> f64 {
    nl.elems
        .iter()
        .find_map(|e| match e.dev {
            Dev::Pin {
                pin: p,
                level_max,
                level_min,
                ..
            } if p == pin => Some(match corner {
                Corner::Max => level_max,
                Corner::Min => level_min,
            }),
            _ => None,
        })
        .unwrap_or(0.0)
}

/// The rated figures of the parts of a group (for the regions).
pub fn rated(c: &crate::model::Circuit, parts: &[usize]) -> Vec<Rated> {
    parts
        .iter()
        .map(|&p| {
            let part = c.part(p);
            Rated {
                rds_on: part.num("rds_on").unwrap_or(mosfet::RDS_ON_FALLBACK),
                vce_sat: part
                    .num("vce_sat")
                    .unwrap_or(super::devices::bjt::VCE_SAT_DEFAULT),
            }
        })
        .collect()
}

/// Whether a failed operating point exists, and which.
pub fn failures(sol: &GroupSolution) -> Vec<(usize, Corner, Mode)> {
    let mut v = Vec::new();
    for (s, o) in sol.ops.iter().enumerate() {
        for (c, m) in [
            (Corner::Max, Mode::Stall),
            (Corner::Max, Mode::Run),
            (Corner::Min, Mode::Stall),
            (Corner::Min, Mode::Run),
        ] {
            if o[slot(c, m)].method == Method::Failed {
                v.push((s, c, m));
            }
        }
    }
    v
}

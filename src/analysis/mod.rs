//! Electrical analysis: switching states, nodal DC solves, freewheel paths
//! at turn-off, PWM, losses and junction temperature, bridge legs. It
//! produces the `Facts` table that built-in checks and team rules read.

pub mod devices;
pub mod facts;
pub mod freewheel;
pub mod groups;
pub mod mna;
pub mod netlist;
pub mod newton;
pub mod op;
pub mod physics;
pub mod solve;
pub mod spice;
pub mod spice_v1;
pub mod states;

pub use facts::{Fact, FactTable, Facts};

use crate::fasthash::FastMap as HashMap;
use crate::finding::Finding;
use crate::graph::CircuitGraph;
use crate::model::{Circuit, DriveKind, Kind, NetId, PartId};
use crate::settings::Settings;
use crate::units::Dimension::*;
use states::{CtlPin, Group, PinState, StateResult};

/// What the analysis learnt about a switch's control.
#[derive(Clone, Debug, Default)]
pub struct SwitchInfo {
    pub group: usize,
    /// Controller pins that change the switch's state, and whether the
    /// switch is on when the pin is low (inverting path).
    pub controls: Vec<(CtlPin, bool)>,
    pub on_states: usize,
    pub hl_states: usize,
    /// During reset (all pins high-impedance): gate net undefined.
    pub reset_floating: bool,
    pub reset_on: bool,
    /// Lowest gate drive over the states where the switch is on.
    pub v_gs_on: Option<f64>,
    /// Highest drive over all states (when it is never on).
    pub v_gs_best: Option<f64>,
    /// Largest |V_GS| over all states.
    pub v_gs_abs_max: Option<f64>,
    pub f_pwm: f64,
    pub duty_min: f64,
    pub duty_max: f64,
    /// Largest current out of a controller pin that drives it.
    pub pin_current: Option<(CtlPin, f64)>,
}

/// One inductive load and the switches that carry its current.
#[derive(Clone, Debug)]
pub struct LoadInfo {
    pub part: PartId,
    pub group: usize,
    pub switches: Vec<PartId>,
    /// Worst-case (stall) current magnitude.
    pub i_stall: f64,
    pub i_stall_note: String,
    pub i_cont: f64,
    pub i_cont_note: String,
    /// Diodes across the load that conduct while the load is driven.
    pub reversed: Vec<(PartId, f64)>,
    pub f_pwm: f64,
    pub duty_max: f64,
}

/// One switch opening under an inductive load.
#[derive(Clone, Debug)]
pub struct TurnOff {
    pub load: PartId,
    pub switch: PartId,
    pub i0: f64,
    pub path: Option<freewheel::Path>,
    pub v_peak: f64,
    pub v_peak_note: String,
    pub rail: Option<NetId>,
    /// Switches forced off with it (a bridge reset), besides `switch`.
    pub also_off: Vec<PartId>,
    /// Switches that stay on while it opens.
    pub others_on: Vec<PartId>,
}

/// Two switches in series between two fixed nets, sharing a midpoint.
#[derive(Clone, Debug)]
pub struct Leg {
    pub high: PartId,
    pub low: PartId,
    pub mid: NetId,
    /// A pin assignment that turns both on: (pins, states).
    pub both_on: Option<Vec<(CtlPin, PinState)>>,
}

/// Everything the analysis computed for a circuit.
#[derive(Debug, Default)]
pub struct Analysis {
    pub facts: Facts,
    /// Findings made before the checks (parse warnings, analysis notes).
    pub early: Vec<Finding>,
    pub switches: HashMap<PartId, SwitchInfo>,
    pub loads: Vec<LoadInfo>,
    pub turnoffs: Vec<TurnOff>,
    pub legs: Vec<Leg>,
    pub groups: Vec<Group>,
    /// Worst-case DC voltage of each net over every solved state.
    pub net_vmax: Vec<Option<f64>>,
    pub net_vmin: Vec<Option<f64>>,
    /// Parts between two fixed nets that conduct: (part, how).
    pub rail_shorts: Vec<(PartId, String)>,
    /// Groups whose pins exceed the enumeration limit.
    pub truncated: Vec<usize>,
    /// Smallest on-duty of the PWM switches whose turn-off a diode
    /// freewheels (its off-time is the rest of the period).
    pub diode_duty_min: HashMap<PartId, f64>,
}

impl std::fmt::Debug for Group {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "Group({} nets, {} pins)",
            self.nets.len(),
            self.pins.len()
        )
    }
}

/// The largest rail voltage on a load's pins or its switches' pins.
fn supply_of(c: &Circuit, load: PartId, switches: &[PartId]) -> f64 {
    std::iter::once(load)
        .chain(switches.iter().copied())
        .flat_map(|q| c.part(q).pins.iter())
        .filter_map(|p| c.net(p.net).fixed_max())
        .fold(0.0f64, |a, b| a.max(b.abs()))
}

/// Pins tied to pin `k` by a `complement` declaration.
fn partners(c: &Circuit, pins: &[CtlPin], k: usize) -> Vec<usize> {
    let Some(me) = pins.get(k) else {
        return Vec::new();
    };
    c.complement_of(me.0, &me.1)
        .and_then(|o| pins.iter().position(|p| p == o))
        .into_iter()
        .collect()
}

fn drive_of<'a>(c: &'a Circuit, pin: &CtlPin) -> Option<&'a crate::model::Drive> {
    c.drive_of(pin.0, &pin.1)
}

pub fn analyze(c: &Circuit, g: &CircuitGraph, s: &Settings) -> Analysis {
    let mut a = Analysis {
        facts: Facts::new(c.parts.len()),
        net_vmax: c.nets.iter().map(|n| n.fixed_max()).collect(),
        net_vmin: c.nets.iter().map(|n| n.fixed_min()).collect(),
        ..Analysis::default()
    };
    let groups = states::groups(c, g);
    // reserve the big tables once (see `model::elaborate`)
    let n_switches = c.parts.iter().filter(|p| p.kind.is_switch()).count();
    let n_loads = c
        .parts
        .iter()
        .filter(|p| p.kind.is_inductive_load())
        .count();
    a.switches.reserve(n_switches);
    a.loads.reserve(n_loads);
    a.turnoffs.reserve(2 * n_switches);
    // The groups are independent: each is solved in its states and
    // analysed on its own, on every core, a chunk at a time so that the
    // solved states of a large board are not all held at once. The
    // results are merged in group order, so the output does not depend
    // on the number of threads.
    use rayon::prelude::*;
    const CHUNK: usize = 4096;
    for chunk_start in (0..groups.len()).step_by(CHUNK) {
        let chunk = &groups[chunk_start..(chunk_start + CHUNK).min(groups.len())];
        let outs: Vec<GroupAcc> = chunk
            .par_iter()
            .enumerate()
            .with_min_len(64)
            .map(|(i, grp)| analyse_group(c, s, chunk_start + i, grp))
            .collect();
        for (i, acc) in outs.into_iter().enumerate() {
            let gi = chunk_start + i;
            for (net, hi, lo) in acc.extremes {
                if let Some(slot) = a.net_vmax.get_mut(net) {
                    let mx = slot.get_or_insert(hi);
                    *mx = mx.max(hi);
                }
                if let Some(slot) = a.net_vmin.get_mut(net) {
                    let mn = slot.get_or_insert(lo);
                    *mn = mn.min(lo);
                }
            }
            if acc.truncated {
                a.truncated.push(gi);
            }
            a.facts.merge(acc.facts);
            let mut sw: Vec<(PartId, SwitchInfo)> = acc.switches.into_iter().collect();
            sw.sort_unstable_by_key(|(p, _)| *p);
            a.switches.extend(sw);
            a.loads.extend(acc.loads);
            a.turnoffs.extend(acc.turnoffs);
            a.legs.extend(acc.legs);
            let mut dm: Vec<(PartId, f64)> = acc.diode_duty_min.into_iter().collect();
            dm.sort_unstable_by_key(|(p, _)| *p);
            for (d, m) in dm {
                let e = a.diode_duty_min.entry(d).or_insert(m);
                *e = e.min(m);
            }
            if let Some(f) = acc.nonconvergent {
                a.early.push(f);
            }
        }
    }
    a.groups = groups;
    rail_shorts(c, &mut a);
    thermal(c, s, &mut a);
    diode_losses(c, &mut a);
    a
}

/// What the analysis of one group produced, before it is merged into
/// the circuit's `Analysis`.
#[derive(Default)]
struct GroupAcc {
    facts: facts::LocalFacts,
    switches: HashMap<PartId, SwitchInfo>,
    loads: Vec<LoadInfo>,
    turnoffs: Vec<TurnOff>,
    legs: Vec<Leg>,
    diode_duty_min: HashMap<PartId, f64>,
    /// (net, highest, lowest) DC voltage over the group's states.
    extremes: Vec<(NetId, f64, f64)>,
    truncated: bool,
    nonconvergent: Option<Finding>,
}

/// Solve a group in every pin assignment and analyse its switches,
/// loads, legs and diodes.
fn analyse_group(c: &Circuit, s: &Settings, gi: usize, grp: &Group) -> GroupAcc {
    let results: Vec<StateResult> = states::assignments(c, &grp.pins)
        .iter()
        .map(|x| states::solve_state(c, grp, x, None))
        .collect();
    let mut a = GroupAcc {
        truncated: grp.pins.len() > states::MAX_GROUP_PINS,
        ..GroupAcc::default()
    };
    let mut ext: HashMap<NetId, (f64, f64)> = HashMap::default();
    for r in &results {
        for (&net, &v) in &r.volts {
            if r.floating.contains(&net) {
                continue;
            }
            let e = ext.entry(net).or_insert((v, v));
            e.0 = e.0.max(v);
            e.1 = e.1.min(v);
        }
    }
    a.extremes = ext.into_iter().map(|(n, (hi, lo))| (n, hi, lo)).collect();
    a.extremes.sort_unstable_by_key(|x| x.0);
    analyse_switches(c, gi, grp, &results, &mut a);
    analyse_loads(c, s, gi, grp, &results, &mut a);
    analyse_legs(c, grp, &results, &mut a);
    analyse_diodes(c, grp, &results, &mut a);
    if results.iter().any(|r| !r.converged) {
        let names: Vec<&str> = grp
            .nets
            .iter()
            .take(3)
            .map(|&n| c.net(n).name.as_str())
            .collect();
        if let Some(&p) = grp.parts.first() {
            a.nonconvergent = Some(
                crate::finding::Finding::new(
                    "analysis-nonconvergent",
                    crate::finding::Severity::Warning,
                    &c.file,
                    c.part(p).span,
                    format!(
                        "the switching states around {} did not settle to a consistent state: results for these parts are approximate",
                        names.iter().map(|n| format!("`{n}`")).collect::<Vec<_>>().join(", ")
                    ),
                )
                .label("oscillating piecewise state")
                .help("check for a switch that turns itself off (a source follower driving its own gate network)")
                .parts([c.part(p).reference.clone()]),
            );
        }
    }
    a
}

fn analyse_switches(
    c: &Circuit,
    gi: usize,
    grp: &Group,
    results: &[StateResult],
    a: &mut GroupAcc,
) {
    for &pid in &grp.parts {
        let p = c.part(pid);
        if !p.kind.is_switch() {
            continue;
        }
        let mut info = SwitchInfo {
            group: gi,
            ..SwitchInfo::default()
        };
        let sign = if p.kind.is_p_type() { -1.0 } else { 1.0 };
        for r in results {
            let on = r.switch_on.get(&pid).copied().unwrap_or(false);
            let v = states::vgs(c, pid, r);
            if r.is_reset() {
                let ctl = p.kind.switch_pins().and_then(|(_, ctl, _)| p.net_of(ctl));
                info.reset_floating = ctl.is_some_and(|n| r.floating.contains(&n));
                info.reset_on = on;
                continue;
            }
            info.hl_states += 1;
            if let Some(v) = v {
                let d = v * sign;
                info.v_gs_abs_max =
                    Some(info.v_gs_abs_max.map_or(v.abs(), |m: f64| m.max(v.abs())));
                info.v_gs_best = Some(info.v_gs_best.map_or(d, |m: f64| m.max(d)));
                if on {
                    info.v_gs_on = Some(info.v_gs_on.map_or(d, |m: f64| m.min(d)));
                }
            }
            if on {
                info.on_states += 1;
            }
        }
        // which pins control it, and with which polarity
        for (k, pin) in grp.pins.iter().enumerate() {
            let mut controls = false;
            let mut inverting = false;
            for r in results {
                if r.is_reset() || r.assignment.get(k) != Some(&PinState::High) {
                    continue;
                }
                let mut flipped = r.assignment.clone();
                flipped[k] = PinState::Low;
                for j in partners(c, &grp.pins, k) {
                    if let Some(x) = flipped.get_mut(j) {
                        *x = if *x == PinState::High {
                            PinState::Low
                        } else {
                            PinState::High
                        };
                    }
                }
                if let Some(other) = results.iter().skip(1).find(|o| o.assignment == flipped) {
                    let on_h = r.switch_on.get(&pid).copied().unwrap_or(false);
                    let on_l = other.switch_on.get(&pid).copied().unwrap_or(false);
                    if on_h != on_l {
                        controls = true;
                        inverting = on_l;
                        break;
                    }
                }
            }
            if controls {
                info.controls.push((pin.clone(), inverting));
            }
        }
        info.duty_min = 1.0;
        info.duty_max = 1.0;
        for (pin, inv) in &info.controls {
            let d = drive_of(c, pin)
                .or_else(|| c.complement_of(pin.0, &pin.1).and_then(|o| drive_of(c, o)));
            let inv = &if drive_of(c, pin).is_none() && d.is_some() {
                !*inv
            } else {
                *inv
            };
            if let Some(d) = d
                && let DriveKind::Pwm {
                    freq,
                    duty_min,
                    duty_max,
                    ..
                } = d.kind
                && freq > info.f_pwm
            {
                info.f_pwm = freq;
                let (lo, hi) = if *inv {
                    (1.0 - duty_max, 1.0 - duty_min)
                } else {
                    (duty_min, duty_max)
                };
                info.duty_min = lo;
                info.duty_max = hi;
            }
        }
        // pin current of the controller pins on its control side
        for r in results {
            for (k, pin) in grp.pins.iter().enumerate() {
                let idx = c
                    .part(pin.0)
                    .pins
                    .iter()
                    .position(|x| x.name == pin.1)
                    .unwrap_or(0);
                if let Some(&i) = r.pin_current.get(&(pin.0 * 64 + idx.min(63)))
                    && r.assignment.get(k) == Some(&PinState::High)
                    && info.controls.iter().any(|(cp, _)| cp == pin)
                    && info.pin_current.as_ref().is_none_or(|(_, m)| i.abs() > *m)
                {
                    info.pin_current = Some((pin.clone(), i.abs()));
                }
            }
        }
        if let Some(v) = info.v_gs_on.or(info.v_gs_best) {
            let note = if info.v_gs_on.is_some() {
                "lowest gate drive over the states where it conducts"
            } else {
                "best drive over every pin state; it never conducts"
            };
            a.facts.set(pid, "v_gs_on", v, Voltage, Some(note.into()));
        } else {
            a.facts.missing(
                pid,
                "v_gs_on",
                "the gate net has no defined voltage in any pin state",
            );
        }
        if p.kind.is_bipolar() {
            let mut ib_min: Option<f64> = None;
            let mut ib_max: Option<f64> = None;
            for r in results.iter().filter(|r| !r.is_reset()) {
                if r.switch_on.get(&pid).copied().unwrap_or(false) {
                    let ib = r.current.get(&(pid + states::BASE)).copied().unwrap_or(0.0);
                    ib_min = Some(ib_min.map_or(ib, |m| m.min(ib)));
                    ib_max = Some(ib_max.map_or(ib, |m| m.max(ib)));
                }
            }
            if let (Some(lo), Some(hi)) = (ib_min, ib_max) {
                a.facts.set(
                    pid,
                    "i_b",
                    lo,
                    Current,
                    Some("lowest base current in the on states".into()),
                );
                a.facts.set(pid, "i_b_max", hi, Current, None);
            }
        }
        a.facts.set(pid, "f_pwm", info.f_pwm, Frequency, None);
        a.facts.set(pid, "duty_max", info.duty_max, Number, None);
        a.switches.insert(pid, info);
    }
}

fn analyse_loads(
    c: &Circuit,
    s: &Settings,
    gi: usize,
    grp: &Group,
    results: &[StateResult],
    a: &mut GroupAcc,
) {
    for &lid in &grp.parts {
        let lp = c.part(lid);
        if !matches!(lp.kind, Kind::Motor | Kind::Solenoid | Kind::Relay) {
            continue;
        }
        let (Some(np), Some(nm)) = (lp.net_of("+"), lp.net_of("-")) else {
            continue;
        };
        if lp.num("r").is_none() {
            a.facts.missing(
                lid,
                "i_stall",
                format!("`{}` has no winding resistance `r`", lp.reference),
            );
            continue;
        }
        // the states with the largest load current in each direction
        let mut best_pos: Option<(usize, f64)> = None;
        let mut best_neg: Option<(usize, f64)> = None;
        for (i, r) in results.iter().enumerate() {
            if r.is_reset() {
                continue;
            }
            let il = r.current.get(&lid).copied().unwrap_or(0.0);
            let slot = if il >= 0.0 {
                &mut best_pos
            } else {
                &mut best_neg
            };
            if slot.is_none_or(|(_, b)| il.abs() > b.abs()) {
                *slot = Some((i, il));
            }
        }
        let solved = best_pos
            .map_or(0.0, |b| b.1.abs())
            .max(best_neg.map_or(0.0, |b| b.1.abs()));
        if solved < 1e-6 {
            a.facts.missing(
                lid,
                "i_stall",
                "no pin state drives a current through the load",
            );
            continue;
        }
        let (i_stall, stall_note) = match lp.num("i_stall") {
            Some(i) => (i, "given `i_stall`".to_string()),
            None => {
                let all_sw: Vec<PartId> = grp
                    .parts
                    .iter()
                    .copied()
                    .filter(|&q| c.part(q).kind.is_switch())
                    .collect();
                let v = supply_of(c, lid, &all_sw);
                (
                    solved,
                    format!(
                        "nodal solve at stall, rail at its maximum{}",
                        if v > 0.0 {
                            format!(" ({})", crate::units::format_si(v, Voltage))
                        } else {
                            String::new()
                        }
                    ),
                )
            }
        };
        let (i_cont, cont_note) = match lp.num("i_rated") {
            Some(i) => (i, "given `i_rated`".to_string()),
            None => (
                i_stall,
                "no `i_rated`: the stall current is used".to_string(),
            ),
        };
        let dirs: Vec<(usize, f64)> = [best_pos, best_neg]
            .into_iter()
            .flatten()
            .filter(|(_, il)| il.abs() >= 0.05 * solved)
            .collect();
        let mut switches: Vec<PartId> = Vec::new();
        let mut per_dir: Vec<(usize, f64, Vec<PartId>)> = Vec::new();
        for &(bi, il) in &dirs {
            let st = &results[bi];
            let sw: Vec<PartId> = grp
                .parts
                .iter()
                .copied()
                .filter(|&q| {
                    c.part(q).kind.is_switch()
                        && st.switch_on.get(&q).copied().unwrap_or(false)
                        && st.current.get(&q).copied().unwrap_or(0.0).abs() >= 0.5 * il.abs()
                })
                .collect();
            for &q in &sw {
                if !switches.contains(&q) {
                    switches.push(q);
                }
            }
            per_dir.push((bi, il, sw));
        }
        // diodes across the load conducting while it is driven
        let mut reversed = Vec::new();
        for &d in &grp.parts {
            let dp = c.part(d);
            if !dp.kind.is_diode() {
                continue;
            }
            let (Some(da), Some(dk)) = (dp.net_of("a"), dp.net_of("k")) else {
                continue;
            };
            // a diode across the load, or one that touches the load's
            // switched end (one diode of a series freewheel path)
            let switched = |n: NetId| (n == np || n == nm) && !c.net(n).is_fixed();
            let across = (da == np && dk == nm) || (da == nm && dk == np);
            if !(across || switched(da) || switched(dk)) {
                continue;
            }
            let mut worst: f64 = 0.0;
            for r in results.iter().filter(|r| !r.is_reset()) {
                if r.current.get(&lid).copied().unwrap_or(0.0).abs() > 0.1 * solved {
                    let id = r.current.get(&d).copied().unwrap_or(0.0);
                    if id > 1e-3 {
                        worst = worst.max(id);
                    }
                }
            }
            if worst > 0.0 {
                reversed.push((d, worst));
            }
        }
        let f_pwm = switches
            .iter()
            .filter_map(|q| a.switches.get(q).map(|i| (i.f_pwm, i.duty_max)))
            .fold((0.0f64, 1.0f64), |acc, x| if x.0 > acc.0 { x } else { acc });
        a.facts
            .set(lid, "i_stall", i_stall, Current, Some(stall_note.clone()));
        a.facts
            .set(lid, "i_cont", i_cont, Current, Some(cont_note.clone()));
        a.facts.set(lid, "f_pwm", f_pwm.0, Frequency, None);
        if f_pwm.0 > 0.0
            && let (Some(l), Some(r)) = (lp.num("l"), lp.num("r"))
        {
            let v = supply_of(c, lid, &switches);
            let d = if f_pwm.1 >= 0.5 {
                0.5
            } else {
                f_pwm.1.max(0.0)
            };
            a.facts.set(
                lid,
                "i_ripple",
                physics::ripple(v, r, l, f_pwm.0, d),
                Current,
                Some(format!("peak-to-peak at duty {}", crate::units::percent(d))),
            );
            // mean current at the largest duty, stalled (no back-EMF):
            // (D·V - E)/R with E = 0
            a.facts.set(
                lid,
                "i_mean",
                physics::pwm_mean(v, r, f_pwm.1, 0.0),
                Current,
                Some(format!(
                    "at duty {}, stalled",
                    crate::units::percent(f_pwm.1)
                )),
            );
        }
        let scale = i_stall / solved;
        for (bi, _il, sw) in &per_dir {
            let st = &results[*bi];
            for &q in sw {
                let i_q = st.current.get(&q).copied().unwrap_or(0.0).abs() * scale;
                if a.facts.value(q, "i_on").is_none_or(|v| i_q > v) {
                    a.facts.set(
                        q,
                        "i_on",
                        i_q,
                        Current,
                        Some(format!("stall of `{}`: {stall_note}", lp.reference)),
                    );
                }
                a.facts.set(
                    q,
                    "i_cont",
                    i_cont,
                    Current,
                    Some(format!("`{}`: {cont_note}", lp.reference)),
                );
                let t = freewheel::turn_off(c, s, grp, st, lid, q, &[], i_q);
                if let Some(path) = &t.path {
                    for &d in &path.parts {
                        if c.part(d).kind.is_diode() {
                            let prev = a.facts.value(d, "i_fw").unwrap_or(0.0);
                            a.facts.set(
                                d,
                                "i_fw",
                                prev.max(i_cont),
                                Current,
                                Some(format!(
                                    "`{}` at turn-off of `{}`",
                                    lp.reference,
                                    c.part(q).reference
                                )),
                            );
                            let prev = a.facts.value(d, "i_fw_peak").unwrap_or(0.0);
                            a.facts.set(d, "i_fw_peak", prev.max(i_q), Current, None);
                            let fp = a.facts.value(d, "f_pwm").unwrap_or(0.0);
                            a.facts.set(d, "f_pwm", fp.max(f_pwm.0), Frequency, None);
                            if f_pwm.0 > 0.0
                                && let Some(dm) = a.switches.get(&q).map(|i| i.duty_min)
                            {
                                let e = a.diode_duty_min.entry(d).or_insert(dm);
                                *e = e.min(dm);
                            }
                        }
                    }
                }
                if a.facts.value(q, "v_peak").is_none_or(|v| t.v_peak > v) {
                    if let Some(path) = &t.path {
                        a.facts
                            .set(q, "v_clamp", path.v_loop, Voltage, Some(path.describe(c)));
                        a.facts.set(q, "t_decay", path.t_decay, Time, None);
                        a.facts.set(q, "e_clamp", path.energy, Energy, None);
                    }
                    a.facts
                        .set(q, "v_peak", t.v_peak, Voltage, Some(t.v_peak_note.clone()));
                }
                a.turnoffs.push(t);
            }
            // every switch of the load off at once (a reset while it runs)
            if sw.len() >= 2 {
                let i_all = st.current.get(&lid).copied().unwrap_or(0.0).abs() * scale;
                for &q in sw {
                    let t = freewheel::turn_off(c, s, grp, st, lid, q, sw, i_all);
                    if a.facts.value(q, "v_peak").is_none_or(|v| t.v_peak > v) {
                        a.facts.set(
                            q,
                            "v_peak",
                            t.v_peak,
                            Voltage,
                            Some(format!(
                                "all switches of `{}` off: {}",
                                lp.reference, t.v_peak_note
                            )),
                        );
                    }
                    a.turnoffs.push(t);
                }
            }
        }
        a.loads.push(LoadInfo {
            part: lid,
            group: gi,
            switches,
            i_stall,
            i_stall_note: stall_note,
            i_cont,
            i_cont_note: cont_note,
            reversed,
            f_pwm: f_pwm.0,
            duty_max: f_pwm.1,
        });
    }
}

fn analyse_legs(c: &Circuit, grp: &Group, results: &[StateResult], a: &mut GroupAcc) {
    let sw: Vec<PartId> = grp
        .parts
        .iter()
        .copied()
        .filter(|&q| c.part(q).kind.is_switch())
        .collect();
    for &x in &sw {
        for &y in &sw {
            if x == y {
                continue;
            }
            let (px, py) = (c.part(x), c.part(y));
            let main = |p: &crate::model::Part| -> Option<(NetId, NetId)> {
                let (m, _, r) = p.kind.switch_pins()?;
                Some((p.net_of(m)?, p.net_of(r)?))
            };
            let (Some((xm, xr)), Some((ym, yr))) = (main(px), main(py)) else {
                continue;
            };
            // x: between a fixed net (upper) and mid; y: mid and a lower fixed net
            let ends = |a1: NetId, a2: NetId| -> Option<(NetId, NetId)> {
                match (c.net(a1).fixed_max(), c.net(a2).fixed_max()) {
                    (Some(_), None) => Some((a1, a2)),
                    (None, Some(_)) => Some((a2, a1)),
                    _ => None,
                }
            };
            let (Some((xf, xmid)), Some((yf, ymid))) = (ends(xm, xr), ends(ym, yr)) else {
                continue;
            };
            if xmid != ymid {
                continue;
            }
            let (vx, vy) = (
                c.net(xf).fixed_max().unwrap_or(0.0),
                c.net(yf).fixed_max().unwrap_or(0.0),
            );
            if vx <= vy {
                continue;
            }
            let both = results.iter().filter(|r| !r.is_reset()).find(|r| {
                r.switch_on.get(&x).copied().unwrap_or(false)
                    && r.switch_on.get(&y).copied().unwrap_or(false)
            });
            a.legs.push(Leg {
                high: x,
                low: y,
                mid: xmid,
                both_on: both.map(|r| {
                    grp.pins
                        .iter()
                        .cloned()
                        .zip(r.assignment.iter().copied())
                        .collect()
                }),
            });
        }
    }
}

fn analyse_diodes(c: &Circuit, grp: &Group, results: &[StateResult], a: &mut GroupAcc) {
    for &d in &grp.parts {
        let p = c.part(d);
        if !p.kind.is_diode() {
            continue;
        }
        let (Some(an), Some(kn)) = (p.net_of("a"), p.net_of("k")) else {
            continue;
        };
        let mut vrev: Option<f64> = None;
        for r in results {
            if let (Some(va), Some(vk)) = (r.v(c, an), r.v(c, kn)) {
                if r.floating.contains(&an) || r.floating.contains(&kn) {
                    continue;
                }
                vrev = Some(vrev.map_or(vk - va, |m: f64| m.max(vk - va)));
            }
        }
        match vrev {
            Some(v) => a.facts.set(
                d,
                "v_rev",
                v.max(0.0),
                Voltage,
                Some("worst DC reverse voltage over every pin state".into()),
            ),
            None => a
                .facts
                .missing(d, "v_rev", "its nets have no defined voltage in any state"),
        }
    }
}

/// Freewheel diodes: average current over the off-time and conduction
/// loss `P = vf·I_avg` (recovery loss `Qrr·V·f` where `qrr` is given).
fn diode_losses(c: &Circuit, a: &mut Analysis) {
    for (d, p) in c.parts.iter().enumerate() {
        if !p.kind.is_diode() {
            continue;
        }
        let Some(ifw) = a.facts.value(d, "i_fw") else {
            continue;
        };
        let f = a.facts.value(d, "f_pwm").unwrap_or(0.0);
        // the diode carries the load current while its switch is off;
        // with the smallest duty that is most of the period
        let duty_min = a.diode_duty_min.get(&d).copied();
        let i_avg = match duty_min {
            Some(dm) if f > 0.0 => ifw * (1.0 - dm),
            _ => ifw,
        };
        let vf = p.num("vf").unwrap_or(states::DIODE_VF);
        let v_rev = a.facts.value(d, "v_rev").unwrap_or(0.0);
        let p_rr = p.num("qrr").map(|q| q * v_rev * f).unwrap_or(0.0);
        a.facts.set(
            d,
            "i_avg",
            i_avg,
            Current,
            Some("load current over the off-time".into()),
        );
        a.facts.set(
            d,
            "p_loss",
            vf * i_avg + p_rr,
            Power,
            Some("vf·I_avg + Qrr·V·f".into()),
        );
    }
}

fn rail_shorts(c: &Circuit, a: &mut Analysis) {
    for (pid, p) in c.parts.iter().enumerate() {
        let fixed = |pin: &str| p.net_of(pin).and_then(|n| c.net(n).fixed_max());
        let how = match p.kind {
            Kind::Diode | Kind::Zener | Kind::Tvs => match (fixed("a"), fixed("k")) {
                (Some(va), Some(vk)) => {
                    let vf = p.num("vf").unwrap_or(states::DIODE_VF);
                    let vr = match p.kind {
                        Kind::Zener => p.num("vz"),
                        Kind::Tvs => p.num("v_clamp"),
                        _ => None,
                    };
                    if va - vk > vf {
                        Some(format!(
                            "forward-biased by {}",
                            crate::units::format_si(va - vk, Voltage)
                        ))
                    } else if vr.is_some_and(|vr| vk - va > vr) {
                        Some(format!(
                            "driven {} into breakdown",
                            crate::units::format_si(vk - va, Voltage)
                        ))
                    } else {
                        None
                    }
                }
                _ => None,
            },
            Kind::Inductor | Kind::Motor | Kind::Solenoid | Kind::Relay => None,
            Kind::Resistor => match (fixed("1"), fixed("2"), p.num("value")) {
                (Some(x), Some(y), Some(r)) if (x - y).abs() > 0.0 && r < 0.1 => Some(format!(
                    "{} across {}",
                    crate::units::format_si(r, Resistance),
                    crate::units::format_si((x - y).abs(), Voltage)
                )),
                _ => None,
            },
            _ => None,
        };
        if let Some(h) = how {
            a.rail_shorts.push((pid, h));
        }
    }
}

fn thermal(c: &Circuit, s: &Settings, a: &mut Analysis) {
    let ta = s.ambient;
    for (pid, p) in c.parts.iter().enumerate() {
        if !p.kind.is_switch() {
            continue;
        }
        let Some(i) = a.facts.value(pid, "i_cont") else {
            a.facts
                .missing(pid, "p_loss", "no load current through it was found");
            a.facts
                .missing(pid, "tj", "no load current through it was found");
            continue;
        };
        let info = a.switches.get(&pid).cloned().unwrap_or_default();
        let d = if info.f_pwm > 0.0 { info.duty_max } else { 1.0 };
        let f = info.f_pwm;
        let v = a.facts.value(pid, "v_peak").unwrap_or(0.0);
        let p_of: Box<dyn Fn(f64) -> f64> = match p.kind {
            Kind::Nmos | Kind::Pmos => {
                let Some(r25) = p.num("rds_on") else {
                    a.facts
                        .missing(pid, "p_loss", format!("`{}` has no `rds_on`", p.reference));
                    a.facts
                        .missing(pid, "tj", format!("`{}` has no `rds_on`", p.reference));
                    continue;
                };
                let edges = match (p.num("tr"), p.num("tf")) {
                    (Some(tr), Some(tf)) => tr + tf,
                    _ => {
                        // t ≈ Qgd / I_gate, I_gate = (V_drive - V_plateau) / R_gate
                        let qgd = p.num("qgd").or(p.num("qg").map(|q| q / 3.0)).unwrap_or(0.0);
                        let vdrive = info.v_gs_on.unwrap_or(0.0);
                        let vpl = p
                            .num("vgs_plateau")
                            .unwrap_or(p.num("vgs_th").unwrap_or(2.0) + 1.0);
                        let rg = states::MCU_R_OUT + 100.0;
                        if vdrive > vpl {
                            2.0 * qgd * rg / (vdrive - vpl)
                        } else {
                            0.0
                        }
                    }
                };
                let psw = physics::switching_loss(v, i, edges, 0.0, f, 0.5);
                Box::new(move |tj| i * i * d * physics::rds_at(r25, tj, physics::RDS_ALPHA) + psw)
            }
            _ => {
                let vsat = p.num("vce_sat").unwrap_or(0.2);
                let edges = p.num("tf").unwrap_or(0.0) * 2.0;
                let psw = physics::switching_loss(v, i, edges, 0.0, f, 0.5);
                Box::new(move |_| vsat * i * d + psw)
            }
        };
        let p0 = p_of(ta);
        let Some(rth) = p.num("rth_ja") else {
            a.facts.set(
                pid,
                "p_loss",
                p0,
                Power,
                Some(format!(
                    "at {} (no `rth_ja`)",
                    crate::units::format_si(ta, Temperature)
                )),
            );
            a.facts
                .missing(pid, "tj", format!("`{}` has no `rth_ja`", p.reference));
            continue;
        };
        let limit = p.num("tj_max").unwrap_or(150.0) + 300.0;
        match physics::junction_temperature(ta, rth, limit, &*p_of) {
            physics::Thermal::Converged { tj, p: pw } => {
                a.facts.set(
                    pid,
                    "p_loss",
                    pw,
                    Power,
                    Some(format!(
                        "at Tj {}",
                        crate::units::format_si(tj, Temperature)
                    )),
                );
                a.facts.set(
                    pid,
                    "tj",
                    tj,
                    Temperature,
                    Some(format!(
                        "ambient {} + P·Rth",
                        crate::units::format_si(ta, Temperature)
                    )),
                );
            }
            physics::Thermal::Runaway { p_at_limit } => {
                a.facts.set(
                    pid,
                    "p_loss",
                    p_at_limit,
                    Power,
                    Some("thermal runaway: no fixed point".into()),
                );
                a.facts.set(
                    pid,
                    "tj",
                    limit,
                    Temperature,
                    Some("thermal runaway: no fixed point below the limit".into()),
                );
            }
        }
    }
}

/// `facts --format json`.
pub fn facts_json(b: &crate::Built) -> serde_json::Value {
    let mut parts = serde_json::Map::new();
    let mut missing = serde_json::Map::new();
    let c = &b.circuit;
    for (i, p) in c.parts.iter().enumerate() {
        let mut m = serde_json::Map::new();
        if let Some(pf) = b.analysis.facts.parts.get(i) {
            for f in &pf.facts {
                m.insert(
                    f.name.to_string(),
                    serde_json::json!({"value": f.value, "unit": f.dim.json_unit()}),
                );
            }
            for pin in &p.pins {
                if let Some(v) = b.analysis.net_vmax.get(pin.net).copied().flatten() {
                    m.insert(
                        format!("v_max({})", pin.name),
                        serde_json::json!({"value": v, "unit": "V"}),
                    );
                }
                if let Some(v) = b.analysis.net_vmin.get(pin.net).copied().flatten() {
                    m.insert(
                        format!("v_min({})", pin.name),
                        serde_json::json!({"value": v, "unit": "V"}),
                    );
                }
            }
            if !pf.missing.is_empty() {
                let miss: serde_json::Map<String, serde_json::Value> = pf
                    .missing
                    .iter()
                    .map(|x| {
                        (
                            x.name.to_string(),
                            serde_json::Value::String(x.reason.clone()),
                        )
                    })
                    .collect();
                missing.insert(p.reference.clone(), serde_json::Value::Object(miss));
            }
        }
        parts.insert(p.reference.clone(), serde_json::Value::Object(m));
    }
    serde_json::json!({
        "file": c.file.name,
        "ambient": {"value": b.settings.ambient, "unit": "degC"},
        "derating": crate::report::json::derating(&b.settings.derating),
        "parts": parts,
        // facts that could not be computed, with the reason, per part
        "missing": missing,
    })
}

/// `facts` for people.
pub fn facts_human(b: &crate::Built) -> String {
    use std::fmt::Write;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "{} (ambient {})",
        b.circuit.file.name,
        crate::units::format_si(b.settings.ambient, Temperature)
    );
    for (i, p) in b.circuit.parts.iter().enumerate() {
        let Some(pf) = b.analysis.facts.parts.get(i) else {
            continue;
        };
        if pf.facts.is_empty() && pf.missing.is_empty() {
            continue;
        }
        let _ = writeln!(
            s,
            "\n{} ({}, {})",
            p.reference,
            p.kind.name(),
            p.part_label()
        );
        for f in &pf.facts {
            let _ = write!(
                s,
                "  {:<10} {:>10}",
                f.name,
                crate::units::format_si(f.value, f.dim)
            );
            if let Some(n) = &f.note {
                let _ = write!(s, "   {n}");
            }
            let _ = writeln!(s);
        }
        for m in &pf.missing {
            let _ = writeln!(s, "  {:<10} {:>10}   {}", m.name, "—", m.reason);
        }
    }
    s
}

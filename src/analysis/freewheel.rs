//! Where the inductive current goes when a switch opens.
//!
//! The off-state conduction graph is directed: a diode conducts anode to
//! cathode at its forward drop, a Zener or TVS also cathode to anode at
//! its breakdown, a resistor either way at `I·R`, a capacitor either way
//! at the ring-up `I·sqrt(L/C)`, an off MOSFET through its body diode, a
//! switch that stays on either way at `I·R_DS(on)`. The current may also
//! pass once through the supply, from one fixed net to another, at their
//! potential difference (positive: the supply absorbs the energy).
//!
//! The freewheel path is the loop of least opposing voltage from the
//! terminal the current leaves to the terminal it enters. A loop whose
//! total is not positive would let the current grow, so it is no
//! freewheel path at all (a diode across the switch, for example).

use super::TurnOff;
use super::physics;
use super::states::{self, Group, StateResult};
use crate::fasthash::FastMap as HashMap;
use crate::model::{Circuit, Kind, NetId, PartId};
use crate::settings::Settings;
use std::cmp::Ordering;
use std::collections::BinaryHeap;

/// Output capacitance assumed when `coss` is not given: 100 pF [memory].
pub const DEFAULT_COSS: f64 = 100e-12;

/// The smallest loop voltage taken as a real freewheel path (V).
pub const MIN_LOOP: f64 = 0.05;

#[derive(Clone, Debug)]
pub struct Path {
    /// Parts on the path, in the order the current flows.
    pub parts: Vec<PartId>,
    /// Total voltage opposing the current around the loop.
    pub v_loop: f64,
    /// Voltage across the clamp elements (the loop less the supply's part).
    pub v_elem: f64,
    /// The supply crossing, if any: (from net, to net, its voltage).
    pub via_supply: Option<(NetId, NetId, f64)>,
    pub t_decay: f64,
    pub energy: f64,
}

impl Path {
    pub fn describe(&self, c: &Circuit) -> String {
        let mut names: Vec<String> = self
            .parts
            .iter()
            .map(|&p| format!("`{}`", c.part(p).reference))
            .collect();
        if let Some((x, y, _)) = self.via_supply {
            names.push(format!(
                "the supply `{}`→`{}`",
                c.net(x).name,
                c.net(y).name
            ));
        }
        format!("through {}", names.join(", "))
    }
}

#[derive(Clone, Copy)]
struct Edge {
    to: NetId,
    drop: f64,
    part: PartId,
}

#[derive(PartialEq)]
struct Item(f64, NetId);
impl Eq for Item {}
impl PartialOrd for Item {
    fn partial_cmp(&self, o: &Self) -> Option<Ordering> {
        Some(self.cmp(o))
    }
}
impl Ord for Item {
    fn cmp(&self, o: &Self) -> Ordering {
        o.0.partial_cmp(&self.0)
            .unwrap_or(Ordering::Equal)
            .then(o.1.cmp(&self.1))
    }
}

/// A crossing of the supply: (from net, to net, its voltage).
type Hop = (NetId, NetId, f64);

type Dist = HashMap<NetId, (f64, Option<(NetId, PartId)>)>;

fn dijkstra(adj: &HashMap<NetId, Vec<Edge>>, from: NetId) -> Dist {
    let mut dist: Dist = HashMap::default();
    let mut heap = BinaryHeap::new();
    dist.insert(from, (0.0, None));
    heap.push(Item(0.0, from));
    while let Some(Item(d, n)) = heap.pop() {
        if dist.get(&n).is_some_and(|(x, _)| d > *x) {
            continue;
        }
        for e in adj.get(&n).map(|v| v.as_slice()).unwrap_or(&[]) {
            let nd = d + e.drop;
            if dist.get(&e.to).is_none_or(|(x, _)| nd < *x - 1e-12) {
                dist.insert(e.to, (nd, Some((n, e.part))));
                heap.push(Item(nd, e.to));
            }
        }
    }
    dist
}

fn walk(dist: &Dist, mut n: NetId) -> Vec<PartId> {
    let mut parts = Vec::new();
    let mut guard = 0;
    while let Some((_, Some((prev, part)))) = dist.get(&n) {
        parts.push(*part);
        n = *prev;
        guard += 1;
        if guard > 10_000 {
            break;
        }
    }
    parts
}

/// Analyse the opening of `switch` under `load`, from the state `st` in
/// which the load carries its largest current.
#[allow(clippy::too_many_arguments)]
pub fn turn_off(
    c: &Circuit,
    _s: &Settings,
    grp: &Group,
    st: &StateResult,
    load: PartId,
    switch: PartId,
    off: &[PartId],
    i0: f64,
) -> TurnOff {
    let lp = c.part(load);
    let l = lp.num("l").unwrap_or(0.0);
    let r = lp.num("r").unwrap_or(0.0);
    let (np, nm) = (lp.net_of("+").unwrap_or(0), lp.net_of("-").unwrap_or(0));
    let il = st.current.get(&load).copied().unwrap_or(0.0);
    // the current leaves the load at `-` when it flows + → -
    let (leave, enter) = if il >= 0.0 { (nm, np) } else { (np, nm) };
    // forward and reverse adjacency
    let mut fwd: HashMap<NetId, Vec<Edge>> = HashMap::default();
    let mut rev: HashMap<NetId, Vec<Edge>> = HashMap::default();
    let mut add = |a: NetId, b: NetId, drop: f64, part: PartId| {
        if a == b || !drop.is_finite() {
            return;
        }
        let drop = drop.max(0.0);
        fwd.entry(a).or_default().push(Edge { to: b, drop, part });
        rev.entry(b).or_default().push(Edge { to: a, drop, part });
    };
    for &pid in &grp.parts {
        if pid == load {
            continue;
        }
        let p = c.part(pid);
        let n = |x: &str| p.net_of(x);
        match p.kind {
            Kind::Diode => {
                if let (Some(a), Some(k)) = (n("a"), n("k")) {
                    add(a, k, p.num("vf").unwrap_or(states::DIODE_VF), pid);
                }
            }
            Kind::Zener => {
                if let (Some(a), Some(k)) = (n("a"), n("k")) {
                    add(a, k, p.num("vf").unwrap_or(states::DIODE_VF), pid);
                    if let Some(vz) = p.num("vz") {
                        add(k, a, vz, pid);
                    }
                }
            }
            Kind::Tvs => {
                if let (Some(a), Some(k)) = (n("a"), n("k"))
                    && let Some(vc) = p.num("v_clamp").or(p.num("vz"))
                {
                    add(a, k, vc, pid);
                    add(k, a, vc, pid);
                }
            }
            Kind::Resistor => {
                if let (Some(a), Some(b), Some(v)) = (n("1"), n("2"), p.num("value")) {
                    add(a, b, i0 * v, pid);
                    add(b, a, i0 * v, pid);
                }
            }
            Kind::Capacitor => {
                if let (Some(a), Some(b), Some(cv)) = (n("1"), n("2"), p.num("value"))
                    && cv > 0.0
                    && l > 0.0
                {
                    let v = physics::open_circuit_peak(l, cv, i0);
                    add(a, b, v, pid);
                    add(b, a, v, pid);
                }
            }
            Kind::Nmos | Kind::Pmos => {
                if let (Some(d), Some(s)) = (n("d"), n("s")) {
                    let on = pid != switch
                        && !off.contains(&pid)
                        && st.switch_on.get(&pid).copied().unwrap_or(false);
                    if on {
                        let v = i0 * states::rds_on(c, pid);
                        add(d, s, v, pid);
                        add(s, d, v, pid);
                    } else {
                        let vf = p.num("body_vf").unwrap_or(states::BODY_VF);
                        if p.kind == Kind::Nmos {
                            add(s, d, vf, pid);
                        } else {
                            add(d, s, vf, pid);
                        }
                    }
                }
            }
            Kind::Npn | Kind::Pnp => {
                if let (Some(cn), Some(e)) = (n("c"), n("e"))
                    && pid != switch
                    && !off.contains(&pid)
                    && st.switch_on.get(&pid).copied().unwrap_or(false)
                {
                    let v = p.num("vce_sat").unwrap_or(0.2);
                    if p.kind == Kind::Npn {
                        add(cn, e, v, pid);
                    } else {
                        add(e, cn, v, pid);
                    }
                }
            }
            _ => {}
        }
    }
    let d1 = dijkstra(&fwd, leave);
    let d2 = dijkstra(&rev, enter);
    let fixed = &c.fixed_nets;
    // candidates: (loop, hop)
    let mut best: Option<(f64, Option<Hop>)> = None;
    let mut consider = |v: f64, hop: Option<(NetId, NetId, f64)>| {
        if v > MIN_LOOP && best.as_ref().is_none_or(|(b, _)| v < *b - 1e-9) {
            best = Some((v, hop));
        }
    };
    if let Some((d, _)) = d1.get(&enter) {
        consider(*d, None);
    }
    for &(x, vx) in fixed {
        let Some((dx, _)) = d1.get(&x) else { continue };
        for &(y, vy) in fixed {
            if x == y {
                continue;
            }
            let Some((dy, _)) = d2.get(&y) else { continue };
            consider(dx + (vx - vy) + dy, Some((x, y, vx - vy)));
        }
    }
    let on_v = |net: NetId| -> f64 { st.v(c, net).unwrap_or(0.0) };
    // nets off the path settle where the off state puts them (a source
    // resistor carries no current once the switch is open)
    let mut forced: Vec<PartId> = off.to_vec();
    forced.push(switch);
    let off_st = std::cell::OnceCell::new();
    let off_v = |net: NetId| -> f64 {
        off_st
            .get_or_init(|| states::solve_state_forced(c, grp, &st.assignment, &forced))
            .v(c, net)
            .unwrap_or_else(|| on_v(net))
    };
    let sp = c.part(switch);
    let (main_pin, _, ref_pin) = sp.kind.switch_pins().unwrap_or(("d", "g", "s"));
    let (sm, sr) = (
        sp.net_of(main_pin).unwrap_or(0),
        sp.net_of(ref_pin).unwrap_or(0),
    );
    let rail = [np, nm].into_iter().find(|&n| c.net(n).is_fixed());
    match best {
        Some((v_loop, hop)) => {
            let (parts, v_leave, v_enter) = match hop {
                Some((x, y, _)) => {
                    let mut p1 = walk(&d1, x);
                    p1.reverse();
                    let p2 = walk(&d2, y);
                    let vx = c.net(x).fixed_max().unwrap_or(0.0);
                    let vy = c.net(y).fixed_max().unwrap_or(0.0);
                    let v_leave = vx + d1.get(&x).map(|d| d.0).unwrap_or(0.0);
                    let v_enter = vy - d2.get(&y).map(|d| d.0).unwrap_or(0.0);
                    (
                        p1.into_iter().chain(p2).collect::<Vec<_>>(),
                        v_leave,
                        v_enter,
                    )
                }
                None => {
                    let mut p1 = walk(&d1, enter);
                    p1.reverse();
                    // anchor the potentials at a fixed net on the path
                    let mut anchor = None;
                    let mut n = enter;
                    let mut guard = 0;
                    loop {
                        if let Some(v) = c.net(n).fixed_max() {
                            anchor = Some(v + d1.get(&n).map(|d| d.0).unwrap_or(0.0));
                            break;
                        }
                        match d1.get(&n) {
                            Some((_, Some((prev, _)))) if guard < 10_000 => {
                                n = *prev;
                                guard += 1;
                            }
                            _ => break,
                        }
                    }
                    let (vl, ve) = match anchor {
                        Some(vl) => (vl, vl - v_loop),
                        None => {
                            let ve = on_v(enter);
                            (ve + v_loop, ve)
                        }
                    };
                    (p1, vl, ve)
                }
            };
            let pot = |n: NetId| -> f64 {
                if n == leave {
                    v_leave
                } else if n == enter {
                    v_enter
                } else {
                    c.net(n).fixed_max().unwrap_or_else(|| off_v(n))
                }
            };
            let v_peak = (pot(sm) - pot(sr)).abs();
            let v_elem = v_loop - hop.map(|h| h.2).unwrap_or(0.0);
            let path = Path {
                t_decay: physics::decay_time(l, r, i0, v_loop),
                energy: physics::clamp_energy(l, r, i0, v_loop, v_elem.max(0.0)),
                parts,
                v_loop,
                v_elem,
                via_supply: hop,
            };
            let note = format!(
                "turn-off of {} A, clamp {} V {}",
                crate::units::sig3(i0),
                crate::units::sig3(v_loop),
                path.describe(c)
            );
            TurnOff {
                load,
                switch,
                i0,
                path: Some(path),
                v_peak,
                v_peak_note: note,
                rail,
                also_off: off.to_vec(),
                others_on: others_on(grp, st, switch, off),
            }
        }
        None => {
            let coss = sp.num("coss").unwrap_or(DEFAULT_COSS);
            let v = physics::open_circuit_peak(l, coss, i0);
            TurnOff {
                load,
                switch,
                i0,
                path: None,
                v_peak: v,
                v_peak_note: format!(
                    "no freewheel path: I·sqrt(L/C) with C = {}{}",
                    crate::units::format_si(coss, crate::units::Dimension::Capacitance),
                    if sp.num("coss").is_none() {
                        " (default [memory])"
                    } else {
                        ""
                    }
                ),
                rail,
                also_off: off.to_vec(),
                others_on: others_on(grp, st, switch, off),
            }
        }
    }
}

fn others_on(grp: &Group, st: &StateResult, switch: PartId, off: &[PartId]) -> Vec<PartId> {
    grp.parts
        .iter()
        .copied()
        .filter(|&q| {
            q != switch && !off.contains(&q) && st.switch_on.get(&q).copied().unwrap_or(false)
        })
        .collect()
}

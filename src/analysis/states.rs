//! Switching states: every controller pin high, low and (during reset)
//! high-impedance; every switch on or off as its gate dictates. Each
//! control group (islands linked through gates and drivers) is solved
//! over every allowed pin assignment, to a consistent state of its
//! piecewise devices (switches, diodes, driver outputs).

use super::solve::Network;
use crate::fasthash::{FastMap as HashMap, FastSet as HashSet};
use crate::graph::CircuitGraph;
use crate::model::{Circuit, Kind, NetId, NetKind, PartId};

#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum PinState {
    High,
    Low,
    HiZ,
}

/// Output resistance of a controller pin when none is given: 25 Ω [memory].
pub const MCU_R_OUT: f64 = 25.0;
/// Output resistance of a gate driver: 2 Ω [memory].
pub const DRIVER_R_OUT: f64 = 2.0;
/// Driver input threshold: 1.5 V [memory: typical logic-level input].
pub const DRIVER_IN_TH: f64 = 1.5;
/// Body diode forward voltage when none is given: 0.8 V [memory].
pub const BODY_VF: f64 = 0.8;
/// Diode forward voltage when none is given: 0.7 V (silicon, common practice).
pub const DIODE_VF: f64 = 0.7;
/// On-resistance of a conducting diode in the piecewise model (Ω).
pub const DIODE_R_ON: f64 = 0.01;
/// The most controller pins a group is enumerated over (2^n states).
pub const MAX_GROUP_PINS: usize = 10;

/// A controller pin: (mcu part, pin name).
pub type CtlPin = (PartId, String);

pub fn is_supply_pin(name: &str) -> bool {
    let n = name.to_ascii_uppercase();
    n.starts_with("VDD")
        || n.starts_with("VCC")
        || n.starts_with("VSS")
        || n.starts_with("GND")
        || n.starts_with("VIO")
        || n == "AVDD"
        || n == "AVSS"
        || n == "VBAT"
        || n == "VIN"
        || n == "V+"
        || n == "V-"
}

pub struct Group {
    pub islands: Vec<usize>,
    pub nets: Vec<NetId>,
    pub parts: Vec<PartId>,
    pub pins: Vec<CtlPin>,
}

/// A solved state of a group.
#[derive(Clone, Debug)]
pub struct StateResult {
    pub assignment: Vec<PinState>,
    pub volts: HashMap<NetId, f64>,
    pub floating: HashSet<NetId>,
    pub switch_on: HashMap<PartId, bool>,
    pub diode_on: HashMap<PartId, bool>,
    /// Current through two-terminal parts and switches, from their first
    /// pin to their second (`+`→`-`, `a`→`k`, `d`→`s`, `c`→`e`).
    pub current: HashMap<PartId, f64>,
    /// Current sourced by each controller pin (A, out of the pin).
    pub pin_current: HashMap<usize, f64>,
    pub converged: bool,
}

impl StateResult {
    pub fn v(&self, c: &Circuit, net: NetId) -> Option<f64> {
        c.nets
            .get(net)
            .and_then(|n| n.fixed_max())
            .or_else(|| self.volts.get(&net).copied())
    }
    pub fn is_reset(&self) -> bool {
        self.assignment.iter().all(|s| *s == PinState::HiZ)
    }
}

/// Build the control groups: islands joined through switch gates (a gate
/// island and the island it switches) and drivers (input and output).
pub fn groups(c: &Circuit, g: &CircuitGraph) -> Vec<Group> {
    let n = g.islands.len();
    let mut uf = petgraph::unionfind::UnionFind::<usize>::new(n.max(1));
    let isl = |net: Option<NetId>| net.and_then(|x| g.island_of.get(x).copied().flatten());
    for p in &c.parts {
        let links: Vec<(Option<NetId>, Option<NetId>)> = match p.kind {
            Kind::Nmos | Kind::Pmos => vec![
                (p.net_of("g"), p.net_of("d")),
                (p.net_of("g"), p.net_of("s")),
                (p.net_of("d"), p.net_of("s")),
            ],
            Kind::Npn | Kind::Pnp => vec![
                (p.net_of("b"), p.net_of("c")),
                (p.net_of("b"), p.net_of("e")),
            ],
            Kind::Driver => vec![
                (p.net_of("in"), p.net_of("out")),
                (p.net_of("inb"), p.net_of("outb")),
                (p.net_of("in"), p.net_of("inb")),
            ],
            _ => vec![],
        };
        for (a, b) in links {
            if let (Some(a), Some(b)) = (isl(a), isl(b)) {
                uf.union(a, b);
            }
        }
    }
    let mut by_root: HashMap<usize, usize> = HashMap::default();
    by_root.reserve(n);
    let mut out: Vec<Group> = Vec::with_capacity(n);
    for i in 0..n {
        let r = uf.find(i);
        let gi = *by_root.entry(r).or_insert_with(|| {
            out.push(Group {
                islands: Vec::new(),
                nets: Vec::new(),
                parts: Vec::new(),
                pins: Vec::new(),
            });
            out.len() - 1
        });
        out[gi].islands.push(i);
        out[gi].nets.extend(g.islands[i].iter().copied());
    }
    for grp in &mut out {
        let mut seen = HashSet::default();
        for &net in &grp.nets {
            for pid in g.parts_on(net) {
                if seen.insert(pid) {
                    grp.parts.push(pid);
                }
            }
        }
        grp.parts.sort_unstable();
        let mut pins = Vec::new();
        for &pid in &grp.parts {
            let p = c.part(pid);
            if p.kind != Kind::Mcu {
                continue;
            }
            for pin in &p.pins {
                if is_supply_pin(&pin.name) || c.net(pin.net).is_fixed() {
                    continue;
                }
                if grp.nets.contains(&pin.net) {
                    pins.push((pid, pin.name.to_string()));
                }
            }
        }
        pins.sort();
        pins.dedup();
        grp.pins = pins;
    }
    out
}

/// Every assignment of a group's pins: all high-impedance (reset), then
/// every high/low combination allowed by `complement` declarations.
pub fn assignments(c: &Circuit, pins: &[CtlPin]) -> Vec<Vec<PinState>> {
    let mut out = vec![vec![PinState::HiZ; pins.len()]];
    let k = pins.len().min(MAX_GROUP_PINS);
    // complement constraints: index pairs
    let mut pairs = Vec::new();
    for (a, p) in pins.iter().enumerate() {
        if let Some(o) = c.complement_of(p.0, &p.1)
            && let Some(b) = pins.iter().position(|x| x == o)
            && a < b
        {
            pairs.push((a, b));
        }
    }
    for mask in 0u32..(1u32 << k) {
        let mut a: Vec<PinState> = (0..pins.len())
            .map(|i| {
                if i < k && mask & (1 << i) != 0 {
                    PinState::High
                } else {
                    PinState::Low
                }
            })
            .collect();
        if pairs.iter().any(|&(x, y)| a[x] == a[y]) {
            continue;
        }
        if pins.len() > k {
            for s in a.iter_mut().skip(k) {
                *s = PinState::Low;
            }
        }
        out.push(a);
    }
    out
}

fn load_r(c: &Circuit, pid: PartId) -> Option<f64> {
    let p = c.part(pid);
    let r = match p.kind {
        Kind::Inductor => p.num("r").unwrap_or(1e-3),
        _ => p.num("r")?,
    };
    let tol = p.num("r_tol").unwrap_or(0.0).clamp(0.0, 0.99);
    Some((r * (1.0 - tol)).max(1e-6))
}

/// On-resistance of a MOSFET at 25 °C when conducting: `rds_on`, else a
/// small value so that the state still solves (the fact is noted missing).
pub fn rds_on(c: &Circuit, pid: PartId) -> f64 {
    c.part(pid).num("rds_on").unwrap_or(0.01).max(1e-6)
}

/// Output level of a controller pin: `io_v`, else its supply pin's rail.
pub fn io_v(c: &Circuit, mcu: PartId) -> f64 {
    let p = c.part(mcu);
    if let Some(v) = p.num("io_v") {
        return v;
    }
    for pin in &p.pins {
        let n = pin.name.to_ascii_uppercase();
        if (n.starts_with("VDD") || n.starts_with("VCC") || n.starts_with("VIO"))
            && let NetKind::Rail(r) = c.net(pin.net).kind
        {
            return r.nominal;
        }
    }
    0.0
}

/// Gate-source (base-emitter) voltage of a switch in a state, with the
/// source taken where it sits when the switch conducts.
pub fn vgs(c: &Circuit, pid: PartId, st: &StateResult) -> Option<f64> {
    let p = c.part(pid);
    let (main, ctl, reference) = p.kind.switch_pins()?;
    let vg = st.v(c, p.net_of(ctl)?)?;
    let s_net = p.net_of(reference)?;
    let vs = match c.net(s_net).fixed_max() {
        Some(v) => v,
        None => match p.net_of(main).and_then(|d| c.net(d).fixed_max()) {
            // high side: the source follows the drain when conducting
            Some(vd) => vd,
            None => st.v(c, s_net).unwrap_or(0.0),
        },
    };
    Some(vg - vs)
}

fn threshold(c: &Circuit, pid: PartId) -> f64 {
    let p = c.part(pid);
    match p.kind {
        Kind::Nmos | Kind::Pmos => p.num("vgs_th").unwrap_or(2.0),
        _ => p.num("vbe_on").unwrap_or(0.7) * 0.9,
    }
}

/// Solve a group in one pin assignment.
pub fn solve_state(
    c: &Circuit,
    grp: &Group,
    assign: &[PinState],
    force_off: Option<PartId>,
) -> StateResult {
    let v: Vec<PartId> = force_off.into_iter().collect();
    solve_state_forced(c, grp, assign, &v)
}

/// Solve a group with some switches held off whatever their gates say.
pub fn solve_state_forced(
    c: &Circuit,
    grp: &Group,
    assign: &[PinState],
    force_off: &[PartId],
) -> StateResult {
    let fixed = &c.fixed_nets;
    let mut switch_on: HashMap<PartId, bool> = HashMap::default();
    let mut diode_on: HashMap<PartId, bool> = HashMap::default();
    let mut drv_high: HashMap<(PartId, bool), bool> = HashMap::default();
    let pin_state: HashMap<(PartId, &str), PinState> = grp
        .pins
        .iter()
        .zip(assign.iter())
        .map(|((p, n), s)| ((*p, n.as_str()), *s))
        .collect();
    let mut last = None;
    let mut converged = false;
    for _ in 0..60 {
        let mut net = Network::new(&grp.nets, fixed.iter().copied());
        stamp(
            c, grp, &mut net, &pin_state, &switch_on, &diode_on, &drv_high,
        );
        let x = net.solve().unwrap_or_else(|| vec![0.0; grp.nets.len()]);
        let floating = net.floating();
        let mut volts = HashMap::with_capacity_and_hasher(grp.nets.len(), Default::default());
        let mut fl = HashSet::default();
        for (i, &id) in grp.nets.iter().enumerate() {
            let v = x.get(i).copied().unwrap_or(0.0);
            volts.insert(id, v);
            if floating.get(i).copied().unwrap_or(false) {
                fl.insert(id);
            }
        }
        let mut st = StateResult {
            assignment: assign.to_vec(),
            volts,
            floating: fl,
            switch_on: switch_on.clone(),
            diode_on: diode_on.clone(),
            current: HashMap::default(),
            pin_current: HashMap::default(),
            converged: false,
        };
        // update piecewise states
        let mut changed = false;
        for &pid in &grp.parts {
            let p = c.part(pid);
            if p.kind.is_switch() {
                let on = if force_off.contains(&pid) {
                    false
                } else {
                    let ctl_net = p.kind.switch_pins().and_then(|(_, ctl, _)| p.net_of(ctl));
                    let floating = ctl_net.is_some_and(|n| st.floating.contains(&n));
                    match vgs(c, pid, &st) {
                        Some(v) if !floating => {
                            let v = if p.kind.is_p_type() { -v } else { v };
                            v >= threshold(c, pid)
                        }
                        _ => false,
                    }
                };
                if switch_on.get(&pid).copied().unwrap_or(false) != on {
                    changed = true;
                }
                switch_on.insert(pid, on);
            }
            for (key, a, k, vf_f, vr_f) in diode_like(c, pid) {
                let (Some(va), Some(vk)) = (st.v(c, a), st.v(c, k)) else {
                    continue;
                };
                let was = diode_on.get(&key).copied().unwrap_or(false);
                let fwd = va - vk;
                let on_f = if was {
                    fwd > vf_f - 1e-9
                } else {
                    fwd > vf_f + 1e-6
                };
                let was_r = diode_on.get(&(key + REV)).copied().unwrap_or(false);
                let on_r = vr_f.is_some_and(|vr| {
                    if was_r {
                        -fwd > vr - 1e-9
                    } else {
                        -fwd > vr + 1e-6
                    }
                });
                if was != on_f || was_r != on_r {
                    changed = true;
                }
                diode_on.insert(key, on_f);
                diode_on.insert(key + REV, on_r);
            }
            if p.kind == Kind::Driver {
                for (inp, b) in [("in", false), ("inb", true)] {
                    let hi = p
                        .net_of(inp)
                        .and_then(|n| st.v(c, n))
                        .is_some_and(|v| v > DRIVER_IN_TH)
                        && !p.net_of(inp).is_some_and(|n| st.floating.contains(&n));
                    if drv_high.get(&(pid, b)).copied().unwrap_or(false) != hi {
                        changed = true;
                    }
                    drv_high.insert((pid, b), hi);
                }
            }
        }
        st.switch_on = switch_on.clone();
        st.diode_on = diode_on.clone();
        last = Some(st);
        if !changed {
            converged = true;
            break;
        }
    }
    let mut st = last.unwrap_or(StateResult {
        assignment: assign.to_vec(),
        volts: HashMap::default(),
        floating: HashSet::default(),
        switch_on,
        diode_on,
        current: HashMap::default(),
        pin_current: HashMap::default(),
        converged: false,
    });
    st.converged = converged;
    currents(c, grp, &pin_state, &mut st);
    st
}

/// Diode-like elements of a part: (state key, anode net, cathode net,
/// forward voltage, reverse breakdown). Body diodes use the part id + a
/// large offset as their key.
fn diode_like(c: &Circuit, pid: PartId) -> Vec<(usize, NetId, NetId, f64, Option<f64>)> {
    let p = c.part(pid);
    let mut v = Vec::new();
    match p.kind {
        Kind::Diode => {
            if let (Some(a), Some(k)) = (p.net_of("a"), p.net_of("k")) {
                v.push((pid, a, k, p.num("vf").unwrap_or(DIODE_VF), None));
            }
        }
        Kind::Zener => {
            if let (Some(a), Some(k)) = (p.net_of("a"), p.net_of("k")) {
                v.push((pid, a, k, p.num("vf").unwrap_or(DIODE_VF), p.num("vz")));
            }
        }
        Kind::Tvs => {
            if let (Some(a), Some(k)) = (p.net_of("a"), p.net_of("k")) {
                let vc = p.num("v_clamp").or(p.num("vz"));
                v.push((pid, a, k, vc.unwrap_or(DIODE_VF), vc));
            }
        }
        Kind::Nmos => {
            if let (Some(d), Some(s)) = (p.net_of("d"), p.net_of("s")) {
                v.push((pid + BODY, s, d, p.num("body_vf").unwrap_or(BODY_VF), None));
            }
        }
        Kind::Pmos => {
            if let (Some(d), Some(s)) = (p.net_of("d"), p.net_of("s")) {
                v.push((pid + BODY, d, s, p.num("body_vf").unwrap_or(BODY_VF), None));
            }
        }
        Kind::Npn => {
            if let (Some(b), Some(e)) = (p.net_of("b"), p.net_of("e")) {
                v.push((pid + BASE, b, e, p.num("vbe_on").unwrap_or(0.7), None));
            }
        }
        Kind::Pnp => {
            if let (Some(b), Some(e)) = (p.net_of("b"), p.net_of("e")) {
                v.push((pid + BASE, e, b, p.num("vbe_on").unwrap_or(0.7), None));
            }
        }
        _ => {}
    }
    v
}

/// Key offsets for the body diode and base junction of a switch.
pub const BODY: usize = 1 << 40;
pub const BASE: usize = 1 << 41;
/// Key offset for reverse (breakdown) conduction.
pub const REV: usize = 1 << 42;

#[allow(clippy::too_many_arguments)]
fn stamp(
    c: &Circuit,
    grp: &Group,
    net: &mut Network,
    pins: &HashMap<(PartId, &str), PinState>,
    switch_on: &HashMap<PartId, bool>,
    diode_on: &HashMap<usize, bool>,
    drv_high: &HashMap<(PartId, bool), bool>,
) {
    for &pid in &grp.parts {
        let p = c.part(pid);
        let n2 = |a: &str, b: &str| Some((p.net_of(a)?, p.net_of(b)?));
        match p.kind {
            Kind::Resistor => {
                if let (Some((a, b)), Some(r)) = (n2("1", "2"), p.num("value")) {
                    net.conductance(a, b, 1.0 / r.max(1e-6));
                }
            }
            Kind::Motor | Kind::Solenoid | Kind::Relay | Kind::Inductor => {
                let (x, y) = if p.kind == Kind::Inductor {
                    ("1", "2")
                } else {
                    ("+", "-")
                };
                if let (Some((a, b)), Some(r)) = (n2(x, y), load_r(c, pid)) {
                    net.conductance(a, b, 1.0 / r);
                }
            }
            Kind::Nmos | Kind::Pmos => {
                if switch_on.get(&pid).copied().unwrap_or(false)
                    && let Some((d, s)) = n2("d", "s")
                {
                    net.conductance(d, s, 1.0 / rds_on(c, pid));
                }
            }
            Kind::Npn | Kind::Pnp => {
                if switch_on.get(&pid).copied().unwrap_or(false)
                    && let Some((col, e)) = n2("c", "e")
                {
                    let vsat = p.num("vce_sat").unwrap_or(0.2);
                    if p.kind == Kind::Npn {
                        net.source(col, e, vsat, 0.05);
                    } else {
                        net.source(e, col, vsat, 0.05);
                    }
                }
            }
            Kind::Mcu => {
                let r_out = p.num("r_out").unwrap_or(MCU_R_OUT);
                for pin in &p.pins {
                    match pins.get(&(pid, &*pin.name)) {
                        Some(PinState::High) => net.source_to_ref(pin.net, io_v(c, pid), r_out),
                        Some(PinState::Low) => net.source_to_ref(pin.net, 0.0, r_out),
                        _ => {}
                    }
                }
            }
            Kind::Driver => {
                let vdd = p
                    .net_of("vdd")
                    .and_then(|n| c.net(n).fixed_max())
                    .unwrap_or(0.0);
                let gnd = p
                    .net_of("gnd")
                    .and_then(|n| c.net(n).fixed_max())
                    .unwrap_or(0.0);
                let r_out = p.num("r_out").unwrap_or(DRIVER_R_OUT);
                for (out, b) in [("out", false), ("outb", true)] {
                    if let Some(o) = p.net_of(out) {
                        let hi = drv_high.get(&(pid, b)).copied().unwrap_or(false);
                        net.source_to_ref(o, if hi { vdd } else { gnd }, r_out);
                    }
                }
            }
            _ => {}
        }
        for (key, a, k, vf, vr) in diode_like(c, pid) {
            if diode_on.get(&key).copied().unwrap_or(false) {
                net.source(a, k, vf, DIODE_R_ON);
            }
            if let Some(vr) = vr
                && diode_on.get(&(key + REV)).copied().unwrap_or(false)
            {
                net.source(k, a, vr, DIODE_R_ON);
            }
        }
    }
}

fn currents(
    c: &Circuit,
    grp: &Group,
    pins: &HashMap<(PartId, &str), PinState>,
    st: &mut StateResult,
) {
    let mut base_currents = Vec::new();
    for &pid in &grp.parts {
        let p = c.part(pid);
        let v = |name: &str| p.net_of(name).and_then(|n| st.v(c, n));
        let i = match p.kind {
            Kind::Resistor => match (v("1"), v("2"), p.num("value")) {
                (Some(a), Some(b), Some(r)) => Some((a - b) / r.max(1e-6)),
                _ => None,
            },
            Kind::Motor | Kind::Solenoid | Kind::Relay | Kind::Inductor => {
                let (x, y) = if p.kind == Kind::Inductor {
                    ("1", "2")
                } else {
                    ("+", "-")
                };
                match (v(x), v(y), load_r(c, pid)) {
                    (Some(a), Some(b), Some(r)) => Some((a - b) / r),
                    _ => None,
                }
            }
            Kind::Nmos | Kind::Pmos => {
                let mut i = 0.0;
                if let (Some(d), Some(s)) = (v("d"), v("s")) {
                    if st.switch_on.get(&pid).copied().unwrap_or(false) {
                        i += (d - s) / rds_on(c, pid);
                    }
                    if st.diode_on.get(&(pid + BODY)).copied().unwrap_or(false) {
                        let vf = p.num("body_vf").unwrap_or(BODY_VF);
                        if p.kind == Kind::Nmos {
                            i -= ((s - d) - vf) / DIODE_R_ON;
                        } else {
                            i += ((d - s) - vf) / DIODE_R_ON;
                        }
                    }
                }
                Some(i)
            }
            Kind::Npn | Kind::Pnp => {
                if let (Some(b), Some(e)) = (v("b"), v("e"))
                    && st.diode_on.get(&(pid + BASE)).copied().unwrap_or(false)
                {
                    let vbe = p.num("vbe_on").unwrap_or(0.7);
                    let ib = if p.kind == Kind::Npn {
                        (b - e) - vbe
                    } else {
                        (e - b) - vbe
                    } / DIODE_R_ON;
                    base_currents.push((pid + BASE, ib.max(0.0)));
                }
                match (v("c"), v("e")) {
                    (Some(cv), Some(e)) if st.switch_on.get(&pid).copied().unwrap_or(false) => {
                        let vsat = p.num("vce_sat").unwrap_or(0.2);
                        Some(if p.kind == Kind::Npn {
                            ((cv - e) - vsat) / 0.05
                        } else {
                            -(((e - cv) - vsat) / 0.05)
                        })
                    }
                    _ => Some(0.0),
                }
            }
            Kind::Diode | Kind::Zener | Kind::Tvs => match (v("a"), v("k")) {
                (Some(a), Some(k)) => {
                    let mut i = 0.0;
                    for (key, _, _, vf, vr) in diode_like(c, pid) {
                        if st.diode_on.get(&key).copied().unwrap_or(false) {
                            i += ((a - k) - vf) / DIODE_R_ON;
                        }
                        if let Some(vr) = vr
                            && st.diode_on.get(&(key + REV)).copied().unwrap_or(false)
                        {
                            i -= ((k - a) - vr) / DIODE_R_ON;
                        }
                    }
                    Some(i)
                }
                _ => Some(0.0),
            },
            Kind::Mcu => {
                let r_out = p.num("r_out").unwrap_or(MCU_R_OUT);
                for (idx, pin) in p.pins.iter().enumerate() {
                    let src = match pins.get(&(pid, &*pin.name)) {
                        Some(PinState::High) => io_v(c, pid),
                        Some(PinState::Low) => 0.0,
                        _ => continue,
                    };
                    if let Some(vn) = st.v(c, pin.net) {
                        st.pin_current
                            .insert(pid * 64 + idx.min(63), (src - vn) / r_out);
                    }
                }
                None
            }
            _ => None,
        };
        if let Some(i) = i {
            st.current.insert(pid, i);
        }
    }
    st.current.extend(base_currents);
}

//! What the HTML report draws for a finding, taken from the analysis while
//! it is still in memory: the sub-circuit around the parts the finding
//! names, the simulated edges of its switches and the facts of its parts.
//! A scene owns plain data (names, values, samples) so that the analysis
//! can be dropped once the file is checked.

use crate::Built;
use crate::analysis::EdgeKind;
use crate::analysis::op::Mode;
use crate::finding::Finding;
use crate::model::{Circuit, Kind, NetKind, PartId};
use crate::units::{Dimension, format_si};
use std::collections::HashMap;

/// Findings drawn per file at most (the rest are listed, not drawn).
pub const MAX_DRAWN: usize = 500;
/// Parts in one drawing at most.
const MAX_PARTS: usize = 16;
/// Samples per plotted waveform at most.
const MAX_SAMPLES: usize = 600;

/// What a part is in the drawing (its column, left to right).
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub enum Role {
    Controller,
    Gate,
    Switch,
    Load,
    Path,
    Other,
}

#[derive(Clone, Debug)]
pub struct ScenePart {
    pub name: String,
    pub kind: Kind,
    /// Value or library part, as it would be written beside the symbol.
    pub label: String,
    /// (pin, index into the scene's nets).
    pub pins: Vec<(String, usize)>,
    pub role: Role,
    /// Named by the finding.
    pub named: bool,
    /// Carries the load's current after the turn-off.
    pub flow: bool,
    /// (name, value with unit, note).
    pub facts: Vec<(String, String, String)>,
}

#[derive(Clone, Debug)]
pub struct SceneNet {
    pub name: String,
    /// A rail's nominal voltage.
    pub rail: Option<f64>,
    pub ground: bool,
    /// Highest DC voltage over every state (orders the nets top to bottom).
    pub v: f64,
}

/// One simulated edge of a switch, sampled for a plot.
#[derive(Clone, Debug, Default)]
pub struct Plot {
    pub switch: String,
    /// `turn-off`, `reset` or `turn-on`.
    pub edge: &'static str,
    pub load: Option<String>,
    pub t: Vec<f64>,
    pub vds: Vec<f64>,
    pub vgs: Vec<f64>,
    pub id: Vec<f64>,
    pub il: Vec<f64>,
    pub iclamp: Vec<f64>,
    /// The other switch of a bridge leg and its gate drive (same samples).
    pub partner: Option<String>,
    pub vgs_partner: Vec<f64>,
    /// From the gate that turns off crossing half its swing to the other
    /// crossing half of its own (s, wave time); the end before the start
    /// is an overlap.
    pub dead_time: Option<(f64, f64)>,
    /// A bipolar switch (V_CE, V_BE and I_C in the labels).
    pub bipolar: bool,
    /// The blocking rating and the derated limit (V).
    pub rating: Option<(&'static str, f64)>,
    pub derated: Option<f64>,
    /// V_DS held while the clamp path carries the load (simulated).
    pub clamp: Option<f64>,
    /// Largest V_DS of the edge: the `v_peak` fact for the edge it comes from.
    pub v_peak: f64,
    pub t_peak: f64,
    /// The gate command (s).
    pub t_cmd: f64,
    /// The switch's `v_peak` fact, when this edge is the one it comes from.
    pub peak_fact: Option<f64>,
}

/// The drawing and plots of one finding.
#[derive(Clone, Debug, Default)]
pub struct Scene {
    pub parts: Vec<ScenePart>,
    pub nets: Vec<SceneNet>,
    /// A freewheel path that should be there: (load, top net, bottom net).
    pub missing: Vec<(String, usize, usize)>,
    pub plots: Vec<Plot>,
}

/// The scenes of one file, by finding.
#[derive(Debug, Default)]
pub struct Scenes {
    by_key: HashMap<String, Scene>,
    /// Findings with parts beyond the first `MAX_DRAWN`.
    pub not_drawn: usize,
}

fn key(f: &Finding) -> String {
    let mut k = String::with_capacity(f.rule.len() + f.message.len() + 16);
    k.push_str(&f.rule);
    k.push('\0');
    k.push_str(&f.message);
    for p in &f.parts {
        k.push('\0');
        k.push_str(p);
    }
    k
}

impl Scenes {
    /// The scene of a finding (its rule, message and parts identify it:
    /// a front end may move its location, never these).
    pub fn get(&self, f: &Finding) -> Option<&Scene> {
        self.by_key.get(&key(f))
    }

    pub fn len(&self) -> usize {
        self.by_key.len()
    }

    pub fn is_empty(&self) -> bool {
        self.by_key.is_empty()
    }
}

/// The scenes of a file's findings (the first `MAX_DRAWN` that name parts).
pub fn collect(b: &Built, findings: &[Finding]) -> Scenes {
    let mut s = Scenes::default();
    let mut drawn = 0usize;
    let mut ix: Option<Ix> = None;
    for f in findings {
        let seeds: Vec<PartId> = f
            .parts
            .iter()
            .filter_map(|p| b.circuit.part_id(p))
            .collect();
        if seeds.is_empty() {
            continue;
        }
        if drawn >= MAX_DRAWN {
            s.not_drawn += 1;
            continue;
        }
        drawn += 1;
        let ix = ix.get_or_insert_with(|| Ix::new(b));
        let scene = scene(b, ix, &seeds, f.rule == "freewheel-missing");
        s.by_key.insert(key(f), scene);
    }
    s
}

/// The analysis's loads and turn-offs by part, built once per file (a
/// scan per finding would be quadratic on a large board).
struct Ix {
    /// Load part → indices into `loads`.
    load_of: HashMap<PartId, Vec<usize>>,
    /// Switch → indices into `loads` it carries.
    loads_of_switch: HashMap<PartId, Vec<usize>>,
    /// Switch → indices into `turnoffs`.
    turnoffs: HashMap<PartId, Vec<usize>>,
}

impl Ix {
    fn new(b: &Built) -> Ix {
        let a = &b.analysis;
        let mut ix = Ix {
            load_of: HashMap::new(),
            loads_of_switch: HashMap::new(),
            turnoffs: HashMap::new(),
        };
        for (i, l) in a.loads.iter().enumerate() {
            ix.load_of.entry(l.part).or_default().push(i);
            for &s in &l.switches {
                ix.loads_of_switch.entry(s).or_default().push(i);
            }
        }
        for (i, t) in a.turnoffs.iter().enumerate() {
            ix.turnoffs.entry(t.switch).or_default().push(i);
        }
        ix
    }

    fn turnoffs<'b>(
        &self,
        b: &'b Built,
        sw: PartId,
    ) -> impl Iterator<Item = &'b crate::analysis::TurnOff> {
        self.turnoffs
            .get(&sw)
            .into_iter()
            .flatten()
            .filter_map(|&i| b.analysis.turnoffs.get(i))
    }

    /// The turn-off a switch's `v_peak` fact comes from (the largest).
    fn worst<'b>(&self, b: &'b Built, sw: PartId) -> Option<&'b crate::analysis::TurnOff> {
        self.turnoffs(b, sw)
            .max_by(|x, y| x.v_peak.total_cmp(&y.v_peak))
    }
}

struct Picker<'a> {
    c: &'a Circuit,
    chosen: Vec<PartId>,
}

impl Picker<'_> {
    fn add(&mut self, p: PartId) -> bool {
        if self.chosen.contains(&p) || self.chosen.len() >= MAX_PARTS {
            return false;
        }
        self.chosen.push(p);
        true
    }

    /// Parts other than `p` on a net (rails and ground are not followed).
    fn neighbours(&self, net: usize, p: PartId) -> Vec<PartId> {
        let Some(n) = self.c.nets.get(net) else {
            return Vec::new();
        };
        if n.is_fixed() {
            return Vec::new();
        }
        let mut v: Vec<PartId> = n
            .conns
            .iter()
            .map(|&(q, _)| q)
            .filter(|&q| q != p)
            .collect();
        v.dedup();
        v
    }

    /// The gate network of a switch back to the controller: through
    /// resistors, capacitors, diodes, stage transistors and drivers, three
    /// parts deep at most.
    fn gate_network(&mut self, sw: PartId) {
        let Some(part) = self.c.parts.get(sw) else {
            return;
        };
        let Some((_, ctl, _)) = part.kind.switch_pins() else {
            return;
        };
        let Some(net) = part.net_of(ctl) else {
            return;
        };
        let mut frontier = vec![(net, sw)];
        for _ in 0..3 {
            let mut next = Vec::new();
            for (n, from) in frontier {
                for q in self.neighbours(n, from) {
                    let Some(qp) = self.c.parts.get(q) else {
                        continue;
                    };
                    if qp.kind.is_inductive_load() || !self.add(q) {
                        continue;
                    }
                    if matches!(qp.kind, Kind::Mcu | Kind::Connector) {
                        continue;
                    }
                    for pin in &qp.pins {
                        if pin.net != n {
                            next.push((pin.net, q));
                        }
                    }
                }
            }
            frontier = next;
        }
    }
}

fn label(p: &crate::model::Part) -> String {
    let dim = match p.kind {
        Kind::Resistor => Some(Dimension::Resistance),
        Kind::Capacitor => Some(Dimension::Capacitance),
        Kind::Inductor => Some(Dimension::Inductance),
        _ => None,
    };
    match (dim, p.num("value"), &p.part_name) {
        (_, _, Some(n)) => n.to_string(),
        (Some(d), Some(v), None) => format_si(v, d),
        _ => p.kind.name().to_string(),
    }
}

fn scene(b: &Built, ix: &Ix, seeds: &[PartId], missing_path: bool) -> Scene {
    let c = &b.circuit;
    let a = &b.analysis;
    let mut pk = Picker {
        c,
        chosen: Vec::new(),
    };
    for &p in seeds {
        pk.add(p);
    }
    let mut switches: Vec<PartId> = Vec::new();
    let mut loads: Vec<PartId> = Vec::new();
    for &p in seeds {
        let Some(part) = c.parts.get(p) else { continue };
        if part.kind.is_inductive_load() {
            loads.push(p);
            for l in ix.load_of.get(&p).into_iter().flatten() {
                if let Some(l) = a.loads.get(*l) {
                    switches.extend(l.switches.iter().copied());
                }
            }
        } else if part.kind.is_switch() {
            switches.push(p);
            for l in ix.loads_of_switch.get(&p).into_iter().flatten() {
                if let Some(l) = a.loads.get(*l) {
                    loads.push(l.part);
                }
            }
        }
    }
    switches.dedup();
    loads.dedup();
    for &l in &loads {
        pk.add(l);
    }
    for &s in &switches {
        pk.add(s);
    }
    // the freewheel or clamp path of each switch's worst turn-off
    let mut flow: Vec<PartId> = Vec::new();
    for &s in &switches {
        if let Some(t) = ix.worst(b, s) {
            for &(q, _) in &t.path {
                pk.add(q);
                flow.push(q);
            }
            // the load's current goes on through the path, or through the
            // switch's own breakdown when there is none
            if t.avalanche {
                flow.push(s);
            }
            if let Some(l) = t.load
                && (!t.path.is_empty() || t.avalanche)
            {
                flow.push(l);
            }
        }
    }
    for &s in &switches {
        pk.gate_network(s);
    }
    // a named part that is neither load nor switch (a resistor, a diode):
    // the parts beside it
    for &p in seeds {
        let Some(part) = c.parts.get(p) else { continue };
        if part.kind.is_inductive_load()
            || part.kind.is_switch()
            || matches!(part.kind, Kind::Mcu | Kind::Driver | Kind::Connector)
        {
            continue;
        }
        for pin in &part.pins {
            for q in pk.neighbours(pin.net, p) {
                if c.parts.get(q).is_some_and(|x| !matches!(x.kind, Kind::Mcu)) {
                    pk.add(q);
                }
            }
        }
    }
    let chosen = pk.chosen;
    // nets: every pin of the chosen parts, but a controller's or driver's
    // only where another chosen part meets it (or its own named pins)
    let mut nets: Vec<SceneNet> = Vec::new();
    let mut net_ix: HashMap<usize, usize> = HashMap::new();
    let touches = |net: usize, not: PartId| {
        chosen.iter().any(|&q| {
            q != not
                && c.parts
                    .get(q)
                    .is_some_and(|x| x.pins.iter().any(|pin| pin.net == net))
        })
    };
    let mut parts = Vec::new();
    for &p in &chosen {
        let Some(part) = c.parts.get(p) else { continue };
        let ic = matches!(part.kind, Kind::Mcu | Kind::Driver | Kind::Connector);
        let mut pins = Vec::new();
        for pin in &part.pins {
            if ic && !touches(pin.net, p) {
                continue;
            }
            let Some(n) = c.nets.get(pin.net) else {
                continue;
            };
            let ix = *net_ix.entry(pin.net).or_insert_with(|| {
                let (rail, ground, fixed) = match n.kind {
                    NetKind::Rail(r) => (Some(r.nominal), false, Some(r.max)),
                    NetKind::Ground => (None, true, Some(0.0)),
                    NetKind::Signal => (None, false, None),
                };
                let v = fixed
                    .or_else(|| a.net_vmax.get(pin.net).copied().flatten())
                    .unwrap_or(0.0);
                nets.push(SceneNet {
                    name: n.name.clone(),
                    rail,
                    ground,
                    v,
                });
                nets.len() - 1
            });
            pins.push((pin.name.to_string(), ix));
        }
        let role = if seeds.contains(&p) && part.kind.is_switch() || switches.contains(&p) {
            Role::Switch
        } else if part.kind.is_inductive_load() {
            Role::Load
        } else if flow.contains(&p) {
            Role::Path
        } else if matches!(part.kind, Kind::Mcu) {
            Role::Controller
        } else if a.switches.get(&p).is_some_and(|s| s.gate_stage)
            || pins.iter().any(|&(_, n)| {
                chosen.iter().any(|&s| {
                    switches.contains(&s)
                        && c.parts.get(s).is_some_and(|sp| {
                            sp.kind
                                .switch_pins()
                                .and_then(|(_, g, _)| sp.net_of(g))
                                .and_then(|g| net_ix.get(&g))
                                == Some(&n)
                        })
                })
            })
            || matches!(part.kind, Kind::Driver)
        {
            Role::Gate
        } else {
            Role::Other
        };
        let facts = a
            .facts
            .parts
            .get(p)
            .map(|pf| {
                pf.facts
                    .iter()
                    .map(|f| {
                        (
                            f.name.to_string(),
                            format_si(f.value, f.dim),
                            f.note.as_deref().unwrap_or("").to_string(),
                        )
                    })
                    .collect()
            })
            .unwrap_or_default();
        parts.push(ScenePart {
            name: part.reference.clone(),
            kind: part.kind,
            label: label(part),
            pins,
            role,
            named: seeds.contains(&p),
            flow: flow.contains(&p),
            facts,
        });
    }
    let mut missing = Vec::new();
    if missing_path {
        for &l in &loads {
            let Some(lp) = c.parts.get(l) else { continue };
            let (Some(top), Some(bot)) = (lp.net_of("+"), lp.net_of("-")) else {
                continue;
            };
            if let (Some(&t), Some(&u)) = (net_ix.get(&top), net_ix.get(&bot)) {
                missing.push((lp.reference.clone(), t, u));
            }
        }
    }
    let mut plots = Vec::new();
    for &s in switches.iter().take(2) {
        plots.extend(plots_of(b, ix, s));
    }
    Scene {
        parts,
        nets,
        missing,
        plots,
    }
}

/// Indices to keep so that a waveform of `n` samples has at most
/// `MAX_SAMPLES`: per bucket the first, the lowest and the highest of
/// V_DS, the load current and the gate drives, and always the peak of
/// `vds`.
fn keep(w: &crate::analysis::edges::Wave, peak: usize) -> Vec<usize> {
    let n = w.t.len();
    if n <= MAX_SAMPLES {
        return (0..n).collect();
    }
    let buckets = MAX_SAMPLES / 9;
    let mut idx = Vec::with_capacity(MAX_SAMPLES + 2);
    let traces: [&[f64]; 4] = [&w.vds, &w.il, &w.vgs, &w.vgs_partner];
    for k in 0..buckets {
        let lo = k * n / buckets;
        let hi = ((k + 1) * n / buckets).min(n);
        if lo >= hi {
            continue;
        }
        idx.push(lo);
        for tr in traces {
            let Some(seg) = tr.get(lo..hi) else { continue };
            let (mut imin, mut imax) = (0, 0);
            for (i, v) in seg.iter().enumerate() {
                if *v < seg[imin] {
                    imin = i;
                }
                if *v > seg[imax] {
                    imax = i;
                }
            }
            idx.push(lo + imin);
            idx.push(lo + imax);
        }
    }
    idx.push(n - 1);
    idx.push(peak);
    idx.sort_unstable();
    idx.dedup();
    idx
}

fn sample(w: &crate::analysis::edges::Wave) -> (Vec<usize>, usize) {
    let peak = w
        .vds
        .iter()
        .enumerate()
        .max_by(|x, y| x.1.total_cmp(y.1))
        .map(|(i, _)| i)
        .unwrap_or(0);
    (keep(w, peak), peak)
}

fn pick(v: &[f64], idx: &[usize]) -> Vec<f64> {
    idx.iter()
        .map(|&i| v.get(i).copied().unwrap_or(0.0))
        .collect()
}

/// The V_DS the clamp path holds, as simulated: the median V_DS while the
/// switch is off (its own current under a tenth of the load's largest)
/// and the clamp path carries more than half of the load current. A
/// moment when both conduct (a bridge leg's overlap) is no clamping.
fn plateau(w: &crate::analysis::edges::Wave) -> Option<f64> {
    let il_max = w.il.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    if il_max <= 0.0 {
        return None;
    }
    let mut v: Vec<f64> = w
        .iclamp
        .iter()
        .zip(&w.vds)
        .zip(w.id.iter().zip(&w.il))
        .filter(|((ic, _), (id, il))| {
            ic.abs() > 0.5 * il.abs() && il.abs() > 0.05 * il_max && id.abs() < 0.1 * il_max
        })
        .map(|((_, v), _)| *v)
        .collect();
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    v.get(v.len() / 2).copied()
}

/// When a gate drive moves from its level at the start of the run to its
/// level at the end (`up` or down by more than 0.5 V) and first crosses
/// the middle of the two, interpolated between samples. A gate that ends
/// where it started (a Miller bump, a static drive) has no such time.
fn mid_crossing(t: &[f64], v: &[f64], up: bool) -> Option<f64> {
    let (a, b) = (*v.first()?, *v.last()?);
    let rise = (b - a) * if up { 1.0 } else { -1.0 };
    if rise.is_nan() || rise <= 0.5 {
        return None;
    }
    let mid = 0.5 * (a + b);
    let side = |x: f64| if up { x >= mid } else { x <= mid };
    let k = v.windows(2).position(|w| !side(w[0]) && side(w[1]))?;
    let (t0, t1, v0, v1) = (*t.get(k)?, *t.get(k + 1)?, v[k], v[k + 1]);
    Some(if v1 == v0 {
        t1
    } else {
        t0 + (mid - v0) / (v1 - v0) * (t1 - t0)
    })
}

/// The dead time of a bridge leg's edge, measured on the simulated gate
/// drives: at a turn-off this switch's gate falls and then the other's
/// rises; at a turn-on the other's falls and then this one's rises.
fn dead_time(w: &crate::analysis::edges::Wave, turn_on: bool) -> Option<(f64, f64)> {
    if w.vgs_partner.len() != w.t.len() {
        return None;
    }
    let own = mid_crossing(&w.t, &w.vgs, turn_on)?;
    let other = mid_crossing(&w.t, &w.vgs_partner, !turn_on)?;
    Some(if turn_on { (other, own) } else { (own, other) })
}

fn plots_of(b: &Built, ix: &Ix, sw: PartId) -> Vec<Plot> {
    let c = &b.circuit;
    let a = &b.analysis;
    let Some(part) = c.parts.get(sw) else {
        return Vec::new();
    };
    let rating = if part.kind.is_mos() {
        part.num("vds_max").map(|v| ("vds_max", v))
    } else {
        part.num("vce_max").map(|v| ("vce_max", v))
    };
    let derated = rating.map(|(_, v)| v * b.settings.derating.voltage);
    let fact = a.facts.value(sw, "v_peak");
    let edge_of = |t: &crate::analysis::TurnOff| {
        a.solutions
            .get(t.group)
            .and_then(|s| s.edges.get(t.edge))
            .map(|e| &e.res)
    };
    let mut out = Vec::new();
    let mk = |w: &crate::analysis::edges::Wave,
              group: usize,
              edge: &'static str,
              load: Option<PartId>,
              t_cmd: f64,
              peak_fact: Option<f64>| {
        let (idx, peak) = sample(w);
        let clamp = if edge == "turn-on" { None } else { plateau(w) };
        Plot {
            switch: part.reference.clone(),
            edge,
            load: load
                .and_then(|l| c.parts.get(l))
                .map(|l| l.reference.clone()),
            t: pick(&w.t, &idx),
            vds: pick(&w.vds, &idx),
            vgs: pick(&w.vgs, &idx),
            id: pick(&w.id, &idx),
            il: pick(&w.il, &idx),
            iclamp: pick(&w.iclamp, &idx),
            partner: w
                .partner
                .and_then(|l| a.groups.get(group)?.parts.get(l as usize).copied())
                .and_then(|p| c.parts.get(p))
                .map(|p| p.reference.clone()),
            vgs_partner: if w.vgs_partner.len() == w.t.len() {
                pick(&w.vgs_partner, &idx)
            } else {
                Vec::new()
            },
            dead_time: dead_time(w, edge == "turn-on"),
            bipolar: part.kind.is_bipolar(),
            rating,
            derated,
            clamp,
            v_peak: w.vds.get(peak).copied().unwrap_or(0.0),
            t_peak: w.t.get(peak).copied().unwrap_or(0.0),
            t_cmd,
            peak_fact,
        }
    };
    // the switched (PWM) edge, motors running
    let toggle = ix
        .turnoffs(b, sw)
        .filter(|t| t.kind == EdgeKind::Toggle)
        .find(|t| t.mode == Mode::Run)
        .or_else(|| ix.turnoffs(b, sw).find(|t| t.kind == EdgeKind::Toggle));
    let worst = ix.worst(b, sw);
    if let Some(t) = worst
        && let Some(r) = edge_of(t)
        && !r.wave_off.t.is_empty()
    {
        let edge = if t.kind == EdgeKind::Reset {
            "reset"
        } else {
            "turn-off"
        };
        out.push(mk(&r.wave_off, t.group, edge, t.load, r.t_cmd, fact));
    }
    // when the worst edge is a reset, the switched turn-off too (its
    // timing against the other switch of a leg is what dead time is about)
    if let Some(t) = toggle
        && worst.is_some_and(|w| w.kind != EdgeKind::Toggle)
        && let Some(r) = edge_of(t)
        && !r.wave_off.t.is_empty()
    {
        out.push(mk(&r.wave_off, t.group, "turn-off", t.load, r.t_cmd, None));
    }
    if let Some(t) = toggle
        && let Some(r) = edge_of(t)
        && !r.wave_on.t.is_empty()
    {
        let t0 = r.wave_on.t.first().copied().unwrap_or(0.0);
        out.push(mk(&r.wave_on, t.group, "turn-on", t.load, t0, None));
    }
    out
}

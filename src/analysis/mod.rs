//! Electrical analysis, version 2: a small circuit simulator inside the
//! pipeline. Each control group becomes a netlist of device models fitted
//! from the parts' ratings (`devices/`, `netlist`), is solved in every
//! controller-pin assignment at both rail corners by Newton–Raphson on its
//! nodal equations (`mna`, `newton`, `op`), and has the edges of its
//! switches simulated (`transient`, `edges`); identical groups share one
//! solution (`reuse`). The readers below turn solutions into the tables
//! the rules read and into the `Facts` table that rules, team rules and
//! `armature facts` share. A rule never sees a matrix.

pub mod devices;
pub mod edges;
pub mod facts;
pub mod groups;
pub mod mna;
pub mod netlist;
pub mod newton;
pub mod op;
pub mod physics;
pub mod reuse;
pub mod solve;
pub mod spice;
pub mod transient;

pub use facts::{Fact, FactTable, Facts};

/// A controller's output level: `io_v`, else its supply rail (nominal).
pub fn io_v(c: &Circuit, mcu: PartId) -> f64 {
    devices::sources::io_level(c, c.part(mcu))
}

use crate::fasthash::FastMap as HashMap;
use crate::finding::{Finding, Severity};
use crate::graph::CircuitGraph;
use crate::model::{Circuit, DriveKind, Kind, NetId, PartId};
use crate::settings::Settings;
use crate::units::Dimension::*;
use crate::units::format_si;
pub use groups::{CtlPin, Group, PinState};
use netlist::{Corner, Dev, Nd, Role};
use op::Mode;
pub use solve::{EdgeKind, GroupSolution, Point, Region};
use std::sync::Arc;

/// What the analysis learnt about a switch.
#[derive(Clone, Debug, Default)]
pub struct SwitchInfo {
    pub group: usize,
    /// Controller pins that move it between off and conducting, and
    /// whether it conducts with the pin low (an inverting path).
    pub controls: Vec<(CtlPin, bool)>,
    /// Controller pins that change its gate drive (it is meant to switch).
    pub drivers: Vec<CtlPin>,
    pub hl_states: usize,
    /// High/low states in which it conducts (max corner).
    pub on_states: usize,
    /// During reset (all pins high-impedance): its control node undefined.
    pub reset_floating: bool,
    pub reset_on: bool,
    /// Lowest gate drive over the states where it conducts (min corner).
    pub v_gs_on: Option<f64>,
    /// Highest drive over every high/low state (min corner).
    pub v_gs_best: Option<f64>,
    /// Largest |V_GS| over every state (max corner).
    pub v_gs_abs_max: Option<f64>,
    /// Its point with the most current among those where it is linear
    /// (min corner, high/low states).
    pub linear: Option<Point>,
    /// Some high/low state puts it fully on (min corner).
    pub ever_on: bool,
    pub f_pwm: f64,
    pub duty_min: f64,
    pub duty_max: f64,
    /// Largest current out of a controller pin that drives it.
    pub pin_current: Option<(CtlPin, f64)>,
    /// It is a stage of another switch's gate network (its collector or
    /// emitter, drain or source, reaches another switch's gate or base or
    /// a driver's input through resistors at most): a level shifter or an
    /// emitter follower, not a load switch.
    pub gate_stage: bool,
}

/// One load (motor, coil, inductor) and the switches that carry it.
#[derive(Clone, Debug)]
pub struct LoadInfo {
    pub part: PartId,
    pub group: usize,
    pub switches: Vec<PartId>,
    pub i_stall: f64,
    pub i_cont: f64,
    /// Diodes on the load's circuit that conduct while it is driven.
    pub reversed: Vec<(PartId, f64)>,
    pub f_pwm: f64,
    pub duty_max: f64,
}

/// One simulated turn-off of a switch.
#[derive(Clone, Debug)]
pub struct TurnOff {
    pub switch: PartId,
    pub load: Option<PartId>,
    pub kind: EdgeKind,
    pub mode: Mode,
    pub group: usize,
    /// Index of the edge run in the group's solution.
    pub edge: usize,
    pub i0: f64,
    pub il0: f64,
    pub v_peak: f64,
    pub t_off: Option<f64>,
    pub t_decay: Option<f64>,
    pub e_off: f64,
    pub e_aval: f64,
    /// Energy stored in the loads at the command, ½·L·I².
    pub e_load: f64,
    /// Parts that carried at least a fifth of the load's charge after the
    /// command (the freewheel path), with their energy.
    pub path: Vec<(PartId, f64)>,
    /// Rails that took back energy, with how much.
    pub rails: Vec<(NetId, f64)>,
    /// The switch's own breakdown carried the current.
    pub avalanche: bool,
    pub failed: bool,
}

/// Two switches in series between two fixed nets, sharing a midpoint.
#[derive(Clone, Debug)]
pub struct Leg {
    pub high: PartId,
    pub low: PartId,
    pub mid: NetId,
    /// A pin assignment that makes current flow through both, and that
    /// current.
    pub both_on: Option<(Vec<(CtlPin, PinState)>, f64)>,
}

/// A controller pin pulled beyond its supply or its ground: the current
/// its protection diode takes.
#[derive(Clone, Debug)]
pub struct PinInjection {
    pub pin: CtlPin,
    /// Above the supply (else below ground).
    pub above: bool,
    pub current: f64,
    /// The pin's voltage and the rail it passes, in that state.
    pub v_pin: f64,
    pub v_rail: f64,
    /// The pin state, described, in which it is worst.
    pub state: usize,
}

/// A gate driver's input that floats while the controller is in reset.
#[derive(Clone, Debug)]
pub struct FloatingInput {
    pub driver: PartId,
    pub pin: &'static str,
    /// Switches whose control node the driver's output drives.
    pub switches: Vec<PartId>,
    pub controllers: Vec<CtlPin>,
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
    /// Each group's solution (shared between identical groups).
    pub solutions: Vec<Arc<GroupSolution>>,
    /// Worst-case DC voltage of each net over every solved state.
    pub net_vmax: Vec<Option<f64>>,
    pub net_vmin: Vec<Option<f64>>,
    /// Parts between two fixed nets that conduct: (part, how).
    pub rail_shorts: Vec<(PartId, String)>,
    /// Groups whose pins exceed the enumeration limit.
    pub truncated: Vec<usize>,
    pub floating_inputs: Vec<FloatingInput>,
    pub injections: Vec<(usize, PinInjection)>,
    /// How many distinct groups were solved (the rest reused a solution).
    pub distinct_groups: usize,
    /// The turn-offs by switch and by the parts on their paths, built on
    /// first use (`turnoffs` does not change after the analysis).
    turnoff_index: std::sync::OnceLock<TurnOffIndex>,
}

#[derive(Debug, Default)]
struct TurnOffIndex {
    by_switch: HashMap<PartId, Vec<u32>>,
    by_path: HashMap<PartId, Vec<u32>>,
}

impl Analysis {
    fn turnoff_index(&self) -> &TurnOffIndex {
        self.turnoff_index.get_or_init(|| {
            let mut ix = TurnOffIndex::default();
            for (i, t) in self.turnoffs.iter().enumerate() {
                ix.by_switch.entry(t.switch).or_default().push(i as u32);
                for &(p, _) in &t.path {
                    let l = ix.by_path.entry(p).or_default();
                    if l.last() != Some(&(i as u32)) {
                        l.push(i as u32);
                    }
                }
            }
            ix
        })
    }

    /// The turn-offs of a switch, in order.
    pub fn turnoffs_of(&self, switch: PartId) -> impl Iterator<Item = &TurnOff> {
        self.turnoff_index()
            .by_switch
            .get(&switch)
            .into_iter()
            .flatten()
            .filter_map(|&i| self.turnoffs.get(i as usize))
    }

    /// The turn-offs whose current path runs through a part, in order.
    pub fn turnoffs_through(&self, part: PartId) -> impl Iterator<Item = &TurnOff> {
        self.turnoff_index()
            .by_path
            .get(&part)
            .into_iter()
            .flatten()
            .filter_map(|&i| self.turnoffs.get(i as usize))
    }
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

impl std::fmt::Debug for GroupSolution {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "GroupSolution({} nodes, {} states, {} edges)",
            self.nl.n,
            self.states.len(),
            self.edges.len()
        )
    }
}

/// The drive of each group pin.
fn pin_drives(c: &Circuit, grp: &Group) -> Vec<solve::PinDrive> {
    grp.pins
        .iter()
        .map(|(m, name)| {
            let own = c.drive_of(*m, name);
            let partner = c
                .complement_of(*m, name)
                .and_then(|o| grp.pins.iter().position(|p| p == o))
                .map(|i| i as u32);
            // a complement pin takes its partner's drive, inverted
            let (d, inverted) = match own {
                Some(d) => (Some(d), false),
                None => (
                    c.complement_of(*m, name)
                        .and_then(|o| c.drive_of(o.0, &o.1)),
                    true,
                ),
            };
            match d.map(|d| &d.kind) {
                Some(DriveKind::Pwm {
                    freq,
                    duty_min,
                    duty_max,
                    deadtime,
                    ..
                }) => {
                    let (lo, hi) = if inverted {
                        (1.0 - duty_max, 1.0 - duty_min)
                    } else {
                        (*duty_min, *duty_max)
                    };
                    solve::PinDrive {
                        f_pwm: *freq,
                        duty_min: lo,
                        duty_max: hi,
                        partner,
                        deadtime: deadtime.unwrap_or(0.0),
                    }
                }
                _ => solve::PinDrive {
                    f_pwm: 0.0,
                    duty_min: 1.0,
                    duty_max: 1.0,
                    partner,
                    deadtime: 0.0,
                },
            }
        })
        .collect()
}

/// Whether solutions are kept from one analysis to the next (the
/// language server re-checks a file after every edit: only the groups
/// an edit changed are solved again). A group's solution depends on its
/// key alone (see `reuse`), so a remembered one is the one a new solve
/// would give.
static REMEMBER: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);
/// The most solutions remembered; beyond, the memory starts afresh.
const MAX_REMEMBERED: usize = 20_000;

type Solved = std::sync::Mutex<HashMap<Vec<u64>, Arc<GroupSolution>>>;

fn solved() -> &'static Solved {
    static S: std::sync::OnceLock<Solved> = std::sync::OnceLock::new();
    S.get_or_init(Default::default)
}

/// Keep solutions across analyses (for a long-running process).
pub fn remember_solutions(on: bool) {
    REMEMBER.store(on, std::sync::atomic::Ordering::Relaxed);
    if !on && let Ok(mut m) = solved().lock() {
        m.clear();
    }
}

pub fn analyze(c: &Circuit, g: &CircuitGraph, s: &Settings) -> Analysis {
    analyze_with(c, g, s, true)
}

/// The analysis, with or without the reuse of identical groups (the
/// benchmark measures both).
pub fn analyze_with(c: &Circuit, g: &CircuitGraph, s: &Settings, reuse: bool) -> Analysis {
    use rayon::prelude::*;
    let mut a = Analysis {
        facts: Facts::new(c.parts.len()),
        net_vmax: c.nets.iter().map(|n| n.fixed_max()).collect(),
        net_vmin: c.nets.iter().map(|n| n.fixed_min()).collect(),
        ..Analysis::default()
    };
    let t0 = std::time::Instant::now();
    let groups = groups::groups(c, g);
    let t_groups = t0.elapsed();
    // a key per group from its raw parts, then one solve and one reading
    // per distinct key; the other groups of a key get the reading with
    // their own parts, nets and pins in place
    let drives: Vec<Vec<solve::PinDrive>> = groups
        .par_iter()
        .with_min_len(256)
        .map(|grp| pin_drives(c, grp))
        .collect();
    let keys: Vec<Option<Vec<u64>>> = if reuse {
        groups
            .par_iter()
            .zip(drives.par_iter())
            .with_min_len(256)
            .map(|(grp, d)| Some(reuse::key(c, grp, d)))
            .collect()
    } else {
        vec![None; groups.len()]
    };
    let mut index: HashMap<Vec<u64>, usize> = HashMap::default();
    let mut which: Vec<usize> = Vec::with_capacity(groups.len());
    let mut unique: Vec<usize> = Vec::new();
    let mut unique_keys: Vec<Option<Vec<u64>>> = Vec::new();
    let remember = REMEMBER.load(std::sync::atomic::Ordering::Relaxed);
    for (gi, k) in keys.into_iter().enumerate() {
        let next = unique.len();
        let u = match &k {
            Some(k) => match index.get(k) {
                Some(&u) => u,
                None => {
                    index.insert(k.clone(), next);
                    next
                }
            },
            None => next,
        };
        if u == next {
            unique.push(gi);
            unique_keys.push(if remember { k } else { None });
        }
        which.push(u);
    }
    drop(index);
    let t_keys = t0.elapsed();
    let reps: Vec<(Arc<GroupSolution>, GroupAcc)> = unique
        .par_iter()
        .zip(unique_keys.par_iter())
        .map(|(&gi, key)| {
            let grp = &groups[gi];
            let known = key
                .as_ref()
                .and_then(|k| solved().lock().ok()?.get(k).cloned());
            let sol = match known {
                Some(sol) => sol,
                None => {
                    let nl = netlist::build(c, grp);
                    let sol = Arc::new(solve::solve(nl, &drives[gi], &solve::rated(c, &grp.parts)));
                    if let (Some(k), Ok(mut m)) = (key, solved().lock()) {
                        if m.len() >= MAX_REMEMBERED {
                            m.clear();
                        }
                        m.insert(k.clone(), sol.clone());
                    }
                    sol
                }
            };
            let acc = read_group(c, gi, grp, &sol);
            (sol, acc)
        })
        .collect();
    let t_solve = t0.elapsed();
    a.distinct_groups = reps.len();
    a.solutions = which.iter().map(|&u| reps[u].0.clone()).collect();
    // every group's reading, merged in group order
    let outs: Vec<GroupAcc> = groups
        .par_iter()
        .enumerate()
        .with_min_len(256)
        .map(|(gi, grp)| {
            let u = which[gi];
            let rep = unique[u];
            let (sol, acc) = &reps[u];
            let mut out = if rep == gi {
                acc.clone()
            } else {
                instantiate(acc, &groups[rep], grp, gi)
            };
            if !sol.converged() || sol.edges.iter().any(|e| e.res.failed.is_some()) {
                out.notes = nonconvergence(c, grp, sol);
            }
            out
        })
        .collect();
    drop(reps);
    let n_switches = c.parts.iter().filter(|p| p.kind.is_switch()).count();
    a.switches.reserve(n_switches);
    for (gi, acc) in outs.into_iter().enumerate() {
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
        a.switches.extend(acc.switches);
        a.loads.extend(acc.loads);
        a.turnoffs.extend(acc.turnoffs);
        a.legs.extend(acc.legs);
        a.floating_inputs.extend(acc.floating_inputs);
        a.injections
            .extend(acc.injections.into_iter().map(|x| (gi, x)));
        a.early.extend(acc.notes);
    }
    let t_read = t0.elapsed();
    a.groups = groups;
    rail_shorts(c, &mut a);
    thermal(c, s, &mut a);
    capacitors(c, &mut a);
    if transient::trace() {
        eprintln!(
            "{} groups, {} distinct: groups {:?}, keys {:?}, solve {:?}, read+merge {:?}, thermal {:?}",
            a.groups.len(),
            a.distinct_groups,
            t_groups,
            t_keys - t_groups,
            t_solve - t_keys,
            t_read - t_solve,
            t0.elapsed() - t_read
        );
    }
    a
}

/// What reading one group produced, before it is merged. It holds no
/// names (only ids), so that identical groups can share it.
#[derive(Clone, Default)]
struct GroupAcc {
    facts: facts::LocalFacts,
    switches: Vec<(PartId, SwitchInfo)>,
    loads: Vec<LoadInfo>,
    turnoffs: Vec<TurnOff>,
    legs: Vec<Leg>,
    floating_inputs: Vec<FloatingInput>,
    injections: Vec<PinInjection>,
    extremes: Vec<(NetId, f64, f64)>,
    truncated: bool,
    notes: Vec<Finding>,
}

/// Describe a pin assignment: "`U1.PA3` high, `U1.PA4` low".
pub fn describe_state(c: &Circuit, grp: &Group, a: &[PinState]) -> String {
    if a.iter().all(|s| *s == PinState::HiZ) {
        return "every pin high-impedance (reset)".to_string();
    }
    grp.pins
        .iter()
        .zip(a)
        .map(|((m, pin), s)| {
            format!(
                "`{}.{pin}` {}",
                c.part(*m).reference,
                match s {
                    PinState::High => "high",
                    PinState::Low => "low",
                    PinState::HiZ => "open",
                }
            )
        })
        .collect::<Vec<_>>()
        .join(", ")
}

fn read_group(c: &Circuit, gi: usize, grp: &Group, sol: &GroupSolution) -> GroupAcc {
    let mut a = GroupAcc {
        truncated: sol.truncated,
        ..GroupAcc::default()
    };

    // extremes of every net over every solved point
    let mut ext: Vec<Option<(f64, f64)>> = vec![None; grp.nets.len()];
    for ops in &sol.ops {
        for o in ops {
            for (i, slot) in ext.iter_mut().enumerate() {
                if o.floating.get(i).copied().unwrap_or(false) {
                    continue;
                }
                let v = o.x.get(i).copied().unwrap_or(0.0);
                let e = slot.get_or_insert((v, v));
                e.0 = e.0.max(v);
                e.1 = e.1.min(v);
            }
        }
    }
    a.extremes = grp
        .nets
        .iter()
        .zip(ext)
        .filter_map(|(&n, e)| e.map(|(hi, lo)| (n, hi, lo)))
        .collect();
    // resistor-joined nodes, for both readers that ask
    let links = ResistorLinks::new(&sol.nl);
    read_switches(c, gi, grp, sol, &links, &mut a);
    read_loads(c, gi, grp, sol, &links, &mut a);
    read_edges(c, gi, grp, sol, &mut a);
    read_legs(c, grp, sol, &mut a);
    read_diodes(c, grp, sol, &mut a);
    read_resistors(c, grp, sol, &mut a);
    read_driver_inputs(c, grp, sol, &links, &mut a);
    read_injections(c, grp, sol, &mut a);
    a
}

/// The same reading for another group with the same key: its parts,
/// nets and controller pins in place of the representative's.
fn instantiate(rep: &GroupAcc, rg: &Group, ig: &Group, gi: usize) -> GroupAcc {
    let part = |p: PartId| -> PartId {
        rg.parts
            .binary_search(&p)
            .ok()
            .and_then(|i| ig.parts.get(i).copied())
            .unwrap_or(p)
    };
    let net = |n: NetId| -> NetId {
        rg.nets
            .iter()
            .position(|&x| x == n)
            .and_then(|i| ig.nets.get(i).copied())
            .unwrap_or(n)
    };
    let pin = |cp: &CtlPin| -> CtlPin {
        rg.pins
            .iter()
            .position(|x| x == cp)
            .and_then(|i| ig.pins.get(i).cloned())
            .unwrap_or_else(|| cp.clone())
    };
    GroupAcc {
        facts: rep.facts.remap(|p| Some(part(p))),
        switches: rep
            .switches
            .iter()
            .map(|(p, i)| {
                let mut i = i.clone();
                i.group = gi;
                i.controls = i.controls.iter().map(|(c, inv)| (pin(c), *inv)).collect();
                i.drivers = i.drivers.iter().map(&pin).collect();
                i.pin_current = i.pin_current.as_ref().map(|(c, x)| (pin(c), *x));
                (part(*p), i)
            })
            .collect(),
        loads: rep
            .loads
            .iter()
            .map(|l| LoadInfo {
                part: part(l.part),
                group: gi,
                switches: l.switches.iter().map(|&q| part(q)).collect(),
                reversed: l.reversed.iter().map(|&(d, x)| (part(d), x)).collect(),
                ..l.clone()
            })
            .collect(),
        turnoffs: rep
            .turnoffs
            .iter()
            .map(|t| TurnOff {
                switch: part(t.switch),
                load: t.load.map(part),
                group: gi,
                path: t.path.iter().map(|&(p, e)| (part(p), e)).collect(),
                ..t.clone()
            })
            .collect(),
        legs: rep
            .legs
            .iter()
            .map(|l| Leg {
                high: part(l.high),
                low: part(l.low),
                mid: net(l.mid),
                both_on: l
                    .both_on
                    .as_ref()
                    .map(|(a, i)| (a.iter().map(|(c, s)| (pin(c), *s)).collect(), *i)),
            })
            .collect(),
        floating_inputs: rep
            .floating_inputs
            .iter()
            .map(|f| FloatingInput {
                driver: part(f.driver),
                pin: f.pin,
                switches: f.switches.iter().map(|&q| part(q)).collect(),
                controllers: f.controllers.iter().map(&pin).collect(),
            })
            .collect(),
        injections: rep
            .injections
            .iter()
            .map(|x| PinInjection {
                pin: pin(&x.pin),
                ..x.clone()
            })
            .collect(),
        extremes: rep
            .extremes
            .iter()
            .map(|&(n, hi, lo)| (net(n), hi, lo))
            .collect(),
        truncated: rep.truncated,
        notes: Vec::new(),
    }
}

/// The analysis notes of a group whose solution is incomplete.
fn nonconvergence(c: &Circuit, grp: &Group, sol: &GroupSolution) -> Vec<Finding> {
    let mut a = GroupAcc::default();
    let failed = solve::failures(sol);
    if let Some(&(s, corner, mode)) = failed.first()
        && let Some(&p) = grp.parts.first()
    {
        let st = sol
            .states
            .get(s)
            .map(|x| describe_state(c, grp, x))
            .unwrap_or_default();
        a.notes.push(
            Finding::new(
                "analysis-nonconvergent",
                Severity::Warning,
                &c.file,
                c.part(p).span,
                format!(
                    "the operating point with {st} (rails at their {}, motors {}) did not converge, even with gmin and source stepping: {} of {} points failed, and the results for these parts are incomplete",
                    corner.name(),
                    if mode == Mode::Stall { "stalled" } else { "running" },
                    failed.len(),
                    sol.ops.len() * 4
                ),
            )
            .label("no operating point")
            .help("check for a part whose value is far out of range, or a loop of switches that drive each other; `armature export spice` writes the group for a simulator")
            .parts([c.part(p).reference.clone()]),
        );
    }
    if let Some(e) = sol.edges.iter().find(|e| e.res.failed.is_some())
        && let Some(&p) = grp.parts.get(e.switch as usize)
    {
        a.notes.push(
            Finding::new(
                "analysis-nonconvergent",
                Severity::Warning,
                &c.file,
                c.part(p).span,
                format!(
                    "the simulated turn-off of `{}` stopped early ({:?}): its edge figures are incomplete",
                    c.part(p).reference,
                    e.res.failed
                ),
            )
            .label("edge not completed")
            .parts([c.part(p).reference.clone()]),
        );
    }
    a.notes
}

fn point(sw: &solve::LocalSwitch, state: usize, corner: Corner) -> Option<&Point> {
    sw.points
        .iter()
        .find(|p| p.corner == corner && p.state as usize == state)
}

fn read_switches(
    c: &Circuit,
    gi: usize,
    grp: &Group,
    sol: &GroupSolution,
    links: &ResistorLinks,
    a: &mut GroupAcc,
) {
    let nl = &sol.nl;
    // each controller pin's largest current (driven high, stalled, rails
    // at their maximum), once per group: every switch of the pin reads it
    let pin_peak: Vec<(&CtlPin, f64)> = nl
        .elems
        .iter()
        .enumerate()
        .filter_map(|(k, e)| {
            let Dev::Pin { pin, .. } = e.dev else {
                return None;
            };
            let cp = grp.pins.get(pin as usize)?;
            let mut peak: Option<f64> = None;
            for (s, ops) in sol.ops.iter().enumerate() {
                if sol.states.get(s).and_then(|x| x.get(pin as usize)) != Some(&PinState::High) {
                    continue;
                }
                let o = &ops[solve::slot(Corner::Max, Mode::Stall)];
                let i = -newton::currents(nl, k, &o.x, &o.ex, None)[0];
                if peak.is_none_or(|m| i.abs() > m) {
                    peak = Some(i.abs());
                }
            }
            peak.map(|m| (cp, m))
        })
        .collect();
    for ls in &sol.switches {
        let Some(&pid) = grp.parts.get(ls.part as usize) else {
            continue;
        };
        let p = c.part(pid);
        let mut info = SwitchInfo {
            group: gi,
            controls: ls
                .controls
                .iter()
                .filter_map(|&(k, inv)| grp.pins.get(k as usize).map(|x| (x.clone(), inv)))
                .collect(),
            drivers: ls
                .drivers
                .iter()
                .filter_map(|&k| grp.pins.get(k as usize).cloned())
                .collect(),
            hl_states: sol.states.len().saturating_sub(1),
            duty_min: 1.0,
            duty_max: 1.0,
            ..SwitchInfo::default()
        };
        for s in 0..sol.states.len() {
            let reset = sol.is_reset(s);
            if let Some(pt) = point(ls, s, Corner::Max) {
                info.v_gs_abs_max = Some(
                    info.v_gs_abs_max
                        .map_or(pt.v_gs.abs(), |m: f64| m.max(pt.v_gs.abs())),
                );
                if reset {
                    info.reset_on = pt.gated;
                } else if pt.gated {
                    info.on_states += 1;
                }
            }
            if reset {
                let k = nl.elem_index(ls.part as usize, Role::Main);
                let ctl = k.and_then(|k| nl.elems[k].t.get(1).copied());
                info.reset_floating = match (ctl, sol.op(s, Corner::Max, Mode::Stall)) {
                    (Some(n), Some(o)) => o.is_floating(n),
                    _ => false,
                };
                continue;
            }
            if let Some(pt) = point(ls, s, Corner::Min) {
                info.v_gs_best = Some(info.v_gs_best.map_or(pt.v_gs, |m: f64| m.max(pt.v_gs)));
                if pt.region != Region::Off {
                    info.v_gs_on = Some(info.v_gs_on.map_or(pt.v_gs, |m: f64| m.min(pt.v_gs)));
                }
                match pt.region {
                    Region::On => info.ever_on = true,
                    Region::Linear => {
                        if info.linear.is_none_or(|l| pt.i_d.abs() > l.i_d.abs()) {
                            info.linear = Some(*pt);
                        }
                    }
                    Region::Off => {}
                }
            }
        }
        // PWM of the controlling pins
        for (pin, inv) in &info.controls {
            let d = c.drive_of(pin.0, &pin.1).map(|d| (d, false)).or_else(|| {
                c.complement_of(pin.0, &pin.1)
                    .and_then(|o| c.drive_of(o.0, &o.1))
                    .map(|d| (d, true))
            });
            if let Some((d, flipped)) = d
                && let DriveKind::Pwm {
                    freq,
                    duty_min,
                    duty_max,
                    ..
                } = d.kind
                && freq > info.f_pwm
            {
                info.f_pwm = freq;
                let inv = *inv != flipped;
                let (lo, hi) = if inv {
                    (1.0 - duty_max, 1.0 - duty_min)
                } else {
                    (duty_min, duty_max)
                };
                info.duty_min = lo;
                info.duty_max = hi;
            }
        }
        // the largest current out of a controlling pin
        for &(cp, m) in &pin_peak {
            if !info.drivers.contains(cp) && !info.controls.iter().any(|(x, _)| x == cp) {
                continue;
            }
            if info.pin_current.as_ref().is_none_or(|(_, best)| m > *best) {
                info.pin_current = Some((cp.clone(), m));
            }
        }
        // a stage of another switch's gate network
        if let Some(km) = nl.elem_index(ls.part as usize, Role::Main) {
            let mut ends: Vec<Nd> = vec![nl.elems[km].t[0], nl.elems[km].t[2]];
            if let Some(ks) = nl.elem_index(ls.part as usize, Role::SeriesR) {
                ends.push(nl.elems[ks].t[0]);
            }
            info.gate_stage = ends.iter().any(|&n| links.controls_other(n, ls.part));
        }
        let f = &mut a.facts;
        let drive_name = if p.kind.is_bipolar() {
            "base-emitter"
        } else {
            "gate"
        };
        match info.v_gs_on.or(info.v_gs_best) {
            Some(v) => f.set(
                pid,
                "v_gs_on",
                v,
                Voltage,
                Some(if info.v_gs_on.is_some() {
                    format!("lowest {drive_name} drive over the states where it conducts, rails at their minimum")
                } else {
                    format!("best {drive_name} drive over every pin state, rails at their minimum; it never conducts")
                }),
            ),
            None => f.missing(pid, "v_gs_on", "its control net has no defined voltage in any pin state"),
        }
        if ls.i_max > 0.0 {
            f.set(
                pid,
                "i_on",
                ls.i_max,
                Current,
                Some(
                    "largest current over every pin state, motors stalled, rails at their maximum"
                        .into(),
                ),
            );
            if let Some(pt) = ls.best.and_then(|b| point(ls, b as usize, Corner::Max)) {
                f.set(
                    pid,
                    "v_ds_on",
                    pt.v_ds,
                    Voltage,
                    Some(format!("{} at that point", pt.region.name())),
                );
            }
        }
        if let Some(rp) = ls.run_point {
            let note = if sol.has_run {
                "largest current with motors running (back-EMF from `i_rated`), rails at their maximum"
            } else {
                "largest current (no motor with `i_rated`: as at stall), rails at their maximum"
            };
            f.set(pid, "i_cont", rp.i_d.abs(), Current, Some(note.into()));
        }
        if p.kind.is_bipolar()
            && let Some(kb) = nl.elem_index(ls.part as usize, Role::Main)
        {
            let mut lo: Option<f64> = None;
            let mut hi: Option<f64> = None;
            for s in 0..sol.states.len() {
                if sol.is_reset(s) {
                    continue;
                }
                if let (Some(pt), Some(o)) = (
                    point(ls, s, Corner::Min),
                    sol.op(s, Corner::Min, Mode::Stall),
                ) && pt.region != Region::Off
                {
                    let ib = newton::currents(nl, kb, &o.x, &o.ex, None)[1].abs();
                    lo = Some(lo.map_or(ib, |m| m.min(ib)));
                }
                if let Some(o) = sol.op(s, Corner::Max, Mode::Stall) {
                    let ib = newton::currents(nl, kb, &o.x, &o.ex, None)[1].abs();
                    hi = Some(hi.map_or(ib, |m| m.max(ib)));
                }
            }
            if let Some(lo) = lo {
                f.set(pid, "i_b", lo, Current, Some("lowest base current in the states where it conducts, rails at their minimum".into()));
            }
            if let Some(hi) = hi {
                f.set(
                    pid,
                    "i_b_max",
                    hi,
                    Current,
                    Some("largest base current, rails at their maximum".into()),
                );
            }
        }
        f.set(pid, "f_pwm", info.f_pwm, Frequency, None);
        f.set(pid, "duty_max", info.duty_max, Number, None);
        a.switches.push((pid, info));
    }
}

fn read_loads(
    c: &Circuit,
    gi: usize,
    grp: &Group,
    sol: &GroupSolution,
    links: &ResistorLinks,
    a: &mut GroupAcc,
) {
    let nl = &sol.nl;
    // switches by the resistor-joined component of their main terminals'
    // unknown nodes (a rail joins nothing: every part touches one)
    let node_comp = |n: Nd| match n {
        Nd::Var(v) => links.comp.get(v as usize).copied(),
        _ => None,
    };
    // diodes by the unknown nodes their part touches, for the loads'
    // reversed-diode test (a scan of every element per load was quadratic)
    let mut diodes_at: HashMap<u32, Vec<usize>> = HashMap::default();
    for (kd, d) in nl.elems.iter().enumerate() {
        if !matches!(d.dev, Dev::Diode(_)) || d.role != Role::Main {
            continue;
        }
        for x in nl.elems_of(d.part as usize) {
            for n in &x.t {
                if let Nd::Var(v) = n {
                    diodes_at.entry(*v).or_default().push(kd);
                }
            }
        }
    }
    let mut by_comp: HashMap<u32, Vec<usize>> = HashMap::default();
    for (i, ls) in sol.switches.iter().enumerate() {
        if let Some(km) = nl.elem_index(ls.part as usize, Role::Main)
            && let Some(el) = nl.elems.get(km)
        {
            for n in [el.t.first(), el.t.get(2)].into_iter().flatten() {
                if let Some(k) = node_comp(*n) {
                    by_comp.entry(k).or_default().push(i);
                }
            }
        }
    }
    // each switch's PWM, looked up per load (a scan of the group's
    // switches per load was quadratic in a group of a thousand channels)
    let pwm_of: HashMap<PartId, (f64, f64)> = a
        .switches
        .iter()
        .map(|(p, i)| (*p, (i.f_pwm, i.duty_max)))
        .collect();
    for (k, e) in nl.elems.iter().enumerate() {
        let Dev::Load { r, l, emf } = e.dev else {
            continue;
        };
        let Some(&lid) = grp.parts.get(e.part as usize) else {
            continue;
        };
        let lp = c.part(lid);
        // the largest current, stalled, rails at their maximum
        let mut best: Option<(usize, f64)> = None;
        let mut run_max = 0.0f64;
        for s in 0..sol.states.len() {
            if sol.is_reset(s) {
                continue;
            }
            if let Some(o) = sol.op(s, Corner::Max, Mode::Stall) {
                let i = newton::currents(nl, k, &o.x, &o.ex, None)[0];
                if best.is_none_or(|(_, b)| i.abs() > b.abs()) {
                    best = Some((s, i));
                }
            }
            if let Some(o) = sol.op(s, Corner::Max, Mode::Run) {
                run_max = run_max.max(newton::currents(nl, k, &o.x, &o.ex, None)[0].abs());
            }
        }
        let Some((bs, il)) = best.filter(|b| b.1.abs() > 1e-6) else {
            a.facts.missing(
                lid,
                "i_stall",
                "no pin state drives a current through the load",
            );
            continue;
        };
        let i_stall = il.abs();
        let supply = supply_of(c, lid);
        a.facts.set(
            lid,
            "i_stall",
            i_stall,
            Current,
            Some(format!(
                "operating point at stall, rails at their maximum{}",
                if supply > 0.0 {
                    format!(" ({})", format_si(supply, Voltage))
                } else {
                    String::new()
                }
            )),
        );
        let (i_cont, cont_note) = match lp.num("i_rated") {
            Some(i) if emf > 0.0 => (
                run_max.max(i.min(i_stall)),
                format!(
                    "running against its back-EMF {} (from `i_rated`)",
                    format_si(emf, Voltage)
                ),
            ),
            Some(i) => (i, "given `i_rated`".to_string()),
            None => (
                i_stall,
                "no `i_rated`: the stall current is used".to_string(),
            ),
        };
        a.facts.set(lid, "i_cont", i_cont, Current, Some(cont_note));
        // the switches that carry it: those conducting at least half its
        // current that sit on its own current path (a main terminal on a
        // switched node of the load, directly or through resistors); only
        // when none does (a topology with something else in series), any
        // switch conducting that much. Without the path test, every
        // channel of a shared gate net "carried" every channel's load.
        let carries = |ls: &solve::LocalSwitch| {
            point(ls, bs, Corner::Max)
                .is_some_and(|pt| pt.region != Region::Off && pt.i_d.abs() >= 0.5 * i_stall)
        };
        let (np, nm) = (e.t[0], e.t[1]);
        let mut on_path: Vec<usize> = Vec::new();
        for end in [np, nm] {
            if let Some(list) = node_comp(end).and_then(|k| by_comp.get(&k)) {
                on_path.extend(list.iter().copied());
            }
        }
        on_path.sort_unstable();
        on_path.dedup();
        let mut switches: Vec<PartId> = on_path
            .iter()
            .filter_map(|&i| sol.switches.get(i))
            .filter(|ls| carries(ls))
            .filter_map(|ls| grp.parts.get(ls.part as usize).copied())
            .collect();
        if switches.is_empty() {
            switches = sol
                .switches
                .iter()
                .filter(|ls| carries(ls))
                .filter_map(|ls| grp.parts.get(ls.part as usize).copied())
                .collect();
        }
        // diodes on its circuit that conduct while it is driven
        let mut reversed = Vec::new();
        let mut near: Vec<usize> = [np, nm]
            .iter()
            .filter_map(|n| match n {
                Nd::Var(v) => diodes_at.get(v),
                _ => None,
            })
            .flatten()
            .copied()
            .collect();
        near.sort_unstable();
        near.dedup();
        for (kd, d) in near
            .into_iter()
            .filter_map(|kd| nl.elems.get(kd).map(|d| (kd, d)))
        {
            if !matches!(d.dev, Dev::Diode(_)) || d.role != Role::Main {
                continue;
            }
            let Some(&dp) = grp.parts.get(d.part as usize) else {
                continue;
            };
            let dpart = c.part(dp);
            if !dpart.kind.is_diode() {
                continue;
            }
            let pins: Vec<Nd> = nl
                .elems_of(d.part as usize)
                .iter()
                .flat_map(|x| x.t.iter().copied())
                .collect();
            let switched = |n: Nd| (n == np || n == nm) && matches!(n, Nd::Var(_));
            if !pins.iter().any(|&n| switched(n)) {
                continue;
            }
            let mut worst = 0.0f64;
            for s in 0..sol.states.len() {
                if sol.is_reset(s) {
                    continue;
                }
                let Some(o) = sol.op(s, Corner::Max, Mode::Stall) else {
                    continue;
                };
                if newton::currents(nl, k, &o.x, &o.ex, None)[0].abs() > 0.1 * i_stall {
                    let id = newton::currents(nl, kd, &o.x, &o.ex, None)[0];
                    if id > 1e-3 {
                        worst = worst.max(id);
                    }
                }
            }
            if worst > 0.0 {
                reversed.push((dp, worst));
                a.facts.set(
                    dp,
                    "i_on",
                    worst,
                    Current,
                    Some(
                        "forward current while its load is driven: it conducts the wrong way"
                            .into(),
                    ),
                );
            }
        }
        let (f_pwm, duty_max) = switches
            .iter()
            .filter_map(|q| pwm_of.get(q).copied())
            .fold((0.0f64, 1.0f64), |acc, x| if x.0 > acc.0 { x } else { acc });
        a.facts.set(lid, "f_pwm", f_pwm, Frequency, None);
        if f_pwm > 0.0 && l > 0.0 {
            let d = duty_max.clamp(0.0, 1.0).min(0.5);
            a.facts.set(
                lid,
                "i_ripple",
                physics::ripple(supply, r, l, f_pwm, d),
                Current,
                Some(format!("peak-to-peak at duty {}", crate::units::percent(d))),
            );
            a.facts.set(
                lid,
                "i_mean",
                physics::pwm_mean(supply, r, duty_max, emf).max(0.0),
                Current,
                Some(format!(
                    "at duty {}, {}",
                    crate::units::percent(duty_max),
                    if emf > 0.0 {
                        format!("running (back-EMF {})", format_si(emf, Voltage))
                    } else {
                        "stalled".into()
                    }
                )),
            );
        }
        a.loads.push(LoadInfo {
            part: lid,
            group: gi,
            switches,
            i_stall,
            i_cont,
            reversed,
            f_pwm,
            duty_max,
        });
    }
}

/// The largest rail (nominal) a part's pins touch, else the board's.
fn supply_of(c: &Circuit, pid: PartId) -> f64 {
    let own = c
        .part(pid)
        .pins
        .iter()
        .filter_map(|p| c.net(p.net).fixed_max())
        .fold(0.0f64, |a, b| a.max(b.abs()));
    if own > 0.0 {
        own
    } else {
        c.fixed_nets
            .iter()
            .map(|&(_, v)| v.abs())
            .fold(0.0f64, f64::max)
    }
}

/// The parts that carried a switch's load current on after the switch let
/// go: those with at least a fifth of the load's charge that connect,
/// through unknown nodes and each other, to the load or the switch. A
/// diode across another channel's load (which the same command turned
/// off) carries that load's current and is not on this path.
fn freewheel_path<'r>(
    nl: &netlist::Netlist,
    r: &'r edges::EdgeResult,
    switch: u32,
    q_load: f64,
    is_load: &dyn Fn(u32) -> bool,
) -> Vec<&'r edges::PartEdge> {
    if q_load <= 0.0 {
        return Vec::new();
    }
    let candidates: Vec<&edges::PartEdge> = r
        .parts
        .iter()
        .filter(|x| x.part != switch && !is_load(x.part) && x.charge >= 0.2 * q_load)
        .collect();
    let var_nodes = |part: u32| -> Vec<Nd> {
        nl.elems_of(part as usize)
            .iter()
            .flat_map(|e| e.t.iter().copied())
            .filter(|n| matches!(n, Nd::Var(_)))
            .collect()
    };
    let mut by_node: std::collections::HashMap<Nd, Vec<usize>> = std::collections::HashMap::new();
    let nodes: Vec<Vec<Nd>> = candidates.iter().map(|x| var_nodes(x.part)).collect();
    for (i, ns) in nodes.iter().enumerate() {
        for &n in ns {
            by_node.entry(n).or_default().push(i);
        }
    }
    let mut start = var_nodes(switch);
    if let Some(lp) = r.load {
        start.extend(var_nodes(lp));
    }
    let mut seen_node: std::collections::HashSet<Nd> = std::collections::HashSet::new();
    let mut reached = vec![false; candidates.len()];
    let mut stack = start;
    while let Some(n) = stack.pop() {
        if !seen_node.insert(n) {
            continue;
        }
        for &i in by_node.get(&n).into_iter().flatten() {
            if !reached[i] {
                reached[i] = true;
                stack.extend(nodes[i].iter().copied());
            }
        }
    }
    candidates
        .into_iter()
        .zip(reached)
        .filter_map(|(x, ok)| ok.then_some(x))
        .collect()
}

fn read_edges(c: &Circuit, gi: usize, grp: &Group, sol: &GroupSolution, a: &mut GroupAcc) {
    let nl = &sol.nl;
    let nparts = nl.part_start.len().saturating_sub(1);
    let is_load: Vec<bool> = (0..nparts)
        .map(|p| {
            nl.elem_index(p, Role::Main)
                .is_some_and(|k| matches!(nl.elems[k].dev, Dev::Load { .. }))
        })
        .collect();
    let is_load = |p: u32| is_load.get(p as usize).copied().unwrap_or(false);
    // the energy stored in the loads, per starting state and mode
    let mut stored: std::collections::HashMap<(u32, Mode), f64> = std::collections::HashMap::new();
    for (ei, er) in sol.edges.iter().enumerate() {
        let Some(&q) = grp.parts.get(er.switch as usize) else {
            continue;
        };
        let r = &er.res;
        let load = r.load.and_then(|p| grp.parts.get(p as usize).copied());
        // stored energy and charge of the loads
        let e_load = *stored.entry((er.from, er.mode)).or_insert_with(|| {
            let Some(o) = sol.op(er.from as usize, Corner::Max, er.mode) else {
                return 0.0;
            };
            nl.elems
                .iter()
                .enumerate()
                .filter_map(|(k, e)| match e.dev {
                    Dev::Load { l, .. } => {
                        let i = newton::currents(nl, k, &o.x, &o.ex, None)[0];
                        Some(0.5 * l * i * i)
                    }
                    _ => None,
                })
                .sum()
        });
        // the charge the switch's own load carried on after the switch let
        // go (with no load of its own found, the group's largest)
        let q_load = if sol.op(er.from as usize, Corner::Max, er.mode).is_some() {
            let own = r
                .load
                .and_then(|lp| r.parts.iter().find(|x| x.part == lp))
                .map(|x| x.charge);
            own.unwrap_or_else(|| {
                r.parts
                    .iter()
                    .filter(|x| is_load(x.part))
                    .map(|x| x.charge)
                    .fold(0.0f64, f64::max)
            })
        } else {
            0.0
        };
        let on_path = freewheel_path(nl, r, er.switch, q_load, &is_load);
        let path: Vec<(PartId, f64)> = on_path
            .iter()
            .filter_map(|x| grp.parts.get(x.part as usize).map(|&p| (p, x.energy)))
            .collect();
        let rails: Vec<(NetId, f64)> = r
            .rail_energy
            .iter()
            .filter(|(_, en)| *en > 0.05 * e_load && e_load > 0.0)
            .filter_map(|&(j, en)| {
                let f = nl.fixed.get(j as usize)?;
                (f.net < c.nets.len()
                    && matches!(c.net(f.net).kind, crate::model::NetKind::Rail(_)))
                .then_some((f.net, en))
            })
            .collect();
        let avalanche = q_load > 0.0 && r.q_aval >= 0.2 * q_load;
        let t = TurnOff {
            switch: q,
            load,
            kind: er.kind,
            mode: er.mode,
            group: gi,
            edge: ei,
            i0: r.i0.abs(),
            il0: r.il0.abs(),
            v_peak: r.v_peak,
            t_off: r.t_off,
            t_decay: r.t_decay,
            e_off: r.e_off,
            e_aval: r.e_aval,
            e_load,
            path,
            rails,
            avalanche,
            failed: r.failed.is_some(),
        };
        let f = &mut a.facts;
        if let (Some(l), Some(e)) = (load, t.rails.iter().map(|x| x.1).reduce(f64::max))
            && f.value(l, "e_returned").is_none_or(|v| e > v)
        {
            f.set(
                l,
                "e_returned",
                e,
                Energy,
                Some("energy it returns into a supply rail at a turn-off".into()),
            );
        }
        let how = match er.kind {
            EdgeKind::Toggle => "simulated turn-off",
            EdgeKind::Reset => "simulated reset while it conducts",
        };
        if f.value(q, "v_peak").is_none_or(|v| t.v_peak > v) {
            f.set(
                q,
                "v_peak",
                t.v_peak,
                Voltage,
                Some(format!("{how}, motors stalled, rails at their maximum")),
            );
        }
        if er.mode == Mode::Stall && er.kind == EdgeKind::Toggle {
            if let Some(td) = t.t_decay {
                f.set(
                    q,
                    "t_decay",
                    td,
                    Time,
                    Some("load current to 10 % of its start after the turn-off".into()),
                );
            }
            let e_cl: f64 = r
                .parts
                .iter()
                .filter(|x| {
                    grp.parts
                        .get(x.part as usize)
                        .is_some_and(|&p| matches!(c.part(p).kind, Kind::Zener | Kind::Tvs))
                })
                .map(|x| x.energy)
                .sum::<f64>()
                + r.e_aval;
            f.set(q, "e_clamp", e_cl, Energy, Some("energy into clamp parts and the switch's own breakdown at one turn-off, stalled".into()));
        }
        let last_mode = if sol.has_run { Mode::Run } else { Mode::Stall };
        if er.kind == EdgeKind::Toggle && er.mode == last_mode {
            if let Some(x) = r.t_off {
                f.set(q, "t_off", x, Time, Some("gate command to channel current below 10 %, simulated with the gate network".into()));
            }
            if let Some(x) = r.t_on {
                f.set(
                    q,
                    "t_on",
                    x,
                    Time,
                    Some("gate command to channel current at 90 %, simulated".into()),
                );
            }
            f.set(
                q,
                "e_off",
                r.e_off,
                Energy,
                Some("∫V_DS·I_D dt over the simulated turn-off".into()),
            );
            f.set(
                q,
                "e_on",
                r.e_on,
                Energy,
                Some("∫V_DS·I_D dt over the simulated turn-on, less e_rr".into()),
            );
            f.set(
                q,
                "e_rr",
                r.e_rr,
                Energy,
                Some(
                    "∫V_DS·(I_D − I_final) dt: the freewheel path's recovery current in the switch"
                        .into(),
                ),
            );
            f.set(
                q,
                "e_aval",
                r.e_aval,
                Energy,
                Some("energy in the switch's own breakdown at turn-off".into()),
            );
        }
        // clamp parts and freewheel diodes
        for x in &on_path {
            let Some(&dp) = grp.parts.get(x.part as usize) else {
                continue;
            };
            let kind = c.part(dp).kind;
            if !kind.is_diode() || x.charge < 0.2 * q_load.max(1e-30) {
                continue;
            }
            let fsw = a
                .switches
                .iter()
                .find(|(p, _)| *p == q)
                .map(|(_, i)| (i.f_pwm, i.duty_min))
                .unwrap_or((0.0, 1.0));
            if matches!(kind, Kind::Zener | Kind::Tvs) && er.kind == EdgeKind::Toggle {
                if er.mode == Mode::Stall && f.value(dp, "e_clamp").is_none_or(|v| x.energy > v) {
                    f.set(
                        dp,
                        "e_clamp",
                        x.energy,
                        Energy,
                        Some(
                            "absorbed at one turn-off of the switch it clamps, the load stalled"
                                .into(),
                        ),
                    );
                }
                if er.mode == last_mode && fsw.0 > 0.0 {
                    let pw = x.energy * fsw.0;
                    if f.value(dp, "p_clamp").is_none_or(|v| pw > v) {
                        f.set(
                            dp,
                            "p_clamp",
                            pw,
                            Power,
                            Some(format!("e_clamp·f_pwm at {}", format_si(fsw.0, Frequency))),
                        );
                    }
                }
            }
            if er.kind == EdgeKind::Toggle {
                if er.mode == last_mode {
                    let prev = f.value(dp, "i_fw").unwrap_or(0.0);
                    if x.i_peak > prev {
                        f.set(
                            dp,
                            "i_fw",
                            x.i_peak,
                            Current,
                            Some("current it takes over when its switch turns off".into()),
                        );
                        let avg = if fsw.0 > 0.0 {
                            x.i_peak * (1.0 - fsw.1)
                        } else {
                            x.i_peak
                        };
                        f.set(
                            dp,
                            "i_avg",
                            avg,
                            Current,
                            Some(if fsw.0 > 0.0 {
                                format!(
                                    "i_fw over the off-time at the smallest duty {}",
                                    crate::units::percent(fsw.1)
                                )
                            } else {
                                "i_fw: a static drive can leave the load freewheeling".to_string()
                            }),
                        );
                    }
                    let fp = f.value(dp, "f_pwm").unwrap_or(0.0).max(fsw.0);
                    f.set(dp, "f_pwm", fp, Frequency, None);
                    if fp > 0.0 {
                        f.set(
                            dp,
                            "trr_limit",
                            0.01 / fp,
                            Time,
                            Some("1 % of the PWM period [rule of thumb]".into()),
                        );
                    }
                }
                if er.mode == Mode::Stall {
                    let prev = f.value(dp, "i_fw_peak").unwrap_or(0.0);
                    f.set(
                        dp,
                        "i_fw_peak",
                        prev.max(x.i_peak),
                        Current,
                        Some("peak at a turn-off with the load stalled".into()),
                    );
                }
            }
        }
        for &(dpl, irr) in &r.i_rr {
            if let Some(&dp) = grp.parts.get(dpl as usize)
                && c.part(dp).kind.is_diode()
                && irr > 1e-3
                && f.value(dp, "i_rr").is_none_or(|v| irr > v)
            {
                f.set(
                    dp,
                    "i_rr",
                    irr,
                    Current,
                    Some("peak reverse-recovery current when its switch turns on".into()),
                );
            }
        }
        a.turnoffs.push(t);
    }
}

fn read_legs(c: &Circuit, grp: &Group, sol: &GroupSolution, a: &mut GroupAcc) {
    let nl = &sol.nl;
    // the main terminals of each switch element
    let sws: Vec<(usize, PartId, Nd, Nd)> = sol
        .switches
        .iter()
        .filter_map(|ls| {
            let k = nl.elem_index(ls.part as usize, Role::Main)?;
            let e = &nl.elems[k];
            let (m, r) = (e.t.first().copied()?, e.t.last().copied()?);
            // a collector behind its series resistance: take the pin's node
            let m = match nl.elem_index(ls.part as usize, Role::SeriesR) {
                Some(ks) if nl.elems[ks].t.get(1) == Some(&m) => nl.elems[ks].t[0],
                _ => m,
            };
            Some((ls.part as usize, *grp.parts.get(ls.part as usize)?, m, r))
        })
        .collect();
    let fixed_v = |n: Nd| match n {
        Nd::Fix(j) => nl.fixed.get(j as usize).map(|f| f.max),
        Nd::Var(_) => None,
    };
    for &(xl, x, xm, xr) in &sws {
        for &(yl, y, ym, yr) in &sws {
            if x == y {
                continue;
            }
            let ends = |a1: Nd, a2: Nd| match (fixed_v(a1), fixed_v(a2)) {
                (Some(v), None) => Some((a1, a2, v)),
                (None, Some(v)) => Some((a2, a1, v)),
                _ => None,
            };
            let (Some((xf, xmid, vx)), Some((yf, ymid, vy))) = (ends(xm, xr), ends(ym, yr)) else {
                continue;
            };
            if xmid != ymid || vx <= vy {
                continue;
            }
            let Nd::Var(mid_i) = xmid else { continue };
            let Some(&mid) = grp.nets.get(mid_i as usize) else {
                continue;
            };
            // current flowing down through both, in some high/low state
            let down = |part: usize, top: Nd, o: &op::OpPoint| -> f64 {
                nl.elems_of(part)
                    .iter()
                    .enumerate()
                    .filter(|(_, e)| {
                        matches!(e.role, Role::Main | Role::Body | Role::SeriesR)
                            && !matches!(e.dev, Dev::Res { .. })
                    })
                    .map(|(i, e)| {
                        let k = nl.part_start[part] as usize + i;
                        let cur = newton::currents(nl, k, &o.x, &o.ex, None);
                        e.t.iter()
                            .zip(cur.iter())
                            .filter(|(n, _)| **n == top)
                            .map(|(_, c)| *c)
                            .sum::<f64>()
                    })
                    .sum()
            };
            let mut both = None;
            for s in 0..sol.states.len() {
                if sol.is_reset(s) {
                    continue;
                }
                let Some(o) = sol.op(s, Corner::Max, Mode::Stall) else {
                    continue;
                };
                let i_hi = down(xl, xf, o);
                let i_lo = down(yl, ymid, o);
                let through = i_hi.min(i_lo);
                if through > 1e-3 && both.as_ref().is_none_or(|(_, b)| through > *b) {
                    both = Some((s, through));
                }
            }
            let _ = yf;
            a.legs.push(Leg {
                high: x,
                low: y,
                mid,
                both_on: both.map(|(s, i)| {
                    (
                        grp.pins
                            .iter()
                            .cloned()
                            .zip(sol.states[s].iter().copied())
                            .collect(),
                        i,
                    )
                }),
            });
        }
    }
    let _ = c;
}

fn read_diodes(c: &Circuit, grp: &Group, sol: &GroupSolution, a: &mut GroupAcc) {
    let nl = &sol.nl;
    for (li, &d) in grp.parts.iter().enumerate() {
        let p = c.part(d);
        if !p.kind.is_diode() {
            continue;
        }
        let es = nl.elems_of(li);
        let (Some(an), Some(kn)) = (
            es.first().and_then(|e| e.t.first().copied()),
            es.last().and_then(|e| e.t.get(1).copied()),
        ) else {
            continue;
        };
        let mut vrev: Option<f64> = None;
        for ops in &sol.ops {
            let o = &ops[solve::slot(Corner::Max, Mode::Stall)];
            if o.is_floating(an) || o.is_floating(kn) {
                continue;
            }
            let v = o.v(kn) - o.v(an);
            vrev = Some(vrev.map_or(v, |m: f64| m.max(v)));
        }
        match vrev {
            Some(v) => a.facts.set(
                d,
                "v_rev",
                v.max(0.0),
                Voltage,
                Some(
                    "largest DC reverse voltage over every pin state, rails at their maximum"
                        .into(),
                ),
            ),
            None => a
                .facts
                .missing(d, "v_rev", "its nets have no defined voltage in any state"),
        }
    }
}

fn read_resistors(c: &Circuit, grp: &Group, sol: &GroupSolution, a: &mut GroupAcc) {
    let nl = &sol.nl;
    for (li, &r) in grp.parts.iter().enumerate() {
        if c.part(r).kind != Kind::Resistor {
            continue;
        }
        let Some(k) = nl.elem_index(li, Role::Main) else {
            continue;
        };
        let mut worst: Option<(usize, f64)> = None;
        for s in 0..sol.states.len() {
            if let Some(o) = sol.op(s, Corner::Max, Mode::Run) {
                let e = &nl.elems[k];
                let i = newton::currents(nl, k, &o.x, &o.ex, None)[0];
                let pw = i * (o.v(e.t[0]) - o.v(e.t[1]));
                if worst.is_none_or(|(_, w)| pw > w) {
                    worst = Some((s, pw));
                }
            }
        }
        if let Some((_, pw)) = worst {
            a.facts.set(
                r,
                "p_loss",
                pw.max(0.0),
                Power,
                Some("largest continuous dissipation over every pin state, motors running, rails at their maximum".into()),
            );
        }
    }
}

fn read_driver_inputs(
    c: &Circuit,
    grp: &Group,
    sol: &GroupSolution,
    links: &ResistorLinks,
    a: &mut GroupAcc,
) {
    let nl = &sol.nl;
    let Some(reset) = sol
        .op(0, Corner::Max, Mode::Stall)
        .filter(|_| sol.is_reset(0))
    else {
        return;
    };
    for e in &nl.elems {
        let (Dev::Drv { .. }, Role::Out(k)) = (&e.dev, e.role) else {
            continue;
        };
        if !reset.is_floating(e.t[1]) {
            continue;
        }
        let Some(&drv) = grp.parts.get(e.part as usize) else {
            continue;
        };
        let dp = c.part(drv);
        let pin = if dp.pins.get(k as usize).is_some_and(|p| p.name == "outb") {
            "inb"
        } else {
            "in"
        };
        // switches downstream: those whose control node the output reaches
        let out = e.t[0];
        let switches: Vec<PartId> = sol
            .switches
            .iter()
            .filter(|ls| {
                nl.elem_index(ls.part as usize, Role::Main)
                    .and_then(|km| nl.elems[km].t.get(1).copied())
                    .is_some_and(|g| links.linked(out, g))
            })
            .filter_map(|ls| grp.parts.get(ls.part as usize).copied())
            .collect();
        a.floating_inputs.push(FloatingInput {
            driver: drv,
            pin,
            switches,
            controllers: grp.pins.clone(),
        });
    }
}

/// Current into a controller pin's protection diodes, over every state.
fn read_injections(c: &Circuit, grp: &Group, sol: &GroupSolution, a: &mut GroupAcc) {
    let nl = &sol.nl;
    for (k, e) in nl.elems.iter().enumerate() {
        let (above, pk) = match e.role {
            Role::EsdUp(i) => (true, i),
            Role::EsdDown(i) => (false, i),
            _ => continue,
        };
        let Some(&pid) = grp.parts.get(e.part as usize) else {
            continue;
        };
        let Some(name) = c
            .part(pid)
            .pins
            .get(pk as usize)
            .map(|p| p.name.to_string())
        else {
            continue;
        };
        // the pin's node: the far end of the diode's series resistance
        let rs = nl
            .elems_of(e.part as usize)
            .iter()
            .find(|x| x.role == Role::SeriesR && x.t.get(1) == e.t.first());
        let (pin_node, rail_node) = match (above, rs) {
            (true, Some(r)) => (r.t[0], e.t[1]),
            (true, None) => (e.t[0], e.t[1]),
            (false, _) => (
                e.t[1],
                nl.elems_of(e.part as usize)
                    .iter()
                    .find(|x| x.role == Role::SeriesR && x.t.get(1) == e.t.first())
                    .map_or(e.t[0], |r| r.t[0]),
            ),
        };
        let mut worst: Option<PinInjection> = None;
        for (s, ops) in sol.ops.iter().enumerate() {
            for o in ops {
                let i = newton::currents(nl, k, &o.x, &o.ex, None)[0];
                if i > 10e-6 && worst.as_ref().is_none_or(|w| i > w.current) {
                    worst = Some(PinInjection {
                        pin: (pid, name.clone()),
                        above,
                        current: i,
                        v_pin: o.v(pin_node),
                        v_rail: o.v(rail_node),
                        state: s,
                    });
                }
            }
        }
        if let Some(w) = &worst
            && a.facts.value(pid, "i_inject").is_none_or(|v| w.current > v)
        {
            a.facts.set(
                pid,
                "i_inject",
                w.current,
                Current,
                Some("largest current into a pin's protection diodes over every state".into()),
            );
        }
        a.injections.extend(worst);
    }
}

/// Nodes joined through resistors only (a gate resistor after a driver's
/// output), found once per group: the unknown nodes fall into components
/// joined by resistors; a fixed node is linked to the components a
/// resistor touches. Queries are then constant time, where a search per
/// query made a gate net shared by many channels cost quadratic time.
struct ResistorLinks {
    /// Per unknown node: its component.
    comp: Vec<u32>,
    /// Per fixed node: the components a resistor joins it to (sorted).
    fixed: Vec<Vec<u32>>,
    /// Fixed pairs joined by a resistor directly.
    fixed_pairs: Vec<(u32, u32)>,
    /// Per component: up to two parts whose control node is in it or
    /// joined to it (two are enough to tell "another part's").
    controls: Vec<[Option<u32>; 2]>,
}

impl ResistorLinks {
    fn new(nl: &netlist::Netlist) -> ResistorLinks {
        fn root(up: &mut [u32], mut i: u32) -> u32 {
            while up[i as usize] != i {
                let next = up[up[i as usize] as usize];
                up[i as usize] = next;
                i = next;
            }
            i
        }
        let mut up: Vec<u32> = (0..nl.n as u32).collect();
        let resistors = nl
            .elems
            .iter()
            .filter(|e| matches!(e.dev, Dev::Res { .. }) && e.role == Role::Main && e.t.len() == 2);
        let mut touching: Vec<(u32, u32)> = Vec::new();
        let mut fixed_pairs = Vec::new();
        for e in resistors {
            match (e.t[0], e.t[1]) {
                (Nd::Var(x), Nd::Var(y)) if (x as usize) < up.len() && (y as usize) < up.len() => {
                    let (rx, ry) = (root(&mut up, x), root(&mut up, y));
                    if rx != ry {
                        up[rx.max(ry) as usize] = rx.min(ry);
                    }
                }
                (Nd::Var(v), Nd::Fix(f)) | (Nd::Fix(f), Nd::Var(v)) => touching.push((f, v)),
                (Nd::Fix(f), Nd::Fix(g)) => fixed_pairs.push((f.min(g), f.max(g))),
                _ => {}
            }
        }
        let comp: Vec<u32> = (0..up.len() as u32).map(|i| root(&mut up, i)).collect();
        let mut fixed: Vec<Vec<u32>> = vec![Vec::new(); nl.fixed.len()];
        for (f, v) in touching {
            if let (Some(list), Some(&c)) = (fixed.get_mut(f as usize), comp.get(v as usize)) {
                list.push(c);
            }
        }
        for list in &mut fixed {
            list.sort_unstable();
            list.dedup();
        }
        let mut links = ResistorLinks {
            controls: vec![[None; 2]; comp.len()],
            comp,
            fixed,
            fixed_pairs,
        };
        // every switch's control node and every driver's input
        for e in &nl.elems {
            let g = match (&e.dev, e.role) {
                (Dev::Mos(_) | Dev::Bjt(_), Role::Main) | (Dev::Drv { .. }, _) => {
                    e.t.get(1).copied()
                }
                _ => None,
            };
            let comps: Vec<u32> = match g {
                Some(Nd::Var(v)) => links.comp.get(v as usize).copied().into_iter().collect(),
                Some(Nd::Fix(f)) => links.fixed.get(f as usize).cloned().unwrap_or_default(),
                None => Vec::new(),
            };
            for c in comps {
                if let Some(slot) = links.controls.get_mut(c as usize) {
                    match *slot {
                        [None, _] => slot[0] = Some(e.part),
                        [Some(p), None] if p != e.part => slot[1] = Some(e.part),
                        _ => {}
                    }
                }
            }
        }
        links
    }

    /// `a` and `b` are one node or joined through resistors only.
    fn linked(&self, a: Nd, b: Nd) -> bool {
        if a == b {
            return true;
        }
        let comp = |n: u32| self.comp.get(n as usize).copied();
        let near = |f: u32, c: Option<u32>| {
            c.is_some_and(|c| {
                self.fixed
                    .get(f as usize)
                    .is_some_and(|l| l.binary_search(&c).is_ok())
            })
        };
        match (a, b) {
            (Nd::Var(x), Nd::Var(y)) => comp(x).is_some() && comp(x) == comp(y),
            (Nd::Var(v), Nd::Fix(f)) | (Nd::Fix(f), Nd::Var(v)) => near(f, comp(v)),
            (Nd::Fix(f), Nd::Fix(g)) => {
                self.fixed_pairs.contains(&(f.min(g), f.max(g)))
                    || self
                        .fixed
                        .get(f as usize)
                        .is_some_and(|l| l.iter().any(|&c| near(g, Some(c))))
            }
        }
    }

    /// An unknown node joined to the control node of a part other than
    /// `part`.
    fn controls_other(&self, n: Nd, part: u32) -> bool {
        let Nd::Var(v) = n else {
            return false;
        };
        self.comp
            .get(v as usize)
            .and_then(|&c| self.controls.get(c as usize))
            .is_some_and(|s| s.iter().flatten().any(|&p| p != part))
    }
}

fn rail_shorts(c: &Circuit, a: &mut Analysis) {
    for (pid, p) in c.parts.iter().enumerate() {
        let fixed = |pin: &str| p.net_of(pin).and_then(|n| c.net(n).fixed_max());
        let how = match p.kind {
            Kind::Diode | Kind::Zener | Kind::Tvs => match (fixed("a"), fixed("k")) {
                (Some(va), Some(vk)) => {
                    let (d, _) = devices::Diode::fit(p);
                    // a conducting junction: more than 1 mA at the rails' voltage
                    let v = va - vk;
                    let i = d.eval(v).0;
                    if v > 0.0 && i > 1e-3 {
                        Some(format!("forward-biased by {}", format_si(v, Voltage)))
                    } else if v < 0.0 && i < -1e-3 {
                        Some(format!("driven {} into breakdown", format_si(-v, Voltage)))
                    } else {
                        None
                    }
                }
                _ => None,
            },
            Kind::Resistor if p.pins.iter().all(|x| c.net(x.net).is_fixed()) => {
                // a resistor between two rails: ΔV²/R at their extremes
                let (a1, b1) = (p.net_of("1"), p.net_of("2"));
                if let (Some(n1), Some(n2), Some(r)) = (a1, b1, p.num("value")) {
                    let (h1, l1) = (
                        c.net(n1).fixed_max().unwrap_or(0.0),
                        c.net(n1).fixed_min().unwrap_or(0.0),
                    );
                    let (h2, l2) = (
                        c.net(n2).fixed_max().unwrap_or(0.0),
                        c.net(n2).fixed_min().unwrap_or(0.0),
                    );
                    let dv = (h1 - l2).abs().max((h2 - l1).abs());
                    a.facts.set(
                        pid,
                        "p_loss",
                        dv * dv / r.max(1e-6),
                        Power,
                        Some("ΔV²/R between its rails at their extremes".into()),
                    );
                }
                match (fixed("1"), fixed("2"), p.num("value")) {
                    (Some(x), Some(y), Some(r)) if (x - y).abs() > 0.0 && r < 0.1 => Some(format!(
                        "{} across {}",
                        format_si(r, Resistance),
                        format_si((x - y).abs(), Voltage)
                    )),
                    _ => None,
                }
            }
            Kind::Resistor => match (fixed("1"), fixed("2"), p.num("value")) {
                (Some(x), Some(y), Some(r)) if (x - y).abs() > 0.0 && r < 0.1 => Some(format!(
                    "{} across {}",
                    format_si(r, Resistance),
                    format_si((x - y).abs(), Voltage)
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

/// The largest voltage across every capacitor, and the rise of a rail into
/// which a simulated turn-off returns a load's energy: from `V` to
/// `sqrt(V² + 2E/C)`, the energy balance of the rail's capacitance `C`.
fn capacitors(c: &Circuit, a: &mut Analysis) {
    let mut returned: HashMap<NetId, f64> = HashMap::default();
    for t in &a.turnoffs {
        for &(net, e) in &t.rails {
            let slot = returned.entry(net).or_insert(0.0);
            *slot = slot.max(e);
        }
    }
    let cap_on = |net: NetId| -> f64 {
        c.net(net)
            .conns
            .iter()
            .filter_map(|&(q, _)| {
                let p = c.part(q);
                (p.kind == Kind::Capacitor && p.pins.iter().all(|x| c.net(x.net).is_fixed()))
                    .then(|| p.num("value"))
                    .flatten()
            })
            .sum()
    };
    for (i, p) in c.parts.iter().enumerate() {
        if p.kind != Kind::Capacitor {
            continue;
        }
        let (Some(n1), Some(n2)) = (p.net_of("1"), p.net_of("2")) else {
            continue;
        };
        let hi = |n: usize| a.net_vmax.get(n).copied().flatten().unwrap_or(0.0);
        let lo = |n: usize| a.net_vmin.get(n).copied().flatten().unwrap_or(0.0);
        let v = (hi(n1) - lo(n2)).abs().max((hi(n2) - lo(n1)).abs());
        let mut rise = 0.0f64;
        for n in [n1, n2] {
            if let Some(&e) = returned.get(&n) {
                let cap = cap_on(n);
                if cap > 0.0 {
                    let v0 = hi(n).abs();
                    rise = rise.max((v0 * v0 + 2.0 * e / cap).sqrt() - v0);
                }
            }
        }
        if rise > 0.0 {
            a.facts.set(
                i,
                "v_rise",
                rise,
                Voltage,
                Some(
                    "its rail's rise when a turn-off returns a load's energy: sqrt(V² + 2E/C) − V"
                        .into(),
                ),
            );
        }
        a.facts.set(
            i,
            "v_across",
            v + rise,
            Voltage,
            Some(
                "largest voltage across it over every state and corner, with its rail's rise"
                    .into(),
            ),
        );
    }
}

/// Losses and junction temperature: `P = P_cond(Tj) + (e_on + e_off +
/// e_rr + e_aval)·f_pwm`, iterated with the on-resistance at `Tj`
/// (Erickson & Maksimović, ch. 4, for the split into conduction and
/// switching loss). Conduction: `V_DS·I_D·D` at the running operating
/// point, scaled by `R(Tj)/R(25 °C)` when the switch is fully on (a linear
/// switch dissipates `V_DS·I_D` whatever its temperature).
fn thermal(c: &Circuit, s: &Settings, a: &mut Analysis) {
    let ta = s.ambient;
    let mut edges: HashMap<PartId, (f64, f64, f64, f64)> = HashMap::default();
    for t in &a.turnoffs {
        let sol = &a.solutions[t.group];
        let last = if sol.has_run { Mode::Run } else { Mode::Stall };
        if t.kind == EdgeKind::Toggle
            && t.mode == last
            && let Some(er) = sol.edges.get(t.edge)
        {
            edges.insert(
                t.switch,
                (er.res.e_on, er.res.e_off, er.res.e_rr, er.res.e_aval),
            );
        }
    }
    for (pid, p) in c.parts.iter().enumerate() {
        if !p.kind.is_switch() {
            continue;
        }
        let Some(info) = a.switches.get(&pid) else {
            continue;
        };
        let sol = &a.solutions[info.group];
        let Some(ls) = a
            .groups
            .get(info.group)
            .and_then(|g| g.parts.iter().position(|&x| x == pid))
            .and_then(|li| sol.switch(li as u32))
        else {
            continue;
        };
        let Some(rp) = ls.run_point.filter(|rp| rp.i_d.abs() >= solve::I_LOAD_MIN) else {
            a.facts
                .missing(pid, "p_loss", "it carries no load current in any state");
            a.facts
                .missing(pid, "tj", "it carries no load current in any state");
            continue;
        };
        let d = if info.f_pwm > 0.0 { info.duty_max } else { 1.0 };
        let p_on = (rp.v_ds * rp.i_d).abs() * d;
        let linear = rp.region == Region::Linear;
        let (e_on, e_off, e_rr, e_aval) = edges.get(&pid).copied().unwrap_or_default();
        let f = info.f_pwm;
        // with no gate charge given, the data sheet's edge times stand in
        let p_sw = if p.kind.is_mos() && p.num("qg").is_none() {
            match (p.num("tr"), p.num("tf")) {
                (Some(tr), Some(tf)) => {
                    0.5 * rp.v_ds.abs().max(supply_of(c, pid)) * rp.i_d.abs() * (tr + tf) * f
                }
                _ => (e_on + e_off + e_rr) * f,
            }
        } else {
            (e_on + e_off + e_rr) * f
        } + e_aval * f;
        let p_of = move |tj: f64| -> f64 {
            if linear || !p.kind.is_mos() {
                p_on + p_sw
            } else {
                p_on * devices::mosfet::r_at(1.0, tj) + p_sw
            }
        };
        let note_cause = if e_aval * f > 0.5 * p_of(ta) {
            "; mostly avalanche energy at every edge"
        } else if linear {
            "; it conducts in its linear region"
        } else {
            ""
        };
        let Some(rth) = p.num("rth_ja") else {
            a.facts.set(
                pid,
                "p_loss",
                p_of(ta),
                Power,
                Some(format!(
                    "at {} (no `rth_ja`){note_cause}",
                    format_si(ta, Temperature)
                )),
            );
            a.facts
                .missing(pid, "tj", format!("`{}` has no `rth_ja`", p.reference));
            continue;
        };
        if f > 0.0 {
            a.facts.set(
                pid,
                "p_sw",
                p_sw,
                Power,
                Some("(e_on + e_off + e_rr + e_aval)·f_pwm".into()),
            );
            a.facts.set(
                pid,
                "p_rr",
                e_rr * f,
                Power,
                Some("e_rr·f_pwm: the freewheel path's recovery at every turn-on".into()),
            );
            a.facts.set(
                pid,
                "p_aval",
                e_aval * f,
                Power,
                Some("e_aval·f_pwm: its own breakdown at every turn-off".into()),
            );
        }
        let limit = p.num("tj_max").unwrap_or(150.0) + 300.0;
        match physics::junction_temperature(ta, rth, limit, p_of) {
            physics::Thermal::Converged { tj, p: pw } => {
                a.facts.set(
                    pid,
                    "p_loss",
                    pw,
                    Power,
                    Some(format!("at Tj {}{note_cause}", format_si(tj, Temperature))),
                );
                a.facts.set(
                    pid,
                    "tj",
                    tj,
                    Temperature,
                    Some(format!("ambient {} + P·Rth", format_si(ta, Temperature))),
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
    // freewheel diodes: conduction over the off-time and recovery
    for (d, p) in c.parts.iter().enumerate() {
        if !p.kind.is_diode() {
            continue;
        }
        let Some(i_avg) = a.facts.value(d, "i_avg") else {
            continue;
        };
        let (model, _) = devices::Diode::fit(p);
        let i_fw = a.facts.value(d, "i_fw").unwrap_or(i_avg);
        let vf = model.v_at(i_fw.max(1e-9));
        a.facts.set(
            d,
            "p_loss",
            vf * i_avg,
            Power,
            Some(format!(
                "V_F({}) = {} × i_avg",
                format_si(i_fw, Current),
                format_si(vf, Voltage)
            )),
        );
    }
}

pub mod present;

//! A control group as the simulator sees it: numbered nodes and device
//! elements, each with the matrix positions it stamps.
//!
//! Nodes are the group's nets (in the group's order) and then the
//! internal nodes of series resistances. Rails and grounds are fixed
//! nodes: ideal sources whose voltage depends on the corner.

use super::devices::{Bjt, Diode, Mosfet, sources};
use super::groups::Group;
use super::mna::{NONE, Pattern};
use crate::model::{Circuit, Kind, NetId, NetKind, PartId};

/// A node: an unknown, or a fixed net (index into `Netlist::fixed`).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Nd {
    Var(u32),
    Fix(u32),
}

impl Nd {
    pub fn var(self) -> Option<usize> {
        match self {
            Nd::Var(i) => Some(i as usize),
            Nd::Fix(_) => None,
        }
    }
}

/// A rail or ground touching the group, with its voltage at each corner.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FixedNode {
    pub net: NetId,
    pub max: f64,
    pub min: f64,
    pub nom: f64,
}

/// Rails at their maximum (stress) or minimum (drive), or nominal.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Corner {
    Max,
    Min,
}

impl Corner {
    pub const BOTH: [Corner; 2] = [Corner::Max, Corner::Min];
    pub fn name(self) -> &'static str {
        match self {
            Corner::Max => "max",
            Corner::Min => "min",
        }
    }
}

impl FixedNode {
    pub fn at(&self, c: Corner) -> f64 {
        match c {
            Corner::Max => self.max,
            Corner::Min => self.min,
        }
    }
}

#[derive(Clone, Debug, PartialEq)]
pub enum Dev {
    Res {
        g: f64,
    },
    Cap {
        c: f64,
    },
    /// Winding `r` in series with `l` and a back-EMF (`emf`: its running
    /// magnitude; the operating point sets the sign and whether it is on).
    Load {
        r: f64,
        l: f64,
        emf: f64,
    },
    /// A junction (the series resistance is a separate `Res`).
    Diode(Diode),
    Mos(Mosfet),
    /// The intrinsic transistor (collector resistance separate).
    Bjt(Bjt),
    /// A controller pin: Thevenin source `level` behind `r` from the
    /// reference terminal; `pin` indexes the group's pins.
    Pin {
        pin: u32,
        level_max: f64,
        level_min: f64,
        r: f64,
    },
    /// A gate-driver output: `vgnd + (vdd − vgnd)·f(v_in)` behind `r`.
    Drv {
        vth: f64,
        r: f64,
        invert: bool,
    },
}

/// What an element is to its part.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Role {
    Main,
    SeriesR,
    Body,
    Avalanche,
    Cgs,
    Cgd,
    Cds,
    /// A controller pin or a driver output (index within the part's pins).
    Out(u16),
    /// A controller pin's protection diode to its supply, to its ground.
    EsdUp(u16),
    EsdDown(u16),
}

#[derive(Clone, Debug, PartialEq)]
pub struct Elem {
    pub dev: Dev,
    /// Terminals: two-terminal elements `[a, b]`; MOSFET `[d, g, s]`;
    /// bipolar `[c, b, e]`; pin `[out, ref]`; driver `[out, in, vdd, gnd]`.
    pub t: Vec<Nd>,
    /// Local index of the part (into `Group::parts`).
    pub part: u32,
    pub role: Role,
    /// Matrix positions `t[i]`×`t[j]` at `h[i * t.len() + j]` (`NONE` for a
    /// fixed row or column).
    pub h: Vec<u32>,
}

/// A group ready to solve.
#[derive(Clone, Debug)]
pub struct Netlist {
    /// Unknowns: the group's nets, then internal nodes.
    pub n: usize,
    pub n_nets: usize,
    pub fixed: Vec<FixedNode>,
    pub elems: Vec<Elem>,
    /// Elements of local part `k`: `elems[part_start[k]..part_start[k+1]]`.
    pub part_start: Vec<u32>,
    pub pattern: Pattern,
}

impl Netlist {
    pub fn elems_of(&self, part: usize) -> &[Elem] {
        let (a, b) = (
            self.part_start.get(part).copied().unwrap_or(0) as usize,
            self.part_start.get(part + 1).copied().unwrap_or(0) as usize,
        );
        self.elems.get(a..b).unwrap_or(&[])
    }

    pub fn elem_index(&self, part: usize, role: Role) -> Option<usize> {
        let a = *self.part_start.get(part)? as usize;
        self.elems_of(part)
            .iter()
            .position(|e| e.role == role)
            .map(|i| a + i)
    }

    /// The fixed voltages at a corner.
    pub fn fixed_at(&self, c: Corner) -> Vec<f64> {
        self.fixed.iter().map(|f| f.at(c)).collect()
    }
}

struct Builder<'a> {
    c: &'a Circuit,
    grp: &'a Group,
    local_net: crate::fasthash::FastMap<NetId, u32>,
    fixed: Vec<FixedNode>,
    fixed_of: crate::fasthash::FastMap<NetId, u32>,
    n: u32,
    elems: Vec<Elem>,
}

impl Builder<'_> {
    fn node(&mut self, net: NetId) -> Nd {
        if let Some(&i) = self.local_net.get(&net) {
            return Nd::Var(i);
        }
        if let Some(&i) = self.fixed_of.get(&net) {
            return Nd::Fix(i);
        }
        let n = self.c.net(net);
        let (max, min, nom) = match n.kind {
            NetKind::Rail(r) => (r.max, r.min, r.nominal),
            _ => (0.0, 0.0, 0.0),
        };
        let i = self.fixed.len() as u32;
        self.fixed.push(FixedNode { net, max, min, nom });
        self.fixed_of.insert(net, i);
        Nd::Fix(i)
    }

    fn pin(&mut self, pid: PartId, name: &str) -> Option<Nd> {
        let net = self.c.part(pid).net_of(name)?;
        Some(self.node(net))
    }

    fn internal(&mut self) -> Nd {
        self.n += 1;
        Nd::Var(self.n - 1)
    }

    fn push(&mut self, dev: Dev, t: Vec<Nd>, part: u32, role: Role) {
        self.elems.push(Elem {
            dev,
            t,
            part,
            role,
            h: Vec::new(),
        });
    }

    /// A diode with its series resistance: `a → (Rs) → junction → k`.
    fn diode(&mut self, d: Diode, a: Nd, k: Nd, part: u32, role: Role) {
        if d.rs > 0.0 {
            let ai = self.internal();
            self.push(Dev::Res { g: 1.0 / d.rs }, vec![a, ai], part, Role::SeriesR);
            self.push(Dev::Diode(d), vec![ai, k], part, role);
        } else {
            self.push(Dev::Diode(d), vec![a, k], part, role);
        }
    }

    fn part(&mut self, li: u32, pid: PartId) {
        let c = self.c;
        let p = c.part(pid);
        match p.kind {
            Kind::Resistor => {
                if let (Some(a), Some(b), Some(r)) =
                    (self.pin(pid, "1"), self.pin(pid, "2"), p.num("value"))
                {
                    self.push(
                        Dev::Res {
                            g: 1.0 / r.max(1e-6),
                        },
                        vec![a, b],
                        li,
                        Role::Main,
                    );
                }
            }
            Kind::Capacitor => {
                if let (Some(a), Some(b), Some(cv)) =
                    (self.pin(pid, "1"), self.pin(pid, "2"), p.num("value"))
                {
                    match p.num("esr").filter(|r| *r > 0.0) {
                        Some(esr) => {
                            let ai = self.internal();
                            self.push(Dev::Res { g: 1.0 / esr }, vec![a, ai], li, Role::SeriesR);
                            self.push(Dev::Cap { c: cv }, vec![ai, b], li, Role::Main);
                        }
                        None => self.push(Dev::Cap { c: cv }, vec![a, b], li, Role::Main),
                    }
                }
            }
            Kind::Motor | Kind::Solenoid | Kind::Relay | Kind::Inductor => {
                let (x, y) = if p.kind == Kind::Inductor {
                    ("1", "2")
                } else {
                    ("+", "-")
                };
                if let (Some(a), Some(b), Some(r)) =
                    (self.pin(pid, x), self.pin(pid, y), sources::winding_r(p))
                {
                    let emf = if p.kind == Kind::Motor {
                        running_emf(c, p, r)
                    } else {
                        0.0
                    };
                    self.push(
                        Dev::Load {
                            r,
                            l: sources::winding_l(p),
                            emf,
                        },
                        vec![a, b],
                        li,
                        Role::Main,
                    );
                }
            }
            Kind::Diode | Kind::Zener | Kind::Tvs => {
                if let (Some(a), Some(k)) = (self.pin(pid, "a"), self.pin(pid, "k")) {
                    let (d, _) = Diode::fit(p);
                    self.diode(d, a, k, li, Role::Main);
                }
            }
            Kind::Nmos | Kind::Pmos => {
                let (Some(d), Some(g), Some(s)) =
                    (self.pin(pid, "d"), self.pin(pid, "g"), self.pin(pid, "s"))
                else {
                    return;
                };
                let (m, _) = Mosfet::fit(p);
                let (cgs, cgd, cds) = (m.cgs, m.cgd, m.cds);
                self.push(Dev::Mos(m), vec![d, g, s], li, Role::Main);
                let body = Diode::body(p);
                if p.kind == Kind::Nmos {
                    self.diode(body, s, d, li, Role::Body);
                } else {
                    self.diode(body, d, s, li, Role::Body);
                }
                for (cv, t, role) in [
                    (cgs, vec![g, s], Role::Cgs),
                    (cgd, vec![g, d], Role::Cgd),
                    (cds, vec![d, s], Role::Cds),
                ] {
                    if cv > 0.0 {
                        self.push(Dev::Cap { c: cv }, t, li, role);
                    }
                }
            }
            Kind::Npn | Kind::Pnp => {
                let (Some(col), Some(b), Some(e)) =
                    (self.pin(pid, "c"), self.pin(pid, "b"), self.pin(pid, "e"))
                else {
                    return;
                };
                let (q, _) = Bjt::fit(p);
                let ci = if q.rc > 0.0 {
                    let ci = self.internal();
                    self.push(Dev::Res { g: 1.0 / q.rc }, vec![col, ci], li, Role::SeriesR);
                    ci
                } else {
                    col
                };
                self.push(Dev::Bjt(q), vec![ci, b, e], li, Role::Main);
                // its output capacitance, so that the collector's voltage
                // moves at a finite rate when an inductive current
                // commutates
                let cce = p.num("coss").unwrap_or(super::devices::bjt::COSS_DEFAULT);
                self.push(Dev::Cap { c: cce }, vec![col, e], li, Role::Cds);
                if let Some(vmax) = p.num("vce_max") {
                    let av = Diode::avalanche(vmax);
                    if p.kind == Kind::Npn {
                        self.push(Dev::Diode(av), vec![e, col], li, Role::Avalanche);
                    } else {
                        self.push(Dev::Diode(av), vec![col, e], li, Role::Avalanche);
                    }
                }
            }
            Kind::Mcu => {
                let level = sources::io_level(c, p);
                let rail = sources::supply_rail(c, p);
                let (lmax, lmin) = match rail {
                    // the output level follows the controller's supply
                    Some(r) if r.nominal > 0.0 => {
                        (level * r.max / r.nominal, level * r.min / r.nominal)
                    }
                    _ => (level, level),
                };
                let r_out = sources::pin_r_out(p, level);
                let reference = p
                    .pins
                    .iter()
                    .find(|x| {
                        let n = x.name.to_ascii_uppercase();
                        n.starts_with("VSS") || n.starts_with("GND")
                    })
                    .map(|x| x.net);
                for (k, pin) in p.pins.iter().enumerate() {
                    let Some(gi) = self
                        .grp
                        .pins
                        .iter()
                        .position(|(m, name)| *m == pid && *name == *pin.name)
                    else {
                        continue;
                    };
                    let out = self.node(pin.net);
                    let rf = match reference {
                        Some(n) => self.node(n),
                        None => self.ground(),
                    };
                    self.push(
                        Dev::Pin {
                            pin: gi as u32,
                            level_max: lmax,
                            level_min: lmin,
                            r: r_out,
                        },
                        vec![out, rf],
                        li,
                        Role::Out(k as u16),
                    );
                    // the pin's protection diodes to its supply and its
                    // ground: a pin pulled beyond them injects current
                    let supply = p
                        .pins
                        .iter()
                        .find(|x| {
                            let n = x.name.to_ascii_uppercase();
                            n.starts_with("VDD") || n.starts_with("VCC") || n.starts_with("VIO")
                        })
                        .map(|x| x.net);
                    if let Some(sn) = supply {
                        let vdd = self.node(sn);
                        self.diode(sources::esd_diode(), out, vdd, li, Role::EsdUp(k as u16));
                    }
                    self.diode(sources::esd_diode(), rf, out, li, Role::EsdDown(k as u16));
                }
            }
            Kind::Driver => {
                let (Some(vdd), Some(gnd)) = (self.pin(pid, "vdd"), self.pin(pid, "gnd")) else {
                    return;
                };
                let r = sources::driver_r_out(p);
                let invert = matches!(p.word("invert"), Some("true" | "yes" | "1"));
                let vth = p
                    .num("vin_th")
                    .unwrap_or_else(|| 0.5 * self.logic_level(pid));
                for (inp, out) in [("in", "out"), ("inb", "outb")] {
                    if let (Some(i), Some(o)) = (self.pin(pid, inp), self.pin(pid, out)) {
                        let k = p.pins.iter().position(|x| x.name == out).unwrap_or(0);
                        self.push(
                            Dev::Drv { vth, r, invert },
                            vec![o, i, vdd, gnd],
                            li,
                            Role::Out(k as u16),
                        );
                    }
                }
            }
            Kind::Connector => {}
        }
    }

    /// A ground node (for a controller without a ground pin).
    fn ground(&mut self) -> Nd {
        let c = self.c;
        let g = c
            .fixed_nets
            .iter()
            .map(|&(n, _)| n)
            .find(|&n| matches!(c.net(n).kind, NetKind::Ground));
        match g {
            Some(g) => self.node(g),
            None => {
                let i = self.fixed.len() as u32;
                self.fixed.push(FixedNode {
                    net: usize::MAX,
                    max: 0.0,
                    min: 0.0,
                    nom: 0.0,
                });
                Nd::Fix(i)
            }
        }
    }

    /// The logic level a driver's input sees: the highest output level of
    /// the controllers in its group, else its own supply.
    fn logic_level(&self, drv: PartId) -> f64 {
        let c = self.c;
        let lv = self
            .grp
            .pins
            .iter()
            .map(|(m, _)| sources::io_level(c, c.part(*m)))
            .fold(0.0f64, f64::max);
        if lv > 0.0 {
            return lv;
        }
        c.part(drv)
            .net_of("vdd")
            .and_then(|n| c.net(n).fixed_nominal())
            .unwrap_or(5.0)
    }
}

/// The running back-EMF of a motor: `E = V − r·i_rated` at the nominal
/// rail that feeds it (the brushed-motor equation), 0 without `i_rated`.
fn running_emf(c: &Circuit, p: &crate::model::Part, r: f64) -> f64 {
    let Some(i) = p.num("i_rated") else {
        return 0.0;
    };
    let v = p.num("v_rated").unwrap_or_else(|| {
        p.pins
            .iter()
            .filter_map(|x| c.net(x.net).fixed_nominal())
            .fold(0.0f64, |a, b| a.max(b.abs()))
    });
    let v = if v > 0.0 {
        v
    } else {
        // both ends switched (a bridge): the largest rail on the board
        c.fixed_nets
            .iter()
            .filter_map(|&(n, _)| c.net(n).fixed_nominal())
            .fold(0.0f64, |a, b| a.max(b.abs()))
    };
    (v - r * i).max(0.0)
}

/// Build the netlist of a group.
pub fn build(c: &Circuit, grp: &Group) -> Netlist {
    let mut b = Builder {
        c,
        grp,
        local_net: grp
            .nets
            .iter()
            .enumerate()
            .map(|(i, &n)| (n, i as u32))
            .collect(),
        fixed: Vec::new(),
        fixed_of: Default::default(),
        n: grp.nets.len() as u32,
        elems: Vec::new(),
    };
    let mut part_start = Vec::with_capacity(grp.parts.len() + 1);
    for (li, &pid) in grp.parts.iter().enumerate() {
        part_start.push(b.elems.len() as u32);
        b.part(li as u32, pid);
    }
    part_start.push(b.elems.len() as u32);
    let n = b.n as usize;
    let mut pattern = Pattern::new(n);
    let mut elems = b.elems;
    for e in &mut elems {
        let k = e.t.len();
        e.h = vec![NONE; k * k];
        for i in 0..k {
            for j in 0..k {
                if let (Some(r), Some(col)) = (e.t[i].var(), e.t[j].var()) {
                    e.h[i * k + j] = pattern.handle(r as u32, col as u32);
                }
            }
        }
    }
    Netlist {
        n,
        n_nets: grp.nets.len(),
        fixed: b.fixed,
        elems,
        part_start,
        pattern,
    }
}

//! `export spice`: the engine's netlist of a group as an ngspice deck —
//! the same device models with the same parameters (MOS level 1
//! `VTO`/`KP`, diode `IS`/`N`/`RS`/`BV`/`TT`, BJT `IS`/`BF`/`BR`), the gate
//! network, the rails at the chosen corner, the controller pins as
//! Thevenin sources (constant for an operating point, `PWL` for an edge).
//! `* expected:` comments state the engine's values, named and signed as
//! ngspice prints them, so a test (or a person) can compare.

use super::devices::sources::DRIVER_IN_WIDTH;
use super::netlist::{Corner, Dev, Nd, Netlist, Role};
use super::newton::GSHUNT;
use crate::model::{Circuit, NetKind};
use std::fmt::Write;

/// Node names of a deck.
pub struct Names<'a> {
    c: &'a Circuit,
    nl: &'a Netlist,
    nets: &'a [usize],
    parts: &'a [usize],
}

pub fn sanitize(s: &str) -> String {
    s.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '_' {
                c.to_ascii_lowercase()
            } else {
                '_'
            }
        })
        .collect()
}

impl<'a> Names<'a> {
    pub fn new(
        c: &'a Circuit,
        nl: &'a Netlist,
        nets: &'a [usize],
        parts: &'a [usize],
    ) -> Names<'a> {
        Names { c, nl, nets, parts }
    }

    pub fn node(&self, n: Nd) -> String {
        match n {
            Nd::Var(i) => match self.nets.get(i as usize) {
                Some(&net) => format!("n_{}", sanitize(&self.c.net(net).name)),
                None => format!("x{i}"),
            },
            Nd::Fix(i) => match self.nl.fixed.get(i as usize) {
                Some(f) if f.net < self.c.nets.len() => match self.c.net(f.net).kind {
                    NetKind::Ground => "0".to_string(),
                    _ => format!("r_{}", sanitize(&self.c.net(f.net).name)),
                },
                _ => "0".to_string(),
            },
        }
    }

    /// An element's name: its part's designator, a role suffix, its index.
    pub fn elem(&self, k: usize) -> String {
        let e = &self.nl.elems[k];
        let r = self
            .parts
            .get(e.part as usize)
            .map(|&p| sanitize(&self.c.part(p).reference))
            .unwrap_or_default();
        let role = match e.role {
            Role::Main => String::new(),
            Role::SeriesR => "_rs".into(),
            Role::Body => "_body".into(),
            Role::Avalanche => "_av".into(),
            Role::Cgs => "_cgs".into(),
            Role::Cgd => "_cgd".into(),
            Role::Cds => "_cds".into(),
            Role::Out(i) => format!("_o{i}"),
            Role::EsdUp(i) => format!("_esdu{i}"),
            Role::EsdDown(i) => format!("_esdd{i}"),
        };
        format!("{r}{role}_{k}")
    }
}

/// How the pins are driven in a deck.
pub enum PinDrive<'a> {
    /// A constant level per group pin (`None`: high-impedance).
    Dc(&'a [Option<f64>]),
    /// A wave per group pin (piecewise-linear, or released to
    /// high-impedance at a time).
    Waves(&'a [super::transient::PinWave]),
}

/// Write the elements of a netlist. Loads get a zero-volt (stall) or EMF
/// source in series whose current is the load current; each MOSFET and
/// bipolar switch a zero-volt source at its drain or collector.
pub fn elements(s: &mut String, names: &Names, corner: Corner, pins: &PinDrive, emf: &[f64]) {
    let nl = names.nl;
    let mut models = String::new();
    for f in &nl.fixed {
        if f.net < names.c.nets.len() && matches!(names.c.net(f.net).kind, NetKind::Rail(_)) {
            let n = format!("r_{}", sanitize(&names.c.net(f.net).name));
            let _ = writeln!(s, "v{n} {n} 0 DC {:.12e}", f.at(corner));
        }
    }
    for (k, e) in nl.elems.iter().enumerate() {
        let name = names.elem(k);
        let t: Vec<String> = e.t.iter().map(|&n| names.node(n)).collect();
        match &e.dev {
            Dev::Res { g } => {
                let _ = writeln!(s, "R{name} {} {} {:.12e}", t[0], t[1], 1.0 / g);
            }
            Dev::Cap { c } => {
                let _ = writeln!(s, "C{name} {} {} {:.12e}", t[0], t[1], c);
            }
            Dev::Load { r, l, .. } => {
                let e_v = emf.get(k).copied().unwrap_or(0.0);
                let _ = writeln!(s, "R{name} {} {name}_m {:.12e}", t[0], r);
                if *l > 0.0 {
                    let _ = writeln!(s, "L{name} {name}_m {name}_e {:.12e}", l);
                } else {
                    let _ = writeln!(s, "R{name}_l {name}_m {name}_e 1e-9");
                }
                let _ = writeln!(s, "V{name} {name}_e {} DC {:.12e}", t[1], e_v);
            }
            Dev::Diode(d) => {
                let _ = writeln!(s, "V{name}_sense {} {name}_a DC 0", t[0]);
                let _ = writeln!(s, "D{name} {name}_a {} dm_{name}", t[1]);
                let bv =
                    d.bv.map(|b| format!(" BV={b:.12e} IBV=1e-3"))
                        .unwrap_or_default();
                let _ = writeln!(
                    models,
                    ".model dm_{name} D(IS={:.12e} N={:.6} RS=0{bv} TT={:.12e})",
                    d.is, d.n, d.tt
                );
            }
            Dev::Mos(m) => {
                let (ty, vto) = if m.polarity > 0.0 {
                    ("NMOS", m.vto)
                } else {
                    ("PMOS", -m.vto)
                };
                let _ = writeln!(s, "V{name}_sense {} {name}_d DC 0", t[0]);
                let _ = writeln!(
                    s,
                    "M{name} {name}_d {} {} {} mm_{name} L=1 W=1",
                    t[1], t[2], t[2]
                );
                let _ = writeln!(
                    models,
                    ".model mm_{name} {ty}(LEVEL=1 VTO={vto:.12e} KP={:.12e} IS=0 JS=0)",
                    m.kp
                );
            }
            Dev::Bjt(q) => {
                let ty = if q.polarity > 0.0 { "NPN" } else { "PNP" };
                let _ = writeln!(s, "V{name}_sense {} {name}_c DC 0", t[0]);
                let _ = writeln!(s, "Q{name} {name}_c {} {} qm_{name}", t[1], t[2]);
                let _ = writeln!(
                    models,
                    ".model qm_{name} {ty}(IS={:.12e} BF={:.12e} BR={:.12e})",
                    q.is, q.bf, q.br
                );
            }
            Dev::Pin { pin, r, .. } => {
                use super::transient::PinWave;
                let (src, release) = match pins {
                    PinDrive::Dc(levels) => (
                        levels
                            .get(*pin as usize)
                            .copied()
                            .flatten()
                            .map(|v| format!("DC {v:.12e}")),
                        None,
                    ),
                    PinDrive::Waves(w) => match w.get(*pin as usize) {
                        Some(PinWave::Pwl(pts)) => {
                            let body: Vec<String> = pts
                                .iter()
                                .map(|(t, v)| format!("{t:.12e} {v:.12e}"))
                                .collect();
                            (Some(format!("PWL({})", body.join(" "))), None)
                        }
                        Some(PinWave::Release(level, at)) => {
                            (Some(format!("DC {level:.12e}")), Some(*at))
                        }
                        _ => (None, None),
                    },
                };
                if let Some(src) = src {
                    let _ = writeln!(s, "V{name} {name}_s {} {src}", t[1]);
                    match release {
                        // the pin lets go at `at`: a switch opens behind it
                        Some(at) => {
                            let _ = writeln!(
                                s,
                                "V{name}_c {name}_c 0 PWL(0 1 {at:.12e} 1 {:.12e} 0)",
                                at + 1e-12
                            );
                            let _ = writeln!(s, "S{name} {name}_s {name}_x {name}_c 0 swm_{name}");
                            let _ = writeln!(
                                models,
                                ".model swm_{name} SW(VT=0.5 VH=0 RON=1e-6 ROFF=1e15)"
                            );
                            let _ = writeln!(s, "R{name} {name}_x {} {:.12e}", t[0], r);
                        }
                        None => {
                            let _ = writeln!(s, "R{name} {name}_s {} {:.12e}", t[0], r);
                        }
                    }
                }
            }
            Dev::Drv { vth, r, invert } => {
                let tanh = format!(
                    "tanh((v({})-v({})-{vth:.12e})/{DRIVER_IN_WIDTH:.12e})",
                    t[1], t[3]
                );
                let frac = if *invert {
                    format!("(0.5-0.5*{tanh})")
                } else {
                    format!("(0.5+0.5*{tanh})")
                };
                let _ = writeln!(
                    s,
                    "B{name} {name}_s 0 V=v({})+(v({})-v({}))*{frac}",
                    t[3], t[2], t[3]
                );
                let _ = writeln!(s, "R{name} {name}_s {} {:.12e}", t[0], r);
            }
        }
    }
    s.push_str(&models);
    let _ = writeln!(s, ".option rshunt={:.6e}", 1.0 / GSHUNT);
}

/// The ngspice name of the current a load or switch element reports:
/// the series source's `i(…)` (positive into its + terminal, as ngspice
/// prints it).
pub fn current_probe(names: &Names, k: usize) -> Option<String> {
    let e = names.nl.elems.get(k)?;
    let name = names.elem(k);
    match e.dev {
        Dev::Load { .. } => Some(format!("i(v{name})")),
        Dev::Mos(_) | Dev::Bjt(_) | Dev::Diode(_) => Some(format!("i(v{name}_sense)")),
        _ => None,
    }
}

/// A deck that solves one operating point and prints every node of the
/// group and the current of every load and switch, with the engine's
/// values as `* expected:` lines.
pub fn op_deck(
    title: &str,
    names: &Names,
    corner: Corner,
    pins: &[Option<f64>],
    emf: &[f64],
    expected: &[(String, f64)],
) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "* {title}");
    let _ = writeln!(s, "* rails at their {}; devices at 27 degC", corner.name());
    for (k, v) in expected {
        let _ = writeln!(s, "* expected: {k} = {v:.9e}");
    }
    elements(&mut s, names, corner, &PinDrive::Dc(pins), emf);
    let probes: Vec<&str> = expected.iter().map(|(k, _)| k.as_str()).collect();
    let _ = writeln!(s, ".control\nop");
    for chunk in probes.chunks(8) {
        let _ = writeln!(s, "print {}", chunk.join(" "));
    }
    let _ = writeln!(s, ".endc\n.end");
    s
}

/// A deck that simulates an edge from the operating point of its first
/// pin levels and writes the probes over time with `wrdata` to `out`.
#[allow(clippy::too_many_arguments)]
pub fn tran_deck(
    title: &str,
    names: &Names,
    corner: Corner,
    pins: &[super::transient::PinWave],
    emf: &[f64],
    t_stop: f64,
    t_max: f64,
    probes: &[String],
    expected: &[(String, f64)],
    out: &str,
) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "* {title}");
    let _ = writeln!(s, "* rails at their {}; devices at 27 degC", corner.name());
    for (k, v) in expected {
        let _ = writeln!(s, "* expected: {k} = {v:.9e}");
    }
    elements(&mut s, names, corner, &PinDrive::Waves(pins), emf);
    // ngspice's default reltol lets its steps grow across a switching edge
    // until the edge is sampled too coarsely to read t_off and e_off
    // within a few per cent; 1e-4 resolves it
    let _ = writeln!(s, ".options reltol=1e-4");
    let _ = writeln!(s, ".control");
    let _ = writeln!(
        s,
        "tran {:.6e} {:.9e} 0 {:.6e}",
        t_max / 10.0,
        t_stop,
        t_max
    );
    let _ = writeln!(s, "wrdata {out} {}", probes.join(" "));
    let _ = writeln!(s, ".endc\n.end");
    s
}

/// The probes an edge deck writes, in this order: V_DS and V_GS of the
/// switch, its channel current, the main load's current, then per clamp
/// part its voltage and current.
pub struct EdgeDeck {
    pub deck: String,
    /// Sign that turns the probes into device polarity.
    pub polarity: f64,
    pub t_stop: f64,
    /// When the switch's own command starts (its edge may wait for the
    /// dead time).
    pub t_cmd: f64,
    /// After the four switch probes, a (voltage, current) probe pair per
    /// clamp part, named here (`switch`: its own body or avalanche diode).
    pub clamps: Vec<String>,
    /// The engine's figures, as in the `* expected:` lines.
    pub expected: Vec<(String, f64)>,
}

/// The deck of a switch's turn-off as the engine simulates it: the
/// group's netlist, rails at their maximum, the pins' piecewise-linear
/// edge, the load at stall. `wrdata` writes the probes to `out`.
pub fn edge_deck(b: &crate::Built, switch: usize, out: &str) -> Result<EdgeDeck, String> {
    let a = &b.analysis;
    let c = &b.circuit;
    let sp = c.parts.get(switch).ok_or("no such part")?;
    if !sp.kind.is_switch() {
        return Err(format!(
            "`{}` is a {}, not a switch",
            sp.reference,
            sp.kind.name()
        ));
    }
    let t = a
        .turnoffs
        .iter()
        .filter(|t| t.switch == switch && t.mode == super::op::Mode::Stall)
        // the switch's own toggle first, then a reset
        .max_by(|x, y| {
            (x.kind == super::EdgeKind::Toggle)
                .cmp(&(y.kind == super::EdgeKind::Toggle))
                .then(x.v_peak.total_cmp(&y.v_peak))
        })
        .ok_or_else(|| {
            format!(
                "`{}` carries no load current that it switches off",
                sp.reference
            )
        })?;
    let grp = &a.groups[t.group];
    let sol = &a.solutions[t.group];
    let er = sol.edges.get(t.edge).ok_or("no edge")?;
    let nl = &sol.nl;
    let names = Names::new(c, nl, &grp.nets, &grp.parts);
    let from = sol.states.get(er.from as usize).ok_or("no state")?;
    let reset = vec![super::groups::PinState::HiZ; sol.n_pins];
    let to = match er.to {
        Some(i) => sol.states.get(i as usize).ok_or("no state")?,
        None => &reset,
    };
    let high: Vec<f64> = (0..sol.n_pins)
        .map(|j| super::solve::pin_level(nl, j as u32, Corner::Max))
        .collect();
    let delay: Vec<f64> = sol
        .drives
        .iter()
        .map(|d| if d.partner.is_some() { d.deadtime } else { 0.0 })
        .collect();
    let sched = super::edges::schedule(
        &super::edges::Command {
            from,
            to,
            high: &high,
            delay_rise: &delay,
        },
        0.0,
    );
    let on = sol
        .op(er.from as usize, Corner::Max, er.mode)
        .ok_or("no operating point")?;
    let pins = &sched.pins;
    let km = nl
        .elem_index(er.switch as usize, Role::Main)
        .ok_or("no switch element")?;
    let e = &nl.elems[km];
    let polarity = match &e.dev {
        Dev::Mos(m) => m.polarity,
        Dev::Bjt(q) => q.polarity,
        _ => 1.0,
    };
    let node = |n: Nd| {
        let s = names.node(n);
        if s == "0" {
            "0".to_string()
        } else {
            format!("v({s})")
        }
    };
    let main = match nl.elem_index(er.switch as usize, Role::SeriesR) {
        Some(ks) if nl.elems[ks].t.get(1) == e.t.first() => nl.elems[ks].t[0],
        _ => e.t[0],
    };
    let mut probes = vec![
        format!("{}-{}", node(main), node(e.t[2])),
        format!("{}-{}", node(e.t[1]), node(e.t[2])),
        current_probe(&names, km).ok_or("no probe")?,
    ];
    let lk = er
        .res
        .load
        .and_then(|l| nl.elem_index(l as usize, Role::Main));
    if let Some(lk) = lk.and_then(|k| current_probe(&names, k)) {
        probes.push(lk);
    }
    // each clamp part and the switch's own body or avalanche diode:
    // the voltage across its pins and its junction current
    let mut clamps: Vec<(String, usize)> = Vec::new();
    for (k, el) in nl.elems.iter().enumerate() {
        if !matches!(el.dev, Dev::Diode(_)) {
            continue;
        }
        let Some(&p) = grp.parts.get(el.part as usize) else {
            continue;
        };
        let kind = c.part(p).kind;
        let own = el.part == er.switch && matches!(el.role, Role::Body | Role::Avalanche);
        if (el.role == Role::Main
            && matches!(kind, crate::model::Kind::Zener | crate::model::Kind::Tvs))
            || own
        {
            clamps.push((
                if own {
                    "switch".to_string()
                } else {
                    c.part(p).reference.clone()
                },
                k,
            ));
        }
    }
    for (_, k) in &clamps {
        let el = &nl.elems[*k];
        // the pins: before a series resistance, and the junction's far end
        let a = match nl
            .elems_of(el.part as usize)
            .iter()
            .find(|x| x.role == Role::SeriesR && x.t.get(1) == el.t.first())
        {
            Some(rs) => rs.t[0],
            None => el.t[0],
        };
        probes.push(format!("{}-{}", node(a), node(el.t[1])));
        probes.push(current_probe(&names, *k).ok_or("no probe")?);
    }
    let t_stop = er.res.wave_off.t.last().copied().unwrap_or(1e-3);
    let r = &er.res;
    let mut expected = vec![
        ("i0".to_string(), r.i0),
        ("e_load".to_string(), t.e_load),
        ("v_peak".to_string(), r.v_peak),
        ("e_off".to_string(), r.e_off),
        ("e_aval".to_string(), r.e_aval),
    ];
    if let Some(x) = r.t_off {
        expected.push(("t_off".into(), x));
    }
    if let Some(x) = r.t_decay {
        expected.push(("t_decay".into(), x));
    }
    for pe in r.parts.iter() {
        if let Some(&p) = grp.parts.get(pe.part as usize)
            && matches!(
                c.part(p).kind,
                crate::model::Kind::Zener | crate::model::Kind::Tvs
            )
        {
            expected.push((format!("e_clamp({})", c.part(p).reference), pe.energy));
        }
    }
    let title = format!(
        "armature: turn-off of {} ({}), from {}",
        sp.reference,
        c.file.name,
        super::describe_state(c, grp, from)
    );
    let deck = tran_deck(
        &title,
        &names,
        Corner::Max,
        pins,
        &on.ex.emf,
        t_stop,
        (t_stop / 20000.0).max(1e-11),
        &probes,
        &expected,
        out,
    );
    Ok(EdgeDeck {
        deck,
        polarity,
        t_stop,
        t_cmd: er.res.t_cmd,
        clamps: clamps.into_iter().map(|(n, _)| n).collect(),
        expected,
    })
}

/// The deck of one operating point of a group, with every node of the
/// group and the current of every load and switch as `* expected:` lines.
pub fn state_deck(
    b: &crate::Built,
    group: usize,
    state: usize,
    corner: Corner,
    mode: super::op::Mode,
) -> Result<(String, Vec<(String, f64)>), String> {
    let a = &b.analysis;
    let c = &b.circuit;
    let grp = a.groups.get(group).ok_or("no such group")?;
    let sol = a.solutions.get(group).ok_or("no such group")?;
    let nl = &sol.nl;
    let o = sol.op(state, corner, mode).ok_or("no such state")?;
    let names = Names::new(c, nl, &grp.nets, &grp.parts);
    let mut exp = Vec::new();
    // a floating net's voltage is set by leakage alone (undefined): it is
    // not an expected value
    for i in 0..grp.nets.len() {
        if !o.floating.get(i).copied().unwrap_or(false) {
            exp.push((format!("v({})", names.node(Nd::Var(i as u32))), o.x[i]));
        }
    }
    for k in 0..nl.elems.len() {
        if let Some(p) = current_probe(&names, k) {
            exp.push((p, super::newton::currents(nl, k, &o.x, &o.ex, None)[0]));
        }
    }
    let title = format!(
        "armature: operating point of {} with {}",
        c.file.name,
        sol.states
            .get(state)
            .map(|s| super::describe_state(c, grp, s))
            .unwrap_or_default()
    );
    Ok((
        op_deck(&title, &names, corner, &o.ex.pins, &o.ex.emf, &exp),
        exp,
    ))
}

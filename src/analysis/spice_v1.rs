//! `armature export spice`: an ngspice testbench around one switch — its
//! load (winding resistance and inductance), the freewheel and clamp
//! parts of its power island, the rails at their maximum, and a control
//! source that holds the switch on until the load current has settled and
//! then opens it. `.meas` lines report the on-state current and the peak
//! blocking voltage, so a verdict can be confirmed in a simulator.

use super::{Analysis, TurnOff, states};
#[allow(unused_imports)]
use crate::graph::CircuitGraph;
use crate::model::{Circuit, Kind, NetKind, PartId};
use std::collections::HashSet;
use std::fmt::Write;

/// Thermal voltage at 27 °C, the simulator's default temperature (V).
const VT: f64 = 0.025_852;

fn node(c: &Circuit, net: usize) -> String {
    match c.net(net).kind {
        NetKind::Ground => "0".to_string(),
        _ => format!("n_{}", sanitize(&c.net(net).name)),
    }
}

fn sanitize(s: &str) -> String {
    s.chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect()
}

/// Saturation current that gives forward voltage `vf` at current `i`.
fn is_for(vf: f64, i: f64) -> f64 {
    (i.max(1e-6) * (-vf / VT).exp()).max(1e-300)
}

/// The turn-off that sets the switch's `v_peak` fact.
pub fn worst_turnoff(a: &Analysis, sw: PartId) -> Option<&TurnOff> {
    let target = a.facts.value(sw, "v_peak")?;
    a.turnoffs.iter().filter(|t| t.switch == sw).min_by(|x, y| {
        (x.v_peak - target)
            .abs()
            .partial_cmp(&(y.v_peak - target).abs())
            .unwrap_or(std::cmp::Ordering::Equal)
    })
}

/// Write the deck, or say why there is none.
pub fn deck(c: &Circuit, g: &CircuitGraph, a: &Analysis, sw: PartId) -> Result<String, String> {
    let sp = c.parts.get(sw).ok_or("no such part")?;
    if !sp.kind.is_switch() {
        return Err(format!(
            "`{}` is a {}, not a switch",
            sp.reference,
            sp.kind.name()
        ));
    }
    let t = worst_turnoff(a, sw)
        .ok_or_else(|| format!("`{}` switches no inductive load", sp.reference))?;
    let lp = c.part(t.load);
    let l = lp
        .num("l")
        .ok_or_else(|| format!("`{}` has no inductance `l`", lp.reference))?;
    let r = lp
        .num("r")
        .ok_or_else(|| format!("`{}` has no winding resistance `r`", lp.reference))?
        * (1.0 - lp.num("r_tol").unwrap_or(0.0));
    let i0 = t.i0.max(1e-3);
    // nets of the power island around the load
    let island = lp
        .pins
        .iter()
        .find_map(|p| g.island_of.get(p.net).copied().flatten())
        .ok_or("the load sits between two fixed nets")?;
    let nets: HashSet<usize> = g.islands[island].iter().copied().collect();
    let in_power = |q: PartId| -> bool {
        let p = c.part(q);
        let pins: Vec<usize> = match p.kind.switch_pins() {
            Some((m, _, r)) => [m, r].iter().filter_map(|x| p.net_of(x)).collect(),
            None => p.pins.iter().map(|x| x.net).collect(),
        };
        !pins.is_empty()
            && pins
                .iter()
                .all(|x| nets.contains(x) || c.net(*x).is_fixed())
            && pins.iter().any(|x| nets.contains(x))
    };
    let tau = l / r.max(1e-3);
    let t_off = (8.0 * tau).max(1e-6);
    // with no path, the current rings into the switch's capacitance: a
    // quarter period of `2π·sqrt(L·C)` to the peak
    let coss = sp.num("coss").unwrap_or(super::freewheel::DEFAULT_COSS);
    let ring = std::f64::consts::PI * (l * coss).sqrt();
    let decay = t.path.as_ref().map(|p| p.t_decay).unwrap_or(ring).min(1.0);
    let t_end = t_off + 3.0 * decay.max(2e-6);
    let mut s = String::new();
    let _ = writeln!(
        s,
        "* armature testbench: turn-off of {} under {}",
        sp.reference, lp.reference
    );
    let _ = writeln!(
        s,
        "* file {} — rails at their maximum, load at stall (no back-EMF)",
        c.file.name
    );
    let _ = writeln!(
        s,
        "* expected: i_on {:.6e} A, v_peak {:.6e} V",
        i0, t.v_peak
    );
    // rails
    for (i, n) in c.nets.iter().enumerate() {
        if let NetKind::Rail(rv) = n.kind {
            let _ = writeln!(s, "V_{} {} 0 DC {}", sanitize(&n.name), node(c, i), rv.max);
        }
    }
    // the load
    let (np, nm) = (
        lp.net_of("+").ok_or("load pin +")?,
        lp.net_of("-").ok_or("load pin -")?,
    );
    let _ = writeln!(
        s,
        "R_{} {} x_{} {}",
        sanitize(&lp.reference),
        node(c, np),
        sanitize(&lp.reference),
        r
    );
    let _ = writeln!(
        s,
        "L_{} x_{} {} {}",
        sanitize(&lp.reference),
        sanitize(&lp.reference),
        node(c, nm),
        l
    );
    let mut models = String::new();
    for (q, p) in c.parts.iter().enumerate() {
        if q == t.load || !in_power(q) {
            continue;
        }
        let name = sanitize(&p.reference);
        let n = |pin: &str| {
            p.net_of(pin)
                .map(|x| node(c, x))
                .unwrap_or_else(|| "0".into())
        };
        match p.kind {
            Kind::Resistor => {
                if let Some(v) = p.num("value") {
                    let _ = writeln!(s, "R_{name} {} {} {}", n("1"), n("2"), v.max(1e-6));
                }
            }
            Kind::Capacitor => {
                if let Some(v) = p.num("value") {
                    let _ = writeln!(s, "C_{name} {} {} {}", n("1"), n("2"), v);
                }
            }
            Kind::Diode => {
                let vf = p.num("vf").unwrap_or(states::DIODE_VF);
                let _ = writeln!(s, "D_{name} {} {} DM_{name}", n("a"), n("k"));
                let _ = writeln!(
                    models,
                    ".model DM_{name} D(IS={:.6e} N=1 RS=0)",
                    is_for(vf, i0)
                );
            }
            Kind::Zener | Kind::Tvs => {
                let vf = p.num("vf").unwrap_or(states::DIODE_VF);
                let bv = if p.kind == Kind::Zener {
                    p.num("vz")
                } else {
                    p.num("v_clamp").or(p.num("vz"))
                };
                let _ = writeln!(s, "D_{name} {} {} DM_{name}", n("a"), n("k"));
                match bv {
                    Some(bv) => {
                        let _ = writeln!(
                            models,
                            ".model DM_{name} D(IS={:.6e} N=1 RS=0 BV={} IBV=1e-3)",
                            is_for(vf, i0),
                            bv
                        );
                    }
                    None => {
                        let _ = writeln!(
                            models,
                            ".model DM_{name} D(IS={:.6e} N=1 RS=0)",
                            is_for(vf, i0)
                        );
                    }
                }
            }
            Kind::Nmos | Kind::Pmos | Kind::Npn | Kind::Pnp => {
                let (m, _, rr) = p.kind.switch_pins().unwrap_or(("d", "g", "s"));
                let ron = if p.kind.is_mos() {
                    states::rds_on(c, q)
                } else {
                    0.2 / i0
                };
                let on_now = t.others_on.contains(&q);
                if q == sw {
                    let _ = writeln!(s, "V_sense_{name} {} y_{name} DC 0", n(m));
                    let _ = writeln!(s, "S_{name} y_{name} {} ctl 0 SWM", n(rr));
                    let _ = writeln!(models, ".model SWM SW(VT=0.5 VH=0.1 RON={} ROFF=1e12)", ron);
                    let _ = writeln!(s, "C_oss_{name} {} {} {}", n(m), n(rr), coss);
                    let _ = writeln!(
                        s,
                        "V_ctl ctl 0 PWL(0 1 {t_off:.9e} 1 {:.9e} 0)",
                        t_off + 1e-9
                    );
                } else if on_now {
                    let _ = writeln!(s, "R_on_{name} {} {} {}", n(m), n(rr), ron);
                }
                if p.kind.is_mos() {
                    let vf = p.num("body_vf").unwrap_or(states::BODY_VF);
                    let (an, ka) = if p.kind == Kind::Nmos {
                        (n("s"), n("d"))
                    } else {
                        (n("d"), n("s"))
                    };
                    let _ = writeln!(s, "D_body_{name} {an} {ka} DB_{name}");
                    let _ = writeln!(
                        models,
                        ".model DB_{name} D(IS={:.6e} N=1 RS=0)",
                        is_for(vf, i0)
                    );
                }
            }
            _ => {}
        }
    }
    s.push_str(&models);
    let (m, _, rr) = sp.kind.switch_pins().unwrap_or(("d", "g", "s"));
    let dn = sp
        .net_of(m)
        .map(|x| node(c, x))
        .unwrap_or_else(|| "0".into());
    let sn = sp
        .net_of(rr)
        .map(|x| node(c, x))
        .unwrap_or_else(|| "0".into());
    let name = sanitize(&sp.reference);
    let step = (decay / 2000.0).clamp(1e-10, 1e-6);
    let _ = writeln!(s, ".options reltol=1e-4");
    let _ = writeln!(s, ".tran {step:.3e} {t_end:.9e} 0 {step:.3e}");
    let _ = writeln!(
        s,
        ".meas tran i_on FIND i(V_sense_{name}) AT={:.9e}",
        t_off * 0.999
    );
    let sign = if sp.kind.is_p_type() { "-" } else { "" };
    let vd = |n: &str| {
        if n == "0" {
            "0".to_string()
        } else {
            format!("v({n})")
        }
    };
    let _ = writeln!(
        s,
        ".meas tran v_peak MAX par('{sign}({}-{})') FROM={:.9e} TO={t_end:.9e}",
        vd(&dn),
        vd(&sn),
        t_off
    );
    let _ = writeln!(s, ".end");
    Ok(s)
}

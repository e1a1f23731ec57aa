//! Identical groups are solved once. A group's solution depends only on
//! its netlist (devices, parameters, topology), its rails' corners, its
//! pins' drive and the rated figures its regions are judged by; the key
//! is all of these, exactly (values by their bits), in the group's own
//! order. Two channels written alike get the same key; a hash collision
//! cannot mix them up because the map compares whole keys.

use super::netlist::{Dev, Nd, Netlist, Role};
use super::solve::{PinDrive, Rated};

/// The canonical form of a group.
pub fn key(nl: &Netlist, drives: &[PinDrive], rated: &[Rated]) -> Vec<u64> {
    let mut k: Vec<u64> = Vec::with_capacity(8 + nl.elems.len() * 8);
    let f = |x: f64| x.to_bits();
    k.push(nl.n as u64);
    k.push(nl.n_nets as u64);
    k.push(nl.fixed.len() as u64);
    for x in &nl.fixed {
        k.extend([f(x.max), f(x.min), f(x.nom)]);
    }
    k.push(nl.part_start.len() as u64);
    k.extend(nl.part_start.iter().map(|&x| x as u64));
    for e in &nl.elems {
        k.push(e.part as u64);
        k.push(match e.role {
            Role::Main => 0,
            Role::SeriesR => 1,
            Role::Body => 2,
            Role::Avalanche => 3,
            Role::Cgs => 4,
            Role::Cgd => 5,
            Role::Cds => 6,
            Role::Out(i) => 16 + i as u64,
        });
        k.push(e.t.len() as u64);
        for t in &e.t {
            k.push(match t {
                Nd::Var(i) => *i as u64,
                Nd::Fix(i) => (1 << 40) | *i as u64,
            });
        }
        match &e.dev {
            Dev::Res { g } => k.extend([1, f(*g)]),
            Dev::Cap { c } => k.extend([2, f(*c)]),
            Dev::Load { r, l, emf } => k.extend([3, f(*r), f(*l), f(*emf)]),
            Dev::Diode(d) => k.extend([
                4,
                f(d.is),
                f(d.n),
                f(d.rs),
                f(d.bv.unwrap_or(-1.0)),
                f(d.tt),
            ]),
            Dev::Mos(m) => k.extend([
                5,
                f(m.polarity),
                f(m.vto),
                f(m.kp),
                f(m.cgs),
                f(m.cgd),
                f(m.cds),
            ]),
            Dev::Bjt(q) => k.extend([6, f(q.polarity), f(q.is), f(q.bf), f(q.br), f(q.rc)]),
            Dev::Pin {
                pin,
                level_max,
                level_min,
                r,
            } => k.extend([7, *pin as u64, f(*level_max), f(*level_min), f(*r)]),
            Dev::Drv { vth, r, invert } => k.extend([8, f(*vth), f(*r), *invert as u64]),
        }
    }
    k.push(drives.len() as u64);
    for d in drives {
        k.extend([
            f(d.f_pwm),
            f(d.duty_min),
            f(d.duty_max),
            d.partner.map_or(u64::MAX, |p| p as u64),
            f(d.deadtime),
        ]);
    }
    for r in rated {
        k.extend([f(r.rds_on), f(r.vce_sat)]);
    }
    k
}

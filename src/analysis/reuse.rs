//! Identical groups are solved and read once. A group's solution and the
//! facts read from it depend only on its parts (kinds, every rating and
//! parameter, how their pins meet inside the group), the rails they reach
//! and how its controller pins are driven. The key is all of these,
//! exactly (values by their bits), in the group's own order; the names of
//! parts, nets and pins are not in it, so a board's identical channels
//! share one key. The map compares whole keys, so a hash collision cannot
//! mix two groups up.

use super::groups::{Group, is_supply_pin};
use super::solve::PinDrive;
use crate::model::kinds::PinSpec;
use crate::model::{Circuit, ParamValue};

/// A word's bits, for a key.
fn word(w: &str) -> u64 {
    use std::hash::{Hash, Hasher};
    let mut h = std::collections::hash_map::DefaultHasher::new();
    w.hash(&mut h);
    h.finish()
}

/// The canonical form of a group.
pub fn key(c: &Circuit, grp: &Group, drives: &[PinDrive]) -> Vec<u64> {
    let mut k: Vec<u64> = Vec::with_capacity(16 + grp.parts.len() * 24);
    k.push(grp.nets.len() as u64);
    k.push(grp.pins.len() as u64);
    let small = grp.nets.len() <= 32;
    let map: crate::fasthash::FastMap<usize, usize> = if small {
        Default::default()
    } else {
        grp.nets.iter().enumerate().map(|(i, &n)| (n, i)).collect()
    };
    let local = |net: usize| -> Option<usize> {
        if small {
            grp.nets.iter().position(|&n| n == net)
        } else {
            map.get(&net).copied()
        }
    };
    const NONE: u64 = u64::MAX;
    for &pid in &grp.parts {
        let p = c.part(pid);
        k.push(p.kind as u64);
        for def in p.kind.keys() {
            match p.get(def.name).map(|x| &x.value) {
                Some(ParamValue::Num(v)) => k.push(v.to_bits()),
                Some(ParamValue::Word(w)) => k.push(word(w)),
                None => k.push(NONE),
            }
        }
        // a controller's pins that reach nothing of the group (another
        // group's pins) build nothing in it and stay out of the key, so
        // that the same channel on another pin of the controller shares it
        let mut pins: Vec<(u64, u64)> = Vec::with_capacity(p.pins.len());
        for pin in &p.pins {
            // which pin: its place in the kind's list, or for a controller
            // its place among the group's pins (a supply pin by its role)
            let which = match p.kind.pins() {
                PinSpec::Fixed(list) => list
                    .iter()
                    .position(|(n, _)| *n == pin.name)
                    .map_or(NONE, |i| i as u64),
                PinSpec::Any => match grp
                    .pins
                    .iter()
                    .position(|(m, n)| *m == pid && *n == *pin.name)
                {
                    Some(i) => 1000 + i as u64,
                    None if is_supply_pin(&pin.name) => {
                        let n = pin.name.to_ascii_uppercase();
                        if n.starts_with("VSS") || n.starts_with("GND") {
                            2
                        } else {
                            1
                        }
                    }
                    None => 0,
                },
            };
            let at = match local(pin.net) {
                Some(i) => i as u64,
                // a rail or ground by its identity: its corners come with it
                None if c.net(pin.net).is_fixed() => (1 << 40) | pin.net as u64,
                None => NONE - 1,
            };
            if matches!(p.kind.pins(), PinSpec::Any) && which == 0 && at == NONE - 1 {
                continue;
            }
            pins.push((which, at));
        }
        k.push(pins.len() as u64);
        for (which, at) in pins {
            k.push(which);
            k.push(at);
        }
    }
    for d in drives {
        k.extend([
            d.f_pwm.to_bits(),
            d.duty_min.to_bits(),
            d.duty_max.to_bits(),
            d.partner.map_or(NONE, |p| p as u64),
            d.deadtime.to_bits(),
        ]);
    }
    k
}

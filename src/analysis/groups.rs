//! Control groups: the islands that switch one another (a gate island
//! and the island it switches, a driver's input and output), and the
//! controller-pin assignments each group is solved in.

use crate::fasthash::{FastMap as HashMap, FastSet as HashSet};
use crate::graph::CircuitGraph;
use crate::model::{Circuit, Kind, NetId, PartId};

#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum PinState {
    High,
    Low,
    HiZ,
}

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

#[derive(Default)]
pub struct Group {
    pub islands: Vec<usize>,
    pub nets: Vec<NetId>,
    pub parts: Vec<PartId>,
    pub pins: Vec<CtlPin>,
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

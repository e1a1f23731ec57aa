//! The circuit graph: a petgraph node per net and per part, an edge per
//! connected pin. Built once per circuit; analyses borrow it.
//!
//! It also cuts the circuit into islands: the signal nets that conduct
//! into each other through parts once rail and ground nets (ideal
//! sources) are removed. Each island is solved on its own.

use crate::model::{Circuit, Kind, NetId, PartId};
use petgraph::graph::{NodeIndex, UnGraph};
use petgraph::unionfind::UnionFind;

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Node {
    Net(NetId),
    Part(PartId),
}

pub struct CircuitGraph {
    pub graph: UnGraph<Node, usize>,
    pub net_nodes: Vec<NodeIndex>,
    pub part_nodes: Vec<NodeIndex>,
    /// Island index of every net (`None` for rails and ground).
    pub island_of: Vec<Option<usize>>,
    /// Nets of every island.
    pub islands: Vec<Vec<NetId>>,
}

/// Pin pairs of a part that conduct DC (or may, in some state).
pub fn conducting_pairs(kind: Kind) -> &'static [(&'static str, &'static str)] {
    match kind {
        Kind::Motor | Kind::Solenoid | Kind::Relay => &[("+", "-")],
        Kind::Inductor | Kind::Resistor => &[("1", "2")],
        // a capacitor blocks DC, but it joins the island for transients
        Kind::Capacitor => &[("1", "2")],
        Kind::Nmos | Kind::Pmos => &[("d", "s")],
        Kind::Npn | Kind::Pnp => &[("c", "e"), ("b", "e")],
        Kind::Diode | Kind::Zener | Kind::Tvs => &[("a", "k")],
        // controller and driver pins are separate sources; connectors pass nothing
        Kind::Mcu | Kind::Driver | Kind::Connector => &[],
    }
}

impl CircuitGraph {
    pub fn build(c: &Circuit) -> CircuitGraph {
        let mut graph = UnGraph::with_capacity(c.nets.len() + c.parts.len(), c.parts.len() * 3);
        let net_nodes: Vec<NodeIndex> = (0..c.nets.len())
            .map(|i| graph.add_node(Node::Net(i)))
            .collect();
        let mut part_nodes = Vec::with_capacity(c.parts.len());
        let mut uf = UnionFind::<usize>::new(c.nets.len());
        for (pid, p) in c.parts.iter().enumerate() {
            let n = graph.add_node(Node::Part(pid));
            part_nodes.push(n);
            for (i, pin) in p.pins.iter().enumerate() {
                if let Some(&nn) = net_nodes.get(pin.net) {
                    graph.add_edge(n, nn, i);
                }
            }
            for (a, b) in conducting_pairs(p.kind) {
                if let (Some(na), Some(nb)) = (p.net_of(a), p.net_of(b))
                    && !c.nets[na].is_fixed()
                    && !c.nets[nb].is_fixed()
                {
                    uf.union(na, nb);
                }
            }
        }
        let mut island_of = vec![None; c.nets.len()];
        // sized once: see `model::elaborate` on growing large tables
        let mut islands: Vec<Vec<NetId>> = Vec::with_capacity(c.nets.len());
        let mut root_to_island: crate::fasthash::FastMap<usize, usize> =
            crate::fasthash::FastMap::default();
        root_to_island.reserve(c.nets.len());
        for (i, net) in c.nets.iter().enumerate() {
            if net.is_fixed() {
                continue;
            }
            let r = uf.find(i);
            let idx = *root_to_island.entry(r).or_insert_with(|| {
                islands.push(Vec::new());
                islands.len() - 1
            });
            island_of[i] = Some(idx);
            islands[idx].push(i);
        }
        CircuitGraph {
            graph,
            net_nodes,
            part_nodes,
            island_of,
            islands,
        }
    }

    /// Parts with a pin on a net.
    pub fn parts_on(&self, net: NetId) -> impl Iterator<Item = PartId> + '_ {
        self.net_nodes.get(net).into_iter().flat_map(move |&n| {
            self.graph
                .neighbors(n)
                .filter_map(move |m| match self.graph[m] {
                    Node::Part(p) => Some(p),
                    Node::Net(_) => None,
                })
        })
    }

    /// Number of pins on a net.
    pub fn degree(&self, net: NetId) -> usize {
        self.net_nodes
            .get(net)
            .map(|&n| self.graph.edges(n).count())
            .unwrap_or(0)
    }
}

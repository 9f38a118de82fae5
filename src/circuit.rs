//! The validated circuit model: what a circuit file describes, in SI, with
//! every cross-reference resolved to an index.
//!
//! A [`Circuit`] is built by `io::circuit_file` (or directly through the API,
//! see `examples/`), then compiled into a network plan for solving.

use crate::elements::{Connection, Element, ElementKind, NodeId};
use crate::fluid::Fluid;
use crate::source::Pump;

/// A junction of the circuit.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Node {
    /// Unique name.
    pub name: String,
}

/// Where a measurement point (a *tap*) reads the pressure ripple.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TapLocation {
    /// At a node.
    Node(NodeId),
    /// Inside a tube or hose, at a distance from its "from" end.
    AlongTube {
        /// Index of the tube or hose in [`Circuit::elements`].
        element: usize,
        /// Distance from the tube's "from" end in m (0 ≤ x ≤ l).
        distance_m: f64,
    },
}

/// A named measurement point.
#[derive(Debug, Clone, PartialEq)]
pub struct Tap {
    /// Unique name.
    pub name: String,
    /// Where it reads.
    pub location: TapLocation,
}

/// A complete, validated circuit.
#[derive(Debug, Clone, PartialEq)]
pub struct Circuit {
    /// Optional title for reports.
    pub title: Option<String>,
    /// The working fluid.
    pub fluid: Fluid,
    /// All nodes.
    pub nodes: Vec<Node>,
    /// All elements.
    pub elements: Vec<Element>,
    /// The pumps (Norton sources).
    pub pumps: Vec<Pump>,
    /// The measurement points.
    pub taps: Vec<Tap>,
    /// Number of harmonics of the pumping frequency to solve (1..=N).
    pub harmonics: u32,
}

impl Circuit {
    /// The nodes joined by each two-port (an element connected in series),
    /// in compressed form: node i's neighbours are
    /// `adjacent[first[i]..first[i + 1]]`, each with `weight` of the element
    /// that joins them; both directions of every two-port, in element
    /// order. Time and memory in proportion to the circuit (the connectivity
    /// check of `network::Plan::compile` and the path distances of
    /// `analysis::profile` share it).
    pub fn two_port_adjacency<T: Copy + Default>(
        &self,
        weight: impl Fn(&Element) -> T,
    ) -> (Vec<usize>, Vec<(NodeId, T)>) {
        let n = self.nodes.len();
        let mut first = vec![0usize; n + 1];
        for e in &self.elements {
            if let Connection::Series { a, b } = e.connection {
                first[a + 1] += 1;
                first[b + 1] += 1;
            }
        }
        for i in 0..n {
            first[i + 1] += first[i];
        }
        let mut next = first.clone();
        let mut adjacent = vec![(0 as NodeId, T::default()); first[n]];
        for e in &self.elements {
            if let Connection::Series { a, b } = e.connection {
                let w = weight(e);
                adjacent[next[a]] = (b, w);
                next[a] += 1;
                adjacent[next[b]] = (a, w);
                next[b] += 1;
            }
        }
        (first, adjacent)
    }

    /// The index of the node called `name`.
    pub fn node_id(&self, name: &str) -> Option<NodeId> {
        self.nodes.iter().position(|n| n.name == name)
    }

    /// The index of the element called `name`.
    pub fn element_id(&self, name: &str) -> Option<usize> {
        self.elements.iter().position(|e| e.name == name)
    }

    /// Whether node `id` is held at zero ripple by a tank.
    pub fn is_tank(&self, id: NodeId) -> bool {
        self.elements.iter().any(|e| {
            matches!(e.kind, ElementKind::Tank) && e.connection == Connection::Shunt { at: id }
        })
    }

    /// The nodes an element touches.
    pub fn element_nodes(&self, index: usize) -> Vec<NodeId> {
        match self.elements[index].connection {
            Connection::Series { a, b } => vec![a, b],
            Connection::Shunt { at } => vec![at],
        }
    }

    /// How many elements touch node `id`, counting two-ports and shunts.
    pub fn degree(&self, id: NodeId) -> usize {
        (0..self.elements.len())
            .filter(|&i| self.element_nodes(i).contains(&id))
            .count()
    }

    /// How many elements touch each node, counting two-ports and shunts
    /// (one pass over the elements; [`Circuit::degree`] for one node).
    pub fn degrees(&self) -> Vec<usize> {
        let mut degree = vec![0; self.nodes.len()];
        for e in &self.elements {
            match e.connection {
                Connection::Series { a, b } => {
                    degree[a] += 1;
                    degree[b] += 1;
                }
                Connection::Shunt { at } => degree[at] += 1,
            }
        }
        degree
    }

    /// Whether each node is held at zero ripple by a tank (one pass;
    /// [`Circuit::is_tank`] for one node).
    pub fn tank_nodes(&self) -> Vec<bool> {
        let mut tank = vec![false; self.nodes.len()];
        for e in &self.elements {
            if let (ElementKind::Tank, Connection::Shunt { at }) = (&e.kind, e.connection) {
                tank[at] = true;
            }
        }
        tank
    }

    /// Nodes that end a line with no element saying what the end is: a node
    /// touched by exactly one two-port and nothing else. ripline treats
    /// them as closed ends; `check` lists them so a user can confirm.
    /// One pass over the elements and pumps.
    pub fn implicit_closed_ends(&self) -> Vec<NodeId> {
        let degree = self.degrees();
        let mut series = vec![false; self.nodes.len()];
        for e in &self.elements {
            if let Connection::Series { a, b } = e.connection {
                series[a] = true;
                series[b] = true;
            }
        }
        let mut pumped = vec![false; self.nodes.len()];
        for p in &self.pumps {
            pumped[p.node] = true;
        }
        (0..self.nodes.len())
            .filter(|&id| degree[id] == 1 && !pumped[id] && series[id])
            .collect()
    }
}

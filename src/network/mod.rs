//! Network assembly and the per-frequency solve.
//!
//! A [`Plan`] is compiled once from a [`Circuit`]: it numbers the unknowns
//! (one pressure per node that is not held by a tank, plus two branch flows per
//! element stamped by its transfer matrix), records each element's matrix
//! slots, finds the distinct lines and bores, and orders and analyses the
//! sparse matrix once ([`sparse`]: minimum degree, leaves first on a tree).
//! Each frequency is then an independent, cheap evaluation: the viscous
//! factor once per distinct (bore, fluid), the propagation once per distinct
//! line, every element's [`crate::elements::Behaviour`] scattered into the
//! factor storage, the pumps' Norton shunts 1/Zs added, and `Y P = J`
//! factorised numerically in the fixed order and solved; where the fixed
//! order would be unsafe at a frequency, a pivoted sparse factorisation takes
//! over. [`Plan::solve_dense`] keeps the former dense LU with partial
//! pivoting as a reference (tests compare the two; benchmarks show both).
//!
//! Rows and unknowns are non-dimensionalised with a reference impedance
//! Z_ref (the mean characteristic impedance of the tubes): node rows are
//! multiplied by Z_ref and branch flows are carried as Z_ref·Q, so that
//! modified-nodal rows of different units stay balanced.

mod condition;
mod dense;
mod solve;
pub mod sparse;

pub use solve::{ILL_CONDITIONED, SINGULAR_CONDITION, Solution, SolveError, Workspace};

use crate::circuit::Circuit;
use crate::elements::{Connection, ConnectionKind, ElementKind, NodeId};
use crate::line::{LineModel, LineProperties};
use sparse::Symbolic;
use std::collections::HashMap;

/// Why a circuit cannot be compiled into a network.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum NetworkError {
    /// The circuit has no pump.
    #[error("the circuit has no pump: add a `pump` section")]
    NoPump,
    /// A pump feeds a node held at zero ripple by a tank.
    #[error("pump `{pump}` feeds node `{node}`, which a tank holds at zero ripple")]
    PumpIntoTank {
        /// The pump.
        pump: String,
        /// The node.
        node: String,
    },
    /// Part of the circuit is not connected to any pump.
    #[error(
        "element `{element}` is not connected to any pump: every element must be reachable from a pump node through tubes, orifices or inertances"
    )]
    Disconnected {
        /// An element in the unreachable part.
        element: String,
    },
    /// Every node is held by a tank: nothing to solve.
    #[error("every node is held at zero ripple by a tank: nothing to solve")]
    NothingToSolve,
    /// The circuit's loops would make the factors of its network matrix
    /// larger than ripline's limit.
    #[error(
        "the circuit's loops make its network matrix too costly to factorise: the elimination reached {reached} entries or multiply-adds, over the limit of {limit}; a circuit of this size needs fewer cross-connections (a tree-like circuit with a few loops fits easily)"
    )]
    TooManyLoops {
        /// What the analysis reached when it stopped.
        reached: u64,
        /// The limit it passed.
        limit: u64,
    },
}

/// Where an element's contribution goes in the matrix (unknowns in
/// compile order; `None` = reference (tank) node).
#[derive(Debug, Clone, Copy, PartialEq)]
enum Slot {
    /// Two-port stamped by admittance.
    Admittance { a: Option<usize>, b: Option<usize> },
    /// Two-port with branch-flow unknowns qa (at a, a→b) and qb (at b, a→b).
    Transfer {
        a: Option<usize>,
        b: Option<usize>,
        qa: usize,
        qb: usize,
    },
    /// Shunt at a node.
    Shunt { at: Option<usize> },
    /// No matrix entry.
    Empty,
}

/// Marks a stamp entry that has no slot (an end at a tank node).
const NO_SLOT: u32 = u32::MAX;

/// An element's value slots in the sparse factor storage ([`NO_SLOT`] where
/// an end is a tank node).
#[derive(Debug, Clone, Copy, PartialEq)]
enum Stamp {
    /// Two-port admittance: entries (a,a), (a,b), (b,a), (b,b).
    Admittance([u32; 4]),
    /// Transfer two-port, modified nodal: entries (a,qa), (b,qb); the flow
    /// row qa: (qa,qa), (qa,b), (qa,qb); the pressure row qb: (qb,a),
    /// (qb,b), (qb,qb); and the positions of qa and qb in the solution.
    Transfer([u32; 8], [u32; 2]),
    /// Shunt: the node's diagonal.
    Shunt(u32),
    /// Nothing.
    Empty,
}

/// A lossy tube or hose whose two-port is an admittance: element index,
/// its line in [`Plan::lines`], its length.
#[derive(Debug, Clone, Copy)]
struct LossyLine {
    element: usize,
    line: usize,
    length_m: f64,
}

/// A circuit compiled for repeated per-frequency solves.
#[derive(Debug, Clone)]
pub struct Plan<'c> {
    circuit: &'c Circuit,
    /// Matrix index of each node (compile order); `None` for nodes held by a tank.
    node_index: Vec<Option<usize>>,
    slots: Vec<Slot>,
    /// For each element, the index of its line in `lines` (if it has one).
    line_of: Vec<Option<usize>>,
    /// The distinct lines of the circuit, each evaluated once per frequency.
    lines: Vec<LineProperties>,
    /// For each distinct line, its bore in `bores` when its model uses the
    /// laminar viscous factor.
    bore_of: Vec<Option<usize>>,
    /// The distinct (bore radius, kinematic viscosity) pairs: the viscous
    /// factor is evaluated once per pair and frequency.
    bores: Vec<(f64, f64)>,
    /// The lossy tubes and hoses stamped as admittances, whose two-ports
    /// are evaluated several at a time ([`crate::line::admittance_terms`]).
    lossy_lines: Vec<LossyLine>,
    unknowns: usize,
    z_ref: f64,
    /// Order and pattern of the sparse factorisation.
    symbolic: Symbolic,
    stamps: Vec<Stamp>,
    /// Each pump's diagonal slot (`NO_SLOT` at a tank).
    pump_slots: Vec<u32>,
    /// Each node's position in the (permuted) solution vector (`NO_SLOT` at
    /// a tank).
    node_pos: Vec<u32>,
}

impl<'c> Plan<'c> {
    /// Numbers the unknowns, checks that the circuit can be solved, and
    /// orders and analyses its sparse matrix.
    ///
    /// Every step takes time in proportion to the circuit's size (and to
    /// the fill its loops cause).
    ///
    /// # Errors
    /// [`NetworkError`] for a circuit with no pump, a pump into a tank node,
    /// a part not connected to any pump, nothing left to solve, or loops
    /// whose fill passes the factorisation's limits.
    pub fn compile(circuit: &'c Circuit) -> Result<Self, NetworkError> {
        if circuit.pumps.is_empty() {
            return Err(NetworkError::NoPump);
        }
        let mut tank = vec![false; circuit.nodes.len()];
        for e in &circuit.elements {
            if let (ElementKind::Tank, Connection::Shunt { at }) = (&e.kind, e.connection) {
                tank[at] = true;
            }
        }
        for pump in &circuit.pumps {
            if tank[pump.node] {
                return Err(NetworkError::PumpIntoTank {
                    pump: pump.name.clone(),
                    node: circuit.nodes[pump.node].name.clone(),
                });
            }
        }
        check_connected(circuit)?;

        let mut node_index = Vec::with_capacity(circuit.nodes.len());
        let mut next = 0;
        for &t in &tank {
            node_index.push(if t {
                None
            } else {
                next += 1;
                Some(next - 1)
            });
        }
        if next == 0 {
            return Err(NetworkError::NothingToSolve);
        }
        let mut slots = Vec::with_capacity(circuit.elements.len());
        for element in &circuit.elements {
            let slot = match (element.kind.connection_kind(), element.connection) {
                (ConnectionKind::AdmittanceTwoPort, Connection::Series { a, b }) => {
                    Slot::Admittance {
                        a: node_index[a],
                        b: node_index[b],
                    }
                }
                (ConnectionKind::TransferTwoPort, Connection::Series { a, b }) => {
                    next += 2;
                    Slot::Transfer {
                        a: node_index[a],
                        b: node_index[b],
                        qa: next - 2,
                        qb: next - 1,
                    }
                }
                (ConnectionKind::Shunt, Connection::Shunt { at }) => {
                    Slot::Shunt { at: node_index[at] }
                }
                _ => Slot::Empty,
            };
            slots.push(slot);
        }
        let (lines, line_of) = distinct_lines(circuit);
        let (bores, bore_of) = distinct_bores(&lines);
        let lossy_lines = circuit
            .elements
            .iter()
            .zip(&slots)
            .zip(&line_of)
            .enumerate()
            .filter_map(
                |(element, ((e, slot), &line))| match (e.kind.line(), slot, line) {
                    (Some(l), Slot::Admittance { .. }, Some(line))
                        if !l.properties.is_lossless() =>
                    {
                        Some(LossyLine {
                            element,
                            line,
                            length_m: l.length_m,
                        })
                    }
                    _ => None,
                },
            )
            .collect();

        let pump_nodes: Vec<Option<usize>> =
            circuit.pumps.iter().map(|p| node_index[p.node]).collect();
        // Elimination groups: branch flows first (a line's two flows then
        // leave its admittance between its nodes), node pressures next, the
        // pumps' nodes last, so that on a tree the flow injected there
        // reaches every node through single products in the back
        // substitution (no cancellation).
        let nodes = node_index.iter().flatten().count();
        let mut group = vec![0u8; next];
        group[..nodes].fill(1);
        for &p in pump_nodes.iter().flatten() {
            group[p] = 2;
        }
        let symbolic = Symbolic::new(next, &pattern(&slots, &pump_nodes), &group).map_err(|e| {
            NetworkError::TooManyLoops {
                reached: e.reached,
                limit: e.limit,
            }
        })?;
        let slot = |r: Option<usize>, c: Option<usize>| match (r, c) {
            (Some(r), Some(c)) => symbolic.slot(r, c),
            _ => NO_SLOT,
        };
        let stamps = slots
            .iter()
            .map(|s| match *s {
                Slot::Admittance { a, b } => {
                    Stamp::Admittance([slot(a, a), slot(a, b), slot(b, a), slot(b, b)])
                }
                Slot::Transfer { a, b, qa, qb } => {
                    let positions = [qa, qb].map(|q| symbolic.position(q) as u32);
                    let (qa, qb) = (Some(qa), Some(qb));
                    Stamp::Transfer(
                        [
                            slot(a, qa),
                            slot(b, qb),
                            slot(qa, qa),
                            slot(qa, b),
                            slot(qa, qb),
                            slot(qb, a),
                            slot(qb, b),
                            slot(qb, qb),
                        ],
                        positions,
                    )
                }
                Slot::Shunt { at } => Stamp::Shunt(slot(at, at)),
                Slot::Empty => Stamp::Empty,
            })
            .collect();
        let pump_slots = pump_nodes.iter().map(|&n| slot(n, n)).collect();
        let node_pos = node_index
            .iter()
            .map(|i| i.map_or(NO_SLOT, |i| symbolic.position(i) as u32))
            .collect();
        Ok(Plan {
            circuit,
            node_index,
            slots,
            line_of,
            lines,
            bore_of,
            bores,
            lossy_lines,
            unknowns: next,
            z_ref: reference_impedance(circuit),
            symbolic,
            stamps,
            pump_slots,
            node_pos,
        })
    }

    /// The circuit this plan solves.
    pub fn circuit(&self) -> &'c Circuit {
        self.circuit
    }

    /// Number of unknowns per frequency (node pressures and branch flows).
    pub fn unknowns(&self) -> usize {
        self.unknowns
    }

    /// The reference impedance Z_ref in Pa·s/m³ that rows and branch flows
    /// are non-dimensionalised with (module docs).
    pub fn reference_impedance(&self) -> f64 {
        self.z_ref
    }

    /// Number of distinct lines (propagations evaluated per frequency).
    pub fn distinct_lines(&self) -> usize {
        self.lines.len()
    }

    /// Number of distinct (bore, fluid) pairs (viscous factors evaluated
    /// per frequency).
    pub fn distinct_bores(&self) -> usize {
        self.bores.len()
    }

    /// A reusable workspace for [`Plan::solve`]: memory in proportion to
    /// the circuit (the dense reference path allocates its own on first use).
    pub fn workspace(&self) -> Workspace {
        Workspace::new(self)
    }
}

/// The structurally non-zero entries of the network matrix (compile-order
/// unknowns): every stamp's entries and each pump's diagonal.
fn pattern(slots: &[Slot], pump_nodes: &[Option<usize>]) -> Vec<(usize, usize)> {
    let mut entries = Vec::with_capacity(4 * slots.len() + pump_nodes.len());
    let mut push = |r: Option<usize>, c: Option<usize>| {
        if let (Some(r), Some(c)) = (r, c) {
            entries.push((r, c));
        }
    };
    for s in slots {
        match *s {
            Slot::Admittance { a, b } => {
                for (r, c) in [(a, a), (a, b), (b, a), (b, b)] {
                    push(r, c);
                }
            }
            Slot::Transfer { a, b, qa, qb } => {
                let (qa, qb) = (Some(qa), Some(qb));
                for (r, c) in [
                    (a, qa),
                    (b, qb),
                    (qa, qa),
                    (qa, b),
                    (qa, qb),
                    (qb, a),
                    (qb, b),
                    (qb, qb),
                ] {
                    push(r, c);
                }
            }
            Slot::Shunt { at } => push(at, at),
            Slot::Empty => {}
        }
    }
    for &n in pump_nodes {
        push(n, n);
    }
    entries
}

/// The distinct lines of a circuit (by [`LineProperties`]' `==`) and each
/// element's line: hashed on the properties' exact bits, then compared with
/// `==` within a bucket, so this takes time in proportion to the elements.
fn distinct_lines(circuit: &Circuit) -> (Vec<LineProperties>, Vec<Option<usize>>) {
    let mut lines: Vec<LineProperties> = Vec::new();
    let mut buckets: HashMap<[u64; 6], Vec<usize>> = HashMap::new();
    let line_of = circuit
        .elements
        .iter()
        .map(|e| {
            e.kind.line_properties().map(|p| {
                let turbulent = p.model == LineModel::Turbulent;
                let key = [
                    p.radius_m.to_bits(),
                    p.density_kg_m3.to_bits(),
                    p.kinematic_viscosity_m2_s.to_bits(),
                    p.effective_bulk_modulus_pa.to_bits(),
                    p.viscoelastic_wall
                        .map_or(0, |w| w.nominal_compliance_per_pa().to_bits()),
                    if turbulent {
                        p.mean_flow.flow_m3_s().map_or(1, f64::to_bits)
                    } else {
                        0
                    },
                ];
                let bucket = buckets.entry(key).or_default();
                match bucket.iter().find(|&&i| lines[i] == *p) {
                    Some(&i) => i,
                    None => {
                        lines.push(*p);
                        bucket.push(lines.len() - 1);
                        lines.len() - 1
                    }
                }
            })
        })
        .collect();
    (lines, line_of)
}

/// The distinct (bore radius, kinematic viscosity) pairs of the lines that
/// use the laminar viscous factor, and each line's pair.
fn distinct_bores(lines: &[LineProperties]) -> (Vec<(f64, f64)>, Vec<Option<usize>>) {
    let mut bores = Vec::new();
    let mut index: HashMap<(u64, u64), usize> = HashMap::new();
    let bore_of = lines
        .iter()
        .map(|p| {
            (p.model != LineModel::Lossless).then(|| {
                let key = (p.radius_m.to_bits(), p.kinematic_viscosity_m2_s.to_bits());
                *index.entry(key).or_insert_with(|| {
                    bores.push((p.radius_m, p.kinematic_viscosity_m2_s));
                    bores.len() - 1
                })
            })
        })
        .collect();
    (bores, bore_of)
}

/// The geometric mean of the lines' (tubes' and hoses') lossless
/// characteristic impedances, or 1e10 Pa·s/m³ (typical of hydraulic lines)
/// when there are none.
fn reference_impedance(circuit: &Circuit) -> f64 {
    let z0s: Vec<f64> = circuit
        .elements
        .iter()
        .filter_map(|e| e.kind.line().map(|l| l.properties.z0()))
        .collect();
    if z0s.is_empty() {
        1e10
    } else {
        (z0s.iter().map(|z| z.ln()).sum::<f64>() / z0s.len() as f64).exp()
    }
}

/// Every element must be reachable from a pump node through two-ports
/// (a search over the node–two-port graph, linear in its size).
fn check_connected(circuit: &Circuit) -> Result<(), NetworkError> {
    let n = circuit.nodes.len();
    let (start, neighbours) = circuit.two_port_adjacency(|_| ());
    let mut reached = vec![false; n];
    let mut stack: Vec<NodeId> = circuit.pumps.iter().map(|p| p.node).collect();
    while let Some(node) = stack.pop() {
        if std::mem::replace(&mut reached[node], true) {
            continue;
        }
        stack.extend(
            neighbours[start[node]..start[node + 1]]
                .iter()
                .map(|&(m, ())| m)
                .filter(|&m| !reached[m]),
        );
    }
    for e in &circuit.elements {
        let touches = match e.connection {
            Connection::Series { a, b } => reached[a] || reached[b],
            Connection::Shunt { at } => reached[at],
        };
        if !touches {
            return Err(NetworkError::Disconnected {
                element: e.name.clone(),
            });
        }
    }
    Ok(())
}

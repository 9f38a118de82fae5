//! Network assembly and the per-frequency solve.
//!
//! A [`Plan`] is compiled once from a [`Circuit`]: it numbers the unknowns
//! (one pressure per node that is not held by a tank, plus two branch flows per
//! element stamped by its transfer matrix) and records each element's matrix
//! slots. Each frequency is then an independent, cheap evaluation: every
//! element returns its [`crate::elements::Behaviour`], the plan scatters it into the nodal
//! admittance matrix Y, the pumps add their Norton shunts 1/Zs, and
//! `Y P = J` is solved by dense LU with partial pivoting (methods.md §7.1).
//!
//! Rows and unknowns are non-dimensionalised with a reference impedance
//! Z_ref (the mean characteristic impedance of the tubes): node rows are
//! multiplied by Z_ref and branch flows are carried as Z_ref·Q, so that
//! modified-nodal rows of different units stay balanced.

mod solve;

pub use solve::{ILL_CONDITIONED, SINGULAR_CONDITION, Solution, SolveError, Workspace};

use crate::circuit::Circuit;
use crate::elements::{Connection, ConnectionKind, NodeId};
use crate::line::LineProperties;

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
}

/// Where an element's contribution goes in the matrix.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Slot {
    /// Two-port stamped by admittance; `None` = reference (tank) node.
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

/// A circuit compiled for repeated per-frequency solves.
#[derive(Debug, Clone)]
pub struct Plan<'c> {
    circuit: &'c Circuit,
    /// Matrix index of each node; `None` for nodes held by a tank.
    node_index: Vec<Option<usize>>,
    slots: Vec<Slot>,
    /// For each element, the index of its line in `lines` (if it has one).
    line_of: Vec<Option<usize>>,
    /// The distinct lines of the circuit, each evaluated once per frequency.
    lines: Vec<LineProperties>,
    unknowns: usize,
    z_ref: f64,
}

impl<'c> Plan<'c> {
    /// Numbers the unknowns and checks that the circuit can be solved.
    ///
    /// # Errors
    /// [`NetworkError`] for a circuit with no pump, a pump into a tank node,
    /// a part not connected to any pump, or nothing left to solve.
    pub fn compile(circuit: &'c Circuit) -> Result<Self, NetworkError> {
        if circuit.pumps.is_empty() {
            return Err(NetworkError::NoPump);
        }
        let tank: Vec<bool> = (0..circuit.nodes.len())
            .map(|id| circuit.is_tank(id))
            .collect();
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
        let mut lines: Vec<LineProperties> = Vec::new();
        let line_of = circuit
            .elements
            .iter()
            .map(|e| {
                e.kind.line_properties().map(|p| {
                    lines.iter().position(|q| q == p).unwrap_or_else(|| {
                        lines.push(*p);
                        lines.len() - 1
                    })
                })
            })
            .collect();
        Ok(Plan {
            circuit,
            node_index,
            slots,
            line_of,
            lines,
            unknowns: next,
            z_ref: reference_impedance(circuit),
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

    /// A reusable workspace for [`Plan::solve`].
    pub fn workspace(&self) -> Workspace {
        Workspace::new(self.unknowns, self.circuit.elements.len(), self.lines.len())
    }
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

/// Every element must be reachable from a pump node through two-ports.
fn check_connected(circuit: &Circuit) -> Result<(), NetworkError> {
    let n = circuit.nodes.len();
    let mut reached = vec![false; n];
    let mut stack: Vec<NodeId> = circuit.pumps.iter().map(|p| p.node).collect();
    while let Some(node) = stack.pop() {
        if std::mem::replace(&mut reached[node], true) {
            continue;
        }
        for e in &circuit.elements {
            if let Connection::Series { a, b } = e.connection {
                if a == node && !reached[b] {
                    stack.push(b);
                } else if b == node && !reached[a] {
                    stack.push(a);
                }
            }
        }
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

//! How much a silencer attenuates: transmission loss of the element (or a
//! chain of elements) alone, and insertion loss in the user's circuit.
//!
//! * **Transmission loss** (Munjal, *Acoustics of Ducts and Mufflers*, 2014,
//!   §3; methods.md §4) is a property of the element: the ratio of the
//!   power of a wave incident from an upstream pipe of real characteristic
//!   impedance Z1 to the power transmitted into an anechoic downstream pipe
//!   of impedance Z2. With the element's transfer matrix T,
//!   TL = 20 log10(|T11 + T12/Z2 + Z1 T21 + (Z1/Z2) T22| / 2) + 10 log10(Z2/Z1).
//!   A shunt Y is T = [[1, 0], [Y, 1]]; a chain of elements multiplies
//!   their matrices in order along the flow. The reference impedances are
//!   the lossless Z0 = ρc0/A of the pipes either side.
//! * **Insertion loss** at a measurement point is
//!   IL = 20 log10 |P_without / P_with|, the same pump driving the circuit
//!   with the silencer and with it replaced by a stated reference. A shunt
//!   silencer is simply removed. A two-port is replaced either by a
//!   **pipe** of the same length with the properties of the upstream pipe
//!   (the circuit keeps its geometry), or by a **zero-length** connection
//!   (its two nodes merged). IL depends on the source, the load and the
//!   point, unlike TL.

use crate::circuit::{Circuit, Node, Tap, TapLocation};
use crate::elements::{Behaviour, Connection, Element, ElementKind, NodeId};
use crate::line::Transfer2;
use crate::network::{NetworkError, Plan, SolveError, Workspace};
use num_complex::Complex64 as C64;

const ONE: C64 = C64 { re: 1.0, im: 0.0 };
const ZERO: C64 = C64 { re: 0.0, im: 0.0 };

/// Why a silencer analysis cannot be done.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SilencerError {
    /// The listed elements do not form a path.
    #[error(
        "element `{element}` does not continue the chain at node `{node}`: list the elements in order along the line (two-ports end to end, shunts at the node reached so far)"
    )]
    NotAChain {
        /// The element that breaks the chain.
        element: String,
        /// The node the chain had reached.
        node: String,
    },
    /// An element that cannot be part of a silencer chain.
    #[error("element `{element}` ({kind}) cannot be analysed as part of a silencer")]
    NotASilencerPart {
        /// The element.
        element: String,
        /// Its kind.
        kind: &'static str,
    },
    /// The same element is listed twice.
    #[error("element `{0}` is listed twice")]
    Repeated(String),
    /// No pipe to take a reference impedance from.
    #[error(
        "no tube or hose meets the {side} end of the chain (node `{node}`), so there is no reference line for the transmission loss: name one with --reference LINE"
    )]
    NoReferencePipe {
        /// "upstream" or "downstream".
        side: &'static str,
        /// The node.
        node: String,
    },
    /// A pipe reference for a two-port that has no length.
    #[error(
        "element `{0}` has no length, so it cannot be replaced by a pipe of equal length: use the zero-length reference"
    )]
    NoLength(String),
    /// A measurement point sits on an element that the reference removes.
    #[error(
        "point `{0}` lies along an element that the reference circuit removes: choose another point"
    )]
    TapOnRemoved(String),
    /// The reference circuit does not form a network.
    #[error("the circuit without the silencer cannot be solved: {0}")]
    Network(#[from] NetworkError),
    /// A solve failed.
    #[error(transparent)]
    Solve(#[from] SolveError),
    /// A result is not a finite number.
    #[error("{what} is not a finite number at {freq_hz:.6} Hz")]
    NotFinite {
        /// What was computed.
        what: String,
        /// The frequency.
        freq_hz: f64,
    },
}

/// The transfer matrix of one element at ω: a two-port's own (oriented from
/// its `from` node to its `to` node), or [[1, 0], [Y, 1]] for a shunt.
///
/// # Errors
/// [`SilencerError::NotASilencerPart`] for a tank, or a two-port whose
/// admittance has no transfer form.
pub fn element_transfer(element: &Element, omega: f64) -> Result<Transfer2, SilencerError> {
    let refuse = || SilencerError::NotASilencerPart {
        element: element.name.clone(),
        kind: element.kind.name(),
    };
    if matches!(element.kind, ElementKind::Tank) {
        return Err(refuse());
    }
    Ok(match element.kind.behaviour(omega) {
        Behaviour::Transfer(t) => t,
        // From flows leaving each node, Qa = y11 Pa + y12 Pb and
        // −Qb = y21 Pa + y22 Pb: T = −(1/y21)[[y22, 1], [det y, y11]].
        Behaviour::Admittance(y) => {
            if y[1][0] == ZERO {
                return Err(refuse());
            }
            let det = y[0][0] * y[1][1] - y[0][1] * y[1][0];
            let k = -y[1][0].inv();
            [[k * y[1][1], k], [k * det, k * y[0][0]]]
        }
        Behaviour::Shunt(y) => [[ONE, ZERO], [y, ONE]],
        Behaviour::Nothing => [[ONE, ZERO], [ZERO, ONE]],
    })
}

/// The product of two transfer matrices, a then b.
pub fn multiply(a: &Transfer2, b: &Transfer2) -> Transfer2 {
    crate::elements::cascade(a, b)
}

/// The matrix of a two-port passed from its `to` end to its `from` end:
/// (1/det T)[[T22, T12], [T21, T11]].
pub fn reversed(t: &Transfer2) -> Transfer2 {
    let det = t[0][0] * t[1][1] - t[0][1] * t[1][0];
    [
        [t[1][1] / det, t[0][1] / det],
        [t[1][0] / det, t[0][0] / det],
    ]
}

/// Transmission loss in dB of a two-port T between pipes of real
/// characteristic impedance `z1_pa_s_m3` upstream and `z2_pa_s_m3`
/// downstream (see the module docs).
pub fn transmission_loss_db(t: &Transfer2, z1_pa_s_m3: f64, z2_pa_s_m3: f64) -> f64 {
    let a =
        t[0][0] + t[0][1] / z2_pa_s_m3 + t[1][0] * z1_pa_s_m3 + t[1][1] * (z1_pa_s_m3 / z2_pa_s_m3);
    20.0 * (a.norm() / 2.0).log10() + 10.0 * (z2_pa_s_m3 / z1_pa_s_m3).log10()
}

/// Elements listed in order along a path.
#[derive(Debug, Clone, PartialEq)]
pub struct Chain {
    /// Element indices with whether each two-port is passed from its `to`
    /// end to its `from` end.
    pub parts: Vec<(usize, bool)>,
    /// The node where the chain starts.
    pub entrance: NodeId,
    /// The node where it ends (the entrance when it holds only shunts).
    pub exit: NodeId,
}

impl Chain {
    /// Orders and checks the elements `ids` (indices into the circuit).
    ///
    /// # Errors
    /// [`SilencerError`] when the elements are repeated, are not end to end,
    /// or include a tank.
    pub fn new(circuit: &Circuit, ids: &[usize]) -> Result<Chain, SilencerError> {
        let mut at: Option<NodeId> = None;
        let mut entrance = None;
        let mut parts = Vec::with_capacity(ids.len());
        for (n, &i) in ids.iter().enumerate() {
            let e = &circuit.elements[i];
            if ids[..n].contains(&i) {
                return Err(SilencerError::Repeated(e.name.clone()));
            }
            if matches!(e.kind, ElementKind::Tank) {
                return Err(SilencerError::NotASilencerPart {
                    element: e.name.clone(),
                    kind: e.kind.name(),
                });
            }
            let broken = |node: NodeId| SilencerError::NotAChain {
                element: e.name.clone(),
                node: circuit.nodes[node].name.clone(),
            };
            match e.connection {
                Connection::Shunt { at: node } => match at {
                    None => at = Some(node),
                    Some(cur) if cur == node => {}
                    Some(cur) => return Err(broken(cur)),
                },
                Connection::Series { a, b } => match at {
                    None => {
                        at = Some(b);
                        entrance.get_or_insert(a);
                        parts.push((i, false));
                        continue;
                    }
                    Some(cur) if cur == a => {
                        at = Some(b);
                        parts.push((i, false));
                        continue;
                    }
                    Some(cur) if cur == b => {
                        at = Some(a);
                        parts.push((i, true));
                        continue;
                    }
                    Some(cur) => return Err(broken(cur)),
                },
            }
            entrance.get_or_insert(at.expect("set above"));
            parts.push((i, false));
        }
        let exit = at.expect("at least one element");
        Ok(Chain {
            parts,
            entrance: entrance.unwrap_or(exit),
            exit,
        })
    }

    /// The chain's transfer matrix at ω, entrance to exit.
    ///
    /// # Errors
    /// From [`element_transfer`], or a non-finite matrix.
    pub fn transfer(&self, circuit: &Circuit, freq_hz: f64) -> Result<Transfer2, SilencerError> {
        let omega = 2.0 * std::f64::consts::PI * freq_hz;
        let mut t = [[ONE, ZERO], [ZERO, ONE]];
        for &(i, rev) in &self.parts {
            let m = element_transfer(&circuit.elements[i], omega)?;
            let m = if rev { reversed(&m) } else { m };
            t = multiply(&t, &m);
        }
        if !t.iter().flatten().all(|v| v.is_finite()) {
            return Err(SilencerError::NotFinite {
                what: "the silencer's transfer matrix".into(),
                freq_hz,
            });
        }
        Ok(t)
    }

    /// Whether the chain holds a two-port.
    pub fn has_two_port(&self, circuit: &Circuit) -> bool {
        self.parts
            .iter()
            .any(|&(i, _)| matches!(circuit.elements[i].connection, Connection::Series { .. }))
    }

    fn contains(&self, i: usize) -> bool {
        self.parts.iter().any(|&(j, _)| j == i)
    }

    /// The reference lines either side: a tube or hose (not in the chain)
    /// at the entrance, preferring the one that leads towards the first
    /// pump, and one at the exit other than that one (the same one when the
    /// chain sits at a single node met by one line).
    ///
    /// # Errors
    /// [`SilencerError::NoReferencePipe`] when no tube or hose meets an end.
    pub fn reference_pipes(&self, circuit: &Circuit) -> Result<(usize, usize), SilencerError> {
        let tubes_at = |node: NodeId| -> Vec<usize> {
            circuit
                .elements
                .iter()
                .enumerate()
                .filter(|(i, e)| {
                    !self.contains(*i)
                        && e.kind.line().is_some()
                        && matches!(e.connection, Connection::Series { a, b } if a == node || b == node)
                })
                .map(|(i, _)| i)
                .collect()
        };
        let hops = hops_from_pump(circuit, self);
        let far_end = |i: usize, node: NodeId| match circuit.elements[i].connection {
            Connection::Series { a, b } if a == node => b,
            Connection::Series { a, .. } => a,
            Connection::Shunt { at } => at,
        };
        let up = tubes_at(self.entrance)
            .into_iter()
            .min_by_key(|&i| hops[far_end(i, self.entrance)])
            .ok_or_else(|| SilencerError::NoReferencePipe {
                side: "upstream",
                node: circuit.nodes[self.entrance].name.clone(),
            })?;
        let down = tubes_at(self.exit)
            .into_iter()
            .find(|&i| i != up)
            .or_else(|| (self.entrance == self.exit).then_some(up))
            .ok_or_else(|| SilencerError::NoReferencePipe {
                side: "downstream",
                node: circuit.nodes[self.exit].name.clone(),
            })?;
        Ok((up, down))
    }
}

/// Number of two-port hops from the first pump's node to every node,
/// without passing through the chain (usize::MAX where unreachable).
fn hops_from_pump(circuit: &Circuit, chain: &Chain) -> Vec<usize> {
    let mut hops = vec![usize::MAX; circuit.nodes.len()];
    let Some(pump) = circuit.pumps.first() else {
        return hops;
    };
    let mut queue = std::collections::VecDeque::from([pump.node]);
    hops[pump.node] = 0;
    while let Some(n) = queue.pop_front() {
        for (i, e) in circuit.elements.iter().enumerate() {
            if chain.contains(i) {
                continue;
            }
            if let Connection::Series { a, b } = e.connection {
                let other = if a == n {
                    b
                } else if b == n {
                    a
                } else {
                    continue;
                };
                if hops[other] == usize::MAX {
                    hops[other] = hops[n] + 1;
                    queue.push_back(other);
                }
            }
        }
    }
    hops
}

/// What replaces a two-port silencer in the "without" circuit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WithoutReference {
    /// A pipe of the same total length with the upstream pipe's properties.
    Pipe,
    /// A zero-length connection: the chain's end nodes are merged.
    ZeroLength,
}

impl WithoutReference {
    /// How reports describe it.
    pub fn describe(self) -> &'static str {
        match self {
            WithoutReference::Pipe => {
                "replaced by a pipe of the same length as the upstream pipe's bore and wall"
            }
            WithoutReference::ZeroLength => {
                "replaced by a zero-length connection (its end nodes merged)"
            }
        }
    }
}

/// The circuit with the chain taken out: shunts removed, two-ports replaced
/// as `reference` says (`pipe` is the tube or hose whose properties a
/// replacement pipe takes: a hose is replaced by the same hose, its wall
/// included).
///
/// # Errors
/// [`SilencerError`] when a two-port has no length for a pipe reference or
/// a measurement point lies on a removed element.
pub fn circuit_without(
    circuit: &Circuit,
    chain: &Chain,
    reference: WithoutReference,
    pipe: Option<&ElementKind>,
) -> Result<Circuit, SilencerError> {
    let two_port = chain.has_two_port(circuit);
    let merge = two_port && reference == WithoutReference::ZeroLength;
    // Node renumbering: the exit merges into the entrance when merging.
    let node_map: Vec<NodeId> = (0..circuit.nodes.len())
        .map(|n| {
            let n = if merge && n == chain.exit {
                chain.entrance
            } else {
                n
            };
            if merge && n > chain.exit { n - 1 } else { n }
        })
        .collect();
    let nodes: Vec<Node> = circuit
        .nodes
        .iter()
        .enumerate()
        .filter(|(n, _)| !(merge && *n == chain.exit))
        .map(|(_, node)| node.clone())
        .collect();
    let map_connection = |c: Connection| match c {
        Connection::Series { a, b } => Connection::Series {
            a: node_map[a],
            b: node_map[b],
        },
        Connection::Shunt { at } => Connection::Shunt { at: node_map[at] },
    };
    let mut element_map = vec![None; circuit.elements.len()];
    let mut elements = Vec::with_capacity(circuit.elements.len());
    for (i, e) in circuit.elements.iter().enumerate() {
        if chain.contains(i) {
            continue;
        }
        element_map[i] = Some(elements.len());
        elements.push(Element {
            name: e.name.clone(),
            kind: e.kind.clone(),
            connection: map_connection(e.connection),
        });
    }
    if two_port && reference == WithoutReference::Pipe {
        let mut length = 0.0;
        for &(i, _) in &chain.parts {
            let e = &circuit.elements[i];
            match (&e.kind, e.connection) {
                (_, Connection::Shunt { .. }) => {}
                (ElementKind::Tube(t), _) => length += t.line.length_m,
                (ElementKind::Hose(h), _) => length += h.line.length_m,
                (ElementKind::ExpansionChamber(c), _) => {
                    length += c.tube.line.length_m + c.ports.map_or(0.0, |p| 2.0 * p.length_m)
                }
                (ElementKind::InlineDamper(d), _) => length += 2.0 * d.vessel.neck_length_m,
                _ => return Err(SilencerError::NoLength(e.name.clone())),
            }
        }
        let mut kind = pipe
            .expect("a pipe reference needs the upstream pipe")
            .clone();
        kind.line_mut()
            .expect("the reference pipe is a tube or a hose")
            .length_m = length;
        elements.push(Element {
            name: "reference pipe (in place of the silencer)".into(),
            kind,
            connection: Connection::Series {
                a: node_map[chain.entrance],
                b: node_map[chain.exit],
            },
        });
    }
    let taps = circuit
        .taps
        .iter()
        .map(|t| {
            let location = match t.location {
                TapLocation::Node(n) => TapLocation::Node(node_map[n]),
                TapLocation::AlongTube {
                    element,
                    distance_m,
                } => TapLocation::AlongTube {
                    element: element_map[element]
                        .ok_or_else(|| SilencerError::TapOnRemoved(t.name.clone()))?,
                    distance_m,
                },
            };
            Ok(Tap {
                name: t.name.clone(),
                location,
            })
        })
        .collect::<Result<Vec<_>, SilencerError>>()?;
    let mut pumps = circuit.pumps.clone();
    for p in &mut pumps {
        p.node = node_map[p.node];
    }
    Ok(Circuit {
        title: circuit.title.clone(),
        fluid: circuit.fluid,
        nodes,
        elements,
        pumps,
        taps,
        harmonics: circuit.harmonics,
    })
}

/// The pressure at a point per unit source flow of pump `pump_index`.
///
/// # Errors
/// [`SolveError`] from the network solve.
pub fn pressure_per_unit_flow(
    plan: &Plan<'_>,
    pump_index: usize,
    location: TapLocation,
    freq_hz: f64,
    ws: &mut Workspace,
) -> Result<C64, SolveError> {
    let circuit = plan.circuit();
    let node = circuit.pumps[pump_index].node;
    let s = plan.solve(freq_hz, &[(node, ONE)], ws)?;
    Ok(super::ripple::tap_pressure(circuit, &s, location))
}

/// Insertion loss in dB at one frequency from the pressures with and
/// without the silencer (per unit source flow).
pub fn insertion_loss_db(with: C64, without: C64) -> f64 {
    20.0 * (without.norm() / with.norm()).log10()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reversal_undoes_a_two_port() {
        let t: Transfer2 = [
            [C64::new(0.3, 0.1), C64::new(2.0, -1.0)],
            [C64::new(0.05, 0.2), C64::new(1.1, 0.4)],
        ];
        // Turning an element round twice gives it back.
        let back = reversed(&reversed(&t));
        for i in 0..2 {
            for j in 0..2 {
                assert!((back[i][j] - t[i][j]).norm() < 1e-14);
            }
        }
    }

    #[test]
    fn an_identity_has_no_transmission_loss() {
        let id = [[ONE, ZERO], [ZERO, ONE]];
        assert!(transmission_loss_db(&id, 1e10, 1e10).abs() < 1e-12);
        // Between unequal pipes the bare junction has the classical loss
        // 10 log10((Z1+Z2)²/(4 Z1 Z2)), the inverse of the power transmission
        // coefficient at a change of cross-section (Kinsler et al.,
        // Fundamentals of Acoustics, 4th ed., 2000, ch. 10).
        let tl = transmission_loss_db(&id, 1e10, 4e10);
        assert!((tl - 10.0 * (25.0f64 / 16.0).log10()).abs() < 1e-12, "{tl}");
    }
}

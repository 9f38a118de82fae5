//! The mean (steady) flow through every line: the pumps' displacement × speed
//! split by the circuit, for the turbulent-friction correction and its
//! warnings.
//!
//! The split is a DC resistive network solve (Kirchhoff's laws with linear
//! resistances) on the same nodes as the ripple solve:
//!
//! | element | carries mean flow as |
//! |---|---|
//! | pump | a flow source Q̄ = displacement × speed into its node (volumetric losses neglected); a pump without a displacement injects nothing |
//! | tube, hose | the Hagen–Poiseuille resistance R = 8μl/(πr⁴) (laminar; a turbulent line's higher resistance is ignored for the split) |
//! | orifice | the secant resistance Δp̄/Q̄ = R/2 of a turbulent orifice linearised as R = 2Δp̄/Q̄ (consistent with its stated mean flow and pressure drop) |
//! | inertance | its resistance (a passage of zero resistance joins its two nodes) |
//! | load valve | a path to tank with the secant resistance R/2 |
//! | relief valve, open check valve | the secant resistance p̄/Q̄ of their operating point (to tank, or between their nodes) |
//! | cylinder, closed check valve | no mean flow (a steady piston speed is not modelled: give the lines' `mean_flow`) |
//! | tank | zero mean pressure: the flow returns there |
//! | anechoic end | zero mean pressure: it stands for a line that continues, and the flow leaves there |
//! | volume, closed end | no mean flow |
//! | any other two-port | joins its nodes (no resistance) |
//!
//! A line given a `mean_flow` in the circuit file keeps it and does not change
//! the split of the others. Where the pumps' flow has no way to a tank, load
//! valve or anechoic end, the mean flows of that part of the circuit are
//! unknown. All of this is linear: flows scale with pump speed, so after
//! changing a speed call [`resolve_line_mean_flows`] again.

use crate::circuit::Circuit;
use crate::elements::{CheckState, CheckValve, Connection, ElementKind};
use crate::line::MeanFlow;
use crate::network::sparse::{self, PivotedLu, Symbolic};
use num_complex::Complex64 as C64;

/// The mean flows of a circuit.
#[derive(Debug, Clone, PartialEq)]
pub struct MeanFlows {
    /// For each element, its mean flow in m³/s (two-ports a→b positive,
    /// shunts into the element), when known.
    pub element_flows_m3_s: Vec<Option<f64>>,
    /// Pumps whose mean flow has no way out to a tank, load valve or
    /// anechoic end.
    pub trapped_pumps: Vec<String>,
}

/// How an element carries mean flow.
enum Dc {
    /// A resistance between two nodes.
    Series { a: usize, b: usize, r: f64 },
    /// Joins two nodes.
    Short { a: usize, b: usize },
    /// A resistance from a node to the tank.
    ToTank { at: usize, r: f64 },
    /// Holds its node at zero mean pressure.
    Sink { at: usize },
    /// Nothing.
    Open,
}

fn dc_model(circuit: &Circuit, index: usize) -> Dc {
    let e = &circuit.elements[index];
    let mu = circuit.fluid.dynamic_viscosity_pa_s();
    match (&e.kind, e.connection) {
        // a cylinder's piston (held by its load) and a closed check valve
        // pass no steady flow
        (ElementKind::Cylinder(_), _)
        | (
            ElementKind::CheckValve(CheckValve {
                state: CheckState::Closed,
                ..
            }),
            _,
        ) => Dc::Open,
        (kind, Connection::Series { a, b }) => {
            let r = match kind {
                ElementKind::Tube(_) | ElementKind::Hose(_) => {
                    let line = kind.line().expect("tubes and hoses are lines");
                    let radius = line.properties.radius_m;
                    8.0 * mu * line.length_m / (std::f64::consts::PI * radius.powi(4))
                }
                ElementKind::Orifice(o) => 0.5 * o.resistance_pa_s_m3,
                ElementKind::Inertance(i) => i.resistance_pa_s_m3,
                ElementKind::ReliefValve(v) => {
                    v.operating.pressure_drop_pa / v.operating.mean_flow_m3_s
                }
                ElementKind::CheckValve(v) => v.pressure_drop_pa / v.mean_flow_m3_s,
                _ => 0.0,
            };
            if r > 0.0 && r.is_finite() {
                Dc::Series { a, b, r }
            } else {
                Dc::Short { a, b }
            }
        }
        (ElementKind::LoadValve(v), Connection::Shunt { at }) => Dc::ToTank {
            at,
            r: 0.5 * v.resistance_pa_s_m3,
        },
        (ElementKind::ReliefValve(v), Connection::Shunt { at }) => Dc::ToTank {
            at,
            r: v.operating.pressure_drop_pa / v.operating.mean_flow_m3_s,
        },
        (ElementKind::Tank | ElementKind::Anechoic(_), Connection::Shunt { at }) => Dc::Sink { at },
        _ => Dc::Open,
    }
}

fn find(parent: &mut [usize], mut i: usize) -> usize {
    while parent[i] != i {
        parent[i] = parent[parent[i]];
        i = parent[i];
    }
    i
}

fn union(parent: &mut [usize], a: usize, b: usize) {
    let (ra, rb) = (find(parent, a), find(parent, b));
    if ra != rb {
        parent[rb] = ra;
    }
}

/// Solves G·p = q for the node pressures of the grounded parts (`index`:
/// each representative node's unknown), with the sparse LU of the network
/// solve ([`crate::network::sparse`]): G is a conductance matrix, symmetric
/// and positive definite on grounded parts, so the static order is safe and
/// the time is in proportion to the circuit. `None` if it is singular.
fn solve_conductances(
    count: usize,
    models: &[Dc],
    index: &[Option<usize>],
    rep: &[usize],
    injection: &[f64],
) -> Option<Vec<f64>> {
    if count == 0 {
        return Some(Vec::new());
    }
    // (row, column, value) of every conductance stamp
    let mut stamps: Vec<(usize, usize, f64)> = Vec::new();
    for m in models {
        match *m {
            Dc::Series { a, b, r } => {
                let (ia, ib) = (index[rep[a]], index[rep[b]]);
                let y = 1.0 / r;
                if let Some(ia) = ia {
                    stamps.push((ia, ia, y));
                }
                if let Some(ib) = ib {
                    stamps.push((ib, ib, y));
                }
                if let (Some(ia), Some(ib)) = (ia, ib) {
                    stamps.push((ia, ib, -y));
                    stamps.push((ib, ia, -y));
                }
            }
            Dc::ToTank { at, r } => {
                if let Some(i) = index[rep[at]] {
                    stamps.push((i, i, 1.0 / r));
                }
            }
            _ => {}
        }
    }
    let mut entries: Vec<(usize, usize)> = stamps.iter().map(|&(r, c, _)| (r, c)).collect();
    entries.extend((0..count).map(|i| (i, i)));
    let symbolic = Symbolic::new(count, &entries, &vec![0; count]).ok()?;
    let mut vals = vec![C64::new(0.0, 0.0); symbolic.slots()];
    for &(r, c, v) in &stamps {
        vals[symbolic.slot(r, c) as usize] += v;
    }
    let mut rhs = vec![C64::new(0.0, 0.0); count];
    for (i, &q) in injection.iter().enumerate() {
        if let Some(k) = index[i] {
            rhs[symbolic.position(k)] = C64::new(q, 0.0);
        }
    }
    let assembled = vals.clone();
    let mut mass = vec![0.0; vals.len()];
    if sparse::factor_static(&symbolic, &mut vals, &mut mass).is_some() {
        sparse::solve_static(&symbolic, &vals, &mut rhs, None);
    } else {
        let mut lu = PivotedLu::default();
        let pivot_ratio = lu.factor(&symbolic, &assembled);
        if pivot_ratio.is_nan() || pivot_ratio <= 0.0 {
            return None;
        }
        lu.solve(&mut rhs);
    }
    Some((0..count).map(|k| rhs[symbolic.position(k)].re).collect())
}

/// Solves the mean-flow (DC) network of a circuit at its pumps' speeds.
pub fn mean_flows(circuit: &Circuit) -> MeanFlows {
    let n = circuit.nodes.len();
    let unknown = MeanFlows {
        element_flows_m3_s: vec![None; circuit.elements.len()],
        trapped_pumps: Vec::new(),
    };
    if circuit.pumps.iter().all(|p| p.mean_flow_m3_s().is_none()) {
        return unknown;
    }
    let models: Vec<Dc> = (0..circuit.elements.len())
        .map(|i| dc_model(circuit, i))
        .collect();

    // Nodes joined by shorts are one node.
    let mut joined: Vec<usize> = (0..n).collect();
    for m in &models {
        if let Dc::Short { a, b } = *m {
            union(&mut joined, a, b);
        }
    }
    let rep: Vec<usize> = (0..n).map(|i| find(&mut joined, i)).collect();
    let mut sink = vec![false; n];
    for m in &models {
        if let Dc::Sink { at } = *m {
            sink[rep[at]] = true;
        }
    }

    // Connected parts through resistances; a part is grounded when it holds
    // a sink or a path to tank.
    let mut part: Vec<usize> = (0..n).collect();
    for m in &models {
        if let Dc::Series { a, b, .. } = *m {
            union(&mut part, rep[a], rep[b]);
        }
    }
    let part_of: Vec<usize> = (0..n).map(|i| find(&mut part, rep[i])).collect();
    let mut grounded = vec![false; n];
    for i in 0..n {
        if sink[rep[i]] {
            grounded[part_of[i]] = true;
        }
    }
    for m in &models {
        if let Dc::ToTank { at, .. } = *m {
            grounded[part_of[at]] = true;
        }
    }
    let mut injection = vec![0.0; n];
    let mut trapped_pumps = Vec::new();
    for p in &circuit.pumps {
        let q = p.mean_flow_m3_s().unwrap_or(0.0);
        if q != 0.0 && !grounded[part_of[p.node]] {
            trapped_pumps.push(p.name.clone());
        }
        injection[rep[p.node]] += q;
    }
    let mut trapped_part = vec![false; n];
    for p in &circuit.pumps {
        if p.mean_flow_m3_s().is_some_and(|q| q != 0.0) && !grounded[part_of[p.node]] {
            trapped_part[part_of[p.node]] = true;
        }
    }

    // Unknowns: the representative nodes of grounded parts that are not sinks.
    let mut index = vec![None; n];
    let mut count = 0;
    for i in 0..n {
        if rep[i] == i && grounded[part_of[i]] && !sink[i] {
            index[i] = Some(count);
            count += 1;
        }
    }
    let pressures = solve_conductances(count, &models, &index, &rep, &injection);
    let Some(pressures) = pressures.filter(|p| p.iter().all(|v| v.is_finite())) else {
        return MeanFlows {
            trapped_pumps,
            ..unknown
        };
    };
    let pressure = |node: usize| index[rep[node]].map_or(0.0, |k| pressures[k]);
    // Round-off in a branch that carries nothing (a dead leg) is set to zero.
    let total: f64 = injection.iter().map(|q| q.abs()).sum();
    let clean = |q: f64| if q.abs() <= 1e-12 * total { 0.0 } else { q };
    let element_flows_m3_s = models
        .iter()
        .map(|m| match *m {
            Dc::Series { a, .. } if trapped_part[part_of[a]] => None,
            Dc::Series { a, b, r } => Some(clean((pressure(a) - pressure(b)) / r)),
            Dc::ToTank { at, r } => Some(clean(pressure(at) / r)),
            Dc::Open => Some(0.0),
            Dc::Short { .. } | Dc::Sink { .. } => None,
        })
        .collect();
    MeanFlows {
        element_flows_m3_s,
        trapped_pumps,
    }
}

/// Sets the mean flow of every tube and hose that was not given one in the
/// circuit file ([`MeanFlow::FromPumps`] or [`MeanFlow::Unknown`]) from
/// [`mean_flows`], and keeps every anechoic end matched to its (updated)
/// line. Returns the solved mean flows.
pub fn resolve_line_mean_flows(circuit: &mut Circuit) -> MeanFlows {
    let flows = mean_flows(circuit);
    // (connection, properties before, properties after) of each changed line
    let mut changed = Vec::new();
    for (e, q) in circuit.elements.iter_mut().zip(&flows.element_flows_m3_s) {
        if let Some(line) = e.kind.line_mut() {
            let old = line.properties;
            if !matches!(old.mean_flow, MeanFlow::Given(_)) {
                line.properties.mean_flow = q.map_or(MeanFlow::Unknown, MeanFlow::FromPumps);
            }
            if line.properties.mean_flow != old.mean_flow {
                changed.push((e.connection, old, line.properties));
            }
        }
    }
    for e in &mut circuit.elements {
        let (ElementKind::Anechoic(a), Connection::Shunt { at }) = (&mut e.kind, e.connection)
        else {
            continue;
        };
        // the line it was copied from: equal before, and preferably ending at its node
        let touches =
            |c: &Connection| matches!(*c, Connection::Series { a, b } if a == at || b == at);
        let matching = || changed.iter().filter(|(_, old, _)| *old == a.line);
        if let Some((_, _, new)) = matching()
            .find(|(c, _, _)| touches(c))
            .or_else(|| matching().next())
        {
            a.line = *new;
        }
    }
    flows
}

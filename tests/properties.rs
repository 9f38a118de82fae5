//! Property tests over randomly generated passive circuits (proptest, seeded
//! by proptest's own deterministic runner).
//!
//! * Passivity: a network of passive elements absorbs power, so every driving
//!   point impedance has Re Zin ≥ 0 (Kinsler et al., Fundamentals of
//!   Acoustics, §10; any linear passive network).
//! * Reciprocity: for networks of reciprocal elements the transfer impedance
//!   is symmetric, P_j/Q_i = P_i/Q_j (Rayleigh's reciprocity theorem; for
//!   lines it follows from det T = 1).
//! * Energy balance: the mean power the pump delivers into the network,
//!   ½Re(P·Q*), equals the sum of the powers its elements absorb
//!   (conservation of energy; Tellegen's theorem for networks).
//! * Lossless networks (lossless lines, pure inertances and volumes, closed
//!   ends, tanks) absorb no mean power, so Re Zin = 0.

use proptest::prelude::*;
use ripline::C64;
use ripline::circuit::{Circuit, Node};
use ripline::elements::{
    Connection, Element, ElementKind, Inertance, LoadValve, Orifice, Tube, Volume,
};
use ripline::fluid::Fluid;
use ripline::line::{Line, LineModel, LineProperties, MeanFlow};
use ripline::network::Plan;
use ripline::source::{FlowHarmonic, FlowRipple, Pump, SourceImpedance};
use ripline::wall::Wall;

const FLUID: Fluid = Fluid {
    density_kg_m3: 870.0,
    bulk_modulus_pa: 1.6e9,
    kinematic_viscosity_m2_s: 32e-6,
};

#[derive(Debug, Clone)]
enum Part {
    Tube { length: f64, bore: f64 },
    LosslessTube { length: f64, bore: f64 },
    Orifice { r: f64 },
    Inertance { i: f64, r: f64 },
}

#[derive(Debug, Clone)]
enum Shunt {
    Volume(f64),
    Valve(f64),
}

fn part() -> impl Strategy<Value = Part> + Clone {
    prop_oneof![
        4 => (0.05f64..8.0, 3e-3f64..30e-3).prop_map(|(length, bore)| Part::Tube { length, bore }),
        1 => (1e8f64..1e12).prop_map(|r| Part::Orifice { r }),
        1 => (1e5f64..1e8, 0.0f64..1e9).prop_map(|(i, r)| Part::Inertance { i, r }),
    ]
}

fn shunt() -> impl Strategy<Value = Shunt> + Clone {
    prop_oneof![
        (1e-6f64..5e-3).prop_map(Shunt::Volume),
        (1e9f64..1e12).prop_map(Shunt::Valve),
    ]
}

/// A connected random network: a spanning tree, extra branches making
/// loops, shunts, and possibly one tank node.
fn random_circuit() -> impl Strategy<Value = Circuit> {
    random_network(part(), shunt(), true)
}

/// Lossless parts only: lossless tubes, pure inertances, volumes.
fn lossless_part() -> impl Strategy<Value = Part> + Clone {
    prop_oneof![
        4 => (0.05f64..8.0, 3e-3f64..30e-3).prop_map(|(length, bore)| Part::LosslessTube { length, bore }),
        1 => (1e5f64..1e8).prop_map(|i| Part::Inertance { i, r: 0.0 }),
    ]
}

/// A random network from the given parts and shunts; `lossy_source` gives
/// the pump an internal volume and leakage, otherwise it is an ideal flow
/// source.
fn random_network(
    parts: impl Strategy<Value = Part> + Clone,
    shunts: impl Strategy<Value = Shunt> + Clone,
    lossy_source: bool,
) -> impl Strategy<Value = Circuit> {
    (2usize..8)
        .prop_flat_map(move |n| {
            (
                Just(n),
                proptest::collection::vec((any::<prop::sample::Index>(), parts.clone()), n - 1),
                proptest::collection::vec(
                    (
                        any::<prop::sample::Index>(),
                        any::<prop::sample::Index>(),
                        parts.clone(),
                    ),
                    0..3,
                ),
                proptest::collection::vec((any::<prop::sample::Index>(), shunts.clone()), 0..4),
                proptest::option::of(any::<prop::sample::Index>()),
            )
        })
        .prop_map(move |(n, tree, loops, shunts, tank)| {
            let mut elements = Vec::new();
            let mut push = |kind: ElementKind, connection: Connection| {
                elements.push(Element {
                    name: format!("e{}", elements.len()),
                    kind,
                    connection,
                });
            };
            let to_kind = |p: &Part| match *p {
                Part::Tube { length, bore } | Part::LosslessTube { length, bore } => {
                    let model = if matches!(p, Part::Tube { .. }) {
                        LineModel::Laminar
                    } else {
                        LineModel::Lossless
                    };
                    let wall = Wall::Elastic {
                        thickness_m: bore / 5.0,
                        youngs_modulus_pa: 206e9,
                    };
                    ElementKind::Tube(Tube {
                        line: Line {
                            properties: LineProperties {
                                radius_m: bore / 2.0,
                                density_kg_m3: FLUID.density_kg_m3,
                                kinematic_viscosity_m2_s: FLUID.kinematic_viscosity_m2_s,
                                effective_bulk_modulus_pa: wall
                                    .effective_bulk_modulus(FLUID.bulk_modulus_pa, bore),
                                model,
                                viscoelastic_wall: None,
                                mean_flow: MeanFlow::Unknown,
                            },
                            length_m: length,
                        },
                        wall,
                    })
                }
                Part::Orifice { r } => ElementKind::Orifice(Orifice {
                    resistance_pa_s_m3: r,
                }),
                Part::Inertance { i, r } => ElementKind::Inertance(Inertance {
                    inertance_kg_m4: i,
                    resistance_pa_s_m3: r,
                }),
            };
            for (k, (parent, p)) in tree.iter().enumerate() {
                let child = k + 1;
                push(
                    to_kind(p),
                    Connection::Series {
                        a: parent.index(child),
                        b: child,
                    },
                );
            }
            for (a, b, p) in &loops {
                let (a, b) = (a.index(n), b.index(n));
                if a != b {
                    push(to_kind(p), Connection::Series { a, b });
                }
            }
            for (at, s) in &shunts {
                let kind = match *s {
                    Shunt::Volume(v) => ElementKind::Volume(Volume {
                        volume_m3: v,
                        bulk_modulus_pa: FLUID.bulk_modulus_pa,
                    }),
                    Shunt::Valve(r) => ElementKind::LoadValve(LoadValve {
                        resistance_pa_s_m3: r,
                    }),
                };
                push(kind, Connection::Shunt { at: at.index(n) });
            }
            if let Some(t) = tank {
                let at = 1 + t.index(n - 1); // never the pump node 0
                push(ElementKind::Tank, Connection::Shunt { at });
            }
            Circuit {
                title: None,
                fluid: FLUID,
                nodes: (0..n)
                    .map(|i| Node {
                        name: format!("n{i}"),
                    })
                    .collect(),
                elements,
                pumps: vec![Pump {
                    name: "p".into(),
                    node: 0,
                    speed_rev_s: 25.0,
                    speed_range_rev_s: None,
                    pumping_elements: 9,
                    displacement_m3: None,
                    shaft: None,
                    flow_ripple: FlowRipple::Table {
                        reference_speed_rev_s: 25.0,
                        harmonics: vec![FlowHarmonic {
                            order: 1,
                            amplitude_m3_s: 1e-5,
                            phase_rad: 0.0,
                        }],
                    },
                    source_impedance: SourceImpedance::Volume {
                        capacitance_m3_pa: if lossy_source { 1e-4 / 1.6e9 } else { 0.0 },
                        leakage_resistance_pa_s_m3: lossy_source.then_some(1e12),
                    },
                }],
                taps: Vec::new(),
                harmonics: 1,
            }
        })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 200, ..ProptestConfig::default() })]

    #[test]
    fn passive_and_reciprocal(c in random_circuit(), f in 1.0f64..3000.0) {
        let plan = Plan::compile(&c).unwrap();
        let mut ws = plan.workspace();
        let n = c.nodes.len();
        let unit = C64::new(1.0, 0.0);
        let columns: Vec<Vec<C64>> = (0..n)
            .map(|i| plan.solve(f, &[(i, unit)], &mut ws).unwrap().node_pressures)
            .collect();
        for (i, column) in columns.iter().enumerate() {
            let zii = column[i];
            prop_assert!(zii.re >= -1e-9 * zii.norm(), "Re Zin < 0 at node {i}: {zii}");
            for (j, other) in columns.iter().enumerate().take(i) {
                let (zij, zji) = (column[j], other[i]);
                let scale = zij.norm().max(zji.norm()).max(1e-300);
                prop_assert!((zij - zji).norm() <= 1e-9 * scale, "Z[{i}][{j}] = {zij}, Z[{j}][{i}] = {zji}");
            }
        }
    }
}

/// ½Re(P·Q*) delivered by pump 0 at its node for a source flow `qs`, the
/// sum of the powers absorbed by every element, the scale ½|P|(|Qs| + |Ys·P|)
/// of the powers involved, and the relative tolerance the solve supports:
/// 1e-9, or 100·ε·κ near a resonance where the condition number κ is large
/// (the usual forward-error bound of an LU solve).
fn power_balance(c: &Circuit, f: f64, qs: C64) -> Option<(f64, f64, f64, f64)> {
    let plan = Plan::compile(c).unwrap();
    let mut ws = plan.workspace();
    let sol = plan.solve(f, &[(0, qs)], &mut ws).ok()?;
    let p = sol.node_pressures[0];
    let ys = c.pumps[0]
        .source_impedance
        .admittance(std::f64::consts::TAU * f);
    let delivered_flow = qs - ys * p;
    let delivered = 0.5 * (p * delivered_flow.conj()).re;
    let absorbed: f64 = (0..c.elements.len())
        .map(|i| sol.absorbed_power(c, i))
        .sum();
    let scale = 0.5 * p.norm() * (qs.norm() + (ys * p).norm());
    let tolerance = 1e-9_f64.max(100.0 * f64::EPSILON * sol.condition);
    Some((delivered, absorbed, scale, tolerance))
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 200, ..ProptestConfig::default() })]

    #[test]
    fn energy_is_conserved(c in random_circuit(), f in 1.0f64..3000.0) {
        let (delivered, absorbed, scale, tol) = power_balance(&c, f, C64::new(1e-5, 3e-6)).unwrap();
        prop_assert!(absorbed >= -tol * scale, "negative absorbed power {absorbed:e}");
        prop_assert!(
            (delivered - absorbed).abs() <= tol * scale,
            "delivered {delivered:e} W, absorbed {absorbed:e} W, scale {scale:e} W"
        );
    }

    #[test]
    fn lossless_networks_dissipate_nothing(
        c in random_network(lossless_part(), (1e-6f64..5e-3).prop_map(Shunt::Volume), false),
        f in 1.0f64..3000.0,
    ) {
        // An exact resonance of a lossless network is singular; those cases
        // are rejected (proptest fails the test if too many are).
        let balance = power_balance(&c, f, C64::new(1e-5, 0.0));
        prop_assume!(balance.is_some());
        let (delivered, absorbed, scale, tol) = balance.unwrap();
        prop_assert!(delivered.abs() <= tol * scale, "delivered {delivered:e} of scale {scale:e}");
        prop_assert!(absorbed.abs() <= tol * scale, "absorbed {absorbed:e} of scale {scale:e}");
    }
}

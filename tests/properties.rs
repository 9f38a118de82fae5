//! Property tests over randomly generated passive circuits (proptest, seeded
//! by proptest's own deterministic runner).
//!
//! * Passivity: a network of passive elements absorbs power, so every driving
//!   point impedance has Re Zin ≥ 0 (Kinsler et al., Fundamentals of
//!   Acoustics, §10; any linear passive network).
//! * Reciprocity: for networks of reciprocal elements the transfer impedance
//!   is symmetric, P_j/Q_i = P_i/Q_j (Rayleigh's reciprocity theorem; for
//!   lines it follows from det T = 1).

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
    Orifice { r: f64 },
    Inertance { i: f64, r: f64 },
}

#[derive(Debug, Clone)]
enum Shunt {
    Volume(f64),
    Valve(f64),
}

fn part() -> impl Strategy<Value = Part> {
    prop_oneof![
        4 => (0.05f64..8.0, 3e-3f64..30e-3).prop_map(|(length, bore)| Part::Tube { length, bore }),
        1 => (1e8f64..1e12).prop_map(|r| Part::Orifice { r }),
        1 => (1e5f64..1e8, 0.0f64..1e9).prop_map(|(i, r)| Part::Inertance { i, r }),
    ]
}

fn shunt() -> impl Strategy<Value = Shunt> {
    prop_oneof![
        (1e-6f64..5e-3).prop_map(Shunt::Volume),
        (1e9f64..1e12).prop_map(Shunt::Valve),
    ]
}

/// A connected random network: a spanning tree, extra branches making
/// loops, shunts, and possibly one tank node.
fn random_circuit() -> impl Strategy<Value = Circuit> {
    (2usize..8)
        .prop_flat_map(|n| {
            (
                Just(n),
                proptest::collection::vec((any::<prop::sample::Index>(), part()), n - 1),
                proptest::collection::vec(
                    (
                        any::<prop::sample::Index>(),
                        any::<prop::sample::Index>(),
                        part(),
                    ),
                    0..3,
                ),
                proptest::collection::vec((any::<prop::sample::Index>(), shunt()), 0..4),
                proptest::option::of(any::<prop::sample::Index>()),
            )
        })
        .prop_map(|(n, tree, loops, shunts, tank)| {
            let mut elements = Vec::new();
            let mut push = |kind: ElementKind, connection: Connection| {
                elements.push(Element {
                    name: format!("e{}", elements.len()),
                    kind,
                    connection,
                });
            };
            let to_kind = |p: &Part| match *p {
                Part::Tube { length, bore } => {
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
                                model: LineModel::Laminar,
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
                    flow_ripple: FlowRipple::Table {
                        reference_speed_rev_s: 25.0,
                        harmonics: vec![FlowHarmonic {
                            order: 1,
                            amplitude_m3_s: 1e-5,
                            phase_rad: 0.0,
                        }],
                    },
                    source_impedance: SourceImpedance::Volume {
                        capacitance_m3_pa: 1e-4 / 1.6e9,
                        leakage_resistance_pa_s_m3: Some(1e12),
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

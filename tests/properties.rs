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
//!
//! The random circuits also hold the components with dynamics: cylinders
//! (shunt and two-port), in-line dampers, expansion chambers with extended
//! pipes, and relief and check valves whose poppet is damped enough to be
//! passive (A b ≥ K_q m, src/elements/valves.rs). A lightly damped valve is
//! not passive: above its natural frequency it can deliver power (a
//! negative resistance). For circuits with such valves the test checks what
//! still holds: reciprocity (the valve is a shunt or a symmetric two-port)
//! and the energy balance, with the valve's absorbed power allowed to be
//! negative; and that it is negative exactly inside the valve's active band.

use proptest::prelude::*;
use ripline::C64;
use ripline::circuit::{Circuit, Node};
use ripline::elements::{
    ChamberPorts, CheckState, CheckValve, Connection, Cylinder, CylinderPorts, Element,
    ElementKind, ExpansionChamber, Inertance, InlineDamper, LoadValve, Orifice, Poppet,
    PulsationDamper, ReliefValve, Tube, ValveOperatingPoint, Volume, rigid_neck,
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
    Tube {
        length: f64,
        bore: f64,
    },
    LosslessTube {
        length: f64,
        bore: f64,
    },
    Orifice {
        r: f64,
    },
    Inertance {
        i: f64,
        r: f64,
    },
    /// A relief valve between two nodes or an open check valve.
    Valve {
        poppet: Poppet,
        check: bool,
    },
    Cylinder(Cylinder),
    InlineDamper {
        gas_volume: f64,
        port: f64,
    },
    Chamber {
        length: f64,
        bore: f64,
        extension: f64,
    },
}

#[derive(Debug, Clone)]
enum Shunt {
    Volume(f64),
    Valve(f64),
    Relief(Poppet),
    Cylinder(Cylinder),
}

/// A linearised poppet; `damping_factor` ≥ 1 makes A b ≥ K_q m (passive).
fn poppet(damping_factor: std::ops::Range<f64>) -> impl Strategy<Value = Poppet> + Clone {
    (
        (1e-3f64..0.1, 1e3f64..1e6, 1e-6f64..1e-3),
        (1e-3f64..1.0, 1e-13f64..1e-10, 0.5f64..1.0, damping_factor),
    )
        .prop_map(|((m, k, a), (kq, kc, net, factor))| Poppet {
            mass_kg: m,
            spring_rate_n_m: k,
            damping_n_s_m: factor * kq * m / a,
            flow_force_stiffness_n_m: 0.0,
            area_m2: a,
            net_area_m2: net * a,
            flow_gain_m2_s: kq,
            flow_pressure_coefficient: kc,
        })
}

fn cylinder(ports: CylinderPorts) -> impl Strategy<Value = Cylinder> + Clone {
    (
        (0.02f64..0.2, 0.1f64..0.9, 0.1f64..2.0, 0.0f64..1.0),
        (1e-6f64..1e-3, 1.0f64..1e4, 0.0f64..1e7, 0.0f64..1e5),
    )
        .prop_map(
            move |((bore, rod, stroke, pos), (dead, m, k, b))| Cylinder {
                bore_m: bore,
                rod_m: rod * bore,
                stroke_m: stroke,
                position_m: pos * stroke,
                dead_volume_m3: dead,
                load_mass_kg: m,
                load_stiffness_n_m: k,
                damping_n_s_m: b,
                bulk_modulus_pa: FLUID.bulk_modulus_pa,
                ports,
            },
        )
}

fn part() -> impl Strategy<Value = Part> + Clone {
    prop_oneof![
        8 => (0.05f64..8.0, 3e-3f64..30e-3).prop_map(|(length, bore)| Part::Tube { length, bore }),
        2 => (1e8f64..1e12).prop_map(|r| Part::Orifice { r }),
        2 => (1e5f64..1e8, 0.0f64..1e9).prop_map(|(i, r)| Part::Inertance { i, r }),
        1 => (poppet(1.0..10.0), any::<bool>()).prop_map(|(poppet, check)| Part::Valve { poppet, check }),
        1 => cylinder(CylinderPorts::Both).prop_map(Part::Cylinder),
        1 => (1e-5f64..2e-3, 5e-3f64..30e-3)
            .prop_map(|(gas_volume, port)| Part::InlineDamper { gas_volume, port }),
        1 => (0.1f64..1.0, 40e-3f64..120e-3, 0.0f64..0.45)
            .prop_map(|(length, bore, extension)| Part::Chamber { length, bore, extension }),
    ]
}

fn shunt() -> impl Strategy<Value = Shunt> + Clone {
    prop_oneof![
        3 => (1e-6f64..5e-3).prop_map(Shunt::Volume),
        3 => (1e9f64..1e12).prop_map(Shunt::Valve),
        1 => poppet(1.0..10.0).prop_map(Shunt::Relief),
        1 => cylinder(CylinderPorts::Cap).prop_map(Shunt::Cylinder),
    ]
}

/// A laminar line in the test fluid of the given bore, with `wall`.
fn line_properties(bore: f64, wall: Wall, model: LineModel) -> LineProperties {
    LineProperties {
        radius_m: bore / 2.0,
        density_kg_m3: FLUID.density_kg_m3,
        kinematic_viscosity_m2_s: FLUID.kinematic_viscosity_m2_s,
        effective_bulk_modulus_pa: wall.effective_bulk_modulus(FLUID.bulk_modulus_pa, bore),
        model,
        viscoelastic_wall: None,
        mean_flow: MeanFlow::Unknown,
    }
}

/// The operating point the property tests' valves report (not used by
/// their admittance, which the poppet fixes).
const OPERATING: ValveOperatingPoint = ValveOperatingPoint {
    mean_flow_m3_s: 2.5e-4,
    pressure_drop_pa: 2e7,
    cracking_pa: 1.9e7,
};

/// The pump at node 0 of the test circuits: with an internal volume and
/// leakage (`lossy`), or an ideal flow source.
fn test_pump(lossy: bool) -> Pump {
    Pump {
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
            capacitance_m3_pa: if lossy { 1e-4 / 1.6e9 } else { 0.0 },
            leakage_resistance_pa_s_m3: lossy.then_some(1e12),
        },
    }
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
                            properties: line_properties(bore, wall, model),
                            length_m: length,
                        },
                        wall,
                    })
                }
                Part::Valve {
                    poppet,
                    check: false,
                } => ElementKind::ReliefValve(ReliefValve {
                    poppet,
                    operating: OPERATING,
                    opening_m: 1e-3,
                    in_line: true,
                }),
                Part::Valve {
                    poppet,
                    check: true,
                } => ElementKind::CheckValve(CheckValve {
                    cracking_pa: 0.5e5,
                    pressure_drop_pa: 2e5,
                    mean_flow_m3_s: 2.5e-4,
                    state: CheckState::Opening {
                        poppet,
                        opening_m: 1e-3,
                    },
                }),
                Part::Cylinder(c) => ElementKind::Cylinder(c),
                Part::InlineDamper { gas_volume, port } => {
                    let liquid = line_properties(port, Wall::Rigid, LineModel::Laminar);
                    ElementKind::InlineDamper(InlineDamper {
                        vessel: PulsationDamper {
                            gas_volume_m3: gas_volume,
                            precharge_pa: 1e7,
                            operating_pa: 2e7,
                            polytropic_index: 1.4,
                            bulk_modulus_pa: FLUID.bulk_modulus_pa,
                            neck_length_m: 0.05,
                            neck: rigid_neck(&liquid, port, FLUID.bulk_modulus_pa),
                        },
                        oil_volume_m3: 1e-4,
                    })
                }
                Part::Chamber {
                    length,
                    bore,
                    extension,
                } => {
                    let tube = Tube {
                        line: Line {
                            properties: line_properties(bore, Wall::Rigid, LineModel::Laminar),
                            length_m: length,
                        },
                        wall: Wall::Rigid,
                    };
                    ElementKind::ExpansionChamber(ExpansionChamber {
                        tube,
                        ports: Some(ChamberPorts {
                            pipe: line_properties(16e-3, Wall::Rigid, LineModel::Laminar),
                            length_m: 0.02,
                            inlet_extension_m: extension * length,
                            outlet_extension_m: 0.5 * extension * length,
                        }),
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
                    Shunt::Relief(poppet) => ElementKind::ReliefValve(ReliefValve {
                        poppet,
                        operating: OPERATING,
                        opening_m: 1e-3,
                        in_line: false,
                    }),
                    Shunt::Cylinder(c) => ElementKind::Cylinder(c),
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
                pumps: vec![test_pump(lossy_source)],
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
    fn active_valves_keep_reciprocity_and_the_energy_balance(
        c in random_network(
            part(),
            prop_oneof![
                1 => (1e-6f64..5e-3).prop_map(Shunt::Volume),
                3 => poppet(0.0..0.5).prop_map(Shunt::Relief),
            ],
            true,
        ),
        f in 1.0f64..3000.0,
    ) {
        let plan = Plan::compile(&c).unwrap();
        let mut ws = plan.workspace();
        let unit = C64::new(1.0, 0.0);
        let solved: Option<Vec<Vec<C64>>> = (0..c.nodes.len())
            .map(|i| plan.solve(f, &[(i, unit)], &mut ws).ok().map(|s| s.node_pressures))
            .collect();
        // an active valve can cancel the circuit's losses exactly: singular
        prop_assume!(solved.is_some());
        let columns = solved.unwrap();
        for (i, column) in columns.iter().enumerate() {
            for (j, other) in columns.iter().enumerate().take(i) {
                let (zij, zji) = (column[j], other[i]);
                let scale = zij.norm().max(zji.norm()).max(1e-300);
                prop_assert!((zij - zji).norm() <= 1e-8 * scale, "Z[{i}][{j}] = {zij}, Z[{j}][{i}] = {zji}");
            }
        }
        let (delivered, absorbed, scale, tol) = power_balance(&c, f, C64::new(1e-5, 3e-6)).unwrap();
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

/// How far the sparse solve ([`Plan::solve`]) is from the dense reference
/// ([`Plan::solve_dense`], LU with partial pivoting as in LAPACK's `zgetrf`).
enum Agreement {
    /// Both found the frequency singular.
    BothSingular,
    /// Both solved it with the same conditioning verdict.
    Solved {
        /// Largest difference of node pressures over the largest pressure,
        /// and of end flows over the largest flow (at least the injected
        /// flow: a dead leg's flow is round-off): the results as reported.
        componentwise: f64,
        /// Largest difference over the largest value of the unknowns as the
        /// solves see them (pressures and Z_ref·flows): the quantity LU
        /// error bounds are stated for (Higham 2002, *Accuracy and Stability
        /// of Numerical Algorithms*, §9: of order ε·κ for each solve).
        normwise: f64,
        /// The dense solve's condition number.
        condition: f64,
    },
}

/// Solves with both paths at `f` with a flow injected at `node`; an error
/// when their verdicts (solved, ill-conditioned, singular) differ.
fn compare_sparse_and_dense(
    plan: &Plan<'_>,
    ws: &mut ripline::network::Workspace,
    f: f64,
    node: usize,
) -> Result<Agreement, String> {
    let q = C64::new(1e-5, 3e-6);
    let sparse = plan.solve(f, &[(node, q)], ws);
    let dense = plan.solve_dense(f, &[(node, q)], ws);
    let (s, d) = match (sparse, dense) {
        (Ok(s), Ok(d)) => (s, d),
        (Err(a), Err(b)) => {
            use ripline::network::SolveError::Singular;
            return match (a, b) {
                (Singular { .. }, Singular { .. }) => Ok(Agreement::BothSingular),
                (a, b) => Err(format!("different errors at {f} Hz: {a} / {b}")),
            };
        }
        (a, b) => return Err(format!("different verdicts at {f} Hz: {a:?} / {b:?}")),
    };
    let ill = |x: f64| x > ripline::network::ILL_CONDITIONED;
    if ill(s.condition) != ill(d.condition) {
        return Err(format!(
            "conditioning verdicts differ at {f} Hz: {:e} / {:e}",
            s.condition, d.condition
        ));
    }
    let flows = |x: &ripline::network::Solution| -> Vec<C64> {
        x.end_flows
            .iter()
            .flatten()
            .flat_map(|&(a, b)| [a, b])
            .collect()
    };
    let (fs, fd) = (flows(&s), flows(&d));
    let diff = |a: &[C64], b: &[C64]| {
        a.iter()
            .zip(b)
            .map(|(x, y)| (x - y).norm())
            .fold(0.0, f64::max)
    };
    let largest = |v: &[C64], floor: f64| v.iter().map(|v| v.norm()).fold(floor, f64::max);
    let (dp, df) = (diff(&s.node_pressures, &d.node_pressures), diff(&fs, &fd));
    let (sp, sf) = (largest(&d.node_pressures, 0.0), largest(&fd, q.norm()));
    let zr = plan.reference_impedance();
    let componentwise = (dp / sp).max(df / sf);
    let normwise = dp.max(zr * df) / sp.max(zr * sf);
    Ok(Agreement::Solved {
        componentwise,
        normwise,
        condition: d.condition,
    })
}

/// A mix of lossy and lossless parts: transfer-matrix (modified nodal)
/// lines next to admittance lines and lumped parts.
fn mixed_part() -> impl Strategy<Value = Part> + Clone {
    prop_oneof![
        3 => (0.05f64..8.0, 3e-3f64..30e-3).prop_map(|(length, bore)| Part::Tube { length, bore }),
        3 => (0.05f64..8.0, 3e-3f64..30e-3).prop_map(|(length, bore)| Part::LosslessTube { length, bore }),
        1 => (1e8f64..1e12).prop_map(|r| Part::Orifice { r }),
        1 => (1e5f64..1e8, 0.0f64..1e9).prop_map(|(i, r)| Part::Inertance { i, r }),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 300, ..ProptestConfig::default() })]

    #[test]
    fn sparse_solve_agrees_with_dense_on_random_circuits(
        c in random_circuit(),
        lossless in random_network(lossless_part(), (1e-6f64..5e-3).prop_map(Shunt::Volume), false),
        mixed in random_network(mixed_part(), shunt(), true),
        f in 1.0f64..3000.0,
        node in any::<prop::sample::Index>(),
    ) {
        // Random circuits span extreme impedance ratios, where small
        // pressures are not resolved componentwise by either LU; the
        // normwise difference is held to 1e-12, or 10·ε·κ near resonances.
        for circuit in [&c, &lossless, &mixed] {
            let plan = Plan::compile(circuit).unwrap();
            let mut ws = plan.workspace();
            let at = node.index(circuit.nodes.len());
            match compare_sparse_and_dense(&plan, &mut ws, f, at) {
                Err(e) => prop_assert!(false, "{e}"),
                Ok(Agreement::BothSingular) => {}
                Ok(Agreement::Solved { normwise, condition, .. }) => {
                    let bound = 1e-12_f64.max(10.0 * f64::EPSILON * condition);
                    prop_assert!(
                        normwise <= bound,
                        "sparse and dense differ by {normwise:e} (bound {bound:e}) at {f} Hz"
                    );
                }
            }
        }
    }
}

/// The shipped example circuits and generated branched circuits (with and
/// without loops, as they are and with every line lossless), each on a
/// fine frequency grid through its resonances: the sparse and dense solves
/// give the same verdicts and the same pressures and flows to 1e-12
/// relative (see [`compare_sparse_and_dense`]).
#[test]
fn sparse_solve_agrees_with_dense_on_shipped_and_generated_circuits() {
    let mut circuits: Vec<(String, Circuit)> = Vec::new();
    for entry in std::fs::read_dir("networks").unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_some_and(|e| e == "yaml") {
            let c = ripline::io::load_circuit(&path).unwrap();
            circuits.push((path.display().to_string(), c));
        }
    }
    for (n, loops) in [(30, 0), (60, 4)] {
        let text = ripline::generated::branched_circuit(n, loops);
        circuits.push((
            format!("generated {n}/{loops}"),
            ripline::io::parse_circuit(&text, "generated.yaml").unwrap(),
        ));
    }
    // the same circuits with every line lossless (transfer-matrix lines)
    let lossless: Vec<(String, Circuit)> = circuits
        .iter()
        .map(|(name, c)| {
            let mut c = c.clone();
            for e in &mut c.elements {
                if let Some(line) = e.kind.line_mut() {
                    line.properties.model = LineModel::Lossless;
                }
            }
            (format!("{name}, lossless"), c)
        })
        .collect();
    circuits.extend(lossless);
    let grid = ripline::analysis::response::log_grid(5.0, 5000.0, 500);
    let (mut worst, mut singular) = (0.0_f64, 0);
    for (name, c) in &circuits {
        let plan = Plan::compile(c).unwrap();
        let mut ws = plan.workspace();
        for &f in &grid {
            match compare_sparse_and_dense(&plan, &mut ws, f, c.pumps[0].node) {
                Ok(Agreement::Solved { componentwise, .. }) => {
                    assert!(
                        componentwise <= 1e-12,
                        "{name}: sparse and dense differ by {componentwise:e} at {f} Hz"
                    );
                    worst = worst.max(componentwise);
                }
                Ok(Agreement::BothSingular) => singular += 1,
                Err(e) => panic!("{name}: {e}"),
            }
        }
    }
    eprintln!(
        "{} circuits × {} frequencies: worst relative difference {worst:e}, {singular} singular in both",
        circuits.len(),
        grid.len()
    );
}

// A lightly damped relief valve absorbs power below its active band and
// delivers power inside it (Re Y < 0 between the roots of the quadratic in
// src/elements/valves.rs), also when solved in a circuit: the power the
// network computes for the valve, ½Re(P·Q*), has the sign of Re Y.
#[test]
fn a_lightly_damped_valve_delivers_power_inside_its_active_band() {
    let poppet = Poppet {
        mass_kg: 0.02,
        spring_rate_n_m: 6e4,
        damping_n_s_m: 5.0,
        flow_force_stiffness_n_m: 0.0,
        area_m2: 5.0265e-5,
        net_area_m2: 5.0265e-5,
        flow_gain_m2_s: 0.4,
        flow_pressure_coefficient: 1e-11,
    };
    let (lo, hi) = poppet.active_band_hz().unwrap();
    let hi = hi.unwrap();
    let tube = |length_m: f64| {
        ElementKind::Tube(Tube {
            line: Line {
                properties: line_properties(0.012, Wall::Rigid, LineModel::Laminar),
                length_m,
            },
            wall: Wall::Rigid,
        })
    };
    let c = Circuit {
        title: None,
        fluid: FLUID,
        nodes: vec![Node { name: "p".into() }, Node { name: "v".into() }],
        elements: vec![
            Element {
                name: "line".into(),
                kind: tube(0.5),
                connection: Connection::Series { a: 0, b: 1 },
            },
            Element {
                name: "relief".into(),
                kind: ElementKind::ReliefValve(ReliefValve {
                    poppet,
                    operating: OPERATING,
                    opening_m: 1e-3,
                    in_line: false,
                }),
                connection: Connection::Shunt { at: 1 },
            },
            Element {
                name: "load".into(),
                kind: ElementKind::LoadValve(LoadValve {
                    resistance_pa_s_m3: 1e10,
                }),
                connection: Connection::Shunt { at: 1 },
            },
        ],
        pumps: vec![test_pump(true)],
        taps: Vec::new(),
        harmonics: 1,
    };
    let plan = Plan::compile(&c).unwrap();
    let mut ws = plan.workspace();
    for (f, sign) in [(0.5 * lo, 1.0), ((lo * hi).sqrt(), -1.0), (2.0 * hi, 1.0)] {
        let s = plan.solve(f, &[(0, C64::new(1e-5, 0.0))], &mut ws).unwrap();
        let w = s.absorbed_power(&c, 1);
        let re_y = poppet.admittance(std::f64::consts::TAU * f).re;
        assert!(
            w * sign > 0.0 && re_y * sign > 0.0,
            "{f} Hz: {w} W, Re Y {re_y}"
        );
    }
}

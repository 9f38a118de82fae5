//! Builds a small circuit through the library API (no circuit file) and
//! prints the ripple at the pump outlet and along the line.
//!
//! An invented scenario: a 9-piston pump at 1800 rpm feeding 3 m of 16 mm
//! steel tube into a 1 L manifold and a load valve.
//!
//! Run with `cargo run --example build_circuit`.

use ripline::analysis::ripple::harmonic_ripple;
use ripline::circuit::{Circuit, Node, Tap, TapLocation};
use ripline::elements::{
    Connection, Element, ElementKind, LoadValve, Tube, Volume, orifice_resistance,
};
use ripline::fluid::Fluid;
use ripline::line::{Line, LineModel, LineProperties, MeanFlow};
use ripline::network::Plan;
use ripline::source::{FlowHarmonic, FlowRipple, Pump, SourceImpedance};
use ripline::wall::{Material, Wall};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let oil = Fluid {
        density_kg_m3: 865.0,
        bulk_modulus_pa: 1.6e9,
        kinematic_viscosity_m2_s: 32e-6,
    };
    let bore = 16e-3;
    let wall = Wall::Elastic {
        thickness_m: 2.5e-3,
        youngs_modulus_pa: Material::Steel.youngs_modulus_pa(),
    };
    let tube = Tube {
        line: Line {
            properties: LineProperties {
                radius_m: bore / 2.0,
                density_kg_m3: oil.density_kg_m3,
                kinematic_viscosity_m2_s: oil.kinematic_viscosity_m2_s,
                effective_bulk_modulus_pa: wall.effective_bulk_modulus(oil.bulk_modulus_pa, bore),
                model: LineModel::Laminar,
                viscoelastic_wall: None,
                mean_flow: MeanFlow::Unknown,
            },
            length_m: 3.0,
        },
        wall,
    };
    let element = |name: &str, kind, connection| Element {
        name: name.to_string(),
        kind,
        connection,
    };
    let circuit = Circuit {
        title: Some("API example".into()),
        fluid: oil,
        nodes: vec![
            Node {
                name: "outlet".into(),
            },
            Node {
                name: "manifold".into(),
            },
        ],
        elements: vec![
            element(
                "line",
                ElementKind::Tube(tube),
                Connection::Series { a: 0, b: 1 },
            ),
            element(
                "manifold volume",
                ElementKind::Volume(Volume {
                    volume_m3: 1e-3,
                    bulk_modulus_pa: oil.bulk_modulus_pa,
                }),
                Connection::Shunt { at: 1 },
            ),
            element(
                "load",
                ElementKind::LoadValve(LoadValve {
                    // 200 bar at 60 L/min, linearised as R = 2Δp/Q
                    resistance_pa_s_m3: orifice_resistance(200e5, 1e-3),
                }),
                Connection::Shunt { at: 1 },
            ),
        ],
        pumps: vec![Pump {
            name: "piston pump".into(),
            node: 0,
            speed_rev_s: 30.0,
            speed_range_rev_s: None,
            pumping_elements: 9,
            displacement_m3: Some(33e-6),
            shaft: None,
            flow_ripple: FlowRipple::Table {
                reference_speed_rev_s: 30.0,
                harmonics: (1..=5)
                    .map(|k| FlowHarmonic {
                        order: k,
                        amplitude_m3_s: 2e-5 / f64::from(k * k),
                        phase_rad: 0.0,
                    })
                    .collect(),
            },
            source_impedance: SourceImpedance::Volume {
                capacitance_m3_pa: 0.15e-3 / oil.bulk_modulus_pa,
                leakage_resistance_pa_s_m3: Some(1.5e12),
            },
        }],
        taps: vec![
            Tap {
                name: "outlet".into(),
                location: TapLocation::Node(0),
            },
            Tap {
                name: "1 m along".into(),
                location: TapLocation::AlongTube {
                    element: 0,
                    distance_m: 1.0,
                },
            },
        ],
        harmonics: 5,
    };
    let plan = Plan::compile(&circuit)?;
    let report = harmonic_ripple(&plan, 0, circuit.harmonics)?;
    println!("pumping frequency {:.1} Hz", report.pumping_frequency_hz);
    for tap in &report.taps {
        println!(
            "{}: {:.3} bar rms, {:.3} bar peak-to-peak",
            tap.name,
            tap.rms_pa() / 1e5,
            tap.peak_to_peak_pa() / 1e5
        );
        for h in &tap.harmonics {
            println!(
                "  {:>2} {:>8.1} Hz {:>10.4} bar",
                h.order,
                h.freq_hz,
                h.pressure.norm() / 1e5
            );
        }
    }
    Ok(())
}

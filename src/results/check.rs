//! `check`: what a validated circuit holds — the fluid at its operating
//! point, each pump with its source flow ripple harmonics and source
//! impedance, the nodes, the elements with what follows from their inputs
//! (wave speeds, impedances, mean flows, silencer frequencies), the taps,
//! and the size of the solve.

use super::describe;
use super::{Error, Input, Notice, Origin, Phasor, Subject, notices};
use crate::Circuit;
use crate::circuit::TapLocation;
use crate::elements::{Connection, ElementKind, PRESSURE_VESSEL_CAUTION};
use crate::line::turbulence::TRANSITION_REYNOLDS;
use crate::line::{LineProperties, MeanFlow};
use crate::network::Plan;
use crate::render::table::{Quantity, sig};
use crate::source::{FlowRipple, PumpGeometry, Shaft, SourceImpedance, shafts};
use crate::wall::Wall;
use serde::Serialize;

/// What to check, resolved against the circuit.
#[derive(Debug, Clone, Default)]
pub struct CheckRequest {
    /// Harmonics per pump, overriding the circuit's.
    pub harmonics: Option<u32>,
    /// A shaft and the speed (rev/s) to run it at instead of the file's.
    pub speed: Option<(Shaft, f64)>,
}

/// The fluid at its operating point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FluidInfo {
    /// ρ, kg/m³.
    pub density_kg_m3: f64,
    /// B of the liquid (with free air), Pa.
    pub bulk_modulus_pa: f64,
    /// ν, m²/s.
    pub kinematic_viscosity_m2_s: f64,
    /// μ = ρν, Pa·s.
    pub dynamic_viscosity_pa_s: f64,
    /// √(B/ρ), m/s.
    pub speed_of_sound_m_s: f64,
}

/// One harmonic of a pump's source flow ripple.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SourceHarmonic {
    /// Harmonic k of the pumping frequency.
    pub order: u32,
    /// k·n·z, Hz.
    pub freq_hz: f64,
    /// Source flow ripple Qs, m³/s (peak), phase against the pump's
    /// shaft-angle reference.
    pub flow_m3_s: Phasor,
}

/// A pump as checked.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PumpCheck {
    /// Its name.
    pub name: String,
    /// The node it feeds.
    pub node: String,
    /// Shaft speed, rev/s.
    pub speed_rev_s: f64,
    /// Where the speed came from.
    pub speed_origin: Origin,
    /// Pumping elements z.
    pub pumping_elements: u32,
    /// n·z, Hz.
    pub pumping_frequency_hz: f64,
    /// Mean flow (displacement × speed), m³/s, when known.
    pub mean_flow_m3_s: Option<f64>,
    /// The shaft it shares, if any.
    pub shaft: Option<String>,
    /// Where the source flow ripple comes from, in words.
    pub flow_ripple_from: String,
    /// The flow non-uniformity δ = (Q_max − Q_min)/Q_mean of a pump given
    /// by its geometry.
    pub non_uniformity: Option<f64>,
    /// The source impedance, in words.
    pub source_impedance: String,
    /// Its source flow ripple at the speed above, harmonics 1..N.
    pub harmonics: Vec<SourceHarmonic>,
}

/// A node as checked.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NodeCheck {
    /// Its name.
    pub name: String,
    /// Held at zero ripple by a tank.
    pub tank: bool,
    /// A line end with no termination (treated as a closed end).
    pub implicit_closed_end: bool,
    /// Number of elements attached.
    pub elements: usize,
}

/// An element as checked.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ElementCheck {
    /// Its name.
    pub name: String,
    /// Its kind (file key).
    pub kind: &'static str,
    /// Where it sits: "a → b" or "at n".
    pub place: String,
    /// Its inputs and what follows from them, in words.
    pub description: String,
}

/// A tap as checked.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TapCheck {
    /// Its name.
    pub name: String,
    /// Where it is, in words.
    pub place: String,
}

/// The result of `check`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CheckResult {
    /// The circuit file.
    pub subject: Subject,
    /// Inputs: harmonics.
    pub inputs: Vec<Input>,
    /// The fluid.
    pub fluid: FluidInfo,
    /// The pumps.
    pub pumps: Vec<PumpCheck>,
    /// The nodes.
    pub nodes: Vec<NodeCheck>,
    /// The elements.
    pub elements: Vec<ElementCheck>,
    /// The taps (none: reports cover every node).
    pub taps: Vec<TapCheck>,
    /// Harmonics solved per pump.
    pub harmonics: u32,
    /// The highest frequency solved, Hz.
    pub top_hz: f64,
    /// Unknowns per frequency.
    pub unknowns: usize,
    /// Safety cautions (the pressure-vessel caution when the circuit holds
    /// a gas-charged damper).
    pub cautions: Vec<String>,
    /// Warnings about the components (valves that may deliver ripple
    /// power, hose data held at an end, bottomed in-line dampers).
    pub warnings: Vec<Notice>,
}

/// Checks `circuit` as `check` does.
///
/// # Errors
/// [`Error::Request`] if the circuit cannot be compiled into a network.
pub fn check(
    mut circuit: Circuit,
    file: &str,
    request: &CheckRequest,
) -> Result<CheckResult, Error> {
    let harmonics_origin = match request.harmonics {
        Some(n) => {
            circuit.harmonics = n;
            Origin::Request
        }
        None => Origin::File,
    };
    if let Some((shaft, rev_s)) = &request.speed {
        shaft.set_speed(&mut circuit.pumps, *rev_s);
        crate::meanflow::resolve_line_mean_flows(&mut circuit);
    }
    let c = &circuit;
    let plan = Plan::compile(c).map_err(|e| Error::Request(format!("{file}: {e}")))?;
    let f = &c.fluid;
    let fluid = FluidInfo {
        density_kg_m3: f.density_kg_m3,
        bulk_modulus_pa: f.bulk_modulus_pa,
        kinematic_viscosity_m2_s: f.kinematic_viscosity_m2_s,
        dynamic_viscosity_pa_s: f.dynamic_viscosity_pa_s(),
        speed_of_sound_m_s: f.speed_of_sound_m_s(),
    };
    let all = shafts(&c.pumps);
    let pumps =
        c.pumps
            .iter()
            .enumerate()
            .map(|(i, p)| {
                let set = request.speed.as_ref().is_some_and(|(s, _)| {
                    all.iter().any(|t| t.name == s.name && t.pumps.contains(&i))
                });
                let (from, delta) = match &p.flow_ripple {
                    FlowRipple::Kinematic(k) => (
                        format!(
                            "geometry: {}; reference at shaft angle {:.2}°",
                            geometry(k.geometry()),
                            k.shaft_angle_rad().to_degrees()
                        ),
                        Some(k.non_uniformity()),
                    ),
                    FlowRipple::Map(m) if m.conditions() > 1 => (
                        format!(
                            "a source map of {} conditions ({}) of {} harmonics{}",
                            m.conditions(),
                            m.describe_range(),
                            m.orders().len(),
                            if m.single_speed() {
                                ", in proportion to speed"
                            } else {
                                ", interpolated at the operating point"
                            }
                        ),
                        None,
                    ),
                    _ => (format!("a table of {} harmonics", p.max_order()), None),
                };
                PumpCheck {
                    name: p.name.clone(),
                    node: c.nodes[p.node].name.clone(),
                    speed_rev_s: p.speed_rev_s,
                    speed_origin: if set { Origin::Request } else { Origin::File },
                    pumping_elements: p.pumping_elements,
                    pumping_frequency_hz: p.pumping_frequency_hz(),
                    mean_flow_m3_s: p.mean_flow_m3_s(),
                    shaft: p.shaft.clone(),
                    flow_ripple_from: from,
                    non_uniformity: delta,
                    source_impedance: source_impedance(&p.source_impedance, f.bulk_modulus_pa),
                    harmonics: (1..=c.harmonics)
                        .map(|k| SourceHarmonic {
                            order: k,
                            freq_hz: f64::from(k) * p.pumping_frequency_hz(),
                            flow_m3_s: p.flow_ripple(k).into(),
                        })
                        .collect(),
                }
            })
            .collect::<Vec<_>>();
    for p in &pumps {
        if let Some(h) = p.harmonics.iter().find(|h| !h.flow_m3_s.is_finite()) {
            return Err(Error::NotFinite(format!(
                "the source flow ripple of pump `{}`, harmonic {}, is not a finite number",
                p.name, h.order
            )));
        }
    }
    // one pass each over the elements, not one per node
    let mut implicit = vec![false; c.nodes.len()];
    for id in c.implicit_closed_ends() {
        implicit[id] = true;
    }
    let (tank, degree) = (c.tank_nodes(), c.degrees());
    let nodes = c
        .nodes
        .iter()
        .enumerate()
        .map(|(id, n)| NodeCheck {
            name: n.name.clone(),
            tank: tank[id],
            implicit_closed_end: implicit[id],
            elements: degree[id],
        })
        .collect();
    let elements = c
        .elements
        .iter()
        .map(|e| ElementCheck {
            name: e.name.clone(),
            kind: e.kind.name(),
            place: match e.connection {
                Connection::Series { a, b } => {
                    format!("{} → {}", c.nodes[a].name, c.nodes[b].name)
                }
                Connection::Shunt { at } => format!("at {}", c.nodes[at].name),
            },
            description: element(c, e),
        })
        .collect();
    let taps = c
        .taps
        .iter()
        .map(|t| TapCheck {
            name: t.name.clone(),
            place: match t.location {
                TapLocation::Node(id) => format!("node {}", c.nodes[id].name),
                TapLocation::AlongTube {
                    element,
                    distance_m,
                } => format!(
                    "{} along {}",
                    Quantity::Length.show(distance_m),
                    c.elements[element].name
                ),
            },
        })
        .collect();
    let top_hz = c
        .pumps
        .iter()
        .map(|p| p.pumping_frequency_hz())
        .fold(0.0, f64::max)
        * f64::from(c.harmonics);
    let cautions = if c.elements.iter().any(|e| e.kind.is_pressure_vessel()) {
        vec![PRESSURE_VESSEL_CAUTION.to_string()]
    } else {
        Vec::new()
    };
    Ok(CheckResult {
        subject: Subject {
            file: file.to_string(),
            title: c.title.clone(),
        },
        inputs: vec![Input::number(
            "harmonics",
            c.harmonics.into(),
            "1",
            harmonics_origin,
        )],
        fluid,
        pumps,
        nodes,
        elements,
        taps,
        harmonics: c.harmonics,
        top_hz,
        unknowns: plan.unknowns(),
        cautions,
        warnings: notices(&crate::diagnostics::component_warnings(c)),
    })
}

/// The source impedance in words.
fn source_impedance(z: &SourceImpedance, bulk_modulus_pa: f64) -> String {
    let volume = |c: f64, leak: Option<f64>| {
        let mut s = format!(
            "internal volume {} (capacitance {:.4e} m³/Pa)",
            Quantity::Volume.show(c * bulk_modulus_pa),
            c
        );
        if let Some(r) = leak {
            s.push_str(&format!(", leakage resistance {r:.4e} Pa·s/m³"));
        }
        s
    };
    match z {
        SourceImpedance::Volume {
            capacitance_m3_pa,
            leakage_resistance_pa_s_m3,
        } => volume(*capacitance_m3_pa, *leakage_resistance_pa_s_m3),
        SourceImpedance::VolumePassage {
            capacitance_m3_pa,
            leakage_resistance_pa_s_m3,
            passage_resistance_pa_s_m3,
            passage_inertance_kg_m4,
        } => format!(
            "{}, behind a passage of resistance {passage_resistance_pa_s_m3:.4e} Pa·s/m³ and inertance {passage_inertance_kg_m4:.4e} kg/m⁴",
            volume(*capacitance_m3_pa, *leakage_resistance_pa_s_m3)
        ),
        SourceImpedance::Table(t) => {
            let (lo, hi) = t.range_hz();
            format!("a table from {lo:.2} to {hi:.2} Hz (end values held outside)")
        }
        SourceImpedance::Map(m) if m.conditions() == 1 => format!(
            "a table against frequency at the source file's {:.0} rpm (end values held outside)",
            m.speed_range_rev_s().0 * 60.0
        ),
        SourceImpedance::Map(m) => format!(
            "a source map of {} conditions ({}), per harmonic against frequency (end values held outside)",
            m.conditions(),
            m.describe_range()
        ),
    }
}

/// An element's inputs and what follows from them.
fn element(c: &Circuit, e: &crate::elements::Element) -> String {
    let len = |m: f64| Quantity::Length.show(m);
    match &e.kind {
        ElementKind::Tube(t) => {
            let p = &t.line.properties;
            let wall = match t.wall {
                Wall::Rigid => "rigid wall".to_string(),
                Wall::Elastic {
                    thickness_m,
                    youngs_modulus_pa,
                } => format!(
                    "wall {}, E = {:.0} GPa, thin-wall (Korteweg)",
                    len(thickness_m),
                    youngs_modulus_pa / 1e9
                ),
                Wall::ThickElastic {
                    thickness_m,
                    youngs_modulus_pa,
                    poisson_ratio,
                } => format!(
                    "wall {}, E = {:.0} GPa, ν = {poisson_ratio:.2}, thick-wall (Lamé)",
                    len(thickness_m),
                    youngs_modulus_pa / 1e9
                ),
            };
            format!(
                "length {}, bore {}, {wall}; wave speed {:.1} m/s, Z0 = {:.4e} Pa·s/m³, {} model{}",
                len(t.line.length_m),
                len(t.bore_m()),
                p.wave_speed_m_s(),
                p.z0(),
                p.model.name(),
                mean_flow(p)
            )
        }
        ElementKind::Hose(h) => {
            let p = &h.line.properties;
            let wall = match (&h.pressure, h.construction) {
                (Some(hp), _) => {
                    let pts = hp.data.points();
                    format!(
                        "wall data at {} mean pressures ({:.1} .. {:.1} bar), interpolated at {:.1} bar",
                        pts.len(),
                        pts[0].pressure_pa / 1e5,
                        pts[pts.len() - 1].pressure_pa / 1e5,
                        hp.mean_pressure_pa / 1e5
                    )
                }
                (None, Some(c)) => format!(
                    "{} wall (typical values; a measured value beats them)",
                    c.name()
                ),
                (None, None) => "viscoelastic wall".to_string(),
            };
            let fp = c.pumps.first().map_or(100.0, |p| p.pumping_frequency_hz());
            let omega = 2.0 * std::f64::consts::PI * fp;
            let modulus = p.compliance(omega).inv();
            let prop = p.propagation(omega);
            format!(
                "length {}, bore {}, {wall}; at {fp:.1} Hz: wave speed {:.1} m/s and loss factor {:.3} (wall and fluid), phase speed {:.1} m/s, attenuation {:.3} dB/m; {} model{}",
                len(h.line.length_m),
                len(h.bore_m()),
                (modulus.re / p.density_kg_m3).sqrt(),
                modulus.im / modulus.re,
                omega / prop.gamma.im,
                20.0 * std::f64::consts::LOG10_E * prop.gamma.re,
                p.model.name(),
                mean_flow(p)
            )
        }
        ElementKind::Volume(v) => format!(
            "{} (capacitance {:.4e} m³/Pa)",
            Quantity::Volume.show(v.volume_m3),
            v.capacitance()
        ),
        ElementKind::Orifice(o) => format!("resistance {:.4e} Pa·s/m³", o.resistance_pa_s_m3),
        ElementKind::LoadValve(v) => format!("resistance {:.4e} Pa·s/m³", v.resistance_pa_s_m3),
        ElementKind::Inertance(i) => format!(
            "inertance {:.4e} kg/m⁴, resistance {:.4e} Pa·s/m³",
            i.inertance_kg_m4, i.resistance_pa_s_m3
        ),
        ElementKind::Anechoic(a) => format!("matches Z0 = {:.4e} Pa·s/m³", a.line.z0()),
        ElementKind::SideBranch(_)
        | ElementKind::ExpansionChamber(_)
        | ElementKind::Helmholtz(_)
        | ElementKind::Damper(_)
        | ElementKind::InlineDamper(_) => describe::silencer(e, None).join("; "),
        ElementKind::ReliefValve(_) | ElementKind::CheckValve(_) | ElementKind::Cylinder(_) => {
            describe::component(&e.kind).join("; ")
        }
        _ => String::new(),
    }
}

/// `, mean flow 42.00 L/min (from the pumps), Re 2473`, or nothing when unknown.
fn mean_flow(p: &LineProperties) -> String {
    let (q, source) = match p.mean_flow {
        MeanFlow::Unknown => return String::new(),
        MeanFlow::Given(q) => (q, "given"),
        MeanFlow::FromPumps(q) => (q, "from the pumps"),
    };
    let re = p.reynolds_number().unwrap_or(0.0);
    let regime = if re > TRANSITION_REYNOLDS {
        "turbulent"
    } else {
        "laminar"
    };
    format!(
        ", mean flow {:.2} L/min ({source}), Re {re:.0} ({regime})",
        q * 6e4
    )
}

/// One line describing a pump geometry and what follows from it.
fn geometry(g: &PumpGeometry) -> String {
    match g {
        PumpGeometry::Gear(g) => format!(
            "external gear pump, {} teeth, module {} mm, face width {} mm, pressure angle {:.1}°, outside radius {} mm; contact ratio {:.3}, displacement {} cm³/rev",
            g.teeth,
            sig(g.module_m() * 1e3, 4),
            sig(g.face_width_m * 1e3, 4),
            g.pressure_angle_rad.to_degrees(),
            sig(g.tip_radius_m * 1e3, 4),
            g.contact_ratio(),
            sig(g.displacement_m3() * 1e6, 4)
        ),
        PumpGeometry::Piston(p) => {
            let mut text = format!(
                "axial piston pump, {} pistons of {} mm on a {} mm pitch radius, swash angle {:.2}°; displacement {} cm³/rev",
                p.pistons,
                sig(p.piston_diameter_m * 1e3, 4),
                sig(p.pitch_radius_m * 1e3, 4),
                p.swash_angle_rad.to_degrees(),
                sig(p.displacement_m3() * 1e6, 4)
            );
            if let Some(pc) = &p.precompression {
                text.push_str(&format!(
                    "; pre-compression backflow {} cm³ per piston over {:.1}° from {:.1}° after bottom dead centre",
                    sig(pc.backflow_volume_m3() * 1e6, 4),
                    pc.duration_rad.to_degrees(),
                    pc.delay_rad.to_degrees()
                ));
            }
            text
        }
    }
}

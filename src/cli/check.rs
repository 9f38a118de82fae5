//! `ripline check FILE`: validate a circuit and report what it holds.

use super::common;
use clap::Args;
use ripline::circuit::TapLocation;
use ripline::elements::{Connection, ElementKind};
use ripline::line::turbulence::TRANSITION_REYNOLDS;
use ripline::line::{LineProperties, MeanFlow};
use ripline::network::Plan;
use ripline::source::{FlowRipple, PumpGeometry, SourceImpedance};
use ripline::wall::Wall;
use std::io::Write;
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Circuit file (YAML); the built-in demo circuit when omitted.
    file: Option<PathBuf>,
}

pub fn run(args: CheckArgs) -> anyhow::Result<()> {
    let loaded = common::load_circuit(args.file.as_deref())?;
    let c = &loaded.circuit;
    let plan = Plan::compile(c)?;
    let mut out = std::io::stdout().lock();
    writeln!(out, "ripline check: {}", loaded.source)?;
    if let Some(t) = &c.title {
        writeln!(out, "circuit: {t}")?;
    }
    let f = &c.fluid;
    writeln!(
        out,
        "fluid: density {:.1} kg/m³, bulk modulus {:.3} GPa, viscosity {:.2} cSt (dynamic {:.4} Pa·s), speed of sound {:.1} m/s",
        f.density_kg_m3,
        f.bulk_modulus_pa / 1e9,
        f.kinematic_viscosity_m2_s * 1e6,
        f.dynamic_viscosity_pa_s(),
        f.speed_of_sound_m_s()
    )?;
    for p in &c.pumps {
        write!(
            out,
            "pump `{}` at node `{}`: {:.0} rpm, {} pumping elements, pumping frequency {:.2} Hz",
            p.name,
            c.nodes[p.node].name,
            p.speed_rev_s * 60.0,
            p.pumping_elements,
            p.pumping_frequency_hz(),
        )?;
        if let Some(q) = p.mean_flow_m3_s() {
            write!(out, ", mean flow {:.2} L/min", q * 60e3)?;
        }
        writeln!(out)?;
        if let Some(shaft) = &p.shaft {
            writeln!(
                out,
                "  on shaft `{shaft}` (same speed and angle reference as the other pumps on it)"
            )?;
        }
        match &p.flow_ripple {
            FlowRipple::Kinematic(k) => {
                writeln!(
                    out,
                    "  flow ripple from geometry: {}, flow non-uniformity δ = {:.4}, reference at shaft angle {:.2}°",
                    describe_geometry(k.geometry()),
                    k.non_uniformity(),
                    k.shaft_angle_rad().to_degrees()
                )?;
            }
            _ => writeln!(out, "  flow ripple: a table of {} harmonics", p.max_order())?,
        }
        // (capacitance, leakage, passage) of the volume forms
        let volume = match p.source_impedance {
            SourceImpedance::Volume {
                capacitance_m3_pa,
                leakage_resistance_pa_s_m3,
            } => Some((capacitance_m3_pa, leakage_resistance_pa_s_m3, None)),
            SourceImpedance::VolumePassage {
                capacitance_m3_pa,
                leakage_resistance_pa_s_m3,
                passage_resistance_pa_s_m3,
                passage_inertance_kg_m4,
            } => Some((
                capacitance_m3_pa,
                leakage_resistance_pa_s_m3,
                Some((passage_resistance_pa_s_m3, passage_inertance_kg_m4)),
            )),
            _ => None,
        };
        match (&p.source_impedance, volume) {
            (_, Some((capacitance_m3_pa, leakage, passage))) => {
                write!(
                    out,
                    "  source impedance: internal volume {:.4} L (capacitance {:.4e} m³/Pa)",
                    capacitance_m3_pa * f.bulk_modulus_pa * 1e3,
                    capacitance_m3_pa
                )?;
                if let Some(r) = leakage {
                    write!(out, ", leakage resistance {r:.4e} Pa·s/m³")?;
                }
                if let Some((r, l)) = passage {
                    write!(
                        out,
                        ", behind a passage of resistance {r:.4e} Pa·s/m³ and inertance {l:.4e} kg/m⁴"
                    )?;
                }
                writeln!(out)?;
            }
            (SourceImpedance::Table(t), None) => {
                let (lo, hi) = t.range_hz();
                writeln!(
                    out,
                    "  source impedance: a table from {lo:.2} to {hi:.2} Hz (end values held outside)"
                )?;
            }
            _ => writeln!(out, "  source impedance: {:?}", p.source_impedance)?,
        }
    }
    let implicit = c.implicit_closed_ends();
    writeln!(out, "nodes ({}):", c.nodes.len())?;
    for (id, n) in c.nodes.iter().enumerate() {
        let mut notes = Vec::new();
        if c.is_tank(id) {
            notes.push("tank (zero ripple)".to_string());
        }
        if implicit.contains(&id) {
            notes.push("line end with no termination: treated as a closed end".to_string());
        }
        notes.push(format!("{} element(s)", c.degree(id)));
        writeln!(out, "  {}: {}", n.name, notes.join(", "))?;
    }
    writeln!(out, "elements ({}):", c.elements.len())?;
    for e in &c.elements {
        let place = match e.connection {
            Connection::Series { a, b } => format!("{} → {}", c.nodes[a].name, c.nodes[b].name),
            Connection::Shunt { at } => format!("at {}", c.nodes[at].name),
        };
        let detail = match &e.kind {
            ElementKind::Tube(t) => {
                let p = &t.line.properties;
                let wall = match t.wall {
                    Wall::Rigid => "rigid wall".to_string(),
                    Wall::Elastic {
                        thickness_m,
                        youngs_modulus_pa,
                    } => format!(
                        "wall {:.2} mm, E = {:.0} GPa, thin-wall (Korteweg)",
                        thickness_m * 1e3,
                        youngs_modulus_pa / 1e9
                    ),
                    Wall::ThickElastic {
                        thickness_m,
                        youngs_modulus_pa,
                        poisson_ratio,
                    } => format!(
                        "wall {:.2} mm, E = {:.0} GPa, ν = {poisson_ratio:.2}, thick-wall (Lamé)",
                        thickness_m * 1e3,
                        youngs_modulus_pa / 1e9
                    ),
                };
                format!(
                    "length {:.3} m, bore {:.2} mm, {wall}; wave speed {:.1} m/s, Z0 = {:.4e} Pa·s/m³, {} model{}",
                    t.line.length_m,
                    t.bore_m() * 1e3,
                    p.wave_speed_m_s(),
                    p.z0(),
                    p.model.name(),
                    mean_flow_text(p)
                )
            }
            ElementKind::Hose(h) => {
                let p = &h.line.properties;
                let wall = match h.construction {
                    Some(c) => format!(
                        "{} wall (typical values; a measured value beats them)",
                        c.name()
                    ),
                    None => "viscoelastic wall".to_string(),
                };
                let fp = c.pumps.first().map_or(100.0, |p| p.pumping_frequency_hz());
                let omega = 2.0 * std::f64::consts::PI * fp;
                let modulus = p.compliance(omega).inv();
                let prop = p.propagation(omega);
                let wall = match &h.pressure {
                    Some(hp) => format!(
                        "wall data at {} mean pressures ({:.1} .. {:.1} bar), interpolated at {:.1} bar",
                        hp.data.points().len(),
                        hp.data.points()[0].pressure_pa / 1e5,
                        hp.data.points()[hp.data.points().len() - 1].pressure_pa / 1e5,
                        hp.mean_pressure_pa / 1e5
                    ),
                    None => wall,
                };
                format!(
                    "length {:.3} m, bore {:.2} mm, {wall}; at {fp:.1} Hz: wave speed {:.1} m/s and loss factor {:.3} (wall and fluid), phase speed {:.1} m/s, attenuation {:.3} dB/m; {} model{}",
                    h.line.length_m,
                    h.bore_m() * 1e3,
                    (modulus.re / p.density_kg_m3).sqrt(),
                    modulus.im / modulus.re,
                    omega / prop.gamma.im,
                    20.0 * std::f64::consts::LOG10_E * prop.gamma.re,
                    p.model.name(),
                    mean_flow_text(p)
                )
            }
            ElementKind::Volume(v) => format!(
                "{:.4} L (capacitance {:.4e} m³/Pa)",
                v.volume_m3 * 1e3,
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
            | ElementKind::InlineDamper(_) => super::silencer::describe(e, None).join("; "),
            ElementKind::ReliefValve(_) | ElementKind::CheckValve(_) | ElementKind::Cylinder(_) => {
                super::components::describe(&e.kind).join("; ")
            }
            _ => String::new(),
        };
        writeln!(out, "  {} ({}, {place}): {detail}", e.name, e.kind.name())?;
    }
    writeln!(out, "taps ({}):", c.taps.len())?;
    for t in &c.taps {
        let place = match t.location {
            TapLocation::Node(id) => format!("node {}", c.nodes[id].name),
            TapLocation::AlongTube {
                element,
                distance_m,
            } => format!("{distance_m:.3} m along {}", c.elements[element].name),
        };
        writeln!(out, "  {}: {place}", t.name)?;
    }
    if c.taps.is_empty() {
        writeln!(out, "  (none: reports cover every node)")?;
    }
    let top = c
        .pumps
        .iter()
        .map(|p| p.pumping_frequency_hz())
        .fold(0.0, f64::max)
        * f64::from(c.harmonics);
    writeln!(
        out,
        "solve: {} harmonics (up to {top:.1} Hz), {} unknowns per frequency",
        c.harmonics,
        plan.unknowns()
    )?;
    for w in ripline::diagnostics::component_warnings(c) {
        eprintln!("warning: {w}");
    }
    if c.elements.iter().any(|e| e.kind.is_pressure_vessel()) {
        writeln!(out, "{}", ripline::elements::PRESSURE_VESSEL_CAUTION)?;
    }
    writeln!(out, "OK")?;
    out.flush()?;
    Ok(())
}

/// `, mean flow 42.00 L/min (from the pumps), Re 2473`, or nothing when unknown.
fn mean_flow_text(p: &LineProperties) -> String {
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
fn describe_geometry(g: &PumpGeometry) -> String {
    match g {
        PumpGeometry::Gear(g) => format!(
            "external gear pump, {} teeth, module {:.3} mm, face width {:.2} mm, pressure angle {:.1}°, outside radius {:.3} mm; contact ratio {:.3}, displacement {:.3} cm³/rev",
            g.teeth,
            g.module_m() * 1e3,
            g.face_width_m * 1e3,
            g.pressure_angle_rad.to_degrees(),
            g.tip_radius_m * 1e3,
            g.contact_ratio(),
            g.displacement_m3() * 1e6
        ),
        PumpGeometry::Piston(p) => {
            let mut text = format!(
                "axial piston pump, {} pistons of {:.2} mm on a {:.2} mm pitch radius, swash angle {:.2}°; displacement {:.3} cm³/rev",
                p.pistons,
                p.piston_diameter_m * 1e3,
                p.pitch_radius_m * 1e3,
                p.swash_angle_rad.to_degrees(),
                p.displacement_m3() * 1e6
            );
            if let Some(pc) = &p.precompression {
                text.push_str(&format!(
                    "; pre-compression backflow {:.4} cm³ per piston over {:.1}° from {:.1}° after bottom dead centre",
                    pc.backflow_volume_m3() * 1e6,
                    pc.duration_rad.to_degrees(),
                    pc.delay_rad.to_degrees()
                ));
            }
            text
        }
    }
}

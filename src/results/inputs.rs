//! The inputs of a circuit with where each came from: given in the file
//! (with the line it is on), ripline's default, or derived from other
//! inputs (an oil property from its grade and temperature, a displacement
//! from the pump's geometry, a damper's operating pressure from the fluid's
//! mean pressure).
//!
//! The validated [`Circuit`] holds the values the analyses use; the file's
//! own keys come from [`crate::io::circuit_file::given_inputs`]. A value the
//! file gives is echoed as given; a value the model holds that no key gave
//! is a default or derived, and says from what.

use super::describe;
use super::{Input, Origin};
use crate::Circuit;
use crate::elements::ElementKind;
use crate::hose::TYPICAL_REFERENCE_FREQUENCY_HZ;
use crate::io::circuit_file::{DEFAULT_HARMONICS, Given, GivenInputs, GivenKeys};
use crate::source::{FlowRipple, shafts};
use crate::units::Dimension;
use crate::wall::Wall;
use serde::Serialize;

/// The inputs of one pump or element.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PartInputs {
    /// Its name.
    pub name: String,
    /// Its kind (file key; `pump` for a pump).
    pub kind: &'static str,
    /// Where it sits: "at node `x`", "`a` → `b`".
    pub place: String,
    /// Where the file writes it: key path (e.g. `elements[2]`, or
    /// `elements[1].galleries[0]` for a part of a valve block).
    pub path: String,
    /// The line (1-based) it starts on, when found.
    pub line: Option<usize>,
    /// Its inputs: given, defaults and derived values.
    pub inputs: Vec<Input>,
}

/// The inputs of a circuit, each with its origin.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CircuitInputs {
    /// Circuit-wide settings: title, harmonics, line model.
    pub general: Vec<Input>,
    /// The fluid at its operating point.
    pub fluid: Vec<Input>,
    /// Each pump.
    pub pumps: Vec<PartInputs>,
    /// Each element (a valve block's parts each on their own).
    pub elements: Vec<PartInputs>,
}

/// The SI unit of a dimension as results state it (`1` for a ratio).
fn unit(dim: Dimension) -> &'static str {
    match dim {
        Dimension::Ratio => "1",
        d => d.si_unit(),
    }
}

/// A given key as an input from the file.
fn given(key: &str, value: &Given) -> Input {
    let origin = Origin::File;
    match value {
        Given::Quantity(v, dim) => Input::number(key, *v, unit(*dim), origin),
        Given::Range(lo, hi, dim) => Input::range(key, (*lo, *hi), unit(*dim), origin),
        Given::GasPressure(abs) => Input::number(key, *abs, "Pa abs", origin),
        Given::Number(v) => Input::number(key, *v, "1", origin),
        Given::Text(t) => Input::text(key, t, origin),
        Given::Entries(n, of) => Input::text(key, &format!("{n} {of}"), origin),
        Given::Section => Input::text(key, "given", origin),
    }
}

/// The inputs of `circuit` read from a file that gives `file`.
pub fn circuit_inputs(circuit: &Circuit, file: &GivenInputs) -> CircuitInputs {
    let top = &file.top;
    let mut general = Vec::new();
    if let Some(Given::Text(t)) = top.get("title") {
        general.push(Input::text("title", t, Origin::File));
    }
    general.push(Input::number(
        "harmonics",
        f64::from(if top.has("harmonics") {
            circuit.harmonics
        } else {
            DEFAULT_HARMONICS
        }),
        "1",
        if top.has("harmonics") {
            Origin::File
        } else {
            Origin::Default
        },
    ));
    general.push(match top.get("line_model") {
        Some(v) => given("line_model", v),
        None => Input::text("line_model", "laminar", Origin::Default),
    });
    CircuitInputs {
        general,
        fluid: fluid(circuit, &file.fluid),
        pumps: pumps(circuit, &file.pumps),
        elements: circuit
            .elements
            .iter()
            .zip(&file.elements)
            .map(|(e, keys)| PartInputs {
                name: e.name.clone(),
                kind: e.kind.name(),
                place: describe::place(circuit, e),
                path: keys.path.clone(),
                line: keys.line,
                inputs: element_inputs(top, e, keys),
            })
            .collect(),
    }
}

/// The fluid: the keys that set its operating point, then its properties
/// there (given, or derived from a grade, viscosity points and free air).
fn fluid(circuit: &Circuit, keys: &GivenKeys) -> Vec<Input> {
    let f = &circuit.fluid;
    let mut v: Vec<Input> = ["grade", "viscosity_points", "temperature"]
        .iter()
        .filter_map(|k| keys.get(k).map(|g| given(k, g)))
        .collect();
    let air = matches!(keys.get("air_content"), Some(Given::Quantity(a, _)) if *a > 0.0);
    v.push(match keys.get("pressure") {
        Some(g) => given("pressure", g),
        None => Input::number("pressure", 0.0, "Pa", Origin::Default),
    });
    v.push(match keys.get("air_content") {
        Some(g) => given("air_content", g),
        None => Input::number("air_content", 0.0, "1", Origin::Default),
    });
    // a given value stays as written unless free air changes it
    let prop = |key: &str, value: f64, unit: &'static str, air_changes: bool| {
        let origin = if keys.has(key) && !(air && air_changes) {
            Origin::File
        } else {
            Origin::Derived
        };
        Input::number(key, value, unit, origin)
    };
    v.push(prop("density", f.density_kg_m3, "kg/m³", true));
    v.push(prop("bulk_modulus", f.bulk_modulus_pa, "Pa", true));
    v.push(prop("viscosity", f.kinematic_viscosity_m2_s, "m²/s", false));
    v.push(Input::number(
        "speed_of_sound",
        f.speed_of_sound_m_s(),
        "m/s",
        Origin::Derived,
    ));
    v
}

/// Each pump: the keys given, then what follows from them.
fn pumps(circuit: &Circuit, keys: &[GivenKeys]) -> Vec<PartInputs> {
    let all = shafts(&circuit.pumps);
    circuit
        .pumps
        .iter()
        .enumerate()
        .zip(keys)
        .map(|((i, p), keys)| {
            let mut inputs: Vec<Input> = keys
                .keys
                .iter()
                .filter(|(k, _)| !matches!(*k, "name" | "node"))
                .map(|(k, g)| given(k, g))
                .collect();
            if !keys.has("pumping_elements") {
                inputs.push(Input::number(
                    "pumping_elements",
                    f64::from(p.pumping_elements),
                    "1",
                    Origin::Derived,
                ));
            }
            if let (Some(d), false) = (p.displacement_m3, keys.has("displacement")) {
                inputs.push(Input::number("displacement", d, "m³", Origin::Derived));
            }
            let shaft = all.iter().find(|s| s.pumps.contains(&i));
            if !keys.has("speed_range")
                && let Some(s) = shaft
                && let Some(r) = s.speed_range_rev_s(&circuit.pumps)
            {
                inputs.push(Input::range("speed_range", r, "rev/s", Origin::Derived));
            }
            if shaft.is_some_and(|s| s.pumps.len() > 1) && !keys.has("shaft_angle") {
                inputs.push(Input::number("shaft_angle", 0.0, "rad", Origin::Default));
            }
            if let FlowRipple::Kinematic(k) = &p.flow_ripple {
                inputs.push(Input::number(
                    "flow_non_uniformity",
                    k.non_uniformity(),
                    "1",
                    Origin::Derived,
                ));
            }
            if let Some(q) = p.mean_flow_m3_s() {
                inputs.push(Input::number("mean_flow", q, "m³/s", Origin::Derived));
            }
            inputs.push(Input::number(
                "pumping_frequency",
                p.pumping_frequency_hz(),
                "Hz",
                Origin::Derived,
            ));
            PartInputs {
                name: p.name.clone(),
                kind: "pump",
                place: format!("at node `{}`", circuit.nodes[p.node].name),
                path: keys.path.clone(),
                line: keys.line,
                inputs,
            }
        })
        .collect()
}

/// The line model of an element that has one (a line, a neck, ports).
fn line_model(kind: &ElementKind) -> Option<&'static str> {
    let m = match kind {
        ElementKind::Tube(t) => t.line.properties.model,
        ElementKind::Hose(h) => h.line.properties.model,
        ElementKind::SideBranch(s) => s.tube.line.properties.model,
        ElementKind::ExpansionChamber(c) => c.tube.line.properties.model,
        ElementKind::Helmholtz(h) => h.neck.model,
        ElementKind::Damper(d) => d.neck.model,
        ElementKind::InlineDamper(d) => d.vessel.neck.model,
        _ => return None,
    };
    Some(m.name())
}

/// The wall of a kind that has a tube wall.
fn wall(kind: &ElementKind) -> Option<Wall> {
    match kind {
        ElementKind::Tube(t) => Some(t.wall),
        ElementKind::SideBranch(s) => Some(s.tube.wall),
        ElementKind::ExpansionChamber(c) => Some(c.tube.wall),
        _ => None,
    }
}

/// An element's given keys (its connection left out: the place says it),
/// then the defaults it took and the values derived for it.
fn element_inputs(top: &GivenKeys, e: &crate::elements::Element, keys: &GivenKeys) -> Vec<Input> {
    let mut v: Vec<Input> = keys
        .keys
        .iter()
        .filter(|(k, _)| !matches!(*k, "from" | "to" | "at"))
        .map(|(k, g)| given(k, g))
        .collect();
    if let (Some(model), false) = (line_model(&e.kind), keys.has("model")) {
        // the circuit's `line_model`, itself given or the default
        let origin = if top.has("line_model") {
            Origin::Derived
        } else {
            Origin::Default
        };
        v.push(Input::text("model", model, origin));
    }
    match wall(&e.kind) {
        Some(Wall::ThickElastic {
            youngs_modulus_pa,
            poisson_ratio,
            ..
        }) => {
            if !keys.has("wall_model") {
                v.push(Input::text("wall_model", "thick", Origin::Default));
            }
            if keys.has("material") {
                v.push(Input::number(
                    "youngs_modulus",
                    youngs_modulus_pa,
                    "Pa",
                    Origin::Derived,
                ));
                v.push(Input::number(
                    "poisson_ratio",
                    poisson_ratio,
                    "1",
                    Origin::Derived,
                ));
            } else if !keys.has("poisson_ratio") {
                v.push(Input::number(
                    "poisson_ratio",
                    poisson_ratio,
                    "1",
                    Origin::Default,
                ));
            }
        }
        Some(Wall::Elastic {
            youngs_modulus_pa, ..
        }) if keys.has("material") => v.push(Input::number(
            "youngs_modulus",
            youngs_modulus_pa,
            "Pa",
            Origin::Derived,
        )),
        _ => {}
    }
    match &e.kind {
        ElementKind::Orifice(o) if !keys.has("resistance") => v.push(Input::number(
            "resistance",
            o.resistance_pa_s_m3,
            "Pa·s/m³",
            Origin::Derived,
        )),
        ElementKind::LoadValve(o) if !keys.has("resistance") => v.push(Input::number(
            "resistance",
            o.resistance_pa_s_m3,
            "Pa·s/m³",
            Origin::Derived,
        )),
        ElementKind::Inertance(i) if !keys.has("inertance") => v.push(Input::number(
            "inertance",
            i.inertance_kg_m4,
            "kg/m⁴",
            Origin::Derived,
        )),
        ElementKind::Helmholtz(h) if !keys.has("end_correction") => v.push(Input::text(
            "end_correction",
            &h.end_correction.to_string(),
            Origin::Default,
        )),
        ElementKind::Hose(h) => {
            if (keys.has("wave_speed") || keys.has("wave_speeds"))
                && !keys.has("reference_frequency")
            {
                v.push(Input::number(
                    "reference_frequency",
                    TYPICAL_REFERENCE_FREQUENCY_HZ,
                    "Hz",
                    Origin::Default,
                ));
            }
            if let Some(hp) = &h.pressure {
                // the wall data are read at the fluid's mean pressure
                v.push(Input::number(
                    "mean_pressure",
                    hp.mean_pressure_pa,
                    "Pa",
                    Origin::Derived,
                ));
            }
        }
        _ => {}
    }
    let vessel = match &e.kind {
        ElementKind::Damper(d) => Some(d),
        ElementKind::InlineDamper(d) => Some(&d.vessel),
        _ => None,
    };
    if let Some(d) = vessel {
        if !keys.has("operating_pressure") {
            // it follows the fluid's mean pressure
            v.push(Input::number(
                "operating_pressure",
                d.operating_pa,
                "Pa abs",
                Origin::Derived,
            ));
        }
        if !keys.has("polytropic_index") {
            v.push(Input::number(
                "polytropic_index",
                d.polytropic_index,
                "1",
                Origin::Default,
            ));
        }
    }
    v
}

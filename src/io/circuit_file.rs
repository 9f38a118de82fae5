//! The circuit file: YAML text → validated [`Circuit`].
//!
//! Parsing happens in two steps. First the YAML is read into plain `Raw*`
//! structs that mirror the file (unknown keys, wrong types and unknown units
//! are rejected here by the parser, which knows the line and column). Then
//! `Checker` validates values and cross-references and builds the model in
//! SI; its errors carry the key path, mapped back to a line by
//! [`super::locate`]. The file format is documented in README.md.

mod components;
mod envelope;
mod given;
mod pumps;
mod settings;

use super::InputError;
use super::gas_pressure::GasPressure;
use super::locate::KeyPath;
use super::quantity::{self as q, Q};
use super::validate::{FileCheck, Res, WallKeys, WallModel};
use crate::circuit::{Circuit, Node, Tap, TapLocation};
use crate::elements::{
    Anechoic, Connection, Element, ElementKind, ExpansionChamber, HelmholtzResonator, Hose,
    Inertance, LoadValve, Orifice, PulsationDamper, SideBranch, Tube, Volume,
};
use crate::fluid::Fluid;
use crate::hose::{
    HoseConstruction, MAX_RETARDATION_TERMS, RetardationTerm, TYPICAL_REFERENCE_FREQUENCY_HZ,
    ViscoelasticWall,
};
use crate::limits;
use crate::line::{Line, LineModel, LineProperties, MeanFlow};
use crate::oil::{self, Grade, OilData, Walther};
use crate::source::{FlowHarmonic, FlowRipple, KinematicRipple, Pump, SourceImpedance};
use pumps::{RawGear, RawPiston, RawSourceImpedance};
use serde::Deserialize;
use std::collections::{HashMap, HashSet};
use std::path::Path;

/// Default number of harmonics solved and reported.
pub const DEFAULT_HARMONICS: u32 = 10;

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a circuit: a mapping with fluid, pump, elements and taps"
)]
struct RawCircuit {
    title: Option<String>,
    fluid: RawFluid,
    line_model: Option<RawLineModel>,
    harmonics: Option<u32>,
    pump: Option<RawPump>,
    pumps: Option<Vec<RawPump>>,
    #[serde(default)]
    elements: Vec<RawElement>,
    #[serde(default)]
    taps: Vec<RawTap>,
    envelope: Option<envelope::RawEnvelope>,
    limits: Option<Vec<envelope::RawLimit>>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a fluid section: a mapping with density, bulk_modulus and viscosity, or a grade with temperature"
)]
pub(crate) struct RawFluid {
    grade: Option<String>,
    temperature: Option<Q<q::Temperature>>,
    pressure: Option<Q<q::Pressure>>,
    air_content: Option<Q<q::Ratio>>,
    viscosity_points: Option<Vec<RawViscosityPoint>>,
    density: Option<Q<q::Density>>,
    bulk_modulus: Option<Q<q::Modulus>>,
    viscosity: Option<Q<q::KinematicViscosity>>,
}

impl RawFluid {
    /// The oil grade, temperature (K) and mean pressure (gauge Pa) as
    /// written, if given.
    pub(crate) fn test_conditions(&self) -> (Option<String>, Option<f64>, Option<f64>) {
        (
            self.grade.clone(),
            self.temperature.map(|t| t.si),
            self.pressure.map(|p| p.si),
        )
    }
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a viscosity point: a mapping with temperature and viscosity"
)]
pub(crate) struct RawViscosityPoint {
    temperature: Q<q::Temperature>,
    viscosity: Q<q::KinematicViscosity>,
}

#[derive(Debug, Clone, Copy, Deserialize)]
#[serde(rename_all = "snake_case")]
enum RawLineModel {
    Lossless,
    Laminar,
    Turbulent,
}

impl From<RawLineModel> for LineModel {
    fn from(m: RawLineModel) -> Self {
        match m {
            RawLineModel::Lossless => LineModel::Lossless,
            RawLineModel::Laminar => LineModel::Laminar,
            RawLineModel::Turbulent => LineModel::Turbulent,
        }
    }
}

#[derive(Debug, Clone, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a Kelvin–Voigt wall: a mapping with instantaneous_modulus and terms"
)]
struct RawKelvinVoigt {
    instantaneous_modulus: Q<q::Modulus>,
    #[serde(default)]
    terms: Vec<RawRetardation>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a retardation term: a mapping with modulus and time"
)]
struct RawRetardation {
    modulus: Q<q::Modulus>,
    time: Q<q::Time>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a pump section: a mapping with node, speed, pumping_elements, flow_ripple (or gear, piston) and source_impedance"
)]
struct RawPump {
    name: Option<String>,
    node: String,
    speed: Option<Q<q::ShaftSpeed>>,
    // the range of speeds analysed, not a value of the machine: a tolerance
    // there is refused in every command
    #[serde(default, deserialize_with = "q::without_tolerances")]
    speed_range: Option<[Q<q::ShaftSpeed>; 2]>,
    pumping_elements: Option<u32>,
    displacement: Option<Q<q::Volume>>,
    flow_ripple: Option<Vec<RawHarmonic>>,
    gear: Option<RawGear>,
    piston: Option<RawPiston>,
    source_impedance: Option<RawSourceImpedance>,
    source_file: Option<String>,
    shaft: Option<String>,
    shaft_angle: Option<Q<q::Angle>>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a harmonic: a mapping with harmonic, amplitude and phase"
)]
struct RawHarmonic {
    harmonic: u32,
    amplitude: Q<q::Flow>,
    #[serde(default)]
    phase: Option<Q<q::Angle>>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Deserialize)]
#[serde(rename_all = "snake_case")]
enum RawKind {
    #[default]
    Tube,
    Volume,
    Orifice,
    Inertance,
    LoadValve,
    AnechoicEnd,
    ClosedEnd,
    Tank,
    Hose,
    SideBranch,
    ExpansionChamber,
    HelmholtzResonator,
    PulsationDamper,
    ReliefValve,
    CheckValve,
    Cylinder,
    InlinePulsationDamper,
    ValveBlock,
}

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "an element: a mapping with name, kind and the kind's keys"
)]
struct RawElement {
    name: String,
    kind: RawKind,
    from: Option<String>,
    to: Option<String>,
    at: Option<String>,
    length: Option<Q<q::Length>>,
    bore: Option<Q<q::Length>>,
    wall: Option<Q<q::Length>>,
    material: Option<String>,
    youngs_modulus: Option<Q<q::Modulus>>,
    rigid: Option<bool>,
    model: Option<RawLineModel>,
    volume: Option<Q<q::Volume>>,
    resistance: Option<Q<q::Resistance>>,
    mean_flow: Option<Q<q::Flow>>,
    pressure_drop: Option<Q<q::Pressure>>,
    inertance: Option<Q<q::Inertance>>,
    line: Option<String>,
    wall_model: Option<WallModel>,
    poisson_ratio: Option<Q<q::Ratio>>,
    construction: Option<String>,
    wave_speed: Option<Q<q::Velocity>>,
    loss_factor: Option<Q<q::Ratio>>,
    reference_frequency: Option<Q<q::Frequency>>,
    kelvin_voigt: Option<RawKelvinVoigt>,
    neck_length: Option<Q<q::Length>>,
    neck_bore: Option<Q<q::Length>>,
    end_correction: Option<bool>,
    gas_volume: Option<Q<q::Volume>>,
    precharge: Option<GasPressure>,
    operating_pressure: Option<GasPressure>,
    polytropic_index: Option<f64>,
    // valves, cylinders, in-line silencers, valve blocks, hoses against
    // pressure (circuit_file/components.rs)
    cracking_pressure: Option<Q<q::Pressure>>,
    full_open_pressure: Option<Q<q::Pressure>>,
    mass: Option<Q<q::Mass>>,
    spring_rate: Option<Q<q::Stiffness>>,
    damping: Option<Q<q::Damping>>,
    damping_area: Option<Q<q::Area>>,
    damping_resistance: Option<Q<q::Resistance>>,
    feedback_area: Option<Q<q::Area>>,
    jet_angle: Option<Q<q::Angle>>,
    flow_gain: Option<Q<q::FlowGain>>,
    flow_pressure_coefficient: Option<Q<q::FlowPressureCoefficient>>,
    rod_diameter: Option<Q<q::Length>>,
    stroke: Option<Q<q::Length>>,
    position: Option<Q<q::Length>>,
    dead_volume: Option<Q<q::Volume>>,
    load_mass: Option<Q<q::Mass>>,
    load_stiffness: Option<Q<q::Stiffness>>,
    load_damping: Option<Q<q::Damping>>,
    friction: Option<Q<q::Damping>>,
    port: Option<components::RawCylinderPort>,
    oil_volume: Option<Q<q::Volume>>,
    port_length: Option<Q<q::Length>>,
    port_bore: Option<Q<q::Length>>,
    inlet_extension: Option<Q<q::Length>>,
    outlet_extension: Option<Q<q::Length>>,
    wave_speeds: Option<Vec<components::RawHosePoint>>,
    ports: Option<components::RawPorts>,
    galleries: Option<Vec<components::RawGallery>>,
    cavities: Option<Vec<components::RawCavity>>,
}

impl RawElement {
    /// The optional keys that are present, by name.
    fn present_keys(&self) -> Vec<&'static str> {
        self.given().into_iter().map(|(key, _)| key).collect()
    }

    /// Whether it connects `from` one node `to` another: two-port kinds,
    /// and the kinds that may be either (relief valve, cylinder) when not
    /// given `at`.
    fn is_two_port(&self) -> bool {
        self.kind.is_two_port()
            || (matches!(self.kind, RawKind::ReliefValve | RawKind::Cylinder) && self.at.is_none())
    }
}

impl RawKind {
    fn name(self) -> &'static str {
        match self {
            RawKind::Tube => "tube",
            RawKind::Volume => "volume",
            RawKind::Orifice => "orifice",
            RawKind::Inertance => "inertance",
            RawKind::LoadValve => "load_valve",
            RawKind::AnechoicEnd => "anechoic_end",
            RawKind::ClosedEnd => "closed_end",
            RawKind::Tank => "tank",
            RawKind::Hose => "hose",
            RawKind::SideBranch => "side_branch",
            RawKind::ExpansionChamber => "expansion_chamber",
            RawKind::HelmholtzResonator => "helmholtz_resonator",
            RawKind::PulsationDamper => "pulsation_damper",
            RawKind::ReliefValve => "relief_valve",
            RawKind::CheckValve => "check_valve",
            RawKind::Cylinder => "cylinder",
            RawKind::InlinePulsationDamper => "inline_pulsation_damper",
            RawKind::ValveBlock => "valve_block",
        }
    }

    /// The optional keys this kind accepts (besides `name` and `kind`).
    fn allowed_keys(self) -> &'static [&'static str] {
        match self {
            RawKind::Tube => &[
                "from",
                "to",
                "length",
                "bore",
                "wall",
                "material",
                "youngs_modulus",
                "rigid",
                "model",
                "wall_model",
                "poisson_ratio",
                "mean_flow",
            ],
            RawKind::Hose => &[
                "from",
                "to",
                "length",
                "bore",
                "model",
                "construction",
                "wave_speed",
                "loss_factor",
                "reference_frequency",
                "kelvin_voigt",
                "mean_flow",
                "wave_speeds",
            ],
            RawKind::Volume => &["at", "volume"],
            RawKind::Orifice => &["from", "to", "resistance", "mean_flow", "pressure_drop"],
            RawKind::Inertance => &["from", "to", "inertance", "resistance", "length", "bore"],
            RawKind::LoadValve => &["at", "resistance", "mean_flow", "pressure_drop"],
            RawKind::AnechoicEnd => &["at", "line"],
            RawKind::ClosedEnd | RawKind::Tank => &["at"],
            RawKind::ExpansionChamber => &[
                "from",
                "to",
                "length",
                "bore",
                "wall",
                "material",
                "youngs_modulus",
                "rigid",
                "model",
                "wall_model",
                "poisson_ratio",
                "port_length",
                "port_bore",
                "inlet_extension",
                "outlet_extension",
            ],
            RawKind::SideBranch => &[
                "at",
                "length",
                "bore",
                "wall",
                "material",
                "youngs_modulus",
                "rigid",
                "model",
                "wall_model",
                "poisson_ratio",
            ],
            RawKind::HelmholtzResonator => &[
                "at",
                "volume",
                "neck_length",
                "neck_bore",
                "end_correction",
                "model",
            ],
            RawKind::PulsationDamper => &[
                "at",
                "gas_volume",
                "precharge",
                "operating_pressure",
                "polytropic_index",
                "neck_length",
                "neck_bore",
                "model",
            ],
            RawKind::ReliefValve => &[
                "at",
                "from",
                "to",
                "cracking_pressure",
                "mean_flow",
                "pressure_drop",
                "mass",
                "spring_rate",
                "damping",
                "damping_area",
                "damping_resistance",
                "feedback_area",
                "jet_angle",
                "flow_gain",
                "flow_pressure_coefficient",
            ],
            RawKind::CheckValve => &[
                "from",
                "to",
                "cracking_pressure",
                "full_open_pressure",
                "mean_flow",
                "pressure_drop",
                "mass",
                "spring_rate",
                "damping",
                "damping_area",
                "damping_resistance",
                "feedback_area",
                "jet_angle",
                "flow_gain",
                "flow_pressure_coefficient",
            ],
            RawKind::Cylinder => &[
                "at",
                "from",
                "to",
                "port",
                "bore",
                "rod_diameter",
                "stroke",
                "position",
                "dead_volume",
                "load_mass",
                "load_stiffness",
                "load_damping",
                "friction",
            ],
            RawKind::InlinePulsationDamper => &[
                "from",
                "to",
                "gas_volume",
                "precharge",
                "operating_pressure",
                "polytropic_index",
                "oil_volume",
                "port_length",
                "port_bore",
                "model",
            ],
            RawKind::ValveBlock => &["ports", "galleries", "cavities"],
        }
    }

    fn is_two_port(self) -> bool {
        matches!(
            self,
            RawKind::Tube
                | RawKind::Hose
                | RawKind::Orifice
                | RawKind::Inertance
                | RawKind::ExpansionChamber
                | RawKind::CheckValve
                | RawKind::InlinePulsationDamper
        )
    }
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a tap: a mapping with name and node, or name, element and distance"
)]
struct RawTap {
    name: String,
    node: Option<String>,
    element: Option<String>,
    distance: Option<Q<q::Length>>,
}

/// Reads and validates a circuit file.
///
/// # Errors
/// [`InputError`] naming the file, the line and the key at fault.
pub fn load_circuit(path: &Path) -> Result<Circuit, InputError> {
    let text = super::read_text(path)?;
    parse_circuit(&text, &path.display().to_string())
}

/// Parses and validates circuit text; `file` names it in error messages.
///
/// # Errors
/// [`InputError`] naming the file, the line and the key at fault.
pub fn parse_circuit(text: &str, file: &str) -> Result<Circuit, InputError> {
    let raw: RawCircuit = parse_raw(text, file)?;
    Checker(FileCheck { text, file }).circuit(&raw)
}

/// The raw sections of circuit text, tolerances accepted.
fn parse_raw(text: &str, file: &str) -> Result<RawCircuit, InputError> {
    refuse_too_many_elements(text, file)?;
    super::quantity::allowing_tolerances(|| super::parse_yaml(text, file))
}

/// Refuses circuit text whose `elements` list has more entries than
/// [`limits::MAX_ELEMENTS`] before the YAML parser sees it, so that such a
/// file costs a linear scan and no parser memory (the same message as the
/// check after parsing, located at the first entry beyond the limit).
///
/// # Errors
/// [`InputError::Invalid`] at that entry.
pub(crate) fn refuse_too_many_elements(text: &str, file: &str) -> Result<(), InputError> {
    let max = limits::MAX_ELEMENTS;
    match super::yaml_limits::entries_over(text, "elements", max) {
        None => Ok(()),
        Some((count, line, column)) => Err(InputError::Invalid(super::Located {
            file: file.to_string(),
            line: Some(line),
            column: Some(column),
            path: format!("elements[{max}]"),
            message: over_limit(
                &format!("the circuit has {count} elements"),
                max,
                "elements",
            ),
        })),
    }
}

/// The message for a count over one of the limits of [`limits`]: `count`
/// says what the file has, `max` and `what` the limit.
fn over_limit(count: &str, max: usize, what: &str) -> String {
    format!("{count}; ripline accepts at most {max} {what} (README, Limits and safeguards)")
}

pub use given::{Given, GivenInputs, GivenKeys, given_inputs};

pub use envelope::{
    CircuitFile, MAX_CASES, MAX_LEVELS, MAX_POINTS, load_circuit_file, parse_circuit_at,
    parse_circuit_file,
};
pub use settings::{CircuitTemplate, Setting, Target, Uncertain};

/// Parses circuit text as [`parse_circuit`] does, with the oil at another
/// temperature (K): the fluid's temperature-dependent properties (density,
/// bulk modulus, viscosity from a `grade` or `viscosity_points`) and every
/// line built from them are evaluated at `temperature_k`. Explicit
/// `density`, `bulk_modulus` or `viscosity` values stay as written.
///
/// # Errors
/// [`InputError`] as for [`parse_circuit`], and when the fluid has no
/// temperature model (neither `grade` nor `viscosity_points`).
pub fn parse_circuit_at_temperature(
    text: &str,
    file: &str,
    temperature_k: f64,
) -> Result<Circuit, InputError> {
    let point = crate::envelope::OperatingPoint {
        temperature_k: Some(temperature_k),
        ..Default::default()
    };
    parse_circuit_at(text, file, &point)
}

/// The explicit fluid values of a circuit text that do not follow the oil's
/// temperature (`density`, `bulk_modulus`, `viscosity`), by key name.
///
/// # Errors
/// [`InputError`] if the text does not parse.
pub fn fixed_fluid_keys(text: &str, file: &str) -> Result<Vec<&'static str>, InputError> {
    let raw: RawCircuit = parse_raw(text, file)?;
    let f = &raw.fluid;
    Ok([
        ("density", f.density.is_some()),
        ("bulk_modulus", f.bulk_modulus.is_some()),
        ("viscosity", f.viscosity.is_some()),
    ]
    .into_iter()
    .filter_map(|(k, given)| given.then_some(k))
    .collect())
}

/// Warnings about the pump source files a circuit text reads: each harmonic
/// a bench fit marked other than `estimated` (ill-conditioned, extrapolated,
/// unstable) among the harmonics the circuit solves, with the fit's note.
/// The values are used as written; the warning says they may be biased.
/// A text that does not parse, or a source file that cannot be read, gives
/// no warning here (loading the circuit reports those).
pub fn source_file_notes(text: &str, file: &str) -> Vec<crate::diagnostics::Warning> {
    // A text with no `source_file` key reads no source file: no second parse
    // (a third of loading a large circuit).
    if !text.contains("source_file") {
        return Vec::new();
    }
    let Ok(raw) = super::parse_yaml::<RawCircuit>(text, file) else {
        return Vec::new();
    };
    let solved = raw.harmonics.unwrap_or(DEFAULT_HARMONICS);
    let base = Path::new(file).parent().unwrap_or(Path::new(""));
    let mut out = Vec::new();
    for p in raw.pump.iter().chain(raw.pumps.iter().flatten()) {
        let Some(name) = &p.source_file else { continue };
        let Ok(src) = super::source_file::load_source_file(&base.join(name)) else {
            continue;
        };
        let several = src.conditions.len() > 1;
        for c in &src.conditions {
            let at = if several {
                format!(" at {}", c.describe())
            } else {
                String::new()
            };
            for h in c.harmonics.iter().filter(|h| {
                h.order <= solved && h.status != crate::estimate::fit::HarmonicStatus::Estimated
            }) {
                out.push(crate::diagnostics::Warning {
                    subject: format!("pump `{}`", p.name.as_deref().unwrap_or("pump")),
                    message: format!(
                        "{name}: harmonic {}{at} is marked `{}` by the bench fit{}; its values are used as written and may be biased",
                        h.order,
                        h.status.key(),
                        h.note.as_deref().map(|n| format!(" ({n})")).unwrap_or_default()
                    ),
                });
            }
        }
    }
    out
}

/// The fluid of a `fluid` section as circuit files have it (explicit
/// values, or an oil grade at a temperature and pressure), for other files
/// with the same section (bench files).
pub(crate) fn check_fluid(check: FileCheck<'_>, path: &KeyPath, raw: &RawFluid) -> Res<Fluid> {
    Checker(check).fluid(path, raw)
}

/// Validates raw values; every error is located in the file (the shared
/// checks of [`FileCheck`] through `Deref`).
struct Checker<'a>(FileCheck<'a>);

impl<'a> std::ops::Deref for Checker<'a> {
    type Target = FileCheck<'a>;
    fn deref(&self) -> &FileCheck<'a> {
        &self.0
    }
}

impl Checker<'_> {
    fn circuit(&self, raw: &RawCircuit) -> Res<Circuit> {
        let root = KeyPath::root();
        let fluid = self.fluid(&root.key("fluid"), &raw.fluid)?;
        let line_model = raw.line_model.map_or(LineModel::Laminar, LineModel::from);
        let harmonics = match raw.harmonics {
            None => DEFAULT_HARMONICS,
            Some(n) if (1..=200).contains(&n) => n,
            Some(n) => {
                return Err(self.err(
                    &root.key("harmonics"),
                    format!("must be between 1 and 200, found {n}"),
                ));
            }
        };
        if raw.elements.is_empty() {
            return Err(self.err(
                &root,
                "the circuit has no `elements`: add at least one tube or other element",
            ));
        }
        // Valve blocks become their galleries and cavities; `element_paths` locates
        // each element in the file.
        let mean_pressure = raw.fluid.pressure.map(|p| p.si);
        // A count over a limit of `limits`, located at the first item beyond it.
        let over = |path: &KeyPath, count: String, max: usize, what: &str| {
            self.err(path, over_limit(&count, max, what))
        };
        if raw.elements.len() > limits::MAX_ELEMENTS {
            return Err(over(
                &root.key("elements").index(limits::MAX_ELEMENTS),
                format!("the circuit has {} elements", raw.elements.len()),
                limits::MAX_ELEMENTS,
                "elements",
            ));
        }
        let (raws, element_paths) = self.expand_valve_blocks(&root, &raw.elements)?;
        if raws.len() > limits::MAX_ELEMENTS {
            return Err(over(
                &element_paths[limits::MAX_ELEMENTS],
                format!(
                    "the circuit has {} elements once its valve blocks are expanded into their parts",
                    raws.len()
                ),
                limits::MAX_ELEMENTS,
                "elements",
            ));
        }

        // Nodes, in order of first mention by an element.
        let mut nodes: Vec<Node> = Vec::new();
        let mut node_ids: HashMap<String, usize> = HashMap::new();
        let mut node_id = |name: &str| -> usize {
            *node_ids.entry(name.to_string()).or_insert_with(|| {
                nodes.push(Node {
                    name: name.to_string(),
                });
                nodes.len() - 1
            })
        };

        let mut names: HashMap<&str, usize> = HashMap::with_capacity(raws.len());
        let mut connections = Vec::with_capacity(raws.len());
        for (i, (e, path)) in raws.iter().zip(&element_paths).enumerate() {
            if e.name.trim().is_empty() {
                return Err(self.err(&path.key("name"), "an element name must not be empty"));
            }
            if names.insert(e.name.as_str(), i).is_some() {
                return Err(self.err(
                    &path.key("name"),
                    format!("duplicate element name `{}`: names must be unique", e.name),
                ));
            }
            for key in e.present_keys() {
                if !e.kind.allowed_keys().contains(&key) {
                    return Err(self.err(
                        &path.key(key),
                        format!(
                            "key `{key}` does not apply to a `{}`; it takes: name, kind, {}",
                            e.kind.name(),
                            e.kind.allowed_keys().join(", ")
                        ),
                    ));
                }
            }
            self.either_way(path, e)?;
            let connection = if e.is_two_port() {
                let from = self.node_name(path, "from", e.from.as_deref(), e.kind)?;
                let to = self.node_name(path, "to", e.to.as_deref(), e.kind)?;
                if from == to {
                    return Err(self.err(
                        &path.key("to"),
                        format!("`from` and `to` are the same node `{from}`"),
                    ));
                }
                Connection::Series {
                    a: node_id(from),
                    b: node_id(to),
                }
            } else {
                let at = self.node_name(path, "at", e.at.as_deref(), e.kind)?;
                Connection::Shunt { at: node_id(at) }
            };
            let newest = match connection {
                Connection::Series { a, b } => a.max(b),
                Connection::Shunt { at } => at,
            };
            connections.push(connection);
            if newest >= limits::MAX_NODES {
                return Err(over(
                    path,
                    format!("with this element the circuit has {} nodes", newest + 1),
                    limits::MAX_NODES,
                    "nodes",
                ));
            }
        }

        // Element models; anechoic ends match a tube, so they are built last.
        let mut kinds: Vec<Option<ElementKind>> = Vec::with_capacity(raws.len());
        for (e, path) in raws.iter().zip(&element_paths) {
            let path = path.clone();
            kinds.push(match e.kind {
                RawKind::Tube => Some(ElementKind::Tube(self.tube(&path, e, &fluid, line_model)?)),
                RawKind::Hose => Some(ElementKind::Hose(self.hose(
                    &path,
                    e,
                    &fluid,
                    line_model,
                    mean_pressure,
                )?)),
                RawKind::Volume => Some(ElementKind::Volume(Volume {
                    volume_m3: self.in_range(
                        &path.key("volume"),
                        self.required(&path, "volume", e.volume, e.kind)?,
                        1e-9,
                        10.0,
                        "m³",
                    )?,
                    bulk_modulus_pa: fluid.bulk_modulus_pa,
                })),
                RawKind::Orifice => Some(ElementKind::Orifice(Orifice {
                    resistance_pa_s_m3: self.resistance(&path, e)?,
                })),
                RawKind::LoadValve => Some(ElementKind::LoadValve(LoadValve {
                    resistance_pa_s_m3: self.resistance(&path, e)?,
                })),
                RawKind::Inertance => {
                    Some(ElementKind::Inertance(self.inertance(&path, e, &fluid)?))
                }
                RawKind::ClosedEnd => Some(ElementKind::ClosedEnd),
                RawKind::Tank => Some(ElementKind::Tank),
                RawKind::SideBranch => Some(ElementKind::SideBranch(SideBranch {
                    tube: self.tube(&path, e, &fluid, line_model)?,
                })),
                RawKind::ExpansionChamber => {
                    let tube = self.tube(&path, e, &fluid, line_model)?;
                    let ports = self.chamber_ports(&path, e, &fluid, line_model, &tube)?;
                    Some(ElementKind::ExpansionChamber(ExpansionChamber {
                        tube,
                        ports,
                    }))
                }
                RawKind::HelmholtzResonator => Some(ElementKind::Helmholtz(
                    self.helmholtz(&path, e, &fluid, line_model)?,
                )),
                RawKind::PulsationDamper => Some(ElementKind::Damper(self.damper(
                    &path,
                    e,
                    &fluid,
                    mean_pressure,
                    line_model,
                )?)),
                RawKind::ReliefValve => Some(ElementKind::ReliefValve(
                    self.relief_valve(&path, e, &fluid)?,
                )),
                RawKind::CheckValve => {
                    Some(ElementKind::CheckValve(self.check_valve(&path, e, &fluid)?))
                }
                RawKind::Cylinder => Some(ElementKind::Cylinder(self.cylinder(&path, e, &fluid)?)),
                RawKind::InlinePulsationDamper => Some(ElementKind::InlineDamper(
                    self.inline_damper(&path, e, &fluid, mean_pressure, line_model)?,
                )),
                RawKind::ValveBlock => {
                    return Err(self.err(&path, "a valve block inside a valve block"));
                }
                RawKind::AnechoicEnd => None,
            });
        }
        // the tubes and hoses at each node, for the anechoic ends
        let mut lines_at: HashMap<&str, Vec<usize>> = HashMap::new();
        if kinds.iter().any(Option::is_none) {
            for (i, r) in raws.iter().enumerate() {
                if matches!(r.kind, RawKind::Tube | RawKind::Hose) {
                    for end in [&r.from, &r.to].into_iter().flatten() {
                        lines_at.entry(end.as_str()).or_default().push(i);
                    }
                }
            }
        }
        for i in 0..raws.len() {
            if kinds[i].is_none() {
                let line = self.anechoic_line(
                    &element_paths[i],
                    &raws[i],
                    (&raws, &kinds),
                    (&names, &lines_at),
                )?;
                kinds[i] = Some(ElementKind::Anechoic(Anechoic { line }));
            }
        }
        let elements: Vec<Element> = raws
            .iter()
            .zip(kinds)
            .zip(&connections)
            .map(|((e, kind), &connection)| Element {
                name: e.name.clone(),
                kind: kind.expect("every kind is built above"),
                connection,
            })
            .collect();
        self.check_node_conditions(&element_paths, &raws, &connections, &nodes)?;

        let mut circuit = Circuit {
            title: raw.title.clone(),
            fluid,
            nodes,
            elements,
            pumps: Vec::new(),
            taps: Vec::new(),
            harmonics,
        };
        let raw_pumps: Vec<(KeyPath, &RawPump)> = match (&raw.pump, &raw.pumps) {
            (Some(p), None) => vec![(root.key("pump"), p)],
            (None, Some(list)) if !list.is_empty() => list
                .iter()
                .enumerate()
                .map(|(i, p)| (root.key("pumps").index(i), p))
                .collect(),
            (None, Some(_)) => {
                return Err(self.err(&root.key("pumps"), "the `pumps` list is empty"));
            }
            (Some(_), Some(_)) => {
                return Err(self.err(
                    &root.key("pumps"),
                    "give either one `pump` section or a `pumps` list, not both",
                ));
            }
            (None, None) => {
                return Err(self.err(
                    &root,
                    "the circuit has no `pump`: add a pump section (node, speed, pumping_elements, flow_ripple, source_impedance), or a `pumps` list",
                ));
            }
        };
        if let Some((path, _)) = raw_pumps.get(limits::MAX_PUMPS) {
            return Err(over(
                path,
                format!("the circuit has {} pumps", raw_pumps.len()),
                limits::MAX_PUMPS,
                "pumps (and so shafts)",
            ));
        }
        for (i, (path, raw_pump)) in raw_pumps.iter().enumerate() {
            let mut pump = self.pump(path, raw_pump, &circuit, &node_ids, mean_pressure)?;
            if raw.pumps.is_some() && raw_pump.name.is_none() {
                pump.name = format!("pump {}", i + 1);
            }
            circuit.pumps.push(pump);
        }
        let paths: Vec<KeyPath> = raw_pumps.into_iter().map(|(p, _)| p).collect();
        self.check_pumps(&paths, &circuit.pumps)?;
        if raw.taps.len() > limits::MAX_TAPS {
            return Err(over(
                &root.key("taps").index(limits::MAX_TAPS),
                format!("the circuit has {} taps", raw.taps.len()),
                limits::MAX_TAPS,
                "taps",
            ));
        }
        let mut tap_names = HashSet::new();
        for (i, t) in raw.taps.iter().enumerate() {
            let path = root.key("taps").index(i);
            if !tap_names.insert(t.name.as_str()) {
                return Err(self.err(
                    &path.key("name"),
                    format!("duplicate tap name `{}`: names must be unique", t.name),
                ));
            }
            let tap = self.tap(&path, t, &circuit, (&node_ids, &names))?;
            circuit.taps.push(tap);
        }
        crate::meanflow::resolve_line_mean_flows(&mut circuit);
        crate::network::Plan::compile(&circuit).map_err(|e| {
            let path = match &e {
                crate::network::NetworkError::Disconnected { element } => circuit
                    .element_id(element)
                    .map_or(root.clone(), |i| element_paths[i].clone()),
                crate::network::NetworkError::PumpIntoTank { pump, .. } => circuit
                    .pumps
                    .iter()
                    .position(|p| &p.name == pump)
                    .map_or(root.clone(), |i| paths[i].key("node")),
                _ => root.clone(),
            };
            self.err(&path, e.to_string())
        })?;
        self.envelope_sections(raw, &circuit)?;
        Ok(circuit)
    }

    /// The fluid at its operating point: explicit values, or values from a
    /// grade (or viscosity points) at a temperature and mean pressure, with
    /// free air applied on top (see [`crate::oil`]).
    fn fluid(&self, path: &KeyPath, raw: &RawFluid) -> Res<Fluid> {
        let grade = match &raw.grade {
            Some(text) => {
                Some(Grade::parse(text).map_err(|e| self.err(&path.key("grade"), e.to_string()))?)
            }
            None => None,
        };
        let temperature = match raw.temperature {
            Some(t) => {
                let (lo, hi) = (oil::celsius(-40.0), oil::celsius(150.0));
                if !(lo..=hi).contains(&t.si) {
                    return Err(self.err(
                        &path.key("temperature"),
                        format!(
                            "{:.2} K ({:.2} °C) is outside the range of the oil models, -40 .. 150 °C: check the unit (a bare number is in K; write e.g. `50 degC`)",
                            t.si,
                            t.si - oil::ZERO_CELSIUS_K
                        ),
                    ));
                }
                Some(t.si)
            }
            None => None,
        };
        let gauge = match raw.pressure {
            Some(p) => {
                if !(-0.9e5..=1e8).contains(&p.si) {
                    return Err(self.err(
                        &path.key("pressure"),
                        format!(
                            "mean pressure {:.3} bar (gauge) is outside -0.9 .. 1000 bar: check the unit (a bare number is Pa)",
                            p.si / 1e5
                        ),
                    ));
                }
                Some(p.si)
            }
            None => None,
        };
        let air = match raw.air_content {
            Some(a) => {
                if !(0.0..=0.2).contains(&a.si) {
                    return Err(self.err(
                        &path.key("air_content"),
                        format!(
                            "free air content {} % is outside 0 .. 20 % (a bare number is a fraction: 0.01 = 1 %)",
                            a.si * 100.0
                        ),
                    ));
                }
                if gauge.is_none() && a.si > 0.0 {
                    return Err(self.err(
                        &path.key("air_content"),
                        "free air compresses with pressure: give the mean `pressure` too",
                    ));
                }
                a.si
            }
            None => 0.0,
        };
        let points = match &raw.viscosity_points {
            Some(points) => Some(self.viscosity_points(&path.key("viscosity_points"), points)?),
            None => None,
        };
        let mut data: Option<OilData> = grade.map(Grade::typical);
        if let (Some(d), Some(w)) = (data.as_mut(), points) {
            d.viscosity = w;
        }
        // Derived values need the temperature.
        let needs_temperature = (data.is_some()
            && (raw.density.is_none() || raw.bulk_modulus.is_none() || raw.viscosity.is_none()))
            || (points.is_some() && raw.viscosity.is_none());
        let temperature = match (temperature, needs_temperature) {
            (Some(t), _) => Some(t),
            (None, false) => None,
            (None, true) => {
                return Err(self.err(
                    path,
                    "a `grade` or `viscosity_points` needs the oil `temperature` (e.g. `temperature: 50 degC`)",
                ));
            }
        };
        let p = gauge.unwrap_or(0.0);
        let missing = |key: &str| {
            self.err(
                path,
                format!(
                    "the fluid needs `{key}`: give it, or give a `grade` (ISO VG 22/32/46/68/100) with `temperature`"
                ),
            )
        };
        let density = match (raw.density, &data, temperature) {
            (Some(d), _, _) => self.in_range(&path.key("density"), d.si, 100.0, 3000.0, "kg/m³")?,
            (None, Some(d), Some(t)) => d.density_kg_m3(t, p),
            _ => return Err(missing("density")),
        };
        let liquid_modulus = match (raw.bulk_modulus, &data, temperature) {
            (Some(b), _, _) => self.in_range(&path.key("bulk_modulus"), b.si, 1e6, 1e11, "Pa")?,
            (None, Some(d), Some(t)) => d.bulk_modulus_pa(t, p),
            _ => return Err(missing("bulk_modulus")),
        };
        let walther = points.or(data.map(|d| d.viscosity));
        let viscosity = match (raw.viscosity, walther, temperature) {
            (Some(v), _, _) => self.in_range(&path.key("viscosity"), v.si, 1e-8, 1e-1, "m²/s")?,
            (None, Some(w), Some(t)) => {
                let v = w.viscosity_m2_s(t);
                if !(1e-7..=1e-1).contains(&v) {
                    return Err(self.err(
                        &path.key("temperature"),
                        format!(
                            "the oil's viscosity at this temperature, {:.3} cSt, is outside the range of the models, 0.1 .. 100000 cSt",
                            v * 1e6
                        ),
                    ));
                }
                v
            }
            _ => return Err(missing("viscosity")),
        };
        let absolute = p + oil::ATMOSPHERIC_PA;
        let air_now = oil::air_fraction(air, absolute);
        Ok(Fluid {
            density_kg_m3: density * (1.0 - air_now),
            bulk_modulus_pa: oil::bulk_modulus_with_air(
                liquid_modulus,
                air,
                absolute,
                oil::AIR_ADIABATIC_INDEX,
            ),
            kinematic_viscosity_m2_s: viscosity,
        })
    }

    /// Two (temperature, viscosity) points → the Walther line.
    fn viscosity_points(&self, path: &KeyPath, points: &[RawViscosityPoint]) -> Res<Walther> {
        let [a, b] = points else {
            return Err(self.err(
                path,
                format!(
                    "give exactly two viscosity points (e.g. at 40 and 100 °C), found {}",
                    points.len()
                ),
            ));
        };
        for (i, pt) in points.iter().enumerate() {
            self.in_range(
                &path.index(i).key("viscosity"),
                pt.viscosity.si,
                1e-7,
                1e-1,
                "m²/s",
            )?;
            if pt.temperature.si <= 0.0 {
                return Err(self.err(
                    &path.index(i).key("temperature"),
                    "must be above absolute zero: check the unit (a bare number is in K)",
                ));
            }
        }
        Walther::through(
            (a.temperature.si, a.viscosity.si),
            (b.temperature.si, b.viscosity.si),
        )
        .map_err(|e| self.err(path, e.to_string()))
    }

    fn node_name<'r>(
        &self,
        path: &KeyPath,
        key: &str,
        value: Option<&'r str>,
        kind: RawKind,
    ) -> Res<&'r str> {
        match value {
            Some(v) if !v.trim().is_empty() => Ok(v),
            Some(_) => Err(self.err(&path.key(key), "a node name must not be empty")),
            None => Err(self.err(
                path,
                format!(
                    "a `{}` needs the key `{key}` (the node it connects)",
                    kind.name()
                ),
            )),
        }
    }

    fn required<D: q::Dim>(
        &self,
        path: &KeyPath,
        key: &str,
        value: Option<Q<D>>,
        kind: RawKind,
    ) -> Res<f64> {
        value.map(|v| v.si).ok_or_else(|| {
            self.err(
                path,
                format!(
                    "a `{}` needs the key `{key}` ({})",
                    kind.name(),
                    D::DIM.name()
                ),
            )
        })
    }

    /// A required key's SI value, within [lo, hi].
    #[allow(clippy::too_many_arguments)]
    fn required_in<D: q::Dim>(
        &self,
        path: &KeyPath,
        key: &str,
        value: Option<Q<D>>,
        kind: RawKind,
        lo: f64,
        hi: f64,
        unit: &str,
    ) -> Res<f64> {
        let v = self.required(path, key, value, kind)?;
        self.in_range(&path.key(key), v, lo, hi, unit)
    }

    /// Length and bore of a tube or hose.
    fn line_geometry(&self, path: &KeyPath, e: &RawElement) -> Res<(f64, f64)> {
        let length = self.in_range(
            &path.key("length"),
            self.required(path, "length", e.length, e.kind)?,
            1e-4,
            1e4,
            "m",
        )?;
        let bore = self.in_range(
            &path.key("bore"),
            self.required(path, "bore", e.bore, e.kind)?,
            1e-4,
            1.0,
            "m",
        )?;
        Ok((length, bore))
    }

    /// A line's own `mean_flow`, if given (a→b positive).
    fn given_mean_flow(&self, path: &KeyPath, e: &RawElement) -> Res<MeanFlow> {
        match e.mean_flow {
            None => Ok(MeanFlow::Unknown),
            Some(q) if q.si.abs() <= 10.0 => Ok(MeanFlow::Given(q.si)),
            Some(q) => Err(self.err(
                &path.key("mean_flow"),
                format!(
                    "mean flow {} m³/s is outside -10 .. 10 m³/s: check the unit (a bare number is m³/s)",
                    q.si
                ),
            )),
        }
    }

    fn tube(&self, path: &KeyPath, e: &RawElement, fluid: &Fluid, default: LineModel) -> Res<Tube> {
        let (length, bore) = self.line_geometry(path, e)?;
        let wall = self.wall(
            path,
            &WallKeys {
                rigid: e.rigid,
                wall: e.wall.map(|w| w.si),
                material: e.material.as_deref(),
                youngs_modulus: e.youngs_modulus.map(|y| y.si),
                poisson_ratio: e.poisson_ratio.map(|p| p.si),
                wall_model: e.wall_model,
            },
            bore,
            e.kind.name(),
        )?;
        let properties = LineProperties {
            radius_m: bore / 2.0,
            density_kg_m3: fluid.density_kg_m3,
            kinematic_viscosity_m2_s: fluid.kinematic_viscosity_m2_s,
            effective_bulk_modulus_pa: wall.effective_bulk_modulus(fluid.bulk_modulus_pa, bore),
            model: e.model.map_or(default, LineModel::from),
            viscoelastic_wall: None,
            mean_flow: self.given_mean_flow(path, e)?,
        };
        Ok(Tube {
            line: Line {
                properties,
                length_m: length,
            },
            wall,
        })
    }

    fn hose(
        &self,
        path: &KeyPath,
        e: &RawElement,
        fluid: &Fluid,
        default: LineModel,
        mean_pressure: Option<f64>,
    ) -> Res<Hose> {
        let (length, bore) = self.line_geometry(path, e)?;
        let given = [
            e.construction.is_some(),
            e.wave_speed.is_some(),
            e.kelvin_voigt.is_some(),
            e.wave_speeds.is_some(),
        ];
        let ways = "`construction` (one of: textile_braid, one_wire_braid, two_wire_braid, spiral), or `wave_speed` with `loss_factor` (at `reference_frequency`, default 200 Hz), or `wave_speeds` at several mean pressures, or `kelvin_voigt`";
        match given.iter().filter(|&&g| g).count() {
            0 => {
                return Err(self.err(path, format!("a `hose` needs its wall: give {ways}")));
            }
            1 => {}
            _ => {
                return Err(self.err(
                    path,
                    format!("give only one description of the hose wall: {ways}"),
                ));
            }
        }
        if e.wave_speed.is_none() {
            for (key, present) in [
                ("loss_factor", e.loss_factor.is_some()),
                (
                    "reference_frequency",
                    e.reference_frequency.is_some() && e.wave_speeds.is_none(),
                ),
            ] {
                if present {
                    return Err(self.err(&path.key(key), format!("`{key}` goes with `wave_speed`")));
                }
            }
        }
        let mut construction = None;
        let mut pressure = None;
        let wall = if let Some(points) = &e.wave_speeds {
            let f_ref = match e.reference_frequency {
                Some(f) => {
                    Some(self.in_range(&path.key("reference_frequency"), f.si, 1.0, 1e4, "Hz")?)
                }
                None => None,
            };
            let (wall, p) = self.pressure_wall(path, points, fluid, mean_pressure, f_ref)?;
            pressure = Some(p);
            wall
        } else if let Some(name) = &e.construction {
            let c = HoseConstruction::from_name(name).ok_or_else(|| {
                self.err(
                    &path.key("construction"),
                    format!(
                        "unknown hose construction `{name}`; use one of: {} (or give `wave_speed` and `loss_factor`)",
                        HoseConstruction::ALL.map(|c| c.name()).join(", ")
                    ),
                )
            })?;
            construction = Some(c);
            c.wall()
        } else if let Some(c) = e.wave_speed {
            let c = self.in_range(&path.key("wave_speed"), c.si, 50.0, 2500.0, "m/s")?;
            let eta = match e.loss_factor {
                Some(eta) if (0.0..=1.0).contains(&eta.si) => eta.si,
                Some(eta) => {
                    return Err(self.err(
                        &path.key("loss_factor"),
                        format!("a loss factor must be between 0 and 1, found {}", eta.si),
                    ));
                }
                None => {
                    return Err(self.err(
                        path,
                        "a hose `wave_speed` needs its `loss_factor` (0 for no wall damping; typically 0.05 .. 0.15)",
                    ));
                }
            };
            let f_ref = match e.reference_frequency {
                Some(f) => self.in_range(&path.key("reference_frequency"), f.si, 1.0, 1e4, "Hz")?,
                None => TYPICAL_REFERENCE_FREQUENCY_HZ,
            };
            ViscoelasticWall::from_wave_speed(
                c,
                eta,
                f_ref,
                fluid.density_kg_m3,
                fluid.bulk_modulus_pa,
            )
            .map_err(|err| self.err(&path.key("wave_speed"), err.to_string()))?
        } else {
            let kv = e
                .kelvin_voigt
                .as_ref()
                .expect("one wall description is present");
            let kp = path.key("kelvin_voigt");
            let ju = 1.0
                / self.in_range(
                    &kp.key("instantaneous_modulus"),
                    kv.instantaneous_modulus.si,
                    1e6,
                    1e12,
                    "Pa",
                )?;
            if kv.terms.len() > MAX_RETARDATION_TERMS {
                return Err(self.err(
                    &kp.key("terms"),
                    format!(
                        "at most {MAX_RETARDATION_TERMS} retardation terms, found {}",
                        kv.terms.len()
                    ),
                ));
            }
            let mut terms = Vec::with_capacity(kv.terms.len());
            for (i, t) in kv.terms.iter().enumerate() {
                let tp = kp.key("terms").index(i);
                terms.push(RetardationTerm {
                    compliance_per_pa: 1.0
                        / self.in_range(&tp.key("modulus"), t.modulus.si, 1e6, 1e13, "Pa")?,
                    time_s: self.in_range(&tp.key("time"), t.time.si, 1e-7, 10.0, "s")?,
                });
            }
            ViscoelasticWall::kelvin_voigt(ju, &terms)
                .map_err(|err| self.err(&kp, err.to_string()))?
        };
        let properties = LineProperties {
            radius_m: bore / 2.0,
            density_kg_m3: fluid.density_kg_m3,
            kinematic_viscosity_m2_s: fluid.kinematic_viscosity_m2_s,
            effective_bulk_modulus_pa: fluid.bulk_modulus_pa,
            model: e.model.map_or(default, LineModel::from),
            viscoelastic_wall: Some(wall),
            mean_flow: self.given_mean_flow(path, e)?,
        };
        Ok(Hose {
            line: Line {
                properties,
                length_m: length,
            },
            construction,
            pressure,
        })
    }

    /// The neck of a resonator or damper: a rigid drilled passage, in the
    /// liquid, with the element's (or the circuit's) friction model.
    fn neck(
        &self,
        path: &KeyPath,
        e: &RawElement,
        fluid: &Fluid,
        default: LineModel,
    ) -> Res<(f64, crate::line::LineProperties)> {
        let length =
            self.required_in(path, "neck_length", e.neck_length, e.kind, 1e-4, 10.0, "m")?;
        let bore = self.required_in(path, "neck_bore", e.neck_bore, e.kind, 1e-4, 0.5, "m")?;
        Ok((length, components::drilled_passage(bore, e, fluid, default)))
    }

    fn helmholtz(
        &self,
        path: &KeyPath,
        e: &RawElement,
        fluid: &Fluid,
        default: LineModel,
    ) -> Res<HelmholtzResonator> {
        let volume = self.required_in(path, "volume", e.volume, e.kind, 1e-9, 1.0, "m³")?;
        let (neck_length_m, neck) = self.neck(path, e, fluid, default)?;
        Ok(HelmholtzResonator {
            volume_m3: volume,
            bulk_modulus_pa: fluid.bulk_modulus_pa,
            neck_length_m,
            neck,
            end_correction: e.end_correction.unwrap_or(true),
        })
    }

    /// A pulsation damper. Its mean operating pressure is its
    /// `operating_pressure`, or else the fluid's mean `pressure` (gauge),
    /// which it follows; when both are given they must agree. Below the
    /// precharge the damper is bottomed ([`PulsationDamper::is_bottomed`];
    /// `diagnostics` warns).
    fn damper(
        &self,
        path: &KeyPath,
        e: &RawElement,
        fluid: &Fluid,
        fluid_gauge_pa: Option<f64>,
        default: LineModel,
    ) -> Res<PulsationDamper> {
        let gas_volume =
            self.required_in(path, "gas_volume", e.gas_volume, e.kind, 1e-7, 1.0, "m³")?;
        let gas = |key: &str, value: GasPressure| -> Res<f64> {
            self.in_range(&path.key(key), value.absolute_pa, 1e4, 1e9, "Pa (absolute)")
        };
        let precharge = gas(
            "precharge",
            e.precharge.ok_or_else(|| {
                self.err(
                    path,
                    "a `pulsation_damper` needs the key `precharge` (a gas pressure such as `60 bar abs` or `59 bar gauge`)",
                )
            })?,
        )?;
        let from_fluid = fluid_gauge_pa.map(|p| p + crate::elements::STANDARD_ATMOSPHERE_PA);
        let operating = match (e.operating_pressure, from_fluid) {
            (Some(p), None) => gas("operating_pressure", p)?,
            (Some(p), Some(f)) => {
                let p = gas("operating_pressure", p)?;
                if (p - f).abs() > 1.0 + 1e-6 * f {
                    return Err(self.err(
                        &path.key("operating_pressure"),
                        format!(
                            "{:.3} bar abs disagrees with the fluid's mean pressure `fluid.pressure`, {:.3} bar abs: remove `operating_pressure` (the damper then follows `fluid.pressure` and the envelope's pressures) or make the two agree",
                            p / 1e5,
                            f / 1e5
                        ),
                    ));
                }
                p
            }
            // fluid.pressure is at least -0.9 bar gauge, within the gas range
            (None, Some(f)) => f,
            (None, None) => {
                return Err(self.err(
                    path,
                    "a `pulsation_damper` needs its mean operating pressure: give the fluid's mean `pressure` (which it follows), or `operating_pressure` (a gas pressure such as `200 bar gauge`)",
                ));
            }
        };
        let kappa = match e.polytropic_index {
            None => 1.4,
            Some(k) if (1.0..=1.67).contains(&k) => k,
            Some(k) => {
                return Err(self.err(
                    &path.key("polytropic_index"),
                    format!(
                        "the polytropic index must be between 1.0 (isothermal) and 1.67 (monatomic gas, adiabatic), found {k}"
                    ),
                ));
            }
        };
        let (neck_length_m, neck) = self.neck(path, e, fluid, default)?;
        Ok(PulsationDamper {
            gas_volume_m3: gas_volume,
            precharge_pa: precharge,
            operating_pa: operating,
            polytropic_index: kappa,
            bulk_modulus_pa: fluid.bulk_modulus_pa,
            neck_length_m,
            neck,
        })
    }

    /// A resistance given directly, or linearised from a mean operating point.
    fn resistance(&self, path: &KeyPath, e: &RawElement) -> Res<f64> {
        match (e.resistance, e.mean_flow, e.pressure_drop) {
            (Some(r), None, None) => self.in_range(&path.key("resistance"), r.si, 1e3, 1e18, "Pa·s/m³"),
            (None, Some(qm), Some(dp)) => {
                let qm = self.in_range(&path.key("mean_flow"), qm.si, 1e-9, 10.0, "m³/s")?;
                let dp = self.in_range(&path.key("pressure_drop"), dp.si, 1.0, 1e9, "Pa")?;
                Ok(crate::elements::orifice_resistance(dp, qm))
            }
            _ => Err(self.err(
                path,
                format!(
                    "a `{}` needs either `resistance`, or both `mean_flow` and `pressure_drop` (linearised as R = 2Δp/Q)",
                    e.kind.name()
                ),
            )),
        }
    }

    fn inertance(&self, path: &KeyPath, e: &RawElement, fluid: &Fluid) -> Res<Inertance> {
        let extra_r = match e.resistance {
            Some(r) => self.in_range(&path.key("resistance"), r.si, 0.0, 1e18, "Pa·s/m³")?,
            None => 0.0,
        };
        match (e.inertance, e.length, e.bore) {
            (Some(i), None, None) => Ok(Inertance {
                inertance_kg_m4: self.in_range(&path.key("inertance"), i.si, 1.0, 1e15, "kg/m⁴")?,
                resistance_pa_s_m3: extra_r,
            }),
            (None, Some(l), Some(d)) => {
                let l = self.in_range(&path.key("length"), l.si, 1e-5, 10.0, "m")?;
                let d = self.in_range(&path.key("bore"), d.si, 1e-4, 1.0, "m")?;
                let r = d / 2.0;
                let area = std::f64::consts::PI * r * r;
                Ok(Inertance {
                    inertance_kg_m4: fluid.density_kg_m3 * l / area,
                    resistance_pa_s_m3: extra_r
                        + 8.0 * fluid.dynamic_viscosity_pa_s() * l / (std::f64::consts::PI * r.powi(4)),
                })
            }
            _ => Err(self.err(
                path,
                "an `inertance` needs either `inertance`, or both `length` and `bore` of the passage",
            )),
        }
    }

    /// The line an anechoic end matches: the named tube, or the only tube at its node.
    fn anechoic_line(
        &self,
        path: &KeyPath,
        e: &RawElement,
        (raws, kinds): (&[RawElement], &[Option<ElementKind>]),
        (names, lines_at): (&HashMap<&str, usize>, &HashMap<&str, Vec<usize>>),
    ) -> Res<LineProperties> {
        let candidates: Vec<usize> = match &e.line {
            Some(name) => {
                let i = *names.get(name.as_str()).ok_or_else(|| {
                    self.err(&path.key("line"), format!("no element is called `{name}`"))
                })?;
                vec![i]
            }
            None => {
                e.at.as_deref()
                    .and_then(|at| lines_at.get(at))
                    .cloned()
                    .unwrap_or_default()
            }
        };
        match candidates.as_slice() {
            [i] => match kinds[*i].as_ref().and_then(|k| k.line()) {
                Some(line) => Ok(line.properties),
                _ => Err(self.err(
                    &path.key("line"),
                    format!("`{}` is not a tube or hose", raws[*i].name),
                )),
            },
            [] => Err(self.err(
                path,
                "an `anechoic_end` must sit at the end of a tube or hose: none reaches its node",
            )),
            _ => Err(self.err(
                path,
                "several lines meet at this node: say which one the `anechoic_end` matches with `line: <tube or hose name>`",
            )),
        }
    }

    fn check_node_conditions(
        &self,
        paths: &[KeyPath],
        raws: &[RawElement],
        connections: &[Connection],
        nodes: &[Node],
    ) -> Res<()> {
        // one pass over the elements: what sits at each node, which nodes a
        // two-port reaches
        let mut reached = vec![false; nodes.len()];
        let mut first_shunt: Vec<Option<usize>> = vec![None; nodes.len()];
        let mut tank: Vec<Option<usize>> = vec![None; nodes.len()];
        let mut closed: Vec<Option<usize>> = vec![None; nodes.len()];
        for (i, c) in connections.iter().enumerate() {
            match *c {
                Connection::Series { a, b } => {
                    reached[a] = true;
                    reached[b] = true;
                }
                Connection::Shunt { at } => {
                    first_shunt[at].get_or_insert(i);
                    match raws[i].kind {
                        RawKind::Tank => {
                            tank[at].get_or_insert(i);
                        }
                        RawKind::ClosedEnd => {
                            closed[at].get_or_insert(i);
                        }
                        _ => {}
                    }
                }
            }
        }
        for (id, node) in nodes.iter().enumerate() {
            if let (Some(_), Some(i)) = (tank[id], closed[id]) {
                return Err(self.err(
                    &paths[i],
                    format!(
                        "node `{}` cannot be both a tank and a closed end",
                        node.name
                    ),
                ));
            }
            if !reached[id] {
                let i = first_shunt[id].expect("a node is named by an element");
                return Err(self.err(
                    &paths[i].key("at"),
                    format!(
                        "node `{}` is reached by no tube, hose, orifice or inertance: a `{}` must sit at a node of the line network",
                        node.name,
                        raws[i].kind.name()
                    ),
                ));
            }
        }
        Ok(())
    }

    fn pump(
        &self,
        path: &KeyPath,
        raw: &RawPump,
        circuit: &Circuit,
        node_ids: &HashMap<String, usize>,
        mean_pressure: Option<f64>,
    ) -> Res<Pump> {
        let node = node_ids.get(raw.node.as_str()).copied().ok_or_else(|| {
            self.err(
                &path.key("node"),
                format!(
                    "no element reaches node `{}`: the pump must feed a node of the circuit",
                    raw.node
                ),
            )
        })?;
        let geometry = match (&raw.flow_ripple, &raw.gear, &raw.piston) {
            (_, Some(g), None) if raw.flow_ripple.is_none() => {
                Some(self.gear(&path.key("gear"), g)?)
            }
            (None, None, Some(p)) => Some(self.piston(&path.key("piston"), p, &circuit.fluid)?),
            (_, None, None) => None,
            _ => {
                return Err(self.err(
                    path,
                    "give one source flow ripple: `flow_ripple` (a table), `gear`, `piston` or `source_file`",
                ));
            }
        };
        let file_source = match &raw.source_file {
            None => None,
            Some(name) => {
                if raw.flow_ripple.is_some() || raw.source_impedance.is_some() || geometry.is_some()
                {
                    return Err(self.err(
                        &path.key("source_file"),
                        "give either `source_file`, or `flow_ripple` (or `gear`, `piston`) with `source_impedance`, not both",
                    ));
                }
                let base = Path::new(self.file).parent().unwrap_or(Path::new(""));
                let loaded = super::source_file::load_source_file(&base.join(name));
                Some(loaded.map_err(|e| match e {
                    // errors inside the source file name that file and line
                    InputError::Invalid(_) => e,
                    other => self.err(&path.key("source_file"), other.to_string()),
                })?)
            }
        };
        // A source file as a map at the circuit's mean pressure.
        let file_map = match &file_source {
            None => None,
            Some(src) => {
                let map = src
                    .map()
                    .map_err(|e| self.err(&path.key("source_file"), e.message))?;
                if map.needs_pressure() && mean_pressure.is_none() {
                    return Err(self.err(
                        &path.key("source_file"),
                        format!(
                            "the source map holds several mean pressures ({}): give the fluid's mean `pressure` (the operating point at which the map is read)",
                            map.describe_range()
                        ),
                    ));
                }
                Some(map.at_pressure(mean_pressure))
            }
        };
        let speed = match (raw.speed, &file_map) {
            (Some(v), _) => self.in_range(&path.key("speed"), v.si, 0.1, 1000.0, "rev/s")?,
            (None, Some(map)) if map.single_speed() => map.speed_range_rev_s().0,
            (None, Some(map)) => {
                return Err(self.err(
                    path,
                    format!(
                        "the source map holds several speeds ({}): give the pump's `speed` (e.g. `speed: 1500 rpm`)",
                        map.describe_range()
                    ),
                ));
            }
            (None, None) => {
                return Err(self.err(path, "the pump needs `speed` (e.g. `speed: 1500 rpm`)"));
            }
        };
        let speed_range = match raw.speed_range {
            None => None,
            Some([lo, hi]) => {
                let rp = path.key("speed_range");
                let lo = self.in_range(&rp, lo.si, 0.1, 1000.0, "rev/s")?;
                let hi = self.in_range(&rp, hi.si, 0.1, 1000.0, "rev/s")?;
                if lo >= hi {
                    return Err(self.err(
                        &rp,
                        format!(
                            "the speed range must go from the lower to the higher speed, found {:.1} .. {:.1} rpm",
                            lo * 60.0,
                            hi * 60.0
                        ),
                    ));
                }
                Some((lo, hi))
            }
        };
        let implied = match (&file_source, &geometry) {
            (Some(src), _) => Some((src.pumping_elements, "the source file")),
            (None, Some(g)) => Some((g.pumping_elements(), "the pump geometry")),
            (None, None) => None,
        };
        let pumping_elements = match (raw.pumping_elements, implied) {
            (Some(z), Some((n, from))) if z != n => {
                return Err(self.err(
                    &path.key("pumping_elements"),
                    format!("{z} differs from the {n} pumping elements of {from}"),
                ));
            }
            (Some(z), _) => z,
            (None, Some((n, _))) => n,
            (None, None) => {
                return Err(self.err(
                    path,
                    "the pump needs `pumping_elements` (the number of teeth or pistons)",
                ));
            }
        };
        if !(1..=99).contains(&pumping_elements) {
            return Err(self.err(
                &path.key("pumping_elements"),
                format!(
                    "the number of teeth or pistons must be between 1 and 99, found {pumping_elements}"
                ),
            ));
        }
        let displacement = match (raw.displacement, &geometry) {
            (Some(_), Some(g)) => {
                return Err(self.err(
                    &path.key("displacement"),
                    format!(
                        "the displacement follows from the pump geometry ({:.3} cm³/rev): remove `displacement`",
                        g.displacement_m3() * 1e6
                    ),
                ));
            }
            (Some(d), None) => {
                Some(self.in_range(&path.key("displacement"), d.si, 1e-8, 1e-2, "m³")?)
            }
            (None, Some(g)) => Some(g.displacement_m3()),
            (None, None) => None,
        };
        let name = raw.name.clone().unwrap_or_else(|| "pump".to_string());
        let shaft = match &raw.shaft {
            Some(s) if s.trim().is_empty() => {
                return Err(self.err(&path.key("shaft"), "a shaft name must not be empty"));
            }
            s => s.clone(),
        };
        let shaft_angle = raw.shaft_angle.map_or(0.0, |a| a.si);
        let (flow_ripple, source_impedance) = match file_map {
            Some(map) => (
                FlowRipple::Map(Box::new(map.clone())),
                SourceImpedance::Map(Box::new(map)),
            ),
            None => {
                let Some(zs) = &raw.source_impedance else {
                    return Err(self.err(
                        path,
                        "the pump needs `source_impedance` with its `flow_ripple` (or `gear`, `piston`), or a `source_file`",
                    ));
                };
                let source_impedance =
                    self.source_impedance(&path.key("source_impedance"), zs, &circuit.fluid)?;
                let flow_ripple = match (geometry, &raw.flow_ripple) {
                    (Some(g), _) => FlowRipple::Kinematic(KinematicRipple::new(g, 0.0)),
                    (None, Some(table)) => self.flow_table(path, table, speed)?,
                    (None, None) => {
                        return Err(self.err(
                            path,
                            "the pump needs a source flow ripple: `flow_ripple` (a table), `gear`, `piston` or `source_file`",
                        ));
                    }
                };
                (flow_ripple, source_impedance)
            }
        };
        Ok(Pump {
            name,
            node,
            speed_rev_s: speed,
            speed_range_rev_s: speed_range,
            pumping_elements,
            displacement_m3: displacement,
            shaft,
            flow_ripple: flow_ripple.rotated(pumping_elements, shaft_angle),
            source_impedance,
        })
    }

    /// The source flow ripple table `flow_ripple` at the pump's `speed`.
    fn flow_table(
        &self,
        path: &KeyPath,
        flow_ripple: &[RawHarmonic],
        speed: f64,
    ) -> Res<FlowRipple> {
        if flow_ripple.is_empty() {
            return Err(self.err(
                &path.key("flow_ripple"),
                "the flow ripple table is empty: list at least one harmonic",
            ));
        }
        let mut harmonics: Vec<FlowHarmonic> = Vec::new();
        for (i, h) in flow_ripple.iter().enumerate() {
            let hp = path.key("flow_ripple").index(i);
            if h.harmonic == 0 || h.harmonic > 200 {
                return Err(self.err(
                    &hp.key("harmonic"),
                    format!(
                        "harmonic order must be between 1 and 200, found {}",
                        h.harmonic
                    ),
                ));
            }
            if harmonics.iter().any(|x| x.order == h.harmonic) {
                return Err(self.err(
                    &hp.key("harmonic"),
                    format!("harmonic {} is listed twice", h.harmonic),
                ));
            }
            if !(0.0..=10.0).contains(&h.amplitude.si) {
                return Err(self.err(
                    &hp.key("amplitude"),
                    format!(
                        "flow ripple amplitude must be between 0 and 10 m³/s, found {} m³/s: check the unit",
                        h.amplitude.si
                    ),
                ));
            }
            harmonics.push(FlowHarmonic {
                order: h.harmonic,
                amplitude_m3_s: h.amplitude.si,
                phase_rad: h.phase.map_or(0.0, |p| p.si),
            });
        }
        Ok(FlowRipple::Table {
            reference_speed_rev_s: speed,
            harmonics,
        })
    }

    fn tap(
        &self,
        path: &KeyPath,
        raw: &RawTap,
        circuit: &Circuit,
        (node_ids, element_ids): (&HashMap<String, usize>, &HashMap<&str, usize>),
    ) -> Res<Tap> {
        let location = match (&raw.node, &raw.element, raw.distance) {
            (Some(node), None, None) => {
                TapLocation::Node(node_ids.get(node.as_str()).copied().ok_or_else(|| {
                    self.err(
                        &path.key("node"),
                        format!("no element reaches node `{node}`"),
                    )
                })?)
            }
            (None, Some(name), Some(distance)) => {
                let element = element_ids.get(name.as_str()).copied().ok_or_else(|| {
                    self.err(
                        &path.key("element"),
                        format!("no element is called `{name}`"),
                    )
                })?;
                let kind = &circuit.elements[element].kind;
                let Some(line) = kind.line() else {
                    return Err(self.err(
                        &path.key("element"),
                        format!(
                            "`{name}` is not a tube or hose: a tap along an element needs a tube or a hose"
                        ),
                    ));
                };
                let length = line.length_m;
                if !(0.0..=length).contains(&distance.si) {
                    return Err(self.err(
                        &path.key("distance"),
                        format!(
                            "distance {} m is outside {} `{name}`, which is {length} m long",
                            distance.si,
                            kind.name()
                        ),
                    ));
                }
                TapLocation::AlongTube {
                    element,
                    distance_m: distance.si,
                }
            }
            _ => {
                return Err(self.err(
                    path,
                    "a tap needs either `node`, or `element` (a tube) with `distance` from its `from` end",
                ));
            }
        };
        Ok(Tap {
            name: raw.name.clone(),
            location,
        })
    }
}

//! What a circuit file gives, key by key: the keys present at the top, in
//! the fluid, in each pump and in each element (valve blocks expanded into
//! their parts), with their values in SI and the line each entry starts on.
//!
//! The validated [`crate::Circuit`] holds values, not where they came from;
//! reports that show each input's origin (given in the file, a default,
//! derived from other inputs) compare the model with this list
//! ([`crate::results::inputs`]).

use super::components::RawCylinderPort;
use super::{Checker, RawCircuit, RawElement, RawFluid, RawPump};
use crate::io::InputError;
use crate::io::locate::{KeyPath, locate};
use crate::io::quantity::{Dim, Q};
use crate::io::validate::{FileCheck, WallModel};
use crate::line::LineModel;
use crate::units::Dimension;

/// A value as a circuit file gives it, in SI.
#[derive(Debug, Clone, PartialEq)]
pub enum Given {
    /// A quantity: its SI value and dimension.
    Quantity(f64, Dimension),
    /// A range of two quantities (SI) of one dimension.
    Range(f64, f64, Dimension),
    /// A gas pressure, absolute, Pa.
    GasPressure(f64),
    /// A plain number (a count, an index).
    Number(f64),
    /// A name, a choice or a flag, as written.
    Text(String),
    /// A list with this many entries of what it names (`harmonics`,
    /// `points`...).
    Entries(usize, &'static str),
    /// A section (its keys are not listed one by one).
    Section,
}

/// The keys one part of a file gives (a section, a pump, an element).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct GivenKeys {
    /// The part's key path, e.g. `elements[3]` or
    /// `elements[1].galleries[0]` for a part of a valve block.
    pub path: String,
    /// The line (1-based) where the part starts, when found.
    pub line: Option<usize>,
    /// Each key present, with its value, in file-format order.
    pub keys: Vec<(&'static str, Given)>,
}

impl GivenKeys {
    /// Whether `key` is given.
    pub fn has(&self, key: &str) -> bool {
        self.keys.iter().any(|(k, _)| *k == key)
    }

    /// The value of `key`, if given.
    pub fn get(&self, key: &str) -> Option<&Given> {
        self.keys.iter().find(|(k, _)| *k == key).map(|(_, v)| v)
    }
}

/// What a circuit file gives.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct GivenInputs {
    /// Top-level keys (`title`, `line_model`, `harmonics`, `envelope`,
    /// `limits`).
    pub top: GivenKeys,
    /// The `fluid` section.
    pub fluid: GivenKeys,
    /// Each pump, in the order of [`crate::Circuit::pumps`].
    pub pumps: Vec<GivenKeys>,
    /// Each element, in the order of [`crate::Circuit::elements`] (a valve
    /// block's galleries and cavities each on their own).
    pub elements: Vec<GivenKeys>,
}

/// Collects keys and values.
struct Keys(Vec<(&'static str, Given)>);

impl Keys {
    fn q<D: Dim>(&mut self, key: &'static str, v: Option<Q<D>>) {
        if let Some(v) = v {
            self.0.push((key, Given::Quantity(v.si, D::DIM)));
        }
    }
    fn text(&mut self, key: &'static str, v: Option<String>) {
        if let Some(v) = v {
            self.0.push((key, Given::Text(v)));
        }
    }
    fn entries(&mut self, key: &'static str, n: Option<usize>, of: &'static str) {
        if let Some(n) = n {
            self.0.push((key, Given::Entries(n, of)));
        }
    }
    fn section(&mut self, key: &'static str, present: bool) {
        if present {
            self.0.push((key, Given::Section));
        }
    }
    fn number(&mut self, key: &'static str, v: Option<f64>) {
        if let Some(v) = v {
            self.0.push((key, Given::Number(v)));
        }
    }
}

impl RawElement {
    /// The optional keys present (besides `name` and `kind`), with their
    /// values.
    pub(super) fn given(&self) -> Vec<(&'static str, Given)> {
        let mut k = Keys(Vec::new());
        k.text("from", self.from.clone());
        k.text("to", self.to.clone());
        k.text("at", self.at.clone());
        k.q("length", self.length);
        k.q("bore", self.bore);
        k.q("wall", self.wall);
        k.text("material", self.material.clone());
        k.q("youngs_modulus", self.youngs_modulus);
        k.text("rigid", self.rigid.map(|b| b.to_string()));
        k.text(
            "model",
            self.model.map(|m| LineModel::from(m).name().to_string()),
        );
        k.q("volume", self.volume);
        k.q("resistance", self.resistance);
        k.q("mean_flow", self.mean_flow);
        k.q("pressure_drop", self.pressure_drop);
        k.q("inertance", self.inertance);
        k.text("line", self.line.clone());
        k.text(
            "wall_model",
            self.wall_model.map(|m| {
                match m {
                    WallModel::Thin => "thin",
                    WallModel::Thick => "thick",
                }
                .to_string()
            }),
        );
        k.q("poisson_ratio", self.poisson_ratio);
        k.text("construction", self.construction.clone());
        k.q("wave_speed", self.wave_speed);
        k.q("loss_factor", self.loss_factor);
        k.q("reference_frequency", self.reference_frequency);
        k.entries(
            "kelvin_voigt",
            self.kelvin_voigt.as_ref().map(|kv| kv.terms.len()),
            "retardation terms",
        );
        k.q("neck_length", self.neck_length);
        k.q("neck_bore", self.neck_bore);
        k.text("end_correction", self.end_correction.map(|b| b.to_string()));
        k.q("gas_volume", self.gas_volume);
        if let Some(p) = self.precharge {
            k.0.push(("precharge", Given::GasPressure(p.absolute_pa)));
        }
        if let Some(p) = self.operating_pressure {
            k.0.push(("operating_pressure", Given::GasPressure(p.absolute_pa)));
        }
        k.number("polytropic_index", self.polytropic_index);
        k.q("cracking_pressure", self.cracking_pressure);
        k.q("full_open_pressure", self.full_open_pressure);
        k.q("mass", self.mass);
        k.q("spring_rate", self.spring_rate);
        k.q("damping", self.damping);
        k.q("damping_area", self.damping_area);
        k.q("damping_resistance", self.damping_resistance);
        k.q("feedback_area", self.feedback_area);
        k.q("jet_angle", self.jet_angle);
        k.q("flow_gain", self.flow_gain);
        k.q("flow_pressure_coefficient", self.flow_pressure_coefficient);
        k.q("rod_diameter", self.rod_diameter);
        k.q("stroke", self.stroke);
        k.q("position", self.position);
        k.q("dead_volume", self.dead_volume);
        k.q("load_mass", self.load_mass);
        k.q("load_stiffness", self.load_stiffness);
        k.q("load_damping", self.load_damping);
        k.q("friction", self.friction);
        k.text(
            "port",
            self.port.map(|p| {
                match p {
                    RawCylinderPort::Cap => "cap",
                    RawCylinderPort::Rod => "rod",
                }
                .to_string()
            }),
        );
        k.q("oil_volume", self.oil_volume);
        k.q("port_length", self.port_length);
        k.q("port_bore", self.port_bore);
        k.q("inlet_extension", self.inlet_extension);
        k.q("outlet_extension", self.outlet_extension);
        k.entries(
            "wave_speeds",
            self.wave_speeds.as_ref().map(Vec::len),
            "mean pressures",
        );
        k.entries("ports", self.ports.as_ref().map(|p| p.len()), "ports");
        k.entries(
            "galleries",
            self.galleries.as_ref().map(Vec::len),
            "galleries",
        );
        k.entries("cavities", self.cavities.as_ref().map(Vec::len), "cavities");
        k.0
    }
}

impl RawFluid {
    fn given(&self) -> Vec<(&'static str, Given)> {
        let mut k = Keys(Vec::new());
        k.text("grade", self.grade.clone());
        k.q("temperature", self.temperature);
        k.q("pressure", self.pressure);
        k.q("air_content", self.air_content);
        k.entries(
            "viscosity_points",
            self.viscosity_points.as_ref().map(Vec::len),
            "points",
        );
        k.q("density", self.density);
        k.q("bulk_modulus", self.bulk_modulus);
        k.q("viscosity", self.viscosity);
        k.0
    }
}

impl RawPump {
    fn given(&self) -> Vec<(&'static str, Given)> {
        let mut k = Keys(Vec::new());
        k.text("name", self.name.clone());
        k.text("node", Some(self.node.clone()));
        k.q("speed", self.speed);
        if let Some([lo, hi]) = self.speed_range {
            k.0.push((
                "speed_range",
                Given::Range(lo.si, hi.si, Dimension::ShaftSpeed),
            ));
        }
        k.number("pumping_elements", self.pumping_elements.map(f64::from));
        k.q("displacement", self.displacement);
        k.entries(
            "flow_ripple",
            self.flow_ripple.as_ref().map(Vec::len),
            "harmonics",
        );
        k.section("gear", self.gear.is_some());
        k.section("piston", self.piston.is_some());
        k.section("source_impedance", self.source_impedance.is_some());
        k.text("source_file", self.source_file.clone());
        k.text("shaft", self.shaft.clone());
        k.q("shaft_angle", self.shaft_angle);
        k.0
    }
}

/// What the circuit text gives, key by key.
///
/// # Errors
/// [`InputError`] as [`super::parse_circuit`] gives it, for text that does
/// not parse or whose valve blocks cannot be expanded.
pub fn given_inputs(text: &str, file: &str) -> Result<GivenInputs, InputError> {
    let raw: RawCircuit = super::parse_raw(text, file)?;
    let checker = Checker(FileCheck { text, file });
    let root = KeyPath::root();
    let part = |path: KeyPath, keys: Vec<(&'static str, Given)>| GivenKeys {
        line: locate(text, &path).map(|(line, _)| line),
        path: path.to_string(),
        keys,
    };
    let mut top = Keys(Vec::new());
    top.text("title", raw.title.clone());
    top.text(
        "line_model",
        raw.line_model
            .map(|m| LineModel::from(m).name().to_string()),
    );
    top.number("harmonics", raw.harmonics.map(f64::from));
    top.section("envelope", raw.envelope.is_some());
    top.entries("limits", raw.limits.as_ref().map(Vec::len), "points");
    let pumps = match (&raw.pump, &raw.pumps) {
        (Some(p), _) => vec![part(root.key("pump"), p.given())],
        (None, Some(list)) => list
            .iter()
            .enumerate()
            .map(|(i, p)| part(root.key("pumps").index(i), p.given()))
            .collect(),
        (None, None) => Vec::new(),
    };
    let (raws, paths) = checker.expand_valve_blocks(&root, &raw.elements)?;
    let elements = raws
        .iter()
        .zip(paths)
        .map(|(e, path)| part(path, e.given()))
        .collect();
    Ok(GivenInputs {
        top: GivenKeys {
            path: String::new(),
            line: None,
            keys: top.0,
        },
        fluid: part(root.key("fluid"), raw.fluid.given()),
        pumps,
        elements,
    })
}

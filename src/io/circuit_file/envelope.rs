//! The `envelope` and `limits` sections of a circuit file, and the circuit
//! at an envelope point (the point evaluator).
//!
//! The circuit at a point is the file read again with the point's values
//! put into the raw sections before validation: the fluid's `temperature`
//! and mean `pressure` (which every damper's operating pressure follows),
//! and the load case's element values (`set`) and closed elements (`close`).
//! Everything built from them (oil properties, free air, damper gas
//! volumes, walls, lines, mean flows) is thus resolved exactly as for a file
//! written at that point. An error at a point names the point and is
//! located at the envelope key that caused it where it can be told.

use super::{Checker, RawCircuit, RawElement, RawKind};
use crate::circuit::Circuit;
use crate::envelope::{Envelope, Limit, LimitKind, LoadCase, OperatingPoint, TapLimits};
use crate::io::InputError;
use crate::io::locate::{KeyPath, PathSegment};
use crate::io::quantity::{self as q, Q};
use crate::io::validate::{FileCheck, Res};
use crate::units::{Dimension, parse_quantity};
use serde::Deserialize;
use serde_yaml::{Mapping, Value};
use std::collections::{HashMap, HashSet};
use std::path::Path;

/// Most pressure or temperature levels in an envelope.
pub const MAX_LEVELS: usize = 20;
/// Most load cases in an envelope.
pub const MAX_CASES: usize = 50;
/// Most points (cases × pressures × temperatures) in an envelope.
pub const MAX_POINTS: usize = 1000;

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "an envelope: a mapping with speed, shaft, pressures, temperatures and cases (each optional)"
)]
pub(super) struct RawEnvelope {
    // the envelope's points are what is analysed, not values of the
    // machine: a tolerance there is refused in every command
    #[serde(default, deserialize_with = "q::without_tolerances")]
    speed: Option<[Q<q::ShaftSpeed>; 2]>,
    shaft: Option<String>,
    #[serde(default, deserialize_with = "q::without_tolerances")]
    pressures: Vec<Q<q::Pressure>>,
    #[serde(default, deserialize_with = "q::without_tolerances")]
    temperatures: Vec<Q<q::Temperature>>,
    #[serde(default)]
    cases: Vec<RawCase>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a load case: a mapping with name, and set and/or close"
)]
struct RawCase {
    name: String,
    note: Option<String>,
    /// Element name → the keys it sets.
    #[serde(default)]
    set: Mapping,
    #[serde(default)]
    close: Vec<String>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a limit: a mapping with tap and rms, peak_to_peak and/or harmonic"
)]
pub(super) struct RawLimit {
    tap: String,
    rms: Option<RawAmount>,
    peak_to_peak: Option<RawAmount>,
    harmonic: Option<RawAmount>,
}

/// A limit as written: a bare number (Pa), a pressure with its unit, or a
/// level `<number> dB` (re 1 Pa) or `<number> dB re <pressure>`.
#[derive(Debug, Clone, Deserialize)]
#[serde(
    untagged,
    expecting = "a pressure such as `2 bar` or a level such as `150 dB`"
)]
enum RawAmount {
    Number(f64),
    Text(String),
}

/// Keys a load case may not set: the element's identity and connections.
const FIXED_KEYS: [&str; 5] = ["name", "kind", "from", "to", "at"];

/// Groups of keys that describe the same thing in different ways, per kind:
/// setting a key of one group drops the keys of the others (a resistance
/// replaces a mean flow and pressure drop, and so on).
fn alternatives(kind: RawKind) -> &'static [&'static [&'static str]] {
    match kind {
        RawKind::Orifice | RawKind::LoadValve => {
            &[&["resistance"], &["mean_flow", "pressure_drop"]]
        }
        RawKind::Inertance => &[&["inertance"], &["length", "bore"]],
        RawKind::Hose => &[
            &["construction"],
            &["wave_speed", "loss_factor", "reference_frequency"],
            &["kelvin_voigt"],
        ],
        _ => &[],
    }
}

impl Checker<'_> {
    /// The `envelope` and `limits` sections, validated against the circuit.
    pub(super) fn envelope_sections(
        &self,
        raw: &RawCircuit,
        circuit: &Circuit,
    ) -> Res<(Option<Envelope>, Vec<TapLimits>)> {
        let envelope = match &raw.envelope {
            Some(e) => Some(self.envelope(e, raw, circuit)?),
            None => None,
        };
        let limits = match &raw.limits {
            Some(l) => self.limits(l, circuit)?,
            None => Vec::new(),
        };
        Ok((envelope, limits))
    }

    fn envelope(&self, raw: &RawEnvelope, file: &RawCircuit, circuit: &Circuit) -> Res<Envelope> {
        let path = KeyPath::root().key("envelope");
        let speed_range_rev_s = match raw.speed {
            None => None,
            Some([lo, hi]) => {
                let sp = path.key("speed");
                let lo = self.in_range(&sp, lo.si, 0.1, 1000.0, "rev/s")?;
                let hi = self.in_range(&sp, hi.si, 0.1, 1000.0, "rev/s")?;
                if lo >= hi {
                    return Err(self.err(
                        &sp,
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
        if let Some(name) = &raw.shaft {
            let known = circuit
                .pumps
                .iter()
                .any(|p| &p.name == name || p.shaft.as_deref() == Some(name.as_str()));
            if !known {
                return Err(self.err(
                    &path.key("shaft"),
                    format!("no shaft or pump is called `{name}`"),
                ));
            }
        }
        let levels = |key: &str, n: usize| -> Res<()> {
            if n > MAX_LEVELS {
                return Err(self.err(
                    &path.key(key),
                    format!("at most {MAX_LEVELS} levels, found {n}"),
                ));
            }
            Ok(())
        };
        levels("pressures", raw.pressures.len())?;
        levels("temperatures", raw.temperatures.len())?;
        let mut pressures_pa = Vec::new();
        for (i, p) in raw.pressures.iter().enumerate() {
            let pp = path.key("pressures").index(i);
            if !(-0.9e5..=1e8).contains(&p.si) {
                return Err(self.err(
                    &pp,
                    format!(
                        "mean pressure {:.3} bar (gauge) is outside -0.9 .. 1000 bar: check the unit (a bare number is Pa)",
                        p.si / 1e5
                    ),
                ));
            }
            if pressures_pa.contains(&p.si) {
                return Err(self.err(&pp, "this pressure is listed twice"));
            }
            pressures_pa.push(p.si);
        }
        if !raw.temperatures.is_empty()
            && file.fluid.grade.is_none()
            && file.fluid.viscosity_points.is_none()
        {
            return Err(self.err(
                &path.key("temperatures"),
                "the fluid has no temperature model: give it a `grade` (or `viscosity_points`) with a `temperature`, so the oil can follow the envelope's temperatures",
            ));
        }
        let mut temperatures_k = Vec::new();
        for (i, t) in raw.temperatures.iter().enumerate() {
            let tp = path.key("temperatures").index(i);
            if temperatures_k.contains(&t.si) {
                return Err(self.err(&tp, "this temperature is listed twice"));
            }
            temperatures_k.push(t.si);
        }
        if raw.cases.len() > MAX_CASES {
            return Err(self.err(
                &path.key("cases"),
                format!("at most {MAX_CASES} load cases, found {}", raw.cases.len()),
            ));
        }
        let mut names = HashSet::new();
        let mut cases = Vec::new();
        for (i, c) in raw.cases.iter().enumerate() {
            cases.push(self.case(&path.key("cases").index(i), c, file, &mut names)?);
        }
        let count = cases.len().max(1) * pressures_pa.len().max(1) * temperatures_k.len().max(1);
        if count > MAX_POINTS {
            return Err(self.err(
                &path,
                format!(
                    "the envelope has {count} points (cases × pressures × temperatures); at most {MAX_POINTS}"
                ),
            ));
        }
        Ok(Envelope {
            speed_range_rev_s,
            shaft: raw.shaft.clone(),
            pressures_pa,
            temperatures_k,
            cases,
        })
    }

    fn case<'r>(
        &self,
        path: &KeyPath,
        c: &'r RawCase,
        file: &RawCircuit,
        names: &mut HashSet<&'r str>,
    ) -> Res<LoadCase> {
        if c.name.trim().is_empty() {
            return Err(self.err(&path.key("name"), "a load case name must not be empty"));
        }
        if !names.insert(c.name.as_str()) {
            return Err(self.err(
                &path.key("name"),
                format!("duplicate load case `{}`: names must be unique", c.name),
            ));
        }
        let element = |key: &KeyPath, name: &str| -> Res<&RawElement> {
            file.elements
                .iter()
                .find(|e| e.name == name)
                .ok_or_else(|| self.err(key, format!("no element is called `{name}`")))
        };
        let mut changed = Vec::new();
        for (name, keys) in &c.set {
            let Some(name) = name.as_str() else {
                return Err(self.err(
                    &path.key("set"),
                    "`set` maps element names to the keys they take in this case",
                ));
            };
            let ep = path.key("set").key(name);
            let e = element(&ep, name)?;
            let Some(keys) = keys.as_mapping() else {
                return Err(self.err(
                    &ep,
                    "give the element's keys for this case as a mapping, e.g. `{resistance: 2e10}`",
                ));
            };
            for (key, value) in keys {
                let key = key.as_str().unwrap_or("");
                if let Some((inner, text)) = with_tolerance(value, ep.key(key)) {
                    return Err(self.err(
                        &inner,
                        format!(
                            "`{text}`: a tolerance is not read here; a load case's values make a point of the envelope (what is analysed), not uncertain values of the machine: put the tolerance on the element's own value"
                        ),
                    ));
                }
                if FIXED_KEYS.contains(&key) {
                    return Err(self.err(
                        &ep.key(key),
                        format!(
                            "a load case cannot change an element's `{key}`; it sets values only (use `close` to close an element off)"
                        ),
                    ));
                }
                if !e.kind.allowed_keys().contains(&key) {
                    return Err(self.err(
                        &ep.key(key),
                        format!(
                            "key `{key}` does not apply to a `{}`; it takes: {}",
                            e.kind.name(),
                            e.kind.allowed_keys().join(", ")
                        ),
                    ));
                }
            }
            changed.push(name.to_string());
        }
        for (i, name) in c.close.iter().enumerate() {
            let cp = path.key("close").index(i);
            let e = element(&cp, name)?;
            if e.kind == RawKind::Tank {
                return Err(self.err(&cp, format!("`{name}` is a tank, which cannot be closed")));
            }
            if changed.contains(name) {
                return Err(self.err(&cp, format!("`{name}` is both set and closed in this case")));
            }
        }
        Ok(LoadCase {
            name: c.name.clone(),
            note: c.note.clone(),
            changed,
            closed: c.close.clone(),
        })
    }

    fn limits(&self, raw: &[RawLimit], circuit: &Circuit) -> Res<Vec<TapLimits>> {
        let points = crate::analysis::ripple::report_points(circuit);
        let mut out: Vec<TapLimits> = Vec::new();
        for (i, l) in raw.iter().enumerate() {
            let lp = KeyPath::root().key("limits").index(i);
            if !points.iter().any(|p| p.name == l.tap) {
                let names: Vec<String> = points.iter().map(|p| format!("`{}`", p.name)).collect();
                return Err(self.err(
                    &lp.key("tap"),
                    format!(
                        "no measurement point is called `{}`; the points are: {}",
                        l.tap,
                        names.join(", ")
                    ),
                ));
            }
            if out.iter().any(|t| t.tap == l.tap) {
                return Err(self.err(
                    &lp.key("tap"),
                    format!("`{}` has limits twice: give them in one entry", l.tap),
                ));
            }
            let mut limits = Vec::new();
            for (kind, amount) in [
                (LimitKind::Rms, &l.rms),
                (LimitKind::PeakToPeak, &l.peak_to_peak),
                (LimitKind::Harmonic, &l.harmonic),
            ] {
                if let Some(a) = amount {
                    limits.push(self.limit(&lp.key(kind.key()), kind, a)?);
                }
            }
            if limits.is_empty() {
                return Err(self.err(
                    &lp,
                    "a limit needs `rms`, `peak_to_peak` or `harmonic` (a pressure such as `2 bar`, or a level such as `150 dB`)",
                ));
            }
            out.push(TapLimits {
                tap: l.tap.clone(),
                limits,
            });
        }
        Ok(out)
    }

    fn limit(&self, path: &KeyPath, kind: LimitKind, amount: &RawAmount) -> Res<Limit> {
        let (value_pa, db_ref_pa, written) = match amount {
            RawAmount::Number(v) => (*v, None, format!("{v} Pa")),
            RawAmount::Text(text) => match parse_level(text) {
                Some(level) => {
                    let (db, p_ref) = level.map_err(|m| self.err(path, m))?;
                    (
                        Limit::from_level(kind, db, p_ref),
                        Some(p_ref),
                        text.clone(),
                    )
                }
                None => (
                    parse_quantity(text, Dimension::Pressure)
                        .map_err(|e| self.err(path, e.to_string()))?,
                    None,
                    text.clone(),
                ),
            },
        };
        let value_pa = self.in_range(path, value_pa, 1e-6, 1e9, "Pa")?;
        Ok(Limit {
            kind,
            value_pa,
            db_ref_pa,
            written,
        })
    }
}

/// A level `<number> dB` (re 1 Pa) or `<number> dB re <pressure>`:
/// `None` when the text is not written in dB, else the level and its
/// reference in Pa, or what is wrong.
fn parse_level(text: &str) -> Option<Result<(f64, f64), String>> {
    let t = text.trim();
    let (number, rest) = t.split_once("dB")?;
    let db: f64 = match number.trim().parse() {
        Ok(v) if f64::is_finite(v) => v,
        _ => {
            return Some(Err(format!(
                "`{text}`: write a level as e.g. `150 dB` or `50 dB re 1 bar`"
            )));
        }
    };
    let rest = rest.trim();
    let p_ref = if rest.is_empty() {
        1.0
    } else {
        let Some(r) = rest.strip_prefix("re") else {
            return Some(Err(format!(
                "`{text}`: write the reference as `dB re 1 bar`"
            )));
        };
        match parse_quantity(r.trim(), Dimension::Pressure) {
            Ok(p) if p > 0.0 => p,
            Ok(_) => return Some(Err(format!("`{text}`: the dB reference must be positive"))),
            Err(e) => return Some(Err(format!("`{text}`: {e}"))),
        }
    };
    Some(Ok((db, p_ref)))
}

/// A circuit file read with its envelope and limits: the circuit as written
/// and, through [`CircuitFile::at`], the circuit at any envelope point.
#[derive(Debug, Clone)]
pub struct CircuitFile {
    /// The file as the user named it.
    pub file: String,
    /// Its text.
    pub text: String,
    /// The circuit as written.
    pub circuit: Circuit,
    /// The operating envelope, if the file has one.
    pub envelope: Option<Envelope>,
    /// The limits per measurement point (empty without a `limits` section).
    pub limits: Vec<TapLimits>,
    /// The file's own mean pressure (gauge, Pa), if it states one.
    pub pressure_pa: Option<f64>,
    /// The file's own oil temperature (K), if it states one.
    pub temperature_k: Option<f64>,
}

/// Reads a circuit file with its envelope and limits.
///
/// # Errors
/// [`InputError`] naming the file, the line and the key at fault.
pub fn load_circuit_file(path: &Path) -> Result<CircuitFile, InputError> {
    let text = crate::io::read_text(path)?;
    parse_circuit_file(&text, &path.display().to_string())
}

/// Parses circuit text with its envelope and limits; `file` names it in
/// error messages.
///
/// # Errors
/// [`InputError`] naming the file, the line and the key at fault.
pub fn parse_circuit_file(text: &str, file: &str) -> Result<CircuitFile, InputError> {
    let raw: RawCircuit = super::parse_raw(text, file)?;
    let checker = Checker(FileCheck { text, file });
    let (pressure_pa, temperature_k) = (
        raw.fluid.pressure.map(|p| p.si),
        raw.fluid.temperature.map(|t| t.si),
    );
    let circuit = checker.circuit(&raw)?;
    let (envelope, limits) = checker.envelope_sections(&raw, &circuit)?;
    Ok(CircuitFile {
        file: file.to_string(),
        text: text.to_string(),
        circuit,
        envelope,
        limits,
        pressure_pa,
        temperature_k,
    })
}

impl CircuitFile {
    /// The envelope's points, or the file's own point when it has none.
    pub fn points(&self) -> Vec<OperatingPoint> {
        match &self.envelope {
            Some(e) => e.points(),
            None => vec![OperatingPoint::default()],
        }
    }

    /// The envelope's points that match `filter` (every point for an empty
    /// filter; the file's own point when it has no envelope).
    ///
    /// # Errors
    /// [`crate::envelope::NoSuchPoint`] when the filter matches no point,
    /// or asks for a part of a point without an envelope.
    pub fn select(
        &self,
        filter: &crate::envelope::PointFilter,
    ) -> Result<Vec<OperatingPoint>, crate::envelope::NoSuchPoint> {
        match &self.envelope {
            Some(e) => e.select(filter),
            None if *filter == crate::envelope::PointFilter::default() => Ok(self.points()),
            None => Err(crate::envelope::NoSuchPoint {
                what: "an envelope point".into(),
                valid: "none: the file has no `envelope` section".into(),
            }),
        }
    }

    /// The circuit at each of `points`, all resolved before any is used
    /// (so a point that makes the circuit invalid is found before any
    /// work).
    ///
    /// # Errors
    /// The first point's [`InputError`], as [`CircuitFile::at`].
    pub fn circuits(
        &self,
        points: &[OperatingPoint],
    ) -> Result<Vec<(OperatingPoint, Circuit)>, InputError> {
        points
            .iter()
            .map(|p| self.at(p).map(|c| (p.clone(), c)))
            .collect()
    }

    /// The circuit at an envelope point (the point evaluator).
    ///
    /// # Errors
    /// [`InputError`] naming the point and, where it can be told, the
    /// envelope key that makes the circuit invalid there.
    pub fn at(&self, point: &OperatingPoint) -> Result<Circuit, InputError> {
        if *point == OperatingPoint::default() {
            return Ok(self.circuit.clone());
        }
        parse_circuit_at(&self.text, &self.file, point)
    }
}

/// Parses circuit text at an operating point: with the oil at the point's
/// temperature, the point's mean pressure (every damper's operating
/// pressure follows it) and its load case applied, then validated as
/// [`super::parse_circuit`] does. Explicit fluid `density`, `bulk_modulus`
/// or `viscosity` values stay as written.
///
/// # Errors
/// [`InputError`] as for [`super::parse_circuit`], naming the point, and
/// when the point asks for a temperature the fluid has no model for, or a
/// load case the file does not have.
pub fn parse_circuit_at(
    text: &str,
    file: &str,
    point: &OperatingPoint,
) -> Result<Circuit, InputError> {
    super::settings::CircuitTemplate::new(text, file)?.circuit(point, &[])
}

/// The circuit of a parsed document (the file's text with any settings
/// already written into it) at an operating point; `text` and `file`
/// locate errors.
pub(super) fn circuit_at(
    document: &Value,
    mut raw: RawCircuit,
    text: &str,
    file: &str,
    point: &OperatingPoint,
) -> Result<Circuit, InputError> {
    let checker = Checker(FileCheck { text, file });
    let root = KeyPath::root();
    let envelope_path = root.key("envelope");
    // Where an error caused by the point is reported: (key path prefix in
    // the circuit, envelope key path).
    let mut moved: Vec<(String, KeyPath)> = Vec::new();
    let index_of = |list: &[f64], v: f64| list.iter().position(|&x| x == v);
    let listed = |key: &str, v: f64| -> KeyPath {
        let values: Vec<f64> = match (&raw.envelope, key) {
            (Some(e), "pressures") => e.pressures.iter().map(|p| p.si).collect(),
            (Some(e), _) => e.temperatures.iter().map(|t| t.si).collect(),
            (None, _) => Vec::new(),
        };
        match index_of(&values, v) {
            Some(i) => envelope_path.key(key).index(i),
            None => envelope_path.key(key),
        }
    };
    if let Some(t) = point.temperature_k {
        if raw.fluid.grade.is_none() && raw.fluid.viscosity_points.is_none() {
            return Err(checker.err(
                &root.key("fluid"),
                "the fluid has no temperature model: give a `grade` (or `viscosity_points`) with a `temperature` to evaluate the circuit at other temperatures",
            ));
        }
        moved.push(("fluid.temperature".into(), listed("temperatures", t)));
        moved.push(("fluid".into(), listed("temperatures", t)));
        raw.fluid.temperature = Some(Q::new(t));
    }
    if let Some(p) = point.pressure_pa {
        moved.push(("fluid.pressure".into(), listed("pressures", p)));
        moved.push(("fluid.air_content".into(), listed("pressures", p)));
        raw.fluid.pressure = Some(Q::new(p));
        for (i, e) in raw.elements.iter_mut().enumerate() {
            if matches!(
                e.kind,
                RawKind::PulsationDamper | RawKind::InlinePulsationDamper
            ) {
                e.operating_pressure = None;
                moved.push((
                    format!("elements[{i}].operating_pressure"),
                    listed("pressures", p),
                ));
            }
        }
    }
    if let Some(name) = &point.case {
        let (ci, case) = raw
            .envelope
            .as_ref()
            .and_then(|e| e.cases.iter().enumerate().find(|(_, c)| &c.name == name))
            .ok_or_else(|| {
                checker.err(
                    &envelope_path.key("cases"),
                    format!("the file has no load case `{name}`"),
                )
            })?;
        let cp = envelope_path.key("cases").index(ci);
        let elements = document
            .get("elements")
            .and_then(Value::as_sequence)
            .cloned()
            .unwrap_or_default();
        let mut changed: Vec<(usize, RawElement)> = Vec::new();
        for (name, keys) in &case.set {
            let name = name.as_str().unwrap_or_default();
            let ep = cp.key("set").key(name);
            let (i, base) = element_value(&elements, name)
                .ok_or_else(|| checker.err(&ep, format!("no element is called `{name}`")))?;
            let keys = keys.as_mapping().cloned().unwrap_or_default();
            let mut merged = base.clone();
            let kind = raw.elements[i].kind;
            for (key, value) in &keys {
                let key_name = key.as_str().unwrap_or_default();
                for group in alternatives(kind) {
                    if !group.contains(&key_name) {
                        continue;
                    }
                    for other in alternatives(kind).iter().filter(|g| !g.contains(&key_name)) {
                        for k in other.iter() {
                            merged.remove(*k);
                        }
                    }
                }
                if value.is_null() {
                    merged.remove(key);
                } else {
                    merged.insert(key.clone(), value.clone());
                }
                moved.push((format!("elements[{i}].{key_name}"), ep.key(key_name)));
            }
            moved.push((format!("elements[{i}]"), ep.clone()));
            let element = crate::io::quantity::allowing_tolerances(|| {
                RawElement::deserialize(Value::Mapping(merged))
            })
            .map_err(|e| checker.err(&ep, format!("in load case `{}`: {e}", case.name)))?;
            changed.push((i, element));
        }
        for (i, element) in changed {
            raw.elements[i] = element;
        }
        for (k, name) in case.close.iter().enumerate() {
            let kp = cp.key("close").index(k);
            let i = raw
                .elements
                .iter()
                .position(|e| &e.name == name)
                .ok_or_else(|| checker.err(&kp, format!("no element is called `{name}`")))?;
            moved.push((format!("elements[{i}]"), kp.clone()));
            let e = &mut raw.elements[i];
            if e.is_two_port() {
                // its `to` end shut: the element stays on `from`, ended by a
                // closed end at a node of its own (appended, so the other
                // elements keep their places)
                let node = format!("{} (closed in case {})", e.name, case.name);
                e.to = Some(node.clone());
                let end = closed_end(&node, &node, &checker, &kp)?;
                raw.elements.push(end);
            } else {
                let at = e.at.clone().unwrap_or_default();
                *e = closed_end(&e.name, &at, &checker, &kp)?;
            }
        }
        moved.push(("elements".into(), cp.clone()));
        moved.push((String::new(), cp));
    }
    let kept = drop_cut_off(&mut raw);
    // the sections were checked with the file; taps may be cut off here
    (raw.envelope, raw.limits) = (None, None);
    checker
        .circuit(&raw)
        .map_err(|e| at_point(e, point, &moved, &kept, &checker))
}

/// The original indices of the elements and taps kept by [`drop_cut_off`].
#[derive(Debug, Default)]
struct Kept {
    elements: Vec<usize>,
    taps: Vec<usize>,
}

/// Removes the elements and taps that no longer reach any pump through the
/// two-ports (a load case closed the way to them): no ripple reaches them.
fn drop_cut_off(raw: &mut RawCircuit) -> Kept {
    let mut index: HashMap<&str, usize> = HashMap::new();
    let pump_nodes: Vec<&str> = raw
        .pump
        .iter()
        .chain(raw.pumps.iter().flatten())
        .map(|p| p.node.as_str())
        .collect();
    for name in raw
        .elements
        .iter()
        .flat_map(|e| [&e.from, &e.to, &e.at])
        .flatten()
        .map(String::as_str)
        .chain(raw.elements.iter().flat_map(block_nodes))
        .chain(pump_nodes.iter().copied())
    {
        let n = index.len();
        index.entry(name).or_insert(n);
    }
    let node = |name: &Option<String>| name.as_deref().and_then(|n| index.get(n).copied());
    let mut parent: Vec<usize> = (0..index.len()).collect();
    fn root(parent: &mut [usize], mut i: usize) -> usize {
        while parent[i] != i {
            parent[i] = parent[parent[i]];
            i = parent[i];
        }
        i
    }
    for e in &raw.elements {
        if let (true, Some(a), Some(b)) = (e.is_two_port(), node(&e.from), node(&e.to)) {
            let (ra, rb) = (root(&mut parent, a), root(&mut parent, b));
            parent[ra] = rb;
        }
        let ports: Vec<usize> = block_nodes(e)
            .iter()
            .filter_map(|n| index.get(n).copied())
            .collect();
        for pair in ports.windows(2) {
            let (ra, rb) = (root(&mut parent, pair[0]), root(&mut parent, pair[1]));
            parent[ra] = rb;
        }
    }
    let pump_roots: Vec<usize> = pump_nodes
        .iter()
        .filter_map(|&n| index.get(n).copied())
        .map(|n| root(&mut parent, n))
        .collect();
    let mut live = |name: &Option<String>| match node(name) {
        Some(n) => pump_roots.contains(&root(&mut parent, n)),
        None => true,
    };
    let keep: Vec<bool> = raw
        .elements
        .iter()
        .map(|e| match block_nodes(e).first() {
            Some(n) => live(&Some((*n).to_string())),
            None => live(if e.is_two_port() { &e.from } else { &e.at }),
        })
        .collect();
    let kept_names: Vec<String> = raw
        .elements
        .iter()
        .zip(&keep)
        .filter(|(_, k)| **k)
        .map(|(e, _)| e.name.clone())
        .collect();
    let keep_tap: Vec<bool> = raw
        .taps
        .iter()
        .map(|t| match (&t.node, &t.element) {
            (Some(_), _) => live(&t.node),
            (None, Some(e)) => kept_names.contains(e) || !raw.elements.iter().any(|x| &x.name == e),
            (None, None) => true,
        })
        .collect();
    let kept = Kept {
        elements: (0..keep.len()).filter(|&i| keep[i]).collect(),
        taps: (0..keep_tap.len()).filter(|&i| keep_tap[i]).collect(),
    };
    let mut i = 0;
    raw.elements.retain(|_| {
        i += 1;
        keep[i - 1]
    });
    let mut i = 0;
    raw.taps.retain(|_| {
        i += 1;
        keep_tap[i - 1]
    });
    kept
}

/// A `closed_end` element called `name` at node `at`.
fn closed_end(name: &str, at: &str, checker: &Checker<'_>, path: &KeyPath) -> Res<RawElement> {
    RawElement::deserialize(Value::Mapping(Mapping::from_iter([
        (Value::from("name"), Value::from(name)),
        (Value::from("kind"), Value::from("closed_end")),
        (Value::from("at"), Value::from(at)),
    ])))
    .map_err(|err| checker.err(path, err.to_string()))
}

/// The first text at or inside `value` (at `path`) written with a
/// tolerance, and its key path.
fn with_tolerance(value: &Value, path: KeyPath) -> Option<(KeyPath, String)> {
    match value {
        Value::String(t) => q::split_tolerance(t)
            .1
            .is_some()
            .then(|| (path, t.trim().to_string())),
        Value::Sequence(items) => items
            .iter()
            .enumerate()
            .find_map(|(i, v)| with_tolerance(v, path.index(i))),
        Value::Mapping(m) => m
            .iter()
            .find_map(|(k, v)| with_tolerance(v, path.key(k.as_str().unwrap_or_default()))),
        Value::Tagged(t) => with_tolerance(&t.value, path),
        _ => None,
    }
}

/// The circuit nodes a valve block's ports join (a block joins them
/// through its galleries); none for other kinds.
fn block_nodes(e: &RawElement) -> Vec<&str> {
    e.ports
        .iter()
        .flat_map(|p| p.values())
        .map(String::as_str)
        .collect()
}

/// The element called `name` in the document's `elements` list, as its
/// index and its mapping.
fn element_value<'v>(elements: &'v [Value], name: &str) -> Option<(usize, &'v Mapping)> {
    elements.iter().enumerate().find_map(|(i, e)| {
        let m = e.as_mapping()?;
        (m.get("name").and_then(Value::as_str) == Some(name)).then_some((i, m))
    })
}

/// An error in the circuit at `point`: said to be at that point, and moved
/// to the envelope key that caused it when its key path (with the indices
/// of the file, before any cut-off part was dropped) starts with one of the
/// `moved` prefixes (the longest match wins).
fn at_point(
    err: InputError,
    point: &OperatingPoint,
    moved: &[(String, KeyPath)],
    kept: &Kept,
    checker: &Checker<'_>,
) -> InputError {
    let InputError::Invalid(located) = err else {
        return err;
    };
    let mut path = parse_key_path(&located.path);
    if let Some(PathSegment::Key(list)) = path.0.first().cloned()
        && let Some(PathSegment::Index(i)) = path.0.get(1).cloned()
    {
        let map = match list.as_str() {
            "elements" => &kept.elements,
            "taps" => &kept.taps,
            _ => &Vec::new(),
        };
        if let Some(&original) = map.get(i) {
            path.0[1] = PathSegment::Index(original);
        }
    }
    let text = path.to_string();
    // the file's own point (no envelope chosen) is not named as one
    let message = if *point == OperatingPoint::default() {
        located.message.clone()
    } else {
        format!("at envelope point `{}`: {}", point.label(), located.message)
    };
    let target = moved
        .iter()
        .filter(|(prefix, _)| {
            prefix.is_empty()
                || text == *prefix
                || text.starts_with(&format!("{prefix}."))
                || text.starts_with(&format!("{prefix}["))
        })
        .max_by_key(|(prefix, _)| prefix.len());
    match target {
        Some((_, envelope_key)) => checker.err(
            envelope_key,
            format!("{message} (at `{text}` in the circuit)"),
        ),
        None => checker.err(&path, message),
    }
}

/// `elements[3].bore` → its key path (keys are names without dots).
fn parse_key_path(text: &str) -> KeyPath {
    let mut path = KeyPath::root();
    for part in text.split('.').filter(|p| !p.is_empty()) {
        let mut rest = part;
        if let Some(open) = rest.find('[') {
            path = path.key(&rest[..open]);
            rest = &rest[open..];
            while let Some(close) = rest.find(']') {
                if let Ok(i) = rest[1..close].parse() {
                    path = path.index(i);
                }
                rest = &rest[close + 1..];
            }
        } else {
            path = path.key(rest);
        }
    }
    path
}

//! Circuit values set from outside the file: calibration parameters, Monte
//! Carlo draws of uncertain values, and the values found by a calibration.
//!
//! A [`CircuitTemplate`] keeps a circuit file parsed into its YAML document.
//! A [`Setting`] replaces one value of that document (any numeric key of an
//! element, of the fluid, of a pump or of a tap), and
//! [`CircuitTemplate::circuit`] reads the changed document at an operating
//! point exactly as the envelope's point evaluator reads the file
//! (`envelope::circuit_at`): every derived quantity (wave speeds, damper gas
//! volumes, mean flows) is resolved as for a file written with that value.
//! Keeping the document saves reading the text again for every draw.
//!
//! A value is named by a *target* `SECTION.KEY`: `fluid.bulk_modulus`, an
//! element's name and key (`suction hose.wave_speed`), a pump's name (or
//! `pump`) and a key path (`pump.source_impedance.volume`,
//! `pump.flow_ripple[0].amplitude`), or a tap's name and `distance`.

use super::RawCircuit;
use super::envelope::circuit_at;
use crate::circuit::Circuit;
use crate::envelope::OperatingPoint;
use crate::io::InputError;
use crate::io::locate::{KeyPath, PathSegment};
use crate::io::quantity::{self, Written};
use serde::Deserialize;
use serde_yaml::Value;

/// A circuit file kept as its parsed YAML document, to be read again with
/// values changed.
#[derive(Debug, Clone)]
pub struct CircuitTemplate {
    text: String,
    file: String,
    document: Value,
}

/// A value of the circuit file named from outside it.
#[derive(Debug, Clone, PartialEq)]
pub struct Target {
    /// The target as a name: `SECTION.KEY` with the section's name (an
    /// element, `fluid`, a pump, a tap).
    pub name: String,
    /// Where it is in the file.
    pub path: KeyPath,
    /// The value as written there.
    pub written: Written,
}

impl Target {
    /// A setting of this value to `number`, in the unit it is written in.
    pub fn setting(&self, number: f64, why: &str) -> Setting {
        let value = if self.written.unit.is_empty() {
            Value::Number(number.into())
        } else {
            Value::String(self.written.with_number(number))
        };
        Setting {
            path: self.path.clone(),
            name: self.name.clone(),
            value,
            why: why.to_string(),
        }
    }
}

/// One value of a circuit file replaced.
#[derive(Debug, Clone, PartialEq)]
pub struct Setting {
    /// Where it is in the file.
    pub path: KeyPath,
    /// The target's name, for messages.
    pub name: String,
    /// The new value (a number in SI, or a number with the unit the file
    /// uses there).
    pub value: Value,
    /// Why it is set (`a Monte Carlo draw`, `the calibration's estimate`),
    /// for messages.
    pub why: String,
}

/// A value of the circuit file that carries a tolerance.
#[derive(Debug, Clone, PartialEq)]
pub struct Uncertain {
    /// The value (its target; its `written.tolerance` is set).
    pub target: Target,
}

/// Keys whose values are names or words, never quantities.
const TEXT_KEYS: [&str; 20] = [
    "title",
    "name",
    "note",
    "kind",
    "from",
    "to",
    "at",
    "node",
    "element",
    "line",
    "material",
    "construction",
    "grade",
    "source_file",
    "shaft",
    "model",
    "line_model",
    "wall_model",
    "tap",
    "close",
];

impl CircuitTemplate {
    /// Parses circuit text into its document; `file` names it in messages.
    ///
    /// # Errors
    /// [`InputError`] if the text is not a YAML document within the
    /// project's bounds (the circuit itself is checked by
    /// [`CircuitTemplate::circuit`]).
    pub fn new(text: &str, file: &str) -> Result<Self, InputError> {
        super::refuse_too_many_elements(text, file)?;
        let document: Value = crate::io::parse_yaml(text, file)?;
        Ok(CircuitTemplate {
            text: text.to_string(),
            file: file.to_string(),
            document,
        })
    }

    /// The file as the user named it.
    pub fn file(&self) -> &str {
        &self.file
    }

    /// The file's text.
    pub fn text(&self) -> &str {
        &self.text
    }

    /// The circuit at `point` with `settings` written into the file.
    ///
    /// # Errors
    /// [`InputError`] located in the file; an error at a set value says
    /// which value was set, to what, and why.
    pub fn circuit(
        &self,
        point: &OperatingPoint,
        settings: &[Setting],
    ) -> Result<Circuit, InputError> {
        let mut document = self.document.clone();
        for s in settings {
            if let Some(slot) = value_at_mut(&mut document, &s.path) {
                *slot = s.value.clone();
            } else {
                return Err(InputError::located(
                    &self.file,
                    &self.text,
                    &s.path,
                    format!("`{}` is not in the file", s.name),
                ));
            }
        }
        let raw = quantity::allowing_tolerances(|| RawCircuit::deserialize(&document));
        let raw = match raw {
            Ok(raw) => raw,
            Err(e) => {
                if settings.is_empty() {
                    // the text's own parser locates the fault
                    super::parse_raw(&self.text, &self.file)?;
                }
                let path = settings.first().map(|s| s.path.clone()).unwrap_or_default();
                return Err(InputError::located(
                    &self.file,
                    &self.text,
                    &path,
                    format!("{e}{}", described(settings)),
                ));
            }
        };
        circuit_at(&document, raw, &self.text, &self.file, point).map_err(|e| {
            let InputError::Invalid(mut located) = e else {
                return e;
            };
            let hit = settings.iter().find(|s| {
                let p = s.path.to_string();
                located.path == p
                    || located.path.starts_with(&format!("{p}."))
                    || located.message.contains(&format!("`{p}`"))
            });
            match hit {
                Some(s) => {
                    located
                        .message
                        .push_str(&described(std::slice::from_ref(s)));
                    // an error the point evaluator moved to an envelope key,
                    // whose own key is the set value (or inside it), belongs
                    // at the set value's line: the point stays named in words
                    let p = s.path.to_string();
                    let exact = format!(" (at `{p}` in the circuit)");
                    let inside = ["`", ".", "["]
                        .iter()
                        .any(|end| located.message.contains(&format!("(at `{p}{end}")));
                    if inside && located.path != p {
                        let message = located.message.replacen(&exact, "", 1);
                        return InputError::located(&self.file, &self.text, &s.path, message);
                    }
                }
                None if !settings.is_empty() => located.message.push_str(&described(settings)),
                None => {}
            }
            InputError::Invalid(located)
        })
    }

    /// The value a target names (`SECTION.KEY`, see the module docs).
    ///
    /// # Errors
    /// A message naming what is wrong: no such section, no such key written
    /// in the file, or a value that is not a number.
    pub fn target(&self, spec: &str) -> Result<Target, String> {
        let spec = spec.trim();
        let mut found = None;
        for (i, _) in spec.match_indices('.') {
            if let Some((label, base)) = self.section(&spec[..i]) {
                found = Some((label, base, &spec[i + 1..]));
                break;
            }
        }
        let Some((label, base, rest)) = found else {
            return Err(format!(
                "`{spec}`: write SECTION.KEY, where SECTION is an element's name, `fluid`, a pump's name (or `pump`) or a tap's name, and KEY one of its numeric keys; no element, pump or tap is called `{}`",
                spec.rsplit_once('.').map_or(spec, |(s, _)| s)
            ));
        };
        let keys = parse_keys(rest).ok_or_else(|| format!("`{spec}`: `{rest}` is not a key"))?;
        let mut path = base;
        path.0.extend(keys.0);
        let value = value_at(&self.document, &path).ok_or_else(|| {
            format!(
                "`{spec}`: `{label}` has no `{rest}` written in the file; a value is varied from the one the file gives, so write it there first"
            )
        })?;
        let written = numeric(value).ok_or_else(|| {
            format!(
                "`{spec}`: `{rest}` of `{label}` is not a numeric value (it is {})",
                describe_value(value)
            )
        })?;
        let target = Target {
            name: format!("{label}.{rest}"),
            path,
            written,
        };
        // a count (teeth, harmonics, ...) takes whole numbers only: the file
        // read with a fraction there says so by its type
        let mut probe = self.document.clone();
        if let Some(slot) = value_at_mut(&mut probe, &target.path) {
            *slot = target.setting(target.written.number + 0.5, "").value;
            if let Err(e) = quantity::allowing_tolerances(|| RawCircuit::deserialize(&probe)) {
                let e = e.to_string();
                if e.contains("expected u32") || e.contains("expected u64") {
                    return Err(format!(
                        "`{spec}`: `{rest}` of `{label}` is a count (a whole number), which cannot be varied continuously"
                    ));
                }
            }
        }
        Ok(target)
    }

    /// Why the circuit as written, with `settings` (the first sets
    /// `target`), refuses `target` at its own key: a value outside what
    /// that key takes (a length not above zero, a value beyond its
    /// plausible range, or one that disagrees with the other values as set).
    /// `None` when the circuit takes it, or refuses it only at another key.
    pub fn refusal(&self, target: &Target, settings: &[Setting]) -> Option<InputError> {
        let e = self.circuit(&OperatingPoint::default(), settings).err()?;
        let InputError::Invalid(located) = &e else {
            return Some(e);
        };
        let p = target.path.to_string();
        let own = located.path == p
            || located.path.starts_with(&format!("{p}."))
            || located.path.starts_with(&format!("{p}["));
        own.then_some(e)
    }

    /// Every value of the file written with a tolerance, in the order of the
    /// file (fluid, pumps, elements, taps).
    ///
    /// # Errors
    /// [`InputError`] located at a tolerance in the `envelope` section (its
    /// levels and load-case values are points of the envelope, not uncertain
    /// values).
    pub fn uncertain(&self) -> Result<Vec<Uncertain>, InputError> {
        let mut out = Vec::new();
        let Some(map) = self.document.as_mapping() else {
            return Ok(out);
        };
        for (key, value) in map {
            let Some(key) = key.as_str() else { continue };
            let root = KeyPath::root().key(key);
            match key {
                "fluid" => self.walk(value, &root, "fluid", &mut out),
                "pump" => {
                    let label = name_of(value).unwrap_or_else(|| "pump".into());
                    self.walk(value, &root, &label, &mut out);
                }
                "pumps" | "elements" | "taps" => {
                    for (i, item) in value.as_sequence().into_iter().flatten().enumerate() {
                        let label = name_of(item).unwrap_or_else(|| format!("pump {}", i + 1));
                        self.walk(item, &root.index(i), &label, &mut out);
                    }
                }
                _ => {
                    let mut elsewhere = Vec::new();
                    self.walk(value, &root, key, &mut elsewhere);
                    if let Some(u) = elsewhere.first() {
                        return Err(InputError::located(
                            &self.file,
                            &self.text,
                            &u.target.path,
                            "a tolerance here is not used: tolerances belong on the circuit's values (fluid, pumps, elements, taps), not on the envelope's points",
                        ));
                    }
                }
            }
        }
        Ok(out)
    }

    /// The pumps given by a source file: their index in the circuit, name,
    /// and the file's path (relative to the circuit file's folder).
    pub fn source_files(&self) -> Vec<(usize, String, std::path::PathBuf)> {
        let base = std::path::Path::new(&self.file)
            .parent()
            .map(std::path::Path::to_path_buf)
            .unwrap_or_default();
        let pumps: Vec<(&Value, String)> =
            match (self.document.get("pump"), self.document.get("pumps")) {
                (Some(p), _) => vec![(p, name_of(p).unwrap_or_else(|| "pump".into()))],
                (None, Some(list)) => list
                    .as_sequence()
                    .into_iter()
                    .flatten()
                    .enumerate()
                    .map(|(i, p)| (p, name_of(p).unwrap_or_else(|| format!("pump {}", i + 1))))
                    .collect(),
                _ => Vec::new(),
            };
        pumps
            .into_iter()
            .enumerate()
            .filter_map(|(i, (p, name))| {
                let f = p.get("source_file")?.as_str()?;
                Some((i, name, base.join(f)))
            })
            .collect()
    }

    fn walk(&self, value: &Value, path: &KeyPath, label: &str, out: &mut Vec<Uncertain>) {
        match value {
            Value::Mapping(m) => {
                for (k, v) in m {
                    let Some(k) = k.as_str() else { continue };
                    if TEXT_KEYS.contains(&k) {
                        continue;
                    }
                    self.walk(v, &path.key(k), &format!("{label}.{k}"), out);
                }
            }
            Value::Sequence(items) => {
                for (i, v) in items.iter().enumerate() {
                    self.walk(v, &path.index(i), &format!("{label}[{i}]"), out);
                }
            }
            Value::String(s) => {
                if quantity::split_tolerance(s).1.is_none() {
                    return;
                }
                if let Ok(written) = quantity::written(s, None) {
                    out.push(Uncertain {
                        target: Target {
                            name: label.to_string(),
                            path: path.clone(),
                            written,
                        },
                    });
                }
            }
            _ => {}
        }
    }

    /// The section a target's first part names: its label and path.
    fn section(&self, name: &str) -> Option<(String, KeyPath)> {
        let root = KeyPath::root();
        let doc = &self.document;
        let named = |list: &str, default: &dyn Fn(usize) -> Option<String>| {
            doc.get(list)?
                .as_sequence()?
                .iter()
                .enumerate()
                .find(|(i, item)| name_of(item).or_else(|| default(*i)).as_deref() == Some(name))
                .map(|(i, _)| (name.to_string(), root.key(list).index(i)))
        };
        if let Some(found) = named("elements", &|_| None) {
            return Some(found);
        }
        if name == "fluid" && doc.get("fluid").is_some() {
            return Some(("fluid".into(), root.key("fluid")));
        }
        if let Some(pump) = doc.get("pump")
            && (name == "pump" || name_of(pump).as_deref() == Some(name))
        {
            return Some((name.to_string(), root.key("pump")));
        }
        if let Some(found) = named("pumps", &|i| Some(format!("pump {}", i + 1))) {
            return Some(found);
        }
        if name == "pump"
            && let Some([_]) = doc
                .get("pumps")
                .and_then(Value::as_sequence)
                .map(Vec::as_slice)
        {
            return Some(("pump".into(), root.key("pumps").index(0)));
        }
        named("taps", &|_| None)
    }
}

/// What settings were made, for messages: ` (with `x` set to 1.2 GPa: a
/// Monte Carlo draw)`.
fn described(settings: &[Setting]) -> String {
    if settings.is_empty() {
        return String::new();
    }
    let parts: Vec<String> = settings
        .iter()
        .take(6)
        .map(|s| format!("`{}` set to {}", s.name, describe_value(&s.value)))
        .collect();
    let more = if settings.len() > 6 { ", …" } else { "" };
    format!(" (with {}{more}: {})", parts.join(", "), settings[0].why)
}

/// A set value for a message, its number to 6 significant digits (the
/// value itself keeps every digit: `0.6400000000000001 GPa` reads `0.64 GPa`).
fn describe_value(v: &Value) -> String {
    let short = |x: f64| crate::units::format_sig(x, 6);
    match v {
        Value::String(s) => match numeric(v) {
            Some(w) if w.number.is_finite() && w.tolerance.is_none() => {
                format!("`{}`", format!("{} {}", short(w.number), w.unit).trim_end())
            }
            _ => format!("`{s}`"),
        },
        Value::Number(n) => n.as_f64().map_or_else(|| n.to_string(), short),
        Value::Bool(b) => format!("`{b}`"),
        Value::Mapping(_) => "a mapping".into(),
        Value::Sequence(_) => "a list".into(),
        _ => "empty".into(),
    }
}

/// A value that is a number, or a number with a unit (and tolerance).
fn numeric(v: &Value) -> Option<Written> {
    match v {
        Value::Number(n) => n.as_f64().map(|number| Written {
            number,
            unit: String::new(),
            tolerance: None,
        }),
        Value::String(s) => quantity::written(s, None).ok(),
        _ => None,
    }
}

fn name_of(item: &Value) -> Option<String> {
    item.get("name").and_then(Value::as_str).map(str::to_string)
}

/// `source_impedance.volume`, `flow_ripple[0].amplitude` → key path.
fn parse_keys(text: &str) -> Option<KeyPath> {
    let mut path = KeyPath::root();
    for part in text.split('.') {
        let (key, mut rest) = part.split_once('[').map_or((part, ""), |(k, r)| (k, r));
        if key.is_empty() {
            return None;
        }
        path = path.key(key);
        while !rest.is_empty() {
            let (index, after) = rest.split_once(']')?;
            path = path.index(index.trim().parse().ok()?);
            rest = after.strip_prefix('[').unwrap_or(after);
            if !after.is_empty() && !after.starts_with('[') {
                return None;
            }
        }
    }
    Some(path)
}

fn value_at<'v>(doc: &'v Value, path: &KeyPath) -> Option<&'v Value> {
    let mut v = doc;
    for seg in &path.0 {
        v = match seg {
            PathSegment::Key(k) => v.as_mapping()?.get(k.as_str())?,
            PathSegment::Index(i) => v.as_sequence()?.get(*i)?,
        };
    }
    Some(v)
}

fn value_at_mut<'v>(doc: &'v mut Value, path: &KeyPath) -> Option<&'v mut Value> {
    let mut v = doc;
    for seg in &path.0 {
        v = match seg {
            PathSegment::Key(k) => v.as_mapping_mut()?.get_mut(k.as_str())?,
            PathSegment::Index(i) => v.as_sequence_mut()?.get_mut(*i)?,
        };
    }
    Some(v)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::quantity::Spread;

    const TEXT: &str = "\
title: settings test
fluid:
  density: 870 kg/m3
  bulk_modulus: 1.5 GPa ± 10 %
  viscosity: 32 cSt
line_model: lossless
pump:
  name: main
  node: p
  speed: 1500 rpm
  pumping_elements: 9
  flow_ripple:
    - {harmonic: 1, amplitude: 1 L/min}
  source_impedance:
    volume: 0.2 L, u = 0.02 L
elements:
  - name: line.a
    kind: tube
    from: p
    to: q
    length: 2 m
    bore: 20 mm
    rigid: true
  - {name: end, kind: closed_end, at: q}
taps:
  - {name: far, node: q}
";

    fn template() -> CircuitTemplate {
        CircuitTemplate::new(TEXT, "t.yaml").unwrap()
    }

    #[test]
    fn targets_name_elements_with_dots_the_fluid_and_pumps() {
        let t = template();
        let length = t.target("line.a.length").unwrap();
        assert_eq!(length.path.to_string(), "elements[0].length");
        assert_eq!(
            (length.written.number, length.written.unit.as_str()),
            (2.0, "m")
        );
        let b = t.target("fluid.bulk_modulus").unwrap();
        assert_eq!(b.written.unit, "GPa");
        assert!(b.written.tolerance.is_some());
        for spec in [
            "pump.source_impedance.volume",
            "main.source_impedance.volume",
        ] {
            assert_eq!(
                t.target(spec).unwrap().path.to_string(),
                "pump.source_impedance.volume"
            );
        }
        assert_eq!(
            t.target("main.flow_ripple[0].amplitude")
                .unwrap()
                .path
                .to_string(),
            "pump.flow_ripple[0].amplitude"
        );
    }

    #[test]
    fn bad_targets_say_what_is_wrong() {
        let t = template();
        let e = t.target("nothing.length").unwrap_err();
        assert!(
            e.contains("no element, pump or tap is called `nothing`"),
            "{e}"
        );
        let e = t.target("line.a.wall").unwrap_err();
        assert!(e.contains("has no `wall` written"), "{e}");
        let e = t.target("line.a.rigid").unwrap_err();
        assert!(e.contains("not a numeric value"), "{e}");
        let e = t.target("far.node").unwrap_err();
        assert!(e.contains("not a numeric value"), "{e}");
    }

    // A quarter-wave line closed at its far end, lossless and rigid: its
    // wave speed is c = √(B/ρ) (Kinsler et al., *Fundamentals of
    // Acoustics*, the plane-wave speed in a fluid), so setting B to 1.8 GPa
    // must give exactly √(1.8e9/870) m/s.
    #[test]
    fn a_setting_is_read_as_if_written_in_the_file() {
        let t = template();
        let b = t.target("fluid.bulk_modulus").unwrap();
        let c = t
            .circuit(&OperatingPoint::default(), &[b.setting(1.8, "a test")])
            .unwrap();
        assert!((c.fluid.bulk_modulus_pa - 1.8e9).abs() < 1e-3);
        let line = c.elements[0].kind.line().unwrap();
        let c0 = line.properties.wave_speed_m_s();
        assert!((c0 - (1.8e9f64 / 870.0).sqrt()).abs() < 1e-9 * c0, "{c0}");
        // the file's own value when nothing is set
        let c = t.circuit(&OperatingPoint::default(), &[]).unwrap();
        assert!((c.fluid.bulk_modulus_pa - 1.5e9).abs() < 1e-3);
    }

    #[test]
    fn an_invalid_setting_is_located_and_explained() {
        let t = template();
        let len = t.target("line.a.length").unwrap();
        let e = t
            .circuit(
                &OperatingPoint::default(),
                &[len.setting(-1.0, "a Monte Carlo draw")],
            )
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("t.yaml:21:5: elements[0].length"), "{e}");
        assert!(
            e.contains("`line.a.length` set to `-1 m`: a Monte Carlo draw"),
            "{e}"
        );
        // a drawn value is shown to 6 significant digits, not every digit
        let e = t
            .circuit(
                &OperatingPoint::default(),
                &[len.setting(-0.1 - 0.2, "a Monte Carlo draw")],
            )
            .unwrap_err()
            .to_string();
        assert!(e.contains("set to `-0.3 m`"), "{e}");
    }

    #[test]
    fn tolerances_are_found_with_their_names() {
        let t = template();
        let u = t.uncertain().unwrap();
        let names: Vec<&str> = u.iter().map(|u| u.target.name.as_str()).collect();
        assert_eq!(
            names,
            ["fluid.bulk_modulus", "main.source_impedance.volume"]
        );
        let tb = u[0].target.written.tolerance.unwrap();
        assert_eq!(tb.spread, Spread::Limits);
        assert!((tb.amount - 0.15).abs() < 1e-15);
        let tv = u[1].target.written.tolerance.unwrap();
        assert_eq!(tv.spread, Spread::Standard);
        assert!((tv.amount - 0.02).abs() < 1e-15);
        let with_envelope = format!("{TEXT}envelope:\n  pressures: [10 bar ± 1 bar]\n");
        let t = CircuitTemplate::new(&with_envelope, "e.yaml").unwrap();
        let e = t.uncertain().unwrap_err().to_string();
        assert!(
            e.contains("envelope.pressures[0]") && e.contains("not used"),
            "{e}"
        );
    }
}

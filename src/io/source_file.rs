//! Pump source files: a pump's Norton parameters per harmonic, as estimated
//! on a bench (`ripline fit --source-out`) or typed in from a datasheet, and
//! read by circuit files through `pump.source_file`; at one operating
//! condition, or a map of several (speeds × mean pressures).
//!
//! ```yaml
//! # ripline pump source
//! pump: bench pump A           # a name
//! speed: 1500 rpm              # shaft speed of the measurement
//! pressure: 100 bar            # optional: mean outlet pressure (gauge)
//! oil: ISO VG 46               # optional test conditions: the oil,
//! temperature: 50 degC         #   its temperature
//! pumping_elements: 9
//! harmonics:
//!   - harmonic: 1
//!     flow_amplitude: 1.2e-5        # m³/s, peak (units allowed)
//!     flow_phase: 12.5 deg
//!     impedance_amplitude: 1.1e10   # Pa·s/m³
//!     impedance_phase: -87.0 deg
//!     flow_uncertainty: 2e-7        # optional, m³/s
//!     impedance_uncertainty: 3e8    # optional, Pa·s/m³
//!     status: ill_conditioned       # optional: estimated (default), extrapolated,
//!                                   # ill_conditioned, unstable
//!     note: "…"                     # optional: why, and the bias to expect
//! ```
//!
//! A map lists its conditions under `conditions`, each with `speed`,
//! `pressure` (both required), the optional `oil`, `temperature` and
//! `origin`, and its `harmonics` (the same orders in every condition).
//! Conditions must form a full grid of speeds × mean pressures, no two at
//! one point (within the tolerances of [`crate::source::map`]). Circuits
//! evaluate a map at their operating point ([`crate::source::map`]).
//!
//! A harmonic whose status is not `estimated` is still used by circuits,
//! with a warning (see [`source_file_notes`](super::circuit_file::source_file_notes)).
//!
//! A file of one condition (or of one speed) is used as before: the flow
//! ripple scaled in proportion to speed, the impedance a table against
//! frequency k·f_p at the measured speed, interpolated between harmonics.

use super::InputError;
use super::locate::KeyPath;
use super::quantity::{self as q, Q};
use crate::C64;
use crate::estimate::fit::HarmonicStatus;
use crate::source::map::{self, MapError, MapPoint, SourceMap};
use crate::source::{FlowHarmonic, FlowRipple, ImpedanceTable, SourceImpedance};
use serde::Deserialize;
use std::io::Write;
use std::path::Path;

/// One harmonic of a pump source.
#[derive(Debug, Clone, PartialEq)]
pub struct SourceHarmonic {
    /// Harmonic order k of the pumping frequency.
    pub order: u32,
    /// Source flow ripple Qs (peak phasor) in m³/s.
    pub flow: C64,
    /// Source impedance Zs in Pa·s/m³.
    pub impedance: C64,
    /// Standard uncertainty of |Qs| in m³/s, if known.
    pub flow_uncertainty: Option<f64>,
    /// Standard uncertainty of |Zs| in Pa·s/m³, if known.
    pub impedance_uncertainty: Option<f64>,
    /// How far the estimate can be trusted (from the bench fit).
    pub status: HarmonicStatus,
    /// Why, and the bias to expect, if the status is not `estimated`.
    pub note: Option<String>,
}

/// The test conditions of a measured condition, besides its speed.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct TestConditions {
    /// Mean outlet pressure (gauge) in Pa.
    pub pressure_pa: Option<f64>,
    /// The oil (a grade or a name).
    pub oil: Option<String>,
    /// Oil temperature in K.
    pub temperature_k: Option<f64>,
    /// Where the data come from (e.g. the bench file a fit read).
    pub origin: Option<String>,
}

/// A pump's Norton parameters per harmonic at one condition.
#[derive(Debug, Clone, PartialEq)]
pub struct PumpSource {
    /// The pump's name.
    pub name: String,
    /// Shaft speed of the data in rev/s.
    pub speed_rev_s: f64,
    /// Its standard uncertainty in rev/s, if known (written as a comment,
    /// and setting the digits the speed is written with).
    pub speed_uncertainty_rev_s: Option<f64>,
    /// Number of pumping elements (teeth or pistons).
    pub pumping_elements: u32,
    /// The harmonics, in increasing order.
    pub harmonics: Vec<SourceHarmonic>,
    /// Mean pressure, oil and temperature of the measurement.
    pub test: TestConditions,
}

impl PumpSource {
    /// Pumping frequency of the data in Hz.
    pub fn pumping_frequency_hz(&self) -> f64 {
        self.speed_rev_s * f64::from(self.pumping_elements)
    }

    /// The flow ripple as a harmonic table at the data's speed.
    pub fn flow_ripple(&self) -> FlowRipple {
        FlowRipple::Table {
            reference_speed_rev_s: self.speed_rev_s,
            harmonics: self
                .harmonics
                .iter()
                .map(|h| FlowHarmonic {
                    order: h.order,
                    amplitude_m3_s: h.flow.norm(),
                    phase_rad: h.flow.arg(),
                })
                .collect(),
        }
    }

    /// The source impedance as a table against frequency.
    ///
    /// # Errors
    /// A message if the table is not valid (see [`ImpedanceTable::new`]).
    pub fn source_impedance(&self) -> Result<SourceImpedance, String> {
        let fp = self.pumping_frequency_hz();
        let points: Vec<(f64, C64)> = self
            .harmonics
            .iter()
            .map(|h| (f64::from(h.order) * fp, h.impedance))
            .collect();
        ImpedanceTable::new(&points).map(SourceImpedance::Table)
    }

    /// "1500 rpm" or "1500 rpm, 100 bar".
    pub fn describe(&self) -> String {
        map::describe_point(self.speed_rev_s, self.test.pressure_pa)
    }

    fn orders(&self) -> Vec<u32> {
        self.harmonics.iter().map(|h| h.order).collect()
    }
}

/// A pump source file: one condition, or a map of several.
#[derive(Debug, Clone, PartialEq)]
pub struct SourceFile {
    /// The pump's name.
    pub name: String,
    /// Number of pumping elements.
    pub pumping_elements: u32,
    /// The conditions, in file order (each with the name and number of
    /// pumping elements above).
    pub conditions: Vec<PumpSource>,
}

impl SourceFile {
    /// A file of the one condition `source`.
    pub fn single(source: PumpSource) -> Self {
        SourceFile {
            name: source.name.clone(),
            pumping_elements: source.pumping_elements,
            conditions: vec![source],
        }
    }

    /// The condition, if the file holds only one.
    pub fn only(&self) -> Option<&PumpSource> {
        match self.conditions.as_slice() {
            [one] => Some(one),
            _ => None,
        }
    }

    /// The conditions as a [`SourceMap`] (not yet at a pressure).
    ///
    /// # Errors
    /// [`MapError`] when the conditions do not form a map (see
    /// [`SourceMap::new`]).
    pub fn map(&self) -> Result<SourceMap, MapError> {
        let orders = self.conditions[0].orders();
        let points = self
            .conditions
            .iter()
            .map(|c| MapPoint {
                speed_rev_s: c.speed_rev_s,
                pressure_pa: c.test.pressure_pa,
                flow: c.harmonics.iter().map(|h| h.flow).collect(),
                impedance: c.harmonics.iter().map(|h| h.impedance).collect(),
            })
            .collect();
        SourceMap::new(self.pumping_elements, orders, points)
    }

    /// The file with `condition` added.
    ///
    /// # Errors
    /// A message when the condition is of a pump with another number of
    /// pumping elements, lists other harmonics, has no mean pressure, or
    /// repeats a condition of the file (within the map's tolerances; the
    /// message names the condition it repeats).
    pub fn with_condition(mut self, condition: PumpSource) -> Result<Self, String> {
        if condition.pumping_elements != self.pumping_elements {
            return Err(format!(
                "the file is of a pump with {} pumping elements; this condition's pump has {}",
                self.pumping_elements, condition.pumping_elements
            ));
        }
        if condition.orders() != self.conditions[0].orders() {
            return Err(format!(
                "this condition lists harmonics {} where the file's conditions list {}: every condition of a map lists the same harmonics (give the fit the same --harmonics)",
                orders_text(&condition.orders()),
                orders_text(&self.conditions[0].orders())
            ));
        }
        if let Some(i) = self
            .conditions
            .iter()
            .position(|c| c.test.pressure_pa.is_none())
        {
            return Err(format!(
                "condition {} of the file ({}) states no mean `pressure`: every condition of a map states one (add it to the file)",
                i + 1,
                self.conditions[i].describe()
            ));
        }
        if condition.test.pressure_pa.is_none() {
            return Err(
                "this condition has no mean pressure: give the bench file's fluid a `pressure` (the mean outlet pressure)".into(),
            );
        }
        if let Some(i) = self
            .conditions
            .iter()
            .position(|c| same_point(c, &condition))
        {
            return Err(format!(
                "this condition ({}) repeats condition {} of the file ({}): speeds within {:.0} % and mean pressures within {:.0} bar or {:.0} % are one point of the map",
                condition.describe(),
                i + 1,
                self.conditions[i].describe(),
                map::SPEED_TOLERANCE * 100.0,
                map::PRESSURE_TOLERANCE_PA / 1e5,
                map::PRESSURE_TOLERANCE * 100.0
            ));
        }
        self.conditions.push(condition);
        Ok(self)
    }
}

/// Whether two conditions are one point of a map.
fn same_point(a: &PumpSource, b: &PumpSource) -> bool {
    map::same_speed(a.speed_rev_s, b.speed_rev_s)
        && match (a.test.pressure_pa, b.test.pressure_pa) {
            (Some(x), Some(y)) => map::same_pressure(x, y),
            (None, None) => true,
            _ => false,
        }
}

/// "1, 2, 3" or "1 .. 10" for consecutive orders.
fn orders_text(orders: &[u32]) -> String {
    match orders {
        [] => "none".into(),
        [first, .., last] if orders.windows(2).all(|w| w[1] == w[0] + 1) => {
            format!("{first} .. {last}")
        }
        _ => orders
            .iter()
            .map(u32::to_string)
            .collect::<Vec<_>>()
            .join(", "),
    }
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a pump source: a mapping with pump, pumping_elements, and speed with harmonics (or conditions)"
)]
struct RawSource {
    pump: Option<String>,
    pumping_elements: u32,
    speed: Option<Q<q::ShaftSpeed>>,
    pressure: Option<Q<q::Pressure>>,
    oil: Option<String>,
    temperature: Option<Q<q::Temperature>>,
    origin: Option<String>,
    harmonics: Option<Vec<RawSourceHarmonic>>,
    conditions: Option<Vec<RawCondition>>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a condition: a mapping with speed, pressure and harmonics (and optionally oil, temperature, origin)"
)]
struct RawCondition {
    speed: Option<Q<q::ShaftSpeed>>,
    pressure: Option<Q<q::Pressure>>,
    oil: Option<String>,
    temperature: Option<Q<q::Temperature>>,
    origin: Option<String>,
    harmonics: Option<Vec<RawSourceHarmonic>>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a source harmonic: a mapping with harmonic, flow_amplitude, flow_phase, impedance_amplitude and impedance_phase"
)]
struct RawSourceHarmonic {
    harmonic: u32,
    flow_amplitude: Q<q::Flow>,
    flow_phase: Q<q::Angle>,
    impedance_amplitude: Q<q::Resistance>,
    impedance_phase: Q<q::Angle>,
    flow_uncertainty: Option<Q<q::Flow>>,
    impedance_uncertainty: Option<Q<q::Resistance>>,
    status: Option<String>,
    note: Option<String>,
}

/// Reads and validates a pump source file: one condition, or a map whose
/// conditions form a full grid.
///
/// # Errors
/// [`InputError`] naming the file, line and key at fault.
pub fn load_source_file(path: &Path) -> Result<SourceFile, InputError> {
    let text = super::read_text(path)?;
    parse_source(&text, &path.display().to_string())
}

/// The source file at `path` with `condition` added (see
/// [`SourceFile::with_condition`]); a map that is not yet a full grid is
/// accepted (conditions are added one fit at a time).
///
/// # Errors
/// [`InputError`] naming the file, line and key at fault: in the file as
/// [`load_source_file`], or the condition the new one repeats (or the
/// file's harmonics or pumping elements it does not match).
pub fn add_condition(path: &Path, condition: PumpSource) -> Result<SourceFile, InputError> {
    let text = super::read_text(path)?;
    let file = path.display().to_string();
    let source = parse(&text, &file, false)?;
    let root = KeyPath::root();
    let several = source.conditions.len() > 1;
    let at = |i: usize| {
        if several {
            root.key("conditions").index(i)
        } else {
            root.key("speed")
        }
    };
    let repeated = source
        .conditions
        .iter()
        .position(|c| same_point(c, &condition));
    let missing = source
        .conditions
        .iter()
        .position(|c| c.test.pressure_pa.is_none());
    source.with_condition(condition).map_err(|m| {
        let path = match (repeated, missing) {
            (Some(i), _) | (None, Some(i)) => at(i),
            (None, None) if m.contains("harmonics") => root.key(if text.contains("conditions:") {
                "conditions"
            } else {
                "harmonics"
            }),
            (None, None) => root.key("pumping_elements"),
        };
        InputError::located(&file, &text, &path, m)
    })
}

/// Parses and validates pump source text; `file` names it in messages.
///
/// # Errors
/// [`InputError`] naming the file, line and key at fault.
pub fn parse_source(text: &str, file: &str) -> Result<SourceFile, InputError> {
    parse(text, file, true)
}

/// The raw conditions and the key path of each: the file's own (one
/// condition) or `conditions[i]`.
type Conditions = Vec<(KeyPath, RawCondition)>;

fn parse(text: &str, file: &str, full_grid: bool) -> Result<SourceFile, InputError> {
    let raw: RawSource = super::parse_yaml(text, file)?;
    let root = KeyPath::root();
    let err = |path: &KeyPath, msg: String| InputError::located(file, text, path, msg);
    if !(1..=99).contains(&raw.pumping_elements) {
        return Err(err(
            &root.key("pumping_elements"),
            format!("must be between 1 and 99, found {}", raw.pumping_elements),
        ));
    }
    let conditions: Conditions = match raw.conditions {
        Some(list) => {
            let top = [
                ("speed", raw.speed.is_some()),
                ("pressure", raw.pressure.is_some()),
                ("oil", raw.oil.is_some()),
                ("temperature", raw.temperature.is_some()),
                ("origin", raw.origin.is_some()),
                ("harmonics", raw.harmonics.is_some()),
            ];
            if let Some((key, _)) = top.iter().find(|(_, given)| *given) {
                return Err(err(
                    &root.key(key),
                    format!(
                        "a file with `conditions` gives `{key}` in each condition, not at the top"
                    ),
                ));
            }
            if list.is_empty() {
                return Err(err(
                    &root.key("conditions"),
                    "no condition is listed".into(),
                ));
            }
            list.into_iter()
                .enumerate()
                .map(|(i, c)| (root.key("conditions").index(i), c))
                .collect()
        }
        None => vec![(
            root.clone(),
            RawCondition {
                speed: raw.speed,
                pressure: raw.pressure,
                oil: raw.oil,
                temperature: raw.temperature,
                origin: raw.origin,
                harmonics: raw.harmonics,
            },
        )],
    };
    let several = conditions.len() > 1;
    let name = raw.pump.unwrap_or_else(|| "pump".into());
    let mut out: Vec<PumpSource> = Vec::with_capacity(conditions.len());
    for (i, (cp, c)) in conditions.iter().enumerate() {
        let which = if several {
            format!("condition {} ", i + 1)
        } else {
            String::new()
        };
        let Some(speed) = c.speed.map(|s| s.si) else {
            return Err(err(
                cp,
                format!("{which}has no `speed` (e.g. `speed: 1500 rpm`)"),
            ));
        };
        if !(0.1..=1000.0).contains(&speed) {
            return Err(err(
                &cp.key("speed"),
                format!("speed {:.1} rpm is outside 6 .. 60000 rpm", speed * 60.0),
            ));
        }
        let pressure = c.pressure.map(|p| p.si);
        if several && pressure.is_none() {
            return Err(err(
                cp,
                format!(
                    "{which}has no mean `pressure` (e.g. `pressure: 100 bar`): every condition of a map states its speed and mean pressure"
                ),
            ));
        }
        if let Some(p) = pressure.filter(|p| !(-0.9e5..=1e8).contains(p)) {
            return Err(err(
                &cp.key("pressure"),
                format!(
                    "mean pressure {:.3} bar (gauge) is outside -0.9 .. 1000 bar: check the unit (a bare number is Pa)",
                    p / 1e5
                ),
            ));
        }
        let temperature = c.temperature.map(|t| t.si);
        if let Some(t) = temperature
            .filter(|t| !(crate::oil::celsius(-40.0)..=crate::oil::celsius(150.0)).contains(t))
        {
            return Err(err(
                &cp.key("temperature"),
                format!(
                    "{:.2} °C is outside -40 .. 150 °C: check the unit (a bare number is in K; write e.g. `50 degC`)",
                    t - crate::oil::ZERO_CELSIUS_K
                ),
            ));
        }
        if c.oil.as_deref().is_some_and(|o| o.trim().is_empty()) {
            return Err(err(&cp.key("oil"), "an oil name must not be empty".into()));
        }
        let Some(raw_harmonics) = &c.harmonics else {
            return Err(err(cp, format!("{which}has no `harmonics`")));
        };
        let harmonics = parse_harmonics(raw_harmonics, &cp.key("harmonics"), &err)?;
        let condition = PumpSource {
            name: name.clone(),
            speed_rev_s: speed,
            speed_uncertainty_rev_s: None,
            pumping_elements: raw.pumping_elements,
            harmonics,
            test: TestConditions {
                pressure_pa: pressure,
                oil: c.oil.clone(),
                temperature_k: temperature,
                origin: c.origin.clone(),
            },
        };
        if let Some(first) = out.first().filter(|f| f.orders() != condition.orders()) {
            return Err(err(
                &cp.key("harmonics"),
                format!(
                    "{which}lists harmonics {} where condition 1 lists {}: every condition of a map lists the same harmonics",
                    orders_text(&condition.orders()),
                    orders_text(&first.orders())
                ),
            ));
        }
        if let Some(j) = out.iter().position(|o| same_point(o, &condition)) {
            let line = super::locate::locate(text, &conditions[j].0)
                .map(|(l, _)| format!(", line {l}"))
                .unwrap_or_default();
            return Err(err(
                cp,
                format!(
                    "{which}({}) repeats condition {} ({}{line}): speeds within {:.0} % and mean pressures within {:.0} bar or {:.0} % are one point of the map",
                    condition.describe(),
                    j + 1,
                    out[j].describe(),
                    map::SPEED_TOLERANCE * 100.0,
                    map::PRESSURE_TOLERANCE_PA / 1e5,
                    map::PRESSURE_TOLERANCE * 100.0
                ),
            ));
        }
        out.push(condition);
    }
    let source = SourceFile {
        name,
        pumping_elements: raw.pumping_elements,
        conditions: out,
    };
    if full_grid && let Err(e) = source.map() {
        let path = match e.condition {
            Some(i) => conditions[i].0.clone(),
            None => root.key("conditions"),
        };
        return Err(err(&path, e.message));
    }
    Ok(source)
}

/// The harmonics of one condition, checked.
fn parse_harmonics(
    raw: &[RawSourceHarmonic],
    path: &KeyPath,
    err: &impl Fn(&KeyPath, String) -> InputError,
) -> Result<Vec<SourceHarmonic>, InputError> {
    if raw.is_empty() {
        return Err(err(path, "no harmonics are listed".into()));
    }
    let mut harmonics: Vec<SourceHarmonic> = Vec::with_capacity(raw.len());
    for (i, h) in raw.iter().enumerate() {
        let hp = path.index(i);
        if let Some(prev) = harmonics.last().filter(|p| h.harmonic <= p.order) {
            return Err(err(
                &hp.key("harmonic"),
                format!(
                    "harmonics must be listed in increasing order without repeats ({} after {})",
                    h.harmonic, prev.order
                ),
            ));
        }
        if h.harmonic == 0 || h.harmonic > 200 {
            return Err(err(
                &hp.key("harmonic"),
                format!(
                    "harmonic order must be between 1 and 200, found {}",
                    h.harmonic
                ),
            ));
        }
        if !(0.0..=10.0).contains(&h.flow_amplitude.si) {
            return Err(err(
                &hp.key("flow_amplitude"),
                format!(
                    "must be between 0 and 10 m³/s, found {}",
                    h.flow_amplitude.si
                ),
            ));
        }
        if h.impedance_amplitude.si <= 0.0 {
            return Err(err(
                &hp.key("impedance_amplitude"),
                format!(
                    "must be greater than zero, found {}",
                    h.impedance_amplitude.si
                ),
            ));
        }
        let status = match h.status.as_deref() {
            None => HarmonicStatus::Estimated,
            Some(s) => HarmonicStatus::from_key(s).ok_or_else(|| {
                err(
                    &hp.key("status"),
                    format!(
                        "unknown status `{s}`: write estimated, extrapolated, ill_conditioned or unstable"
                    ),
                )
            })?,
        };
        let bad = |v: &Option<Q<q::Flow>>| v.is_some_and(|u| u.si < 0.0);
        if bad(&h.flow_uncertainty) || h.impedance_uncertainty.is_some_and(|u| u.si < 0.0) {
            return Err(err(&hp, "uncertainties must not be negative".into()));
        }
        harmonics.push(SourceHarmonic {
            order: h.harmonic,
            flow: C64::from_polar(h.flow_amplitude.si, h.flow_phase.si),
            impedance: C64::from_polar(h.impedance_amplitude.si, h.impedance_phase.si),
            flow_uncertainty: h.flow_uncertainty.map(|q| q.si),
            impedance_uncertainty: h.impedance_uncertainty.map(|q| q.si),
            status,
            note: h.note.clone(),
        });
    }
    Ok(harmonics)
}

/// Writes a pump source file of one condition that [`load_source_file`]
/// reads back: see [`write_source_map`].
///
/// # Errors
/// The writer's I/O error.
pub fn write_source_file<W: Write>(
    source: &PumpSource,
    out: W,
    comment: &str,
) -> std::io::Result<()> {
    write_source_map(&SourceFile::single(source.clone()), out, comment)
}

/// Writes a pump source file that [`load_source_file`] reads back (one
/// condition as before; several under `conditions`): each value with the
/// digits its standard uncertainty supports (JCGM 100:2008 §7.2.6;
/// [`crate::estimate::uncertainty::scientific`]), and with all of a
/// double's digits where no uncertainty is known, so that such values read
/// back exactly. Phases take the digits of the amplitude's relative
/// uncertainty (for circular noise σ_φ = σ_A/|X| rad); the speed is written
/// in rpm, the mean pressure in bar, the temperature in °C.
///
/// # Errors
/// The writer's I/O error.
pub fn write_source_map<W: Write>(
    source: &SourceFile,
    mut out: W,
    comment: &str,
) -> std::io::Result<()> {
    writeln!(out, "# ripline pump source")?;
    for line in comment.lines() {
        writeln!(out, "# {line}")?;
    }
    writeln!(out, "pump: {}", yaml_string(&source.name))?;
    match source.only() {
        Some(one) => write_condition(&mut out, one, "", "", Some(source.pumping_elements)),
        None => {
            writeln!(out, "pumping_elements: {}", source.pumping_elements)?;
            writeln!(out, "conditions:")?;
            for c in &source.conditions {
                write_condition(&mut out, c, "  - ", "    ", None)?;
            }
            Ok(())
        }
    }
}

/// One condition: its first line starts with `first`, the others with
/// `indent`; `elements` is written after the speed (the one-condition form).
fn write_condition<W: Write>(
    out: &mut W,
    c: &PumpSource,
    first: &str,
    indent: &str,
    elements: Option<u32>,
) -> std::io::Result<()> {
    use crate::estimate::uncertainty::{fixed, scientific};
    let rpm_u = c.speed_uncertainty_rev_s.map(|u| 60.0 * u);
    write!(
        out,
        "{first}speed: {} rpm",
        fixed(60.0 * c.speed_rev_s, rpm_u)
    )?;
    match rpm_u {
        Some(u) => writeln!(out, "   # ± {u:.1e} rpm (standard uncertainty)")?,
        None => writeln!(out)?,
    }
    if let Some(p) = c.test.pressure_pa {
        writeln!(out, "{indent}pressure: {} bar", p / 1e5)?;
    }
    if let Some(o) = &c.test.oil {
        writeln!(out, "{indent}oil: {}", yaml_string(o))?;
    }
    if let Some(t) = c.test.temperature_k {
        let celsius = ((t - crate::oil::ZERO_CELSIUS_K) * 1e9).round() / 1e9;
        writeln!(out, "{indent}temperature: {celsius} degC")?;
    }
    if let Some(o) = &c.test.origin {
        writeln!(out, "{indent}origin: {}", yaml_string(o))?;
    }
    if let Some(z) = elements {
        writeln!(out, "{indent}pumping_elements: {z}")?;
    }
    writeln!(out, "{indent}harmonics:")?;
    // Amplitude and phase of a phasor; the phase's uncertainty is the
    // amplitude's over |X| (circular noise).
    let polar = |out: &mut W, name: &str, x: C64, u: Option<f64>, unit: &str| {
        writeln!(
            out,
            "{indent}    {name}_amplitude: {} {unit}",
            scientific(x.norm(), u)
        )?;
        let u_deg = u.map(|u| (u / x.norm()).to_degrees());
        writeln!(
            out,
            "{indent}    {name}_phase: {} deg",
            fixed(x.arg().to_degrees(), u_deg)
        )
    };
    for h in &c.harmonics {
        writeln!(out, "{indent}  - harmonic: {}", h.order)?;
        polar(out, "flow", h.flow, h.flow_uncertainty, "m3/s")?;
        polar(
            out,
            "impedance",
            h.impedance,
            h.impedance_uncertainty,
            "Pa.s/m3",
        )?;
        if let Some(u) = h.flow_uncertainty {
            writeln!(out, "{indent}    flow_uncertainty: {u:.1e} m3/s")?;
        }
        if let Some(u) = h.impedance_uncertainty {
            writeln!(out, "{indent}    impedance_uncertainty: {u:.1e} Pa.s/m3")?;
        }
        if h.status != HarmonicStatus::Estimated {
            writeln!(out, "{indent}    status: {}", h.status.key())?;
        }
        if let Some(n) = &h.note {
            writeln!(out, "{indent}    note: {}", yaml_string(n))?;
        }
    }
    Ok(())
}

/// A YAML double-quoted string.
fn yaml_string(s: &str) -> String {
    let mut out = String::from("\"");
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            c if c.is_control() => out.push_str(&format!("\\u{:04x}", c as u32)),
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn written_files_read_back_to_the_digits_their_uncertainty_supports() {
        let src = PumpSource {
            name: "bench \"A\"".into(),
            speed_rev_s: 25.0,
            speed_uncertainty_rev_s: None,
            pumping_elements: 9,
            harmonics: vec![
                SourceHarmonic {
                    order: 1,
                    flow: C64::new(1.2e-5, -3.4e-6),
                    impedance: C64::new(1.0e8, -1.13e10),
                    flow_uncertainty: Some(1e-7),
                    impedance_uncertainty: None,
                    status: HarmonicStatus::Estimated,
                    note: None,
                },
                SourceHarmonic {
                    order: 2,
                    flow: C64::new(-2e-6, 1e-6),
                    impedance: C64::new(5e7, -5.6e9),
                    flow_uncertainty: None,
                    impedance_uncertainty: Some(2e8),
                    status: HarmonicStatus::IllConditioned,
                    note: Some("cond = 14 \"high\"".into()),
                },
            ],
            test: TestConditions::default(),
        };
        let mut buf = Vec::new();
        write_source_file(&src, &mut buf, "test").unwrap();
        let text = String::from_utf8(buf).unwrap();
        let back = parse_source(&text, "t.yaml").unwrap().conditions[0].clone();
        assert_eq!(back.name, src.name);
        assert_eq!(back.speed_rev_s, src.speed_rev_s);
        // Without an uncertainty a value reads back exactly; with one, to
        // its rounding: at most 0.05 u in amplitude and 0.05 u/|X| rad in
        // phase (the uncertainty's second significant digit, JCGM 100:2008
        // §7.2.6), so within 0.1 u.
        let tol = |x: C64, u: Option<f64>| u.map_or(1e-15 * x.norm(), |u| 0.1 * u);
        for (a, b) in back.harmonics.iter().zip(&src.harmonics) {
            assert!((a.flow - b.flow).norm() <= tol(b.flow, b.flow_uncertainty));
            assert!(
                (a.impedance - b.impedance).norm() <= tol(b.impedance, b.impedance_uncertainty)
            );
            assert_eq!(a.flow_uncertainty, b.flow_uncertainty);
            assert_eq!(a.impedance_uncertainty, b.impedance_uncertainty);
            assert_eq!((a.status, &a.note), (b.status, &b.note));
        }
        assert!(text.contains("flow_amplitude: 1.247e-5 m3/s"), "{text}");
        // A measured speed: 25.0500342 ± 1.23e-5 rev/s is 1503.002052 ±
        // 7.4e-4 rpm, written to 1e-5 rpm.
        let measured = PumpSource {
            speed_rev_s: 25.050_034_2,
            speed_uncertainty_rev_s: Some(1.23e-5),
            ..src.clone()
        };
        let mut buf = Vec::new();
        write_source_file(&measured, &mut buf, "test").unwrap();
        let text = String::from_utf8(buf).unwrap();
        assert!(
            text.contains("speed: 1503.00205 rpm   # ± 7.4e-4 rpm (standard uncertainty)"),
            "{text}"
        );
        // The impedance table holds the values at k·f_p.
        let SourceImpedance::Table(t) = back.source_impedance().unwrap() else {
            panic!("a table")
        };
        assert_eq!(t.range_hz(), (225.0, 450.0));
        assert!((t.at(450.0) - src.harmonics[1].impedance).norm() < 0.1 * 2e8);
    }

    #[test]
    fn bad_source_files_are_located() {
        let text = "speed: 1500 rpm\npumping_elements: 9\nharmonics:\n  - harmonic: 2\n    flow_amplitude: 1e-5\n    flow_phase: 0\n    impedance_amplitude: 1e10\n    impedance_phase: 0\n  - harmonic: 1\n    flow_amplitude: 1e-5\n    flow_phase: 0\n    impedance_amplitude: 1e10\n    impedance_phase: 0\n";
        let msg = parse_source(text, "s.yaml").unwrap_err().to_string();
        assert!(
            msg.starts_with("s.yaml:9:") && msg.contains("increasing order"),
            "{msg}"
        );
    }
}

//! The measurement file: ripple measured at a circuit's taps, run by run.
//!
//! A YAML file of our own (README, "Measured against predicted") names, for
//! each *run*, the shaft speed, the envelope point (mean pressure, oil
//! temperature, load case) and the data: a time-series record (one column
//! per tap) or a spectra file, read with the same CSV readers and checks as
//! bench files (`io::records`). Record paths are relative to the
//! measurement file. Everything is checked against the circuit before any
//! record is read: taps the circuit does not have, points outside its
//! envelope, speeds outside its speed range are located errors.
//!
//! ```yaml
//! title: commissioning runs (an invented scenario)
//! harmonics: 8              # compared per tap (default: the circuit's, at most 50)
//! phases: shaft             # or `ignore`: amplitudes only
//! speed_tolerance: 2 %      # how far the true speed may be from the stated one
//! records: {unit: bar, sample_rate: 10 kHz}   # defaults for every run
//! runs:
//!   - name: idle
//!     speed: 1200 rpm
//!     pressure: 120 bar      # an envelope point (optional)
//!     records: idle.csv
//!     taps: [pump outlet, valve block]       # columns named as the taps
//!   - name: boom up
//!     speed: 1800 rpm
//!     case: boom raising
//!     spectra: boom_up.csv
//!     columns: {pump outlet: p1, valve block: p2}
//! ```

use super::InputError;
use super::locate::KeyPath;
use super::quantity::{self as q, Q};
use super::validate::{FileCheck, Res};
use crate::analysis::ripple::report_points;
use crate::envelope::OperatingPoint;
use crate::estimate::bench::DataFile;
use crate::io::CircuitFile;
use crate::source::shafts;
use crate::units::{Dimension, parse_quantity};
use serde::Deserialize;
use std::path::{Path, PathBuf};

/// Most runs in a measurement file.
pub const MAX_RUNS: usize = 200;
/// Most harmonics compared per tap.
pub const MAX_HARMONICS: u32 = 50;

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a measurement file: a mapping with runs (and title, harmonics, phases, speed_tolerance, records)"
)]
struct RawMeasurements {
    title: Option<String>,
    harmonics: Option<u32>,
    phases: Option<RawPhases>,
    speed_tolerance: Option<Q<q::Ratio>>,
    records: Option<RawDefaults>,
    runs: Vec<RawRun>,
}

#[derive(Debug, Clone, Copy, Deserialize)]
#[serde(rename_all = "snake_case")]
enum RawPhases {
    Shaft,
    Ignore,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a mapping with unit, sample_rate and time_column"
)]
struct RawDefaults {
    unit: Option<String>,
    sample_rate: Option<Q<q::Frequency>>,
    time_column: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a run: a mapping with name, speed, records (or spectra) and taps (or columns)"
)]
struct RawRun {
    name: String,
    speed: Q<q::ShaftSpeed>,
    shaft: Option<String>,
    pressure: Option<Q<q::Pressure>>,
    temperature: Option<Q<q::Temperature>>,
    case: Option<String>,
    records: Option<String>,
    spectra: Option<String>,
    unit: Option<String>,
    sample_rate: Option<Q<q::Frequency>>,
    time_column: Option<String>,
    taps: Option<Vec<String>>,
    columns: Option<serde_yaml::Mapping>,
}

/// How measured phases are compared.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Phases {
    /// The records' time zero is the shaft-angle reference (a trigger from
    /// the shaft): amplitudes and phases are compared.
    Shaft,
    /// The records have no shaft reference: amplitudes only.
    Ignore,
}

/// One measured run.
#[derive(Debug, Clone, PartialEq)]
pub struct Run {
    /// Its name.
    pub name: String,
    /// The stated shaft speed, rev/s.
    pub speed_rev_s: f64,
    /// The shaft it sets (index into `source::shafts` of the circuit).
    pub shaft: usize,
    /// The envelope point it was measured at.
    pub point: OperatingPoint,
    /// The taps measured, in the circuit's report order (indices into
    /// `analysis::ripple::report_points`), and their names.
    pub taps: Vec<(usize, String)>,
    /// The data, with one column (stem) per tap in `taps` order.
    pub data: DataFile,
    /// Where the run is in the file (for messages).
    pub path: KeyPath,
}

/// A measurement file, checked against its circuit.
#[derive(Debug, Clone, PartialEq)]
pub struct Measurements {
    /// The file as the user named it.
    pub file: String,
    /// Its text (for located messages about its runs).
    pub text: String,
    /// Its title.
    pub title: Option<String>,
    /// Harmonics (orders of the shaft fundamental) compared.
    pub harmonics: u32,
    /// How phases are compared.
    pub phases: Phases,
    /// Largest relative deviation of the true speed from the stated one.
    pub speed_tolerance: f64,
    /// The runs.
    pub runs: Vec<Run>,
}

impl Measurements {
    /// An error located at `path` in the measurement file.
    pub fn err(&self, path: &KeyPath, message: impl Into<String>) -> InputError {
        InputError::located(&self.file, &self.text, path, message)
    }
}

/// Reads a measurement file and checks it against `circuit`.
///
/// # Errors
/// [`InputError`] naming the file, the line and the key at fault.
pub fn load_measurements(path: &Path, circuit: &CircuitFile) -> Result<Measurements, InputError> {
    let text = super::read_text(path)?;
    parse_measurements(&text, &path.display().to_string(), circuit)
}

/// Parses measurement text; `file` names it and its folder is the base of
/// record paths.
///
/// # Errors
/// [`InputError`] naming the file, the line and the key at fault.
pub fn parse_measurements(
    text: &str,
    file: &str,
    circuit: &CircuitFile,
) -> Result<Measurements, InputError> {
    let raw: RawMeasurements = super::parse_yaml(text, file)?;
    let check = FileCheck { text, file };
    let root = KeyPath::root();
    let c = &circuit.circuit;
    let harmonics = match raw.harmonics {
        None => c.harmonics.min(MAX_HARMONICS),
        Some(n @ 1..=MAX_HARMONICS) => n,
        Some(n) => {
            return Err(check.err(
                &root.key("harmonics"),
                format!("must be between 1 and {MAX_HARMONICS}, found {n}"),
            ));
        }
    };
    let speed_tolerance = match raw.speed_tolerance {
        None => 0.05,
        Some(t) => check.percent_in_range(&root.key("speed_tolerance"), t.si, 1e-4, 0.2)?,
    };
    if raw.runs.is_empty() {
        return Err(check.err(&root.key("runs"), "no runs are listed"));
    }
    if raw.runs.len() > MAX_RUNS {
        return Err(check.err(
            &root.key("runs"),
            format!("at most {MAX_RUNS} runs, found {}", raw.runs.len()),
        ));
    }
    let base = Path::new(file)
        .parent()
        .map(Path::to_path_buf)
        .unwrap_or_default();
    let mut runs: Vec<Run> = Vec::with_capacity(raw.runs.len());
    for (i, r) in raw.runs.iter().enumerate() {
        let rp = root.key("runs").index(i);
        if r.name.trim().is_empty() {
            return Err(check.err(&rp.key("name"), "a run name must not be empty"));
        }
        if runs.iter().any(|o| o.name == r.name) {
            return Err(check.err(&rp.key("name"), format!("duplicate run name `{}`", r.name)));
        }
        runs.push(run(&check, &rp, r, raw.records.as_ref(), circuit, &base)?);
    }
    if let Some(asked) = raw.harmonics {
        harmonics_with_source_flow(&check, asked, &runs, circuit)?;
    }
    Ok(Measurements {
        file: file.to_string(),
        text: text.to_string(),
        title: raw.title,
        harmonics,
        phases: match raw.phases {
            None | Some(RawPhases::Shaft) => Phases::Shaft,
            Some(RawPhases::Ignore) => Phases::Ignore,
        },
        speed_tolerance,
        runs,
    })
}

/// Refuses harmonics asked beyond the highest at which a pump on a run's
/// shaft has source flow: the circuit predicts nothing there.
fn harmonics_with_source_flow(
    check: &FileCheck,
    asked: u32,
    runs: &[Run],
    circuit: &CircuitFile,
) -> Res<()> {
    let c = &circuit.circuit;
    let all = shafts(&c.pumps);
    let mut seen: Vec<usize> = Vec::new();
    for run in runs {
        if seen.contains(&run.shaft) {
            continue;
        }
        seen.push(run.shaft);
        let pumps = &all[run.shaft].pumps;
        let top = pumps
            .iter()
            .filter_map(|&i| (1..=asked).rev().find(|&k| c.pumps[i].has_source_flow(k)))
            .max()
            .unwrap_or(0);
        if top < asked {
            let names: Vec<String> = pumps
                .iter()
                .map(|&i| format!("`{}`", c.pumps[i].name))
                .collect();
            let (whose, has) = if names.len() == 1 {
                (format!("the circuit's pump {}", names[0]), "has")
            } else {
                (
                    format!("the circuit's pumps {} on one shaft", names.join(", ")),
                    "have",
                )
            };
            let message = if top == 0 {
                format!(
                    "{asked} harmonics asked, but {whose} {has} no source flow at any of them (run `{}`): the circuit predicts nothing to compare",
                    run.name
                )
            } else {
                format!(
                    "{asked} harmonics asked, but {whose} {has} source flow up to harmonic {top} only, so the circuit predicts nothing above it (run `{}`): give `harmonics: {top}` or fewer, or extend the pump's flow ripple",
                    run.name
                )
            };
            return Err(check.err(&KeyPath::root().key("harmonics"), message));
        }
    }
    Ok(())
}

fn run(
    check: &FileCheck,
    rp: &KeyPath,
    r: &RawRun,
    defaults: Option<&RawDefaults>,
    circuit: &CircuitFile,
    base: &Path,
) -> Res<Run> {
    let c = &circuit.circuit;
    let all = shafts(&c.pumps);
    let shaft = match &r.shaft {
        None => 0,
        Some(name) => all
            .iter()
            .position(|s| &s.name == name)
            .or_else(|| {
                let pump = c.pumps.iter().position(|p| &p.name == name)?;
                all.iter().position(|s| s.pumps.contains(&pump))
            })
            .ok_or_else(|| {
                check.err(
                    &rp.key("shaft"),
                    format!("the circuit has no shaft or pump called `{name}`"),
                )
            })?,
    };
    let speed = check.in_range(&rp.key("speed"), r.speed.si, 0.1, 1000.0, "rev/s")?;
    let range = circuit
        .envelope
        .as_ref()
        .and_then(|e| e.speed_range_rev_s)
        .or_else(|| all[shaft].speed_range_rev_s(&c.pumps));
    if let Some((lo, hi)) = range
        && !(lo * (1.0 - 1e-9)..=hi * (1.0 + 1e-9)).contains(&speed)
    {
        return Err(check.err(
            &rp.key("speed"),
            format!(
                "{:.1} rpm is outside the circuit's operating speed range {:.1} .. {:.1} rpm",
                speed * 60.0,
                lo * 60.0,
                hi * 60.0
            ),
        ));
    }
    let point = point(check, rp, r, circuit)?;
    // Taps and their columns.
    let points = report_points(c);
    let names: Vec<String> = points.iter().map(|t| t.name.clone()).collect();
    let unknown = |path: KeyPath, name: &str| {
        check.err(
            &path,
            format!(
                "the circuit has no tap called `{name}`; its taps are {}",
                names
                    .iter()
                    .map(|n| format!("`{n}`"))
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        )
    };
    let mut listed: Vec<(String, String, KeyPath)> = Vec::new();
    match (&r.taps, &r.columns) {
        (Some(taps), None) => {
            for (j, t) in taps.iter().enumerate() {
                listed.push((t.clone(), t.clone(), rp.key("taps").index(j)));
            }
        }
        (None, Some(cols)) => {
            for (t, col) in cols {
                let text = |v: &serde_yaml::Value| match v {
                    serde_yaml::Value::String(s) => Some(s.clone()),
                    serde_yaml::Value::Number(n) => Some(n.to_string()),
                    _ => None,
                };
                let (Some(t), Some(col)) = (text(t), text(col)) else {
                    return Err(check.err(
                        &rp.key("columns"),
                        "write `columns` as `{TAP: COLUMN, …}`, a tap's name and the record's column for it",
                    ));
                };
                let path = rp.key("columns").key(&t);
                listed.push((t, col, path));
            }
        }
        (Some(_), Some(_)) => {
            return Err(check.err(
                &rp.key("columns"),
                "give either `taps` (columns named as the taps) or `columns` (tap: column), not both",
            ));
        }
        (None, None) => {
            return Err(check.err(
                rp,
                "say which taps the run measured: `taps: [NAME, …]` (columns named as the taps) or `columns: {TAP: COLUMN, …}`",
            ));
        }
    }
    if listed.is_empty() {
        return Err(check.err(rp, "the run lists no taps"));
    }
    let mut taps: Vec<(usize, String)> = Vec::new();
    let mut columns: Vec<String> = Vec::new();
    for (name, col, path) in listed {
        let index = names
            .iter()
            .position(|n| *n == name)
            .ok_or_else(|| unknown(path.clone(), &name))?;
        if taps.iter().any(|(i, _)| *i == index) {
            return Err(check.err(&path, format!("tap `{name}` is listed twice")));
        }
        if let Some(j) = columns.iter().position(|c| *c == col) {
            return Err(check.err(
                &path,
                format!(
                    "the column `{col}` is given to both `{}` and `{name}`: a column holds the pressure of one tap",
                    taps[j].1
                ),
            ));
        }
        taps.push((index, name));
        columns.push(col);
    }
    // The data.
    let unit_text = r
        .unit
        .as_deref()
        .or(defaults.and_then(|d| d.unit.as_deref()));
    let unit_pa = match unit_text {
        None => {
            return Err(check.err(
                rp,
                "say the unit of the values: `unit: bar` or `unit: Pa` (here or under `records`)",
            ));
        }
        Some(u) => parse_quantity(&format!("1 {u}"), Dimension::Pressure)
            .map_err(|e| check.err(&rp.key("unit"), format!("the values' unit: {e}")))?,
    };
    let data = match (&r.records, &r.spectra) {
        (Some(f), None) => {
            let rate = r.sample_rate.or(defaults.and_then(|d| d.sample_rate));
            let sample_rate_hz = match rate {
                None => None,
                Some(v) => Some(check.in_range(&rp.key("sample_rate"), v.si, 10.0, 1e7, "Hz")?),
            };
            let time_column = r
                .time_column
                .clone()
                .or(defaults.and_then(|d| d.time_column.clone()));
            if sample_rate_hz.is_none() && time_column.is_none() {
                return Err(check.err(
                    rp,
                    "time-series records need `sample_rate` or `time_column` (here or under `records`)",
                ));
            }
            DataFile::TimeSeries {
                path: base.join(f),
                unit_pa,
                sample_rate_hz,
                time_column,
                tacho_column: None,
                columns,
            }
        }
        (None, Some(f)) => DataFile::Spectra {
            path: base.join(f),
            unit_pa,
            columns,
        },
        (Some(_), Some(_)) => {
            return Err(check.err(
                rp,
                "a run takes one data file: `records` (a time-series CSV) or `spectra` (a spectra CSV), not both",
            ));
        }
        (None, None) => {
            return Err(check.err(
                rp,
                "a run needs its data: either `records` (a time-series CSV) or `spectra` (a spectra CSV)",
            ));
        }
    };
    Ok(Run {
        name: r.name.clone(),
        speed_rev_s: speed,
        shaft,
        point,
        taps,
        data,
        path: rp.clone(),
    })
}

/// The run's envelope point, checked to lie within the circuit's envelope.
fn point(
    check: &FileCheck,
    rp: &KeyPath,
    r: &RawRun,
    circuit: &CircuitFile,
) -> Res<OperatingPoint> {
    let envelope = circuit.envelope.as_ref();
    let within =
        |key: &str, v: f64, levels: &[f64], own: Option<f64>, show: &dyn Fn(f64) -> String| {
            let lo = levels.iter().cloned().fold(f64::INFINITY, f64::min);
            let hi = levels.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
            if levels.is_empty() {
                if own.is_some_and(|o| (o - v).abs() <= 1e-9 * o.abs().max(1.0)) {
                    return Ok(None);
                }
                return Err(check.err(
                    &rp.key(key),
                    format!(
                        "{} is outside the circuit's envelope: its envelope lists no {key}s{}",
                        show(v),
                        own.map_or(String::new(), |o| format!(
                            " and the file's own is {}",
                            show(o)
                        ))
                    ),
                ));
            }
            let slack = 1e-9 * lo.abs().max(hi.abs()).max(1.0);
            if v < lo - slack || v > hi + slack {
                return Err(check.err(
                    &rp.key(key),
                    format!(
                        "{} is outside the circuit's envelope, {} .. {}",
                        show(v),
                        show(lo),
                        show(hi)
                    ),
                ));
            }
            Ok(Some(v))
        };
    let bar = |p: f64| format!("{} bar", crate::units::format_sig(p / 1e5, 6));
    let celsius = |t: f64| {
        format!(
            "{} °C",
            crate::units::format_sig(t - crate::oil::ZERO_CELSIUS_K, 6)
        )
    };
    let pressure_pa = match r.pressure {
        None => None,
        Some(p) => within(
            "pressure",
            p.si,
            envelope.map_or(&[][..], |e| &e.pressures_pa),
            circuit.pressure_pa,
            &bar,
        )?,
    };
    let temperature_k = match r.temperature {
        None => None,
        Some(t) => within(
            "temperature",
            t.si,
            envelope.map_or(&[][..], |e| &e.temperatures_k),
            circuit.temperature_k,
            &celsius,
        )?,
    };
    let case = match &r.case {
        None => None,
        Some(name) => {
            let cases: Vec<&str> = envelope
                .map(|e| e.cases.iter().map(|c| c.name.as_str()).collect())
                .unwrap_or_default();
            if !cases.contains(&name.as_str()) {
                return Err(check.err(
                    &rp.key("case"),
                    if cases.is_empty() {
                        format!("the circuit's envelope has no load cases, so no case `{name}`")
                    } else {
                        format!(
                            "the circuit's envelope has no load case `{name}`; its cases are {}",
                            cases
                                .iter()
                                .map(|c| format!("`{c}`"))
                                .collect::<Vec<_>>()
                                .join(", ")
                        )
                    },
                ));
            }
            Some(name.clone())
        }
    };
    Ok(OperatingPoint {
        pressure_pa,
        temperature_k,
        case,
    })
}

/// The data files a measurement file names (for the output checks).
pub fn data_paths(m: &Measurements) -> Vec<PathBuf> {
    m.runs.iter().map(|r| r.data.path().to_path_buf()).collect()
}

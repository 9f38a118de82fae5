//! The bench file: YAML text → validated [`Bench`].
//!
//! As for circuit files, the YAML is first read into `Raw*` structs (the
//! parser rejects unknown keys, wrong types and unknown units with their line
//! and column), then a checker validates values and cross-references and
//! builds the model in SI, with errors located by key path. Record and
//! spectra paths are resolved against the bench file's folder. The format is
//! documented in README.md ("Bench files").

use super::InputError;
use super::locate::KeyPath;
use super::quantity::{self as q, Q};
use super::validate::{FileCheck, Res, WallKeys, WallModel};
use crate::estimate::bench::{
    Bench, BenchPump, Condition, ConditionKind, DataFile, Extraction, ImpedanceFit, Method,
    ReferenceLine, SpeedOfSound, Synthesis, Termination, Transducer,
};
use crate::estimate::wavespeed::MAX_TRANSDUCERS;
use crate::fluid::Fluid;
use crate::line::LineModel;
use crate::source::{FlowHarmonic, FlowRipple, SourceImpedance};
use crate::units::{Dimension, parse_quantity};
use serde::Deserialize;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a bench: a mapping with fluid, pump, reference_line, transducers, method and conditions"
)]
struct RawBench {
    title: Option<String>,
    fluid: super::circuit_file::RawFluid,
    pump: RawPump,
    harmonics: Option<u32>,
    reference_line: RawLine,
    speed_of_sound: Option<RawSpeed>,
    transducers: Vec<RawTransducer>,
    method: RawMethod,
    impedance_fit: Option<RawImpedanceFit>,
    max_condition: Option<f64>,
    extraction: Option<RawExtraction>,
    records: Option<RawRecords>,
    conditions: Vec<RawCondition>,
    synthesis: Option<RawSynthesis>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a mapping with speed and pumping_elements"
)]
struct RawPump {
    name: Option<String>,
    speed: Q<q::ShaftSpeed>,
    pumping_elements: u32,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a mapping with bore and the wall (wall with material, or rigid: true)"
)]
struct RawLine {
    bore: Q<q::Length>,
    wall: Option<Q<q::Length>>,
    material: Option<String>,
    youngs_modulus: Option<Q<q::Modulus>>,
    poisson_ratio: Option<Q<q::Ratio>>,
    wall_model: Option<WallModel>,
    rigid: Option<bool>,
    model: Option<RawLineModel>,
}

#[derive(Debug, Clone, Copy, Deserialize)]
#[serde(rename_all = "snake_case")]
enum RawLineModel {
    Lossless,
    Laminar,
}

#[derive(Debug, Deserialize)]
#[serde(
    untagged,
    expecting = "`in_situ`, `from_fluid` or a speed such as \"1350 m/s\""
)]
enum RawSpeed {
    Number(f64),
    Text(String),
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields, expecting = "a mapping with name and position")]
struct RawTransducer {
    name: String,
    position: Q<q::Length>,
}

#[derive(Debug, Clone, Copy, Deserialize)]
#[serde(rename_all = "snake_case")]
enum RawMethod {
    TwoSystems,
    SecondarySource,
}

#[derive(Debug, Clone, Copy, Deserialize)]
#[serde(rename_all = "snake_case")]
enum RawImpedanceFit {
    Interpolate,
    CapacitanceLeakage,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields, expecting = "a mapping with speed_tolerance")]
struct RawExtraction {
    speed_tolerance: Option<Q<q::Ratio>>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a mapping with unit, sample_rate, time_column and tacho_column"
)]
struct RawRecords {
    unit: Option<String>,
    sample_rate: Option<Q<q::Frequency>>,
    time_column: Option<String>,
    tacho_column: Option<String>,
}

#[derive(Debug, Clone, Copy, PartialEq, Deserialize)]
#[serde(rename_all = "snake_case")]
enum RawKind {
    Pump,
    SecondarySource,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a condition: a mapping with name and records (or spectra)"
)]
struct RawCondition {
    name: String,
    kind: Option<RawKind>,
    line_length: Option<Q<q::Length>>,
    termination: Option<RawTermination>,
    secondary_source: Option<RawSecondary>,
    records: Option<String>,
    spectra: Option<String>,
    unit: Option<String>,
    sample_rate: Option<Q<q::Frequency>>,
    time_column: Option<String>,
    tacho_column: Option<String>,
    columns: Option<BTreeMap<String, String>>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a mapping with resistance and/or volume"
)]
struct RawTermination {
    resistance: Option<Q<q::Resistance>>,
    volume: Option<Q<q::Volume>>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a mapping with fundamental and optionally flow"
)]
struct RawSecondary {
    fundamental: Q<q::Frequency>,
    flow: Option<Q<q::Flow>>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a mapping with harmonic, amplitude and phase"
)]
struct RawHarmonic {
    harmonic: u32,
    amplitude: Q<q::Flow>,
    phase: Option<Q<q::Angle>>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a mapping with volume and optionally leakage_resistance"
)]
struct RawImpedance {
    volume: Q<q::Volume>,
    leakage_resistance: Option<Q<q::Resistance>>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a synthesis section: flow_ripple and source_impedance (or source_file), noise, seed, duration"
)]
struct RawSynthesis {
    flow_ripple: Option<Vec<RawHarmonic>>,
    source_impedance: Option<RawImpedance>,
    source_file: Option<String>,
    noise: Option<Q<q::Ratio>>,
    seed: Option<u64>,
    duration: Option<Q<q::Time>>,
    sample_rate: Option<Q<q::Frequency>>,
    speed_error: Option<Q<q::Ratio>>,
    mean_pressure: Option<Q<q::Pressure>>,
}

/// Reads and validates a bench file.
///
/// # Errors
/// [`InputError`] naming the file, the line and the key at fault.
pub fn load_bench(path: &Path) -> Result<Bench, InputError> {
    let text = super::read_text(path)?;
    parse_bench(&text, &path.display().to_string())
}

/// The test conditions a bench file's `fluid` section states (oil grade,
/// temperature, mean pressure), for the source file a fit writes. The file
/// is read again; [`load_bench`] has validated it.
///
/// # Errors
/// [`InputError`] when the file cannot be read or parsed.
pub fn test_conditions(path: &Path) -> Result<super::source_file::TestConditions, InputError> {
    let text = super::read_text(path)?;
    let raw: RawBench = super::parse_yaml(&text, &path.display().to_string())?;
    let (oil, temperature_k, pressure_pa) = raw.fluid.test_conditions();
    Ok(super::source_file::TestConditions {
        pressure_pa,
        oil,
        temperature_k,
        origin: None,
    })
}

/// Parses and validates bench text; `file` names it in messages and its
/// folder is the base of record paths.
///
/// # Errors
/// [`InputError`] naming the file, the line and the key at fault.
pub fn parse_bench(text: &str, file: &str) -> Result<Bench, InputError> {
    let raw: RawBench = super::parse_yaml(text, file)?;
    Checker(FileCheck { text, file }).bench(raw)
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
    fn base(&self) -> PathBuf {
        Path::new(self.file)
            .parent()
            .map(Path::to_path_buf)
            .unwrap_or_default()
    }

    fn pressure_unit(&self, path: &KeyPath, unit: &str) -> Res<f64> {
        parse_quantity(&format!("1 {unit}"), Dimension::Pressure)
            .map_err(|e| self.err(path, format!("the values' unit: {e}")))
    }

    fn bench(&self, raw: RawBench) -> Res<Bench> {
        let root = KeyPath::root();
        // The same fluid section as circuit files: explicit values, or an
        // oil grade at a temperature (and mean pressure, free air).
        let fluid = super::circuit_file::check_fluid(self.0, &root.key("fluid"), &raw.fluid)?;
        let pp = root.key("pump");
        let pump = BenchPump {
            name: raw.pump.name.clone().unwrap_or_else(|| "pump".into()),
            speed_rev_s: self.in_range(
                &pp.key("speed"),
                raw.pump.speed.si,
                0.1,
                1000.0,
                "rev/s",
            )?,
            pumping_elements: match raw.pump.pumping_elements {
                z @ 1..=99 => z,
                z => {
                    return Err(self.err(
                        &pp.key("pumping_elements"),
                        format!("must be between 1 and 99, found {z}"),
                    ));
                }
            },
        };
        let harmonics = match raw.harmonics {
            None => 10,
            Some(n @ 1..=50) => n,
            Some(n) => {
                return Err(self.err(
                    &root.key("harmonics"),
                    format!("must be between 1 and 50, found {n}"),
                ));
            }
        };
        let line = self.line(&root.key("reference_line"), &raw.reference_line)?;
        let transducers = self.transducers(&root, &raw.transducers)?;
        let speed_of_sound = match &raw.speed_of_sound {
            None if transducers.len() >= 3 => SpeedOfSound::InSitu,
            None => SpeedOfSound::FromFluid,
            Some(RawSpeed::Text(t)) if t == "in_situ" => SpeedOfSound::InSitu,
            Some(RawSpeed::Text(t)) if t == "from_fluid" => SpeedOfSound::FromFluid,
            Some(s) => {
                let sp = root.key("speed_of_sound");
                let v = match s {
                    RawSpeed::Number(v) => *v,
                    RawSpeed::Text(t) => parse_quantity(t, Dimension::Velocity).map_err(|e| {
                        self.err(&sp, format!("{e}; or write `in_situ` or `from_fluid`"))
                    })?,
                };
                SpeedOfSound::Fixed(self.in_range(&sp, v, 100.0, 3000.0, "m/s")?)
            }
        };
        if speed_of_sound == SpeedOfSound::InSitu && transducers.len() < 3 {
            return Err(self.err(
                &root.key("speed_of_sound"),
                format!(
                    "the speed of sound in situ needs at least three transducers, the bench has {}",
                    transducers.len()
                ),
            ));
        }
        let method = match (raw.method, raw.impedance_fit) {
            (RawMethod::TwoSystems, None) => Method::TwoSystems,
            (RawMethod::TwoSystems, Some(_)) => {
                return Err(self.err(
                    &root.key("impedance_fit"),
                    "`impedance_fit` applies only to `method: secondary_source`",
                ));
            }
            (RawMethod::SecondarySource, f) => Method::SecondarySource {
                impedance_fit: match f {
                    None | Some(RawImpedanceFit::Interpolate) => ImpedanceFit::Interpolate,
                    Some(RawImpedanceFit::CapacitanceLeakage) => ImpedanceFit::CapacitanceLeakage,
                },
            },
        };
        let max_condition = match raw.max_condition {
            None => 10.0,
            Some(v) => self.in_range(&root.key("max_condition"), v, 1.0, 1e6, "")?,
        };
        let extraction = match &raw.extraction {
            None => Extraction::default(),
            Some(e) => {
                let ep = root.key("extraction");
                let tol = match e.speed_tolerance {
                    None => 0.05,
                    Some(t) => {
                        self.percent_in_range(&ep.key("speed_tolerance"), t.si, 1e-4, 0.2)?
                    }
                };
                Extraction {
                    speed_tolerance: tol,
                }
            }
        };
        let defaults = raw.records.as_ref();
        if raw.conditions.is_empty() {
            return Err(self.err(&root.key("conditions"), "no test conditions are listed"));
        }
        let mut conditions: Vec<Condition> = Vec::new();
        for (i, c) in raw.conditions.iter().enumerate() {
            let cp = root.key("conditions").index(i);
            if conditions.iter().any(|o| o.name == c.name) {
                return Err(self.err(
                    &cp.key("name"),
                    format!("duplicate condition name `{}`", c.name),
                ));
            }
            conditions.push(self.condition(&cp, c, defaults, &transducers)?);
        }
        let pumps = conditions
            .iter()
            .filter(|c| c.kind == ConditionKind::Pump)
            .count();
        let secondaries = conditions.len() - pumps;
        match method {
            Method::TwoSystems if pumps < 2 || secondaries > 0 => {
                return Err(self.err(&root.key("conditions"), format!(
                    "`method: two_systems` needs at least two pump conditions (different downstream systems at one speed) and no secondary-source condition; found {pumps} pump and {secondaries} secondary-source conditions"
                )));
            }
            Method::SecondarySource { .. } if pumps < 1 || secondaries < 1 => {
                return Err(self.err(&root.key("conditions"), format!(
                    "`method: secondary_source` needs at least one pump condition and one secondary-source condition; found {pumps} and {secondaries}"
                )));
            }
            _ => {}
        }
        for (i, c) in conditions.iter().enumerate() {
            if let Some(len) = c.line_length_m {
                let last = transducers.last().map_or(0.0, |t| t.position_m);
                if len <= last {
                    return Err(self.err(
                        &root.key("conditions").index(i).key("line_length"),
                        format!(
                            "the line ({len} m) must reach beyond the last transducer ({last} m)"
                        ),
                    ));
                }
            }
        }
        let synthesis = match &raw.synthesis {
            None => None,
            Some(s) => Some(self.synthesis(&root.key("synthesis"), s, &fluid, &pump)?),
        };
        Ok(Bench {
            title: raw.title.clone(),
            fluid,
            pump,
            harmonics,
            line,
            transducers,
            speed_of_sound,
            method,
            max_condition,
            extraction,
            conditions,
            synthesis,
        })
    }

    fn line(&self, lp: &KeyPath, raw: &RawLine) -> Res<ReferenceLine> {
        let bore = self.in_range(&lp.key("bore"), raw.bore.si, 1e-3, 0.5, "m")?;
        let wall = self.wall(
            lp,
            &WallKeys {
                rigid: raw.rigid,
                wall: raw.wall.map(|w| w.si),
                material: raw.material.as_deref(),
                youngs_modulus: raw.youngs_modulus.map(|y| y.si),
                poisson_ratio: raw.poisson_ratio.map(|p| p.si),
                wall_model: raw.wall_model,
            },
            bore,
            "reference line",
        )?;
        Ok(ReferenceLine {
            radius_m: bore / 2.0,
            wall,
            model: match raw.model {
                None | Some(RawLineModel::Laminar) => LineModel::Laminar,
                Some(RawLineModel::Lossless) => LineModel::Lossless,
            },
        })
    }

    fn transducers(&self, root: &KeyPath, raw: &[RawTransducer]) -> Res<Vec<Transducer>> {
        let tp = root.key("transducers");
        if !(2..=MAX_TRANSDUCERS).contains(&raw.len()) {
            return Err(self.err(
                &tp,
                format!(
                    "a bench needs 2 to {MAX_TRANSDUCERS} transducers, found {}",
                    raw.len()
                ),
            ));
        }
        let mut out: Vec<Transducer> = Vec::new();
        for (i, t) in raw.iter().enumerate() {
            let p = tp.index(i);
            if t.name.trim().is_empty() {
                return Err(self.err(&p.key("name"), "a transducer name must not be empty"));
            }
            if out.iter().any(|o| o.name == t.name) {
                return Err(self.err(
                    &p.key("name"),
                    format!("duplicate transducer name `{}`", t.name),
                ));
            }
            let x = self.in_range(&p.key("position"), t.position.si, 0.0, 100.0, "m")?;
            if let Some(prev) = out.last().filter(|o| x <= o.position_m + 1e-6) {
                return Err(self.err(&p.key("position"), format!(
                    "transducers must be listed in increasing distance from the pump, at distinct positions ({x} m after {} m)",
                    prev.position_m
                )));
            }
            out.push(Transducer {
                name: t.name.clone(),
                position_m: x,
            });
        }
        Ok(out)
    }

    fn condition(
        &self,
        cp: &KeyPath,
        c: &RawCondition,
        defaults: Option<&RawRecords>,
        transducers: &[Transducer],
    ) -> Res<Condition> {
        if c.name.trim().is_empty() {
            return Err(self.err(&cp.key("name"), "a condition name must not be empty"));
        }
        let kind = match (c.kind.unwrap_or(RawKind::Pump), &c.secondary_source) {
            (RawKind::Pump, None) => ConditionKind::Pump,
            (RawKind::Pump, Some(_)) => {
                return Err(self.err(
                    &cp.key("secondary_source"),
                    "`secondary_source` needs `kind: secondary_source`",
                ));
            }
            (RawKind::SecondarySource, None) => {
                return Err(self.err(
                    cp,
                    "a secondary-source condition needs `secondary_source: {fundamental: …}`",
                ));
            }
            (RawKind::SecondarySource, Some(s)) => {
                let sp = cp.key("secondary_source");
                ConditionKind::SecondarySource {
                    fundamental_hz: self.in_range(
                        &sp.key("fundamental"),
                        s.fundamental.si,
                        1.0,
                        1e5,
                        "Hz",
                    )?,
                    flow_m3_s: match s.flow {
                        None => None,
                        Some(f) => {
                            Some(self.in_range(&sp.key("flow"), f.si, 1e-12, 1.0, "m³/s")?)
                        }
                    },
                }
            }
        };
        let line_length_m = match c.line_length {
            None => None,
            Some(l) => Some(self.in_range(&cp.key("line_length"), l.si, 1e-3, 1e3, "m")?),
        };
        let termination = match &c.termination {
            None => None,
            Some(t) => {
                let tp = cp.key("termination");
                Some(Termination {
                    resistance_pa_s_m3: match t.resistance {
                        None => None,
                        Some(r) => Some(self.in_range(
                            &tp.key("resistance"),
                            r.si,
                            1e3,
                            1e18,
                            "Pa·s/m³",
                        )?),
                    },
                    volume_m3: match t.volume {
                        None => None,
                        Some(v) => Some(self.in_range(&tp.key("volume"), v.si, 0.0, 10.0, "m³")?),
                    },
                })
            }
        };
        let unit_text = c
            .unit
            .as_deref()
            .or(defaults.and_then(|d| d.unit.as_deref()));
        let unit_pa = match unit_text {
            None => return Err(self.err(
                cp,
                "say the unit of the values: `unit: bar` or `unit: Pa` (here or under `records`)",
            )),
            Some(u) => self.pressure_unit(&cp.key("unit"), u)?,
        };
        let mut columns = Vec::with_capacity(transducers.len());
        let map = c.columns.clone().unwrap_or_default();
        for key in map.keys() {
            if !transducers.iter().any(|t| &t.name == key) {
                return Err(self.err(
                    &cp.key("columns"),
                    format!("`{key}` is not a transducer of the bench"),
                ));
            }
        }
        for t in transducers {
            columns.push(map.get(&t.name).cloned().unwrap_or_else(|| t.name.clone()));
        }
        let base = self.base();
        let data = match (&c.records, &c.spectra) {
            (Some(f), None) => {
                let sample_rate_hz = match c.sample_rate.or(defaults.and_then(|d| d.sample_rate)) {
                    None => None,
                    Some(r) => {
                        Some(self.in_range(&cp.key("sample_rate"), r.si, 10.0, 1e7, "Hz")?)
                    }
                };
                let time_column = c
                    .time_column
                    .clone()
                    .or(defaults.and_then(|d| d.time_column.clone()));
                if sample_rate_hz.is_none() && time_column.is_none() {
                    return Err(self.err(cp, "time-series records need `sample_rate` or `time_column` (here or under `records`)"));
                }
                let tacho_column = c
                    .tacho_column
                    .clone()
                    .or(defaults.and_then(|d| d.tacho_column.clone()));
                if let Some(tc) = &tacho_column
                    && (columns.contains(tc) || time_column.as_ref() == Some(tc))
                {
                    return Err(self.err(
                        &cp.key("tacho_column"),
                        format!(
                            "the tacho column `{tc}` is also a transducer's or the time column"
                        ),
                    ));
                }
                DataFile::TimeSeries {
                    path: base.join(f),
                    unit_pa,
                    sample_rate_hz,
                    time_column,
                    tacho_column,
                    columns,
                }
            }
            (None, Some(f)) => DataFile::Spectra {
                path: base.join(f),
                unit_pa,
                columns,
            },
            (Some(_), Some(_)) => {
                return Err(self.err(cp, "a condition takes one data file: `records` (a time-series CSV) or `spectra` (a spectra CSV), not both"));
            }
            (None, None) => {
                return Err(self.err(cp, "a condition needs its data: either `records` (a time-series CSV) or `spectra` (a spectra CSV)"));
            }
        };
        Ok(Condition {
            name: c.name.clone(),
            kind,
            line_length_m,
            termination,
            data,
        })
    }

    fn synthesis(
        &self,
        sp: &KeyPath,
        s: &RawSynthesis,
        fluid: &Fluid,
        pump: &BenchPump,
    ) -> Res<Synthesis> {
        let (flow_ripple, impedance) = match (&s.flow_ripple, &s.source_impedance, &s.source_file) {
            (Some(flow), Some(z), None) => {
                if flow.is_empty() {
                    return Err(self.err(&sp.key("flow_ripple"), "the flow ripple table is empty"));
                }
                let mut harmonics: Vec<FlowHarmonic> = Vec::new();
                for (i, h) in flow.iter().enumerate() {
                    let hp = sp.key("flow_ripple").index(i);
                    if h.harmonic == 0 || harmonics.iter().any(|o| o.order == h.harmonic) {
                        return Err(self.err(
                            &hp.key("harmonic"),
                            format!("harmonic {} is zero or listed twice", h.harmonic),
                        ));
                    }
                    harmonics.push(FlowHarmonic {
                        order: h.harmonic,
                        amplitude_m3_s: self.in_range(
                            &hp.key("amplitude"),
                            h.amplitude.si,
                            0.0,
                            10.0,
                            "m³/s",
                        )?,
                        phase_rad: h.phase.map_or(0.0, |p| p.si),
                    });
                }
                let zp = sp.key("source_impedance");
                let volume = self.in_range(&zp.key("volume"), z.volume.si, 0.0, 1.0, "m³")?;
                let leak = match z.leakage_resistance {
                    None => None,
                    Some(r) => Some(self.in_range(
                        &zp.key("leakage_resistance"),
                        r.si,
                        1e3,
                        1e20,
                        "Pa·s/m³",
                    )?),
                };
                (
                    FlowRipple::Table {
                        reference_speed_rev_s: pump.speed_rev_s,
                        harmonics,
                    },
                    SourceImpedance::Volume {
                        capacitance_m3_pa: volume / fluid.bulk_modulus_pa,
                        leakage_resistance_pa_s_m3: leak,
                    },
                )
            }
            (None, None, Some(f)) => {
                let file = super::source_file::load_source_file(&self.base().join(f))?;
                let Some(src) = file.only() else {
                    return Err(self.err(
                        &sp.key("source_file"),
                        format!(
                            "{f} is a source map of {} conditions: synthesis needs the source at one condition (a file of one condition)",
                            file.conditions.len()
                        ),
                    ));
                };
                let z = src
                    .source_impedance()
                    .map_err(|m| self.err(&sp.key("source_file"), m))?;
                (src.flow_ripple(), z)
            }
            _ => {
                return Err(self.err(sp, "give the known source as `flow_ripple` with `source_impedance`, or as a `source_file`"));
            }
        };
        let ratio =
            |key: &str, v: Option<Q<q::Ratio>>, lo: f64, hi: f64, default: f64| -> Res<f64> {
                match v {
                    None => Ok(default),
                    Some(v) if (lo..=hi).contains(&v.si) => Ok(v.si),
                    Some(v) => Err(self.err(
                        &sp.key(key),
                        format!("must be between {lo} and {hi}, found {}", v.si),
                    )),
                }
            };
        Ok(Synthesis {
            flow_ripple,
            impedance,
            noise: ratio("noise", s.noise, 0.0, 1.0, 0.0)?,
            seed: s.seed.unwrap_or(1),
            duration_s: match s.duration {
                None => 1.0,
                Some(d) => self.in_range(&sp.key("duration"), d.si, 1e-3, 600.0, "s")?,
            },
            sample_rate_hz: match s.sample_rate {
                None => None,
                Some(r) => Some(self.in_range(&sp.key("sample_rate"), r.si, 10.0, 1e7, "Hz")?),
            },
            speed_error: ratio("speed_error", s.speed_error, -0.1, 0.1, 0.0)?,
            mean_pressure_pa: s.mean_pressure.map_or(0.0, |p| p.si),
        })
    }
}

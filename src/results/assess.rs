//! `assess`: the circuit over its operating envelope, each limit's verdict
//! and the findings ranked by severity ([`crate::analysis::envelope`]).

use super::{Error, Input, Origin, Subject};
use crate::Circuit;
use crate::analysis::envelope::{
    AssessError, AssessSettings, Assessment, LimitedQuantity, Verdict, assess as run_assess,
    limited_worst_values,
};
use crate::elements::PRESSURE_VESSEL_CAUTION;
use crate::envelope::LimitKind;
use crate::envelope::{Envelope, OperatingPoint, TapLimits};
use crate::io::CircuitTemplate;
use crate::uncertainty::bands::{BandRequest, BandsInfo, OutputBand, propagate_at_points};
use serde::Serialize;

/// What to assess, resolved.
#[derive(Debug, Clone)]
pub struct AssessRequest {
    /// The speed range (rev/s) and where it came from; `None`: the swept
    /// shaft's `speed_range`.
    pub speed_range: Option<((f64, f64), Origin)>,
    /// The shaft swept (a shaft or pump name) and where it came from;
    /// `None`: the first pump's.
    pub shaft: Option<(String, Origin)>,
    /// Speeds of the grid and where the number came from.
    pub speed_points: (usize, Origin),
    /// Smallest rise of a crossing, dB, and where it came from.
    pub min_rise_db: (f64, Origin),
    /// How many findings the report shows.
    pub top: usize,
    /// Findings more than this many dB below their point's overall worst
    /// are left out of the report.
    pub floor_db: f64,
}

/// The result of `assess`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AssessReport {
    /// The circuit file.
    pub subject: Subject,
    /// Inputs: speed range, shaft, speed points, min rise, top, floor.
    pub inputs: Vec<Input>,
    /// The envelope as the file gives it (`None`: the file's own point).
    pub envelope: Option<Envelope>,
    /// The limits as the file gives them.
    pub limits: Vec<TapLimits>,
    /// The file's own mean pressure (gauge, Pa) and oil temperature (K),
    /// for the envelope columns of what the envelope does not vary.
    pub file_pressure_pa: Option<f64>,
    /// See `file_pressure_pa`.
    pub file_temperature_k: Option<f64>,
    /// Harmonics without source flow, left out.
    pub silent_orders: Vec<u32>,
    /// How many findings the report shows.
    pub top: usize,
    /// The report's floor below each point's overall worst, dB.
    pub floor_db: f64,
    /// The verdicts, worst points, findings and warnings (each warning
    /// with the envelope points where it holds).
    pub assessment: Assessment,
    /// Safety cautions (a gas-charged damper is a pressure vessel).
    pub cautions: Vec<String>,
    /// The verdicts with uncertainty (`--bands`), one per verdict.
    pub verdict_bands: Option<VerdictBands>,
}

/// A verdict that takes the uncertainty of the prediction into account.
///
/// With the band [low, high] of the worst value at the limit's worst point
/// (the coverage interval of the quantity's true worst over the speed
/// range there, over the uncertain inputs):
/// * **PASS** when the whole band lies within the limit (high ≤ limit);
///   the margin is that of the band's high end;
/// * **FAIL** when the nominal worst exceeds the limit, whether or not the
///   band reaches below it: the conservative reading (a predicted
///   exceedance is not softened by the chance that the true values are
///   kinder); [`VerdictBand::wholly_above`] says when even the low end is
///   over;
/// * **UNCERTAIN** otherwise: the nominal worst is within the limit but the
///   band reaches over it (or the band is unknown), so the prediction
///   cannot promise the limit is met.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    /// The whole band within the limit.
    Pass,
    /// The limit inside the band above the nominal worst.
    Uncertain,
    /// The nominal worst over the limit.
    Fail,
}

impl Status {
    /// How reports print it.
    pub fn word(self) -> &'static str {
        match self {
            Status::Pass => "PASS",
            Status::Uncertain => "UNCERTAIN",
            Status::Fail => "FAIL",
        }
    }

    /// The status of a nominal worst `nominal_pa` with band `band` against
    /// the limit `limit_pa` (see [`Status`]).
    pub fn of(nominal_pa: f64, band: Option<(f64, f64)>, limit_pa: f64) -> Status {
        if nominal_pa > limit_pa {
            Status::Fail
        } else {
            match band {
                Some((_, high)) if high <= limit_pa => Status::Pass,
                _ => Status::Uncertain,
            }
        }
    }
}

/// One verdict with the band of its worst value.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VerdictBand {
    /// The measurement point.
    pub tap: String,
    /// PASS, UNCERTAIN or FAIL (see [`Status`]).
    pub status: Status,
    /// The band of the worst value at the worst envelope point, Pa; `None`
    /// when no ripple reaches the point (PASS).
    pub worst_pa: Option<OutputBand>,
    /// 20·log10(limit/high) in dB: the margin of the band's high end
    /// (positive: the whole band within the limit); `None` without a band.
    pub margin_db: Option<f64>,
    /// Whether even the band's low end exceeds the limit.
    pub wholly_above: bool,
}

/// The verdicts with uncertainty of an assessment.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VerdictBands {
    /// How the bands were made.
    pub info: BandsInfo,
    /// One per verdict, in the order of the verdicts.
    pub verdicts: Vec<VerdictBand>,
}

/// What an assessment concludes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    /// Every limit met (with bands: every band within its limit).
    Pass,
    /// No limit exceeded, but at least one band reaches over its limit.
    Uncertain,
    /// At least one limit exceeded.
    Fail,
}

impl AssessReport {
    /// Whether every limit is met (by the nominal worst values).
    pub fn passed(&self) -> bool {
        self.assessment.passed()
    }

    /// What the assessment concludes: FAIL when a nominal worst exceeds its
    /// limit, else UNCERTAIN when a verdict with bands is, else PASS.
    pub fn outcome(&self) -> Outcome {
        if !self.passed() {
            return Outcome::Fail;
        }
        match &self.verdict_bands {
            Some(b) if b.verdicts.iter().any(|v| v.status == Status::Fail) => Outcome::Fail,
            Some(b) if b.verdicts.iter().any(|v| v.status == Status::Uncertain) => {
                Outcome::Uncertain
            }
            _ => Outcome::Pass,
        }
    }

    /// The status of verdict `i`: with bands its [`Status`], else PASS or
    /// FAIL by the nominal worst.
    pub fn status(&self, i: usize) -> Status {
        match self.verdict_bands.as_ref().and_then(|b| b.verdicts.get(i)) {
            Some(b) => b.status,
            None if self.assessment.verdicts[i].pass => Status::Pass,
            None => Status::Fail,
        }
    }
}

/// The verdicts of `report` (assessed from `template`'s circuit file with
/// `request`) with the uncertainty of their worst values: for each limit,
/// the band of the quantity's true worst over the speed range at the
/// envelope point where it is worst nominally (the whole speed grid is
/// swept in every draw, since the worst speed moves with the inputs, e.g. a
/// resonance with an uncertain wave speed; the other envelope points are
/// not, which keeps the cost to one sweep per distinct worst point and
/// draw). Every draw sets the same input values at every point.
/// `progress(done, planned)` counts draws.
///
/// # Errors
/// [`Error::Request`] when nothing is uncertain or a drawn value makes the
/// circuit invalid; [`Error::Failed`] when a drawn circuit cannot be swept.
pub fn verdict_bands(
    template: &CircuitTemplate,
    report: &AssessReport,
    request: &AssessRequest,
    bands: &BandRequest,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<VerdictBands, Error> {
    let a = &report.assessment;
    let speeds: Vec<f64> = a
        .sweeps
        .first()
        .map(|s| s.sweep.speeds_rev_s.clone())
        .unwrap_or_default();
    // the distinct worst points, and per point the quantities evaluated there
    let mut points: Vec<OperatingPoint> = Vec::new();
    let mut quantities: Vec<Vec<LimitedQuantity>> = Vec::new();
    // per verdict: (point index, quantity index) of its band
    let mut slots: Vec<Option<(usize, usize)>> = Vec::new();
    for v in &a.verdicts {
        let Some(w) = &v.worst else {
            slots.push(None);
            continue;
        };
        let pi = match points.iter().position(|p| *p == w.point) {
            Some(i) => i,
            None => {
                points.push(w.point.clone());
                quantities.push(Vec::new());
                points.len() - 1
            }
        };
        quantities[pi].push(LimitedQuantity {
            tap: v.tap.clone(),
            kind: v.limit.kind,
            order: (v.limit.kind == LimitKind::Harmonic).then_some(w.order),
        });
        slots.push(Some((pi, quantities[pi].len() - 1)));
    }
    let offsets: Vec<usize> = quantities
        .iter()
        .scan(0, |at, q| {
            let here = *at;
            *at += q.len();
            Some(here)
        })
        .collect();
    let shaft = request.shaft.as_ref().map(|s| s.0.as_str());
    let verdict = |v: &Verdict, band: Option<OutputBand>| {
        let interval = band.and_then(|b| b.interval());
        let nominal = v.worst.as_ref().map_or(0.0, |w| w.value_pa);
        VerdictBand {
            tap: v.tap.clone(),
            status: match band {
                None => Status::of(nominal, Some((nominal, nominal)), v.limit.value_pa),
                Some(_) => Status::of(nominal, interval, v.limit.value_pa),
            },
            worst_pa: band,
            margin_db: interval
                .filter(|(_, hi)| *hi > 0.0)
                .map(|(_, hi)| 20.0 * (v.limit.value_pa / hi).log10()),
            wholly_above: interval.is_some_and(|(lo, _)| lo > v.limit.value_pa),
        }
    };
    if points.is_empty() {
        return Err(Error::Request(format!(
            "{}: no limit has a worst value to give an uncertainty band of (no `limits`, or no ripple reaches them)",
            report.subject.file
        )));
    }
    let evaluate = |circuits: Vec<crate::Circuit>| -> Result<Vec<f64>, String> {
        let mut out = Vec::new();
        for (circuit, q) in circuits.iter().zip(&quantities) {
            out.extend(limited_worst_values(circuit, shaft, &speeds, q)?);
        }
        Ok(out)
    };
    let p =
        propagate_at_points(template, &points, &evaluate, None, bands, progress).map_err(|e| {
            match e {
                crate::uncertainty::bands::BandError::NothingUncertain
                | crate::uncertainty::bands::BandError::Input(_) => Error::Request(e.to_string()),
                other => Error::failed("uncertainty bands of the verdicts".to_string(), other),
            }
        })?;
    let verdicts = a
        .verdicts
        .iter()
        .zip(&slots)
        .map(|(v, slot)| verdict(v, slot.map(|(pi, qi)| p.outputs[offsets[pi] + qi])))
        .collect();
    Ok(VerdictBands {
        info: p.info,
        verdicts,
    })
}

/// The file an assessment reads: the circuit as written, its envelope and
/// limits, and its own operating point.
#[derive(Debug, Clone, Copy)]
pub struct AssessFile<'a> {
    /// The circuit file's subject (name and title).
    pub file: &'a str,
    /// The circuit as written.
    pub circuit: &'a Circuit,
    /// Its envelope.
    pub envelope: Option<&'a Envelope>,
    /// Its limits.
    pub limits: &'a [TapLimits],
    /// Its own mean pressure (gauge, Pa).
    pub pressure_pa: Option<f64>,
    /// Its own oil temperature (K).
    pub temperature_k: Option<f64>,
}

impl<'a> AssessFile<'a> {
    /// The parts of a read circuit file that an assessment uses.
    pub fn of(file: &'a crate::io::CircuitFile) -> Self {
        AssessFile {
            file: &file.file,
            circuit: &file.circuit,
            envelope: file.envelope.as_ref(),
            limits: &file.limits,
            pressure_pa: file.pressure_pa,
            temperature_k: file.temperature_k,
        }
    }
}

/// Assesses the circuits of the envelope's points (each resolved at its
/// point, in the envelope's order); `progress(done, total)` follows the
/// points.
///
/// # Errors
/// [`Error::Request`] when no speed range is known or the request is
/// unusable; [`Error::Failed`] when a point's circuit cannot be solved.
pub fn assess(
    file: AssessFile<'_>,
    points: &[(OperatingPoint, Circuit)],
    request: &AssessRequest,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<AssessReport, Error> {
    let mut inputs = Vec::new();
    if let Some((range, origin)) = request.speed_range {
        inputs.push(Input::range("speed_range", range, "rev/s", origin));
    }
    if let Some((shaft, origin)) = &request.shaft {
        inputs.push(Input::text("shaft", shaft, *origin));
    }
    let (n, n_origin) = request.speed_points;
    inputs.push(Input::number("speed_points", n as f64, "1", n_origin));
    let (rise, rise_origin) = request.min_rise_db;
    inputs.push(Input::number("min_rise", rise, "dB", rise_origin));
    inputs.push(Input::number(
        "top",
        request.top as f64,
        "1",
        Origin::Request,
    ));
    inputs.push(Input::number(
        "floor",
        request.floor_db,
        "dB",
        Origin::Request,
    ));
    let total = points.len();
    let assessment = run_assess(
        points,
        request.shaft.as_ref().map(|s| s.0.as_str()),
        request.speed_range.map(|r| r.0),
        file.limits,
        &AssessSettings {
            speed_points: n,
            min_rise_db: rise,
        },
        &mut |done| progress(done, total),
    )
    .map_err(|e| match e {
        AssessError::NoSpeedRange | AssessError::Settings(_) => {
            Error::Request(format!("{}: {e}", file.file))
        }
        e => Error::failed(format!("assessing {}", file.file), e),
    })?;
    if let Some(w) = &assessment
        .worst
        .iter()
        .flatten()
        .find(|w| !w.value_pa.is_finite())
    {
        return Err(Error::NotFinite(format!(
            "the worst ripple at `{}` is not a finite number",
            w.point.label()
        )));
    }
    let circuit = file.circuit;
    let silent_orders = assessment
        .sweeps
        .first()
        .map(|s| {
            s.sweep
                .shaft
                .silent_orders(&circuit.pumps, circuit.harmonics)
        })
        .unwrap_or_default();
    let cautions = if points
        .iter()
        .any(|(_, c)| c.elements.iter().any(|e| e.kind.is_pressure_vessel()))
    {
        vec![PRESSURE_VESSEL_CAUTION.to_string()]
    } else {
        Vec::new()
    };
    Ok(AssessReport {
        subject: Subject {
            file: file.file.to_string(),
            title: circuit.title.clone(),
        },
        inputs,
        envelope: file.envelope.cloned(),
        limits: file.limits.to_vec(),
        file_pressure_pa: file.pressure_pa,
        file_temperature_k: file.temperature_k,
        silent_orders,
        top: request.top,
        floor_db: request.floor_db,
        assessment,
        cautions,
        verdict_bands: None,
    })
}

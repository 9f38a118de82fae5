//! `assess`: the circuit over its operating envelope, each limit's verdict
//! and the findings ranked by severity ([`crate::analysis::envelope`]).

use super::{Error, Input, Origin, Subject};
use crate::Circuit;
use crate::analysis::envelope::{AssessError, AssessSettings, Assessment, assess as run_assess};
use crate::elements::PRESSURE_VESSEL_CAUTION;
use crate::envelope::{Envelope, OperatingPoint, TapLimits};
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
}

impl AssessReport {
    /// Whether every limit is met.
    pub fn passed(&self) -> bool {
        self.assessment.passed()
    }
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
    })
}

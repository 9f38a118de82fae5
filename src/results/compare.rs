//! `compare`: the ripple measured at the taps set beside the circuit's
//! prediction, run by run, tap by tap, harmonic by harmonic
//! (`calibrate::compare`).

use super::{Error, Input, Origin, Subject};
use crate::calibrate::compare::{Comparison, compare as run_compare};
use crate::calibrate::measured::{MeasuredRun, Model, read_measured};
use crate::estimate::Observer;
use crate::io::measurement_file::Measurements;
use crate::io::{CircuitFile, CircuitTemplate};
use serde::Serialize;

/// The measurement file as echoed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MeasurementsInfo {
    /// The file.
    pub file: String,
    /// Its title.
    pub title: Option<String>,
    /// Runs in it.
    pub runs: usize,
}

/// The result of `compare`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CompareResult {
    /// The circuit file.
    pub subject: Subject,
    /// The measurement file.
    pub measurements: MeasurementsInfo,
    /// Inputs: harmonics compared, speed tolerance.
    pub inputs: Vec<Input>,
    /// Measured against predicted.
    pub comparison: Comparison,
}

/// Echoes a measurement file.
pub fn measurements_info(m: &Measurements) -> MeasurementsInfo {
    MeasurementsInfo {
        file: m.file.clone(),
        title: m.title.clone(),
        runs: m.runs.len(),
    }
}

/// The inputs a measurement file sets.
pub fn measurement_inputs(m: &Measurements) -> Vec<Input> {
    vec![
        Input::number("harmonics", m.harmonics.into(), "1", Origin::File),
        Input::number("speed_tolerance", m.speed_tolerance, "1", Origin::File),
        Input::text(
            "phases",
            match m.phases {
                crate::io::measurement_file::Phases::Shaft => "shaft",
                crate::io::measurement_file::Phases::Ignore => "ignore",
            },
            Origin::File,
        ),
    ]
}

/// Reads the runs' data (records are extracted as `fit` extracts them).
///
/// # Errors
/// [`Error::Request`] naming the record or spectra file at fault.
pub fn read_runs(
    circuit: &CircuitFile,
    m: &Measurements,
    progress: &mut dyn Observer,
) -> Result<Vec<MeasuredRun>, Error> {
    read_measured(m, circuit, progress).map_err(|e| Error::Request(e.to_string()))
}

/// The model of a circuit file against measured runs.
pub fn template_of(circuit: &CircuitFile) -> Result<CircuitTemplate, Error> {
    CircuitTemplate::new(&circuit.text, &circuit.file).map_err(|e| Error::Request(e.to_string()))
}

/// Compares the circuit with the measurements.
///
/// # Errors
/// [`Error::Request`] for data that cannot be read; [`Error::Failed`] when
/// the circuit cannot be solved at a run; [`Error::NotFinite`] for a value
/// that is not a number.
pub fn compare(
    circuit: &CircuitFile,
    m: &Measurements,
    progress: &mut dyn Observer,
) -> Result<CompareResult, Error> {
    let measured = read_runs(circuit, m, progress)?;
    let template = template_of(circuit)?;
    let model = Model {
        template: &template,
        measurements: m,
        measured: &measured,
    };
    let comparison = run_compare(&model, &measured, &[])
        .map_err(|e| Error::failed(format!("predicting the runs of {}", m.file), e))?;
    check_finite(&comparison)?;
    Ok(CompareResult {
        subject: Subject {
            file: circuit.file.clone(),
            title: circuit.circuit.title.clone(),
        },
        measurements: measurements_info(m),
        inputs: measurement_inputs(m),
        comparison,
    })
}

/// Refuses a comparison with a value that is not a number.
pub fn check_finite(c: &Comparison) -> Result<(), Error> {
    for run in &c.runs {
        for r in &run.rows {
            if !(r.measured_pa.is_finite() && r.predicted_pa.is_finite()) {
                return Err(Error::NotFinite(format!(
                    "run `{}`, tap `{}`, harmonic {}: a value is not a finite number",
                    run.run, r.tap, r.order
                )));
            }
        }
    }
    Ok(())
}

//! `calibrate`: the values of a circuit adjusted to the ripple measured at
//! its taps (`calibrate::fit`), with uncertainties, correlations, what the
//! data cannot identify, the comparison before and after, and the
//! calibrated circuit file's text.

use super::compare::{
    MeasurementsInfo, check_finite, measurement_inputs, measurements_info, read_runs, template_of,
};
use super::{Error, Input, Notice, Origin, Subject};
use crate::calibrate::compare::{Comparison, compare};
use crate::calibrate::fit::{CalibrateError, Calibration, Parameter, calibrate as run_calibration};
use crate::calibrate::lm::Options;
use crate::calibrate::measured::Model;
use crate::calibrate::write::calibrated_text;
use crate::estimate::Observer;
use crate::io::CircuitFile;
use crate::io::measurement_file::Measurements;
use serde::Serialize;

/// What to calibrate.
#[derive(Debug, Clone)]
pub struct CalibrateRequest {
    /// The values and their bounds.
    pub parameters: Vec<Parameter>,
    /// Iteration settings.
    pub options: Options,
}

/// The result of `calibrate`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CalibrateResult {
    /// The circuit file.
    pub subject: Subject,
    /// The measurement file.
    pub measurements: MeasurementsInfo,
    /// Inputs: harmonics, speed tolerance, phases, evaluation budget.
    pub inputs: Vec<Input>,
    /// The calibration.
    pub calibration: Calibration,
    /// Measured against predicted with the file's values.
    pub before: Comparison,
    /// Measured against predicted with the calibrated values.
    pub after: Comparison,
    /// What to know about the result: not converged, values at a bound,
    /// a misfit, values the data cannot identify.
    pub notices: Vec<Notice>,
    /// The calibrated circuit file (the user's text with the calibrated
    /// values replaced and marked).
    #[serde(skip)]
    pub calibrated_text: String,
}

/// Calibrates the circuit against the measurements.
///
/// # Errors
/// [`Error::Request`] for parameters that do not fit the data (bounds that
/// exclude the start, too few measured values) or data that cannot be read;
/// [`Error::Failed`] when the circuit cannot be evaluated with the file's
/// values or the calibrated file cannot be written safely.
pub fn calibrate(
    circuit: &CircuitFile,
    m: &Measurements,
    request: &CalibrateRequest,
    progress: &mut dyn Observer,
) -> Result<CalibrateResult, Error> {
    let measured = read_runs(circuit, m, progress)?;
    let template = template_of(circuit)?;
    let model = Model {
        template: &template,
        measurements: m,
        measured: &measured,
    };
    progress.stage("calibrating", request.options.max_evaluations as u64);
    let calibration = run_calibration(&model, &measured, &request.parameters, &request.options)
        .map_err(|e| match e {
            CalibrateError::Setup(s) => Error::Request(format!("{}: {s}", m.file)),
            CalibrateError::Model(e) => {
                Error::failed(format!("evaluating {} against {}", circuit.file, m.file), e)
            }
        })?;
    progress.finish();
    let before = compare(&model, &measured, &[])
        .map_err(|e| Error::failed("comparing with the file's values", e))?;
    let after = compare(
        &model,
        &measured,
        &calibration.settings(&request.parameters),
    )
    .map_err(|e| Error::failed("comparing with the calibrated values", e))?;
    check_finite(&before)?;
    check_finite(&after)?;
    for e in &calibration.estimates {
        if !e.value.is_finite() || e.uncertainty.is_some_and(|u| !u.is_finite()) {
            return Err(Error::NotFinite(format!(
                "the estimate of `{}` is not a finite number",
                e.name
            )));
        }
    }
    let file_name = std::path::Path::new(&m.file)
        .file_name()
        .map_or_else(|| m.file.clone(), |n| n.to_string_lossy().into_owned());
    let text =
        calibrated_text(&template, &request.parameters, &calibration, &file_name).map_err(|e| {
            Error::failed(
                "writing the calibrated circuit file",
                std::io::Error::other(e),
            )
        })?;
    let mut inputs = measurement_inputs(m);
    inputs.push(Input::number(
        "max_evaluations",
        request.options.max_evaluations as f64,
        "1",
        Origin::Request,
    ));
    Ok(CalibrateResult {
        subject: Subject {
            file: circuit.file.clone(),
            title: circuit.circuit.title.clone(),
        },
        measurements: measurements_info(m),
        inputs,
        notices: notices(&calibration)
            .into_iter()
            .chain(refused_within_reach(
                &template,
                &request.parameters,
                &calibration,
            ))
            .collect(),
        calibration,
        before,
        after,
        calibrated_text: text,
    })
}

/// How many standard uncertainties either side of an estimate a value the
/// circuit refuses is looked for: 3 u holds all but 0.27 % of a normal
/// distribution's draws (common practice: the three-sigma range).
const REACH_U: f64 = 3.0;

/// A notice for each estimate whose uncertainty reaches, within
/// [`REACH_U`] standard uncertainties, a value the circuit refuses at its
/// key (a length or a volume at zero, a modulus beyond its range): the
/// calibrated file writes that uncertainty, and Monte Carlo bands drawn
/// from it draw such values again (a truncated distribution) or refuse to
/// run when more than 1 % of the draws are refused.
fn refused_within_reach(
    template: &crate::io::CircuitTemplate,
    parameters: &[Parameter],
    c: &Calibration,
) -> Vec<Notice> {
    let calibrated = c.settings(parameters);
    let mut out = Vec::new();
    for (k, (p, e)) in parameters.iter().zip(&c.estimates).enumerate() {
        let Some(u) = e.uncertainty.filter(|u| *u > 0.0) else {
            continue;
        };
        for (side, v) in [("−", e.value - REACH_U * u), ("+", e.value + REACH_U * u)] {
            // this value moved, the others at their calibrated values
            let mut settings = vec![
                p.target
                    .setting(v, &format!("the calibrated value ± {REACH_U} u")),
            ];
            settings.extend(
                calibrated
                    .iter()
                    .enumerate()
                    .filter(|(j, _)| *j != k)
                    .map(|(_, s)| s.clone()),
            );
            if template.refusal(&p.target, &settings).is_some() {
                let sig = |x: f64| crate::units::format_sig(x, 6);
                let unit = if e.unit.is_empty() {
                    String::new()
                } else {
                    format!(" {}", e.unit)
                };
                out.push(Notice {
                    subject: e.name.clone(),
                    message: format!(
                        "its uncertainty reaches values the circuit refuses: at the estimate {side} {REACH_U} u ({}{unit}; estimate {}{unit}, u = {}{unit}); uncertainty bands from the calibrated file draw such values again and refuse to run when more than 1 % of the draws are refused",
                        sig(v),
                        sig(e.value),
                        sig(u)
                    ),
                });
                break;
            }
        }
    }
    out
}

fn notices(c: &Calibration) -> Vec<Notice> {
    let mut out = Vec::new();
    let note = |subject: &str, message: String| Notice {
        subject: subject.to_string(),
        message,
    };
    if !c.stop.converged() {
        out.push(note(
            "calibration",
            format!(
                "did not converge: {} after {} evaluations; the values are the last iterate",
                c.stop.describe(),
                c.evaluations
            ),
        ));
    }
    for e in c.estimates.iter().filter(|e| e.at_bound) {
        out.push(note(
            &e.name,
            format!(
                "ended at a bound ({} {}): the data want it beyond; widen the bounds or check the model",
                crate::units::format_sig(e.value, 6),
                e.unit
            ),
        ));
    }
    if c.scaled && c.absolute_weights {
        out.push(note(
            "fit",
            format!(
                "χ² = {:.1} for {} degrees of freedom is beyond its 99.9 % point: the model does not explain the measurements within their noise; the uncertainties are scaled by √(χ²/ν) = {:.2}",
                c.chi2,
                c.dof,
                (c.chi2 / c.dof as f64).sqrt()
            ),
        ));
    }
    if !c.absolute_weights {
        out.push(note(
            "fit",
            "some measurements state no uncertainty: every value is weighted alike and the uncertainties are scaled by √(χ²/ν)".into(),
        ));
    }
    for name in &c.identifiability.no_effect {
        out.push(note(
            name,
            "has no effect on the measured harmonics: the data cannot tell its value".into(),
        ));
    }
    for d in &c.identifiability.weak {
        let names: Vec<String> = d
            .parameters
            .iter()
            .map(|(n, v)| format!("{v:+.2}·{n}"))
            .collect();
        out.push(note(
            "identifiability",
            format!(
                "{} the combination {} (relative singular value {:.1e})",
                if d.unidentifiable {
                    "the data cannot identify"
                } else {
                    "the data barely see"
                },
                names.join(" "),
                d.relative_singular_value
            ),
        ));
    }
    for (a, b, rho) in &c.identifiability.correlated {
        out.push(note(
            "identifiability",
            format!("`{a}` and `{b}` are strongly correlated (ρ = {rho:+.3}): the data tell mainly a combination of them"),
        ));
    }
    out
}

//! `report`: everything the analyses say about one circuit, composed for a
//! self-contained document: the inputs with their origin, the circuit's
//! check, the ripple at every measurement point, the resonance check of
//! every pump over its speed range, each silencer's losses, the warnings
//! and the safety cautions, the program version and the input file's
//! SHA-256.
//!
//! Nothing is computed here that an analysis does not compute: the parts
//! are the results of [`super::check`], [`super::solve`],
//! [`super::response`] and [`super::silencer`], run as their commands run
//! them with their defaults.

use super::check::{CheckRequest, CheckResult, check};
use super::inputs::{CircuitInputs, circuit_inputs};
use super::response::{ResponseRequest, ResponseResult, response};
use super::setup::FrequencySweep;
use super::silencer::{SilencerRequest, SilencerResult, silencer};
use super::solve::{SolveRequest, SolveResult, solve};
use super::{Error, Input, Notice, Origin, Subject};
use crate::analysis::ripple::report_points;
use crate::analysis::silencer::WithoutReference;
use crate::elements::{ElementKind, PRESSURE_VESSEL_CAUTION, STORED_ENERGY_CAUTION};
use crate::io::CircuitFile;
use serde::Serialize;
use sha2::{Digest, Sha256};

/// What to report, resolved against the circuit.
#[derive(Debug, Clone)]
pub struct ReportRequest {
    /// Harmonics per pump, overriding the circuit's.
    pub harmonics: Option<u32>,
    /// Reference pressure for levels, Pa (rms), and where it came from.
    pub db_ref_pa: (f64, Origin),
    /// How close (a fraction of f0) a band edge counts as near a
    /// resonance, and where the value came from.
    pub margin: (f64, Origin),
}

/// A silencer analysis that could not be made at one point, and why.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SkippedSilencer {
    /// The silencer element.
    pub element: String,
    /// The measurement point.
    pub tap: String,
    /// Why (the analysis's own message).
    pub reason: String,
}

/// The result of `report`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReportResult {
    /// The circuit file.
    pub subject: Subject,
    /// The program and its version, e.g. `ripline 0.1.0`.
    pub program: String,
    /// SHA-256 of the input file's bytes, lowercase hex (FIPS 180-4).
    pub input_sha256: String,
    /// What the report decides, in a sentence.
    pub job: String,
    /// The report's own settings: harmonics, dB reference, margin.
    pub inputs: Vec<Input>,
    /// The circuit's inputs, each with its origin.
    pub circuit_inputs: CircuitInputs,
    /// Every warning of every part, each once, in the order first met.
    pub warnings: Vec<Notice>,
    /// The safety cautions: stored energy always, pressure vessels when the
    /// circuit has a gas-charged damper.
    pub cautions: Vec<String>,
    /// What the circuit holds.
    pub check: CheckResult,
    /// The ripple at every measurement point at the file's speeds.
    pub ripple: SolveResult,
    /// The resonance check of each pump over its speed range.
    pub resonances: Vec<ResponseResult>,
    /// Each silencer element's losses at each measurement point, driven by
    /// the first pump.
    pub silencers: Vec<SilencerResult>,
    /// Silencer analyses that could not be made, with the reason.
    pub skipped_silencers: Vec<SkippedSilencer>,
}

/// SHA-256 of `bytes` as lowercase hex (FIPS 180-4, through the RustCrypto
/// `sha2` crate).
pub fn sha256_hex(bytes: &[u8]) -> String {
    Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// Whether an element is a silencer (the kinds `silencer` analyses alone).
pub fn is_silencer(kind: &ElementKind) -> bool {
    matches!(
        kind,
        ElementKind::SideBranch(_)
            | ElementKind::ExpansionChamber(_)
            | ElementKind::Helmholtz(_)
            | ElementKind::Damper(_)
            | ElementKind::InlineDamper(_)
    )
}

/// Runs every analysis of the report on `file`; `progress(done, total)`
/// follows the parts (the total is known from the start).
///
/// # Errors
/// [`Error::Request`] if the circuit cannot be compiled;
/// [`Error::Failed`] if a solve fails (a singular network);
/// [`Error::NotFinite`] for a result that is not a finite number. A
/// silencer that cannot be analysed at a point (it takes the point away,
/// or has no pipes to refer its loss to) is listed in
/// [`ReportResult::skipped_silencers`] instead.
pub fn report(
    file: &CircuitFile,
    request: &ReportRequest,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<ReportResult, Error> {
    let circuit = &file.circuit;
    let name = file.file.as_str();
    let given = crate::io::circuit_file::given_inputs(&file.text, name)
        .map_err(|e| Error::Request(e.to_string()))?;
    let silencer_elements: Vec<usize> = (0..circuit.elements.len())
        .filter(|&i| is_silencer(&circuit.elements[i].kind))
        .collect();
    let points = report_points(circuit);
    // parts: check and solve, one response per pump, one silencer per
    // element and point; each counts 1000 steps
    const STEP: usize = 1000;
    let parts = 2 + circuit.pumps.len() + silencer_elements.len() * points.len();
    let total = parts * STEP;
    let mut done = 0;
    let part = |done: &mut usize, progress: &mut dyn FnMut(usize, usize)| {
        *done += STEP;
        progress(*done, total);
    };

    let check = check(
        circuit.clone(),
        name,
        &CheckRequest {
            harmonics: request.harmonics,
            speed: None,
        },
    )?;
    part(&mut done, progress);
    let ripple = solve(
        circuit.clone(),
        name,
        &SolveRequest {
            harmonics: request.harmonics,
            speed: None,
            db_ref_pa: request.db_ref_pa,
            waveform: false,
        },
    )?;
    part(&mut done, progress);
    let mut resonances = Vec::with_capacity(circuit.pumps.len());
    for pump_index in 0..circuit.pumps.len() {
        let base = done;
        resonances.push(response(
            circuit.clone(),
            name,
            &ResponseRequest {
                sweep: FrequencySweep {
                    pump_index,
                    harmonics: request.harmonics,
                    ..FrequencySweep::default()
                },
                margin: request.margin,
            },
            &mut |i, n| progress(base + i * STEP / n.max(1), total),
        )?);
        part(&mut done, progress);
    }
    let mut silencers = Vec::new();
    let mut skipped_silencers = Vec::new();
    for &element in &silencer_elements {
        for tap in &points {
            let base = done;
            let result = silencer(
                circuit.clone(),
                name,
                &SilencerRequest {
                    elements: vec![element],
                    reference_tube: None,
                    without: WithoutReference::Pipe,
                    tap: (tap.name.clone(), tap.location),
                    sweep: FrequencySweep {
                        harmonics: request.harmonics,
                        ..FrequencySweep::default()
                    },
                },
                &mut |i, n| progress(base + i * STEP / n.max(1), total),
            );
            match result {
                Ok(r) => silencers.push(r),
                Err(Error::Request(reason)) => skipped_silencers.push(SkippedSilencer {
                    element: circuit.elements[element].name.clone(),
                    tap: tap.name.clone(),
                    reason,
                }),
                Err(e) => return Err(e),
            }
            part(&mut done, progress);
        }
    }

    let mut warnings: Vec<Notice> = Vec::new();
    let all = check
        .warnings
        .iter()
        .chain(&ripple.warnings)
        .chain(resonances.iter().flat_map(|r| &r.warnings))
        .chain(silencers.iter().flat_map(|s| &s.warnings));
    for w in all {
        if !warnings.contains(w) {
            warnings.push(w.clone());
        }
    }
    let mut cautions = vec![STORED_ENERGY_CAUTION.to_string()];
    if circuit.elements.iter().any(|e| e.kind.is_pressure_vessel()) {
        cautions.push(PRESSURE_VESSEL_CAUTION.to_string());
    }
    let mut inputs = vec![Input::number(
        "harmonics",
        f64::from(ripple.harmonics),
        "1",
        if request.harmonics.is_some() {
            Origin::Request
        } else if given.top.has("harmonics") {
            Origin::File
        } else {
            Origin::Default
        },
    )];
    inputs.push(Input::number(
        "db_ref",
        request.db_ref_pa.0,
        "Pa",
        request.db_ref_pa.1,
    ));
    inputs.push(Input::number(
        "margin",
        request.margin.0,
        "1",
        request.margin.1,
    ));
    let job = job_statement(&check, &resonances, &silencers);
    Ok(ReportResult {
        subject: Subject {
            file: name.to_string(),
            title: circuit.title.clone(),
        },
        program: format!("ripline {}", env!("CARGO_PKG_VERSION")),
        input_sha256: sha256_hex(file.text.as_bytes()),
        job,
        inputs,
        circuit_inputs: circuit_inputs(circuit, &given),
        warnings,
        cautions,
        check,
        ripple,
        resonances,
        silencers,
        skipped_silencers,
    })
}

/// What the report decides: the questions its parts answer for this
/// circuit.
fn job_statement(
    check: &CheckResult,
    resonances: &[ResponseResult],
    silencers: &[SilencerResult],
) -> String {
    let points = if check.taps.is_empty() {
        "every node".to_string()
    } else {
        match check.taps.len() {
            1 => "its measurement point".to_string(),
            n => format!("its {n} measurement points"),
        }
    };
    let ranges: Vec<String> =
        resonances
            .iter()
            .map(|r| r.speed_range.describe())
            .fold(Vec::new(), |mut v, s| {
                if !v.contains(&s) {
                    v.push(s);
                }
                v
            });
    let mut parts = vec![
        format!("how large the pressure ripple is at {points} at the pumps' speeds"),
        format!(
            "whether a pump harmonic crosses a resonance of the circuit over the speed range ({})",
            ranges.join("; ")
        ),
    ];
    if !silencers.is_empty() {
        parts.push("how much its silencers take out".to_string());
    }
    let last = parts.pop().unwrap_or_default();
    format!(
        "This report decides {} and {last}.",
        if parts.is_empty() {
            String::new()
        } else {
            parts.join(", ")
        }
    )
}

//! `report`: everything the analyses say about one circuit, composed for a
//! self-contained document: the inputs with their origin, the circuit's
//! check, the worst ripple over the operating envelope (or the speed range)
//! with each limit's verdict, the ripple at every measurement point, the
//! resonance check of every pump over its speed range, each silencer's
//! losses, the warnings and the safety cautions, the program version and
//! the input file's SHA-256.
//!
//! Nothing is computed here that an analysis does not compute: the parts
//! are the results of [`super::check`], [`super::assess`],
//! [`super::solve`], [`super::response`] and [`super::silencer`], run as
//! their commands run them with their defaults.

use super::assess::{AssessFile, AssessReport, AssessRequest, assess};
use super::check::{CheckRequest, CheckResult, check};
use super::inputs::{CircuitInputs, circuit_inputs};
use super::response::{ResponseRequest, ResponseResult, response};
use super::setup::FrequencySweep;
use super::silencer::{SilencerRequest, SilencerResult, silencer};
use super::solve::{SolveRequest, SolveResult, solve};
use super::{Error, Input, Notice, Origin, Subject};
use crate::analysis::envelope::{AssessSettings, without_numbers};
use crate::analysis::ripple::report_points;
use crate::analysis::silencer::WithoutReference;
use crate::elements::{ElementKind, PRESSURE_VESSEL_CAUTION, STORED_ENERGY_CAUTION};
use crate::envelope::OperatingPoint;
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
    /// Verdicts with uncertainty bands (as `assess --bands`), or `None`.
    pub bands: Option<crate::uncertainty::bands::BandRequest>,
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
    /// The circuit over its operating envelope (the file's own point when
    /// it has no `envelope` section) and over the speed range, with each
    /// limit's verdict, as `assess` gives it with its defaults; `None`
    /// when no speed range is known and the file has neither `envelope`
    /// nor `limits` (then [`ReportResult::no_assessment`] says why).
    pub assessment: Option<AssessReport>,
    /// Why there is no assessment.
    pub no_assessment: Option<String>,
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
    // bands are of the limits' verdicts, from the file's tolerances: a
    // file with neither is refused before any work, as `assess` refuses it
    let template = match &request.bands {
        Some(_) => {
            let template = crate::io::CircuitTemplate::new(&file.text, &file.file)
                .map_err(|e| Error::Request(e.to_string()))?;
            let inputs = crate::uncertainty::Inputs::of(&template)
                .map_err(|e| Error::Request(e.to_string()))?;
            if inputs.is_empty() {
                return Err(Error::Request(format!(
                    "{name}: {}",
                    crate::uncertainty::bands::BandError::NothingUncertain
                )));
            }
            if file.limits.is_empty() {
                return Err(Error::Request(format!(
                    "{name}: --bands gives the verdicts of the file's `limits` uncertainty bands, and it has no `limits` section"
                )));
            }
            Some(template)
        }
        None => None,
    };
    // every envelope point's circuit first: a point that makes the circuit
    // invalid stops the report before any work
    let mut envelope_points = file
        .circuits(&file.points())
        .map_err(|e| Error::Request(e.to_string()))?;
    if let Some(n) = request.harmonics {
        for (_, c) in &mut envelope_points {
            c.harmonics = n;
        }
    }
    // parts: check, assess and solve, one response per pump, one silencer
    // per element and point; each counts 1000 steps
    const STEP: usize = 1000;
    let parts = 3 + circuit.pumps.len() + silencer_elements.len() * points.len();
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
    let (mut assessment, no_assessment) = over_envelope(file, &envelope_points, &mut |i, n| {
        progress(done + i * STEP / n.max(1), total);
    })?;
    if let (Some(bands), Some(template), Some((a, assess_request))) =
        (&request.bands, &template, assessment.as_mut())
    {
        a.verdict_bands = Some(super::assess::verdict_bands(
            template,
            a,
            assess_request,
            bands,
            &mut |_, _| {},
        )?);
    }
    let assessment = assessment.map(|(a, _)| a);
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
    // the operating range `assess` uses: the envelope's `speed` first
    let envelope_speed_range = file.envelope.as_ref().and_then(|e| e.speed_range_rev_s);
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
                    envelope_speed_range,
                    ..FrequencySweep::default()
                },
                margin: request.margin,
                ranking: (
                    super::Ranking {
                        top: TOP_FINDINGS,
                        floor_db: FINDINGS_FLOOR_DB,
                    },
                    Origin::Default,
                ),
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
                        envelope_speed_range,
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
    // the envelope's own (at other points than the file's, or with other
    // numbers), each with the points where it holds
    if let Some(a) = &assessment {
        let all = a.assessment.points.len();
        for w in &a.assessment.warnings {
            let key = without_numbers(&w.text);
            if warnings
                .iter()
                .any(|n| without_numbers(&n.to_string()) == key)
            {
                continue;
            }
            warnings.push(Notice {
                subject: "operating envelope".into(),
                message: format!(
                    "at {} of {all} points ({}): {}",
                    w.points.len(),
                    w.points.join("; "),
                    w.text
                ),
            });
        }
    }
    let mut cautions = vec![STORED_ENERGY_CAUTION.to_string()];
    let vessel = |c: &crate::Circuit| c.elements.iter().any(|e| e.kind.is_pressure_vessel());
    if vessel(circuit) || envelope_points.iter().any(|(_, c)| vessel(c)) {
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
    let job = job_statement(&check, assessment.as_ref(), &resonances, &silencers);
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
        assessment,
        no_assessment,
        ripple,
        resonances,
        silencers,
        skipped_silencers,
    })
}

/// Findings the report shows, at most (as `assess`'s default `--top`).
pub const TOP_FINDINGS: usize = 10;
/// Findings further below their point's overall worst are left out, dB (as
/// `assess`'s default `--floor`).
pub const FINDINGS_FLOOR_DB: f64 = 20.0;

/// An assessment with the request that made it, or the reason there is
/// none.
type Assessed = (Option<(AssessReport, AssessRequest)>, Option<String>);

/// `assess` with its defaults over the file's envelope points (`points`,
/// resolved); when it cannot run for want of a speed range and the file
/// has neither `envelope` nor `limits`, no assessment and the reason.
///
/// # Errors
/// As [`assess`]; no speed range is an error only for a file with an
/// `envelope` or `limits` section (as `assess` itself).
fn over_envelope(
    file: &CircuitFile,
    points: &[(OperatingPoint, crate::Circuit)],
    progress: &mut dyn FnMut(usize, usize),
) -> Result<Assessed, Error> {
    let envelope = file.envelope.as_ref();
    let settings = AssessSettings::default();
    let request = AssessRequest {
        speed_range: envelope
            .and_then(|e| e.speed_range_rev_s)
            .map(|r| (r, Origin::File)),
        shaft: envelope
            .and_then(|e| e.shaft.clone())
            .map(|s| (s, Origin::File)),
        speed_points: (settings.speed_points, Origin::Default),
        min_rise_db: (settings.min_rise_db, Origin::Default),
        top: TOP_FINDINGS,
        floor_db: FINDINGS_FLOOR_DB,
    };
    let result = assess(AssessFile::of(file), points, &request, progress);
    match result {
        Ok(a) => Ok((Some((a, request)), None)),
        Err(Error::Request(reason)) if envelope.is_none() && file.limits.is_empty() => {
            Ok((None, Some(reason)))
        }
        Err(e) => Err(e),
    }
}

/// What the report decides: the questions its parts answer for this
/// circuit.
fn job_statement(
    check: &CheckResult,
    assessment: Option<&AssessReport>,
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
    let mut parts = Vec::new();
    if let Some(a) = assessment.filter(|a| !a.assessment.verdicts.is_empty()) {
        parts.push(format!(
            "whether the ripple meets its {} limit{} over the operating {}",
            a.assessment.verdicts.len(),
            if a.assessment.verdicts.len() == 1 {
                ""
            } else {
                "s"
            },
            if a.envelope.is_some() {
                "envelope"
            } else {
                "speed range"
            }
        ));
    }
    parts.extend([
        format!(
            "how large the pressure ripple is at {points} at the pumps' speeds{}",
            if assessment.is_some() {
                " and at its worst over the speed range"
            } else {
                ""
            }
        ),
        format!(
            "whether a pump harmonic crosses a resonance of the circuit over the speed range ({})",
            ranges.join("; ")
        ),
    ]);
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

#[cfg(test)]
mod tests {
    use super::*;

    /// The SHA-256 examples of FIPS 180-2, Appendix B.1 ("abc") and B.2
    /// (the 448-bit message), and the empty message; the digests (recalled
    /// from memory) agree with Python's `hashlib.sha256(m).hexdigest()`.
    #[test]
    fn sha256_of_the_fips_examples() {
        assert_eq!(
            sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
        assert_eq!(
            sha256_hex(b"abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"),
            "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1"
        );
        assert_eq!(
            sha256_hex(b""),
            "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"
        );
    }
}

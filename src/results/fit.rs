//! `fit`: a pump's source flow ripple and source impedance per harmonic
//! from bench records, with standard uncertainties, the anechoic and
//! blocked ripple, the speed of sound and the conditioning warnings.

use super::{Error, Input, Notice, Origin, Phasor, Subject, notices};
use crate::estimate::bench::{Bench, SpeedOfSound};
use crate::estimate::extract::ConditionSpectra;
use crate::estimate::fit::{Estimate, FitReport, HarmonicStatus, Scalar};
use crate::estimate::{FitOptions, Observer, fit as run_fit};
use crate::io::source_file::{PumpSource, SourceHarmonic};
use serde::Serialize;

/// A complex estimate: amplitude and phase with their standard
/// uncertainties (k = 1) when known.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct EstimateResult {
    /// The value (peak amplitude in the unit its field names, phase in
    /// degrees).
    pub value: Phasor,
    /// Standard uncertainty of the amplitude.
    pub amplitude_uncertainty: Option<f64>,
    /// Standard uncertainty of the phase, degrees.
    pub phase_uncertainty_deg: Option<f64>,
}

impl From<&Estimate> for EstimateResult {
    fn from(e: &Estimate) -> Self {
        EstimateResult {
            value: e.value.into(),
            amplitude_uncertainty: e.uncertainty.map(|u| u.amplitude),
            phase_uncertainty_deg: e.uncertainty.map(|u| u.phase_rad.to_degrees()),
        }
    }
}

/// A real estimate with its standard uncertainty.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ScalarResult {
    /// The value.
    pub value: f64,
    /// Its standard uncertainty (k = 1), when known.
    pub uncertainty: Option<f64>,
}

impl From<&Scalar> for ScalarResult {
    fn from(s: &Scalar) -> Self {
        ScalarResult {
            value: s.value,
            uncertainty: s.uncertainty,
        }
    }
}

/// The estimates of one harmonic.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicFit {
    /// Harmonic order k.
    pub order: u32,
    /// Frequency, Hz.
    pub freq_hz: f64,
    /// Source flow ripple Qs, m³/s (against the shaft reference).
    pub flow_m3_s: EstimateResult,
    /// Source impedance Zs, Pa·s/m³.
    pub impedance_pa_s_m3: EstimateResult,
    /// Anechoic pressure ripple Qs·Zs·Zc/(Zs + Zc), Pa.
    pub anechoic_pa: EstimateResult,
    /// Blocked pressure ripple Qs·Zs, Pa.
    pub blocked_pa: EstimateResult,
    /// Largest condition number met.
    pub condition_number: f64,
    /// How far the estimate can be trusted: `estimated`, or
    /// `ill_conditioned`, `extrapolated`, `unstable` (left out of the
    /// overall levels unless asked).
    pub status: HarmonicStatus,
    /// For a flagged harmonic: the bias to expect, relative, of |Qs| and
    /// |Zs| (median of the Monte Carlo draws over the estimate, less one).
    pub expected_bias: Option<ExpectedBiasResult>,
    /// Why the harmonic is flagged (empty: nothing to say).
    pub flags: Vec<String>,
}

/// The bias to expect from the conditioning, relative.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ExpectedBiasResult {
    /// Of |Qs|.
    pub flow: f64,
    /// Of |Zs|.
    pub impedance: f64,
}

/// The source impedance read as a volume with leakage, Ys = G + jωV/B.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EquivalentResult {
    /// Equivalent internal volume, m³.
    pub volume_m3: ScalarResult,
    /// Leakage conductance G = 1/R_leak, m³/(Pa·s).
    pub leakage_conductance_m3_pa_s: ScalarResult,
    /// The bulk modulus B of the bench fluid, Pa.
    pub bulk_modulus_pa: f64,
    /// The harmonics fitted.
    pub orders: Vec<u32>,
    /// RMS of |Ys − model|/|Ys| over them.
    pub misfit: f64,
    /// Σ w|Ys − model|² over its expectation, with uncertainties.
    pub reduced_chi_square: Option<f64>,
}

/// The χ² check of the over-determined wave fits.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ResidualCheckResult {
    /// χ² of the wave fits.
    pub chi_square: f64,
    /// Its degrees of freedom.
    pub dof: f64,
    /// √(χ²/ν).
    pub factor: f64,
    /// Whether the phasor uncertainties were scaled by it.
    pub applied: bool,
}

/// What was found in one condition's data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ConditionResult {
    /// The condition's name.
    pub name: String,
    /// Pumping frequency found (or held), Hz.
    pub pumping_frequency_hz: f64,
    /// Its standard uncertainty, Hz, when known.
    pub pumping_frequency_uncertainty_hz: Option<f64>,
    /// Whether it was held from the pump-run conditions.
    pub pumping_frequency_held: bool,
    /// Whether a tacho channel gave the shaft-angle reference.
    pub tacho: bool,
    /// Secondary-source fundamental found, Hz.
    pub secondary_fundamental_hz: Option<f64>,
    /// The lowest signal-to-noise ratio over the transducers and harmonics, dB.
    pub lowest_snr_db: Option<f64>,
}

/// The result of `fit`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FitResult {
    /// The bench file.
    pub subject: Subject,
    /// Inputs: harmonics, draws, seed.
    pub inputs: Vec<Input>,
    /// The pump's name.
    pub pump: String,
    /// Its pumping elements.
    pub pumping_elements: u32,
    /// The measured speed, rev/s (mean over the pump conditions).
    pub speed_rev_s: f64,
    /// Its standard uncertainty, rev/s, when known.
    pub speed_uncertainty_rev_s: Option<f64>,
    /// The speed stated in the bench file, rev/s.
    pub stated_speed_rev_s: f64,
    /// The pumping frequency at the measured speed, Hz.
    pub pumping_frequency_hz: f64,
    /// The method (`two_systems`, `secondary_source`).
    pub method: &'static str,
    /// Number of transducers.
    pub transducers: usize,
    /// Per condition.
    pub conditions: Vec<ConditionResult>,
    /// Speed of sound in the reference line, m/s.
    pub speed_of_sound_m_s: ScalarResult,
    /// Where it came from: `in_situ`, `stated` or `from_fluid`.
    pub speed_of_sound_source: &'static str,
    /// The reference line's wall: `rigid`, `thick` (Lamé) or `thin`
    /// (Korteweg), which `from_fluid` follows.
    pub wall_model: &'static str,
    /// One entry per harmonic that could be estimated.
    pub harmonics: Vec<HarmonicFit>,
    /// Overall rms anechoic ripple, Pa.
    pub anechoic_rms_pa: ScalarResult,
    /// Overall rms blocked ripple, Pa.
    pub blocked_rms_pa: ScalarResult,
    /// The harmonics the overall levels include.
    pub rms_orders: Vec<u32>,
    /// The source impedance as a volume with leakage (two or more
    /// harmonics of status `estimated`).
    pub equivalent: Option<EquivalentResult>,
    /// The χ² check of the wave fits, where they are over-determined.
    pub residual_check: Option<ResidualCheckResult>,
    /// Monte Carlo draws behind the uncertainties (0: none).
    pub draws: usize,
    /// Conditioning and other warnings.
    pub warnings: Vec<Notice>,
    /// The estimator's report (for the pump source file).
    #[serde(skip)]
    pub report: FitReport,
}

impl FitResult {
    /// The estimates as a pump source file's content.
    pub fn pump_source(&self) -> PumpSource {
        let r = &self.report;
        PumpSource {
            name: r.pump.clone(),
            speed_rev_s: r.speed_rev_s,
            speed_uncertainty_rev_s: r.speed_uncertainty_rev_s,
            pumping_elements: r.pumping_elements,
            harmonics: r
                .harmonics
                .iter()
                .map(|h| SourceHarmonic {
                    order: h.order,
                    flow: h.flow.value,
                    impedance: h.impedance.value,
                    flow_uncertainty: h.flow.uncertainty.map(|u| u.amplitude),
                    impedance_uncertainty: h.impedance.uncertainty.map(|u| u.amplitude),
                    status: h.status,
                    note: (h.status != HarmonicStatus::Estimated).then(|| h.flags.join("; ")),
                })
                .collect(),
            test: crate::io::source_file::TestConditions::default(),
        }
    }
}

/// Estimates the source as `fit` does from loaded records (`data`, one
/// per condition of `bench`).
///
/// # Errors
/// [`Error::Request`] when the estimator cannot proceed with these
/// records (the bench's own problem); [`Error::Failed`] when no harmonic
/// could be estimated; [`Error::NotFinite`] for a value that is not finite.
pub fn fit(
    bench: &Bench,
    data: &[ConditionSpectra],
    file: &str,
    options: &FitOptions,
    harmonics_origin: Origin,
    progress: &mut dyn Observer,
) -> Result<FitResult, Error> {
    let report = run_fit(bench, data, options, progress)
        .map_err(|e| Error::Request(format!("{file}: {e}")))?;
    let warnings = notices(&report.warnings);
    if report.harmonics.is_empty() {
        return Err(Error::failed(
            format!("{file}: no harmonic could be estimated"),
            NoHarmonic(warnings),
        ));
    }
    for h in &report.harmonics {
        for (what, e) in [
            ("flow ripple", &h.flow),
            ("source impedance", &h.impedance),
            ("anechoic ripple", &h.anechoic),
            ("blocked ripple", &h.blocked),
        ] {
            let u_ok = e
                .uncertainty
                .is_none_or(|u| u.amplitude.is_finite() && u.phase_rad.is_finite());
            if !(e.value.is_finite() && u_ok) {
                return Err(Error::NotFinite(format!(
                    "the {what} of harmonic {} ({:.2} Hz) is not a finite number",
                    h.order, h.freq_hz
                )));
            }
        }
    }
    if let Some(e) = &report.equivalent {
        let finite = |s: &Scalar| s.value.is_finite() && s.uncertainty.is_none_or(f64::is_finite);
        if !(finite(&e.volume_m3) && finite(&e.leakage_conductance) && e.misfit.is_finite()) {
            return Err(Error::NotFinite(
                "the equivalent internal volume or leakage is not a finite number".into(),
            ));
        }
    }
    let c = &report.speed_of_sound;
    Ok(FitResult {
        subject: Subject {
            file: file.to_string(),
            title: bench.title.clone(),
        },
        inputs: vec![
            Input::number("harmonics", bench.harmonics.into(), "1", harmonics_origin),
            Input::number("draws", options.draws as f64, "1", Origin::Request),
            Input::number("seed", options.seed as f64, "1", Origin::Request),
            Input::text(
                "include_flagged",
                if options.include_flagged { "yes" } else { "no" },
                Origin::Request,
            ),
        ],
        pump: report.pump.clone(),
        pumping_elements: report.pumping_elements,
        speed_rev_s: report.speed_rev_s,
        speed_uncertainty_rev_s: report.speed_uncertainty_rev_s,
        stated_speed_rev_s: bench.pump.speed_rev_s,
        pumping_frequency_hz: report.pumping_frequency_hz(),
        method: report.method.name(),
        transducers: bench.transducers.len(),
        conditions: report
            .conditions
            .iter()
            .map(|ci| ConditionResult {
                name: ci.name.clone(),
                pumping_frequency_hz: ci.pumping_frequency_hz,
                pumping_frequency_uncertainty_hz: ci.pumping_frequency_uncertainty_hz,
                pumping_frequency_held: ci.pumping_frequency_held,
                tacho: ci.tacho,
                secondary_fundamental_hz: ci.secondary_fundamental_hz,
                lowest_snr_db: ci.snr_db.iter().flatten().copied().reduce(f64::min),
            })
            .collect(),
        speed_of_sound_m_s: (&c.estimate).into(),
        speed_of_sound_source: match c.source {
            SpeedOfSound::InSitu => "in_situ",
            SpeedOfSound::Fixed(_) => "stated",
            SpeedOfSound::FromFluid => "from_fluid",
        },
        wall_model: match bench.line.wall {
            crate::wall::Wall::Rigid => "rigid",
            crate::wall::Wall::ThickElastic { .. } => "thick",
            crate::wall::Wall::Elastic { .. } => "thin",
        },
        harmonics: report
            .harmonics
            .iter()
            .map(|h| HarmonicFit {
                order: h.order,
                freq_hz: h.freq_hz,
                flow_m3_s: (&h.flow).into(),
                impedance_pa_s_m3: (&h.impedance).into(),
                anechoic_pa: (&h.anechoic).into(),
                blocked_pa: (&h.blocked).into(),
                condition_number: h.condition_number,
                status: h.status,
                expected_bias: h.expected_bias.map(|b| ExpectedBiasResult {
                    flow: b.flow,
                    impedance: b.impedance,
                }),
                flags: h.flags.clone(),
            })
            .collect(),
        anechoic_rms_pa: (&report.anechoic_rms_pa).into(),
        blocked_rms_pa: (&report.blocked_rms_pa).into(),
        rms_orders: report.rms_orders.clone(),
        equivalent: report.equivalent.as_ref().map(|e| EquivalentResult {
            volume_m3: (&e.volume_m3).into(),
            leakage_conductance_m3_pa_s: (&e.leakage_conductance).into(),
            bulk_modulus_pa: bench.fluid.bulk_modulus_pa,
            orders: e.orders.clone(),
            misfit: e.misfit,
            reduced_chi_square: e.reduced_chi_square,
        }),
        residual_check: report.residual_check.map(|c| ResidualCheckResult {
            chi_square: c.chi_square,
            dof: c.dof,
            factor: c.factor,
            applied: c.applied,
        }),
        draws: report.draws,
        warnings,
        report,
    })
}

/// No harmonic could be estimated; the warnings say why.
#[derive(Debug)]
struct NoHarmonic(Vec<Notice>);

impl std::fmt::Display for NoHarmonic {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let reasons: Vec<String> = self.0.iter().map(ToString::to_string).collect();
        write!(f, "{}", reasons.join("; "))
    }
}

impl std::error::Error for NoHarmonic {}

//! `fit --self-check N`: synthetic data from the bench file's known source
//! at its stated noise, fitted over N seeds as records are, and per harmonic
//! the bias, the spread over the reported standard uncertainty and the
//! coverage of the ±1σ and ±2σ intervals (the library's
//! [`crate::estimate::selfcheck`]).

use super::{Error, Input, Origin, Subject};
use crate::estimate::Observer;
use crate::estimate::bench::Bench;
use crate::estimate::fit::{FitOptions, HarmonicStatus};
use crate::estimate::selfcheck::{self, QuantityCheck, SelfCheckOptions};
use serde::Serialize;

/// The statistics of one quantity over the seeds.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct QuantityCheckResult {
    /// `flow_amplitude`, `flow_phase`, `impedance_amplitude` or
    /// `impedance_phase`.
    pub quantity: &'static str,
    /// Seeds that gave an estimate with an uncertainty.
    pub samples: usize,
    /// Mean error: relative for an amplitude, radians for a phase.
    pub bias: f64,
    /// The mean error in standard errors of the mean.
    pub bias_standard_errors: f64,
    /// Observed spread over the root mean square of the reported σ.
    pub spread_over_sigma: f64,
    /// Fraction of the seeds within ±1σ (68.3 % for a normal error).
    pub coverage_1sigma: f64,
    /// Fraction within ±2σ (95.4 %).
    pub coverage_2sigma: f64,
}

/// The statistics of one harmonic.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicCheckResult {
    /// Harmonic order.
    pub order: u32,
    /// Frequency, Hz.
    pub freq_hz: f64,
    /// Its status in the noise-free fit.
    pub status: HarmonicStatus,
    /// |Qs|, arg Qs, |Zs|, arg Zs.
    pub quantities: Vec<QuantityCheckResult>,
}

/// The result of `fit --self-check`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SelfCheckResult {
    /// The bench file.
    pub subject: Subject,
    /// Inputs: seeds, first seed, draws, harmonics.
    pub inputs: Vec<Input>,
    /// Seeds run.
    pub seeds: usize,
    /// Monte Carlo draws per fit.
    pub draws: usize,
    /// Seeds whose fit gave no estimate at all.
    pub failed_seeds: usize,
    /// The synthesis noise, a fraction of the rms ripple.
    pub noise: f64,
    /// Largest relative error of Qs over the harmonics estimated without
    /// flags, without noise.
    pub noise_free_flow_error: f64,
    /// The same for Zs.
    pub noise_free_impedance_error: f64,
    /// The half-width of the band of spread/σ around 1 that the check
    /// holds the unflagged harmonics to: 0.15, or three sampling errors
    /// 3/√(2n) of spread/σ when the seeds are few.
    pub spread_band: f64,
    /// Per harmonic.
    pub harmonics: Vec<HarmonicCheckResult>,
    /// Quantities of unflagged harmonics outside bias ±3 standard errors or
    /// spread/σ 1 ± `spread_band`, as "|Zs| at harmonic 3".
    pub outside: Vec<String>,
}

/// Printed names of the four quantities, in the order of
/// [`HarmonicCheckResult::quantities`].
pub fn quantity_symbol(key: &str) -> &'static str {
    match key {
        "flow_amplitude" => "|Qs|",
        "flow_phase" => "arg Qs",
        "impedance_amplitude" => "|Zs|",
        _ => "arg Zs",
    }
}

fn quantity(name: &'static str, q: &QuantityCheck) -> QuantityCheckResult {
    QuantityCheckResult {
        quantity: name,
        samples: q.samples,
        bias: q.bias,
        bias_standard_errors: q.bias_standard_errors,
        spread_over_sigma: q.spread_over_sigma,
        coverage_1sigma: q.coverage_1,
        coverage_2sigma: q.coverage_2,
    }
}

/// Runs the self-check over `seeds` seeds from `options.seed` on.
///
/// # Errors
/// [`Error::Request`] when the bench has no `synthesis` section, the seed
/// count is out of range or the noise-free fit fails; [`Error::NotFinite`]
/// for a statistic that is not a finite number.
pub fn self_check(
    bench: &Bench,
    file: &str,
    seeds: usize,
    options: FitOptions,
    harmonics_origin: Origin,
    observer: &mut dyn Observer,
) -> Result<SelfCheckResult, Error> {
    let r = selfcheck::run(
        bench,
        &SelfCheckOptions {
            seeds,
            first_seed: options.seed,
            fit: options,
        },
        observer,
    )
    .map_err(|e| Error::Request(format!("{file}: {e}")))?;
    let band = 0.15f64.max(3.0 / (2.0 * r.seeds as f64).sqrt());
    let mut outside = Vec::new();
    let harmonics: Vec<HarmonicCheckResult> = r
        .harmonics
        .iter()
        .map(|h| {
            let quantities = vec![
                quantity("flow_amplitude", &h.flow_amplitude),
                quantity("flow_phase", &h.flow_phase),
                quantity("impedance_amplitude", &h.impedance_amplitude),
                quantity("impedance_phase", &h.impedance_phase),
            ];
            if h.status == HarmonicStatus::Estimated {
                for q in &quantities {
                    if q.bias_standard_errors.abs() > 3.0
                        || (q.spread_over_sigma - 1.0).abs() > band
                    {
                        outside.push(format!(
                            "{} at harmonic {}",
                            quantity_symbol(q.quantity),
                            h.order
                        ));
                    }
                }
            }
            HarmonicCheckResult {
                order: h.order,
                freq_hz: h.freq_hz,
                status: h.status,
                quantities,
            }
        })
        .collect();
    let finite = harmonics.iter().flat_map(|h| &h.quantities).all(|q| {
        [
            q.bias,
            q.bias_standard_errors,
            q.spread_over_sigma,
            q.coverage_1sigma,
            q.coverage_2sigma,
        ]
        .iter()
        .all(|v| v.is_finite())
    });
    if !(finite && r.noise_free_error.0.is_finite() && r.noise_free_error.1.is_finite()) {
        return Err(Error::NotFinite(format!(
            "{file}: a self-check statistic is not a finite number"
        )));
    }
    Ok(SelfCheckResult {
        subject: Subject {
            file: file.to_string(),
            title: bench.title.clone(),
        },
        inputs: vec![
            Input::number("seeds", r.seeds as f64, "1", Origin::Request),
            Input::number("seed", options.seed as f64, "1", Origin::Request),
            Input::number("draws", r.draws as f64, "1", Origin::Request),
            Input::number("harmonics", bench.harmonics.into(), "1", harmonics_origin),
        ],
        seeds: r.seeds,
        draws: r.draws,
        failed_seeds: r.failed_seeds,
        noise: r.noise,
        noise_free_flow_error: r.noise_free_error.0,
        noise_free_impedance_error: r.noise_free_error.1,
        spread_band: band,
        harmonics,
        outside,
    })
}

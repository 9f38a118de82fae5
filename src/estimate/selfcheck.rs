//! A statistical self-check of a bench design: synthetic data from the
//! bench file's known source (`synthesis`) at its stated noise, fitted over
//! many seeds exactly as `ripline fit` fits records, and the errors set
//! against the truth. Per harmonic and quantity (amplitude and phase of Qs
//! and Zs) it gives the bias, the observed spread over the reported
//! standard uncertainty, and the coverage of the ±1σ and ±2σ intervals,
//! which for a normal error are 68.27 % and 95.45 % (erf(1/√2), erf(√2)).
//! A noise-free run first gives each harmonic's status and checks that the
//! estimation is exact without noise.
//!
//! Seed s makes the data with `Rng::new(s)` and the Monte Carlo with seed
//! s as well, so any seed can be rerun alone (`ripline synth --seed s`
//! then `ripline fit --seed s` gives the same numbers through files, up to
//! the digits written).

use super::bench::{Bench, Synthesis};
use super::extract::{self, ConditionSpectra, TimeRecord};
use super::fit::{FitOptions, FitReport, HarmonicStatus, fit};
use super::rng::Rng;
use super::synth::{self, SyntheticData};
use super::tacho;
use super::{EstimateError, Observer, Quiet};
use crate::C64;

/// Most seeds a self-check runs.
pub const MAX_SEEDS: usize = 2000;

/// Settings of a self-check.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SelfCheckOptions {
    /// Number of seeds (1..=[`MAX_SEEDS`]).
    pub seeds: usize,
    /// The first seed; the others follow it.
    pub first_seed: u64,
    /// The fit settings (Monte Carlo draws for σ, overall levels).
    pub fit: FitOptions,
}

/// Statistics of one estimated quantity over the seeds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct QuantityCheck {
    /// Seeds that gave an estimate with an uncertainty.
    pub samples: usize,
    /// Mean error: relative to the true value for an amplitude, in rad for
    /// a phase.
    pub bias: f64,
    /// The mean error in standard errors of the mean, bias/(spread/√n).
    pub bias_standard_errors: f64,
    /// Standard deviation of the errors over the root mean square of the
    /// reported standard uncertainties.
    pub spread_over_sigma: f64,
    /// Fraction of the seeds whose error lies within ±1 reported σ.
    pub coverage_1: f64,
    /// Fraction within ±2σ.
    pub coverage_2: f64,
}

/// The statistics of one harmonic.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HarmonicCheck {
    /// Harmonic order.
    pub order: u32,
    /// Frequency in Hz.
    pub freq_hz: f64,
    /// Status in the noise-free fit.
    pub status: HarmonicStatus,
    /// |Qs|.
    pub flow_amplitude: QuantityCheck,
    /// arg Qs.
    pub flow_phase: QuantityCheck,
    /// |Zs|.
    pub impedance_amplitude: QuantityCheck,
    /// arg Zs.
    pub impedance_phase: QuantityCheck,
}

/// The outcome of a self-check.
#[derive(Debug, Clone, PartialEq)]
pub struct SelfCheckReport {
    /// Seeds run.
    pub seeds: usize,
    /// Seeds whose fit failed (no estimate at all).
    pub failed_seeds: usize,
    /// The noise of the synthesis (fraction of the rms ripple).
    pub noise: f64,
    /// Monte Carlo draws per fit.
    pub draws: usize,
    /// Largest relative error of Qs and of Zs over the harmonics estimated
    /// without flags, without noise.
    pub noise_free_error: (f64, f64),
    /// Per harmonic.
    pub harmonics: Vec<HarmonicCheck>,
}

/// The true Qs and Zs at harmonic k at the synthesis's actual speed.
pub fn truth(bench: &Bench, synthesis: &Synthesis, k: u32) -> (C64, C64) {
    let scale = 1.0 + synthesis.speed_error;
    let speed = bench.pump.speed_rev_s * scale;
    let f = f64::from(k) * bench.pump.pumping_frequency_hz() * scale;
    (
        synth::source_flow(&synthesis.flow_ripple, k, speed),
        synthesis
            .impedance
            .admittance(std::f64::consts::TAU * f)
            .inv(),
    )
}

/// Synthetic data of every condition from `rng`, extracted as
/// `ripline fit` extracts records (the pump frequency held in
/// secondary-source conditions, the tacho read where there is one).
///
/// # Errors
/// [`EstimateError`] when the synthesis or the extraction fails.
pub fn synthetic_spectra(
    bench: &Bench,
    synthesis: &Synthesis,
    rng: &mut Rng,
) -> Result<Vec<ConditionSpectra>, EstimateError> {
    let data: Vec<SyntheticData> = bench
        .conditions
        .iter()
        .map(|c| synth::condition_data(bench, synthesis, c, rng))
        .collect::<Result<_, _>>()
        .map_err(|e| EstimateError::Bench(e.to_string()))?;
    extract::extract_conditions(bench, |i, pump| {
        let cond = &bench.conditions[i];
        match &data[i] {
            SyntheticData::TimeSeries {
                sample_rate_hz,
                channels,
                tacho,
            } => {
                let shaft = tacho
                    .as_ref()
                    .map(|t| tacho::shaft_reference(t, *sample_rate_hz))
                    .transpose()
                    .map_err(|e| EstimateError::Bench(format!("condition `{}`: {e}", cond.name)))?;
                let rec = TimeRecord {
                    file: cond.name.clone(),
                    sample_rate_hz: *sample_rate_hz,
                    channels: channels.clone(),
                };
                let req = extract::request_for(bench, cond, pump, shaft.as_ref());
                extract::extract(&rec, &req, &mut Quiet)
            }
            SyntheticData::Spectra(lines) => {
                Ok(extract::spectra_condition(cond, lines.clone(), pump))
            }
        }
    })
}

/// Running sums of one quantity.
#[derive(Debug, Default, Clone)]
struct Tally {
    errors: Vec<f64>,
    sigmas: Vec<f64>,
}

impl Tally {
    fn push(&mut self, error: f64, sigma: f64) {
        self.errors.push(error);
        self.sigmas.push(sigma);
    }

    fn check(&self) -> QuantityCheck {
        let n = self.errors.len();
        let nf = n.max(1) as f64;
        let mean = self.errors.iter().sum::<f64>() / nf;
        let var = self.errors.iter().map(|e| (e - mean).powi(2)).sum::<f64>() / (nf - 1.0).max(1.0);
        let rms_sigma = (self.sigmas.iter().map(|s| s * s).sum::<f64>() / nf).sqrt();
        let within = |k: f64| {
            self.errors
                .iter()
                .zip(&self.sigmas)
                .filter(|(e, s)| e.abs() <= k * **s)
                .count() as f64
                / nf
        };
        let se = (var / nf).sqrt();
        QuantityCheck {
            samples: n,
            bias: mean,
            bias_standard_errors: if se > 0.0 { mean / se } else { 0.0 },
            spread_over_sigma: if rms_sigma > 0.0 {
                var.sqrt() / rms_sigma
            } else {
                0.0
            },
            coverage_1: within(1.0),
            coverage_2: within(2.0),
        }
    }
}

/// The four quantities of one harmonic.
#[derive(Debug, Default, Clone)]
struct HarmonicTally {
    flow_amplitude: Tally,
    flow_phase: Tally,
    impedance_amplitude: Tally,
    impedance_phase: Tally,
}

/// Runs the self-check: a noise-free fit, then `options.seeds` noisy ones.
///
/// # Errors
/// [`EstimateError::Bench`] when the bench has no `synthesis` section, the
/// seed count is out of range, or the noise-free fit fails.
pub fn run(
    bench: &Bench,
    options: &SelfCheckOptions,
    observer: &mut dyn Observer,
) -> Result<SelfCheckReport, EstimateError> {
    let synthesis = bench.synthesis.clone().ok_or_else(|| {
        EstimateError::Bench(
            "the self-check needs a `synthesis` section (the known source and the noise)".into(),
        )
    })?;
    if !(1..=MAX_SEEDS).contains(&options.seeds) {
        return Err(EstimateError::Bench(format!(
            "the self-check runs 1 to {MAX_SEEDS} seeds, found {}",
            options.seeds
        )));
    }
    let clean = Synthesis {
        noise: 0.0,
        ..synthesis.clone()
    };
    let exact_data = synthetic_spectra(bench, &clean, &mut Rng::new(options.first_seed))?;
    let exact = fit(
        bench,
        &exact_data,
        &FitOptions {
            draws: 0,
            ..options.fit
        },
        &mut Quiet,
    )?;
    let mut worst = (0.0f64, 0.0f64);
    for h in exact
        .harmonics
        .iter()
        .filter(|h| h.status == HarmonicStatus::Estimated)
    {
        let (q, z) = truth(bench, &synthesis, h.order);
        worst.0 = worst.0.max((h.flow.value - q).norm() / q.norm());
        worst.1 = worst.1.max((h.impedance.value - z).norm() / z.norm());
    }
    let mut tallies = vec![HarmonicTally::default(); bench.harmonics as usize];
    let mut failed = 0;
    observer.stage("self-check (synth + fit per seed)", options.seeds as u64);
    for i in 0..options.seeds {
        let seed = options.first_seed.wrapping_add(i as u64);
        let report = synthetic_spectra(bench, &synthesis, &mut Rng::new(seed)).and_then(|d| {
            fit(
                bench,
                &d,
                &FitOptions {
                    seed,
                    ..options.fit
                },
                &mut Quiet,
            )
        });
        match report {
            Ok(r) => tally(bench, &synthesis, &r, &mut tallies),
            Err(_) => failed += 1,
        }
        observer.advance(1);
    }
    observer.finish();
    let harmonics = exact
        .harmonics
        .iter()
        .map(|h| {
            let t = &tallies[(h.order - 1) as usize];
            HarmonicCheck {
                order: h.order,
                freq_hz: h.freq_hz,
                status: h.status,
                flow_amplitude: t.flow_amplitude.check(),
                flow_phase: t.flow_phase.check(),
                impedance_amplitude: t.impedance_amplitude.check(),
                impedance_phase: t.impedance_phase.check(),
            }
        })
        .collect();
    Ok(SelfCheckReport {
        seeds: options.seeds,
        failed_seeds: failed,
        noise: synthesis.noise,
        draws: options.fit.draws,
        noise_free_error: worst,
        harmonics,
    })
}

/// Adds one fit's errors to the tallies.
fn tally(bench: &Bench, synthesis: &Synthesis, r: &FitReport, tallies: &mut [HarmonicTally]) {
    for h in &r.harmonics {
        let (q, z) = truth(bench, synthesis, h.order);
        let t = &mut tallies[(h.order - 1) as usize];
        if let Some(u) = h.flow.uncertainty {
            t.flow_amplitude
                .push(h.flow.value.norm() / q.norm() - 1.0, u.amplitude / q.norm());
            t.flow_phase.push((h.flow.value / q).arg(), u.phase_rad);
        }
        if let Some(u) = h.impedance.uncertainty {
            t.impedance_amplitude.push(
                h.impedance.value.norm() / z.norm() - 1.0,
                u.amplitude / z.norm(),
            );
            t.impedance_phase
                .push((h.impedance.value / z).arg(), u.phase_rad);
        }
    }
}

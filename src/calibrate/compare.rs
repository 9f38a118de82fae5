//! Measured against predicted: per run, tap and harmonic, the measured and
//! predicted amplitude and phase and their differences.
//!
//! The difference in level is 20·log10(|P|/|M|) dB (predicted over
//! measured: positive where the model predicts more ripple), the phase
//! difference arg P − arg M wrapped to ±180°. Where the measurement's
//! standard uncertainty u = √E|δM|² is known, the normalised difference is
//! |P − M|/u with phases compared (a circular complex normal deviation has
//! E|δ|²/u² = 1, so values around 1 are what noise alone gives), or
//! (|P| − |M|)/(u/√2) for amplitudes only.

use super::measured::{MeasuredRun, Model, ModelError};
use crate::C64;
use crate::io::Setting;
use crate::io::measurement_file::Phases;
use serde::Serialize;

/// One harmonic at one tap of one run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Row {
    /// The tap.
    pub tap: String,
    /// Order of the shaft fundamental.
    pub order: u32,
    /// Frequency, Hz.
    pub freq_hz: f64,
    /// Measured amplitude (peak), Pa.
    pub measured_pa: f64,
    /// Measured phase, degrees (against the record's first sample).
    pub measured_phase_deg: f64,
    /// Standard uncertainty of the measured amplitude, Pa (u/√2), if known.
    pub measured_u_pa: Option<f64>,
    /// Predicted amplitude (peak), Pa.
    pub predicted_pa: f64,
    /// Predicted phase, degrees (against the shaft-angle reference).
    pub predicted_phase_deg: f64,
    /// 20·log10(predicted/measured), dB; `None` where either is zero.
    pub difference_db: Option<f64>,
    /// Predicted minus measured phase, wrapped to ±180°, when phases are
    /// compared.
    pub difference_deg: Option<f64>,
    /// The difference over the measurement's uncertainty, when it is known.
    pub normalised: Option<f64>,
}

/// One run compared.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RunComparison {
    /// The run's name.
    pub run: String,
    /// Its envelope point (`as written` for the file's own).
    pub point: String,
    /// The stated shaft speed, rev/s.
    pub stated_speed_rev_s: f64,
    /// The speed found in the data (and used for the prediction), rev/s.
    pub speed_rev_s: f64,
    /// One row per tap and harmonic.
    pub rows: Vec<Row>,
}

/// The agreement at one tap over every run and harmonic.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TapAgreement {
    /// The tap.
    pub tap: String,
    /// Rows compared.
    pub rows: usize,
    /// The rms of the level differences, dB.
    pub rms_difference_db: Option<f64>,
    /// The largest level difference (by size, with its sign), dB.
    pub worst_difference_db: Option<f64>,
    /// The rms of the normalised differences (about 1 when the model agrees
    /// within the measurement's noise), where uncertainties are known.
    pub rms_normalised: Option<f64>,
    /// χ² of the normalised differences, where uncertainties are known:
    /// Σ 2·z² with phases compared (for circular complex normal noise
    /// 2|δ|²/u² is χ² with 2 degrees of freedom), Σ z² for amplitudes only
    /// (z about standard normal).
    pub chi_squared: Option<f64>,
    /// Its degrees of freedom: 2 per row with phases, 1 without.
    pub degrees_of_freedom: Option<usize>,
    /// Whether the differences are what the measurement's noise alone
    /// gives: χ² at most the [`AGREEMENT_QUANTILE`] quantile of χ²(ν)
    /// (Wilson–Hilferty, `uncertainty::stats::chi2_quantile`), or, when the
    /// uncertainties are estimated from the records, of the scaled χ² of the
    /// same mean and variance, as `calibrate`'s misfit test (module docs of
    /// `calibrate::fit`, "Weights estimated from the data").
    pub within_noise: Option<bool>,
}

/// A tap agrees with the model within the noise when its χ² lies below this
/// quantile of χ²(ν): a model that is right is called wrong at 1 % of taps.
pub const AGREEMENT_QUANTILE: f64 = 0.99;

/// Measured against predicted over every run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Comparison {
    /// How phases were compared.
    pub phases: Phases,
    /// The runs.
    pub runs: Vec<RunComparison>,
    /// Per tap, over every run.
    pub taps: Vec<TapAgreement>,
}

/// The phase difference wrapped to (−180°, 180°].
pub fn wrap_deg(d: f64) -> f64 {
    let w = (d + 180.0).rem_euclid(360.0) - 180.0;
    if w == -180.0 { 180.0 } else { w }
}

/// The normalised difference of a predicted phasor from a measured one with
/// standard uncertainty `u` (see the module docs).
pub fn normalised(predicted: C64, measured: C64, u: f64, phases: Phases) -> f64 {
    match phases {
        Phases::Shaft => (predicted - measured).norm() / u,
        Phases::Ignore => (predicted.norm() - measured.norm()) / (u / 2f64.sqrt()),
    }
}

/// Compares the model with `settings` against what was measured.
///
/// # Errors
/// [`ModelError`] when the circuit cannot be predicted.
pub fn compare(
    model: &Model<'_>,
    measured: &[MeasuredRun],
    settings: &[Setting],
) -> Result<Comparison, ModelError> {
    let predicted = model.predict(settings)?;
    let phases = model.measurements.phases;
    let mut runs = Vec::new();
    for ((run, m), p) in model.measurements.runs.iter().zip(measured).zip(&predicted) {
        let mut rows = Vec::new();
        for (t, (_, tap)) in run.taps.iter().enumerate() {
            for (h, ph) in m.harmonics.iter().zip(p) {
                let (mv, pv) = (h.pressures[t], ph[t]);
                let db = (mv.norm() > 0.0 && pv.norm() > 0.0)
                    .then(|| 20.0 * (pv.norm().log10() - mv.norm().log10()));
                rows.push(Row {
                    tap: tap.clone(),
                    order: h.order,
                    freq_hz: h.freq_hz,
                    measured_pa: mv.norm(),
                    measured_phase_deg: mv.arg().to_degrees(),
                    measured_u_pa: h.uncertainty[t].map(|u| u / 2f64.sqrt()),
                    predicted_pa: pv.norm(),
                    predicted_phase_deg: pv.arg().to_degrees(),
                    difference_db: db,
                    difference_deg: (phases == Phases::Shaft)
                        .then(|| wrap_deg((pv.arg() - mv.arg()).to_degrees())),
                    normalised: h.uncertainty[t]
                        .filter(|&u| u > 0.0)
                        .map(|u| normalised(pv, mv, u, phases)),
                });
            }
        }
        runs.push(RunComparison {
            run: run.name.clone(),
            point: run.point.label(),
            stated_speed_rev_s: run.speed_rev_s,
            speed_rev_s: m.speed_rev_s,
            rows,
        });
    }
    // as calibrate's misfit test: the fewest degrees of freedom of any
    // run's estimated uncertainties
    let weights_dof = measured
        .iter()
        .filter_map(|r| r.uncertainty_dof)
        .reduce(f64::min);
    let taps = tap_agreement(&runs, phases, weights_dof);
    Ok(Comparison { phases, runs, taps })
}

/// Per tap, in order of first appearance.
fn tap_agreement(
    runs: &[RunComparison],
    phases: Phases,
    weights_dof: Option<f64>,
) -> Vec<TapAgreement> {
    let noise = super::fit::TypeA::of(weights_dof, phases == Phases::Shaft);
    let mut names: Vec<&str> = Vec::new();
    for r in runs.iter().flat_map(|r| &r.rows) {
        if !names.contains(&r.tap.as_str()) {
            names.push(&r.tap);
        }
    }
    let rms = |v: &[f64]| {
        (!v.is_empty()).then(|| (v.iter().map(|x| x * x).sum::<f64>() / v.len() as f64).sqrt())
    };
    names
        .into_iter()
        .map(|tap| {
            let rows: Vec<&Row> = runs
                .iter()
                .flat_map(|r| &r.rows)
                .filter(|r| r.tap == tap)
                .collect();
            let db: Vec<f64> = rows.iter().filter_map(|r| r.difference_db).collect();
            let z: Vec<f64> = rows.iter().filter_map(|r| r.normalised).collect();
            let known = !z.is_empty() && z.len() == rows.len();
            let per_row = match phases {
                Phases::Shaft => 2,
                Phases::Ignore => 1,
            };
            let chi_squared = known.then(|| z.iter().map(|x| per_row as f64 * x * x).sum::<f64>());
            let dof = known.then_some(per_row * z.len());
            TapAgreement {
                tap: tap.to_string(),
                rows: rows.len(),
                rms_difference_db: rms(&db),
                worst_difference_db: db
                    .iter()
                    .cloned()
                    .max_by(|a, b| a.abs().total_cmp(&b.abs())),
                rms_normalised: (z.len() == rows.len()).then(|| rms(&z)).flatten(),
                chi_squared,
                degrees_of_freedom: dof,
                within_noise: chi_squared
                    .zip(dof)
                    .map(|(c, n)| c <= noise.quantile(AGREEMENT_QUANTILE, n as f64)),
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn phase_differences_wrap_to_half_a_turn() {
        assert_eq!(wrap_deg(190.0), -170.0);
        assert_eq!(wrap_deg(-190.0), 170.0);
        assert_eq!(wrap_deg(180.0), 180.0);
        assert_eq!(wrap_deg(-180.0), 180.0);
        assert_eq!(wrap_deg(725.0), 5.0);
    }

    // The agreement test holds its stated level when the model is right and
    // the measurement noise is what u says: measured phasors M = P + u·δ with
    // δ circular complex normal (E|δ|² = 1), 24 rows a tap. Over 4,000 such
    // taps the share called beyond the noise is 1 − 0.99 = 1 % within 4
    // sampling standard deviations (√(0.01·0.99/4000) = 0.16 %); with twice
    // the noise (a model off by as much as the noise) nearly every tap is.
    // Amplitudes alone likewise. (χ²(2) for 2|δ|²: the sum of two squared
    // standard normals; a wrong factor or degrees of freedom fails this.)
    #[test]
    fn a_right_model_is_called_wrong_at_the_stated_rate() {
        let mut rng = crate::estimate::rng::Rng::new(17);
        let u = 0.3;
        let p = C64::new(2.0, -1.0);
        for phases in [Phases::Shaft, Phases::Ignore] {
            let mut rate = |scale: f64| {
                let taps = 4000;
                let wrong = (0..taps)
                    .filter(|_| {
                        let rows = (0..24)
                            .map(|h| {
                                let m = p + u * scale * rng.complex_normal();
                                Row {
                                    tap: "t".into(),
                                    order: h + 1,
                                    freq_hz: 100.0,
                                    measured_pa: m.norm(),
                                    measured_phase_deg: 0.0,
                                    measured_u_pa: None,
                                    predicted_pa: p.norm(),
                                    predicted_phase_deg: 0.0,
                                    difference_db: None,
                                    difference_deg: None,
                                    normalised: Some(normalised(p, m, u, phases)),
                                }
                            })
                            .collect();
                        let run = RunComparison {
                            run: "r".into(),
                            point: "p".into(),
                            stated_speed_rev_s: 25.0,
                            speed_rev_s: 25.0,
                            rows,
                        };
                        tap_agreement(&[run], phases, None)[0].within_noise == Some(false)
                    })
                    .count();
                wrong as f64 / taps as f64
            };
            let right = rate(1.0);
            assert!((right - 0.01).abs() < 4.0 * 0.0016, "{phases:?}: {right}");
            assert!(rate(2.0) > 0.95, "{phases:?}");
        }
    }
}

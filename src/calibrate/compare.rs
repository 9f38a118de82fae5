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
}

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
    let taps = tap_agreement(&runs);
    Ok(Comparison { phases, runs, taps })
}

/// Per tap, in order of first appearance.
fn tap_agreement(runs: &[RunComparison]) -> Vec<TapAgreement> {
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
            TapAgreement {
                tap: tap.to_string(),
                rows: rows.len(),
                rms_difference_db: rms(&db),
                worst_difference_db: db
                    .iter()
                    .cloned()
                    .max_by(|a, b| a.abs().total_cmp(&b.abs())),
                rms_normalised: (z.len() == rows.len()).then(|| rms(&z)).flatten(),
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
}

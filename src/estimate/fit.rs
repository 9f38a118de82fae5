//! The estimation end to end: phasors of every condition → speed of sound →
//! wave decomposition → Qs and Zs per harmonic → anechoic and blocked
//! ripple → Monte Carlo uncertainty → a report with a status per harmonic
//! and warnings.
//!
//! Derived ratings (ISO 10767-1 convention, methods.md §5): the blocked
//! pressure ripple P_blk = Qs·Zs (the pump into an infinite impedance) and
//! the anechoic pressure ripple P_an = Qs·Zs·Zc/(Zs + Zc), with Zc the
//! characteristic impedance of the bench's reference line at the estimated
//! speed of sound; overall values are rms, √(Σ_k |P_k|²/2) (methods.md §7.4),
//! over the harmonics whose status is [`HarmonicStatus::Estimated`] unless
//! [`FitOptions::include_flagged`] is set.
//!
//! Uncertainty (JCGM 101:2008, propagation of distributions): every draw
//! perturbs every phasor by its own noise (independent between transducers
//! and lines) and by the errors of its condition's reference parameters
//! (fitted or held pumping frequency, secondary fundamental, tacho time
//! origin), which move all the phasors of a condition together through
//! their sensitivities ∂P/∂θ; a held pumping frequency takes the mean error
//! of the pump-run conditions it came from. The whole estimation is then
//! repeated: speed of sound in situ, decompositions, the weighted impedance
//! fit, the estimator. The residual of the over-determined wave fits is
//! checked against its χ² distribution (ν = 2·Σ(n_t − 2) real degrees of
//! freedom, one fewer with the speed of sound fitted): the phasor
//! uncertainties are scaled by √(χ²/ν), up or down, only when χ² lies
//! outside its central 99 % interval — inside it the factor is noisier
//! (relative standard deviation √(2/ν)) than the phasor uncertainties,
//! which come from thousands of residual samples, and scaling would only
//! add noise.

use super::bench::{Bench, ConditionKind, ImpedanceFit, Method, SpeedOfSound};
use super::decompose::{Decomposition, decompose};
use super::extract::{ConditionSpectra, ReferenceKind};
use super::rng::Rng;
use super::secondary::{self, ImpedanceModel};
use super::two_systems;
use super::uncertainty::{Spread, Z_995, chi_square_quantile, complex_spread, real_spread};
use super::wavespeed::{self, FitStatus, Observation, SearchSettings};
use super::{EstimateError, Observer};
use crate::C64;
use crate::diagnostics::Warning;
use crate::line::Propagation;

/// Settings of a fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FitOptions {
    /// Monte Carlo draws for the uncertainty (0: none).
    pub draws: usize,
    /// Seed of the Monte Carlo generator.
    pub seed: u64,
    /// Include ill-conditioned, extrapolated and unstable harmonics in the
    /// overall levels.
    pub include_flagged: bool,
    /// Take the phasor uncertainties as stated, without the χ² check of the
    /// wave fits (for predicted, noise-free phasors that carry the
    /// uncertainty of records not yet taken: `plan-bench`).
    pub stated_uncertainties: bool,
}

impl Default for FitOptions {
    fn default() -> Self {
        FitOptions {
            draws: 200,
            seed: 1,
            include_flagged: false,
            stated_uncertainties: false,
        }
    }
}

/// A complex result with its standard uncertainties.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Estimate {
    /// The estimate.
    pub value: C64,
    /// Standard uncertainty of the amplitude and of the phase, if known.
    pub uncertainty: Option<Spread>,
}

/// A real result with its standard uncertainty.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Scalar {
    /// The estimate.
    pub value: f64,
    /// Standard uncertainty, if known.
    pub uncertainty: Option<f64>,
}

/// How far a harmonic's estimate can be trusted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum HarmonicStatus {
    /// Well-conditioned: an estimate with a meaningful uncertainty.
    Estimated,
    /// The source impedance is extrapolated beyond the secondary-source
    /// lines: its error is not covered by the uncertainty.
    Extrapolated,
    /// The wave decomposition or the identification is ill-conditioned: the
    /// estimate is biased as well as noisy.
    IllConditioned,
    /// Many Monte Carlo draws gave no solution.
    Unstable,
}

impl HarmonicStatus {
    /// The word used in reports and source files.
    pub fn key(&self) -> &'static str {
        match self {
            HarmonicStatus::Estimated => "estimated",
            HarmonicStatus::Extrapolated => "extrapolated",
            HarmonicStatus::IllConditioned => "ill_conditioned",
            HarmonicStatus::Unstable => "unstable",
        }
    }

    /// The status written as `key`, if it is one.
    pub fn from_key(key: &str) -> Option<Self> {
        [
            HarmonicStatus::Estimated,
            HarmonicStatus::Extrapolated,
            HarmonicStatus::IllConditioned,
            HarmonicStatus::Unstable,
        ]
        .into_iter()
        .find(|s| s.key() == key)
    }
}

/// The bias to expect from the conditioning, relative to the estimate: the
/// median of the Monte Carlo draws over the estimate, less one (the
/// propagation of a noisy estimate through a nonlinear, badly conditioned
/// problem shifts it as it shifted the estimate itself).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExpectedBias {
    /// Of |Qs|.
    pub flow: f64,
    /// Of |Zs|.
    pub impedance: f64,
}

/// The estimates of one pump harmonic.
#[derive(Debug, Clone, PartialEq)]
pub struct HarmonicResult {
    /// Harmonic order k.
    pub order: u32,
    /// Frequency in Hz (mean over the pump conditions).
    pub freq_hz: f64,
    /// Source flow ripple Qs in m³/s (peak phasor against the shaft reference).
    pub flow: Estimate,
    /// Source impedance Zs in Pa·s/m³.
    pub impedance: Estimate,
    /// Anechoic pressure ripple in Pa.
    pub anechoic: Estimate,
    /// Blocked pressure ripple in Pa.
    pub blocked: Estimate,
    /// Characteristic impedance of the reference line used for the anechoic ripple.
    pub zc: C64,
    /// Largest condition number met (decomposition or identification).
    pub condition_number: f64,
    /// How far the estimate can be trusted.
    pub status: HarmonicStatus,
    /// For a flagged harmonic, the bias to expect (with Monte Carlo draws).
    pub expected_bias: Option<ExpectedBias>,
    /// Why the harmonic is flagged (empty: nothing to say).
    pub flags: Vec<String>,
}

/// What was found in one condition's data.
#[derive(Debug, Clone, PartialEq)]
pub struct ConditionInfo {
    /// The condition's name.
    pub name: String,
    /// Pumping frequency found (or held) in Hz.
    pub pumping_frequency_hz: f64,
    /// Whether the pumping frequency was held from the pump-run conditions.
    pub pumping_frequency_held: bool,
    /// Standard uncertainty of the pumping frequency in Hz, if known.
    pub pumping_frequency_uncertainty_hz: Option<f64>,
    /// Secondary-source fundamental found in Hz, if any.
    pub secondary_fundamental_hz: Option<f64>,
    /// Whether a tacho channel gave the shaft-angle reference.
    pub tacho: bool,
    /// Lowest signal-to-noise ratio over the transducers per pump harmonic,
    /// in dB (`None` where unknown).
    pub snr_db: Vec<Option<f64>>,
}

/// Where the speed of sound came from and how its search ended.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpeedOfSoundResult {
    /// The value used, with its uncertainty.
    pub estimate: Scalar,
    /// Where it came from.
    pub source: SpeedOfSound,
    /// The in-situ search's status, if one ran.
    pub status: Option<FitStatus>,
}

/// The χ² check of the over-determined wave fits.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ResidualCheck {
    /// Σ 2·(weighted residual) over the lines, a χ²_ν variable if the phasor
    /// uncertainties are right.
    pub chi_square: f64,
    /// Degrees of freedom ν.
    pub dof: f64,
    /// √(χ²/ν).
    pub factor: f64,
    /// Whether the phasor uncertainties were scaled by the factor (χ²
    /// outside its central 99 % interval).
    pub applied: bool,
}

/// The source impedance read as an internal volume with leakage,
/// Ys = G + jωV/B (methods.md §5 form b; B the bench fluid's bulk
/// modulus), fitted by weighted least squares (weights 1/var Ys from the
/// Monte Carlo, equal without it) to the harmonics of status `estimated`;
/// uncertainties from refitting every Monte Carlo draw.
#[derive(Debug, Clone, PartialEq)]
pub struct EquivalentSource {
    /// The equivalent internal volume V = C·B in m³.
    pub volume_m3: Scalar,
    /// The leakage conductance G = 1/R_leak in m³/(Pa·s) (it may come out
    /// near zero or below when the leakage is too small to resolve).
    pub leakage_conductance: Scalar,
    /// The harmonics fitted.
    pub orders: Vec<u32>,
    /// Root mean square of |Ys − (G + jωC)|/|Ys| over those harmonics: how
    /// well the form describes the estimates.
    pub misfit: f64,
    /// With uncertainties: Σ w|Ys − model|² over its expectation 2n − 2;
    /// well above 1 means the form does not describe the impedance.
    pub reduced_chi_square: Option<f64>,
}

/// The outcome of a fit.
#[derive(Debug, Clone, PartialEq)]
pub struct FitReport {
    /// The pump's name.
    pub pump: String,
    /// Number of pumping elements.
    pub pumping_elements: u32,
    /// Measured shaft speed (mean over the pump conditions) in rev/s.
    pub speed_rev_s: f64,
    /// Its standard uncertainty in rev/s, if known.
    pub speed_uncertainty_rev_s: Option<f64>,
    /// The method used.
    pub method: Method,
    /// Speed of sound in the reference line.
    pub speed_of_sound: SpeedOfSoundResult,
    /// One entry per harmonic that could be estimated.
    pub harmonics: Vec<HarmonicResult>,
    /// Overall rms anechoic ripple in Pa (over `rms_orders`).
    pub anechoic_rms_pa: Scalar,
    /// Overall rms blocked ripple in Pa (over `rms_orders`).
    pub blocked_rms_pa: Scalar,
    /// The harmonics the overall levels include.
    pub rms_orders: Vec<u32>,
    /// Per condition.
    pub conditions: Vec<ConditionInfo>,
    /// Warnings (flagged harmonics with the reason, and others).
    pub warnings: Vec<Warning>,
    /// Monte Carlo draws used for the uncertainties (0: none).
    pub draws: usize,
    /// The residual check of the wave fits, where they are over-determined
    /// and the phasor uncertainties are known.
    pub residual_check: Option<ResidualCheck>,
    /// The source impedance as a volume with leakage (two or more harmonics
    /// of status `estimated`).
    pub equivalent: Option<EquivalentSource>,
}

impl FitReport {
    /// Pumping frequency in Hz at the measured speed.
    pub fn pumping_frequency_hz(&self) -> f64 {
        self.speed_rev_s * f64::from(self.pumping_elements)
    }
}

/// One spectral line of one condition, ready for the estimation.
#[derive(Debug, Clone)]
struct Prepared {
    cond: usize,
    pump_line: bool,
    order: u32,
    freq_hz: f64,
    prop_ref: Propagation,
    pressures: Vec<C64>,
    uncertainty: Vec<Option<f64>>,
    weights: Vec<f64>,
    sensitivity: Vec<Vec<C64>>,
}

impl Prepared {
    fn uncertainty_known(&self) -> bool {
        self.uncertainty.iter().all(Option::is_some)
    }
}

/// The deterministic part of the estimation for one set of phasors.
#[derive(Debug, Clone)]
struct Core {
    c0: f64,
    status: Option<FitStatus>,
    decomps: Vec<Option<Decomposition>>,
    harmonics: Vec<Option<CoreHarmonic>>,
    impedance_range: Option<(f64, f64)>,
}

#[derive(Debug, Clone, Copy)]
struct CoreHarmonic {
    freq_hz: f64,
    flow: C64,
    impedance: C64,
    zc: C64,
    ident_cond: f64,
}

impl CoreHarmonic {
    fn blocked(&self) -> C64 {
        self.flow * self.impedance
    }
    fn anechoic(&self) -> C64 {
        self.flow * self.impedance * self.zc / (self.impedance + self.zc)
    }
}

/// Per-line statistics of the Monte Carlo draws.
#[derive(Debug, Default, Clone)]
struct Draws {
    flow: Vec<C64>,
    impedance: Vec<C64>,
    anechoic: Vec<C64>,
    blocked: Vec<C64>,
}

/// The lines of every condition that the method uses, with their weights.
fn prepare(
    bench: &Bench,
    data: &[ConditionSpectra],
    c_ref: f64,
) -> Result<Vec<Prepared>, EstimateError> {
    let n_t = bench.transducers.len();
    let props = bench.line_properties(c_ref);
    let mut lines: Vec<Prepared> = Vec::new();
    for (ci, (cond, spectra)) in bench.conditions.iter().zip(data).enumerate() {
        let secondary_cond = matches!(cond.kind, ConditionKind::SecondarySource { .. });
        let pump_lines = spectra
            .pump
            .iter()
            .filter(|p| p.order <= bench.harmonics && !secondary_cond);
        let sec_lines = spectra.secondary.iter().filter(|_| secondary_cond);
        for (p, pump_line) in pump_lines
            .map(|p| (p, true))
            .chain(sec_lines.map(|p| (p, false)))
        {
            if p.pressures.len() != n_t {
                return Err(EstimateError::Bench(format!(
                    "condition `{}`: {} transducer values where the bench has {n_t}",
                    cond.name,
                    p.pressures.len()
                )));
            }
            let known = p.uncertainty.iter().all(Option::is_some);
            let floor = 1e-12 * p.pressures.iter().map(|z| z.norm()).fold(0.0, f64::max);
            let weights = if known {
                p.uncertainty
                    .iter()
                    .map(|u| 1.0 / u.unwrap_or(0.0).max(floor).max(f64::MIN_POSITIVE).powi(2))
                    .collect()
            } else {
                vec![1.0; n_t]
            };
            lines.push(Prepared {
                cond: ci,
                pump_line,
                order: p.order,
                freq_hz: p.freq_hz,
                prop_ref: props.propagation(std::f64::consts::TAU * p.freq_hz),
                pressures: p.pressures.clone(),
                uncertainty: if known {
                    p.uncertainty.clone()
                } else {
                    vec![None; n_t]
                },
                weights,
                sensitivity: if p.sensitivity.len() == spectra.reference.len() {
                    p.sensitivity.clone()
                } else {
                    Vec::new()
                },
            });
        }
    }
    Ok(lines)
}

/// The χ² check of the wave fits (lines with known uncertainties above
/// round-off and three or more transducers).
fn residual_check(
    lines: &[Prepared],
    decomps: &[Option<Decomposition>],
    in_situ: bool,
) -> Option<ResidualCheck> {
    let (mut chi, mut dof) = (0.0, 0.0);
    for (l, d) in lines.iter().zip(decomps) {
        let n_t = l.pressures.len();
        // Phasors known to round-off (noise-free data) carry no statistics.
        let noisy = l
            .uncertainty
            .iter()
            .zip(&l.pressures)
            .any(|(u, p)| u.is_some_and(|u| u > 1e-9 * p.norm()));
        if let (true, Some(d), true) = (l.uncertainty_known() && noisy, d, n_t > 2) {
            chi += 2.0 * d.residual;
            dof += 2.0 * (n_t - 2) as f64;
        }
    }
    if in_situ {
        dof -= 1.0;
    }
    if dof < 1.0 || !chi.is_finite() {
        return None;
    }
    let lo = chi_square_quantile(-Z_995, dof);
    let hi = chi_square_quantile(Z_995, dof);
    Some(ResidualCheck {
        chi_square: chi,
        dof,
        factor: (chi / dof).sqrt(),
        applied: chi < lo || chi > hi,
    })
}

/// Estimates the pump's Norton parameters from the phasors of every
/// condition (in the bench's condition order).
///
/// # Errors
/// [`EstimateError::Bench`] when the data do not match the bench or the
/// method cannot be applied (e.g. the secondary-source lines give no
/// impedance).
pub fn fit(
    bench: &Bench,
    data: &[ConditionSpectra],
    options: &FitOptions,
    observer: &mut dyn Observer,
) -> Result<FitReport, EstimateError> {
    if data.len() != bench.conditions.len() {
        return Err(EstimateError::Bench(format!(
            "{} conditions but data for {}",
            bench.conditions.len(),
            data.len()
        )));
    }
    let n_t = bench.transducers.len();
    let c_ref = bench.nominal_speed_of_sound_m_s();
    let lines = prepare(bench, data, c_ref)?;
    let positions = bench.positions();
    let in_situ = bench.speed_of_sound == SpeedOfSound::InSitu;
    let pressures: Vec<Vec<C64>> = lines.iter().map(|l| l.pressures.clone()).collect();
    let nominal = solve_core(
        bench,
        &lines,
        &pressures,
        &positions,
        c_ref,
        in_situ.then(SearchSettings::default),
    )?;

    // Perturbation sizes for the Monte Carlo: the phasor uncertainties
    // (scaled when the χ² check fails), or, where none is known, the
    // residual of the line's own over-determined wave fit.
    let check = if options.stated_uncertainties {
        None
    } else {
        residual_check(&lines, &nominal.decomps, in_situ)
    };
    let scale = check.filter(|c| c.applied).map_or(1.0, |c| c.factor);
    let dof = n_t.saturating_sub(2) as f64;
    let perturb: Vec<Option<Vec<f64>>> = lines
        .iter()
        .zip(&nominal.decomps)
        .map(|(l, d)| match (l.uncertainty_known(), d, dof > 0.0) {
            (true, _, _) => Some(
                l.uncertainty
                    .iter()
                    .map(|u| u.unwrap_or(0.0) * scale)
                    .collect(),
            ),
            (false, Some(d), true) => Some(vec![(d.residual / dof).sqrt(); n_t]),
            _ => None,
        })
        .collect();
    let mc_possible = perturb.iter().all(Option::is_some);
    let draws = if mc_possible { options.draws } else { 0 };

    let n_h = bench.harmonics as usize;
    let usable_nominal: Vec<bool> = nominal.harmonics.iter().map(Option::is_some).collect();
    let mut per_h: Vec<Draws> = vec![Draws::default(); n_h];
    let mut c_d: Vec<f64> = Vec::new();
    // Per draw: Σ|P_an|² and Σ|P_blk|² per harmonic, summed once the
    // statuses are known.
    let mut levels_d: Vec<Vec<Option<(f64, f64)>>> = Vec::new();
    let mut impedance_d: Vec<Vec<Option<C64>>> = Vec::new();
    if draws > 0 {
        observer.stage("uncertainty (Monte Carlo)", draws as u64);
        let mut rng = Rng::new(options.seed);
        let search = SearchSettings {
            range: 0.03,
            scan_points: 25,
            tolerance: 1e-10,
            ..SearchSettings::default()
        };
        for _ in 0..draws {
            let delta = reference_draw(bench, data, &mut rng);
            let perturbed: Vec<Vec<C64>> = lines
                .iter()
                .zip(&perturb)
                .map(|(l, u)| {
                    let u = u.as_ref().expect("checked above");
                    let dj = &delta[l.cond];
                    l.pressures
                        .iter()
                        .zip(u)
                        .enumerate()
                        .map(|(t, (p, s))| {
                            let shift: C64 = l
                                .sensitivity
                                .iter()
                                .zip(dj)
                                .map(|(sens, d)| sens[t] * *d)
                                .sum();
                            p + rng.complex_normal() * *s + shift
                        })
                        .collect()
                })
                .collect();
            let core = solve_core(
                bench,
                &lines,
                &perturbed,
                &positions,
                nominal.c0,
                in_situ.then_some(search),
            );
            if let Ok(core) = core {
                c_d.push(core.c0);
                let mut levels = vec![None; n_h];
                let mut impedances = vec![None; n_h];
                for (k, h) in core.harmonics.iter().enumerate() {
                    if let (Some(h), true) = (h, usable_nominal[k]) {
                        let d = &mut per_h[k];
                        d.flow.push(h.flow);
                        d.impedance.push(h.impedance);
                        d.anechoic.push(h.anechoic());
                        d.blocked.push(h.blocked());
                        levels[k] = Some((h.anechoic().norm_sqr(), h.blocked().norm_sqr()));
                        impedances[k] = Some(h.impedance);
                    }
                }
                levels_d.push(levels);
                impedance_d.push(impedances);
            }
            observer.advance(1);
        }
        observer.finish();
    }

    // The report.
    let mut warnings = Vec::new();
    let mut harmonics = Vec::new();
    let pump_conds: Vec<usize> = bench
        .conditions
        .iter()
        .enumerate()
        .filter(|(_, c)| c.kind == ConditionKind::Pump)
        .map(|(i, _)| i)
        .collect();
    for k in 1..=bench.harmonics {
        let ki = (k - 1) as usize;
        let Some(h) = nominal.harmonics[ki] else {
            warnings.push(Warning {
                subject: format!("harmonic {k}"),
                message: "could not be estimated: the wave decomposition or the identification is singular".into(),
            });
            continue;
        };
        let mut flags = Vec::new();
        let mut status = HarmonicStatus::Estimated;
        let mut worst = h.ident_cond;
        for (li, l) in lines.iter().enumerate() {
            if !(l.pump_line && l.order == k) {
                continue;
            }
            if let Some(d) = &nominal.decomps[li] {
                worst = worst.max(d.cond);
                if d.cond > bench.max_condition {
                    status = status.max(HarmonicStatus::IllConditioned);
                    flags.push(format!(
                        "condition `{}`: the wave decomposition is ill-conditioned (cond = {:.1} > {}): {}",
                        bench.conditions[l.cond].name,
                        d.cond,
                        bench.max_condition,
                        spacing_reason(bench, &positions, &l.prop_ref, c_ref, nominal.c0)
                    ));
                }
            }
        }
        if h.ident_cond > bench.max_condition {
            status = status.max(HarmonicStatus::IllConditioned);
            flags.push(format!(
                "the systems present nearly the same load to the pump (cond = {:.1} > {}): use systems whose input impedances differ more at this frequency",
                h.ident_cond, bench.max_condition
            ));
        }
        if let Some((lo, hi)) = nominal.impedance_range
            && (h.freq_hz < lo || h.freq_hz > hi)
        {
            status = status.max(HarmonicStatus::Extrapolated);
            flags.push(format!(
                "the source impedance is extrapolated (Ys linear in frequency, from the end segment): the secondary-source lines cover {lo:.1} .. {hi:.1} Hz, and the error of the extrapolation is not in the uncertainty"
            ));
        }
        let d = &per_h[ki];
        if draws > 0 && d.flow.len() < draws * 9 / 10 {
            status = status.max(HarmonicStatus::Unstable);
            flags.push(format!(
                "unstable: {} of {draws} Monte Carlo draws gave no solution",
                draws - d.flow.len()
            ));
        }
        for &ci in &pump_conds {
            if let Some(p) = data[ci].pump.iter().find(|p| p.order == k) {
                for (ti, snr) in p.snr_db().iter().enumerate() {
                    if let Some(s) = snr.filter(|s| *s < 20.0) {
                        flags.push(format!(
                            "low signal-to-noise ratio: {s:.1} dB at `{}` in condition `{}`",
                            bench.transducers[ti].name, bench.conditions[ci].name
                        ));
                    }
                }
            }
        }
        let expected_bias =
            (status != HarmonicStatus::Estimated && d.flow.len() >= 10).then(|| {
                let rel =
                    |v: C64, draws: &[C64]| median(draws.iter().map(|z| z.norm())) / v.norm() - 1.0;
                ExpectedBias {
                    flow: rel(h.flow, &d.flow),
                    impedance: rel(h.impedance, &d.impedance),
                }
            });
        if let Some(b) = expected_bias {
            // In percent to one decimal; `+ 0.0` turns a rounded −0 into +0.
            let percent = |x: f64| (1000.0 * x).round() / 10.0 + 0.0;
            flags.push(format!(
                "expected bias from the conditioning: |Qs| {:+.1} %, |Zs| {:+.1} % (median of the Monte Carlo draws against the estimate)",
                percent(b.flow),
                percent(b.impedance),
            ));
        }
        for f in &flags {
            warnings.push(Warning {
                subject: format!("harmonic {k} ({:.1} Hz)", h.freq_hz),
                message: f.clone(),
            });
        }
        let est = |v: C64, d: &[C64]| Estimate {
            value: v,
            uncertainty: if draws > 0 {
                complex_spread(v, d)
            } else {
                None
            },
        };
        harmonics.push(HarmonicResult {
            order: k,
            freq_hz: h.freq_hz,
            flow: est(h.flow, &d.flow),
            impedance: est(h.impedance, &d.impedance),
            anechoic: est(h.anechoic(), &d.anechoic),
            blocked: est(h.blocked(), &d.blocked),
            zc: h.zc,
            condition_number: worst,
            status,
            expected_bias,
            flags,
        });
    }
    if !mc_possible {
        warnings.push(Warning {
            subject: "uncertainty".into(),
            message: "not estimated: the data give no phasor uncertainty and two transducers leave no residual (add `<column>_u` columns to the spectra, or a third transducer)".into(),
        });
    }
    if let Some(c) = check.filter(|c| c.applied) {
        warnings.push(Warning {
            subject: "uncertainty".into(),
            message: format!(
                "the wave fits leave a residual {:.2} times the one the phasor noise explains (χ² = {:.1} for ν = {:.0}, outside its 99 % interval): the phasor uncertainties are scaled by {:.2}; {}",
                c.factor,
                c.chi_square,
                c.dof,
                c.factor,
                if c.factor > 1.0 {
                    "check the transducer positions and calibrations, the speed of sound and the line model"
                } else {
                    "the stated phasor uncertainties look too large"
                }
            ),
        });
    }
    match nominal.status {
        Some(FitStatus::AtBracketEdge) => warnings.push(Warning {
            subject: "speed of sound".into(),
            message: format!(
                "the in-situ estimate {:.1} m/s lies at the edge of the searched range (±30 % of {:.1} m/s): check the fluid, the transducer positions and the bore",
                nominal.c0, c_ref
            ),
        }),
        Some(FitStatus::MaxIterations) => warnings.push(Warning {
            subject: "speed of sound".into(),
            message: "the in-situ search stopped at its iteration limit before converging".into(),
        }),
        _ => {}
    }
    let z = f64::from(bench.pump.pumping_elements);
    let speeds: Vec<f64> = pump_conds
        .iter()
        .map(|&i| data[i].pump_fundamental_hz / z)
        .collect();
    let speed = speeds.iter().sum::<f64>() / speeds.len().max(1) as f64;
    let speed_u: Vec<f64> = pump_conds
        .iter()
        .filter_map(|&i| data[i].reference_of(ReferenceKind::PumpFrequency))
        .map(|r| r.uncertainty / z)
        .collect();
    let speed_uncertainty = (!speed_u.is_empty() && speed_u.len() == pump_conds.len())
        .then(|| speed_u.iter().map(|u| u * u).sum::<f64>().sqrt() / speed_u.len() as f64);
    if let (Some(lo), Some(hi)) = (
        speeds.iter().copied().reduce(f64::min),
        speeds.iter().copied().reduce(f64::max),
    ) && hi - lo > 0.01 * speed
    {
        warnings.push(Warning {
            subject: "speed".into(),
            message: format!(
                "the pump conditions ran at different speeds ({:.1} .. {:.1} rpm): the methods assume one speed",
                lo * 60.0,
                hi * 60.0
            ),
        });
    }
    let equivalent = equivalent_source(bench, &harmonics, &impedance_d);
    if let Some(e) = equivalent
        .as_ref()
        .filter(|e| e.reduced_chi_square.is_some_and(|c| c > 4.0))
    {
        warnings.push(Warning {
            subject: "source impedance".into(),
            message: format!(
                "a volume with leakage describes the estimated impedance poorly (reduced χ² {:.1}, rms misfit {:.1} %): read the equivalent volume and leakage with care",
                e.reduced_chi_square.unwrap_or(0.0),
                100.0 * e.misfit
            ),
        });
    }
    let rms_orders: Vec<u32> = harmonics
        .iter()
        .filter(|h| options.include_flagged || h.status == HarmonicStatus::Estimated)
        .map(|h| h.order)
        .collect();
    let included = |h: &HarmonicResult| rms_orders.contains(&h.order);
    let rms = |f: fn(&HarmonicResult) -> C64| {
        (harmonics
            .iter()
            .filter(|h| included(h))
            .map(|h| f(h).norm_sqr())
            .sum::<f64>()
            / 2.0)
            .sqrt()
    };
    let level_draws = |pick: fn((f64, f64)) -> f64| -> Vec<f64> {
        levels_d
            .iter()
            .map(|levels| {
                let sum: f64 = rms_orders
                    .iter()
                    .filter_map(|&k| levels[(k - 1) as usize])
                    .map(pick)
                    .sum();
                (sum / 2.0).sqrt()
            })
            .collect()
    };
    let mc = |d: &[f64]| if draws > 0 { real_spread(d) } else { None };
    let conditions = bench
        .conditions
        .iter()
        .zip(data)
        .map(|(c, d)| {
            let fp_ref = d.reference.iter().find(|r| {
                matches!(
                    r.kind,
                    ReferenceKind::PumpFrequency | ReferenceKind::HeldPumpFrequency
                )
            });
            ConditionInfo {
                name: c.name.clone(),
                pumping_frequency_hz: d.pump_fundamental_hz,
                pumping_frequency_held: fp_ref
                    .is_some_and(|r| r.kind == ReferenceKind::HeldPumpFrequency),
                pumping_frequency_uncertainty_hz: fp_ref.map(|r| r.uncertainty),
                secondary_fundamental_hz: d.secondary_fundamental_hz,
                tacho: d.reference_of(ReferenceKind::TimeOrigin).is_some(),
                snr_db: (1..=bench.harmonics)
                    .map(|k| {
                        d.pump
                            .iter()
                            .find(|p| p.order == k)
                            .and_then(|p| p.snr_db().into_iter().flatten().reduce(f64::min))
                    })
                    .collect(),
            }
        })
        .collect();
    Ok(FitReport {
        pump: bench.pump.name.clone(),
        pumping_elements: bench.pump.pumping_elements,
        speed_rev_s: speed,
        speed_uncertainty_rev_s: speed_uncertainty,
        method: bench.method,
        speed_of_sound: SpeedOfSoundResult {
            estimate: Scalar {
                value: nominal.c0,
                uncertainty: if in_situ { mc(&c_d) } else { None },
            },
            source: bench.speed_of_sound,
            status: nominal.status,
        },
        anechoic_rms_pa: Scalar {
            value: rms(|h| h.anechoic.value),
            uncertainty: mc(&level_draws(|l| l.0)),
        },
        blocked_rms_pa: Scalar {
            value: rms(|h| h.blocked.value),
            uncertainty: mc(&level_draws(|l| l.1)),
        },
        rms_orders,
        harmonics,
        conditions,
        warnings,
        draws,
        residual_check: check,
        equivalent,
    })
}

/// The volume-with-leakage reading of the estimated source impedance (see
/// [`EquivalentSource`]); `None` with fewer than two harmonics estimated
/// without flags.
fn equivalent_source(
    bench: &Bench,
    harmonics: &[HarmonicResult],
    impedance_draws: &[Vec<Option<C64>>],
) -> Option<EquivalentSource> {
    let used: Vec<&HarmonicResult> = harmonics
        .iter()
        .filter(|h| h.status == HarmonicStatus::Estimated)
        .collect();
    if used.len() < 2 {
        return None;
    }
    let b = bench.fluid.bulk_modulus_pa;
    // var Ys per harmonic from the draws (about the estimate).
    let var: Vec<f64> = used
        .iter()
        .map(|h| {
            let k = (h.order - 1) as usize;
            let y0 = h.impedance.value.inv();
            let d: Vec<f64> = impedance_draws
                .iter()
                .filter_map(|dr| dr[k].map(|z| (z.inv() - y0).norm_sqr()))
                .collect();
            if d.len() >= 2 {
                d.iter().sum::<f64>() / d.len() as f64
            } else {
                0.0
            }
        })
        .collect();
    let fit_of = |zs: &[C64]| -> Option<(f64, f64)> {
        let points: Vec<(f64, C64, f64)> = used
            .iter()
            .zip(zs)
            .zip(&var)
            .map(|((h, z), v)| (h.freq_hz, *z, *v))
            .collect();
        match ImpedanceModel::build(&points, ImpedanceFit::CapacitanceLeakage) {
            Ok(ImpedanceModel::CapacitanceLeakage {
                conductance,
                capacitance,
            }) => Some((conductance, capacitance)),
            _ => None,
        }
    };
    let nominal: Vec<C64> = used.iter().map(|h| h.impedance.value).collect();
    let (g, c) = fit_of(&nominal)?;
    let model = |f: f64| C64::new(g, std::f64::consts::TAU * f * c);
    let misfit = (used
        .iter()
        .map(|h| {
            let y = h.impedance.value.inv();
            ((y - model(h.freq_hz)).norm() / y.norm()).powi(2)
        })
        .sum::<f64>()
        / used.len() as f64)
        .sqrt();
    let known = var.iter().all(|v| *v > 0.0);
    let reduced_chi_square = known.then(|| {
        used.iter()
            .zip(&var)
            .map(|(h, v)| (h.impedance.value.inv() - model(h.freq_hz)).norm_sqr() / v)
            .sum::<f64>()
            * 2.0
            / (2.0 * used.len() as f64 - 2.0)
    });
    let (mut g_d, mut v_d) = (Vec::new(), Vec::new());
    for dr in impedance_draws {
        let zs: Option<Vec<C64>> = used.iter().map(|h| dr[(h.order - 1) as usize]).collect();
        if let Some((gd, cd)) = zs.as_deref().and_then(fit_of) {
            g_d.push(gd);
            v_d.push(cd * b);
        }
    }
    Some(EquivalentSource {
        volume_m3: Scalar {
            value: c * b,
            uncertainty: real_spread(&v_d),
        },
        leakage_conductance: Scalar {
            value: g,
            uncertainty: real_spread(&g_d),
        },
        orders: used.iter().map(|h| h.order).collect(),
        misfit,
        reduced_chi_square,
    })
}

/// The median of some values (NaN when there are none).
fn median(values: impl Iterator<Item = f64>) -> f64 {
    let mut v: Vec<f64> = values.collect();
    if v.is_empty() {
        return f64::NAN;
    }
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

/// One draw of the reference errors of every condition: δθ_j ~ N(0, u_j²)
/// for the parameters fitted in a condition (or given by its tacho), and
/// for a held pumping frequency the mean of the draws of the pump-run
/// conditions' fitted frequencies (the value held is their mean).
fn reference_draw(bench: &Bench, data: &[ConditionSpectra], rng: &mut Rng) -> Vec<Vec<f64>> {
    let mut delta: Vec<Vec<f64>> = data
        .iter()
        .map(|d| {
            d.reference
                .iter()
                .map(|r| match r.kind {
                    ReferenceKind::HeldPumpFrequency => 0.0,
                    _ => r.uncertainty * rng.normal(),
                })
                .collect()
        })
        .collect();
    let fitted: Vec<f64> = bench
        .conditions
        .iter()
        .zip(data)
        .enumerate()
        .filter(|(_, (c, _))| c.kind == ConditionKind::Pump)
        .filter_map(|(i, (_, d))| {
            d.reference
                .iter()
                .position(|r| r.kind == ReferenceKind::PumpFrequency)
                .map(|j| delta[i][j])
        })
        .collect();
    if !fitted.is_empty() {
        let mean = fitted.iter().sum::<f64>() / fitted.len() as f64;
        for (d, dl) in data.iter().zip(&mut delta) {
            for (r, v) in d.reference.iter().zip(dl.iter_mut()) {
                if r.kind == ReferenceKind::HeldPumpFrequency {
                    *v = mean;
                }
            }
        }
    }
    delta
}

/// Why a decomposition is ill-conditioned, in the words of the trade.
fn spacing_reason(
    bench: &Bench,
    positions: &[f64],
    prop_ref: &Propagation,
    c_ref: f64,
    c0: f64,
) -> String {
    let k = wavespeed::scale_propagation(prop_ref, c_ref, c0).gamma.im;
    let mut widest = 0.0f64;
    let mut near = Vec::new();
    for i in 0..positions.len() {
        for j in i + 1..positions.len() {
            let d = (positions[j] - positions[i]).abs();
            let turns = k * d / std::f64::consts::PI; // ωΔ/c in units of π
            widest = widest.max(turns);
            let n = turns.round();
            if n >= 1.0 && (turns - n).abs() < 0.15 {
                near.push(format!(
                    "`{}`–`{}` ({d:.3} m) is close to {} half-wavelength{} (ωΔ/c = {turns:.2}π)",
                    bench.transducers[i].name,
                    bench.transducers[j].name,
                    n,
                    if n > 1.0 { "s" } else { "" }
                ));
            }
        }
    }
    if widest < 0.15 {
        format!(
            "the frequency is too low for the transducer spacing (widest ωΔ/c = {widest:.3}π; a pair is best used between 0.1π and 0.8π)"
        )
    } else if near.is_empty() {
        "the transducer spacings are unfavourable at this frequency (use unequal, non-commensurate spacings)".into()
    } else {
        format!("spacing {}", near.join("; spacing "))
    }
}

/// E|δYs|² at a secondary line from the independent phasor noise, by first
/// order propagation: the decomposition is linear in the pressures, so
/// ∂(P0, Q0)/∂P_t is the decomposition of the unit vector e_t, and with
/// Ys = −Q0/P0, ∂Ys/∂P_t = −(∂Q0·P0 − Q0·∂P0)/P0² (JCGM 100:2008, law of
/// propagation of uncertainty, for a holomorphic function of circular
/// complex inputs). Zero when the uncertainties are unknown.
fn admittance_variance(
    prop: &Propagation,
    positions: &[f64],
    l: &Prepared,
    d: &Decomposition,
) -> f64 {
    if !l.uncertainty_known() {
        return 0.0;
    }
    let mut var = 0.0;
    for (t, u) in l.uncertainty.iter().enumerate() {
        let mut e = vec![C64::new(0.0, 0.0); positions.len()];
        e[t] = C64::new(1.0, 0.0);
        let Some(de) = decompose(prop, positions, &e, &l.weights) else {
            return 0.0;
        };
        let dy = -(de.q0 * d.p0 - d.q0 * de.p0) / (d.p0 * d.p0);
        var += dy.norm_sqr() * u.unwrap_or(0.0).powi(2);
    }
    var
}

/// The source impedance model from the secondary-source decompositions.
fn impedance_model(
    fit: ImpedanceFit,
    lines: &[Prepared],
    decomps: &[Option<Decomposition>],
    ys_var: &[f64],
) -> Result<ImpedanceModel, EstimateError> {
    let points: Vec<(f64, C64, f64)> = lines
        .iter()
        .zip(decomps)
        .zip(ys_var)
        .filter(|((l, _), _)| !l.pump_line)
        .filter_map(|((l, d), v)| {
            d.map(|d| (l.freq_hz, secondary::impedance_point(d.p0, d.q0), *v))
        })
        .collect();
    ImpedanceModel::build(&points, fit).map_err(EstimateError::Bench)
}

/// Speed of sound, decompositions and estimator for one set of phasors.
fn solve_core(
    bench: &Bench,
    lines: &[Prepared],
    pressures: &[Vec<C64>],
    positions: &[f64],
    c_start: f64,
    search: Option<SearchSettings>,
) -> Result<Core, EstimateError> {
    let c_ref = bench.nominal_speed_of_sound_m_s();
    let (c0, status) = match search {
        Some(settings) => {
            let obs: Vec<Observation> = lines
                .iter()
                .zip(pressures)
                .map(|(l, p)| {
                    let weights = if l.uncertainty_known() {
                        l.weights.clone()
                    } else {
                        let total: f64 = p.iter().map(|z| z.norm_sqr()).sum();
                        vec![1.0 / total.max(f64::MIN_POSITIVE); p.len()]
                    };
                    Observation {
                        prop_ref: l.prop_ref,
                        pressures: p.clone(),
                        weights,
                    }
                })
                .collect();
            let r = wavespeed::fit_speed_of_sound(positions, &obs, c_ref, c_start, settings);
            (r.c0_m_s, Some(r.status))
        }
        None => (c_ref, None),
    };
    let mut ys_var = vec![0.0; lines.len()];
    let decomps: Vec<Option<Decomposition>> = lines
        .iter()
        .zip(pressures)
        .zip(&mut ys_var)
        .map(|((l, p), v)| {
            let prop = wavespeed::scale_propagation(&l.prop_ref, c_ref, c0);
            let d = decompose(&prop, positions, p, &l.weights);
            if let (Some(d), false) = (&d, l.pump_line) {
                *v = admittance_variance(&prop, positions, l, d);
            }
            d
        })
        .collect();
    let zs_model = match bench.method {
        Method::SecondarySource { impedance_fit } => {
            Some(impedance_model(impedance_fit, lines, &decomps, &ys_var)?)
        }
        Method::TwoSystems => None,
    };
    let props = bench.line_properties(c0);
    let mut harmonics = Vec::with_capacity(bench.harmonics as usize);
    for k in 1..=bench.harmonics {
        let at_k: Vec<(f64, Decomposition)> = lines
            .iter()
            .zip(&decomps)
            .filter(|(l, _)| l.pump_line && l.order == k)
            .filter_map(|(l, d)| d.map(|d| (l.freq_hz, d)))
            .collect();
        let expected = lines.iter().filter(|l| l.pump_line && l.order == k).count();
        if at_k.is_empty() || at_k.len() < expected {
            harmonics.push(None);
            continue;
        }
        let freq = at_k.iter().map(|(f, _)| f).sum::<f64>() / at_k.len() as f64;
        let zc = props.propagation(std::f64::consts::TAU * freq).zc;
        let (flow, impedance, ident_cond) = match &zs_model {
            None => {
                if at_k.len() < 2 {
                    harmonics.push(None);
                    continue;
                }
                let states: Vec<(C64, C64)> = at_k.iter().map(|(_, d)| (d.p0, d.q0)).collect();
                match two_systems::estimate(&states) {
                    Some(e) => (e.flow, e.impedance, e.cond),
                    None => {
                        harmonics.push(None);
                        continue;
                    }
                }
            }
            Some(model) => {
                let zs = model.at(freq);
                let qs = at_k
                    .iter()
                    .map(|(f, d)| secondary::flow_ripple(d.p0, d.q0, model.at(*f)))
                    .sum::<C64>()
                    / at_k.len() as f64;
                (qs, zs, 1.0)
            }
        };
        let ok = flow.is_finite() && impedance.is_finite() && impedance.norm() > 0.0;
        harmonics.push(ok.then_some(CoreHarmonic {
            freq_hz: freq,
            flow,
            impedance,
            zc,
            ident_cond,
        }));
    }
    Ok(Core {
        c0,
        status,
        decomps,
        harmonics,
        impedance_range: zs_model.as_ref().and_then(ImpedanceModel::range_hz),
    })
}

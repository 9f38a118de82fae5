//! Calibration: the values of a circuit that best explain the measured
//! harmonics, with their uncertainties and what the data cannot tell.
//!
//! **Residuals.** For every run, tap and compared harmonic, the complex
//! difference P(x) − M between prediction and measurement, split into its
//! real and imaginary parts, each divided by u/√2 (u = √E|δM|² is the
//! measured phasor's standard uncertainty, so each part has unit variance
//! under the noise); with `phases: ignore`, (|P| − |M|)/(u/√2). This is
//! weighted nonlinear least squares (methods-2 §4). When some measurement
//! has no uncertainty the weights are only relative (every part weighted
//! alike) and the covariance is scaled by the reduced χ².
//!
//! **Parameters** are values of the circuit file (targets, see
//! `io::circuit_file::settings`) in the unit the file writes them in, each
//! with bounds. A parameter whose bounds are positive is fitted as its
//! logarithm (a relative scale, and the bounds then span decades evenly).
//! The minimum is found by Levenberg–Marquardt ([`super::lm`]).
//!
//! **Uncertainty.** At the minimum, the Jacobian by central differences
//! gives the covariance C = (JᵀJ)⁻¹ of the fitted variables (the weights
//! are the inverse variances); for a log-scaled parameter u(v) = v·u(ln v)
//! to first order. If χ² lies above the 99.9 % point of its distribution
//! (ν = residuals − parameters degrees of freedom; Wilson & Hilferty's
//! (1931) cube-root approximation of the χ² quantile) the model does not
//! explain the data within their noise: C is scaled by χ²/ν and the report
//! says so.
//!
//! **Weights estimated from the data.** A record's uncertainties are Type A
//! estimates s² with ν_s degrees of freedom (two per residual periodogram bin
//! averaged), so a
//! weighted part r/s is Student-t distributed, not normal: each squared
//! part has mean a = ν_s/(ν_s − 2) (E[σ²/s²] for s² ~ σ²χ²(ν_s)/ν_s) and
//! variance 2ν_s²(ν_s − 1)/((ν_s − 2)²(ν_s − 4)) (that of F(1, ν_s)), or,
//! for the two parts of one phasor sharing s, half that of 2·F(2, ν_s),
//! 2ν_s³/((ν_s − 2)²(ν_s − 4)). χ² is then compared with the 99.9 % point
//! of the scaled χ² of the same mean and variance (Satterthwaite's (1946)
//! moment matching), and C, which weights 1/s² overstate by a on average,
//! is scaled by a. (With S = 8, a = 1.17: χ²/ν near 1.17 is the noise, not
//! a misfit.)
//!
//! **Identifiability.** The singular values of the Jacobian with its columns
//! scaled to unit length (methods-2 §4): a singular value below
//! [`UNIDENTIFIABLE`] of the largest means a combination of parameters the
//! data cannot see at all; below [`WEAK`], one they barely see (parameter
//! correlations beyond about 0.9998). Each such direction is named by the
//! parameters that carry it. Pairs whose correlation exceeds
//! [`STRONG_CORRELATION`] are named too.

use super::lm::{self, Options, Problem, Stop};
use super::measured::{MeasuredRun, Model, ModelError};
use crate::C64;
use crate::io::measurement_file::Phases;
use crate::io::{CircuitTemplate, InputError, Setting, Target};
use crate::uncertainty::stats::chi2_quantile;
use nalgebra::DMatrix;
use serde::Serialize;

/// Relative singular value below which a direction is not identifiable.
pub const UNIDENTIFIABLE: f64 = 1e-6;
/// Relative singular value below which a direction is weakly identifiable.
pub const WEAK: f64 = 1e-2;
/// Correlation beyond which a pair of parameters is named.
pub const STRONG_CORRELATION: f64 = 0.95;
/// Most parameters fitted at once.
pub const MAX_PARAMETERS: usize = 6;

/// A value to calibrate: its target and bounds (in the target's unit).
#[derive(Debug, Clone, PartialEq)]
pub struct Parameter {
    /// The value in the circuit file.
    pub target: Target,
    /// Lower bound.
    pub low: f64,
    /// Upper bound.
    pub high: f64,
}

impl Parameter {
    /// Whether it is fitted as its logarithm (positive bounds).
    pub fn log_scale(&self) -> bool {
        self.low > 0.0
    }

    fn to_internal(&self, v: f64) -> f64 {
        if self.log_scale() { v.ln() } else { v }
    }

    fn to_value(&self, x: f64) -> f64 {
        if self.log_scale() { x.exp() } else { x }
    }
}

/// Why a calibration could not be set up.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SetupError {
    /// No parameters, or too many.
    #[error("give 1 to {MAX_PARAMETERS} parameters to calibrate, found {0}")]
    Count(usize),
    /// A parameter is listed twice.
    #[error("`{0}` is listed twice")]
    Twice(String),
    /// Bounds that are not low < high or that exclude the start value.
    #[error("`{name}`: {message}")]
    Bounds {
        /// The parameter.
        name: String,
        /// What is wrong.
        message: String,
    },
    /// Fewer measured values than parameters.
    #[error(
        "{values} measured values (runs × taps × harmonics{}) cannot determine {parameters} parameters: measure more harmonics, taps or runs, or calibrate fewer values",
        if *.phases { " × 2 with phases" } else { "" }
    )]
    TooFewData {
        /// Real residuals.
        values: usize,
        /// Parameters.
        parameters: usize,
        /// Whether phases count.
        phases: bool,
    },
}

/// Checks parameters: their count, no repeats, bounds around the start.
///
/// # Errors
/// [`SetupError`] naming the parameter.
pub fn check_parameters(parameters: &[Parameter]) -> Result<(), SetupError> {
    if parameters.is_empty() || parameters.len() > MAX_PARAMETERS {
        return Err(SetupError::Count(parameters.len()));
    }
    for (i, p) in parameters.iter().enumerate() {
        if parameters[..i]
            .iter()
            .any(|o| o.target.path == p.target.path)
        {
            return Err(SetupError::Twice(p.target.name.clone()));
        }
        let start = p.target.written.number;
        let bad = |message: String| SetupError::Bounds {
            name: p.target.name.clone(),
            message,
        };
        let unit = &p.target.written.unit;
        if !(p.low.is_finite() && p.high.is_finite() && p.low < p.high) {
            return Err(bad(format!(
                "the bounds must go from the lower to the higher value, found {} .. {} {unit}",
                p.low, p.high
            )));
        }
        if !(p.low..=p.high).contains(&start) {
            return Err(bad(format!(
                "the bounds {} .. {} {unit} exclude the file's value {start} {unit}, where the calibration starts",
                p.low, p.high
            )));
        }
    }
    Ok(())
}

/// Most combinations of the other values' bounds tried before a bound the
/// circuit refuses is refused (2⁵ for 6 values).
pub const MAX_CORNERS: usize = 32;

/// A bound of a calibrated value that the circuit refuses at the value's
/// own key, whatever the other values are within their bounds.
#[derive(Debug)]
pub struct RefusedBound {
    /// The parameter's index.
    pub index: usize,
    /// Its upper bound (`false`: its lower one).
    pub upper: bool,
    /// The circuit's reason.
    pub error: InputError,
}

/// The first bound that could never be a calibrated value: the circuit
/// refuses it at its value's own key (a length below zero, a modulus beyond
/// its plausible range) with the other values as written, and with every
/// corner of their bounds tried (up to [`MAX_CORNERS`]). A bound refused
/// only together with the others as written (a hose's wave speed above the
/// oil's, when the oil's modulus is varied too) is taken if some corner of
/// the others' bounds takes it.
pub fn refused_bound(template: &CircuitTemplate, parameters: &[Parameter]) -> Option<RefusedBound> {
    for (index, p) in parameters.iter().enumerate() {
        let others: Vec<&Parameter> = parameters
            .iter()
            .enumerate()
            .filter(|(j, _)| *j != index)
            .map(|(_, o)| o)
            .collect();
        for (upper, bound) in [(false, p.low), (true, p.high)] {
            let which = if upper { "upper" } else { "lower" };
            let first = p.target.setting(bound, &format!("its {which} bound"));
            let Some(error) = template.refusal(&p.target, std::slice::from_ref(&first)) else {
                continue;
            };
            // alone, the value was just refused as written
            let taken = !others.is_empty()
                && (0..(1usize << others.len()).min(MAX_CORNERS)).any(|corner| {
                    let mut settings = vec![first.clone()];
                    settings.extend(others.iter().enumerate().map(|(i, o)| {
                        let b = if corner >> i & 1 == 0 { o.low } else { o.high };
                        o.target.setting(b, "a bound of another calibrated value")
                    }));
                    template.refusal(&p.target, &settings).is_none()
                });
            if !taken {
                return Some(RefusedBound {
                    index,
                    upper,
                    error,
                });
            }
        }
    }
    None
}

/// A calibrated value.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Estimate {
    /// The target's name (`SECTION.KEY`).
    pub name: String,
    /// The unit of the numbers, as the file writes the value (empty: SI).
    pub unit: String,
    /// The file's value (the start).
    pub start: f64,
    /// The calibrated value.
    pub value: f64,
    /// Its standard uncertainty; `None` when the data cannot identify it.
    pub uncertainty: Option<f64>,
    /// Lower bound.
    pub low: f64,
    /// Upper bound.
    pub high: f64,
    /// Fitted as its logarithm.
    pub log_scale: bool,
    /// Ended at a bound (its uncertainty is then not meaningful).
    pub at_bound: bool,
}

/// A combination of parameters the data see badly.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Direction {
    /// Its singular value over the largest.
    pub relative_singular_value: f64,
    /// Not identifiable at all (below [`UNIDENTIFIABLE`]), or weakly.
    pub unidentifiable: bool,
    /// The parameters that carry it, with their share (components of the
    /// unit singular vector, larger than 0.2 in size).
    pub parameters: Vec<(String, f64)>,
}

/// What the data can tell.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Identifiability {
    /// Singular values of the column-scaled Jacobian over the largest,
    /// largest first.
    pub relative_singular_values: Vec<f64>,
    /// The directions below [`WEAK`].
    pub weak: Vec<Direction>,
    /// Parameters with no effect at all on the residuals.
    pub no_effect: Vec<String>,
    /// Pairs correlated beyond [`STRONG_CORRELATION`]: names and ρ.
    pub correlated: Vec<(String, String, f64)>,
}

/// The fit at one tap of one run, before and after.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TapResidual {
    /// The run.
    pub run: String,
    /// The tap.
    pub tap: String,
    /// The rms of its weighted residuals with the file's values.
    pub before: f64,
    /// The same with the calibrated values.
    pub after: f64,
}

/// The result of a calibration.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Calibration {
    /// The calibrated values.
    pub estimates: Vec<Estimate>,
    /// Their correlation matrix (rows and columns in `estimates` order;
    /// `None` entries where a parameter is not identifiable).
    pub correlation: Vec<Vec<Option<f64>>>,
    /// Whether the weights are the measurements' uncertainties (else only
    /// relative: the covariance is scaled by χ²/ν).
    pub absolute_weights: bool,
    /// Degrees of freedom of the weights when they are Type A estimates
    /// from the records (the fewest over the runs); `None`: known.
    pub weights_dof: Option<f64>,
    /// The χ² expected from the noise alone: ν, or ν·ν_s/(ν_s − 2) with
    /// Type A weights.
    pub chi2_expected: f64,
    /// χ² at the start.
    pub chi2_start: f64,
    /// χ² at the end.
    pub chi2: f64,
    /// Degrees of freedom ν = residuals − parameters.
    pub dof: usize,
    /// Whether the covariance was scaled by χ²/ν (the model misfits, or the
    /// weights are relative).
    pub scaled: bool,
    /// Why the iteration stopped; not converged for
    /// [`Stop::MaxEvaluations`] (the estimates are then its last iterate).
    pub stop: Stop,
    /// Iterations.
    pub iterations: usize,
    /// Model evaluations (each solves every run).
    pub evaluations: usize,
    /// The weighted residuals per run and tap, before and after.
    pub taps: Vec<TapResidual>,
    /// What the data can tell.
    pub identifiability: Identifiability,
}

impl Calibration {
    /// The settings of the calibrated values, to write into the file or to
    /// evaluate the calibrated circuit.
    pub fn settings(&self, parameters: &[Parameter]) -> Vec<Setting> {
        parameters
            .iter()
            .zip(&self.estimates)
            .map(|(p, e)| p.target.setting(e.value, "the calibrated value"))
            .collect()
    }
}

/// The weighted residuals of the model against the measurements.
struct Residuals<'m> {
    model: &'m Model<'m>,
    measured: &'m [MeasuredRun],
    parameters: &'m [Parameter],
    /// Per measured value (run, harmonic, tap): 1/(u/√2), or 1 with
    /// relative weights.
    weights: Vec<f64>,
    count: usize,
    /// The last model error met (a failed trial point).
    last_error: Option<String>,
}

impl<'m> Residuals<'m> {
    fn new(
        model: &'m Model<'m>,
        measured: &'m [MeasuredRun],
        parameters: &'m [Parameter],
    ) -> (Self, bool) {
        let mut weights = Vec::new();
        let mut absolute = true;
        for m in measured {
            let scale = m
                .harmonics
                .iter()
                .flat_map(|h| h.pressures.iter())
                .map(|p| p.norm())
                .fold(0.0, f64::max);
            for h in &m.harmonics {
                for u in &h.uncertainty {
                    match u {
                        // a floor keeps noise-free data finite
                        Some(u) => {
                            weights.push(2f64.sqrt() / u.max(1e-12 * scale).max(f64::MIN_POSITIVE))
                        }
                        None => {
                            absolute = false;
                            weights.push(1.0);
                        }
                    }
                }
            }
        }
        if !absolute {
            weights.iter_mut().for_each(|w| *w = 1.0);
        }
        let per = if model.measurements.phases == Phases::Shaft {
            2
        } else {
            1
        };
        let count = weights.len() * per;
        (
            Residuals {
                model,
                measured,
                parameters,
                weights,
                count,
                last_error: None,
            },
            absolute,
        )
    }

    fn settings(&self, x: &[f64]) -> Vec<Setting> {
        self.parameters
            .iter()
            .zip(x)
            .map(|(p, &v)| p.target.setting(p.to_value(v), "a calibration step"))
            .collect()
    }

    fn fill(&self, predicted: &[Vec<Vec<C64>>], out: &mut [f64]) {
        let phases = self.model.measurements.phases;
        let mut i = 0;
        let mut w = 0;
        for (m, p) in self.measured.iter().zip(predicted) {
            for (h, ph) in m.harmonics.iter().zip(p) {
                for (mv, pv) in h.pressures.iter().zip(ph) {
                    let weight = self.weights[w];
                    w += 1;
                    match phases {
                        Phases::Shaft => {
                            let d = (pv - mv) * weight;
                            out[i] = d.re;
                            out[i + 1] = d.im;
                            i += 2;
                        }
                        Phases::Ignore => {
                            out[i] = (pv.norm() - mv.norm()) * weight;
                            i += 1;
                        }
                    }
                }
            }
        }
    }
}

impl Problem for Residuals<'_> {
    type Error = ModelError;
    fn residual_count(&self) -> usize {
        self.count
    }
    fn residuals(&mut self, x: &[f64], out: &mut [f64]) -> Result<(), ModelError> {
        match self.model.predict(&self.settings(x)) {
            Ok(p) => {
                self.fill(&p, out);
                Ok(())
            }
            Err(e) => {
                self.last_error = Some(e.to_string());
                Err(e)
            }
        }
    }
}

/// Calibrates `parameters` of the model against what was measured.
///
/// # Errors
/// [`SetupError`] (as a [`CalibrateError::Setup`]) for parameters that do
/// not fit the data; [`ModelError`] when the model cannot be evaluated with
/// the file's values (a failure at a trial value only shrinks the step).
pub fn calibrate(
    model: &Model<'_>,
    measured: &[MeasuredRun],
    parameters: &[Parameter],
    options: &Options,
) -> Result<Calibration, CalibrateError> {
    check_parameters(parameters)?;
    let (mut problem, absolute) = Residuals::new(model, measured, parameters);
    let m = problem.count;
    let n = parameters.len();
    if m <= n {
        return Err(SetupError::TooFewData {
            values: m,
            parameters: n,
            phases: model.measurements.phases == Phases::Shaft,
        }
        .into());
    }
    let x0: Vec<f64> = parameters
        .iter()
        .map(|p| p.to_internal(p.target.written.number))
        .collect();
    let bounds: Vec<(f64, f64)> = parameters
        .iter()
        .map(|p| (p.to_internal(p.low), p.to_internal(p.high)))
        .collect();
    let scales: Vec<f64> = parameters
        .iter()
        .zip(&x0)
        .map(|(p, x)| {
            if p.log_scale() {
                1.0
            } else {
                x.abs().max(p.high.abs().max(p.low.abs()) * 1e-3)
            }
        })
        .collect();
    let mut r0 = vec![0.0; m];
    problem.residuals(&x0, &mut r0)?;
    let outcome = lm::minimise(&mut problem, &x0, &bounds, &scales, options)?;
    let jac = central_jacobian(&mut problem, &outcome.x, &bounds, &scales)?;
    let dof = m - n;
    let chi2 = outcome.sum_of_squares;
    let weights_dof = if absolute {
        measured
            .iter()
            .filter_map(|r| r.uncertainty_dof)
            .reduce(f64::min)
    } else {
        None
    };
    let paired = model.measurements.phases == Phases::Shaft;
    let noise = TypeA::of(weights_dof, paired);
    let misfit = chi2 > noise.chi2_limit(dof as f64);
    let scaled = !absolute || misfit;
    let factor = if scaled {
        chi2 / dof as f64
    } else {
        noise.mean_square
    };
    let names: Vec<String> = parameters.iter().map(|p| p.target.name.clone()).collect();
    let (cov, identifiability) = covariance(&jac, &names, factor);
    let estimates: Vec<Estimate> = parameters
        .iter()
        .enumerate()
        .map(|(j, p)| {
            let value = p.to_value(outcome.x[j]);
            let sd = cov[(j, j)]
                .filter(|v| v.is_finite() && *v >= 0.0)
                .map(f64::sqrt);
            Estimate {
                name: p.target.name.clone(),
                unit: p.target.written.unit.clone(),
                start: p.target.written.number,
                value,
                uncertainty: sd.map(|s| if p.log_scale() { value * s } else { s }),
                low: p.low,
                high: p.high,
                log_scale: p.log_scale(),
                at_bound: outcome.at_bound[j],
            }
        })
        .collect();
    let correlation = (0..n)
        .map(|a| {
            (0..n)
                .map(|b| match (cov[(a, b)], cov[(a, a)], cov[(b, b)]) {
                    (Some(c), Some(va), Some(vb)) if va > 0.0 && vb > 0.0 => {
                        Some((c / (va * vb).sqrt()).clamp(-1.0, 1.0))
                    }
                    _ => None,
                })
                .collect()
        })
        .collect();
    let taps = tap_residuals(&problem, &r0, &outcome.residuals);
    Ok(Calibration {
        estimates,
        correlation,
        absolute_weights: absolute,
        weights_dof,
        chi2_expected: noise.mean_square * dof as f64,
        chi2_start: r0.iter().map(|v| v * v).sum(),
        chi2,
        dof,
        scaled,
        stop: outcome.stop,
        iterations: outcome.iterations,
        evaluations: outcome.evaluations + 2 * n + 1,
        taps,
        identifiability,
    })
}

/// The distribution of one squared weighted residual part under the noise
/// alone (module doc, "Weights estimated from the data").
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct TypeA {
    /// Its mean.
    mean_square: f64,
    /// Its variance.
    variance: f64,
}

impl TypeA {
    /// With weights of `dof` degrees of freedom (`None`: known weights, a
    /// χ²(1) part), the two parts of a phasor sharing a weight if `paired`.
    /// At 4 or fewer degrees of freedom the variance is infinite: taken as
    /// that of 5.
    pub(crate) fn of(dof: Option<f64>, paired: bool) -> Self {
        match dof {
            None => TypeA {
                mean_square: 1.0,
                variance: 2.0,
            },
            Some(nu) => {
                let v = nu.max(5.0);
                let mean_square = nu.max(3.0) / (nu.max(3.0) - 2.0);
                let tail = if paired { v } else { v - 1.0 };
                TypeA {
                    mean_square,
                    variance: 2.0 * v * v * tail / ((v - 2.0).powi(2) * (v - 4.0)),
                }
            }
        }
    }

    /// The 99.9 % point of the sum of `dof` parts ([`TypeA::quantile`]).
    fn chi2_limit(&self, dof: f64) -> f64 {
        self.quantile(0.999, dof)
    }

    /// The p-quantile of the sum of `dof` parts: a χ² with `dof` degrees
    /// of freedom for known weights, else the scaled χ² g·χ²(h) of the same
    /// mean and variance (Satterthwaite 1946).
    pub(crate) fn quantile(&self, p: f64, dof: f64) -> f64 {
        let mean = self.mean_square * dof;
        let var = self.variance * dof;
        let g = var / (2.0 * mean);
        let h = 2.0 * mean * mean / var;
        g * chi2_quantile(p, h)
    }
}

/// A calibration failure (as opposed to a calibration that did not
/// converge, which is a result).
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum CalibrateError {
    /// The parameters do not fit the data.
    #[error(transparent)]
    Setup(#[from] SetupError),
    /// The model cannot be evaluated.
    #[error(transparent)]
    Model(#[from] ModelError),
}

/// The Jacobian by central differences (steps ε^⅓ of each scale, kept in
/// the box).
fn central_jacobian(
    problem: &mut Residuals<'_>,
    x: &[f64],
    bounds: &[(f64, f64)],
    scales: &[f64],
) -> Result<DMatrix<f64>, ModelError> {
    let m = problem.count;
    let n = x.len();
    let mut jac = DMatrix::zeros(m, n);
    let (mut plus, mut minus) = (vec![0.0; m], vec![0.0; m]);
    for j in 0..n {
        let h = f64::EPSILON.cbrt() * scales[j];
        let mut xp = x.to_vec();
        let mut xm = x.to_vec();
        xp[j] = (x[j] + h).min(bounds[j].1);
        xm[j] = (x[j] - h).max(bounds[j].0);
        problem.residuals(&xp, &mut plus)?;
        problem.residuals(&xm, &mut minus)?;
        let step = xp[j] - xm[j];
        for i in 0..m {
            jac[(i, j)] = (plus[i] - minus[i]) / step;
        }
    }
    Ok(jac)
}

/// The covariance (JᵀJ)⁻¹·`factor` through the SVD of the column-scaled
/// Jacobian, with the directions the data cannot see left out (their
/// parameters get no variance), and the identifiability report.
fn covariance(
    jac: &DMatrix<f64>,
    names: &[String],
    factor: f64,
) -> (DMatrix<Option<f64>>, Identifiability) {
    let n = jac.ncols();
    let norms: Vec<f64> = (0..n).map(|j| jac.column(j).norm()).collect();
    let no_effect: Vec<String> = (0..n)
        .filter(|&j| norms[j] == 0.0)
        .map(|j| names[j].clone())
        .collect();
    let scaled = DMatrix::from_fn(jac.nrows(), n, |i, j| {
        if norms[j] > 0.0 {
            jac[(i, j)] / norms[j]
        } else {
            0.0
        }
    });
    let svd = scaled.svd(false, true);
    let vt = svd.v_t.expect("asked for V");
    let s = svd.singular_values.as_slice();
    let smax = s.iter().cloned().fold(0.0, f64::max);
    let mut order: Vec<usize> = (0..s.len()).collect();
    order.sort_by(|&a, &b| s[b].total_cmp(&s[a]));
    let rel: Vec<f64> = order
        .iter()
        .map(|&i| if smax > 0.0 { s[i] / smax } else { 0.0 })
        .collect();
    let mut weak = Vec::new();
    let mut blind = vec![false; n];
    for &i in &order {
        let r = if smax > 0.0 { s[i] / smax } else { 0.0 };
        if r >= WEAK {
            continue;
        }
        let parameters: Vec<(String, f64)> = (0..n)
            .filter(|&j| vt[(i, j)].abs() > 0.2)
            .map(|j| (names[j].clone(), vt[(i, j)]))
            .collect();
        if r < UNIDENTIFIABLE {
            for j in 0..n {
                if vt[(i, j)].abs() > 0.2 {
                    blind[j] = true;
                }
            }
        }
        weak.push(Direction {
            relative_singular_value: r,
            unidentifiable: r < UNIDENTIFIABLE,
            parameters,
        });
    }
    // C = D⁻¹ V S⁻² Vᵀ D⁻¹ over the identifiable directions.
    let mut cov = DMatrix::from_element(n, n, None);
    for a in 0..n {
        for b in 0..n {
            if blind[a] || blind[b] || norms[a] == 0.0 || norms[b] == 0.0 {
                continue;
            }
            let mut c = 0.0;
            for &i in &order {
                if smax > 0.0 && s[i] / smax >= UNIDENTIFIABLE {
                    c += vt[(i, a)] * vt[(i, b)] / (s[i] * s[i]);
                }
            }
            cov[(a, b)] = Some(c * factor / (norms[a] * norms[b]));
        }
    }
    let mut correlated = Vec::new();
    for a in 0..n {
        for b in a + 1..n {
            if let (Some(c), Some(va), Some(vb)) = (cov[(a, b)], cov[(a, a)], cov[(b, b)]) {
                let rho = c / (va * vb).sqrt();
                if rho.abs() > STRONG_CORRELATION {
                    correlated.push((names[a].clone(), names[b].clone(), rho));
                }
            }
        }
    }
    (
        cov,
        Identifiability {
            relative_singular_values: rel,
            weak,
            no_effect,
            correlated,
        },
    )
}

/// The rms of the weighted residuals per run and tap, before and after.
fn tap_residuals(problem: &Residuals<'_>, before: &[f64], after: &[f64]) -> Vec<TapResidual> {
    let per = if problem.model.measurements.phases == Phases::Shaft {
        2
    } else {
        1
    };
    let mut out = Vec::new();
    let mut offset = 0;
    for (run, m) in problem.model.measurements.runs.iter().zip(problem.measured) {
        let taps = run.taps.len();
        let block = m.harmonics.len() * taps * per;
        for (t, (_, tap)) in run.taps.iter().enumerate() {
            let rms = |r: &[f64]| {
                let mut sum = 0.0;
                let mut count = 0;
                for h in 0..m.harmonics.len() {
                    let base = offset + (h * taps + t) * per;
                    for k in 0..per {
                        sum += r[base + k] * r[base + k];
                        count += 1;
                    }
                }
                (sum / count.max(1) as f64).sqrt()
            };
            out.push(TapResidual {
                run: run.name.clone(),
                tap: tap.clone(),
                before: rms(before),
                after: rms(after),
            });
        }
        offset += block;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::TypeA;

    // Moments of a squared t part against scipy: `scipy.stats.f.stats(1, 14,
    // moments='mv')` = (1.1666667, 3.5388889); `scipy.stats.f.stats(2, 14,
    // moments='mv')` = (1.1666667, 1.9055556), so a part of a pair (half of
    // 2·F(2, 14)) has variance 4·1.9055556/2 = 3.8111111.
    #[test]
    fn type_a_parts_have_the_moments_of_f() {
        let single = TypeA::of(Some(14.0), false);
        assert!((single.mean_square - 1.166_666_7).abs() < 1e-7);
        assert!((single.variance - 3.538_888_9).abs() < 1e-7);
        let pair = TypeA::of(Some(14.0), true);
        assert!((pair.variance - 3.811_111_1).abs() < 1e-7);
        let known = TypeA::of(None, true);
        assert_eq!((known.mean_square, known.variance), (1.0, 2.0));
    }

    // The 99.9 % point of 70 pairs (140 parts) of weighted residuals with
    // 14-degree-of-freedom weights, by simulation in numpy (200,000 sums of
    // Σ (r₁² + r₂²)/s², r standard normal, s² = chisquare(14)/14, generator
    // `numpy.random.default_rng(1)`, 10 batches of 20,000): 250.7, mean
    // 163.3, variance 535. Satterthwaite's scaled χ² must be within a few
    // per cent; the χ²(140) point (197.45, scipy `chi2.ppf(0.999, 140)`)
    // would flag 7.7 % of such fits as misfits in that simulation.
    #[test]
    fn the_misfit_limit_with_type_a_weights_matches_simulation() {
        let limit = TypeA::of(Some(14.0), true).chi2_limit(140.0);
        assert!((limit / 250.7 - 1.0).abs() < 0.03, "{limit}");
        let known = TypeA::of(None, true).chi2_limit(140.0);
        assert!((known / 197.45 - 1.0).abs() < 0.01, "{known}");
    }
}

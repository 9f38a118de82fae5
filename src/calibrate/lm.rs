//! Levenberg–Marquardt for small bounded nonlinear least squares.
//!
//! Minimises ‖r(x)‖² over a box lo ≤ x ≤ hi for a few parameters (a
//! calibration has 1 to 6). The method is the trust-region form of
//! Levenberg (1944) and Marquardt (1963) as Moré (1978, "The
//! Levenberg–Marquardt algorithm: implementation and theory", Lecture Notes
//! in Mathematics 630) states it:
//!
//! * the step p solves min ‖J p + r‖ subject to ‖D p‖ ≤ Δ, i.e.
//!   (JᵀJ + λ DᵀD) p = −Jᵀr with λ ≥ 0 chosen so that ‖D p‖ ≈ Δ (within
//!   10 %), found by Newton's method on 1/‖D p(λ)‖ (Hebden's iteration);
//! * the scaling D holds the largest norm seen of each column of J, so the
//!   method does not depend on the parameters' units;
//! * the ratio ρ of the actual to the predicted reduction of ‖r‖² decides
//!   whether the step is taken (ρ ≥ 10⁻⁴) and how Δ changes (shrunk when
//!   ρ ≤ ¼, doubled from ‖D p‖ when ρ ≥ ¾ or λ = 0).
//!
//! Our own code: the subproblem is solved through the singular value
//! decomposition of J D⁻¹ (n ≤ 6 columns, so the decomposition is cheap and
//! gives the λ-curve in closed form) rather than Moré's QR updates. Bounds
//! are kept by projection: a parameter at a bound whose gradient points out
//! of the box is held for that step, and the trial point is clipped to the
//! box. Stopping (any one): the relative reduction of ‖r‖², actual and
//! predicted, below `ftol`; every parameter's step below `xtol` of its
//! scale; the cosine between r and every free column of J below `gtol`;
//! r = 0. Running out of evaluations is a status, not an error, with the
//! last iterate.

use nalgebra::{DMatrix, DVector};

/// Why the iteration stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Stop {
    /// The sum of squares no longer falls (relative reduction < `ftol`).
    SmallReduction,
    /// The steps are smaller than `xtol` of every parameter's scale.
    SmallStep,
    /// The residual is orthogonal to the Jacobian's free columns (< `gtol`):
    /// a stationary point.
    Stationary,
    /// The residual is zero.
    ZeroResidual,
    /// No step reduces the sum of squares any more at the machine's
    /// precision (the trust region has shrunk to round-off).
    Precision,
    /// The evaluation budget ran out before any test was met.
    MaxEvaluations,
}

impl Stop {
    /// Whether the iteration converged (every reason but running out of
    /// evaluations).
    pub fn converged(self) -> bool {
        self != Stop::MaxEvaluations
    }

    /// A few words for reports.
    pub fn describe(self) -> &'static str {
        match self {
            Stop::SmallReduction => "the sum of squares stopped falling",
            Stop::SmallStep => "the steps became negligible",
            Stop::Stationary => "the gradient vanished",
            Stop::ZeroResidual => "the residuals are zero",
            Stop::Precision => "no further reduction is possible at machine precision",
            Stop::MaxEvaluations => "the evaluation budget ran out before convergence",
        }
    }
}

/// Settings of the iteration.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Options {
    /// Most evaluations of r (a Jacobian by differences costs n).
    pub max_evaluations: usize,
    /// Relative reduction of ‖r‖² below which the iteration stops.
    pub ftol: f64,
    /// Step, relative to each parameter's scale, below which it stops.
    pub xtol: f64,
    /// Cosine between r and the Jacobian's columns below which it stops.
    pub gtol: f64,
    /// The first trust region is this factor times ‖D x0‖ (Moré's 100).
    pub initial_factor: f64,
}

impl Default for Options {
    fn default() -> Self {
        Options {
            max_evaluations: 400,
            ftol: 1e-12,
            xtol: 1e-10,
            gtol: 1e-12,
            initial_factor: 100.0,
        }
    }
}

/// The problem: residuals at x, and the box.
pub trait Problem {
    /// The error an evaluation can fail with.
    type Error;
    /// Number of residuals m.
    fn residual_count(&self) -> usize;
    /// Writes r(x) into `out` (length m).
    ///
    /// # Errors
    /// When the model cannot be evaluated at x; during the search such a
    /// point counts as a failed step.
    fn residuals(&mut self, x: &[f64], out: &mut [f64]) -> Result<(), Self::Error>;
    /// The Jacobian ∂r/∂x at x (m × n), by forward differences unless the
    /// problem knows better.
    ///
    /// # Errors
    /// As [`Problem::residuals`].
    fn jacobian(
        &mut self,
        x: &[f64],
        r: &[f64],
        bounds: &[(f64, f64)],
        scales: &[f64],
    ) -> Result<DMatrix<f64>, Self::Error> {
        forward_jacobian(self, x, r, bounds, scales)
    }
}

/// The Jacobian by forward differences, steps of √ε times each
/// parameter's scale (backward where the forward point is outside the
/// box).
///
/// # Errors
/// The problem's error at a displaced point.
pub fn forward_jacobian<P: Problem + ?Sized>(
    problem: &mut P,
    x: &[f64],
    r: &[f64],
    bounds: &[(f64, f64)],
    scales: &[f64],
) -> Result<DMatrix<f64>, P::Error> {
    let m = r.len();
    let n = x.len();
    let mut jac = DMatrix::zeros(m, n);
    let mut xt = x.to_vec();
    let mut rt = vec![0.0; m];
    for j in 0..n {
        let mut h = f64::EPSILON.sqrt() * scales[j].max(x[j].abs());
        if x[j] + h > bounds[j].1 {
            h = -h;
        }
        xt[j] = x[j] + h;
        let h = xt[j] - x[j]; // the step actually represented
        problem.residuals(&xt, &mut rt)?;
        for i in 0..m {
            jac[(i, j)] = (rt[i] - r[i]) / h;
        }
        xt[j] = x[j];
    }
    Ok(jac)
}

/// The outcome: the last iterate and why the iteration stopped.
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    /// The parameters.
    pub x: Vec<f64>,
    /// The residuals there.
    pub residuals: Vec<f64>,
    /// ‖r‖² there.
    pub sum_of_squares: f64,
    /// Why it stopped.
    pub stop: Stop,
    /// Iterations (Jacobians computed).
    pub iterations: usize,
    /// Evaluations of r, Jacobians included.
    pub evaluations: usize,
    /// Which parameters ended at a bound (and were held there).
    pub at_bound: Vec<bool>,
}

/// Counts evaluations on behalf of the solver.
struct Counted<'p, P: Problem + ?Sized> {
    inner: &'p mut P,
    count: usize,
}

impl<P: Problem + ?Sized> Problem for Counted<'_, P> {
    type Error = P::Error;
    fn residual_count(&self) -> usize {
        self.inner.residual_count()
    }
    fn residuals(&mut self, x: &[f64], out: &mut [f64]) -> Result<(), P::Error> {
        self.count += 1;
        self.inner.residuals(x, out)
    }
    fn jacobian(
        &mut self,
        x: &[f64],
        r: &[f64],
        bounds: &[(f64, f64)],
        scales: &[f64],
    ) -> Result<DMatrix<f64>, P::Error> {
        self.count += x.len();
        self.inner.jacobian(x, r, bounds, scales)
    }
}

fn norm(v: &[f64]) -> f64 {
    v.iter().map(|x| x * x).sum::<f64>().sqrt()
}

/// Minimises ‖r(x)‖² from `x0` within `bounds` (each low ≤ high, x0
/// inside). `scales` gives each parameter's typical size (for the
/// difference steps and the step test).
///
/// # Errors
/// The problem's error when r cannot be evaluated at `x0` (or the
/// Jacobian at an accepted point); a failure at a trial point only
/// shrinks the trust region.
///
/// # Panics
/// If the lengths of `x0`, `bounds` and `scales` differ, or there are no
/// parameters or residuals.
pub fn minimise<P: Problem + ?Sized>(
    problem: &mut P,
    x0: &[f64],
    bounds: &[(f64, f64)],
    scales: &[f64],
    options: &Options,
) -> Result<Outcome, P::Error> {
    let n = x0.len();
    assert!(n > 0 && bounds.len() == n && scales.len() == n);
    let mut problem = Counted {
        inner: problem,
        count: 0,
    };
    let m = problem.residual_count();
    assert!(m > 0);
    let mut x: Vec<f64> = x0
        .iter()
        .zip(bounds)
        .map(|(&v, &(lo, hi))| v.clamp(lo, hi))
        .collect();
    let mut r = vec![0.0; m];
    problem.residuals(&x, &mut r)?;
    let mut fnorm = norm(&r);
    let mut d = vec![0.0; n];
    let mut delta = 0.0;
    let mut par = 0.0;
    let mut iterations = 0;
    let mut held = vec![false; n];
    let mut x_trial = vec![0.0; n];
    let mut r_trial = vec![0.0; m];
    let finish = |x: Vec<f64>, r: Vec<f64>, stop, iterations, count, held: Vec<bool>| Outcome {
        sum_of_squares: norm(&r).powi(2),
        x,
        residuals: r,
        stop,
        iterations,
        evaluations: count,
        at_bound: held,
    };
    // A stop with the values that lie on a bound marked.
    let finish_at = |x: Vec<f64>, r: Vec<f64>, stop, iterations, count| {
        let held = at_bounds(&x, bounds);
        finish(x, r, stop, iterations, count, held)
    };
    loop {
        if fnorm == 0.0 {
            return Ok(finish_at(
                x,
                r,
                Stop::ZeroResidual,
                iterations,
                problem.count,
            ));
        }
        if problem.count >= options.max_evaluations {
            return Ok(finish_at(
                x,
                r,
                Stop::MaxEvaluations,
                iterations,
                problem.count,
            ));
        }
        let jac = problem.jacobian(&x, &r, bounds, scales)?;
        iterations += 1;
        // Column norms: the scaling (never decreasing) and the gradient test.
        let rv = DVector::from_column_slice(&r);
        let grad = jac.transpose() * &rv;
        for j in 0..n {
            let c = jac.column(j).norm();
            d[j] = if iterations == 1 {
                if c > 0.0 { c } else { 1.0 }
            } else {
                d[j].max(c)
            };
            let (lo, hi) = bounds[j];
            held[j] = (x[j] <= lo && grad[j] > 0.0) || (x[j] >= hi && grad[j] < 0.0);
        }
        if iterations == 1 {
            let xnorm = norm(&x.iter().zip(&d).map(|(a, b)| a * b).collect::<Vec<_>>());
            delta = options.initial_factor * if xnorm > 0.0 { xnorm } else { 1.0 };
        }
        let gmax = (0..n)
            .filter(|&j| !held[j])
            .map(|j| {
                let c = jac.column(j).norm();
                if c > 0.0 {
                    grad[j].abs() / (c * fnorm)
                } else {
                    0.0
                }
            })
            .fold(0.0, f64::max);
        if gmax <= options.gtol {
            return Ok(finish(
                x,
                r,
                Stop::Stationary,
                iterations,
                problem.count,
                held,
            ));
        }
        let free: Vec<usize> = (0..n).filter(|&j| !held[j]).collect();
        // Inner loop: steps until one reduces ‖r‖.
        loop {
            let (z, lambda) = scaled_step(&jac, &d, &free, &r, delta, par);
            par = lambda;
            // p = D⁻¹ z on the free parameters, then clipped to the box
            let mut p = vec![0.0; n];
            for (k, &j) in free.iter().enumerate() {
                p[j] = z[k] / d[j];
            }
            for j in 0..n {
                x_trial[j] = (x[j] + p[j]).clamp(bounds[j].0, bounds[j].1);
                p[j] = x_trial[j] - x[j];
            }
            let pnorm = norm(&p.iter().zip(&d).map(|(a, b)| a * b).collect::<Vec<_>>());
            if iterations == 1 {
                delta = delta.min(pnorm.max(f64::MIN_POSITIVE));
            }
            let ok = problem.residuals(&x_trial, &mut r_trial).is_ok()
                && r_trial.iter().all(|v| v.is_finite());
            let fnorm1 = if ok { norm(&r_trial) } else { f64::INFINITY };
            let actred = if 0.1 * fnorm1 < fnorm {
                1.0 - (fnorm1 / fnorm).powi(2)
            } else {
                -1.0
            };
            // The linear model's reduction for the step actually taken.
            let jp = &jac * DVector::from_column_slice(&p);
            let model: f64 = r.iter().zip(jp.iter()).map(|(a, b)| (a + b).powi(2)).sum();
            let prered = ((fnorm * fnorm - model) / (fnorm * fnorm)).max(0.0);
            let dirder = r.iter().zip(jp.iter()).map(|(a, b)| a * b).sum::<f64>() / (fnorm * fnorm);
            let ratio = if prered > 0.0 { actred / prered } else { 0.0 };
            if ratio <= 0.25 {
                let mut temp = if actred >= 0.0 {
                    0.5
                } else {
                    0.5 * dirder / (dirder + 0.5 * actred)
                };
                if 0.1 * fnorm1 >= fnorm || temp.is_nan() || temp < 0.1 {
                    temp = 0.1;
                }
                delta = temp * delta.min(pnorm / 0.1);
                par /= temp;
            } else if par == 0.0 || ratio >= 0.75 {
                delta = pnorm / 0.5;
                par *= 0.5;
            }
            let accepted = ratio >= 1e-4;
            if accepted {
                x.copy_from_slice(&x_trial);
                r.copy_from_slice(&r_trial);
                fnorm = fnorm1;
            }
            let small_step = (0..n).all(|j| p[j].abs() <= options.xtol * scales[j]);
            if actred.abs() <= options.ftol && prered <= options.ftol && 0.5 * ratio <= 1.0 {
                return Ok(finish_at(
                    x,
                    r,
                    Stop::SmallReduction,
                    iterations,
                    problem.count,
                ));
            }
            if small_step && accepted {
                return Ok(finish_at(x, r, Stop::SmallStep, iterations, problem.count));
            }
            let xnorm = norm(&x.iter().zip(&d).map(|(a, b)| a * b).collect::<Vec<_>>());
            if delta <= f64::EPSILON * xnorm.max(f64::MIN_POSITIVE) || pnorm == 0.0 {
                return Ok(finish_at(x, r, Stop::Precision, iterations, problem.count));
            }
            if problem.count >= options.max_evaluations {
                return Ok(finish_at(
                    x,
                    r,
                    Stop::MaxEvaluations,
                    iterations,
                    problem.count,
                ));
            }
            if accepted {
                break;
            }
        }
    }
}

fn at_bounds(x: &[f64], bounds: &[(f64, f64)]) -> Vec<bool> {
    x.iter()
        .zip(bounds)
        .map(|(&v, &(lo, hi))| v <= lo || v >= hi)
        .collect()
}

/// The scaled step z = D p on the `free` columns for trust radius `delta`,
/// and its λ (0 for the Gauss–Newton step when it fits). `par` is the
/// previous λ, a starting guess.
fn scaled_step(
    jac: &DMatrix<f64>,
    d: &[f64],
    free: &[usize],
    r: &[f64],
    delta: f64,
    par: f64,
) -> (Vec<f64>, f64) {
    let k = free.len();
    if k == 0 {
        return (Vec::new(), par);
    }
    let m = jac.nrows();
    let a = DMatrix::from_fn(m, k, |i, c| jac[(i, free[c])] / d[free[c]]);
    let svd = a.svd(true, true);
    let (u, vt) = (svd.u.expect("asked for U"), svd.v_t.expect("asked for V"));
    let s = &svd.singular_values;
    let smax = s.iter().cloned().fold(0.0, f64::max);
    let cut = smax * (m.max(k) as f64) * f64::EPSILON;
    // c = Uᵀ(−r)
    let rv = DVector::from_column_slice(r);
    let c: Vec<f64> = (0..s.len()).map(|i| -u.column(i).dot(&rv)).collect();
    let coeffs = |lambda: f64| -> Vec<f64> {
        (0..s.len())
            .map(|i| {
                if s[i] > cut {
                    s[i] * c[i] / (s[i] * s[i] + lambda)
                } else {
                    0.0
                }
            })
            .collect()
    };
    let to_z = |w: &[f64]| -> Vec<f64> {
        (0..k)
            .map(|col| (0..w.len()).map(|i| vt[(i, col)] * w[i]).sum())
            .collect()
    };
    let gn = coeffs(0.0);
    let gn_norm = norm(&gn);
    if gn_norm <= 1.1 * delta {
        return (to_z(&gn), 0.0);
    }
    // Newton on 1/‖z(λ)‖ − 1/Δ, kept inside [lo, hi].
    let gnorm = (0..s.len())
        .map(|i| (s[i] * c[i]).powi(2))
        .sum::<f64>()
        .sqrt();
    let mut hi = gnorm / delta;
    let mut lo = 0.0;
    let mut lambda = if par > 0.0 && par < hi {
        par
    } else {
        0.001 * hi
    };
    for _ in 0..30 {
        let w = coeffs(lambda);
        let nz = norm(&w);
        if (nz - delta).abs() <= 0.1 * delta {
            return (to_z(&w), lambda);
        }
        if nz > delta {
            lo = lambda;
        } else {
            hi = lambda;
        }
        // d‖z‖/dλ = −Σ s²c²/(s²+λ)³ / ‖z‖
        let dn: f64 = -(0..s.len())
            .filter(|&i| s[i] > cut)
            .map(|i| (s[i] * c[i]).powi(2) / (s[i] * s[i] + lambda).powi(3))
            .sum::<f64>()
            / nz;
        let next = lambda - (1.0 / delta - 1.0 / nz) * nz * nz / dn;
        lambda = if next > lo && next < hi && next.is_finite() {
            next
        } else {
            (lo * hi).sqrt().max(lo + 0.5 * (hi - lo) * 1e-3)
        };
    }
    (to_z(&coeffs(lambda)), lambda)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A problem from a closure.
    struct Fun<F: FnMut(&[f64], &mut [f64])> {
        m: usize,
        f: F,
    }

    impl<F: FnMut(&[f64], &mut [f64])> Problem for Fun<F> {
        type Error = ();
        fn residual_count(&self) -> usize {
            self.m
        }
        fn residuals(&mut self, x: &[f64], out: &mut [f64]) -> Result<(), ()> {
            (self.f)(x, out);
            Ok(())
        }
    }

    fn solve(
        m: usize,
        f: impl FnMut(&[f64], &mut [f64]),
        x0: &[f64],
        bounds: Option<Vec<(f64, f64)>>,
    ) -> Outcome {
        let n = x0.len();
        let bounds = bounds.unwrap_or(vec![(f64::NEG_INFINITY, f64::INFINITY); n]);
        let scales = vec![1.0; n];
        minimise(&mut Fun { m, f }, x0, &bounds, &scales, &Options::default()).unwrap()
    }

    fn close(x: &[f64], want: &[f64], tol: f64) {
        for (a, b) in x.iter().zip(want) {
            assert!((a - b).abs() <= tol * b.abs().max(1.0), "{x:?} vs {want:?}");
        }
    }

    // Test problems with known minima from Moré, Garbow & Hillstrom (1981),
    // "Testing unconstrained optimization software", ACM TOMS 7(1): their
    // problems 1 (Rosenbrock), 3 (Powell badly scaled), 7 (helical valley)
    // and 12 (Box three-dimensional), from their standard starting points.
    #[test]
    fn known_minima_of_the_standard_test_problems() {
        let rosenbrock = solve(
            2,
            |x, r| {
                r[0] = 10.0 * (x[1] - x[0] * x[0]);
                r[1] = 1.0 - x[0];
            },
            &[-1.2, 1.0],
            None,
        );
        close(&rosenbrock.x, &[1.0, 1.0], 1e-10);
        assert!(rosenbrock.stop.converged());
        let powell = solve(
            2,
            |x, r| {
                r[0] = 1e4 * x[0] * x[1] - 1.0;
                r[1] = (-x[0]).exp() + (-x[1]).exp() - 1.0001;
            },
            &[0.0, 1.0],
            None,
        );
        // minimum F = 0 at (1.098…e-5, 9.106…): both residuals vanish
        assert!(powell.sum_of_squares < 1e-20, "{powell:?}");
        assert!((powell.x[0] * powell.x[1] - 1e-4).abs() < 1e-12);
        let helical = solve(
            3,
            |x, r| {
                let theta = x[1].atan2(x[0]) / std::f64::consts::TAU;
                let theta = if theta < 0.0 { theta + 1.0 } else { theta };
                r[0] = 10.0 * (x[2] - 10.0 * theta);
                r[1] = 10.0 * ((x[0] * x[0] + x[1] * x[1]).sqrt() - 1.0);
                r[2] = x[2];
            },
            &[-1.0, 0.0, 0.0],
            None,
        );
        close(&helical.x, &[1.0, 0.0, 0.0], 1e-9);
        let box3d = solve(
            10,
            |x, r| {
                for (i, ri) in r.iter_mut().enumerate() {
                    let t = 0.1 * (i + 1) as f64;
                    *ri = (-t * x[0]).exp()
                        - (-t * x[1]).exp()
                        - x[2] * ((-t).exp() - (-10.0 * t).exp());
                }
            },
            &[0.0, 10.0, 20.0],
            None,
        );
        close(&box3d.x, &[1.0, 10.0, 1.0], 1e-8);
    }

    // Rosenbrock with x1 ≤ 0.5: for any x1, x2 = x1² zeroes the first
    // residual, and (1 − x1)² falls all the way to the bound, so the
    // constrained minimum is (0.5, 0.25) with the bound active (by hand).
    #[test]
    fn a_bound_holds_the_parameter_at_the_constrained_minimum() {
        let out = solve(
            2,
            |x, r| {
                r[0] = 10.0 * (x[1] - x[0] * x[0]);
                r[1] = 1.0 - x[0];
            },
            &[-1.2, 1.0],
            Some(vec![(-2.0, 0.5), (-2.0, 2.0)]),
        );
        close(&out.x, &[0.5, 0.25], 1e-10);
        assert_eq!(out.at_bound, [true, false]);
        assert!(out.stop.converged(), "{out:?}");
    }

    // A non-zero-residual fit: y = a·exp(−b t) + c to 12 points of our own.
    // The optimum was computed with scipy 1.17.1,
    // `scipy.optimize.least_squares(res, [1, 1, 0], method="lm",
    // xtol=1e-15, ftol=1e-15, gtol=1e-15)` (tests/oracles/calibrate_refs.py).
    #[test]
    fn a_nonzero_residual_fit_matches_scipy() {
        let t: Vec<f64> = (0..12).map(|i| 0.25 * i as f64).collect();
        let y = [
            5.02, 3.96, 3.11, 2.53, 2.02, 1.69, 1.39, 1.18, 1.04, 0.91, 0.83, 0.79,
        ];
        let out = solve(
            12,
            |x, r| {
                for i in 0..12 {
                    r[i] = x[0] * (-x[1] * t[i]).exp() + x[2] - y[i];
                }
            },
            &[1.0, 1.0, 0.0],
            None,
        );
        close(
            &out.x,
            &[
                4.477_153_554_043_632,
                1.105_815_232_746_866,
                0.550_444_166_573_904_9,
            ],
            1e-8,
        );
        assert!((out.sum_of_squares - 0.002_844_631_289_817_486).abs() < 1e-12);
    }

    #[test]
    fn running_out_of_evaluations_is_a_result_with_the_last_iterate() {
        let mut problem = Fun {
            m: 2,
            f: |x: &[f64], r: &mut [f64]| {
                r[0] = 10.0 * (x[1] - x[0] * x[0]);
                r[1] = 1.0 - x[0];
            },
        };
        let options = Options {
            max_evaluations: 6,
            ..Options::default()
        };
        let bounds = [(f64::NEG_INFINITY, f64::INFINITY); 2];
        let out = minimise(&mut problem, &[-1.2, 1.0], &bounds, &[1.0, 1.0], &options).unwrap();
        assert_eq!(out.stop, Stop::MaxEvaluations);
        assert!(!out.stop.converged());
        // the last iterate is better than the start: F(x0) = 24.2
        assert!(out.sum_of_squares < 24.2 && out.evaluations <= 8, "{out:?}");
    }
}

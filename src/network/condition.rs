//! The 1-norm condition estimate shared by the sparse and dense solves.

use num_complex::Complex64 as C64;

/// |z| as √(re² + im²): faster than `hypot` in the estimator's loops, and
/// safe here because the non-dimensionalised entries are far from overflow
/// (an overflow gives inf, which is reported as singular).
pub(super) fn abs(z: C64) -> f64 {
    z.norm_sqr().sqrt()
}

fn sum_abs(x: &[C64]) -> f64 {
    x.iter().map(|&v| abs(v)).sum()
}

/// Solves with a factorised matrix A, in place.
pub(super) trait Solves {
    /// x ← A⁻¹·x.
    fn solve(&mut self, x: &mut [C64]);
    /// x ← A⁻ᴴ·x.
    fn solve_adjoint(&mut self, x: &mut [C64]);
}

/// Estimates ‖A⁻¹‖₁ by Hager's method as refined by Higham (N. J. Higham,
/// "FORTRAN codes for estimating the one-norm of a real or complex matrix",
/// ACM TOMS 14(4), 1988; the algorithm of LAPACK's `zlacon`, here with at
/// most two iterations): a few solves with A and Aᴴ, never forming A⁻¹. The estimate is a lower bound, usually within a factor of 3
/// of the true norm. `x` (length n) is scratch.
pub(super) fn inverse_norm1_estimate(x: &mut [C64], a: &mut dyn Solves) -> f64 {
    let n = x.len();
    x.fill(C64::new(1.0 / n as f64, 0.0));
    a.solve(x);
    let mut estimate = sum_abs(x);
    let mut last_j = usize::MAX;
    // Higham (1988) reports convergence within two iterations in almost all
    // cases; two keep the per-frequency cost low in sweeps.
    for _ in 0..2 {
        // ξ = sign(x), z = A⁻ᴴ ξ
        for v in x.iter_mut() {
            let m = abs(*v);
            *v = if m > 0.0 { *v / m } else { C64::new(1.0, 0.0) };
        }
        a.solve_adjoint(x);
        let (j, _) =
            x.iter().enumerate().fold(
                (0, -1.0),
                |(bj, bv), (i, v)| if v.re > bv { (i, v.re) } else { (bj, bv) },
            );
        if j == last_j {
            break;
        }
        last_j = j;
        x.fill(C64::new(0.0, 0.0));
        x[j] = C64::new(1.0, 0.0);
        a.solve(x);
        let next = sum_abs(x);
        if next <= estimate {
            break;
        }
        estimate = next;
    }
    // Higham's extra test vector x_i = (−1)^i (1 + i/(n−1)) guards against
    // the rare matrices where the iteration stops too early.
    if n > 1 {
        for (i, v) in x.iter_mut().enumerate() {
            let sign = if i % 2 == 0 { 1.0 } else { -1.0 };
            *v = C64::new(sign * (1.0 + i as f64 / (n - 1) as f64), 0.0);
        }
        a.solve(x);
        let alt = 2.0 * sum_abs(x) / (3.0 * n as f64);
        estimate = estimate.max(alt);
    }
    estimate
}

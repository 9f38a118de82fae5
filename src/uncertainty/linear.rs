//! The first-order (linearised) band: the GUM's law of propagation of
//! uncertainty for independent inputs (JCGM 100:2008 §5.1.2),
//! u_c²(y) = Σ cᵢ² u²(xᵢ), with the sensitivity cᵢ = ∂f/∂xᵢ.
//!
//! Each input is moved by ±u(xᵢ) from its value with the others held, so
//! 2n + 1 evaluations give
//! * the sensitivity as the central difference
//!   cᵢ = (f(x + uᵢ) − f(x − uᵢ))/(2uᵢ);
//! * the curvature f''ᵢ ≈ (f(x + uᵢ) − 2f(x) + f(x − uᵢ))/uᵢ², whose
//!   contribution to the variance at second order is ½(f''ᵢ uᵢ²)² (the
//!   higher-order term of JCGM 100 §5.1.2, its note, for a normal input).
//!
//! **When is it good?** The nonlinearity index η = √(Σ ½(f''ᵢ uᵢ²)²)/u_c
//! compares that second-order term with the first-order result. With η ≤
//! [`ETA_GOOD`] (0.1) the second-order term changes u_c by less than 0.5 %
//! and shifts the mean by less than about 0.07·u_c, and the linearised
//! band is reported as good; above it the output is too curved over the
//! inputs' spread for a first-order band (near a resonance, typically), and
//! the Monte Carlo band should be used. When both are computed, the
//! linearised interval y ± k·u_c (k the normal coverage factor) is also
//! validated against the Monte Carlo one as JCGM 101:2008 §8 does: both
//! ends must agree within the Monte Carlo result's numerical tolerance.

use super::stats::normal_quantile;
use serde::Serialize;

/// Largest nonlinearity index of a good linearised band.
pub const ETA_GOOD: f64 = 0.1;

/// The first-order band of one output.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct LinearBand {
    /// The value at the nominal inputs.
    pub nominal: f64,
    /// The combined standard uncertainty u_c.
    pub u: f64,
    /// nominal − k·u_c.
    pub low: f64,
    /// nominal + k·u_c.
    pub high: f64,
    /// The nonlinearity index η.
    pub nonlinearity: f64,
    /// η ≤ [`ETA_GOOD`].
    pub good: bool,
    /// Draws that could not be evaluated at ±u (a quantity that vanishes
    /// there): the band is then unknown (NaN ends) and not good.
    pub missing: bool,
}

/// The normal coverage factor k for coverage probability p: Φ⁻¹((1 + p)/2).
pub fn coverage_factor(p: f64) -> f64 {
    normal_quantile(0.5 * (1.0 + p))
}

/// Evaluations the linearised bands need for `inputs` inputs.
pub fn evaluations(inputs: usize) -> usize {
    2 * inputs + 1
}

/// The linearised bands of every output from the nominal outputs `f0` and
/// the outputs with input i at +uᵢ (`plus[i]`) and at −uᵢ (`minus[i]`).
///
/// # Panics
/// If the lengths disagree.
pub fn bands(f0: &[f64], plus: &[Vec<f64>], minus: &[Vec<f64>], coverage: f64) -> Vec<LinearBand> {
    assert_eq!(plus.len(), minus.len());
    let k = coverage_factor(coverage);
    (0..f0.len())
        .map(|o| {
            let mut var1 = 0.0;
            let mut var2 = 0.0;
            let mut missing = !f0[o].is_finite();
            for (p, m) in plus.iter().zip(minus) {
                let (fp, fm) = (p[o], m[o]);
                if !(fp.is_finite() && fm.is_finite()) {
                    missing = true;
                    continue;
                }
                // cᵢuᵢ and f''ᵢuᵢ² from the three points
                let cu = 0.5 * (fp - fm);
                let curv = fp - 2.0 * f0[o] + fm;
                var1 += cu * cu;
                var2 += 0.5 * curv * curv;
            }
            let u = var1.sqrt();
            let nonlinearity = if u > 0.0 {
                var2.sqrt() / u
            } else if var2 > 0.0 {
                f64::INFINITY
            } else {
                0.0
            };
            let nan = f64::NAN;
            LinearBand {
                nominal: f0[o],
                u: if missing { nan } else { u },
                low: if missing { nan } else { f0[o] - k * u },
                high: if missing { nan } else { f0[o] + k * u },
                nonlinearity: if missing { nan } else { nonlinearity },
                good: !missing && nonlinearity <= ETA_GOOD,
                missing,
            }
        })
        .collect()
}

/// JCGM 101:2008 §8: the linearised interval agrees with the Monte Carlo
/// one when both ends differ by at most the numerical tolerance δ of the
/// Monte Carlo u written to `digits` significant digits.
pub fn agrees_with_monte_carlo(
    linear: &LinearBand,
    mc: &super::monte_carlo::Band,
    digits: u32,
) -> bool {
    if !(linear.u.is_finite() && mc.u.is_finite() && mc.u > 0.0) {
        return linear.u == 0.0 && mc.u == 0.0;
    }
    let l = mc.u.log10().floor() as i32 - (digits as i32 - 1);
    let delta = 0.5 * 10f64.powi(l);
    (linear.low - mc.low).abs() <= delta && (linear.high - mc.high).abs() <= delta
}

#[cfg(test)]
mod tests {
    use super::*;

    // y = 3x + 1 is linear: u_c = 3u exactly and η = 0. y = x² at x = 1
    // with u = 0.1: c = 2 (central difference of a parabola is exact),
    // f'' = 2, so η = √(½·(2·0.01)²)/0.2 = 0.0707 (by hand).
    #[test]
    fn linear_and_curved_outputs() {
        let u = 0.1;
        let f = |x: f64| vec![3.0 * x + 1.0, x * x];
        let b = bands(&f(1.0), &[f(1.0 + u)], &[f(1.0 - u)], 0.9);
        assert!((b[0].u - 0.3).abs() < 1e-12 && b[0].nonlinearity < 1e-12 && b[0].good);
        let k = coverage_factor(0.9);
        assert!((b[0].high - (4.0 + k * 0.3)).abs() < 1e-12);
        assert!((b[1].u - 0.2).abs() < 1e-12);
        assert!((b[1].nonlinearity - 0.02 / 2f64.sqrt() / 0.2).abs() < 1e-12);
        // a quantity with no first-order term at all is flagged
        let g = |x: f64| vec![(x - 1.0).powi(2)];
        let b = bands(&g(1.0), &[g(1.1)], &[g(0.9)], 0.9);
        assert!(b[0].nonlinearity > 1e6 && !b[0].good, "{:?}", b[0]);
    }

    // scipy.stats.norm.ppf(0.95) = 1.6448536269514722 (calibrate_refs.py)
    #[test]
    fn the_coverage_factor_of_90_percent() {
        assert!((coverage_factor(0.9) - 1.644_853_626_951_472_2).abs() < 1e-12);
    }
}

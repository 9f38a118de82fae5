//! Uncertainty of the estimates by Monte Carlo propagation of the phasor
//! uncertainties (JCGM 101:2008, "GUM Supplement 1", the propagation of
//! distributions), with a seeded generator so a report is reproducible.
//!
//! Each draw adds circular complex Gaussian noise of the stated standard
//! uncertainty to every transducer phasor of every condition and repeats the
//! whole estimation (in-situ speed of sound, decomposition, estimator). The
//! spread of the draws is the standard uncertainty of each result; it carries
//! the nonlinearity and the conditioning of the problem with it.
//!
//! The phasor uncertainties come from the records (the residual of the
//! whole-record fit, see [`super::extract`]) or from a spectra file. Where
//! three or more transducers over-determine the wave fit, the fit residual
//! is checked against its χ² distribution ([`super::fit`]), and when no
//! uncertainty is known the phasors of a line are perturbed by √(r²/ν), its
//! own wave-fit residual.

use crate::C64;

/// Sample statistics of a complex result over the draws.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spread {
    /// Standard deviation of the amplitude |X|.
    pub amplitude: f64,
    /// Standard deviation of the phase in rad, about the nominal phase.
    pub phase_rad: f64,
}

/// Spread of the draws of a complex quantity about its nominal value
/// `nominal` (amplitude: about the mean amplitude; phase: about the nominal
/// phase, wrapped to ±π). `None` with fewer than two draws.
pub fn complex_spread(nominal: C64, draws: &[C64]) -> Option<Spread> {
    if draws.len() < 2 {
        return None;
    }
    let n = draws.len() as f64;
    let amps: Vec<f64> = draws.iter().map(|d| d.norm()).collect();
    let mean = amps.iter().sum::<f64>() / n;
    let var_a = amps.iter().map(|a| (a - mean).powi(2)).sum::<f64>() / (n - 1.0);
    let var_p = draws
        .iter()
        .map(|d| (d / nominal).arg().powi(2))
        .sum::<f64>()
        / (n - 1.0);
    Some(Spread {
        amplitude: var_a.sqrt(),
        phase_rad: var_p.sqrt(),
    })
}

/// The 0.995 quantile of the standard normal distribution, √2·erfinv(0.99)
/// (mpmath 1.3.0: `mp.sqrt(2)*mp.erfinv(mp.mpf('0.99'))` at 30 digits,
/// tests/oracles/stats_refs.py).
pub const Z_995: f64 = 2.575_829_303_548_901;

/// A quantile of the χ² distribution with ν degrees of freedom, given the
/// standard-normal quantile z of the same probability, by the cube-root
/// approximation of Wilson & Hilferty (1931): ν(1 − 2/(9ν) + z√(2/(9ν)))³.
/// Its relative error is below 3 % for ν ≥ 10 and 0.2 % for ν ≥ 40 at the
/// 0.5 % and 99.5 % points (against mpmath, tests/oracles/stats_refs.py).
pub fn chi_square_quantile(z: f64, dof: f64) -> f64 {
    let a = 2.0 / (9.0 * dof);
    dof * (1.0 - a + z * a.sqrt()).max(0.0).powi(3)
}

/// The decimal exponent of the last digit a value with standard
/// uncertainty `u` is written to: the uncertainty's second significant
/// digit (JCGM 100:2008 §7.2.6: at most two significant digits for the
/// uncertainty, the value rounded to match). `None` for an unknown or zero
/// uncertainty.
pub fn last_digit_exponent(u: Option<f64>) -> Option<i32> {
    u.filter(|u| u.is_finite() && *u > 0.0)
        .map(|u| u.log10().floor() as i32 - 1)
}

/// `value` in scientific notation with the digits its uncertainty supports
/// (all of a double's digits when the uncertainty is unknown).
pub fn scientific(value: f64, u: Option<f64>) -> String {
    match last_digit_exponent(u) {
        Some(last) if value != 0.0 && value.is_finite() => {
            let first = value.abs().log10().floor() as i32;
            let digits = (first - last).clamp(0, 16) as usize;
            format!("{value:.digits$e}")
        }
        _ => format!("{value:e}"),
    }
}

/// `value` in fixed notation with the digits its uncertainty supports (all
/// of a double's digits when the uncertainty is unknown).
pub fn fixed(value: f64, u: Option<f64>) -> String {
    match last_digit_exponent(u) {
        Some(last) => {
            let decimals = (-last).clamp(0, 16) as usize;
            format!("{value:.decimals$}")
        }
        None => format!("{value:?}"),
    }
}

/// Standard deviation of real draws; `None` with fewer than two.
pub fn real_spread(draws: &[f64]) -> Option<f64> {
    if draws.len() < 2 {
        return None;
    }
    let n = draws.len() as f64;
    let mean = draws.iter().sum::<f64>() / n;
    Some((draws.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::estimate::rng::Rng;

    #[test]
    fn spread_of_circular_noise_is_half_its_variance_per_component() {
        // X = 10 + n, E|n|² = 1: the amplitude and the phase (×10) each carry
        // half the variance, so both standard deviations are 1/√2 (× 1/10 rad).
        let mut rng = Rng::new(3);
        let nominal = C64::new(10.0, 0.0);
        let draws: Vec<C64> = (0..20000).map(|_| nominal + rng.complex_normal()).collect();
        let s = complex_spread(nominal, &draws).unwrap();
        assert!(
            (s.amplitude - std::f64::consts::FRAC_1_SQRT_2).abs() < 0.02,
            "{}",
            s.amplitude
        );
        assert!(
            (s.phase_rad - 0.1 * std::f64::consts::FRAC_1_SQRT_2).abs() < 0.002,
            "{}",
            s.phase_rad
        );
        assert_eq!(real_spread(&[1.0]), None);
        assert!((real_spread(&[1.0, 3.0]).unwrap() - 2f64.sqrt()).abs() < 1e-15);
    }

    #[test]
    fn values_keep_the_digits_of_their_uncertainty() {
        // JCGM 100:2008 §7.2.6 (two significant digits of the uncertainty,
        // the value rounded to the same place), worked by hand.
        assert_eq!(scientific(1.0023456e-5, Some(1.2e-7)), "1.002e-5");
        assert_eq!(scientific(1.0023456e-5, Some(9.9e-9)), "1.00235e-5");
        assert_eq!(fixed(1503.00213, Some(0.0015)), "1503.0021");
        assert_eq!(fixed(-89.53, Some(2.4)), "-89.5");
        assert_eq!(fixed(1503.0, Some(40.0)), "1503");
        assert_eq!(scientific(0.1 + 0.2, None), "3.0000000000000004e-1");
    }

    #[test]
    fn chi_square_quantiles_against_mpmath() {
        // tests/oracles/stats_refs.py: x with
        // mpmath.gammainc(ν/2, 0, x/2, regularized=True) = p (mpmath.findroot).
        for (nu, lo, hi) in [
            (40.0, 20.70653531697008, 66.76596183280392),
            (80.0, 51.17193189044517, 116.3210565069692),
            (300.0, 240.6633889165125, 366.8444461349087),
        ] {
            let (a, b) = (
                chi_square_quantile(-Z_995, nu),
                chi_square_quantile(Z_995, nu),
            );
            assert!((a / lo - 1.0).abs() < 2e-3, "{nu}: {a} vs {lo}");
            assert!((b / hi - 1.0).abs() < 1e-3, "{nu}: {b} vs {hi}");
        }
    }
}

//! Time waveforms rebuilt from harmonic phasors.
//!
//! With peak phasors P_k of orders k of a fundamental, the ripple over one
//! period is p(θ) = Σ_k Re{P_k e^{jkθ}}, θ = 2π f_1 t (methods.md §7.3). The
//! peak-to-peak value must be found on the waveform: it is not the sum of the
//! harmonic amplitudes, because the harmonics do not peak together.

use super::search::golden_section_max;
use num_complex::Complex64 as C64;

/// p(θ) = Σ Re{P_k e^{jkθ}} for (order k, P_k) pairs.
pub fn evaluate(harmonics: &[(u32, C64)], theta: f64) -> f64 {
    harmonics
        .iter()
        .map(|&(k, p)| (p * C64::from_polar(1.0, f64::from(k) * theta)).re)
        .sum()
}

/// The highest and lowest points of p(θ) over one period: (θ, p(θ)) each,
/// θ in 0..2π of the fundamental.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Extremes {
    /// The maximum: (θ, value).
    pub max: (f64, f64),
    /// The minimum: (θ, value).
    pub min: (f64, f64),
}

/// The extremes of p(θ) over one period.
///
/// Samples 64 points per period of the highest order (at least 1024), then
/// refines the largest and smallest samples by golden-section search on the
/// exact sum, so the values are accurate to round-off.
pub fn extremes(harmonics: &[(u32, C64)]) -> Extremes {
    let max_order = harmonics.iter().map(|h| h.0).max().unwrap_or(0);
    if max_order == 0 {
        return Extremes {
            max: (0.0, 0.0),
            min: (0.0, 0.0),
        };
    }
    let n = (64 * max_order as usize).max(1024);
    let step = std::f64::consts::TAU / n as f64;
    let (mut i_max, mut i_min) = (0, 0);
    let (mut v_max, mut v_min) = (f64::NEG_INFINITY, f64::INFINITY);
    for i in 0..n {
        let v = evaluate(harmonics, i as f64 * step);
        if v > v_max {
            (v_max, i_max) = (v, i);
        }
        if v < v_min {
            (v_min, i_min) = (v, i);
        }
    }
    let centre_max = i_max as f64 * step;
    let centre_min = i_min as f64 * step;
    let hi = golden_section_max(
        |t| evaluate(harmonics, t),
        centre_max - step,
        centre_max + step,
        80,
    );
    let lo = golden_section_max(
        |t| -evaluate(harmonics, t),
        centre_min - step,
        centre_min + step,
        80,
    );
    let tau = std::f64::consts::TAU;
    Extremes {
        max: if hi.1 >= v_max {
            (hi.0.rem_euclid(tau), hi.1)
        } else {
            (centre_max, v_max)
        },
        min: if -lo.1 <= v_min {
            (lo.0.rem_euclid(tau), -lo.1)
        } else {
            (centre_min, v_min)
        },
    }
}

/// The peak-to-peak value of p(θ) over one period (see [`extremes`]).
pub fn peak_to_peak(harmonics: &[(u32, C64)]) -> f64 {
    let e = extremes(harmonics);
    e.max.1 - e.min.1
}

#[cfg(test)]
mod tests {
    use super::*;

    // Gear pump kinematic ripple (methods.md §5.1): a parabola in shaft angle
    // with ΔQ = 6.160327046218468e-5 m³/s; its first 10 harmonics are
    // a_k = (−1)^{k+1} 4ΔQ/(π²k²) on cos(kθ). The rebuilt waveform's
    // peak-to-peak is 5.911479321806250e-5 m³/s: mpmath 1.3 (mp.dps = 30,
    // extrema at θ = 0 and π) and scipy.optimize.minimize_scalar agree
    // (tests/oracles/line_refs.py item 8).
    #[test]
    fn gear_parabola_peak_to_peak() {
        let dq = 6.160_327_046_218_468e-5;
        let h: Vec<(u32, C64)> = (1..=10)
            .map(|k| {
                let sign = if k % 2 == 1 { 1.0 } else { -1.0 };
                let a = sign * 4.0 * dq / (std::f64::consts::PI.powi(2) * f64::from(k * k));
                (k, C64::new(a, 0.0))
            })
            .collect();
        let pp = peak_to_peak(&h);
        assert!(
            (pp - 5.911_479_321_806_25e-5).abs() < 1e-9 * 5.9e-5,
            "{pp:e}"
        );
    }

    // A cos(θ + φ) peaks at θ = −φ (mod 2π) with value A and dips at
    // θ = π − φ with −A (the cosine's extremes).
    #[test]
    fn extremes_of_one_harmonic_sit_where_the_cosine_peaks() {
        let e = extremes(&[(1, C64::from_polar(2.0, 0.5))]);
        let tau = std::f64::consts::TAU;
        assert!((e.max.0 - (tau - 0.5)).abs() < 1e-6, "{e:?}");
        assert!((e.max.1 - 2.0).abs() < 1e-12);
        assert!(
            (e.min.0 - (std::f64::consts::PI - 0.5)).abs() < 1e-6,
            "{e:?}"
        );
        assert!((e.min.1 + 2.0).abs() < 1e-12);
    }

    #[test]
    fn single_harmonic_is_twice_its_amplitude() {
        let pp = peak_to_peak(&[(3, C64::from_polar(2.5, 0.7))]);
        assert!((pp - 5.0).abs() < 1e-12);
    }
}

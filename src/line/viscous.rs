//! The frequency-dependent viscous factor of laminar oscillating flow in a
//! circular tube.
//!
//! For axisymmetric laminar flow oscillating at ω in a tube of radius r
//! (Womersley 1955; line form by Brown 1962 and D'Souza & Oldenburger 1964),
//! the series impedance per unit length is Z' = jωρ / (A (1 − F)) with
//!
//! ```text
//! F(s) = 2 J1(α) / (α J0(α)),   α = s·e^{−jπ/4},   s = r √(ω/ν)
//! 1 − F = −J2(α) / J0(α)
//! ```
//!
//! s is the shear-wave (Womersley) number. ripline computes 1 − F directly
//! (never as 1 minus F, which cancels catastrophically at small s) in two
//! regimes, each accurate to better than 1e-12 relative:
//!
//! * s < [`SERIES_LIMIT`]: ratio of the ascending power series of J2 and J0
//!   (Abramowitz & Stegun 9.1.10) with u = −α²/4 = j s²/4:
//!   `1 − F = u·Σ u^k/(k!(k+2)!) / Σ u^k/(k!)²`. The round-off grows like
//!   ε·e^{0.29 s}, about 6e-14 at the switch.
//! * s ≥ [`SERIES_LIMIT`]: Hankel's asymptotic expansion (A&S 9.2.5–9.2.10)
//!   with z = s·e^{j3π/4} (Im z > 0): `J1/J0 = j (P1 − jQ1)/(P0 − jQ0)`,
//!   `F = 2 (J1/J0)/z`. The neglected H⁽¹⁾ part is relative e^{−√2 s},
//!   about 6e-14 at the switch, and the series is summed until its terms stop
//!   decreasing or fall below 1e-17.
//!
//! Both regimes work with ratios only, so nothing overflows at any s: the
//! separate Bessel functions grow like e^{s/√2}.
//!
//! Between [`FAST_LOW`] and [`FAST_HIGH`], where both need the most terms
//! (up to about 60 near the switch), [`one_minus_viscous_factor`] evaluates
//! Chebyshev expansions instead: 10 pieces, each covering a factor √2 of s,
//! of degree [`FAST_DEGREE`], their coefficients computed once from the two
//! regimes above at the Chebyshev points (interpolation at the zeros of
//! T_N, whose error for a function analytic in a Bernstein ellipse of
//! parameter ρ falls as ρ^{−N}: Trefethen, *Approximation Theory and
//! Approximation Practice*, 2013, Thm 8.2). The nearest singularities of
//! 1 − F are the poles s = j0,k·e^{jπ/4} (zeros of J0), at a distance about
//! 5 half-widths from each piece (ρ ≈ 9.7), so degree 17 leaves an error
//! near 1e-16. Tests compare it with mpmath and with the two regimes on a
//! dense grid.

use num_complex::Complex64 as C64;
use std::sync::OnceLock;

/// Shear number below which the power series is used.
pub const SERIES_LIMIT: f64 = 22.0;

/// Lowest shear number of the Chebyshev pieces.
pub const FAST_LOW: f64 = 2.0;
/// Highest shear number of the Chebyshev pieces (2·√2¹⁰).
pub const FAST_HIGH: f64 = 64.0;
/// Degree of each Chebyshev piece.
pub const FAST_DEGREE: usize = 17;
const PIECES: usize = 10;

/// 1 − F(s) = −J2(α)/J0(α) for the shear number s = r√(ω/ν) ≥ 0.
///
/// Returns 0 for s = 0 (the DC limit, where the viscous resistance is
/// infinite relative to inertia).
pub fn one_minus_viscous_factor(s: f64) -> C64 {
    if (FAST_LOW..FAST_HIGH).contains(&s) {
        chebyshev(s)
    } else {
        exact_one_minus_f(s)
    }
}

/// 1 − F by the power series or Hankel's expansion (module docs).
fn exact_one_minus_f(s: f64) -> C64 {
    if s < SERIES_LIMIT {
        series(s)
    } else {
        C64::new(1.0, 0.0) - asymptotic_f(s)
    }
}

/// Piece i covers [2·√2^i, 2·√2^{i+1}); its coefficients c_0..c_N of
/// Σ c_j T_j(t), t ∈ [−1, 1] mapped linearly onto the piece.
type Pieces = [[C64; FAST_DEGREE + 1]; PIECES];

fn pieces() -> &'static Pieces {
    static PIECES_TABLE: OnceLock<Pieces> = OnceLock::new();
    PIECES_TABLE.get_or_init(|| {
        let n = FAST_DEGREE + 1;
        let mut table = [[C64::new(0.0, 0.0); FAST_DEGREE + 1]; PIECES];
        for (i, coeffs) in table.iter_mut().enumerate() {
            let (lo, hi) = piece_bounds(i);
            // values at the Chebyshev points x_k = cos θ_k, θ_k = π(k + ½)/n
            let values: Vec<C64> = (0..n)
                .map(|k| {
                    let theta = std::f64::consts::PI * (k as f64 + 0.5) / n as f64;
                    exact_one_minus_f(0.5 * (lo + hi) + 0.5 * (hi - lo) * theta.cos())
                })
                .collect();
            for (j, c) in coeffs.iter_mut().enumerate() {
                let sum: C64 = values
                    .iter()
                    .enumerate()
                    .map(|(k, v)| {
                        let theta = std::f64::consts::PI * (k as f64 + 0.5) / n as f64;
                        v * (j as f64 * theta).cos()
                    })
                    .sum();
                *c = sum * (if j == 0 { 1.0 } else { 2.0 } / n as f64);
            }
        }
        table
    })
}

/// The bounds of piece i: [2·√2^i, 2·√2^{i+1}].
fn piece_bounds(i: usize) -> (f64, f64) {
    let lo = FAST_LOW * std::f64::consts::SQRT_2.powi(i as i32);
    (lo, lo * std::f64::consts::SQRT_2)
}

/// 1 − F on [FAST_LOW, FAST_HIGH) from the Chebyshev pieces (Clenshaw's
/// recurrence).
fn chebyshev(s: f64) -> C64 {
    // piece index from the exponent and mantissa of s/2 (no logarithm)
    let x = s / FAST_LOW;
    let exponent = ((x.to_bits() >> 52) & 0x7ff) as i64 - 1023;
    let mantissa = f64::from_bits((x.to_bits() & ((1 << 52) - 1)) | (1023 << 52));
    let i = (2 * exponent + i64::from(mantissa >= std::f64::consts::SQRT_2)).clamp(0, 9) as usize;
    let (lo, hi) = piece_bounds(i);
    let t = (2.0 * s - (lo + hi)) / (hi - lo);
    let c = &pieces()[i];
    let (mut b1, mut b2) = (C64::new(0.0, 0.0), C64::new(0.0, 0.0));
    for &ck in c[1..].iter().rev() {
        let b0 = b1 * (2.0 * t) - b2 + ck;
        b2 = b1;
        b1 = b0;
    }
    b1 * t - b2 + c[0]
}

/// F(s) = 2 J1(α)/(α J0(α)); see the module documentation.
pub fn viscous_factor(s: f64) -> C64 {
    if s < SERIES_LIMIT {
        // Within the series regime, form F from its own series, which is
        // accurate for F near 1 (small s) where 1 − (1 − F) would not be.
        series_f(s)
    } else {
        asymptotic_f(s)
    }
}

/// Power series sums (S0, S1, S2) = (Σ u^k/(k!)², Σ u^k/(k!(k+1)!),
/// Σ u^k/(k!(k+2)!)) with u = j s²/4.
fn series_sums(s: f64) -> (C64, C64, C64) {
    let u = C64::new(0.0, 0.25 * s * s);
    let mut t0 = C64::new(1.0, 0.0); // u^k/(k!)^2
    let mut t1 = C64::new(1.0, 0.0); // u^k/(k!(k+1)!)
    let mut t2 = C64::new(0.5, 0.0); // u^k/(k!(k+2)!)
    let (mut s0, mut s1, mut s2) = (t0, t1, t2);
    let mut k = 0.0_f64;
    loop {
        k += 1.0;
        t0 *= u / (k * k);
        t1 *= u / (k * (k + 1.0));
        t2 *= u / (k * (k + 2.0));
        s0 += t0;
        s1 += t1;
        s2 += t2;
        // Terms grow until k ≈ |u|^{1/2} and then fall monotonically.
        if k * k > u.im
            && t0.norm_sqr() <= 1e-34 * s0.norm_sqr()
            && t2.norm_sqr() <= 1e-34 * s2.norm_sqr()
        {
            break;
        }
    }
    (s0, s1, s2)
}

fn series(s: f64) -> C64 {
    let (s0, _, s2) = series_sums(s);
    let u = C64::new(0.0, 0.25 * s * s);
    u * s2 / s0
}

fn series_f(s: f64) -> C64 {
    let (s0, s1, _) = series_sums(s);
    s1 / s0
}

/// Number of tabulated Hankel coefficients.
const HANKEL_TERMS: usize = 48;

/// Hankel's coefficients a_k(ν) = Π_{m=1..k} (4ν² − (2m−1)²) / (k! 8^k)
/// (A&S 9.2.9–9.2.10) for ν = 0 (`.0`) and ν = 1 (`.1`).
const HANKEL: ([f64; HANKEL_TERMS], [f64; HANKEL_TERMS]) = {
    let mut a0 = [0.0; HANKEL_TERMS];
    let mut a1 = [0.0; HANKEL_TERMS];
    a0[0] = 1.0;
    a1[0] = 1.0;
    let mut k = 1;
    while k < HANKEL_TERMS {
        let odd = ((2 * k - 1) * (2 * k - 1)) as f64;
        let step = 8.0 * k as f64;
        a0[k] = a0[k - 1] * (0.0 - odd) / step;
        a1[k] = a1[k - 1] * (4.0 - odd) / step;
        k += 1;
    }
    (a0, a1)
};

/// Hankel asymptotic expansion of F for large s (F is small there, so 1 − F
/// is formed without cancellation by the caller).
///
/// With z = s·e^{j3π/4}, P_ν − jQ_ν = Σ_k a_k(ν) u^k where u = −j/z =
/// e^{j3π/4}/s, so J1/J0 = j (P1 − jQ1)/(P0 − jQ0) and
/// F = 2(J1/J0)/z = (2/s)·e^{−jπ/4}·S1/S0 with S_ν = Σ_k a_k(ν) u^k.
fn asymptotic_f(s: f64) -> C64 {
    let h = std::f64::consts::FRAC_1_SQRT_2;
    let inv_s = 1.0 / s;
    let u = C64::new(-h * inv_s, h * inv_s);
    let (mut s0, mut s1) = (C64::new(1.0, 0.0), C64::new(1.0, 0.0));
    let mut upow = C64::new(1.0, 0.0);
    let mut upow_abs = 1.0; // |u|^k = s^{-k}
    let mut last = f64::INFINITY;
    for k in 1..HANKEL_TERMS {
        upow *= u;
        upow_abs *= inv_s;
        let size = HANKEL.0[k].abs().max(HANKEL.1[k].abs()) * upow_abs;
        if size > last {
            break; // the asymptotic series has started to diverge
        }
        last = size;
        s0 += upow * HANKEL.0[k];
        s1 += upow * HANKEL.1[k];
        if size < 1e-17 {
            break;
        }
    }
    C64::new(h, -h) * (2.0 * inv_s) * s1 / s0
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Reference: complex-bessel 0.3 (pure-Rust port of Amos, ACM TOMS 644),
    /// `besselj_seq(0.0, z, 3, Scaling::Exponential)`; 1 − F = −J2/J0 from
    /// the scaled values (the scale factor cancels).
    fn reference(s: f64) -> C64 {
        let z = C64::from_polar(s, 0.75 * std::f64::consts::PI);
        let v = complex_bessel::besselj_seq(0.0, z, 3, complex_bessel::Scaling::Exponential)
            .expect("complex-bessel evaluates")
            .values;
        -v[2] / v[0]
    }

    #[test]
    fn agrees_with_amos_over_the_whole_range() {
        // log sweep 1e-3 .. 3e4 (Amos loses accuracy beyond |z| ≈ 32767).
        let mut worst: f64 = 0.0;
        for i in 0..=300 {
            let s = 10f64.powf(-3.0 + 7.4 * i as f64 / 300.0);
            let got = one_minus_viscous_factor(s);
            let want = reference(s);
            let err = (got - want).norm() / want.norm();
            worst = worst.max(err);
            assert!(err < 1e-12, "s = {s}: {got} vs {want} (rel {err:e})");
        }
        assert!(worst < 1e-12);
    }

    /// The Chebyshev pieces against the power series and Hankel's expansion
    /// they were built from (both checked against Amos and mpmath) on a
    /// dense grid of 40,000 points, piece ends included.
    #[test]
    fn chebyshev_pieces_follow_the_exact_regimes() {
        let mut worst: f64 = 0.0;
        let points = 40_000;
        for k in 0..=points {
            let s = FAST_LOW * (FAST_HIGH / FAST_LOW).powf(k as f64 / points as f64);
            let s = s.min(FAST_HIGH * (1.0 - f64::EPSILON));
            let (fast, exact) = (chebyshev(s), exact_one_minus_f(s));
            worst = worst.max((fast - exact).norm() / exact.norm());
        }
        for i in 0..PIECES {
            let (lo, _) = piece_bounds(i);
            for s in [lo, lo * (1.0 + 1e-15), lo * (1.0 - 1e-15)] {
                if (FAST_LOW..FAST_HIGH).contains(&s) {
                    let err =
                        (chebyshev(s) - exact_one_minus_f(s)).norm() / exact_one_minus_f(s).norm();
                    worst = worst.max(err);
                }
            }
        }
        assert!(worst < 2e-13, "worst relative difference {worst:e}");
    }

    #[test]
    fn both_regimes_agree_at_the_switch() {
        for s in [20.0, SERIES_LIMIT, 24.0, 26.0] {
            let a = series(s);
            let b = C64::new(1.0, 0.0) - asymptotic_f(s);
            assert!((a - b).norm() / a.norm() < 1e-12, "s = {s}");
        }
    }

    #[test]
    fn f_and_one_minus_f_are_consistent() {
        for s in [0.5, 5.0, 21.0, 40.0, 500.0] {
            let sum = viscous_factor(s) + one_minus_viscous_factor(s);
            assert!((sum - C64::new(1.0, 0.0)).norm() < 1e-13, "s = {s}");
        }
    }

    #[test]
    fn finite_at_extreme_shear_numbers() {
        for s in [0.0, 1e-9, 1e6, 1e9] {
            let v = one_minus_viscous_factor(s);
            assert!(v.re.is_finite() && v.im.is_finite(), "s = {s}");
        }
        // Large s: F → √2(1−j)/s (methods.md §2.4 high-frequency limit).
        let s = 1e9;
        let f = viscous_factor(s);
        let limit = C64::new(1.0, -1.0) * (2f64.sqrt() / s);
        assert!((f - limit).norm() / limit.norm() < 1e-8);
    }
}

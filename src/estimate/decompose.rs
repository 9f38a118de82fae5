//! Plane-wave decomposition on the reference line, and the small complex
//! least-squares solver the estimators share.
//!
//! With x measured from the pump outlet, the pressure ripple along the line
//! is P(x) = F e^{−Γx} + G e^{+Γx} (methods.md §2.1). Each transducer i gives
//! one row `[e^{−Γx_i}, e^{+Γx_i}]·[F; G] = P_i`; two transducers give a
//! square system, three or more a weighted least-squares problem solved by
//! QR (the two-microphone method of Seybert & Ross 1977 and Chung & Blaser
//! 1980 carried to liquid lines; ISO 10767-1 and ISO 15086-2 use the same
//! wave model). The pump outlet state follows:
//!
//! ```text
//! P0 = F + G          Q0 = (F − G)/Zc        (flow from the pump into the line)
//! ```
//!
//! For two transducers the solution is F = (P_i e^{Γx_j} − P_j e^{Γx_i})/(2 sinh ΓΔ),
//! which is singular when sinh ΓΔ → 0: a spacing of a multiple of half a
//! wavelength. The condition number of the column-equilibrated matrix is
//! reported so that such harmonics can be flagged.

use crate::C64;
use crate::line::Propagation;

/// The solution of a two-unknown complex least-squares problem.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ls2 {
    /// The unknowns.
    pub x: [C64; 2],
    /// Weighted residual Σ w_i |a_i x1 + b_i x2 − y_i|².
    pub residual: f64,
    /// 2-norm condition number of the weighted matrix with unit columns.
    pub cond: f64,
}

/// Solves min Σ w_i |a_i x1 + b_i x2 − y_i|² by a QR factorisation (modified
/// Gram–Schmidt, re-orthogonalised once) of the weighted matrix; `None`
/// when the two columns are exactly dependent or a column is zero.
///
/// # Panics
/// If the slices differ in length or hold fewer than two rows.
pub fn ls2(rows: &[(C64, C64)], y: &[C64], w: &[f64]) -> Option<Ls2> {
    assert!(rows.len() == y.len() && y.len() == w.len() && rows.len() >= 2);
    // Weighted columns and right-hand side, recomputed in each pass (no
    // allocation: this runs many times in the speed-of-sound search).
    let col = |i: usize| {
        let s = w[i].sqrt();
        (rows[i].0 * s, rows[i].1 * s, y[i] * s)
    };
    let n = rows.len();
    let (mut n1, mut n2) = (0.0, 0.0);
    for i in 0..n {
        let (a, b, _) = col(i);
        n1 += a.norm_sqr();
        n2 += b.norm_sqr();
    }
    let (r11, n2) = (n1.sqrt(), n2.sqrt());
    if !(r11 > 0.0 && n2 > 0.0 && r11.is_finite() && n2.is_finite()) {
        return None;
    }
    // r12 = q1ᴴ c2, then once more against the remainder (re-orthogonalised).
    let mut r12 = C64::new(0.0, 0.0);
    for _ in 0..2 {
        let mut s = C64::new(0.0, 0.0);
        for i in 0..n {
            let (a, b, _) = col(i);
            let q1 = a / r11;
            s += q1.conj() * (b - q1 * r12);
        }
        r12 += s;
    }
    let mut r22 = 0.0;
    let (mut q1y, mut vy) = (C64::new(0.0, 0.0), C64::new(0.0, 0.0));
    for i in 0..n {
        let (a, b, t) = col(i);
        let q1 = a / r11;
        let v = b - q1 * r12;
        r22 += v.norm_sqr();
        q1y += q1.conj() * t;
        vy += v.conj() * t;
    }
    let r22 = r22.sqrt();
    if r22.is_nan() || r22 <= 1e-15 * n2 {
        return None;
    }
    let x2 = vy / (r22 * r22);
    let x1 = (q1y - r12 * x2) / r11;
    let mut residual = 0.0;
    for i in 0..n {
        let (a, b, t) = col(i);
        residual += (a * x1 + b * x2 - t).norm_sqr();
    }
    // Singular values of R with unit columns: [[1, r12/n2], [0, r22/n2]].
    let b = (r12 / n2).norm_sqr();
    let d = (r22 / n2).powi(2);
    let t = 1.0 + b + d;
    let disc = (t * t - 4.0 * d).max(0.0).sqrt();
    let cond = ((t + disc) / (t - disc).max(f64::MIN_POSITIVE)).sqrt();
    Some(Ls2 {
        x: [x1, x2],
        residual,
        cond,
    })
}

/// The pump-outlet state of one condition at one frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Decomposition {
    /// Wave towards the load at x = 0, F.
    pub forward: C64,
    /// Wave towards the pump at x = 0, G.
    pub backward: C64,
    /// Pressure ripple at the pump outlet P0 = F + G in Pa.
    pub p0: C64,
    /// Flow ripple from the pump into the line Q0 = (F − G)/Zc in m³/s.
    pub q0: C64,
    /// Condition number of the decomposition.
    pub cond: f64,
    /// Weighted residual of the fit (zero for two transducers).
    pub residual: f64,
}

/// Decomposes the transducer pressures (Pa) at `positions` (m from the pump
/// outlet) into the two waves, with weights `w` (e.g. 1/u²); `None` if the
/// problem is exactly singular.
pub fn decompose(
    prop: &Propagation,
    positions: &[f64],
    pressures: &[C64],
    w: &[f64],
) -> Option<Decomposition> {
    let rows: Vec<(C64, C64)> = positions
        .iter()
        .map(|&x| ((-prop.gamma * x).exp(), (prop.gamma * x).exp()))
        .collect();
    let s = ls2(&rows, pressures, w)?;
    let [f, g] = s.x;
    Some(Decomposition {
        forward: f,
        backward: g,
        p0: f + g,
        q0: (f - g) / prop.zc,
        cond: s.cond,
        residual: s.residual,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn square_system_is_solved_exactly_and_overdetermined_fits_least_squares() {
        // x1 + x2 = 3, x1 − x2 = 1 → (2, 1); adding x1 = 2.5 pulls x1 to the
        // LS optimum of three equations: normal equations [[2,0],[0,2]] + [[1,0],[0,0]]
        // → 3 x1 = 3 + 1 + 2.5 → x1 = 6.5/3, x2 = (3 − 1)/2 = 1 (worked by hand).
        let one = C64::new(1.0, 0.0);
        let s = ls2(
            &[(one, one), (one, -one)],
            &[3.0.into(), 1.0.into()],
            &[1.0, 1.0],
        )
        .unwrap();
        assert!((s.x[0] - 2.0).norm() < 1e-15 && (s.x[1] - 1.0).norm() < 1e-15);
        assert!(
            (s.cond - 1.0).abs() < 1e-12,
            "orthogonal columns: {}",
            s.cond
        );
        let s = ls2(
            &[(one, one), (one, -one), (one, 0.0.into())],
            &[3.0.into(), 1.0.into(), 2.5.into()],
            &[1.0, 1.0, 1.0],
        )
        .unwrap();
        assert!((s.x[0] - 6.5 / 3.0).norm() < 1e-14 && (s.x[1] - 1.0).norm() < 1e-14);
        assert!(
            ls2(
                &[(one, one), (one, one)],
                &[1.0.into(), 1.0.into()],
                &[1.0, 1.0]
            )
            .is_none()
        );
    }

    #[test]
    fn pair_condition_number_follows_the_phase_spacing() {
        // Lossless pair, θ = kΔ: M^H M = [[2, s], [s*, 2]] with |s| = 2|cos θ|,
        // so σ² = 2 ± 2|cos θ| and cond = max(|cot(θ/2)|, |tan(θ/2)|)
        // (derived here).
        let k = 2.0;
        let prop = Propagation {
            gamma: C64::new(0.0, k),
            zc: C64::new(1.0, 0.0),
        };
        for delta in [0.2, 0.7, 1.3] {
            let d = decompose(
                &prop,
                &[0.1, 0.1 + delta],
                &[1.0.into(), 2.0.into()],
                &[1.0, 1.0],
            )
            .unwrap();
            let t = (k * delta / 2.0).tan().abs();
            let want = t.max(1.0 / t);
            assert!((d.cond - want).abs() < 1e-9 * want, "{} vs {want}", d.cond);
        }
    }
}

//! Source impedance by the secondary-source principle (Edge & Johnston 1990;
//! ISO 10767-1:1996; methods.md §6a), and the flow ripple from it.
//!
//! A secondary source at the far end of the reference line launches waves at
//! frequencies between the pump harmonics, where the pump acts passively
//! (Qs = 0). The wave decomposition at x = 0 then gives the pump's
//! reflection coefficient and impedance:
//!
//! ```text
//! R_s = F/G,      Zs = Zc (1 + R_s)/(1 − R_s) = −P0/Q0
//! ```
//!
//! Zs is carried to the pump harmonics by interpolation (the admittance
//! Ys = 1/Zs, real and imaginary parts linear in frequency between the
//! secondary lines, which is exact for an internal volume with leakage,
//! Ys = G + jωC; beyond the end lines the end segment is extended, and the
//! harmonic is reported as extrapolated) or by a weighted
//! least-squares fit of a physical form, Ys = G + jωC (internal volume with
//! leakage, methods.md §5 form b), each line weighted by the inverse
//! variance of its Ys (generalised least squares: the noisy lines do not
//! dominate the fit); fitting a physical form is the more repeatable of the
//! two (Johnston & Drew). Then, at each pump harmonic, from the pump's own
//! run:
//!
//! ```text
//! Qs = Q0 + P0/Zs
//! ```

use super::bench::ImpedanceFit;
use crate::C64;

/// Zs at one secondary-source frequency from the outlet state, −P0/Q0.
pub fn impedance_point(p0: C64, q0: C64) -> C64 {
    -p0 / q0
}

/// Source impedance as a function of frequency, built from the points
/// measured at the secondary-source frequencies.
#[derive(Debug, Clone, PartialEq)]
pub enum ImpedanceModel {
    /// Interpolated between the points: (frequency Hz, Ys = 1/Zs).
    Table(Vec<(f64, C64)>),
    /// Ys = G + jωC.
    CapacitanceLeakage {
        /// Conductance G in m³/(Pa·s).
        conductance: f64,
        /// Capacitance C in m³/Pa.
        capacitance: f64,
    },
}

impl ImpedanceModel {
    /// Builds the model from points (frequency Hz, Zs, variance of
    /// Ys = 1/Zs, E|δYs|²; zero or less where unknown); points at the same
    /// frequency (several secondary runs) are averaged first, weighted by
    /// their inverse variances.
    ///
    /// # Errors
    /// A message when there are no usable points.
    pub fn build(points: &[(f64, C64, f64)], fit: ImpedanceFit) -> Result<Self, String> {
        let mut pts: Vec<(f64, C64, f64)> = points
            .iter()
            .copied()
            .filter(|(f, z, _)| f.is_finite() && *f > 0.0 && z.is_finite() && z.norm() > 0.0)
            .collect();
        if pts.is_empty() {
            return Err("no secondary-source frequency gave a usable impedance".into());
        }
        // Weights 1/var(Ys); all equal when any variance is unknown.
        let known = pts.iter().all(|p| p.2 > 0.0 && p.2.is_finite());
        for p in &mut pts {
            p.2 = if known { 1.0 / p.2 } else { 1.0 };
        }
        pts.sort_by(|a, b| a.0.total_cmp(&b.0));
        // (frequency, Σ w·Ys, Σ w)
        let mut merged: Vec<(f64, C64, f64)> = Vec::new();
        for (f, z, w) in pts {
            match merged.last_mut() {
                Some(last) if (f - last.0).abs() <= 1e-9 * f => {
                    last.1 += z.inv() * w;
                    last.2 += w;
                }
                _ => merged.push((f, z.inv() * w, w)),
            }
        }
        let pts: Vec<(f64, C64, f64)> = merged
            .into_iter()
            .map(|(f, yw, w)| (f, (yw / w).inv(), w))
            .collect();
        match fit {
            ImpedanceFit::Interpolate => Ok(ImpedanceModel::Table(
                pts.into_iter().map(|(f, z, _)| (f, z.inv())).collect(),
            )),
            ImpedanceFit::CapacitanceLeakage => {
                // Weighted least squares on Ys = G + jωC (weights w_i):
                // G = Σ w Re Ys / Σ w, C = Σ w ω Im Ys / Σ w ω².
                let (mut g, mut wsum, mut num, mut den) = (0.0, 0.0, 0.0, 0.0);
                for &(f, z, wt) in &pts {
                    let ys = z.inv();
                    let w = std::f64::consts::TAU * f;
                    g += wt * ys.re;
                    wsum += wt;
                    num += wt * w * ys.im;
                    den += wt * w * w;
                }
                Ok(ImpedanceModel::CapacitanceLeakage {
                    conductance: g / wsum,
                    capacitance: num / den,
                })
            }
        }
    }

    /// Zs at `freq_hz` (outside the points of a table: the end segment
    /// extended, or the single point held).
    pub fn at(&self, freq_hz: f64) -> C64 {
        match self {
            ImpedanceModel::Table(t) => {
                if t.len() == 1 {
                    return t[0].1.inv();
                }
                let i = t.partition_point(|p| p.0 < freq_hz).clamp(1, t.len() - 1);
                let (f0, y0) = t[i - 1];
                let (f1, y1) = t[i];
                let x = (freq_hz - f0) / (f1 - f0);
                (y0 + (y1 - y0) * x).inv()
            }
            ImpedanceModel::CapacitanceLeakage {
                conductance,
                capacitance,
            } => C64::new(*conductance, std::f64::consts::TAU * freq_hz * capacitance).inv(),
        }
    }

    /// The frequency range the points cover (Hz), for interpolation.
    pub fn range_hz(&self) -> Option<(f64, f64)> {
        match self {
            ImpedanceModel::Table(t) => Some((t[0].0, t[t.len() - 1].0)),
            ImpedanceModel::CapacitanceLeakage { .. } => None,
        }
    }
}

/// Qs at a pump harmonic from the outlet state of the pump's run and Zs.
pub fn flow_ripple(p0: C64, q0: C64, zs: C64) -> C64 {
    q0 + p0 / zs
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn capacitance_leakage_fit_is_exact_for_that_form() {
        // Zs = 1/(G + jωC) with C = 6.25e-14, G = 1/1.2e12 (methods.md §5
        // worked example); at 225 Hz Zs = 1.067322e8 − j1.131668e10 (numpy, ibid.).
        let (g, c) = (1.0 / 1.2e12, 6.25e-14);
        let z = |f: f64| C64::new(g, std::f64::consts::TAU * f * c).inv();
        let pts: Vec<(f64, C64, f64)> =
            [90.0, 180.0, 330.0, 410.0].map(|f| (f, z(f), 0.0)).to_vec();
        let m = ImpedanceModel::build(&pts, ImpedanceFit::CapacitanceLeakage).unwrap();
        let z225 = m.at(225.0);
        assert!((z225 - z(225.0)).norm() < 1e-12 * z225.norm());
        assert!((z225.re - 1.067322e8).abs() < 1e-6 * 1.067322e8);
        assert!((z225.im + 1.131668e10).abs() < 1e-6 * 1.131668e10);
        let t = ImpedanceModel::build(&pts, ImpedanceFit::Interpolate).unwrap();
        assert_eq!(t.range_hz(), Some((90.0, 410.0)));
        assert!((t.at(180.0) - z(180.0)).norm() < 1e-14 * z(180.0).norm());
        // The same form is interpolated exactly between the lines (Ys linear
        // in f), and extrapolated exactly beyond the end lines.
        for f in [225.0, 500.0, 60.0] {
            assert!((t.at(f) - z(f)).norm() < 1e-12 * z(f).norm(), "{f}");
        }
    }

    #[test]
    fn weighted_fit_follows_the_precise_points() {
        // Two points of Ys = jωC: one exact with a small variance, one 10 %
        // off with a variance 10⁴ times larger. Weighted least squares
        // (generalised least squares, Aitken 1935) gives
        // C = Σ w ω Im Y / Σ w ω², which the exact point dominates:
        // C·(1 + 0.1·w2ω2²/(w1ω1² + w2ω2²)) with w2/w1 = 1e-4, ω2/ω1 = 4:
        // relative error 0.1·16e-4/(1 + 16e-4) = 1.597e-4 (worked by hand).
        let c = 6.25e-14;
        let y = |f: f64| C64::new(0.0, std::f64::consts::TAU * f * c);
        let pts = vec![
            (100.0, y(100.0).inv(), 1e-30),
            (400.0, (y(400.0) * 1.1).inv(), 1e-26),
        ];
        let m = ImpedanceModel::build(&pts, ImpedanceFit::CapacitanceLeakage).unwrap();
        let ImpedanceModel::CapacitanceLeakage { capacitance, .. } = m else {
            panic!("a capacitance")
        };
        let want = c * (1.0 + 0.1 * 16e-4 / (1.0 + 16e-4));
        assert!(
            (capacitance - want).abs() < 1e-9 * c,
            "{capacitance} vs {want}"
        );
    }
}

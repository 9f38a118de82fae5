//! Source flow ripple from a pump's geometry: the instantaneous flow against
//! shaft angle, and its harmonics by discrete Fourier transform.
//!
//! The flow of a pump with z pumping elements repeats every 2π/z of shaft
//! angle, so its spectrum holds only multiples of the pumping frequency
//! f_p = n·z. [`KinematicRipple::new`] samples one such period at
//! N = 64 × [`MAX_ORDER`] equally spaced angles θ_m = m·(2π/z)/N and takes
//! the discrete Fourier transform with the attenuation factor of linear
//! interpolation (Press et al., *Numerical Recipes*, "Fourier integrals
//! using the FFT", recalled from memory):
//!
//! ```text
//! Q_k/ω = W_k (2/N) Σ_m q(θ_m) e^{−j2πkm/N},   W_k = (sin(πk/N) / (πk/N))²,   k = 1..=MAX_ORDER
//! ```
//!
//! which is exactly the Fourier series of the piecewise-linear curve through
//! the samples. The kinematic waveforms are smooth between kinks that fall on
//! the sampling grid, so this removes the aliasing of the plain sum (about
//! 2k²/N² of harmonic k: 2e-8 at k = 1, 8e-4 at k = 200) and is exact to
//! round-off for the gear pump's piecewise parabola. The mean is taken by
//! Simpson's rule (exact for parabolas). A direct sum costs a few million
//! multiply-adds once per pump, so an FFT library would buy nothing.
//! [`KinematicRipple::non_uniformity`] reads the extremes off the samples,
//! which hold the kinks and the smooth maxima of both models exactly.
//!
//! Phases follow the shaft angle θ (rad, from the shaft's reference mark):
//! the ripple is Σ_k Re{Q_k e^{jkzθ}}. A pump mounted with its own reference
//! (see [`super::gear`], [`super::piston`]) at shaft angle θ₀ has
//! Q_k = Q_k,own·e^{−jkzθ₀}, so pumps on one shaft combine coherently.

use super::gear::GearPump;
use super::piston::PistonPump;
use num_complex::Complex64 as C64;
use std::f64::consts::{PI, TAU};

/// Highest harmonic order computed from a pump's geometry.
pub const MAX_ORDER: u32 = 200;

/// Samples per pumping period per harmonic order.
const SAMPLES_PER_ORDER: usize = 64;

/// The geometry a kinematic flow ripple is computed from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PumpGeometry {
    /// An external spur gear pump.
    Gear(GearPump),
    /// An axial piston pump.
    Piston(PistonPump),
}

impl PumpGeometry {
    /// Number of pumping elements z (teeth of one gear, or pistons).
    pub fn pumping_elements(&self) -> u32 {
        match self {
            PumpGeometry::Gear(g) => g.teeth,
            PumpGeometry::Piston(p) => p.pistons,
        }
    }

    /// Geometric displacement per revolution in m³.
    pub fn displacement_m3(&self) -> f64 {
        match self {
            PumpGeometry::Gear(g) => g.displacement_m3(),
            PumpGeometry::Piston(p) => p.displacement_m3(),
        }
    }

    /// Delivered flow per unit shaft speed (m³/rad) at the pump's own angle.
    pub fn flow_per_rad(&self, theta: f64) -> f64 {
        match self {
            PumpGeometry::Gear(g) => g.flow_per_rad(theta),
            PumpGeometry::Piston(p) => p.flow_per_rad(theta),
        }
    }

    /// Checks that the model applies to this geometry.
    ///
    /// # Errors
    /// A message saying what is wrong and what is valid.
    pub fn check(&self) -> Result<(), String> {
        match self {
            PumpGeometry::Gear(g) => g.check(),
            PumpGeometry::Piston(p) => p.check(),
        }
    }

    /// A short name for reports.
    pub fn kind_name(&self) -> &'static str {
        match self {
            PumpGeometry::Gear(_) => "external gear pump",
            PumpGeometry::Piston(_) => "axial piston pump",
        }
    }
}

/// The kinematic source flow ripple of a pump, with its harmonics.
#[derive(Debug, Clone, PartialEq)]
pub struct KinematicRipple {
    geometry: PumpGeometry,
    shaft_angle_rad: f64,
    mean_m3_per_rad: f64,
    non_uniformity: f64,
    /// Q_k/ω (m³/rad) for k = 1..=MAX_ORDER, against the shaft angle.
    harmonics_m3_per_rad: Vec<C64>,
}

impl KinematicRipple {
    /// Samples the flow of `geometry` over one pumping period and computes
    /// its harmonics; `shaft_angle_rad` is the shaft angle at which the
    /// pump's own reference position occurs.
    ///
    /// # Panics
    /// If the geometry has no pumping element.
    pub fn new(geometry: PumpGeometry, shaft_angle_rad: f64) -> Self {
        let z = geometry.pumping_elements();
        assert!(z > 0, "a pump has at least one pumping element");
        let n = SAMPLES_PER_ORDER * MAX_ORDER as usize;
        let step = TAU / f64::from(z) / n as f64;
        let samples: Vec<f64> = (0..n)
            .map(|m| geometry.flow_per_rad(m as f64 * step))
            .collect();
        // Simpson's rule over the period (n even; periodic ends)
        let mean = samples
            .iter()
            .enumerate()
            .map(|(m, &q)| if m % 2 == 1 { 4.0 * q } else { 2.0 * q })
            .sum::<f64>()
            / (3.0 * n as f64);
        let (lo, hi) = samples
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &q| {
                (lo.min(q), hi.max(q))
            });
        let twiddle: Vec<C64> = (0..n)
            .map(|i| C64::from_polar(1.0, -TAU * i as f64 / n as f64))
            .collect();
        let harmonics = (1..=MAX_ORDER as usize)
            .map(|k| {
                let mut sum = C64::new(0.0, 0.0);
                let mut idx = 0;
                for &q in &samples {
                    sum += twiddle[idx] * q;
                    idx += k;
                    if idx >= n {
                        idx -= n;
                    }
                }
                let x = PI * k as f64 / n as f64;
                let attenuation = (x.sin() / x).powi(2);
                let own = sum * (2.0 * attenuation / n as f64);
                own * C64::from_polar(1.0, -(k as f64) * f64::from(z) * shaft_angle_rad)
            })
            .collect();
        KinematicRipple {
            geometry,
            shaft_angle_rad,
            mean_m3_per_rad: mean,
            non_uniformity: if mean > 0.0 { (hi - lo) / mean } else { 0.0 },
            harmonics_m3_per_rad: harmonics,
        }
    }

    /// The same pump turned further by `angle_rad` on its shaft: harmonic
    /// k is multiplied by e^{−jkz·angle}.
    pub fn rotated(&self, angle_rad: f64) -> Self {
        let z = f64::from(self.geometry.pumping_elements());
        KinematicRipple {
            shaft_angle_rad: self.shaft_angle_rad + angle_rad,
            harmonics_m3_per_rad: self
                .harmonics_m3_per_rad
                .iter()
                .zip(1..)
                .map(|(&q, k)| q * C64::from_polar(1.0, -f64::from(k) * z * angle_rad))
                .collect(),
            ..self.clone()
        }
    }

    /// The pump geometry.
    pub fn geometry(&self) -> &PumpGeometry {
        &self.geometry
    }

    /// The shaft angle of the pump's own reference position, in rad.
    pub fn shaft_angle_rad(&self) -> f64 {
        self.shaft_angle_rad
    }

    /// Mean delivered flow at `speed_rev_s`, in m³/s.
    pub fn mean_flow_m3_s(&self, speed_rev_s: f64) -> f64 {
        self.mean_m3_per_rad * TAU * speed_rev_s
    }

    /// Flow non-uniformity δ = (Q_max − Q_min)/Q_mean of the waveform.
    pub fn non_uniformity(&self) -> f64 {
        self.non_uniformity
    }

    /// Harmonic `order` of the source flow ripple (peak phasor, m³/s) at
    /// `speed_rev_s`; zero above [`MAX_ORDER`].
    pub fn harmonic(&self, order: u32, speed_rev_s: f64) -> C64 {
        match order {
            1..=MAX_ORDER => self.harmonics_m3_per_rad[order as usize - 1] * (TAU * speed_rev_s),
            _ => C64::new(0.0, 0.0),
        }
    }

    /// Instantaneous delivered flow (m³/s) at shaft angle `theta` (rad) and
    /// `speed_rev_s`.
    pub fn flow_m3_s(&self, theta: f64, speed_rev_s: f64) -> f64 {
        self.geometry.flow_per_rad(theta - self.shaft_angle_rad) * 2.0 * PI * speed_rev_s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Rotating a pump on its shaft by θ₀ multiplies harmonic k by
    // e^{−jkzθ₀} (shift theorem of the Fourier series).
    #[test]
    fn shaft_angle_rotates_the_phases() {
        let g = PumpGeometry::Gear(GearPump {
            teeth: 10,
            pitch_radius_m: 0.02,
            tip_radius_m: 0.022,
            face_width_m: 0.02,
            pressure_angle_rad: 20f64.to_radians(),
        });
        let a = KinematicRipple::new(g, 0.0);
        let b = KinematicRipple::new(g, 0.1);
        let c = a.rotated(0.1);
        assert_eq!(c.shaft_angle_rad(), 0.1);
        for k in [1, 2, 7] {
            let want = a.harmonic(k, 25.0) * C64::from_polar(1.0, -f64::from(k) * 10.0 * 0.1);
            assert!((b.harmonic(k, 25.0) - want).norm() < 1e-12 * want.norm());
            assert!((c.harmonic(k, 25.0) - want).norm() < 1e-12 * want.norm());
        }
        assert_eq!(b.flow_m3_s(0.3, 25.0), a.flow_m3_s(0.2, 25.0));
        assert_eq!(a.harmonic(MAX_ORDER + 1, 25.0), C64::new(0.0, 0.0));
    }
}

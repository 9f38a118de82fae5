//! Axial piston (swash plate) pump: the kinematic flow ripple of z pistons,
//! with an optional pre-compression backflow pulse.
//!
//! **Kinematics** (methods.md §5.2; the odd/even closed forms are those
//! given by Ivantysyn & Ivantysynova, *Hydrostatic Pumps and Motors*, 2001,
//! as recalled there). Piston i on the pitch radius R at angle
//! θ_i = θ + 2πi/z strokes x_i = R tan β (1 − cos θ_i) from bottom dead
//! centre, so its velocity is R ω tan β sin θ_i; it delivers while
//! sin θ_i > 0. The delivered flow is
//!
//! ```text
//! Q(θ) = A R ω tan β Σ_i max(0, sin θ_i),   A = π d²/4
//! ```
//!
//! with mean z A R ω tan β / π (= displacement z·A·2R tan β times n). The
//! ripple has period 2π/z; for odd z its kinematic part holds only even
//! harmonics of the pumping frequency, and δ = (π/2z) tan(π/4z) (odd z) or
//! (π/z) tan(π/2z) (even z).
//!
//! **Pre-compression pulse** (optional, parameters set by the user). The
//! compliance of the oil in each cylinder is what drives the ripple of real
//! piston pumps beyond the kinematics (the cylinder-compliance model of
//! "The pumping dynamics of swash plate piston pumps", J. Dyn. Sys., Meas.,
//! Control 111(2):307, 1989, by Edge and Darling as recalled from memory). A
//! cylinder that opens to the delivery port below delivery pressure takes
//! back from the port the oil needed to compress its content: by the
//! definition of the bulk modulus (e.g. Merritt, *Hydraulic Control
//! Systems*, 1967) that volume is ΔV = V_c Δp / B, with V_c the oil volume in the
//! cylinder at port opening and Δp the pressure it still lacks. ripline
//! takes that backflow as a half-sine pulse over a shaft-angle width Δθ
//! starting `delay` after the piston's bottom dead centre:
//!
//! ```text
//! q_i(ψ) = −ΔV ω (π/2Δθ) sin(πψ/Δθ),   0 ≤ ψ = θ_i − delay < Δθ
//! ```
//!
//! whose integral over one pass is −ΔV. The pulse shape is our own simple
//! choice (a smooth pulse of the right volume), not a model of a particular
//! valve plate; it adds harmonics at every multiple of the pumping frequency
//! (odd ones too), which is what measured piston pumps show and the
//! kinematics alone miss (methods.md §5.2).
//!
//! **Shaft-angle reference**: θ = 0 when piston 0 is at bottom dead centre
//! (largest cylinder volume) and starts to deliver.

use std::f64::consts::PI;

/// The pre-compression backflow pulse of each piston.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Precompression {
    /// Oil volume V_c in the cylinder when it opens to delivery, in m³.
    pub cylinder_volume_m3: f64,
    /// Pressure Δp the cylinder still lacks at port opening, in Pa.
    pub pressure_rise_pa: f64,
    /// Bulk modulus B of the oil, in Pa.
    pub bulk_modulus_pa: f64,
    /// Shaft-angle width Δθ of the pulse, in rad.
    pub duration_rad: f64,
    /// Shaft angle from bottom dead centre to the start of the pulse, in rad.
    pub delay_rad: f64,
}

impl Precompression {
    /// Backflow volume per piston and revolution, ΔV = V_c Δp / B, in m³.
    pub fn backflow_volume_m3(&self) -> f64 {
        self.cylinder_volume_m3 * self.pressure_rise_pa / self.bulk_modulus_pa
    }
}

/// An axial piston pump with a swash plate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PistonPump {
    /// Number of pistons z.
    pub pistons: u32,
    /// Piston diameter d in m.
    pub piston_diameter_m: f64,
    /// Radius R of the pistons' pitch circle in m.
    pub pitch_radius_m: f64,
    /// Swash plate angle β in rad.
    pub swash_angle_rad: f64,
    /// The optional pre-compression backflow pulse.
    pub precompression: Option<Precompression>,
}

impl PistonPump {
    /// Geometric displacement per revolution z·A·2R tan β in m³.
    pub fn displacement_m3(&self) -> f64 {
        f64::from(self.pistons) * self.piston_area_m2() * 2.0 * self.stroke_radius_m()
    }

    fn piston_area_m2(&self) -> f64 {
        PI * self.piston_diameter_m.powi(2) / 4.0
    }

    /// R tan β in m (half the stroke).
    fn stroke_radius_m(&self) -> f64 {
        self.pitch_radius_m * self.swash_angle_rad.tan()
    }

    /// Checks that the pistons fit on their pitch circle without
    /// overlapping, and that the backflow pulses of neighbouring pistons do
    /// not overlap.
    ///
    /// # Errors
    /// A message saying what is wrong and what is valid.
    pub fn check(&self) -> Result<(), String> {
        let spacing = 2.0 * self.pitch_radius_m * (PI / f64::from(self.pistons)).sin();
        if self.piston_diameter_m >= spacing {
            return Err(format!(
                "{} pistons of {:.2} mm do not fit on a {:.2} mm pitch radius (they are {:.2} mm apart, centre to centre)",
                self.pistons,
                self.piston_diameter_m * 1e3,
                self.pitch_radius_m * 1e3,
                spacing * 1e3
            ));
        }
        if let Some(p) = &self.precompression {
            let pitch = 2.0 * PI / f64::from(self.pistons);
            if p.duration_rad > pitch {
                return Err(format!(
                    "the pulse lasts {:.2}°, longer than the {:.2}° between pistons",
                    p.duration_rad.to_degrees(),
                    pitch.to_degrees()
                ));
            }
        }
        Ok(())
    }

    /// Instantaneous delivered flow per unit shaft speed, Q/ω in m³/rad, at
    /// shaft angle `theta` (rad): kinematic delivery minus the backflow
    /// pulses.
    pub fn flow_per_rad(&self, theta: f64) -> f64 {
        let z = self.pistons;
        let gain = self.piston_area_m2() * self.stroke_radius_m();
        let mut q = 0.0;
        for i in 0..z {
            let ti = theta + 2.0 * PI * f64::from(i) / f64::from(z);
            q += gain * ti.sin().max(0.0);
            if let Some(p) = &self.precompression {
                let psi = (ti - p.delay_rad).rem_euclid(2.0 * PI);
                if psi < p.duration_rad {
                    q -= p.backflow_volume_m3() * PI / (2.0 * p.duration_rad)
                        * (PI * psi / p.duration_rad).sin();
                }
            }
        }
        q
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // Mean of the kinematic flow z A R tan β / π per unit ω (methods.md §5.2;
    // tests/oracles/pump_refs.py [2]: 5.283026175605651e-6 m³/rad for z = 9,
    // d = 16 mm, R = 30 mm, β = 17°). Averaged here over a fine grid.
    #[test]
    fn mean_flow_is_displacement_times_speed() {
        let p = PistonPump {
            pistons: 9,
            piston_diameter_m: 0.016,
            pitch_radius_m: 0.030,
            swash_angle_rad: 17f64.to_radians(),
            precompression: None,
        };
        let n = 90_000;
        let mean = (0..n)
            .map(|i| p.flow_per_rad(2.0 * PI * i as f64 / n as f64))
            .sum::<f64>()
            / n as f64;
        assert!(
            (mean - 5.283_026_175_605_651e-6).abs() < 1e-9 * 5.3e-6,
            "{mean:e}"
        );
        assert!((p.displacement_m3() / (2.0 * PI) - 5.283_026_175_605_651e-6).abs() < 1e-20);
    }

    #[test]
    fn pistons_that_do_not_fit_are_refused() {
        let p = PistonPump {
            pistons: 9,
            piston_diameter_m: 0.025,
            pitch_radius_m: 0.030,
            swash_angle_rad: 0.3,
            precompression: None,
        };
        assert!(p.check().unwrap_err().contains("do not fit"));
    }
}

//! External spur gear pump: the kinematic flow ripple of two identical
//! involute gears in mesh.
//!
//! **Model** (power balance of the meshing gears, methods.md §5.1; the
//! instantaneous flow is governed by the instantaneous length of action, as
//! shown by Manring & Kasaragadda, "The theoretical flow ripple of an external
//! gear pump", J. Dyn. Sys., Meas., Control 125 (2003) 396–404). The pressure
//! on the delivery-side flanks of gear i, between its sealing tooth tip and
//! the active contact point, gives the torque p·b·(r_a² − d_i²)/2, where d_i is
//! the distance from the gear's centre to the contact point. Equating the
//! power Σ T_i ω_i to p·Q gives
//!
//! ```text
//! Q = (b/2) Σ_i ω_i (r_a² − d_i²)
//! d_1² = r_b² + (r sin α + u)²,   d_2² = r_b² + (r sin α − u)²
//! ```
//!
//! with u the position of the contact point along the line of action,
//! measured from the pitch point. For involute teeth u = r_b·φ, φ being the
//! driving gear's rotation from the instant its active contact passes the
//! pitch point; with ideal relief grooves the active contact runs over
//! |u| ≤ p_b/2 (p_b = 2π r_b/z, the base pitch) and then hands over to the
//! next tooth pair. For identical gears (ω₁ = ω₂ = ω) the terms linear in u
//! cancel, leaving the parabola Q = b ω (r_a² − r² − u²): maximum at the pitch
//! point, ΔQ = b ω p_b²/4, and a mean b ω (r_a² − r² − p_b²/12), i.e. the
//! classical displacement 2π b (r_a² − r² − p_b²/12) per revolution.
//! Assumes incompressible fluid, no leakage, ideal relief grooves and no
//! profile shift.
//!
//! **Shaft-angle reference**: θ = 0 when the active contact point of the
//! driving gear passes the pitch point (the flow maximum), so every harmonic
//! of the kinematic ripple is real: Q_k = (−1)^{k+1}·4ΔQ/(π²k²).

use std::f64::consts::PI;

/// Two identical external spur gears (no profile shift).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GearPump {
    /// Number of teeth z of each gear.
    pub teeth: u32,
    /// Pitch (reference) radius r = m·z/2 in m.
    pub pitch_radius_m: f64,
    /// Tip (outside) radius r_a in m.
    pub tip_radius_m: f64,
    /// Face width b in m.
    pub face_width_m: f64,
    /// Pressure angle α in rad.
    pub pressure_angle_rad: f64,
}

impl GearPump {
    /// Module m = 2r/z in m.
    pub fn module_m(&self) -> f64 {
        2.0 * self.pitch_radius_m / f64::from(self.teeth)
    }

    /// Base radius r_b = r cos α in m.
    pub fn base_radius_m(&self) -> f64 {
        self.pitch_radius_m * self.pressure_angle_rad.cos()
    }

    /// Base pitch p_b = 2π r_b / z in m.
    pub fn base_pitch_m(&self) -> f64 {
        2.0 * PI * self.base_radius_m() / f64::from(self.teeth)
    }

    /// Length of the path of contact on one side of the pitch point,
    /// √(r_a² − r_b²) − r sin α (in m), for two identical gears.
    pub fn half_path_of_contact_m(&self) -> f64 {
        let rb = self.base_radius_m();
        (self.tip_radius_m.powi(2) - rb * rb).sqrt()
            - self.pitch_radius_m * self.pressure_angle_rad.sin()
    }

    /// Transverse contact ratio: path of contact over base pitch (common
    /// gear geometry; identical gears at the standard centre distance).
    pub fn contact_ratio(&self) -> f64 {
        2.0 * self.half_path_of_contact_m() / self.base_pitch_m()
    }

    /// Checks that the model applies: the tip circle lies outside the pitch
    /// circle, and the path of contact reaches half a base pitch either side
    /// of the pitch point (otherwise the teeth lose contact before the next
    /// pair takes over).
    ///
    /// # Errors
    /// A message saying what is wrong and what is valid.
    pub fn check(&self) -> Result<(), String> {
        if self.tip_radius_m <= self.pitch_radius_m {
            return Err(format!(
                "the outside radius {:.3} mm must be larger than the pitch radius {:.3} mm",
                self.tip_radius_m * 1e3,
                self.pitch_radius_m * 1e3
            ));
        }
        if self.half_path_of_contact_m() < 0.5 * self.base_pitch_m() {
            return Err(format!(
                "the teeth would lose contact: contact ratio {:.3} (a kinematic model needs at least 1 with contact reaching half a base pitch either side of the pitch point); raise the addendum or the number of teeth",
                self.contact_ratio()
            ));
        }
        Ok(())
    }

    /// Geometric displacement per revolution, 2π b (r_a² − r² − p_b²/12),
    /// in m³ (the mean of [`GearPump::flow_per_rad`] times 2π).
    pub fn displacement_m3(&self) -> f64 {
        let (r, ra, pb) = (self.pitch_radius_m, self.tip_radius_m, self.base_pitch_m());
        2.0 * PI * self.face_width_m * (ra * ra - r * r - pb * pb / 12.0)
    }

    /// Instantaneous delivered flow per unit shaft speed, Q/ω in m³/rad, at
    /// shaft angle `theta` (rad) of the driving gear, from the power balance
    /// with the contact point placed on the line of action.
    pub fn flow_per_rad(&self, theta: f64) -> f64 {
        let pitch_angle = 2.0 * PI / f64::from(self.teeth);
        // rotation from the nearest pitch-point passage, in [−π/z, π/z]
        let phi = theta - pitch_angle * (theta / pitch_angle).round();
        let u = self.base_radius_m() * phi;
        let s = self.pitch_radius_m * self.pressure_angle_rad.sin();
        let rb2 = self.base_radius_m().powi(2);
        let ra2 = self.tip_radius_m.powi(2);
        let d1 = rb2 + (s + u).powi(2);
        let d2 = rb2 + (s - u).powi(2);
        0.5 * self.face_width_m * ((ra2 - d1) + (ra2 - d2))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn worked_example() -> GearPump {
        // methods.md §5.1: m = 3 mm, z = 12, α = 20°, b = 20 mm, addendum = m
        GearPump {
            teeth: 12,
            pitch_radius_m: 0.018,
            tip_radius_m: 0.021,
            face_width_m: 0.020,
            pressure_angle_rad: 20f64.to_radians(),
        }
    }

    // The contact point moves along the line of action: the flow is the
    // parabola b(r_a² − r² − (r_b φ)²) per unit ω (methods.md §5.1), so the
    // terms linear in u must cancel exactly for identical gears.
    #[test]
    fn flow_is_the_parabola_of_the_length_of_action() {
        let g = worked_example();
        let rb = g.base_radius_m();
        for phi in [-0.2, -0.1, 0.0, 0.05, 0.26] {
            let want = g.face_width_m * (0.021f64.powi(2) - 0.018f64.powi(2) - (rb * phi).powi(2));
            assert!((g.flow_per_rad(phi) - want).abs() < 1e-15, "{phi}");
        }
        // periodic with the tooth pitch, symmetric about the pitch point
        let p = 2.0 * PI / 12.0;
        assert!((g.flow_per_rad(0.1 + 3.0 * p) - g.flow_per_rad(0.1)).abs() < 1e-15);
        assert!((g.flow_per_rad(-0.1) - g.flow_per_rad(0.1)).abs() < 1e-18);
    }

    // Contact ratio of a standard 12/12 pair at 20°: ε = 2(√(r_a² − r_b²) −
    // r sin α)/p_b = 1.42034 (common gear geometry; numpy:
    // 2*(np.sqrt(ra**2-rb**2)-r*np.sin(a))/pb with r = 0.018, ra = 0.021,
    // a = np.radians(20), rb = r*np.cos(a), pb = 2*np.pi*rb/12 → 1.4203416).
    #[test]
    fn contact_ratio_and_loss_of_contact() {
        let g = worked_example();
        assert!(
            (g.contact_ratio() - 1.420_341_6).abs() < 1e-7,
            "{}",
            g.contact_ratio()
        );
        assert!(g.check().is_ok());
        let short = GearPump {
            tip_radius_m: 0.0185,
            ..g
        };
        assert!(short.check().unwrap_err().contains("lose contact"));
        let inside = GearPump {
            tip_radius_m: 0.017,
            ..g
        };
        assert!(
            inside
                .check()
                .unwrap_err()
                .contains("larger than the pitch radius")
        );
    }
}

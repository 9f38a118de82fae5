//! Hydraulic cylinders with their load: the oil columns in the chambers
//! spring the load mass, a low-frequency resonance every machine has.
//!
//! **The model** (from the continuity equation of each chamber and
//! Newton's law for the piston and load; Merritt, *Hydraulic Control
//! Systems*, 1967, ch. 6, derives the same equations). Piston position x
//! from the cap end, piston speed v, cap-end area A₁ = πD²/4, annulus
//! A₂ = π(D² − d²)/4, chamber volumes at the stroke position
//! V₁ = A₁x + V_dead, V₂ = A₂(s − x) + V_dead, with e^{+jωt} phasors:
//!
//! ```text
//! cap chamber    Q₁ = A₁ v + jω (V₁/B) P₁        (flow into the cap port)
//! rod chamber    Q₂ = −A₂ v + jω (V₂/B) P₂       (flow into the rod port)
//! piston + load  Z_m v = A₁ P₁ − A₂ P₂,   Z_m = jωM + b + k/(jω)
//! ```
//!
//! with load mass M (piston, rod and load), viscous damping b (the load's
//! and the seals' friction slope together) and load stiffness k. Friction is
//! linearised: at a steady piston speed Coulomb friction adds nothing to the
//! ripple, and the slope dF/dv of the friction curve at that speed adds to b
//! (common practice; a falling slope, the Stribeck region, needs a
//! nonlinear model and is refused). The admittance two-port (flows into the
//! cylinder per port pressure) is
//!
//! ```text
//! Y = [[jωC₁ + A₁²/Z_m,  −A₁A₂/Z_m], [−A₁A₂/Z_m,  jωC₂ + A₂²/Z_m]],  C_i = V_i/B,
//! ```
//!
//! symmetric (reciprocal) and passive. With one port used (a shunt) the
//! other chamber is vented and Y = jωC + A²/Z_m (methods-2 §3). With the
//! ports blocked the oil columns act as springs of total hydraulic stiffness
//! k_h = B(A₁²/V₁ + A₂²/V₂) (one port: BA²/V), and the load resonates at
//! ω_h = √((k + k_h)/M).

use std::f64::consts::PI;

use num_complex::Complex64 as C64;

/// Which ports of a cylinder are in the circuit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CylinderPorts {
    /// Both: a two-port from the cap port to the rod port.
    Both,
    /// The cap port only (the rod side vented): a shunt.
    Cap,
    /// The rod port only (the cap side vented): a shunt.
    Rod,
}

/// A hydraulic cylinder and its load at a stroke position (module docs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Cylinder {
    /// Piston (bore) diameter D in m.
    pub bore_m: f64,
    /// Rod diameter d in m (0 for none).
    pub rod_m: f64,
    /// Stroke s in m.
    pub stroke_m: f64,
    /// Piston position x from the cap end, 0 ≤ x ≤ s, in m.
    pub position_m: f64,
    /// Oil volume at each end beyond the swept volume (ports, cushions) in m³.
    pub dead_volume_m3: f64,
    /// Moving mass M (piston, rod and load) in kg.
    pub load_mass_kg: f64,
    /// Load stiffness k in N/m.
    pub load_stiffness_n_m: f64,
    /// Viscous damping b (load damping plus the friction slope) in N·s/m.
    pub damping_n_s_m: f64,
    /// Bulk modulus B of the oil in the chambers in Pa.
    pub bulk_modulus_pa: f64,
    /// The ports in the circuit.
    pub ports: CylinderPorts,
}

impl Cylinder {
    /// Cap-end area A₁ = πD²/4 in m².
    pub fn cap_area_m2(&self) -> f64 {
        PI * self.bore_m * self.bore_m / 4.0
    }

    /// Annulus area A₂ = π(D² − d²)/4 in m².
    pub fn annulus_area_m2(&self) -> f64 {
        PI * (self.bore_m * self.bore_m - self.rod_m * self.rod_m) / 4.0
    }

    /// Cap chamber volume V₁ = A₁x + V_dead in m³.
    pub fn cap_volume_m3(&self) -> f64 {
        self.cap_area_m2() * self.position_m + self.dead_volume_m3
    }

    /// Rod chamber volume V₂ = A₂(s − x) + V_dead in m³.
    pub fn rod_volume_m3(&self) -> f64 {
        self.annulus_area_m2() * (self.stroke_m - self.position_m) + self.dead_volume_m3
    }

    /// Hydraulic stiffness of the blocked oil columns in the circuit's
    /// chambers, k_h = Σ B A_i²/V_i, in N/m.
    pub fn hydraulic_stiffness_n_m(&self) -> f64 {
        let b = self.bulk_modulus_pa;
        let cap = b * self.cap_area_m2().powi(2) / self.cap_volume_m3();
        let rod = b * self.annulus_area_m2().powi(2) / self.rod_volume_m3();
        match self.ports {
            CylinderPorts::Both => cap + rod,
            CylinderPorts::Cap => cap,
            CylinderPorts::Rod => rod,
        }
    }

    /// The oil-column resonance with the ports blocked,
    /// √((k + k_h)/M)/(2π), in Hz.
    pub fn natural_frequency_hz(&self) -> f64 {
        ((self.load_stiffness_n_m + self.hydraulic_stiffness_n_m()) / self.load_mass_kg).sqrt()
            / (2.0 * PI)
    }

    /// Mechanical impedance of piston and load, Z_m = jωM + b + k/(jω).
    fn mechanical_impedance(&self, omega: f64) -> C64 {
        C64::new(
            self.damping_n_s_m,
            omega * self.load_mass_kg - self.load_stiffness_n_m / omega,
        )
    }

    /// The admittance two-port [[Y11, Y12], [Y21, Y22]] from the cap port to
    /// the rod port (flows into the cylinder per port pressure).
    pub fn admittance2(&self, omega: f64) -> [[C64; 2]; 2] {
        let zm = self.mechanical_impedance(omega);
        let (a1, a2) = (self.cap_area_m2(), self.annulus_area_m2());
        let c1 = C64::new(0.0, omega * self.cap_volume_m3() / self.bulk_modulus_pa);
        let c2 = C64::new(0.0, omega * self.rod_volume_m3() / self.bulk_modulus_pa);
        let cross = -a1 * a2 / zm;
        [[c1 + a1 * a1 / zm, cross], [cross, c2 + a2 * a2 / zm]]
    }

    /// The shunt admittance jωC + A²/Z_m of the one port in the circuit.
    pub fn shunt_admittance(&self, omega: f64) -> C64 {
        let y = self.admittance2(omega);
        match self.ports {
            CylinderPorts::Rod => y[1][1],
            _ => y[0][0],
        }
    }

    /// What the network stamps: the two-port, or the shunt.
    pub fn behaviour(&self, omega: f64) -> super::Behaviour {
        match self.ports {
            CylinderPorts::Both => super::Behaviour::Admittance(self.admittance2(omega)),
            _ => super::Behaviour::Shunt(self.shunt_admittance(omega)),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// An invented boom cylinder: 80/45 mm, 600 mm stroke, at 200 mm, 2 t.
    fn boom(ports: CylinderPorts) -> Cylinder {
        Cylinder {
            bore_m: 0.08,
            rod_m: 0.045,
            stroke_m: 0.6,
            position_m: 0.2,
            dead_volume_m3: 0.05e-3,
            load_mass_kg: 2000.0,
            load_stiffness_n_m: 0.0,
            damping_n_s_m: 0.0,
            bulk_modulus_pa: 1.6e9,
            ports,
        }
    }

    // Hand values: A₁ = π·0.08²/4 = 5.026548e-3 m², A₂ = π(0.08² − 0.045²)/4
    // = 3.436117e-3 m², V₁ = A₁·0.2 + 5e-5 = 1.055310e-3 m³, V₂ = A₂·0.4 + 5e-5
    // = 1.424447e-3 m³; k_h = B(A₁²/V₁ + A₂²/V₂) = 3.830714e7 + 1.326202e7 N/m;
    // ω_h = √(k_h/M) (methods-2 §3, Merritt 1967 ch. 6).
    #[test]
    fn oil_column_resonance_against_the_hand_value() {
        let c = boom(CylinderPorts::Both);
        assert!((c.cap_area_m2() - 5.026548e-3).abs() < 1e-9);
        assert!((c.annulus_area_m2() - 3.436117e-3).abs() < 1e-9);
        assert!((c.cap_volume_m3() - 1.055310e-3).abs() < 1e-9);
        assert!((c.rod_volume_m3() - 1.424447e-3).abs() < 1e-9);
        let kh = 3.830714e7 + 1.326202e7;
        assert!((c.hydraulic_stiffness_n_m() / kh - 1.0).abs() < 1e-6);
        let fh = (kh / 2000.0f64).sqrt() / (2.0 * PI);
        assert!((c.natural_frequency_hz() / fh - 1.0).abs() < 1e-6);
        assert!((fh - 25.556).abs() < 0.001, "{fh}");
        // Blocked ports: a nonzero pressure state with no port flow exists
        // exactly at ω_h, i.e. det Y(jω_h) = 0 (no damping).
        let y = c.admittance2(2.0 * PI * c.natural_frequency_hz());
        let det = y[0][0] * y[1][1] - y[0][1] * y[1][0];
        let scale = (y[0][0] * y[1][1]).norm() + (y[0][1] * y[1][0]).norm();
        assert!(det.norm() < 1e-9 * scale, "{det}");
        // One port: Y = jωV/B + A²/Z_m vanishes at √(BA²/(VM)).
        let cap = boom(CylinderPorts::Cap);
        let f1 = (3.830714e7f64 / 2000.0).sqrt() / (2.0 * PI);
        assert!((cap.natural_frequency_hz() / f1 - 1.0).abs() < 1e-6);
        let w1 = 2.0 * PI * cap.natural_frequency_hz();
        assert!(cap.shunt_admittance(w1).norm() < 1e-9 * w1 * cap.cap_volume_m3() / 1.6e9);
    }

    // A stiff load adds to the oil columns: ω_h = √((k + k_h)/M); at low
    // frequency the cylinder is its chambers' compliance plus the piston
    // on the load spring, Y → jω(V/B + A²/k) (a spring-loaded accumulator).
    #[test]
    fn load_stiffness_and_low_frequency_limit() {
        let mut c = boom(CylinderPorts::Cap);
        c.load_stiffness_n_m = 1e7;
        let want = ((1e7 + 3.830714e7) / 2000.0f64).sqrt() / (2.0 * PI);
        assert!((c.natural_frequency_hz() / want - 1.0).abs() < 1e-6);
        let w = 1e-3;
        let y = c.shunt_admittance(w);
        let c_total = c.cap_volume_m3() / 1.6e9 + c.cap_area_m2().powi(2) / 1e7;
        assert!((y / C64::new(0.0, w * c_total) - 1.0).norm() < 1e-6);
    }

    // Reciprocity and passivity of the two-port: Y12 = Y21 and
    // Re(vᴴ Y v) ≥ 0 (the damping only dissipates).
    #[test]
    fn two_port_is_reciprocal_and_passive() {
        let mut c = boom(CylinderPorts::Both);
        c.damping_n_s_m = 2e4;
        for f in [0.5, 25.0, 300.0] {
            let y = c.admittance2(2.0 * PI * f);
            assert_eq!(y[0][1], y[1][0]);
            for v in [
                [C64::new(1.0, 0.0), C64::new(0.3, -0.7)],
                [C64::new(0.0, 1.0), C64::new(-2.0, 0.1)],
            ] {
                let q0 = y[0][0] * v[0] + y[0][1] * v[1];
                let q1 = y[1][0] * v[0] + y[1][1] * v[1];
                let power = (v[0].conj() * q0 + v[1].conj() * q1).re;
                assert!(power >= 0.0, "{f} Hz: {power}");
            }
        }
    }
}

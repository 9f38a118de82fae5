//! Lumped elements: volumes, orifices, inertances and load valves.
//!
//! Each is valid while its largest dimension is small against the wavelength
//! (common practice: below λ/8); otherwise model it as a line.

use num_complex::Complex64 as C64;

/// A volume of liquid at a node: shunt admittance Y = jωV/B (capacitance
/// C = V/B; Merritt, *Hydraulic Control Systems*, 1967, §2).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Volume {
    /// Volume V in m³.
    pub volume_m3: f64,
    /// Bulk modulus B of the liquid (and container) in Pa.
    pub bulk_modulus_pa: f64,
}

impl Volume {
    /// Hydraulic capacitance C = V/B in m³/Pa.
    pub fn capacitance(&self) -> f64 {
        self.volume_m3 / self.bulk_modulus_pa
    }

    /// Shunt admittance jωC.
    pub fn admittance(&self, omega: f64) -> C64 {
        C64::new(0.0, omega * self.capacitance())
    }
}

/// A restriction between two nodes, linearised about its mean flow: a series
/// resistance R. For a turbulent orifice Q = Cd A0 √(2Δp/ρ), so
/// R = dΔp/dQ = 2Δp̄/Q̄ (common practice; methods.md §4).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Orifice {
    /// Linearised resistance R in Pa·s/m³.
    pub resistance_pa_s_m3: f64,
}

/// The incremental resistance of a turbulent orifice at its mean operating
/// point: R = 2Δp̄/Q̄.
pub fn orifice_resistance(pressure_drop_pa: f64, mean_flow_m3_s: f64) -> f64 {
    2.0 * pressure_drop_pa / mean_flow_m3_s
}

/// A short passage treated as a lumped fluid mass: Z = R + jωI.
/// For a passage of length l and bore radius r: I = ρl/A, R = 8μl/(πr⁴)
/// (Hagen–Poiseuille).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Inertance {
    /// Inertance I in kg/m⁴.
    pub inertance_kg_m4: f64,
    /// Series resistance R in Pa·s/m³.
    pub resistance_pa_s_m3: f64,
}

impl Inertance {
    /// Series impedance R + jωI.
    pub fn impedance(&self, omega: f64) -> C64 {
        C64::new(self.resistance_pa_s_m3, omega * self.inertance_kg_m4)
    }
}

/// A valve from a node to tank, linearised: shunt admittance 1/R.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LoadValve {
    /// Linearised resistance R in Pa·s/m³.
    pub resistance_pa_s_m3: f64,
}

#[cfg(test)]
mod tests {
    use super::*;

    // Helmholtz resonance of a volume behind an inertance: ω² = 1/(I C),
    // f_H = (c0/2π)√(A/(l V)) (Kinsler et al., Fundamentals of Acoustics,
    // 4th ed., §10.8). V = 1 L, neck 10 mm × 50 mm, c0 = 1350 m/s → 269.286 Hz
    // (methods.md §8 case 7, computed with numpy).
    #[test]
    fn helmholtz_frequency_of_volume_behind_inertance() {
        let (rho, c0) = (870.0, 1350.0);
        let area = std::f64::consts::PI * 0.005_f64.powi(2);
        let neck = Inertance {
            inertance_kg_m4: rho * 0.05 / area,
            resistance_pa_s_m3: 0.0,
        };
        let vol = Volume {
            volume_m3: 1e-3,
            bulk_modulus_pa: rho * c0 * c0,
        };
        // Series impedance of neck + volume vanishes at resonance.
        let f = (neck.inertance_kg_m4 * vol.capacitance()).sqrt().recip()
            / (2.0 * std::f64::consts::PI);
        assert!((f - 269.286).abs() < 1e-3, "{f}");
        let omega = 2.0 * std::f64::consts::PI * f;
        let z = neck.impedance(omega) + vol.admittance(omega).inv();
        assert!(z.norm() < 1e-9 * neck.impedance(omega).norm());
    }

    #[test]
    fn orifice_linearisation() {
        // 2Δp/Q: 20 bar at 60 L/min → 4e9 Pa·s/m³.
        assert!((orifice_resistance(20e5, 1e-3) - 4e9).abs() < 1.0);
    }
}

//! The hydraulic fluid at its operating point.
//!
//! ripline needs three properties of the liquid: density ρ, the (isentropic,
//! tangent) bulk modulus B that sets the speed of sound, and the kinematic
//! viscosity ν that sets the laminar friction. All are SI.

/// A hydraulic liquid at one operating point (temperature, mean pressure).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Fluid {
    /// Density ρ in kg/m³.
    pub density_kg_m3: f64,
    /// Bulk modulus B in Pa (isentropic tangent value at the mean pressure).
    pub bulk_modulus_pa: f64,
    /// Kinematic viscosity ν in m²/s.
    pub kinematic_viscosity_m2_s: f64,
}

impl Fluid {
    /// Dynamic viscosity μ = ρν in Pa·s.
    pub fn dynamic_viscosity_pa_s(&self) -> f64 {
        self.density_kg_m3 * self.kinematic_viscosity_m2_s
    }

    /// Speed of sound in the unconfined liquid, c = √(B/ρ), in m/s
    /// (Newton–Laplace).
    pub fn speed_of_sound_m_s(&self) -> f64 {
        (self.bulk_modulus_pa / self.density_kg_m3).sqrt()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // c = sqrt(B/rho): 1.62 GPa, 861 kg/m3 gives 1371.7 m/s
    // (methods.md §1.6 table, computed with numpy; recomputed here by hand).
    #[test]
    fn newton_laplace_speed_of_sound() {
        let oil = Fluid {
            density_kg_m3: 861.0,
            bulk_modulus_pa: 1.62e9,
            kinematic_viscosity_m2_s: 46e-6,
        };
        assert!((oil.speed_of_sound_m_s() - 1371.7).abs() < 0.05);
        assert!((oil.dynamic_viscosity_pa_s() - 0.039606).abs() < 1e-6);
    }
}

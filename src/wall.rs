//! Tube wall compliance and the effective bulk modulus of liquid in a tube.
//!
//! A tube that distends under pressure adds compliance to the liquid's:
//! 1/B_eff = 1/B_liquid + 1/B_wall. For a thin elastic wall (Korteweg 1878;
//! Wylie & Streeter, *Fluid Transients in Systems*, 1993, §1.6):
//!
//! ```text
//! 1/B_wall = D / (E e)        D bore, e wall thickness, E Young's modulus
//! c0 = √(B_eff/ρ)             the Korteweg wave speed
//! ```

/// Wall materials with a tabulated Young's modulus.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum Material {
    /// Carbon steel hydraulic tube.
    Steel,
    /// Austenitic stainless steel.
    StainlessSteel,
    /// Aluminium alloy.
    Aluminium,
    /// Copper.
    Copper,
}

impl Material {
    /// Every tabulated material.
    pub const ALL: [Material; 4] = [
        Material::Steel,
        Material::StainlessSteel,
        Material::Aluminium,
        Material::Copper,
    ];

    /// The name used in circuit files.
    pub fn name(self) -> &'static str {
        match self {
            Material::Steel => "steel",
            Material::StainlessSteel => "stainless_steel",
            Material::Aluminium => "aluminium",
            Material::Copper => "copper",
        }
    }

    /// Looks a material up by its circuit-file name.
    pub fn from_name(name: &str) -> Option<Material> {
        Material::ALL.into_iter().find(|m| m.name() == name)
    }

    /// Young's modulus E in Pa at room temperature. Typical handbook values
    /// (recalled from memory; common engineering practice): steel 206 GPa,
    /// austenitic stainless 193 GPa, aluminium alloy 70 GPa, copper 117 GPa.
    pub fn youngs_modulus_pa(self) -> f64 {
        match self {
            Material::Steel => 206e9,
            Material::StainlessSteel => 193e9,
            Material::Aluminium => 70e9,
            Material::Copper => 117e9,
        }
    }
}

/// The wall of a tube, as far as its compliance is concerned.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Wall {
    /// A wall that does not distend (B_wall = ∞).
    Rigid,
    /// A thin elastic wall.
    Elastic {
        /// Wall thickness e in m.
        thickness_m: f64,
        /// Young's modulus E in Pa.
        youngs_modulus_pa: f64,
    },
}

impl Wall {
    /// The wall's compliance 1/B_wall in 1/Pa for a tube of bore D (Korteweg).
    pub fn compliance_per_pa(&self, bore_m: f64) -> f64 {
        match *self {
            Wall::Rigid => 0.0,
            Wall::Elastic {
                thickness_m,
                youngs_modulus_pa,
            } => bore_m / (youngs_modulus_pa * thickness_m),
        }
    }

    /// The effective bulk modulus of liquid of modulus `liquid_pa` in a tube
    /// of bore D: 1/B_eff = 1/B_liquid + 1/B_wall.
    pub fn effective_bulk_modulus(&self, liquid_pa: f64, bore_m: f64) -> f64 {
        1.0 / (1.0 / liquid_pa + self.compliance_per_pa(bore_m))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn material_names_round_trip() {
        for m in Material::ALL {
            assert_eq!(Material::from_name(m.name()), Some(m));
        }
        assert_eq!(Material::from_name("wood"), None);
    }
}

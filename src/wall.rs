//! Tube wall compliance and the effective bulk modulus of liquid in a tube.
//!
//! A tube that distends under pressure adds compliance to the liquid's:
//! 1/B_eff = 1/B_liquid + 1/B_wall, where 1/B_wall = (1/A) dA/dp is the
//! relative growth of the bore area per unit pressure. Two elastic forms:
//!
//! ```text
//! thin wall (Korteweg 1878; Wylie & Streeter, Fluid Transients in Systems, 1993, §1.6):
//!     1/B_wall = D / (E e)                                   D bore, e wall, E Young's modulus
//! thick wall (Lamé: a thick cylinder under internal pressure, free ends σ_z = 0):
//!     1/B_wall = (2/E) [ (r_o² + r_i²)/(r_o² − r_i²) + ν ]   r_i = D/2, r_o = r_i + e, ν Poisson's ratio
//! c0 = √(B_eff/ρ)                                            the wave speed
//! ```
//!
//! The Lamé form follows from the radial displacement of the bore of a thick
//! cylinder, u(r_i) = (p r_i/E)[(r_o² + r_i²)/(r_o² − r_i²) + ν], and dA/A =
//! 2u/r_i (Timoshenko & Goodier, *Theory of Elasticity*, thick cylinders); it
//! equals Wylie & Streeter's wall factor for a pipe with expansion joints. For
//! e/D → 0 it tends to the thin-wall form, thick/thin = 1 + (e/D)(1 + 2ν) +
//! O((e/D)²). Hydraulic tubes have D/e ≈ 3–10, where the thin form
//! underestimates the compliance by 15–35 %: ripline uses the thick form by
//! default.

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

    /// Poisson's ratio ν at room temperature. Typical handbook values
    /// (recalled from memory; common engineering practice): steel 0.30,
    /// austenitic stainless 0.29, aluminium alloy 0.33, copper 0.34.
    pub fn poisson_ratio(self) -> f64 {
        match self {
            Material::Steel => 0.30,
            Material::StainlessSteel => 0.29,
            Material::Aluminium => 0.33,
            Material::Copper => 0.34,
        }
    }
}

/// Poisson's ratio assumed when a wall gives its Young's modulus but not its
/// Poisson's ratio: 0.3, typical of metals (common practice).
pub const DEFAULT_POISSON_RATIO: f64 = 0.3;

/// The wall of a tube, as far as its compliance is concerned.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Wall {
    /// A wall that does not distend (B_wall = ∞).
    Rigid,
    /// A thin elastic wall (Korteweg form).
    Elastic {
        /// Wall thickness e in m.
        thickness_m: f64,
        /// Young's modulus E in Pa.
        youngs_modulus_pa: f64,
    },
    /// A thick elastic wall (Lamé form, free ends).
    ThickElastic {
        /// Wall thickness e in m.
        thickness_m: f64,
        /// Young's modulus E in Pa.
        youngs_modulus_pa: f64,
        /// Poisson's ratio ν.
        poisson_ratio: f64,
    },
}

impl Wall {
    /// The wall's compliance 1/B_wall in 1/Pa for a tube of bore D
    /// (Korteweg for [`Wall::Elastic`], Lamé for [`Wall::ThickElastic`]).
    pub fn compliance_per_pa(&self, bore_m: f64) -> f64 {
        match *self {
            Wall::Rigid => 0.0,
            Wall::Elastic {
                thickness_m,
                youngs_modulus_pa,
            } => bore_m / (youngs_modulus_pa * thickness_m),
            Wall::ThickElastic {
                thickness_m,
                youngs_modulus_pa,
                poisson_ratio,
            } => {
                let ri = 0.5 * bore_m;
                let ro = ri + thickness_m;
                // r_o² − r_i² = e (2 r_i + e), without cancellation for thin walls
                let ratio = (ro * ro + ri * ri) / (thickness_m * (2.0 * ri + thickness_m));
                2.0 / youngs_modulus_pa * (ratio + poisson_ratio)
            }
        }
    }

    /// The wall's thickness in m (zero for a rigid wall).
    pub fn thickness_m(&self) -> f64 {
        match *self {
            Wall::Rigid => 0.0,
            Wall::Elastic { thickness_m, .. } | Wall::ThickElastic { thickness_m, .. } => {
                thickness_m
            }
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

    // Lamé thick wall against the thin (Korteweg) form, methods.md §1.5
    // worked case (steel E = 206 GPa, ν = 0.3, D = 10 mm, e = 2 mm): thin
    // 2.427184466019417e-11, thick 3.284789644012945e-11 1/Pa
    // (tests/oracles/fluid_refs.py [4], mpmath at 30 digits).
    #[test]
    fn lame_and_korteweg_compliance() {
        let thin = Wall::Elastic {
            thickness_m: 2e-3,
            youngs_modulus_pa: 206e9,
        };
        let thick = Wall::ThickElastic {
            thickness_m: 2e-3,
            youngs_modulus_pa: 206e9,
            poisson_ratio: 0.3,
        };
        let (a, b) = (thin.compliance_per_pa(0.01), thick.compliance_per_pa(0.01));
        assert!((a - 2.427184466019417e-11).abs() < 1e-14 * a);
        assert!((b - 3.284789644012945e-11).abs() < 1e-14 * b);
        assert_eq!(Wall::Rigid.compliance_per_pa(0.01), 0.0);
    }

    #[test]
    fn material_names_round_trip() {
        for m in Material::ALL {
            assert_eq!(Material::from_name(m.name()), Some(m));
        }
        assert_eq!(Material::from_name("wood"), None);
    }
}

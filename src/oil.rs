//! Mineral hydraulic oil at an operating point: viscosity, density and bulk
//! modulus from temperature and mean pressure, and the free air that lowers
//! the bulk modulus.
//!
//! The models, all SI (temperatures in K, pressures in Pa; *gauge* pressure p
//! is relative to atmosphere, p_abs = p + 101 325 Pa):
//!
//! ```text
//! viscosity   Walther, ASTM D341 form:   log10 log10(ν_cSt + 0.7) = A − B log10 T
//!             through two reference points (ν1, T1), (ν2, T2)
//! density     ρ(T, p) = ρ15 / (1 + α_T (T − 288.15 K)) / (V/V0)(T, p)
//! compression Hayward (1967), "Compressibility equations for liquids: a comparative
//!             study", Br. J. Appl. Phys. 18, 965 — Tait's original equation rearranged,
//!             a secant bulk modulus linear in pressure:
//!                 p V0/(V0 − V) = K0 + m p   ⇒   V/V0 = 1 − p/(K0 + m p)
//!             whose tangent (isothermal) modulus is
//!                 K_T(p) = −V dp/dV = (K0 + m p)(K0 + (m − 1) p)/K0
//! temperature K0(T) = K0(40 °C) · exp(−β (T − 313.15 K))
//! isentropic  B_s = γ K_T  (γ = c_p/c_v; acoustics needs the isentropic tangent modulus)
//! free air    Merritt (1967), Hydraulic Control Systems, §2: compliances of liquid and gas
//!             add by volume. Air fraction α0 at atmospheric pressure, compressed
//!             isothermally to the mean pressure, then adiabatic (κ = 1.4) for the ripple:
//!                 x = α0/(1 − α0) · p_atm/p_abs,  α = x/(1 + x)
//!                 1/B_eff = (1 − α)/B_s + α/(κ p_abs),   ρ_eff = (1 − α) ρ   (air mass neglected)
//! ```
//!
//! The numbers that describe an oil (its reference viscosities, ρ15, α_T, K0,
//! β, m, γ) come from the oil's datasheet, or from [`Grade::typical`], typical
//! values for ISO VG mineral oils (common practice, recalled from memory; an
//! oil's datasheet or a measurement beats them). Air dissolves over time
//! (Henry's law), so real circuits lie between this free-air model and
//! air-free values (methods.md §1.4).

/// Atmospheric pressure in Pa (the standard atmosphere).
pub const ATMOSPHERIC_PA: f64 = 101_325.0;

/// 0 °C in K.
pub const ZERO_CELSIUS_K: f64 = 273.15;

/// Ratio of specific heats κ of air for the adiabatic ripple compression
/// (diatomic ideal gas, common practice).
pub const AIR_ADIABATIC_INDEX: f64 = 1.4;

/// Why oil properties cannot be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum OilError {
    /// The two viscosity reference points do not define a Walther line.
    #[error(
        "the two viscosity reference points must be at different temperatures, with the lower viscosity at the higher temperature"
    )]
    BadViscosityPoints,
    /// A grade name that is not in the table.
    #[error("unknown oil grade `{0}`; use one of: VG 22, VG 32, VG 46, VG 68, VG 100")]
    UnknownGrade(String),
}

/// ISO viscosity grades of mineral hydraulic oil (ISO 3448 grades: the grade
/// number is the kinematic viscosity in cSt at 40 °C, ±10 %).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum Grade {
    /// ISO VG 22.
    Vg22,
    /// ISO VG 32.
    Vg32,
    /// ISO VG 46.
    Vg46,
    /// ISO VG 68.
    Vg68,
    /// ISO VG 100.
    Vg100,
}

impl Grade {
    /// Every tabulated grade.
    pub const ALL: [Grade; 5] = [
        Grade::Vg22,
        Grade::Vg32,
        Grade::Vg46,
        Grade::Vg68,
        Grade::Vg100,
    ];

    /// The grade's name, e.g. `VG 46`.
    pub fn name(self) -> &'static str {
        match self {
            Grade::Vg22 => "VG 22",
            Grade::Vg32 => "VG 32",
            Grade::Vg46 => "VG 46",
            Grade::Vg68 => "VG 68",
            Grade::Vg100 => "VG 100",
        }
    }

    /// Reads `VG 46`, `VG46`, `ISO VG 46` (any case, any spacing).
    ///
    /// # Errors
    /// [`OilError::UnknownGrade`] for any other text.
    pub fn parse(text: &str) -> Result<Grade, OilError> {
        let compact: String = text
            .chars()
            .filter(|c| !c.is_whitespace())
            .collect::<String>()
            .to_ascii_uppercase();
        let number = compact.strip_prefix("ISO").unwrap_or(&compact);
        Grade::ALL
            .into_iter()
            .find(|g| g.name().replace(' ', "") == number)
            .ok_or_else(|| OilError::UnknownGrade(text.to_string()))
    }

    /// Typical data of a mineral hydraulic oil (HM type, viscosity index
    /// about 100) of this grade. ν40 is the grade number (ISO 3448); ν100 and
    /// ρ15 are typical datasheet values, and the compressibility data are
    /// typical of mineral oils (all recalled from memory; common practice).
    pub fn typical(self) -> OilData {
        let (nu40, nu100, rho15) = match self {
            Grade::Vg22 => (22.0, 4.3, 862.0),
            Grade::Vg32 => (32.0, 5.4, 868.0),
            Grade::Vg46 => (46.0, 6.8, 875.0),
            Grade::Vg68 => (68.0, 8.7, 880.0),
            Grade::Vg100 => (100.0, 11.2, 885.0),
        };
        OilData {
            viscosity: Walther::through(
                (celsius(40.0), nu40 * 1e-6),
                (celsius(100.0), nu100 * 1e-6),
            )
            .expect("the table's points are valid"),
            density_15c_kg_m3: rho15,
            ..OilData::MINERAL_TYPICAL
        }
    }
}

/// A temperature in °C as K.
pub fn celsius(t_c: f64) -> f64 {
    t_c + ZERO_CELSIUS_K
}

/// The Walther viscosity–temperature line of ASTM D341:
/// log10 log10(ν_cSt + 0.7) = A − B·log10(T/K).
///
/// ASTM D341 adds small correction terms to ν + 0.7 that matter only below
/// about 2 cSt (methods.md §1.3); they are left out.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Walther {
    /// A (dimensionless).
    pub a: f64,
    /// B (dimensionless).
    pub b: f64,
}

impl Walther {
    /// The line through two (temperature K, kinematic viscosity m²/s) points.
    ///
    /// # Errors
    /// [`OilError::BadViscosityPoints`] unless viscosity falls as temperature rises.
    pub fn through(p1: (f64, f64), p2: (f64, f64)) -> Result<Walther, OilError> {
        let ((t1, nu1), (t2, nu2)) = (p1, p2);
        let y = |nu_m2_s: f64| (nu_m2_s * 1e6 + 0.7).log10().log10();
        let (y1, y2) = (y(nu1), y(nu2));
        let b = (y1 - y2) / (t2.log10() - t1.log10());
        if !(b.is_finite() && b > 0.0 && t1 > 0.0 && t2 > 0.0) {
            return Err(OilError::BadViscosityPoints);
        }
        Ok(Walther {
            a: y1 + b * t1.log10(),
            b,
        })
    }

    /// Kinematic viscosity in m²/s at temperature T (K):
    /// ν = 10^(10^(A − B log10 T)) − 0.7 cSt.
    pub fn viscosity_m2_s(&self, temperature_k: f64) -> f64 {
        let inner = 10f64.powf(self.a - self.b * temperature_k.log10());
        (10f64.powf(inner) - 0.7) * 1e-6
    }
}

/// What describes a mineral oil: its reference data.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OilData {
    /// Viscosity against temperature.
    pub viscosity: Walther,
    /// Density at 15 °C and atmospheric pressure in kg/m³.
    pub density_15c_kg_m3: f64,
    /// Volumetric thermal expansion coefficient α_T in 1/K.
    pub thermal_expansion_per_k: f64,
    /// Isentropic tangent bulk modulus at 40 °C and atmospheric pressure in Pa.
    pub bulk_modulus_40c_pa: f64,
    /// β: relative fall of the bulk modulus per kelvin, in 1/K.
    pub bulk_modulus_temperature_coefficient_per_k: f64,
    /// m: slope of the secant bulk modulus against pressure (Hayward).
    pub secant_modulus_slope: f64,
    /// γ = c_p/c_v, the ratio of isentropic to isothermal bulk modulus.
    pub heat_capacity_ratio: f64,
}

impl OilData {
    /// A typical ISO VG 46 mineral hydraulic oil; [`Grade::typical`] replaces
    /// the viscosity line and ρ15 for the other grades. Its Walther line goes
    /// through 46 cSt at 40 °C and 6.8 cSt at 100 °C (A, B as computed by
    /// [`Walther::through`], checked in the tests). Typical compressibility
    /// and expansion data of mineral hydraulic oils (recalled from memory;
    /// common practice): α_T = 6.5e-4 1/K; B_s(40 °C, 0 bar) = 1.62 GPa;
    /// β = 0.0055 1/K (1.62 GPa at 40 °C → 1.53 GPa at 50 °C, a fall of the
    /// speed of sound of about 3.3 m/s per K); m = 5.6 (the tangent modulus
    /// then rises by 2m − 1 ≈ 10 × p, the K1 ≈ 10–11 of methods.md §1.2);
    /// γ = 1.15.
    pub const MINERAL_TYPICAL: OilData = OilData {
        viscosity: Walther {
            a: 9.417_992_554_330_885,
            b: 3.684_441_497_537_861,
        },
        density_15c_kg_m3: 875.0,
        thermal_expansion_per_k: 6.5e-4,
        bulk_modulus_40c_pa: 1.62e9,
        bulk_modulus_temperature_coefficient_per_k: 0.0055,
        secant_modulus_slope: 5.6,
        heat_capacity_ratio: 1.15,
    };

    /// Kinematic viscosity in m²/s at temperature T (K), at atmospheric
    /// pressure (Walther).
    pub fn viscosity_m2_s(&self, temperature_k: f64) -> f64 {
        self.viscosity.viscosity_m2_s(temperature_k)
    }

    /// Isothermal secant (= tangent) modulus K0 at atmospheric pressure and T.
    fn isothermal_modulus_at_atmosphere(&self, temperature_k: f64) -> f64 {
        self.bulk_modulus_40c_pa / self.heat_capacity_ratio
            * (-self.bulk_modulus_temperature_coefficient_per_k * (temperature_k - celsius(40.0)))
                .exp()
    }

    /// V/V0 = 1 − p/(K0 + m p) at gauge pressure p (Hayward's secant law).
    pub fn volume_ratio(&self, temperature_k: f64, gauge_pa: f64) -> f64 {
        let k0 = self.isothermal_modulus_at_atmosphere(temperature_k);
        1.0 - gauge_pa / (k0 + self.secant_modulus_slope * gauge_pa)
    }

    /// Air-free density in kg/m³ at T (K) and gauge pressure p (Pa).
    pub fn density_kg_m3(&self, temperature_k: f64, gauge_pa: f64) -> f64 {
        let at_atmosphere = self.density_15c_kg_m3
            / (1.0 + self.thermal_expansion_per_k * (temperature_k - celsius(15.0)));
        at_atmosphere / self.volume_ratio(temperature_k, gauge_pa)
    }

    /// Air-free isothermal tangent bulk modulus in Pa:
    /// K_T = (K0 + m p)(K0 + (m − 1) p)/K0.
    pub fn isothermal_bulk_modulus_pa(&self, temperature_k: f64, gauge_pa: f64) -> f64 {
        let k0 = self.isothermal_modulus_at_atmosphere(temperature_k);
        let m = self.secant_modulus_slope;
        (k0 + m * gauge_pa) * (k0 + (m - 1.0) * gauge_pa) / k0
    }

    /// Air-free isentropic tangent bulk modulus B_s = γ K_T in Pa.
    pub fn bulk_modulus_pa(&self, temperature_k: f64, gauge_pa: f64) -> f64 {
        self.heat_capacity_ratio * self.isothermal_bulk_modulus_pa(temperature_k, gauge_pa)
    }
}

/// The volume fraction of free air at absolute pressure `absolute_pa`, for a
/// fraction α0 at atmospheric pressure, compressed isothermally (Boyle):
/// x = α0/(1 − α0)·p_atm/p_abs (air per liquid volume), α = x/(1 + x).
pub fn air_fraction(air_at_atmosphere: f64, absolute_pa: f64) -> f64 {
    if air_at_atmosphere <= 0.0 {
        return 0.0;
    }
    let x = air_at_atmosphere / (1.0 - air_at_atmosphere) * ATMOSPHERIC_PA / absolute_pa;
    x / (1.0 + x)
}

/// The effective bulk modulus of liquid with free air (Merritt 1967, volume-
/// weighted compliances): 1/B_eff = (1 − α)/B_liquid + α/(κ p_abs), with α the
/// air fraction at `absolute_pa` ([`air_fraction`]) and κ the air's index for
/// the ripple (1.4 adiabatic, 1 isothermal).
pub fn bulk_modulus_with_air(
    liquid_pa: f64,
    air_at_atmosphere: f64,
    absolute_pa: f64,
    kappa: f64,
) -> f64 {
    let a = air_fraction(air_at_atmosphere, absolute_pa);
    1.0 / ((1.0 - a) / liquid_pa + a / (kappa * absolute_pa))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn grade_names_parse() {
        for g in Grade::ALL {
            assert_eq!(Grade::parse(g.name()), Ok(g));
        }
        assert_eq!(Grade::parse("iso vg46"), Ok(Grade::Vg46));
        assert_eq!(Grade::parse(" VG 100 "), Ok(Grade::Vg100));
        assert!(Grade::parse("VG 150").is_err());
        assert!(Grade::parse("46").is_err());
    }

    #[test]
    fn grade_number_is_the_viscosity_at_40_c() {
        // ISO 3448: the grade is ν at 40 °C in cSt.
        for (g, nu) in [(Grade::Vg22, 22e-6), (Grade::Vg100, 100e-6)] {
            let v = g.typical().viscosity_m2_s(celsius(40.0));
            assert!((v - nu).abs() < 1e-12 * nu, "{v}");
        }
    }

    #[test]
    fn the_typical_mineral_oil_is_the_vg46_record() {
        let (a, b) = (OilData::MINERAL_TYPICAL, Grade::Vg46.typical());
        assert!((a.viscosity.a - b.viscosity.a).abs() < 1e-13);
        assert!((a.viscosity.b - b.viscosity.b).abs() < 1e-13);
        assert_eq!(a.density_15c_kg_m3, b.density_15c_kg_m3);
    }

    #[test]
    fn walther_rejects_viscosity_rising_with_temperature() {
        assert_eq!(
            Walther::through((celsius(40.0), 10e-6), (celsius(100.0), 20e-6)),
            Err(OilError::BadViscosityPoints)
        );
        assert!(Walther::through((celsius(40.0), 46e-6), (celsius(40.0), 7e-6)).is_err());
    }

    #[test]
    fn no_air_leaves_the_modulus_alone() {
        let b = bulk_modulus_with_air(1.6e9, 0.0, 2e5, 1.4);
        assert!((b - 1.6e9).abs() < 1e-6, "{b}");
    }
}

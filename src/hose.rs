//! Viscoelastic hose walls: a complex, frequency-dependent wall compliance.
//!
//! A hose is a line whose wall is soft, lossy and frequency dependent. The
//! standard one-dimensional treatment (methods.md §3) keeps the viscous series
//! impedance of a tube and replaces the liquid's modulus in the shunt
//! admittance by a complex effective modulus B*(ω):
//!
//! ```text
//! 1/B*(ω) = 1/B_fluid + J_w(ω)        Y' = jωA/B*(ω)        Γ = √(Z'Y'),  Zc = Z'/Γ
//! ```
//!
//! where J_w = (1/A) dA/dp is the wall's dynamic compliance. With e^{+jωt} a
//! passive wall has Im J_w ≤ 0 (then Re Y' ≥ 0: the wall absorbs energy). Two
//! causal wall laws are offered ([`ViscoelasticWall`]):
//!
//! * **constant loss** (Kjartansson 1979, "Constant Q-wave propagation and
//!   attenuation", J. Geophys. Res. 84, 4737): M(ω) = M0 (jω/ω_ref)^{2g}, whose
//!   loss factor tan(πg) is the same at every frequency and whose modulus
//!   grows slowly with frequency as the Kramers–Kronig relations require. On
//!   the compliance: J_w(ω) = J_ref (ω/ω_ref)^{−2g}, g = −arg(J_ref)/π. It is
//!   set from what a datasheet or a measurement gives: the wave speed c_ref of
//!   the oil-filled hose and its loss factor η at a reference frequency, i.e.
//!   B*(ω_ref) = ρ c_ref² (1 + jη) (methods.md §3), from which
//!   J_ref = 1/(ρ c_ref²(1 + jη)) − 1/B_fluid;
//! * **generalised Kelvin–Voigt** (Tschoegl, *The Phenomenological Theory of
//!   Linear Viscoelastic Behavior*, 1989): J_w(ω) = J_u + Σ_k ΔJ_k/(1 + jωτ_k),
//!   ΔJ_k, τ_k > 0, for parameters fitted to a measured Γ(ω).
//!
//! Both are causal and passive. Typical wave speeds and loss factors of common
//! constructions are in [`HoseConstruction`]; they are typical values from
//! common practice, and a measured value beats them. The model ignores the
//! coupling of the fluid to axial wall waves.

use num_complex::Complex64 as C64;

/// Most retardation terms of a Kelvin–Voigt wall (a fixed array keeps
/// [`crate::line::LineProperties`] `Copy`).
pub const MAX_RETARDATION_TERMS: usize = 4;

/// Why a hose wall cannot be built.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum HoseError {
    /// The hose's wave speed is not below the fluid's own speed of sound.
    #[error(
        "a hose wave speed of {wave_speed_m_s:.1} m/s (loss factor {loss_factor}) is not below the speed of sound in the fluid ({fluid_speed_m_s:.1} m/s): a hose wall can only soften the oil; check the value and the fluid"
    )]
    FasterThanFluid {
        /// The hose's wave speed.
        wave_speed_m_s: f64,
        /// Its loss factor.
        loss_factor: f64,
        /// √(B_fluid/ρ).
        fluid_speed_m_s: f64,
    },
    /// More retardation terms than supported.
    #[error("a Kelvin–Voigt wall takes at most {MAX_RETARDATION_TERMS} retardation terms")]
    TooManyTerms,
    /// Wall data against pressure that cannot be interpolated.
    #[error(
        "give the hose's wall at 2 to {MAX_PRESSURE_POINTS} mean pressures, in increasing order of pressure"
    )]
    PressurePoints,
}

/// One retardation term ΔJ/(1 + jωτ) of a Kelvin–Voigt wall.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct RetardationTerm {
    /// Compliance ΔJ in 1/Pa.
    pub compliance_per_pa: f64,
    /// Retardation time τ in s.
    pub time_s: f64,
}

/// The dynamic compliance of a hose wall.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ViscoelasticWall {
    /// Constant loss factor: J_w(ω) = J_ref·(ω/ω_ref)^{exponent}, exponent = −2g.
    ConstantLoss {
        /// J_w at ω_ref in 1/Pa (Re > 0, Im ≤ 0).
        compliance_ref: C64,
        /// ω_ref in rad/s.
        omega_ref: f64,
        /// −2g = 2 arg(J_ref)/π (≤ 0).
        exponent: f64,
    },
    /// Generalised Kelvin–Voigt: J_u + Σ ΔJ_k/(1 + jωτ_k).
    KelvinVoigt {
        /// Instantaneous (unrelaxed) compliance J_u in 1/Pa.
        instantaneous_per_pa: f64,
        /// The retardation terms; only the first `count` are used.
        terms: [RetardationTerm; MAX_RETARDATION_TERMS],
        /// Number of terms in use.
        count: usize,
    },
}

impl ViscoelasticWall {
    /// A constant-loss wall with compliance `compliance_ref` (Re > 0, Im ≤ 0)
    /// at `freq_ref_hz`.
    pub fn constant_loss(compliance_ref: C64, freq_ref_hz: f64) -> ViscoelasticWall {
        // arg ∈ (−π/2, 0]: −2g = 2 arg/π ∈ (−1, 0]
        let exponent = 2.0 * compliance_ref.arg() / std::f64::consts::PI;
        ViscoelasticWall::ConstantLoss {
            compliance_ref,
            omega_ref: 2.0 * std::f64::consts::PI * freq_ref_hz,
            exponent,
        }
    }

    /// The constant-loss wall of a hose whose oil-filled wave speed is
    /// `wave_speed_m_s` with loss factor η at `freq_ref_hz`, in a fluid of
    /// density ρ and bulk modulus B_fluid: J_ref = 1/(ρc²(1 + jη)) − 1/B_fluid.
    ///
    /// # Errors
    /// [`HoseError::FasterThanFluid`] when Re J_ref ≤ 0, i.e. the hose would
    /// be stiffer than the oil in it.
    pub fn from_wave_speed(
        wave_speed_m_s: f64,
        loss_factor: f64,
        freq_ref_hz: f64,
        density_kg_m3: f64,
        fluid_bulk_modulus_pa: f64,
    ) -> Result<ViscoelasticWall, HoseError> {
        let total = C64::new(
            density_kg_m3 * wave_speed_m_s * wave_speed_m_s,
            density_kg_m3 * wave_speed_m_s * wave_speed_m_s * loss_factor,
        )
        .inv();
        let compliance_ref = total - 1.0 / fluid_bulk_modulus_pa;
        // A relative margin keeps a hose that is practically as stiff as the
        // oil from producing a meaningless, vanishing wall compliance.
        if compliance_ref.re <= 1e-6 * total.re {
            return Err(HoseError::FasterThanFluid {
                wave_speed_m_s,
                loss_factor,
                fluid_speed_m_s: (fluid_bulk_modulus_pa / density_kg_m3).sqrt(),
            });
        }
        Ok(ViscoelasticWall::constant_loss(compliance_ref, freq_ref_hz))
    }

    /// A Kelvin–Voigt wall from its instantaneous compliance and terms.
    ///
    /// # Errors
    /// [`HoseError::TooManyTerms`] beyond [`MAX_RETARDATION_TERMS`].
    pub fn kelvin_voigt(
        instantaneous_per_pa: f64,
        terms: &[RetardationTerm],
    ) -> Result<ViscoelasticWall, HoseError> {
        if terms.len() > MAX_RETARDATION_TERMS {
            return Err(HoseError::TooManyTerms);
        }
        let mut fixed = [RetardationTerm::default(); MAX_RETARDATION_TERMS];
        fixed[..terms.len()].copy_from_slice(terms);
        Ok(ViscoelasticWall::KelvinVoigt {
            instantaneous_per_pa,
            terms: fixed,
            count: terms.len(),
        })
    }

    /// The wall compliance J_w(ω) in 1/Pa at ω > 0.
    pub fn compliance(&self, omega: f64) -> C64 {
        match *self {
            ViscoelasticWall::ConstantLoss {
                compliance_ref,
                omega_ref,
                exponent,
            } => {
                if exponent == 0.0 {
                    compliance_ref
                } else {
                    compliance_ref * (omega / omega_ref).powf(exponent)
                }
            }
            ViscoelasticWall::KelvinVoigt {
                instantaneous_per_pa,
                terms,
                count,
            } => terms[..count]
                .iter()
                .fold(C64::new(instantaneous_per_pa, 0.0), |acc, t| {
                    acc + t.compliance_per_pa / C64::new(1.0, omega * t.time_s)
                }),
        }
    }

    /// A real compliance that stands for the wall where one number is needed
    /// (the nominal wave speed, Z0, the plane-wave limit): Re J_ref for a
    /// constant-loss wall; the relaxed (static) compliance J_u + ΣΔJ_k, the
    /// softest value, for a Kelvin–Voigt wall.
    pub fn nominal_compliance_per_pa(&self) -> f64 {
        match *self {
            ViscoelasticWall::ConstantLoss { compliance_ref, .. } => compliance_ref.re,
            ViscoelasticWall::KelvinVoigt {
                instantaneous_per_pa,
                terms,
                count,
            } => {
                instantaneous_per_pa
                    + terms[..count]
                        .iter()
                        .map(|t| t.compliance_per_pa)
                        .sum::<f64>()
            }
        }
    }

    /// Whether the wall dissipates nothing (a real, constant compliance).
    pub fn is_lossless(&self) -> bool {
        match *self {
            ViscoelasticWall::ConstantLoss { compliance_ref, .. } => compliance_ref.im == 0.0,
            ViscoelasticWall::KelvinVoigt { count, terms, .. } => {
                terms[..count].iter().all(|t| t.compliance_per_pa == 0.0)
            }
        }
    }
}

/// Most mean pressures a hose's wall data may list (a fixed array keeps
/// [`crate::line::LineProperties`] and the hose `Copy`).
pub const MAX_PRESSURE_POINTS: usize = 8;

/// A hose's measured wave speed and loss factor at one mean pressure.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct PressurePoint {
    /// Mean pressure (gauge, as the fluid's `pressure`) in Pa.
    pub pressure_pa: f64,
    /// Wave speed of the oil-filled hose in m/s.
    pub wave_speed_m_s: f64,
    /// Loss factor η.
    pub loss_factor: f64,
}

/// A hose wall that follows the mean pressure: wave speed and loss factor
/// measured at two or more mean pressures (wire-reinforced hoses stiffen as
/// the pressure stretches the reinforcement, so their wave speed rises with
/// pressure; methods-2 §3, common practice, no single published model).
/// Between the points both are interpolated linearly in pressure, outside
/// them the end values are held (and `at` says so); the wall at a pressure
/// is then the constant-loss wall of [`ViscoelasticWall::from_wave_speed`]
/// with the fluid at that pressure.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PressureData {
    points: [PressurePoint; MAX_PRESSURE_POINTS],
    count: usize,
    /// Frequency at which the wave speeds and loss factors hold, Hz.
    pub reference_frequency_hz: f64,
}

/// The wave speed and loss factor of a [`PressureData`] at a mean pressure.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PressureValues {
    /// Interpolated wave speed in m/s.
    pub wave_speed_m_s: f64,
    /// Interpolated loss factor.
    pub loss_factor: f64,
    /// Whether the pressure lies outside the data (end values held).
    pub held: bool,
}

impl PressureData {
    /// Wall data at increasing mean pressures.
    ///
    /// # Errors
    /// [`HoseError::PressurePoints`] for fewer than two or more than
    /// [`MAX_PRESSURE_POINTS`] points, or pressures not strictly increasing.
    pub fn new(
        points: &[PressurePoint],
        reference_frequency_hz: f64,
    ) -> Result<PressureData, HoseError> {
        if !(2..=MAX_PRESSURE_POINTS).contains(&points.len())
            || points
                .windows(2)
                .any(|w| w[1].pressure_pa <= w[0].pressure_pa)
        {
            return Err(HoseError::PressurePoints);
        }
        let mut fixed = [PressurePoint::default(); MAX_PRESSURE_POINTS];
        fixed[..points.len()].copy_from_slice(points);
        Ok(PressureData {
            points: fixed,
            count: points.len(),
            reference_frequency_hz,
        })
    }

    /// The data points, in increasing pressure.
    pub fn points(&self) -> &[PressurePoint] {
        &self.points[..self.count]
    }

    /// Wave speed and loss factor at mean pressure `pressure_pa`: linear
    /// interpolation between the neighbouring points, end values held
    /// outside.
    pub fn at(&self, pressure_pa: f64) -> PressureValues {
        let pts = self.points();
        let (first, last) = (pts[0], pts[pts.len() - 1]);
        let held = |p: PressurePoint| PressureValues {
            wave_speed_m_s: p.wave_speed_m_s,
            loss_factor: p.loss_factor,
            held: true,
        };
        if pressure_pa < first.pressure_pa {
            return held(first);
        }
        if pressure_pa > last.pressure_pa {
            return held(last);
        }
        let i = pts
            .windows(2)
            .position(|w| pressure_pa <= w[1].pressure_pa)
            .unwrap_or(pts.len() - 2);
        let (a, b) = (pts[i], pts[i + 1]);
        let t = (pressure_pa - a.pressure_pa) / (b.pressure_pa - a.pressure_pa);
        PressureValues {
            wave_speed_m_s: a.wave_speed_m_s + t * (b.wave_speed_m_s - a.wave_speed_m_s),
            loss_factor: a.loss_factor + t * (b.loss_factor - a.loss_factor),
            held: false,
        }
    }

    /// The wall at mean pressure `pressure_pa` in a fluid of density ρ and
    /// bulk modulus B (both at that pressure).
    ///
    /// # Errors
    /// [`HoseError::FasterThanFluid`] when the interpolated hose is not
    /// softer than the fluid.
    pub fn wall_at(
        &self,
        pressure_pa: f64,
        density_kg_m3: f64,
        fluid_bulk_modulus_pa: f64,
    ) -> Result<ViscoelasticWall, HoseError> {
        let v = self.at(pressure_pa);
        ViscoelasticWall::from_wave_speed(
            v.wave_speed_m_s,
            v.loss_factor,
            self.reference_frequency_hz,
            density_kg_m3,
            fluid_bulk_modulus_pa,
        )
    }
}

/// Density of the reference oil in which [`HoseConstruction`] wave speeds
/// are stated, kg/m³ (a typical mineral oil, common practice).
pub const REFERENCE_OIL_DENSITY: f64 = 870.0;
/// Bulk modulus of the reference oil (air-free), Pa (common practice).
pub const REFERENCE_OIL_BULK_MODULUS: f64 = 1.6e9;
/// Frequency at which the typical hose values hold, Hz.
pub const TYPICAL_REFERENCE_FREQUENCY_HZ: f64 = 200.0;

/// Common hose constructions with typical dynamic properties.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum HoseConstruction {
    /// Textile-braid reinforced low-pressure hose.
    TextileBraid,
    /// One steel-wire braid.
    OneWireBraid,
    /// Two steel-wire braids.
    TwoWireBraid,
    /// Four or six spiral-wound steel-wire plies.
    Spiral,
}

impl HoseConstruction {
    /// Every tabulated construction.
    pub const ALL: [HoseConstruction; 4] = [
        HoseConstruction::TextileBraid,
        HoseConstruction::OneWireBraid,
        HoseConstruction::TwoWireBraid,
        HoseConstruction::Spiral,
    ];

    /// The name used in circuit files.
    pub fn name(self) -> &'static str {
        match self {
            HoseConstruction::TextileBraid => "textile_braid",
            HoseConstruction::OneWireBraid => "one_wire_braid",
            HoseConstruction::TwoWireBraid => "two_wire_braid",
            HoseConstruction::Spiral => "spiral",
        }
    }

    /// Looks a construction up by its circuit-file name.
    pub fn from_name(name: &str) -> Option<HoseConstruction> {
        HoseConstruction::ALL.into_iter().find(|c| c.name() == name)
    }

    /// Typical (wave speed m/s, loss factor) of the oil-filled hose at
    /// [`TYPICAL_REFERENCE_FREQUENCY_HZ`] in the reference oil
    /// ([`REFERENCE_OIL_DENSITY`], [`REFERENCE_OIL_BULK_MODULUS`]).
    /// Typical values, common practice (recalled from memory; in line with the
    /// ranges of methods.md §3: steel-braid hoses 900–1250 m/s, η 0.05–0.15,
    /// textile hoses much softer). They vary with size, maker and pressure: a
    /// measured value beats them.
    pub fn typical(self) -> (f64, f64) {
        match self {
            HoseConstruction::TextileBraid => (600.0, 0.15),
            HoseConstruction::OneWireBraid => (1000.0, 0.12),
            HoseConstruction::TwoWireBraid => (1100.0, 0.10),
            HoseConstruction::Spiral => (1250.0, 0.06),
        }
    }

    /// The construction's wall: the typical values turned into a wall
    /// compliance with the reference oil, so that in another fluid (hotter,
    /// with air) the hose's wave speed follows the fluid.
    pub fn wall(self) -> ViscoelasticWall {
        let (c, eta) = self.typical();
        ViscoelasticWall::from_wave_speed(
            c,
            eta,
            TYPICAL_REFERENCE_FREQUENCY_HZ,
            REFERENCE_OIL_DENSITY,
            REFERENCE_OIL_BULK_MODULUS,
        )
        .expect("every typical hose is softer than the reference oil")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn construction_names_round_trip_and_walls_are_passive() {
        for c in HoseConstruction::ALL {
            assert_eq!(HoseConstruction::from_name(c.name()), Some(c));
            let w = c.wall();
            for f in [1.0, 100.0, 1e4] {
                let j = w.compliance(2.0 * std::f64::consts::PI * f);
                assert!(j.re > 0.0 && j.im < 0.0, "{} at {f} Hz: {j}", c.name());
            }
        }
        assert_eq!(HoseConstruction::from_name("garden"), None);
    }

    // The constant-loss law keeps its loss angle at every frequency and the
    // modulus magnitude grows as ω^{2g} (Kjartansson 1979, eq. for M(ω)).
    #[test]
    fn constant_loss_wall_keeps_its_loss_angle() {
        let w = ViscoelasticWall::constant_loss(C64::new(3e-10, -1e-10), 200.0);
        let j1 = w.compliance(2.0 * std::f64::consts::PI * 200.0);
        let j2 = w.compliance(2.0 * std::f64::consts::PI * 2000.0);
        assert!((j1 - C64::new(3e-10, -1e-10)).norm() < 1e-24);
        assert!((j1.arg() - j2.arg()).abs() < 1e-14);
        let g2 = -2.0 * j1.arg() / std::f64::consts::PI;
        assert!((j1.norm() / j2.norm() - 10f64.powf(g2)).abs() < 1e-12);
    }

    // Linear interpolation by hand: halfway between (50 bar, 1000 m/s,
    // 0.14) and (250 bar, 1200 m/s, 0.10) is (150 bar, 1100 m/s, 0.12);
    // a quarter of the way, 1050 m/s and 0.13; outside, the end values.
    #[test]
    fn pressure_data_interpolates_and_holds_its_ends() {
        let pts = [
            PressurePoint {
                pressure_pa: 50e5,
                wave_speed_m_s: 1000.0,
                loss_factor: 0.14,
            },
            PressurePoint {
                pressure_pa: 250e5,
                wave_speed_m_s: 1200.0,
                loss_factor: 0.10,
            },
        ];
        let d = PressureData::new(&pts, 200.0).unwrap();
        let mid = d.at(150e5);
        assert!(
            (mid.wave_speed_m_s - 1100.0).abs() < 1e-9 && (mid.loss_factor - 0.12).abs() < 1e-12
        );
        assert!(!mid.held);
        let q = d.at(100e5);
        assert!((q.wave_speed_m_s - 1050.0).abs() < 1e-9 && (q.loss_factor - 0.13).abs() < 1e-12);
        assert_eq!(d.at(0.0).wave_speed_m_s, 1000.0);
        assert!(d.at(0.0).held && d.at(300e5).held);
        assert_eq!(d.at(300e5).loss_factor, 0.10);
        // the wall at a pressure gives back the interpolated wave speed:
        // ρc² = |1/(1/B + J_w)| at the reference frequency, with its loss
        let w = d.wall_at(150e5, 870.0, 1.6e9).unwrap();
        let b =
            (C64::new(1.0 / 1.6e9, 0.0) + w.compliance(2.0 * std::f64::consts::PI * 200.0)).inv();
        assert!((b.re / 870.0 - 1100.0 * 1100.0).abs() < 1e-6 * 1100.0 * 1100.0);
        assert!((b.im / b.re - 0.12).abs() < 1e-9);
        let reversed = [pts[1], pts[0]];
        assert_eq!(
            PressureData::new(&reversed, 200.0),
            Err(HoseError::PressurePoints)
        );
        assert_eq!(
            PressureData::new(&pts[..1], 200.0),
            Err(HoseError::PressurePoints)
        );
    }

    #[test]
    fn a_hose_stiffer_than_its_oil_is_refused() {
        let e = ViscoelasticWall::from_wave_speed(1500.0, 0.1, 200.0, 870.0, 1.6e9);
        assert!(matches!(e, Err(HoseError::FasterThanFluid { .. })));
    }
}

//! Valves with a moving poppet (or spool), linearised about their operating
//! point: the direct-acting relief valve and the spring-loaded check valve.
//!
//! **The model.** A poppet of mass m on a spring of rate k, with viscous
//! damping b, is pushed open by the pressure difference p across its
//! pressure-feedback area A. Its metering orifice passes
//! Q_o = C_d w x √(2p/ρ) at opening x (w: the width of the opening per unit
//! lift). The steady flow force of the jet leaving at angle θ, F_f =
//! 2 C_d w x p cos θ (the momentum flux ρ Q v cos θ with v = √(2p/ρ)),
//! acts to close the valve (Merritt, *Hydraulic Control Systems*, 1967,
//! ch. 5, for the jet force on a metering edge; taking it as closing on a
//! poppet is common practice, the true sign depends on the seat geometry).
//! About the operating point (p̄, Q̄, x̄), with e^{+jωt} phasors:
//!
//! ```text
//! orifice         δQ_o = K_q δx + K_c δp,   K_q = ∂Q/∂x = Q̄/x̄,  K_c = ∂Q/∂p = Q̄/(2p̄)
//! flow force      δF_f = k_f δx + a_f δp,   k_f = K_q cos θ √(2ρp̄),  a_f = Q̄ cos θ √(2ρ/p̄)
//! poppet          (−mω² + jωb + k + k_f) δx = (A − a_f) δp = A_p δp
//! flow into valve δQ = δQ_o + jωA δx        (the poppet's face sweeps A·ẋ)
//! ```
//!
//! so the valve's admittance (flow per pressure difference) is
//!
//! ```text
//! Y(jω) = K_c + (K_q + jωA)·A_p / (k_t − mω² + jωb),   k_t = k + k_f.
//! ```
//!
//! Limits, each checked by a unit test: k → ∞ leaves the fixed orifice
//! K_c; m, b → 0 leaves K_c + K_q A_p/k_t (the static pressure–flow slope of
//! the valve) plus jωA A_p/k_t (the poppet as a spring-loaded piston
//! accumulator of compliance A²/k); ω → ∞ leaves K_c (the mass cannot
//! follow). The poppet resonates at ω_n = √(k_t/m) with damping ratio
//! ζ = b/(2√(k_t m)).
//!
//! **Not passive.** Re Y = [K_c|D|² + A_p(K_q(k_t − mω²) + ω²A b)]/|D|²,
//! D = k_t − mω² + jωb. Above ω_n the orifice term K_q(k_t − mω²) turns
//! negative: the poppet opens while the pressure falls, and the valve can
//! deliver ripple power to the circuit (a negative resistance, the linear
//! seed of valve chatter). With u = ω² the numerator is the quadratic
//! K_c m² u² + [K_c(b² − 2k_t m) + A_p(A b − K_q m)] u + k_t(K_c k_t + A_p K_q),
//! negative between its positive roots ([`Poppet::active_band_hz`]); it is
//! never negative when A b ≥ K_q m (then every term is ≥ 0).
//!
//! Methods-2 §3 (written from memory) gives the same admittance with A_p = A
//! and without the pressure term a_f of the flow force; both follow from the
//! equations above.

use std::f64::consts::PI;

use num_complex::Complex64 as C64;

/// A poppet (or spool) valve linearised about its operating point: the
/// coefficients of [`Poppet::admittance`] (module docs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Poppet {
    /// Moving mass m in kg (poppet plus about a third of the spring, common
    /// practice).
    pub mass_kg: f64,
    /// Spring rate k in N/m.
    pub spring_rate_n_m: f64,
    /// Viscous damping b in N·s/m.
    pub damping_n_s_m: f64,
    /// Flow-force stiffness k_f in N/m.
    pub flow_force_stiffness_n_m: f64,
    /// Pressure-feedback area A in m² (also the area that sweeps volume).
    pub area_m2: f64,
    /// Net pressure-feedback area A_p = A − a_f in m².
    pub net_area_m2: f64,
    /// Flow gain K_q = ∂Q/∂x in m²/s.
    pub flow_gain_m2_s: f64,
    /// Flow-pressure coefficient K_c = ∂Q/∂p in m³/(s·Pa).
    pub flow_pressure_coefficient: f64,
}

/// What a poppet valve is made of, before it is linearised.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PoppetData {
    /// Moving mass in kg.
    pub mass_kg: f64,
    /// Spring rate in N/m.
    pub spring_rate_n_m: f64,
    /// Viscous damping in N·s/m.
    pub damping_n_s_m: f64,
    /// Pressure-feedback area in m².
    pub area_m2: f64,
    /// Angle of the jet to the poppet's axis, for the flow force; `None`
    /// neglects the flow force.
    pub jet_angle_rad: Option<f64>,
    /// A flow gain from the maker's data (m²/s), instead of Q̄/x̄.
    pub flow_gain_m2_s: Option<f64>,
    /// A flow-pressure coefficient from the maker's data (m³/(s·Pa)),
    /// instead of Q̄/(2p̄).
    pub flow_pressure_coefficient: Option<f64>,
}

/// The mean state a valve is linearised about.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ValveOperatingPoint {
    /// Mean flow through the valve Q̄ in m³/s (> 0).
    pub mean_flow_m3_s: f64,
    /// Mean pressure difference across it p̄ in Pa (> 0).
    pub pressure_drop_pa: f64,
    /// Pressure difference at which it starts to open, in Pa.
    pub cracking_pa: f64,
}

/// Why a valve cannot be linearised at its stated operating point.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum ValveError {
    /// The operating pressure does not exceed the cracking pressure.
    #[error(
        "the mean pressure difference {pressure_bar:.3} bar does not exceed the cracking pressure {cracking_bar:.3} bar: the valve is closed at this operating point (raise `pressure_drop` or lower `cracking_pressure`)"
    )]
    Closed {
        /// p̄ in bar.
        pressure_bar: f64,
        /// Cracking pressure in bar.
        cracking_bar: f64,
    },
    /// The flow force at the operating point exceeds the opening force.
    #[error(
        "the flow force {flow_force_n:.1} N at the operating point exceeds the net opening force A·(p̄ − p_crack) = {opening_force_n:.1} N: the poppet could not be open there; check `jet_angle`, `feedback_area` and the operating point"
    )]
    FlowForceCloses {
        /// The steady flow force in N.
        flow_force_n: f64,
        /// A(p̄ − p_crack) in N.
        opening_force_n: f64,
    },
    /// The flow force's pressure term cancels the feedback area.
    #[error(
        "the flow force's pressure term {flow_area_mm2:.3} mm² is not smaller than the feedback area {area_mm2:.3} mm²: the valve would close as the pressure rises; check `jet_angle` and the operating point"
    )]
    NoNetArea {
        /// a_f in mm².
        flow_area_mm2: f64,
        /// A in mm².
        area_mm2: f64,
    },
}

impl Poppet {
    /// Linearises a poppet valve about `op` in a fluid of density ρ.
    /// Returns the poppet and its mean opening x̄ (m), from the force balance
    /// k x̄ = A(p̄ − p_crack) − F̄_f with F̄_f = Q̄ cos θ √(2ρp̄).
    ///
    /// # Errors
    /// [`ValveError`] when the valve is closed at `op` or the flow force
    /// would close it.
    pub fn linearise(
        data: &PoppetData,
        op: &ValveOperatingPoint,
        density_kg_m3: f64,
    ) -> Result<(Poppet, f64), ValveError> {
        let (q, p) = (op.mean_flow_m3_s, op.pressure_drop_pa);
        if p <= op.cracking_pa {
            return Err(ValveError::Closed {
                pressure_bar: p / 1e5,
                cracking_bar: op.cracking_pa / 1e5,
            });
        }
        let cos = data.jet_angle_rad.map_or(0.0, f64::cos);
        let opening_force = data.area_m2 * (p - op.cracking_pa);
        let flow_force = q * cos * (2.0 * density_kg_m3 * p).sqrt();
        if flow_force >= opening_force {
            return Err(ValveError::FlowForceCloses {
                flow_force_n: flow_force,
                opening_force_n: opening_force,
            });
        }
        let opening = (opening_force - flow_force) / data.spring_rate_n_m;
        let flow_gain = data.flow_gain_m2_s.unwrap_or(q / opening);
        let flow_area = q * cos * (2.0 * density_kg_m3 / p).sqrt();
        if flow_area >= data.area_m2 {
            return Err(ValveError::NoNetArea {
                flow_area_mm2: flow_area * 1e6,
                area_mm2: data.area_m2 * 1e6,
            });
        }
        let poppet = Poppet {
            mass_kg: data.mass_kg,
            spring_rate_n_m: data.spring_rate_n_m,
            damping_n_s_m: data.damping_n_s_m,
            flow_force_stiffness_n_m: flow_gain * cos * (2.0 * density_kg_m3 * p).sqrt(),
            area_m2: data.area_m2,
            net_area_m2: data.area_m2 - flow_area,
            flow_gain_m2_s: flow_gain,
            flow_pressure_coefficient: data.flow_pressure_coefficient.unwrap_or(q / (2.0 * p)),
        };
        Ok((poppet, opening))
    }

    /// Total stiffness k_t = k + k_f in N/m.
    pub fn stiffness_n_m(&self) -> f64 {
        self.spring_rate_n_m + self.flow_force_stiffness_n_m
    }

    /// Admittance Y(jω) = K_c + (K_q + jωA)·A_p/(k_t − mω² + jωb), in
    /// m³/(s·Pa): the flow through the valve per pressure difference.
    pub fn admittance(&self, omega: f64) -> C64 {
        let d = C64::new(
            self.stiffness_n_m() - self.mass_kg * omega * omega,
            omega * self.damping_n_s_m,
        );
        let drive = C64::new(self.flow_gain_m2_s, omega * self.area_m2) * self.net_area_m2;
        C64::new(self.flow_pressure_coefficient, 0.0) + drive / d
    }

    /// Natural frequency of the poppet on its spring, √(k_t/m)/(2π), in Hz.
    pub fn natural_frequency_hz(&self) -> f64 {
        (self.stiffness_n_m() / self.mass_kg).sqrt() / (2.0 * PI)
    }

    /// Damping ratio ζ = b/(2√(k_t m)).
    pub fn damping_ratio(&self) -> f64 {
        self.damping_n_s_m / (2.0 * (self.stiffness_n_m() * self.mass_kg).sqrt())
    }

    /// The static slope of the valve's pressure–flow characteristic,
    /// Y(0) = K_c + K_q A_p/k_t, in m³/(s·Pa).
    pub fn static_slope(&self) -> f64 {
        self.flow_pressure_coefficient
            + self.flow_gain_m2_s * self.net_area_m2 / self.stiffness_n_m()
    }

    /// The band of frequencies (Hz) where Re Y < 0: where the linearised
    /// valve delivers power to the circuit. `None` when it absorbs at every
    /// frequency; the upper end is `None` when the band is unbounded (K_c = 0).
    pub fn active_band_hz(&self) -> Option<(f64, Option<f64>)> {
        let (m, b, kt) = (self.mass_kg, self.damping_n_s_m, self.stiffness_n_m());
        let (kc, kq, a, ap) = (
            self.flow_pressure_coefficient,
            self.flow_gain_m2_s,
            self.area_m2,
            self.net_area_m2,
        );
        // Re Y·|D|² = c2 u² + c1 u + c0, u = ω²
        let c2 = kc * m * m;
        let c1 = kc * (b * b - 2.0 * kt * m) + ap * (a * b - kq * m);
        let c0 = kt * (kc * kt + ap * kq);
        let hz = |u: f64| u.sqrt() / (2.0 * PI);
        if c2 == 0.0 {
            // linear: negative above u = −c0/c1 when c1 < 0
            return (c1 < 0.0).then(|| (hz(-c0 / c1), None));
        }
        let disc = c1 * c1 - 4.0 * c2 * c0;
        if disc <= 0.0 || c1 >= 0.0 {
            // no real roots, or both roots negative (c0 > 0, c1 ≥ 0)
            return None;
        }
        let sq = disc.sqrt();
        // stable forms of the two roots (c1 < 0)
        let hi = (-c1 + sq) / (2.0 * c2);
        let lo = c0 / (c2 * hi);
        Some((hz(lo), Some(hz(hi))))
    }
}

/// A direct-acting relief valve (or pressure-compensating valve),
/// linearised about its operating point (module docs). To tank it is a shunt
/// at its inlet node; between two nodes it is a series element whose poppet
/// senses the pressure difference (spring chamber at the outlet pressure,
/// the poppet displacing the same volume on both sides).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReliefValve {
    /// The linearised poppet.
    pub poppet: Poppet,
    /// The operating point it is linearised about.
    pub operating: ValveOperatingPoint,
    /// Mean opening x̄ in m.
    pub opening_m: f64,
    /// Between two nodes (`true`) or to tank.
    pub in_line: bool,
}

impl ReliefValve {
    /// The valve's behaviour at ω: a shunt Y, or the series two-port
    /// Y·[[1, −1], [−1, 1]].
    pub fn behaviour(&self, omega: f64) -> super::Behaviour {
        let y = self.poppet.admittance(omega);
        if self.in_line {
            super::Behaviour::Admittance([[y, -y], [-y, y]])
        } else {
            super::Behaviour::Shunt(y)
        }
    }
}

/// The state of a check valve at its operating point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CheckState {
    /// Held shut (the pressure difference at or below the cracking
    /// pressure): a closed end on both sides.
    Closed,
    /// Open with the poppet floating on its spring: the poppet model.
    Opening {
        /// The linearised poppet.
        poppet: Poppet,
        /// Mean opening x̄ in m.
        opening_m: f64,
    },
    /// Open against its stop (the pressure difference at or above the
    /// full-open pressure): a fixed orifice, conductance K_c = Q̄/(2p̄)
    /// (the turbulent orifice linearised, common practice as for orifices).
    FullyOpen {
        /// K_c in m³/(s·Pa).
        conductance: f64,
    },
}

/// A spring-loaded check valve between two nodes, free flow from `from` to
/// `to`, in the state its operating point gives ([`CheckState`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CheckValve {
    /// Cracking pressure in Pa.
    pub cracking_pa: f64,
    /// Mean pressure difference from `from` to `to` in Pa.
    pub pressure_drop_pa: f64,
    /// Mean flow in m³/s (0 when closed).
    pub mean_flow_m3_s: f64,
    /// Open, opening or closed.
    pub state: CheckState,
}

impl CheckValve {
    /// Series admittance of the valve (flow per pressure difference).
    pub fn admittance(&self, omega: f64) -> C64 {
        match self.state {
            CheckState::Closed => C64::new(0.0, 0.0),
            CheckState::Opening { poppet, .. } => poppet.admittance(omega),
            CheckState::FullyOpen { conductance } => C64::new(conductance, 0.0),
        }
    }

    /// The two-port Y·[[1, −1], [−1, 1]] (all zero when closed).
    pub fn behaviour(&self, omega: f64) -> super::Behaviour {
        let y = self.admittance(omega);
        super::Behaviour::Admittance([[y, -y], [-y, y]])
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const RHO: f64 = 870.0;

    /// A small direct-acting relief valve (invented, typical orders of
    /// magnitude): 8 mm seat, 20 g, 60 N/mm, 150 bar cracking, 20 L/min at
    /// 160 bar.
    fn data(jet: Option<f64>) -> (PoppetData, ValveOperatingPoint) {
        (
            PoppetData {
                mass_kg: 0.02,
                spring_rate_n_m: 6e4,
                damping_n_s_m: 5.0,
                area_m2: PI * 0.004 * 0.004,
                jet_angle_rad: jet,
                flow_gain_m2_s: None,
                flow_pressure_coefficient: None,
            },
            ValveOperatingPoint {
                mean_flow_m3_s: 20e-3 / 60.0,
                pressure_drop_pa: 160e5,
                cracking_pa: 150e5,
            },
        )
    }

    /// The nonlinear steady valve, Q(p) = C_d w x(p) √(2p/ρ) with the
    /// force balance k x = A(p − p_c) − 2 C_d w x p cos θ (the equations of
    /// the module docs before linearising), for a numerical derivative.
    fn steady_flow(d: &PoppetData, op: &ValveOperatingPoint, cdw: f64, p: f64) -> f64 {
        let cos = d.jet_angle_rad.map_or(0.0, f64::cos);
        let x = d.area_m2 * (p - op.cracking_pa) / (d.spring_rate_n_m + 2.0 * cdw * p * cos);
        cdw * x * (2.0 * p / RHO).sqrt()
    }

    // The static slope Y(0) equals dQ/dp of the nonlinear steady valve
    // (central difference of the closed-form steady characteristic above;
    // Merritt 1967 ch. 5 orifice and flow-force equations), with and without
    // the flow force.
    #[test]
    fn static_slope_is_the_derivative_of_the_steady_characteristic() {
        for jet in [None, Some(69f64.to_radians())] {
            let (d, op) = data(jet);
            let (poppet, x0) = Poppet::linearise(&d, &op, RHO).unwrap();
            // C_d w from the operating point: Q̄ = C_d w x̄ √(2p̄/ρ)
            let cdw = op.mean_flow_m3_s / (x0 * (2.0 * op.pressure_drop_pa / RHO).sqrt());
            let q0 = steady_flow(&d, &op, cdw, op.pressure_drop_pa);
            assert!((q0 / op.mean_flow_m3_s - 1.0).abs() < 1e-12, "{q0}");
            let h = 1.0; // Pa
            let slope = (steady_flow(&d, &op, cdw, op.pressure_drop_pa + h)
                - steady_flow(&d, &op, cdw, op.pressure_drop_pa - h))
                / (2.0 * h);
            let y0 = poppet.admittance(1e-9);
            assert!(
                (poppet.static_slope() / slope - 1.0).abs() < 1e-6,
                "{jet:?}"
            );
            assert!((y0.re / slope - 1.0).abs() < 1e-6);
        }
    }

    // Limits of the admittance (module docs): k → ∞ is the fixed orifice
    // K_c = Q̄/(2p̄); m, b → 0 is K_c + (K_q + jωA)A/k; ω → ∞ is K_c.
    #[test]
    fn limits_of_the_admittance() {
        let (d, op) = data(None);
        let (p, _) = Poppet::linearise(&d, &op, RHO).unwrap();
        let kc = op.mean_flow_m3_s / (2.0 * op.pressure_drop_pa);
        assert!((p.flow_pressure_coefficient - kc).abs() < 1e-24);
        let omega = 2.0 * PI * 300.0;
        let stiff = Poppet {
            spring_rate_n_m: 1e18,
            ..p
        };
        assert!((stiff.admittance(omega) - kc).norm() < 1e-9 * kc);
        let light = Poppet {
            mass_kg: 0.0,
            damping_n_s_m: 0.0,
            ..p
        };
        let want =
            kc + C64::new(p.flow_gain_m2_s, omega * p.area_m2) * p.area_m2 / p.spring_rate_n_m;
        assert!((light.admittance(omega) - want).norm() < 1e-12 * want.norm());
        assert!((p.admittance(1e13) - kc).norm() < 1e-6 * kc);
    }

    // At ω_n = √(k/m) the denominator is jω_n b alone, so
    // Y − K_c = (K_q + jω_n A)A/(jω_n b) (by hand from the admittance).
    #[test]
    fn resonance_of_the_poppet() {
        let (d, op) = data(None);
        let (p, _) = Poppet::linearise(&d, &op, RHO).unwrap();
        let fn_hz = (6e4f64 / 0.02).sqrt() / (2.0 * PI);
        assert!((p.natural_frequency_hz() - fn_hz).abs() < 1e-9);
        assert!((fn_hz - 275.66).abs() < 0.01, "{fn_hz}"); // √(3e6)/(2π)
        let w = 2.0 * PI * fn_hz;
        let want = C64::new(p.flow_gain_m2_s, w * p.area_m2) * p.area_m2 / C64::new(0.0, w * 5.0);
        let got = p.admittance(w) - p.flow_pressure_coefficient;
        assert!((got - want).norm() < 1e-9 * want.norm());
        assert!((p.damping_ratio() - 5.0 / (2.0 * (6e4f64 * 0.02).sqrt())).abs() < 1e-12);
    }

    // The active band is where Re Y < 0: at its ends Re Y = 0 and inside it
    // is negative (the roots of the quadratic in the module docs); with
    // A b ≥ K_q m there is none.
    #[test]
    fn active_band_is_where_the_real_part_is_negative() {
        let (d, op) = data(None);
        let (p, _) = Poppet::linearise(&d, &op, RHO).unwrap();
        assert!(p.area_m2 * p.damping_n_s_m < p.flow_gain_m2_s * p.mass_kg);
        let (lo, hi) = p.active_band_hz().expect("lightly damped: active");
        let hi = hi.unwrap();
        assert!(lo > p.natural_frequency_hz() && hi > lo, "{lo} {hi}");
        let re = |f: f64| p.admittance(2.0 * PI * f).re;
        let scale = p.flow_pressure_coefficient;
        assert!(re(lo).abs() < 1e-6 * scale && re(hi).abs() < 1e-6 * scale);
        assert!(re((lo * hi).sqrt()) < 0.0 && re(0.9 * lo) > 0.0 && re(1.1 * hi) > 0.0);
        let damped = Poppet {
            damping_n_s_m: p.flow_gain_m2_s * p.mass_kg / p.area_m2,
            ..p
        };
        assert_eq!(damped.active_band_hz(), None);
        let no_kc = Poppet {
            flow_pressure_coefficient: 0.0,
            ..p
        };
        let (lo0, hi0) = no_kc.active_band_hz().unwrap();
        assert!(hi0.is_none() && no_kc.admittance(2.0 * PI * lo0 * 1.01).re < 0.0);
    }

    #[test]
    fn a_valve_below_its_cracking_pressure_is_closed() {
        let (d, mut op) = data(None);
        op.pressure_drop_pa = 140e5;
        let err = Poppet::linearise(&d, &op, RHO).unwrap_err().to_string();
        assert!(err.contains("closed at this operating point"), "{err}");
        // a jet force larger than A(p − p_c) cannot be balanced
        let (d, mut op) = data(Some(0.0));
        op.pressure_drop_pa = 150.1e5;
        assert!(matches!(
            Poppet::linearise(&d, &op, RHO),
            Err(ValveError::FlowForceCloses { .. })
        ));
    }

    #[test]
    fn check_valve_states() {
        let (d, op) = data(None);
        let (poppet, x) = Poppet::linearise(&d, &op, RHO).unwrap();
        let w = 2.0 * PI * 100.0;
        let closed = CheckValve {
            cracking_pa: 1e5,
            pressure_drop_pa: 0.5e5,
            mean_flow_m3_s: 0.0,
            state: CheckState::Closed,
        };
        assert_eq!(closed.admittance(w), C64::new(0.0, 0.0));
        let open = CheckValve {
            state: CheckState::Opening {
                poppet,
                opening_m: x,
            },
            ..closed
        };
        assert_eq!(open.admittance(w), poppet.admittance(w));
        let full = CheckValve {
            state: CheckState::FullyOpen { conductance: 2e-11 },
            ..closed
        };
        assert_eq!(full.admittance(w), C64::new(2e-11, 0.0));
    }
}

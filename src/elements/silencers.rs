//! Silencers: elements added to a circuit to cut pressure ripple.
//!
//! Each is a line (reusing [`crate::line`], so it carries the same laminar
//! friction as every tube) ended by a termination:
//!
//! | kind | connection | model |
//! |---|---|---|
//! | [`SideBranch`] | shunt at a node | a tube closed at its far end: Y = tanh(Γl)/Zc |
//! | [`ExpansionChamber`] | two-port | a tube of larger bore, in line |
//! | [`HelmholtzResonator`] | shunt at a node | a neck (a rigid line of effective length l') ended by a cavity of liquid, C = V/B |
//! | [`PulsationDamper`] | shunt at a node | a neck ended by a gas-charged vessel: gas compliance from the precharge by the gas laws, plus the oil in the vessel |
//!
//! The input admittance of a line of length l ended by a load admittance Y_L
//! follows from its transfer matrix (methods.md §2.1) as
//! Y_in = (tanh(Γl)/Zc + Y_L) / (1 + Zc Y_L tanh(Γl)); tanh(Γl) is taken as
//! (1 − E²)/(1 + E²) with E = e^{−Γl}, which never overflows.

use super::{Behaviour, ChamberPorts, Tube};
use crate::line::{LineProperties, Propagation};
use num_complex::Complex64 as C64;
use std::f64::consts::PI;

const ONE: C64 = C64 { re: 1.0, im: 0.0 };

/// Rayleigh's end correction of a flanged circular opening, per end, as a
/// fraction of the opening's radius: δ = 8/(3π) ≈ 0.849 (the mass loading of
/// a piston in an infinite baffle at low frequency; Rayleigh, *The Theory of
/// Sound*, vol. 2, 1896; Kinsler et al., *Fundamentals of Acoustics*, 4th ed.,
/// 2000, §10.8, which rounds it to 0.85). It comes from air acoustics; the
/// same kinematics hold for a liquid in the plane-wave range.
pub const FLANGED_END_CORRECTION: f64 = 8.0 / (3.0 * PI);

/// The standard atmosphere, 101 325 Pa (ISO 2533), used to turn gauge into
/// absolute pressure.
pub const STANDARD_ATMOSPHERE_PA: f64 = 101_325.0;

/// tanh(Γl) from E = e^{−Γl} (|E| ≤ 1, no overflow); for short lines the
/// library's complex tanh is used directly because 1 − E² cancels.
pub fn tanh_gamma_l(prop: &Propagation, length_m: f64) -> C64 {
    let gl = prop.gamma * length_m;
    if gl.norm() < 0.5 {
        gl.tanh()
    } else {
        let e2 = (-2.0 * gl).exp();
        (ONE - e2) / (ONE + e2)
    }
}

/// The admittance at the open end of a line of length l whose far end is
/// loaded by the admittance `y_load` (to the reference):
/// Y_in = (tanh(Γl)/Zc + Y_L)/(1 + Zc Y_L tanh(Γl)).
pub fn loaded_line_admittance(prop: &Propagation, length_m: f64, y_load: C64) -> C64 {
    let t = tanh_gamma_l(prop, length_m);
    (t / prop.zc + y_load) / (ONE + prop.zc * y_load * t)
}

/// A closed side branch (quarter-wave tube): a tube teed off the line at one
/// end and closed at the other. Its input impedance is Zc coth(Γl), which
/// for a lossless tube vanishes at f = (2n − 1)c/(4l): the branch shorts the
/// line there and blocks transmission (Munjal, *Acoustics of Ducts and
/// Mufflers*, 2014, §3; methods.md §4).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SideBranch {
    /// The branch tube (its line carries the friction model and the wall).
    pub tube: Tube,
}

impl SideBranch {
    /// Shunt admittance tanh(Γl)/Zc at the tee.
    pub fn admittance(&self, prop: &Propagation) -> C64 {
        tanh_gamma_l(prop, self.tube.line.length_m) / prop.zc
    }

    /// The lossless quarter-wave frequency c0/(4l) in Hz.
    pub fn quarter_wave_hz(&self) -> f64 {
        self.tube.line.properties.wave_speed_m_s() / (4.0 * self.tube.line.length_m)
    }
}

/// An in-line expansion chamber: a tube of larger bore between two nodes.
/// Between anechoic pipes of area ratio m = A_chamber/A_pipe its lossless
/// transmission loss is TL = 10 log10[1 + ¼(m − 1/m)² sin²(kl)] (Davis et al.,
/// NACA Report 1192, 1954; Munjal 2014, §3), largest at kl = (2n − 1)π/2.
/// It holds below the chamber's first cut-on frequency
/// ([`crate::diagnostics::plane_wave_limit_hz`]).
///
/// With `ports` its inlet and outlet pipes, and pipes extended into the
/// shell, are part of the element ([`ChamberPorts`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExpansionChamber {
    /// The chamber (its shell) as a tube.
    pub tube: Tube,
    /// The inlet and outlet geometry, when given.
    pub ports: Option<ChamberPorts>,
}

impl ExpansionChamber {
    /// The chamber's two-port at ω given the shell's propagation: the tube,
    /// or the chain through its ports.
    pub fn behaviour(&self, omega: f64, prop: &Propagation) -> Behaviour {
        match &self.ports {
            None => self.tube.behaviour(prop),
            Some(p) if self.needs_branch_flows() => {
                Behaviour::Transfer(p.transfer(omega, &self.tube, prop))
            }
            Some(p) => p
                .admittance(omega, &self.tube, prop)
                .map_or(Behaviour::Nothing, Behaviour::Admittance),
        }
    }

    /// Whether the network gives it branch-flow unknowns (a lossless
    /// shell, whose ports share its friction model).
    pub fn needs_branch_flows(&self) -> bool {
        self.tube.needs_branch_flows()
    }

    /// Lossless frequency of the first transmission-loss maximum, c0/(4l).
    pub fn first_maximum_hz(&self) -> f64 {
        self.tube.line.properties.wave_speed_m_s() / (4.0 * self.tube.line.length_m)
    }
}

/// Properties of a rigid neck (a drilled passage) of the given bore in a
/// fluid described by `like` (density, viscosity, friction model); its wave
/// speed is the liquid's, B_eff = `bulk_modulus_pa`.
pub fn rigid_neck(like: &LineProperties, bore_m: f64, bulk_modulus_pa: f64) -> LineProperties {
    LineProperties {
        radius_m: bore_m / 2.0,
        effective_bulk_modulus_pa: bulk_modulus_pa,
        ..*like
    }
}

/// A Helmholtz resonator teed off the line: a neck of length l and bore d
/// ended by a cavity of liquid of volume V.
///
/// Lumped, the neck is an inertance L = ρl'/A and the cavity a compliance
/// C = V/B, resonating at f_H = 1/(2π√(LC)) = (c/2π)√(A/(l'V)) (Kinsler et al.
/// 2000, §10.8). l' is the neck length plus an end correction of
/// [`FLANGED_END_CORRECTION`]·r at each end when `end_correction` is set.
/// In the network the neck is a line of length l' (laminar friction by
/// default, which sets the resonator's damping) ended by the cavity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HelmholtzResonator {
    /// Cavity volume V in m³.
    pub volume_m3: f64,
    /// Bulk modulus of the liquid in the cavity in Pa.
    pub bulk_modulus_pa: f64,
    /// Physical neck length l in m.
    pub neck_length_m: f64,
    /// The neck's line properties (bore, fluid, friction model).
    pub neck: LineProperties,
    /// Whether the end corrections are added to the neck length.
    pub end_correction: bool,
}

impl HelmholtzResonator {
    /// Neck length used by the model: l, or l + 2·δ·r with end corrections.
    pub fn effective_neck_length_m(&self) -> f64 {
        self.neck_length_with(self.end_correction)
    }

    fn neck_length_with(&self, corrected: bool) -> f64 {
        let extra = if corrected {
            2.0 * FLANGED_END_CORRECTION * self.neck.radius_m
        } else {
            0.0
        };
        self.neck_length_m + extra
    }

    /// Cavity compliance C = V/B in m³/Pa.
    pub fn compliance(&self) -> f64 {
        self.volume_m3 / self.bulk_modulus_pa
    }

    /// The lumped resonance frequency f_H = 1/(2π√(LC)) with L = ρl'/A, with
    /// or without the end corrections (the textbook formula).
    pub fn lumped_frequency_hz(&self, with_end_correction: bool) -> f64 {
        let inertance = self.neck.density_kg_m3 * self.neck_length_with(with_end_correction)
            / self.neck.area_m2();
        1.0 / (2.0 * PI * (inertance * self.compliance()).sqrt())
    }

    /// Shunt admittance at the tee: the neck line ended by the cavity.
    pub fn admittance(&self, omega: f64, neck: &Propagation) -> C64 {
        let cavity = C64::new(0.0, omega * self.compliance());
        loaded_line_admittance(neck, self.effective_neck_length_m(), cavity)
    }
}

/// A gas-charged pulsation damper (a bladder or diaphragm vessel) teed off
/// the line through a neck.
///
/// Precharged with gas volume V0 at absolute pressure p0 and brought to the
/// absolute mean operating pressure p_m ≥ p0 slowly (isothermally, at the
/// precharge temperature: Boyle's law), the gas occupies V_g = V0·p0/p_m and
/// the rest of the vessel, V0 − V_g, fills with oil. Ripple compresses the
/// gas polytropically, p V^κ = const, so its compliance is
/// C_g = V_g/(κ p_m); the oil adds C_oil = (V0 − V_g)/B (methods-2.md §2).
/// The neck is a rigid line (length l, bore d, laminar friction by default)
/// ended by C = C_g + C_oil; lumped it resonates at f_r = 1/(2π√(L_n C)),
/// L_n = ρl/A. Above f_r the damper shunts the ripple to its gas.
///
/// **Bottomed.** Below the precharge (p_m < p0) the separator rests on the
/// shell's oil port (the bladder on its poppet valve): the gas stays at V0
/// and p0, out of the circuit, and the vessel holds no oil. What the circuit
/// still sees is the oil port, the neck, closed at its inner end: a short
/// closed side branch (common practice; methods-2.md §2). The damper then
/// does almost nothing, which is a real state of a machine whose mean
/// pressure falls below the precharge (a load-sensing pump at standby).
///
/// No temperature model: the gas is taken at the precharge temperature.
/// The vessel is lumped, which holds while it is small against the
/// wavelength in its gas (common practice). The speed of sound in nitrogen
/// at a few hundred bar is of the order of 350 m/s (a value recalled from
/// memory), so a 0.5 L vessel is lumped up to several hundred Hz.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PulsationDamper {
    /// Gas volume at the precharge, V0, in m³ (the vessel's nominal gas volume).
    pub gas_volume_m3: f64,
    /// Precharge pressure p0 in Pa, absolute.
    pub precharge_pa: f64,
    /// Mean operating pressure p_m in Pa, absolute.
    pub operating_pa: f64,
    /// Polytropic index κ of the ripple compression (1 isothermal, 1.4 an
    /// ideal diatomic gas such as nitrogen compressed adiabatically).
    pub polytropic_index: f64,
    /// Bulk modulus of the oil in the vessel in Pa.
    pub bulk_modulus_pa: f64,
    /// Neck length l in m.
    pub neck_length_m: f64,
    /// The neck's line properties.
    pub neck: LineProperties,
}

impl PulsationDamper {
    /// Whether the mean operating pressure is below the precharge, so that
    /// the separator rests on the oil port and the gas is out of the circuit.
    pub fn is_bottomed(&self) -> bool {
        self.operating_pa < self.precharge_pa
    }

    /// Gas volume in the circuit at the operating pressure, V_g = V0·p0/p_m
    /// (Boyle's law), in m³; zero when the damper is bottomed.
    pub fn gas_volume_at_operating_m3(&self) -> f64 {
        if self.is_bottomed() {
            0.0
        } else {
            self.gas_volume_m3 * self.precharge_pa / self.operating_pa
        }
    }

    /// Oil in the vessel at the operating pressure, V0 − V_g, in m³; zero
    /// when the damper is bottomed.
    pub fn oil_volume_m3(&self) -> f64 {
        if self.is_bottomed() {
            0.0
        } else {
            self.gas_volume_m3 - self.gas_volume_at_operating_m3()
        }
    }

    /// Gas compliance C_g = V_g/(κ p_m) in m³/Pa (zero when bottomed).
    pub fn gas_compliance(&self) -> f64 {
        self.gas_volume_at_operating_m3() / (self.polytropic_index * self.operating_pa)
    }

    /// Total compliance of the vessel, C_g + (V0 − V_g)/B, in m³/Pa (zero
    /// when bottomed: the neck is then closed at its inner end).
    pub fn compliance(&self) -> f64 {
        self.gas_compliance() + self.oil_volume_m3() / self.bulk_modulus_pa
    }

    /// Neck inertance L_n = ρl/A in kg/m⁴.
    pub fn neck_inertance(&self) -> f64 {
        self.neck.density_kg_m3 * self.neck_length_m / self.neck.area_m2()
    }

    /// Lumped resonance f_r = 1/(2π√(L_n C)) in Hz, with C the total
    /// compliance; `None` when the damper is bottomed (no compliance).
    pub fn lumped_resonance_hz(&self) -> Option<f64> {
        let c = self.compliance();
        (c > 0.0).then(|| 1.0 / (2.0 * PI * (self.neck_inertance() * c).sqrt()))
    }

    /// Energy stored in the gas relative to atmospheric pressure, for an
    /// isothermal expansion from its pressure p to the atmosphere:
    /// W = p V ln(p/p_atm), in J, with p V = p0 V0 (Boyle's law) and p the
    /// larger of p_m and p0 (a bottomed damper keeps its precharge). An
    /// indication of the hazard, not a rating.
    pub fn stored_energy_j(&self) -> f64 {
        let p = self.operating_pa.max(self.precharge_pa);
        self.precharge_pa * self.gas_volume_m3 * (p / STANDARD_ATMOSPHERE_PA).ln()
    }

    /// Shunt admittance at the tee: the neck ended by the vessel's compliance.
    pub fn admittance(&self, omega: f64, neck: &Propagation) -> C64 {
        let vessel = C64::new(0.0, omega * self.compliance());
        loaded_line_admittance(neck, self.neck_length_m, vessel)
    }
}

/// The caution printed whenever ripline sizes or reports a gas-charged
/// damper.
pub const PRESSURE_VESSEL_CAUTION: &str = "CAUTION: a gas-charged pulsation damper is a pressure vessel and stores energy in its gas even when the circuit is at rest. Choose a vessel rated above the circuit's highest pressure, precharge it with dry nitrogen only (never air or oxygen) and only as its maker instructs, relieve the fluid pressure before any work, and follow the local pressure-equipment codes and licensed professional practice. ripline's sizing is a small-signal estimate, not a design approval.";

/// The safety caution of every report about a whole circuit (the README's
/// "Safety" section in one paragraph): hydraulic systems store dangerous
/// energy, ripline's model is small-signal, and the decisions belong to
/// qualified people under local codes and licensed practice.
pub const STORED_ENERGY_CAUTION: &str = "CAUTION: hydraulic systems store dangerous energy: fluid under pressure, raised loads and gas-charged accumulators, which are pressure vessels. A fine jet of oil can penetrate skin. Never work on a pressurised circuit; relieve stored pressure and energy first. ripline predicts small-signal pressure ripple from a linear model; it does not predict mean pressures, pressure peaks from transients, fatigue life or burst margins, and its results are only as good as the data given to it. Decisions about the safe design, installation, operation and maintenance of hydraulic equipment and pressure vessels belong to qualified people following the component makers' instructions, the applicable local codes and standards, and licensed professional practice.";

#[cfg(test)]
mod tests {
    use super::*;
    use crate::line::{Line, LineModel};
    use crate::wall::Wall;

    const RHO: f64 = 870.0;
    const C0: f64 = 1350.0;

    fn props(radius_m: f64, model: LineModel) -> LineProperties {
        LineProperties {
            radius_m,
            density_kg_m3: RHO,
            kinematic_viscosity_m2_s: 32e-6,
            effective_bulk_modulus_pa: RHO * C0 * C0,
            model,
            viscoelastic_wall: None,
            mean_flow: crate::line::MeanFlow::Unknown,
        }
    }

    // The integration tests (tests/silencers.rs) check the Helmholtz
    // frequency, the damper's gas volume and resonance and the side branch
    // against published values; these unit tests cover what they do not.

    // Below its precharge the damper is its neck closed at the inner end:
    // the same admittance as a closed side branch of the neck's length and
    // bore, tanh(Γl)/Zc (Kinsler et al. 2000, ch. 10, as below).
    #[test]
    fn a_bottomed_damper_is_its_neck_closed_at_the_end() {
        let neck = props(0.01, LineModel::Laminar);
        let d = PulsationDamper {
            gas_volume_m3: 1e-3,
            precharge_pa: 60e5,
            operating_pa: 50e5,
            polytropic_index: 1.4,
            bulk_modulus_pa: 1.6e9,
            neck_length_m: 0.1,
            neck,
        };
        assert!(d.is_bottomed());
        assert_eq!(d.compliance(), 0.0);
        assert_eq!(d.lumped_resonance_hz(), None);
        // the gas keeps its precharge: p0 V0 ln(p0/p_atm)
        let w = 60e5 * 1e-3 * (60e5 / STANDARD_ATMOSPHERE_PA).ln();
        assert!((d.stored_energy_j() - w).abs() < 1e-9 * w);
        for f in [50.0, 400.0, 3000.0] {
            let prop = neck.propagation(2.0 * PI * f);
            let closed = tanh_gamma_l(&prop, 0.1) / prop.zc;
            assert!((d.admittance(2.0 * PI * f, &prop) - closed).norm() <= 1e-12 * closed.norm());
        }
    }

    // A closed lossless tube: Z_in = −jZ0 cot(kl), so Y = j tan(kl)/Z0
    // (Kinsler et al. 2000, ch. 10); at kl = π/4, Y = j/Z0.
    #[test]
    fn side_branch_admittance_is_tan_kl_over_z0() {
        let p = props(0.005, LineModel::Lossless);
        let tube = Tube {
            line: Line {
                properties: p,
                length_m: 0.5,
            },
            wall: Wall::Rigid,
        };
        let branch = SideBranch { tube };
        assert!((branch.quarter_wave_hz() - 675.0).abs() < 1e-9);
        let omega = 2.0 * PI * 337.5; // kl = π/4
        let y = branch.admittance(&p.propagation(omega));
        assert!((y * p.z0() - C64::new(0.0, 1.0)).norm() < 1e-12);
    }

    // A lossless line loaded by Y_L has Y_in = (j tan(kl)/Z0 + Y_L)/(1 + jZ0 Y_L tan(kl))
    // (input impedance of a loaded line, Kinsler et al. 2000, ch. 10); with a
    // matched load Y_L = 1/Z0 the line is invisible: Y_in = 1/Z0.
    #[test]
    fn matched_load_is_seen_through_any_length() {
        let p = props(0.005, LineModel::Laminar);
        for f in [3.0, 120.0, 2500.0] {
            let prop = p.propagation(2.0 * PI * f);
            for l in [0.01, 0.7, 40.0] {
                let y = loaded_line_admittance(&prop, l, prop.zc.inv());
                assert!((y * prop.zc - ONE).norm() < 1e-12, "{f} Hz, {l} m");
            }
        }
    }
}

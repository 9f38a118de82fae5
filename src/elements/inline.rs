//! Flow-through silencers: the in-line pulsation damper, and the inlet and
//! outlet geometry of an in-line expansion chamber. Both are chains of
//! transfer matrices (methods.md §2.1: [Pa; Qa] = T [Pb; Qb]) built from
//! lines and shunts:
//!
//! * a line of length l: T = [[cosh Γl, Zc sinh Γl], [sinh Γl/Zc, cosh Γl]];
//! * a shunt admittance Y at a junction (pressure continuous, flow
//!   divided): T = [[1, 0], [Y, 1]] (Munjal, *Acoustics of Ducts and
//!   Mufflers*, 2014, ch. 3, for both).
//!
//! The network stamps a lossy one by its admittance matrix, found by
//! eliminating the internal junctions one after the other along the chain
//! ([`ladder_admittance`]): the result is symmetric by construction (the
//! chain is reciprocal) and needs no products of growing hyperbolic
//! functions, whose round-off would leave det T = 1 only to about
//! |T|²·ε. A lossless one is stamped by its transfer matrix (branch-flow
//! unknowns), which stays finite where the admittance has poles.

use super::silencers::tanh_gamma_l;
use super::{Behaviour, PulsationDamper, Tube};
use crate::line::{Admittance2, Line, LineProperties, Propagation, Transfer2};
use num_complex::Complex64 as C64;
use std::f64::consts::PI;

const ONE: C64 = C64 { re: 1.0, im: 0.0 };
const ZERO: C64 = C64 { re: 0.0, im: 0.0 };

/// The product of two transfer matrices, `a` then `b` along the flow.
pub fn cascade(a: &Transfer2, b: &Transfer2) -> Transfer2 {
    let mut m = [[ZERO; 2]; 2];
    for (i, row) in m.iter_mut().enumerate() {
        for (j, v) in row.iter_mut().enumerate() {
            *v = a[i][0] * b[0][j] + a[i][1] * b[1][j];
        }
    }
    m
}

/// The transfer matrix of a shunt admittance at a junction, [[1, 0], [Y, 1]].
pub fn shunt_transfer(y: C64) -> Transfer2 {
    [[ONE, ZERO], [y, ONE]]
}

/// One piece of a chain of lines with shunts at their junctions.
#[derive(Debug, Clone, Copy)]
pub enum Rung<'a> {
    /// A line of the given properties and length, with its propagation.
    Line(&'a LineProperties, f64, &'a Propagation),
    /// A shunt admittance at the junction where it stands.
    Shunt(C64),
}

/// The admittance two-port of a chain of lines with shunts at their
/// junctions, from its first end to its last, by eliminating each junction
/// in turn: with [[A, B], [B, D]] the chain so far (first end, current
/// junction), a shunt y adds to D, and a line [[c, −s], [−s, c]] (c = coth(Γl)/Zc,
/// s = csch(Γl)/Zc) gives, with p = D + c, A' = A − B²/p, B' = B s/p,
/// D' = c − s²/p (Gaussian elimination of the junction's row). Lines of zero
/// length join their ends. `None` when the chain has no line of nonzero
/// length or a line has no admittance form (Γl = 0).
pub fn ladder_admittance(rungs: &[Rung<'_>]) -> Option<Admittance2> {
    let mut first_shunt = ZERO;
    let mut chain: Option<(C64, C64, C64)> = None;
    for rung in rungs {
        match (*rung, chain.as_mut()) {
            (Rung::Shunt(y), None) => first_shunt += y,
            (Rung::Shunt(y), Some((_, _, d))) => *d += y,
            (Rung::Line(props, l, prop), state) => {
                if l == 0.0 {
                    continue;
                }
                let y = Line {
                    properties: *props,
                    length_m: l,
                }
                .admittance(prop)?;
                let (c, s) = (y[0][0], -y[0][1]);
                chain = Some(match state {
                    None => (c + first_shunt, -s, c),
                    Some(&mut (a, b, d)) => {
                        let p = d + c;
                        (a - b * b / p, b * s / p, c - s * s / p)
                    }
                });
            }
        }
    }
    let (a, b, d) = chain?;
    Some([[a, b], [b, d]])
}

/// The transfer matrix of a line of the given properties and length at ω
/// (the identity for zero length).
fn line_transfer(properties: &LineProperties, length_m: f64, prop: &Propagation) -> Transfer2 {
    if length_m == 0.0 {
        return shunt_transfer(ZERO);
    }
    Line {
        properties: *properties,
        length_m,
    }
    .transfer(prop)
}

/// An in-line (flow-through) gas-charged pulsation damper: the flow enters
/// through an inlet port, passes the vessel's oil chamber under the gas
/// separator, and leaves through an outlet port of the same size. The gas
/// charge is that of [`PulsationDamper`] (Boyle's law to the operating
/// pressure, polytropic ripple; methods-2 §2), and the oil in the flow path
/// adds V_oil/B:
///
/// T = T_port · [[1, 0], [jωC, 1]] · T_port,  C = C_gas + (V₀ − V_g + V_oil)/B.
///
/// With no side neck in series with the gas, it acts as a pure compliance
/// on the line up to the ports' own resonances: between pipes of
/// impedance Z0 and with short ports its transmission loss is
/// TL = 10 log10(1 + (ωCZ0/2)²), 3 dB at f = 1/(πCZ0). A pressure vessel:
/// the caution of [`super::PRESSURE_VESSEL_CAUTION`] applies.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InlineDamper {
    /// The gas charge; its `neck` is the port passage (rigid, liquid wave
    /// speed) and `neck_length_m` each port's length.
    pub vessel: PulsationDamper,
    /// Liquid volume of the flow path through the vessel, in m³.
    pub oil_volume_m3: f64,
}

impl InlineDamper {
    /// Total compliance at the junction, C_gas + (V₀ − V_g + V_oil)/B, in m³/Pa.
    pub fn compliance(&self) -> f64 {
        self.vessel.compliance() + self.oil_volume_m3 / self.vessel.bulk_modulus_pa
    }

    /// The frequency 1/(πCZ0) where a short-ported damper's transmission
    /// loss between pipes of impedance `z0` reaches 3 dB, in Hz.
    pub fn corner_frequency_hz(&self, z0_pa_s_m3: f64) -> f64 {
        1.0 / (PI * self.compliance() * z0_pa_s_m3)
    }

    /// The transfer matrix from inlet to outlet at ω, given the ports'
    /// propagation.
    pub fn transfer(&self, omega: f64, port: &Propagation) -> Transfer2 {
        let tp = line_transfer(&self.vessel.neck, self.vessel.neck_length_m, port);
        let vessel = shunt_transfer(C64::new(0.0, omega * self.compliance()));
        cascade(&cascade(&tp, &vessel), &tp)
    }

    /// Whether its ports are lossless (then it is stamped by its transfer
    /// matrix).
    pub fn is_lossless(&self) -> bool {
        self.vessel.neck.is_lossless()
    }

    /// What the network stamps at ω: the admittance of the chain, or its
    /// transfer matrix when lossless.
    pub fn behaviour(&self, omega: f64, port: &Propagation) -> Behaviour {
        if self.is_lossless() {
            return Behaviour::Transfer(self.transfer(omega, port));
        }
        let (neck, l) = (&self.vessel.neck, self.vessel.neck_length_m);
        ladder_admittance(&[
            Rung::Line(neck, l, port),
            Rung::Shunt(C64::new(0.0, omega * self.compliance())),
            Rung::Line(neck, l, port),
        ])
        .map_or(Behaviour::Nothing, Behaviour::Admittance)
    }
}

/// The inlet and outlet geometry of an in-line expansion chamber: a port
/// pipe at each end (length outside the shell), and optionally extended
/// into the shell. An extended pipe leaves an annular cavity between itself
/// and the shell's end plate, closed at the plate: a side branch of length
/// e teed off at the pipe's mouth, admittance tanh(Γe)/Zc (a quarter-wave
/// notch near c/(4e); Munjal 2014, ch. 3, extended-tube chambers). The
/// chamber is then, along the flow,
///
/// pipe (l_p + e_in) · branch(e_in) · shell (L − e_in − e_out) · branch(e_out) · pipe (e_out + l_p).
///
/// The annulus is taken with the shell's area less the pipe's bore area (the
/// pipe wall neglected), as a line of the same area with the shell's wave
/// speed; its laminar friction is that of a circular bore of equal area,
/// which underestimates the friction of a narrow annulus (a plane-wave
/// estimate, common practice).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ChamberPorts {
    /// The port pipes (rigid, the liquid's wave speed).
    pub pipe: LineProperties,
    /// Length of each port outside the shell, in m.
    pub length_m: f64,
    /// How far the inlet pipe reaches into the shell, in m.
    pub inlet_extension_m: f64,
    /// How far the outlet pipe reaches into the shell, in m.
    pub outlet_extension_m: f64,
}

impl ChamberPorts {
    /// The annular cavity beside an extended pipe in a shell of the given
    /// properties.
    pub fn annulus(&self, shell: &LineProperties) -> LineProperties {
        let area = shell.area_m2() - self.pipe.area_m2();
        LineProperties {
            radius_m: (area / PI).sqrt(),
            mean_flow: crate::line::MeanFlow::Unknown,
            ..*shell
        }
    }

    /// The chain at ω: inlet pipe, inlet annulus, shell, outlet annulus,
    /// outlet pipe, as (pipe propagation, branch admittances, shell length).
    fn pieces(&self, omega: f64, shell: &Tube) -> (Propagation, C64, C64, f64) {
        let pipe_prop = self.pipe.propagation(omega);
        let annulus = self.annulus(&shell.line.properties);
        let annulus_prop = annulus.propagation(omega);
        let branch = |e: f64| {
            if e == 0.0 {
                ZERO
            } else {
                tanh_gamma_l(&annulus_prop, e) / annulus_prop.zc
            }
        };
        let (ei, eo) = (self.inlet_extension_m, self.outlet_extension_m);
        (
            pipe_prop,
            branch(ei),
            branch(eo),
            shell.line.length_m - ei - eo,
        )
    }

    /// The chamber's transfer matrix at ω: `shell` is the shell tube and
    /// `shell_prop` its propagation.
    pub fn transfer(&self, omega: f64, shell: &Tube, shell_prop: &Propagation) -> Transfer2 {
        let (pipe_prop, y_in, y_out, body) = self.pieces(omega, shell);
        let (ei, eo) = (self.inlet_extension_m, self.outlet_extension_m);
        let parts = [
            line_transfer(&self.pipe, self.length_m + ei, &pipe_prop),
            shunt_transfer(y_in),
            line_transfer(&shell.line.properties, body, shell_prop),
            shunt_transfer(y_out),
            line_transfer(&self.pipe, eo + self.length_m, &pipe_prop),
        ];
        parts[1..].iter().fold(parts[0], |t, p| cascade(&t, p))
    }

    /// The chamber's admittance two-port at ω ([`ladder_admittance`]).
    pub fn admittance(
        &self,
        omega: f64,
        shell: &Tube,
        shell_prop: &Propagation,
    ) -> Option<Admittance2> {
        let (pipe_prop, y_in, y_out, body) = self.pieces(omega, shell);
        let (ei, eo) = (self.inlet_extension_m, self.outlet_extension_m);
        ladder_admittance(&[
            Rung::Line(&self.pipe, self.length_m + ei, &pipe_prop),
            Rung::Shunt(y_in),
            Rung::Line(&shell.line.properties, body, shell_prop),
            Rung::Shunt(y_out),
            Rung::Line(&self.pipe, eo + self.length_m, &pipe_prop),
        ])
    }

    /// The lossless quarter-wave frequency c/(4e) of an annulus of length
    /// e (Hz), `None` for no extension.
    pub fn notch_hz(&self, shell: &LineProperties, extension_m: f64) -> Option<f64> {
        (extension_m > 0.0).then(|| shell.wave_speed_m_s() / (4.0 * extension_m))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::line::{LineModel, MeanFlow};
    use crate::wall::Wall;

    const RHO: f64 = 870.0;
    const C0: f64 = 1350.0;

    fn props(bore: f64, model: LineModel) -> LineProperties {
        LineProperties {
            radius_m: bore / 2.0,
            density_kg_m3: RHO,
            kinematic_viscosity_m2_s: 32e-6,
            effective_bulk_modulus_pa: RHO * C0 * C0,
            model,
            viscoelastic_wall: None,
            mean_flow: MeanFlow::Unknown,
        }
    }

    /// TL between equal pipes of impedance z0: 20 log10(|T11 + T12/z0 +
    /// z0 T21 + T22|/2) (Munjal 2014, ch. 3).
    fn tl(t: &Transfer2, z0: f64) -> f64 {
        20.0 * ((t[0][0] + t[0][1] / z0 + t[1][0] * z0 + t[1][1]).norm() / 2.0).log10()
    }

    // A lumped compliance between equal anechoic pipes: TL = 10 log10(1 +
    // (ωCZ0/2)²) (the shunt formula of Munjal 2014, ch. 3); a damper with
    // very short ports follows it, 3 dB at 1/(πCZ0).
    #[test]
    fn short_ported_damper_is_a_compliance() {
        let port = props(0.02, LineModel::Lossless);
        let d = InlineDamper {
            vessel: PulsationDamper {
                gas_volume_m3: 0.5e-3,
                precharge_pa: 60e5,
                operating_pa: 100e5,
                polytropic_index: 1.4,
                bulk_modulus_pa: RHO * C0 * C0,
                neck_length_m: 1e-6,
                neck: port,
            },
            oil_volume_m3: 0.1e-3,
        };
        // C = (0.3 L)/(1.4·100 bar) + (0.2 L + 0.1 L)/B
        let c = 0.3e-3 / (1.4 * 100e5) + 0.3e-3 / (RHO * C0 * C0);
        assert!((d.compliance() / c - 1.0).abs() < 1e-12);
        let z0 = props(0.016, LineModel::Lossless).z0();
        let fc = d.corner_frequency_hz(z0);
        for f in [0.3 * fc, fc, 4.0 * fc] {
            let w = 2.0 * PI * f;
            let t = d.transfer(w, &port.propagation(w));
            let want = 10.0 * (1.0 + (w * c * z0 / 2.0).powi(2)).log10();
            assert!(
                (tl(&t, z0) - want).abs() < 1e-6,
                "{f}: {} vs {want}",
                tl(&t, z0)
            );
        }
        assert!((10.0 * 2f64.log10() - 3.0103).abs() < 1e-4);
    }

    fn shell(length: f64, bore: f64) -> Tube {
        Tube {
            line: Line {
                properties: props(bore, LineModel::Lossless),
                length_m: length,
            },
            wall: Wall::Rigid,
        }
    }

    // The admittance found by eliminating the junctions is the transfer
    // matrix's: Y = (1/T12)[[T22, −det T], [−1, T11]] (methods.md §7.1),
    // for a lossy chamber with both pipes extended and for a damper.
    #[test]
    fn ladder_admittance_agrees_with_the_transfer_chain() {
        let check = |t: Transfer2, y: Admittance2| {
            let det = t[0][0] * t[1][1] - t[0][1] * t[1][0];
            let want = [
                [t[1][1] / t[0][1], -det / t[0][1]],
                [-ONE / t[0][1], t[0][0] / t[0][1]],
            ];
            for i in 0..2 {
                for j in 0..2 {
                    assert!((y[i][j] - want[i][j]).norm() < 1e-9 * want[i][j].norm());
                }
            }
            assert_eq!(y[0][1], y[1][0]);
        };
        let mut s = shell(0.5, 0.08);
        s.line.properties.model = LineModel::Laminar;
        let ports = ChamberPorts {
            pipe: props(0.02, LineModel::Laminar),
            length_m: 0.03,
            inlet_extension_m: 0.12,
            outlet_extension_m: 0.07,
        };
        let port = props(0.02, LineModel::Laminar);
        let d = InlineDamper {
            vessel: PulsationDamper {
                gas_volume_m3: 0.2e-3,
                precharge_pa: 60e5,
                operating_pa: 100e5,
                polytropic_index: 1.4,
                bulk_modulus_pa: RHO * C0 * C0,
                neck_length_m: 0.04,
                neck: port,
            },
            oil_volume_m3: 0.0,
        };
        for f in [3.0, 140.0, 1100.0] {
            let w = 2.0 * PI * f;
            let prop = s.line.properties.propagation(w);
            check(
                ports.transfer(w, &s, &prop),
                ports.admittance(w, &s, &prop).unwrap(),
            );
            let pp = port.propagation(w);
            let Behaviour::Admittance(y) = d.behaviour(w, &pp) else {
                panic!("a lossy damper is stamped by its admittance")
            };
            check(d.transfer(w, &pp), y);
        }
    }

    // With no ports and no extensions the chamber is its shell; an inlet
    // extended by L/2 puts the annulus's quarter-wave notch c/(4e) (Kinsler
    // et al., *Fundamentals of Acoustics*, 2000, §10, closed side branch) on
    // the plain chamber's first trough kL = π, where Davis et al.'s TL is 0.
    #[test]
    fn extended_inlet_notch_fills_the_first_trough() {
        let s = shell(0.4, 0.08);
        let mut ports = ChamberPorts {
            pipe: props(0.02, LineModel::Lossless),
            length_m: 0.0,
            inlet_extension_m: 0.0,
            outlet_extension_m: 0.0,
        };
        let f = C0 / (2.0 * 0.4); // kL = π
        let w = 2.0 * PI * f;
        let prop = s.line.properties.propagation(w);
        let plain = ports.transfer(w, &s, &prop);
        let alone = s.line.transfer(&prop);
        for i in 0..2 {
            for j in 0..2 {
                assert!((plain[i][j] - alone[i][j]).norm() < 1e-12 * (1.0 + alone[i][j].norm()));
            }
        }
        let z0 = ports.pipe.z0();
        assert!(tl(&plain, z0).abs() < 1e-9);
        ports.inlet_extension_m = 0.2;
        assert!((ports.notch_hz(&s.line.properties, 0.2).unwrap() - f).abs() < 1e-9);
        let tuned = ports.transfer(w, &s, &prop);
        assert!(tl(&tuned, z0) > 100.0, "{}", tl(&tuned, z0));
        // off the notch the extension leaves a finite TL
        let w2 = 0.7 * w;
        let prop2 = s.line.properties.propagation(w2);
        let off = tl(&ports.transfer(w2, &s, &prop2), z0);
        assert!(off.is_finite() && off > 0.0 && off < 60.0, "{off}");
    }
}

//! Elements, pumps and gas pressures in words, for the results that list
//! them (`check`, `silencer`, `tune`): each description states the inputs
//! in their units and what follows from them.

use crate::Circuit;
use crate::diagnostics::plane_wave_limit_hz;
use crate::elements::STANDARD_ATMOSPHERE_PA;
use crate::elements::{CheckState, Connection, CylinderPorts, Element, ElementKind, Poppet};
use crate::render::table::{Quantity, sig};

/// A gas pressure (absolute, Pa) as written in circuit files, gauge first:
/// "120.0 bar gauge (121.0 bar abs)". Gauge pressure is absolute minus the
/// standard atmosphere, 1.01325 bar (ISO 2533).
pub fn gas_pressure(abs_pa: f64) -> String {
    format!(
        "{} bar gauge ({} bar abs)",
        sig((abs_pa - STANDARD_ATMOSPHERE_PA) / 1e5, 4),
        sig(abs_pa / 1e5, 4)
    )
}

/// "at node `x`" or "`a` → `b`".
pub fn place(circuit: &Circuit, e: &Element) -> String {
    match e.connection {
        Connection::Series { a, b } => {
            format!("`{}` → `{}`", circuit.nodes[a].name, circuit.nodes[b].name)
        }
        Connection::Shunt { at } => format!("at node `{}`", circuit.nodes[at].name),
    }
}

/// What a silencer element is and its characteristic frequencies, one
/// sentence per entry. `pipe`, if known, is the pipe it sits on (for an
/// expansion chamber's area ratio). Empty for other kinds.
pub fn silencer(e: &Element, pipe: Option<&crate::line::Line>) -> Vec<String> {
    let len = |m: f64| Quantity::Length.show(m);
    let vol = |m3: f64| Quantity::Volume.show(m3);
    match &e.kind {
        ElementKind::SideBranch(s) => vec![format!(
            "closed side branch, length {}, bore {}: quarter-wave frequency c/4l = {:.2} Hz (lossless estimate)",
            len(s.tube.line.length_m),
            len(s.tube.bore_m()),
            s.quarter_wave_hz()
        )],
        ElementKind::ExpansionChamber(c) => {
            let mut v = vec![format!(
                "expansion chamber, length {}, bore {}: first TL maximum near c/4l = {:.2} Hz; plane waves only below {:.0} Hz (first cut-on)",
                len(c.tube.line.length_m),
                len(c.tube.bore_m()),
                c.first_maximum_hz(),
                plane_wave_limit_hz(c.tube.line.properties.wave_speed_m_s(), c.tube.bore_m())
            )];
            if let Some(p) = &c.ports {
                let shell = &c.tube.line.properties;
                let notch = |e: f64, end: &str| {
                    p.notch_hz(shell, e).map_or(String::new(), |f| {
                        format!(
                            "; {end} pipe reaches {} in: annulus notch near c/4e = {f:.2} Hz",
                            len(e)
                        )
                    })
                };
                v.push(format!(
                    "ports {} bore, {} long outside the shell{}{}",
                    len(p.pipe.radius_m * 2.0),
                    len(p.length_m),
                    notch(p.inlet_extension_m, "inlet"),
                    notch(p.outlet_extension_m, "outlet")
                ));
            }
            if let Some(p) = pipe {
                let m = c.tube.line.properties.area_m2() / p.properties.area_m2();
                v.push(format!(
                    "area ratio m = {m:.3} against the upstream pipe: lossless TL maximum 20·log10((m + 1/m)/2) = {:.2} dB (Davis et al. 1954)",
                    20.0 * ((m + 1.0 / m) / 2.0).log10()
                ));
            }
            v
        }
        ElementKind::Helmholtz(h) => vec![format!(
            "Helmholtz resonator, cavity {}, neck {} long, {} bore: f_H = {:.2} Hz with end corrections 2 × 0.85r ({:.2} Hz without); the model uses {}",
            vol(h.volume_m3),
            len(h.neck_length_m),
            len(h.neck.radius_m * 2.0),
            h.lumped_frequency_hz(true),
            h.lumped_frequency_hz(false),
            if h.end_correction {
                "the corrected neck"
            } else {
                "the bare neck length"
            }
        )],
        ElementKind::Damper(d) => {
            let mut v = vec![format!(
                "gas-charged pulsation damper, gas volume {} at a precharge of {}, operating at {}, polytropic index {:.2}",
                vol(d.gas_volume_m3),
                gas_pressure(d.precharge_pa),
                gas_pressure(d.operating_pa),
                d.polytropic_index
            )];
            let energy = sig(d.stored_energy_j() / 1e3, 3);
            match d.lumped_resonance_hz() {
                Some(f_r) => v.extend([
                    format!(
                        "gas volume at the operating pressure {} (Boyle's law, isothermal charging), oil in the vessel {}; compliance {:.4e} m³/Pa",
                        vol(d.gas_volume_at_operating_m3()),
                        vol(d.oil_volume_m3()),
                        d.compliance()
                    ),
                    format!(
                        "neck {} long, {} bore: lumped resonance {f_r:.2} Hz (it attenuates above it); gas energy at the operating pressure about {energy} kJ",
                        len(d.neck_length_m),
                        len(d.neck.radius_m * 2.0),
                    ),
                ]),
                None => v.push(format!(
                    "BOTTOMED: the operating pressure is below the precharge, so the gas is out of the circuit and only the neck ({} long, {} bore) remains, closed at its end; the gas still holds about {energy} kJ at its precharge",
                    len(d.neck_length_m),
                    len(d.neck.radius_m * 2.0),
                )),
            }
            v
        }
        ElementKind::InlineDamper(d) => {
            let g = &d.vessel;
            let mut v = vec![
                format!(
                    "in-line (flow-through) pulsation damper, gas volume {} at a precharge of {}, operating at {}, polytropic index {:.2}",
                    vol(g.gas_volume_m3),
                    gas_pressure(g.precharge_pa),
                    gas_pressure(g.operating_pa),
                    g.polytropic_index
                ),
                format!(
                    "gas volume at the operating pressure {} (Boyle's law), oil in the vessel {} plus {} in the flow path; compliance {:.4e} m³/Pa; ports {} long, {} bore; gas energy about {} kJ",
                    vol(g.gas_volume_at_operating_m3()),
                    vol(g.oil_volume_m3()),
                    vol(d.oil_volume_m3),
                    d.compliance(),
                    len(g.neck_length_m),
                    len(g.neck.radius_m * 2.0),
                    sig(g.stored_energy_j() / 1e3, 3)
                ),
            ];
            if g.is_bottomed() {
                v.push(
                    "BOTTOMED: the operating pressure is below the precharge, so the gas is out of the circuit and only the oil in the flow path and the ports remain".into(),
                );
            }
            if let Some(p) = pipe.filter(|_| d.compliance() > 0.0) {
                v.push(format!(
                    "against the upstream pipe (Z0 = {:.4e} Pa·s/m³) its transmission loss passes 3 dB at 1/(πCZ0) = {:.2} Hz (short ports) and rises 6 dB per octave above",
                    p.properties.z0(),
                    d.corner_frequency_hz(p.properties.z0())
                ));
            }
            v
        }
        _ => Vec::new(),
    }
}

/// The linearised poppet: its coefficients, natural frequency and where it
/// delivers power.
fn poppet_lines(p: &Poppet, opening_m: f64) -> Vec<String> {
    let mut v = vec![
        format!(
            "poppet {:.1} g on {:.1} N/mm (flow force adds {:.1} N/mm), damping {:.3} N·s/m, feedback area {:.2} mm² ({:.2} mm² net of the flow force); mean opening {:.4} mm",
            p.mass_kg * 1e3,
            p.spring_rate_n_m / 1e3,
            p.flow_force_stiffness_n_m / 1e3,
            p.damping_n_s_m,
            p.area_m2 * 1e6,
            p.net_area_m2 * 1e6,
            opening_m * 1e3
        ),
        format!(
            "flow gain K_q {:.4e} m²/s, flow-pressure coefficient K_c {:.4e} m³/(s·Pa), static slope {:.3} L/min per bar",
            p.flow_gain_m2_s,
            p.flow_pressure_coefficient,
            p.static_slope() * 6e4 * 1e5
        ),
        format!(
            "natural frequency {:.1} Hz, damping ratio {:.3} (linear model about the operating point)",
            p.natural_frequency_hz(),
            p.damping_ratio()
        ),
    ];
    match p.active_band_hz() {
        None => v.push("it absorbs ripple power at every frequency".into()),
        Some((lo, hi)) => v.push(format!(
            "negative resistance (it delivers ripple power) from {lo:.1} Hz {}",
            hi.map_or("upwards".to_string(), |h| format!("to {h:.1} Hz"))
        )),
    }
    v
}

/// What a valve or cylinder is, at its operating point, for `check`;
/// empty for other kinds.
pub fn component(kind: &ElementKind) -> Vec<String> {
    match kind {
        ElementKind::ReliefValve(r) => {
            let mut v = vec![format!(
                "relief valve {}, cracking at {:.2} bar, operating at {:.2} bar with {:.2} L/min",
                if r.in_line {
                    "between its nodes"
                } else {
                    "to tank"
                },
                r.operating.cracking_pa / 1e5,
                r.operating.pressure_drop_pa / 1e5,
                r.operating.mean_flow_m3_s * 6e4
            )];
            v.extend(poppet_lines(&r.poppet, r.opening_m));
            v
        }
        ElementKind::CheckValve(c) => {
            let head = format!(
                "check valve, cracking at {:.2} bar, mean pressure difference {:.2} bar",
                c.cracking_pa / 1e5,
                c.pressure_drop_pa / 1e5
            );
            match c.state {
                CheckState::Closed => vec![head, "closed: a closed end on both sides".into()],
                CheckState::FullyOpen { conductance } => vec![
                    head,
                    format!(
                        "fully open with {:.2} L/min: a fixed orifice of resistance {:.4e} Pa·s/m³",
                        c.mean_flow_m3_s * 6e4,
                        1.0 / conductance
                    ),
                ],
                CheckState::Opening { poppet, opening_m } => {
                    let mut v = vec![
                        head,
                        format!("open with {:.2} L/min", c.mean_flow_m3_s * 6e4),
                    ];
                    v.extend(poppet_lines(&poppet, opening_m));
                    v
                }
            }
        }
        ElementKind::Cylinder(c) => {
            let ports = match c.ports {
                CylinderPorts::Both => "both ports",
                CylinderPorts::Cap => "cap port only",
                CylinderPorts::Rod => "rod port only",
            };
            vec![
                format!(
                    "cylinder {:.1}/{:.1} mm, stroke {:.1} mm at {:.1} mm from the cap end ({ports}); chambers {:.4} L (cap) and {:.4} L (rod)",
                    c.bore_m * 1e3,
                    c.rod_m * 1e3,
                    c.stroke_m * 1e3,
                    c.position_m * 1e3,
                    c.cap_volume_m3() * 1e3,
                    c.rod_volume_m3() * 1e3
                ),
                format!(
                    "load {:.1} kg, stiffness {:.4e} N/m, damping {:.4e} N·s/m; oil-column stiffness {:.4e} N/m",
                    c.load_mass_kg,
                    c.load_stiffness_n_m,
                    c.damping_n_s_m,
                    c.hydraulic_stiffness_n_m()
                ),
                format!(
                    "oil-column resonance with the ports blocked √((k + k_h)/M)/2π = {:.2} Hz",
                    c.natural_frequency_hz()
                ),
            ]
        }
        _ => Vec::new(),
    }
}

//! Report lines for the components with dynamics (valves, cylinders), for
//! `check`.

use ripline::elements::{CheckState, CylinderPorts, ElementKind, Poppet};

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

/// What a valve or cylinder is, at its operating point; empty for other
/// kinds.
pub fn describe(kind: &ElementKind) -> Vec<String> {
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

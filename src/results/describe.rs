//! Elements, pumps and gas pressures in words, for the results that list
//! them (`check`, `silencer`, `tune`): each description states the inputs
//! in their units and what follows from them.

use crate::Circuit;
use crate::diagnostics::plane_wave_limit_hz;
use crate::elements::STANDARD_ATMOSPHERE_PA;
use crate::elements::{Connection, Element, ElementKind, Tube};
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
pub fn silencer(e: &Element, pipe: Option<&Tube>) -> Vec<String> {
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
            if let Some(p) = pipe {
                let m = c.tube.line.properties.area_m2() / p.line.properties.area_m2();
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
        _ => Vec::new(),
    }
}

//! Warnings: inputs that are valid but where a model is near or beyond the
//! limits of its validity, or where ripline made an assumption the user
//! should confirm. Library functions return them; the CLI prints them on
//! standard error, each naming the element or node and the limit.

use crate::circuit::Circuit;
use crate::elements::ElementKind;
use std::fmt;

/// A warning about a circuit or a result.
#[derive(Debug, Clone, PartialEq)]
pub struct Warning {
    /// What it is about (an element, a node, a frequency).
    pub subject: String,
    /// What is wrong and which limit applies.
    pub message: String,
}

impl fmt::Display for Warning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.subject, self.message)
    }
}

/// First cut-on frequency of a non-planar (first asymmetric) acoustic mode
/// in a circular duct of bore D: f = 1.8412·c/(π D) (Munjal, *Acoustics of
/// Ducts and Mufflers*, 2014, §2.3; 1.8412 is the first zero of J1').
/// Above it the one-dimensional line models no longer hold.
pub fn plane_wave_limit_hz(wave_speed_m_s: f64, bore_m: f64) -> f64 {
    1.841_18 * wave_speed_m_s / (std::f64::consts::PI * bore_m)
}

/// Warnings for a circuit solved up to `max_freq_hz`: line ends taken as
/// closed, and tubes whose plane-wave limit lies below `max_freq_hz`.
pub fn circuit_warnings(circuit: &Circuit, max_freq_hz: f64) -> Vec<Warning> {
    let mut out = Vec::new();
    for id in circuit.implicit_closed_ends() {
        out.push(Warning {
            subject: format!("node `{}`", circuit.nodes[id].name),
            message: "a line ends here with no termination; it is treated as a closed end (add `kind: closed_end` to say so)".into(),
        });
    }
    for e in &circuit.elements {
        out.extend(silencer_warning(e, max_freq_hz));
        if let ElementKind::Tube(t) = &e.kind {
            let limit = plane_wave_limit_hz(t.line.properties.wave_speed_m_s(), t.bore_m());
            if max_freq_hz > limit {
                out.push(Warning {
                    subject: format!("tube `{}`", e.name),
                    message: format!(
                        "frequencies up to {max_freq_hz:.0} Hz exceed its plane-wave limit {limit:.0} Hz (first cut-on, 1.84·c/(πD)): results above it are not valid"
                    ),
                });
            }
        }
    }
    out
}

/// Validity limits of the silencer models: a chamber or branch above its
/// plane-wave limit, and a resonator cavity that is not small against the
/// wavelength (its size taken as the cube root of its volume; common
/// practice: lumped below λ/8). A damper's gas is always lumped (its own
/// wavelength is not known without gas properties); see PulsationDamper.
fn silencer_warning(e: &crate::elements::Element, max_freq_hz: f64) -> Option<Warning> {
    let (tube, vessel) = match &e.kind {
        ElementKind::SideBranch(s) => (Some(&s.tube), None),
        ElementKind::ExpansionChamber(c) => (Some(&c.tube), None),
        ElementKind::Helmholtz(h) => (None, Some((h.volume_m3, h.neck.wave_speed_m_s()))),
        _ => (None, None),
    };
    let subject = format!("{} `{}`", e.kind.name(), e.name);
    if let Some(t) = tube {
        let limit = plane_wave_limit_hz(t.line.properties.wave_speed_m_s(), t.bore_m());
        if max_freq_hz > limit {
            return Some(Warning {
                subject,
                message: format!(
                    "frequencies up to {max_freq_hz:.0} Hz exceed its plane-wave limit {limit:.0} Hz (first cut-on, 1.84·c/(πD)): results above it are not valid"
                ),
            });
        }
    }
    if let Some((volume, c)) = vessel {
        let size = volume.cbrt();
        let limit = c / (8.0 * size);
        if max_freq_hz > limit {
            return Some(Warning {
                subject,
                message: format!(
                    "its cavity (about {:.0} mm across) is not small against the wavelength above {limit:.0} Hz (λ/8): the lumped cavity model is approximate up to {max_freq_hz:.0} Hz",
                    size * 1e3
                ),
            });
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    // Munjal (2014) §2.3: cut-on of the (1,0) mode at k·r = 1.8412. For a
    // 100 mm bore and c = 1300 m/s: 1.8412·1300/(π·0.1) = 7619 Hz.
    #[test]
    fn plane_wave_limit_of_a_large_bore() {
        let f = plane_wave_limit_hz(1300.0, 0.1);
        assert!((f - 7619.0).abs() < 1.0, "{f}");
    }
}

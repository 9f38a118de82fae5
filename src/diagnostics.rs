//! Warnings: inputs that are valid but where a model is near or beyond the
//! limits of its validity, or where ripline made an assumption the user
//! should confirm. Library functions return them; the CLI prints them on
//! standard error, each naming the element or node and the limit.

use crate::circuit::Circuit;
use crate::elements::ElementKind;
use crate::network::{ILL_CONDITIONED, Solution};
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

/// A warning when a solution lies so close to an undamped resonance that
/// round-off may have cost more than 8 significant digits.
pub fn conditioning_warning(solution: &Solution) -> Option<Warning> {
    (solution.condition > ILL_CONDITIONED).then(|| Warning {
        subject: format!("{:.3} Hz", solution.freq_hz),
        message: format!(
            "the network is nearly singular here (condition number {:.1e}): an undamped or lightly damped resonance lies at or very near this frequency; about {:.0} significant digits are lost to round-off",
            solution.condition,
            solution.condition.log10()
        ),
    })
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

//! Warnings: inputs that are valid but where a model is near or beyond the
//! limits of its validity, or where ripline made an assumption the user
//! should confirm. Library functions return them; the CLI prints them on
//! standard error, each naming the element or node and the limit.

use crate::circuit::Circuit;
use crate::elements::ElementKind;
use crate::line::LineModel;
use crate::line::turbulence::{BLASIUS_MAX_REYNOLDS, TRANSITION_REYNOLDS};
use crate::network::ILL_CONDITIONED;
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
/// closed, lines whose plane-wave limit lies below `max_freq_hz`, and lines
/// whose mean flow is turbulent ([`mean_flow_warnings`]).
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
        out.extend(bottomed_damper_warning(e));
        if let Some(line) = e.kind.line() {
            let p = &line.properties;
            let limit = plane_wave_limit_hz(p.wave_speed_m_s(), 2.0 * p.radius_m);
            if max_freq_hz > limit {
                out.push(Warning {
                    subject: format!("{} `{}`", e.kind.name(), e.name),
                    message: format!(
                        "frequencies up to {max_freq_hz:.0} Hz exceed its plane-wave limit {limit:.0} Hz (first cut-on, 1.84·c/(πD)): results above it are not valid"
                    ),
                });
            }
        }
    }
    out.extend(mean_flow_warnings(circuit));
    out.extend(component_warnings(circuit));
    out.extend(source_map_warnings(circuit, None));
    out
}

/// Notices about pumps whose source comes from a source file
/// ([`crate::source::map`]): a file of one speed has its flow ripple scaled
/// in proportion to speed (said, not silent); an operating point outside a
/// map (beyond its grid tolerances) has the map's edge values held. The
/// speeds checked are each pump's speed and speed range, or `speeds`
/// (lowest, highest in rev/s) for the pumps of a sweep, when given.
pub fn source_map_warnings(circuit: &Circuit, speeds: Option<(f64, f64)>) -> Vec<Warning> {
    use crate::source::FlowRipple;
    use crate::source::map::{bar, describe_point};
    let mut out = Vec::new();
    for p in &circuit.pumps {
        let FlowRipple::Map(m) = &p.flow_ripple else {
            continue;
        };
        let subject = format!("pump `{}`", p.name);
        if m.single_speed() && speeds.is_none() {
            let (n, _) = m.speed_range_rev_s();
            out.push(Warning {
                subject: subject.clone(),
                message: format!(
                    "its source file holds one speed ({:.0} rpm{}): at other speeds its source flow ripple is scaled in proportion to speed and its source impedance kept against frequency (common practice; a source map of several speeds is interpolated instead)",
                    n * 60.0,
                    if m.conditions() > 1 { ", several mean pressures" } else { "" }
                ),
            });
        }
        let (lo, hi) = speeds
            .or(p.speed_range_rev_s)
            .map_or((p.speed_rev_s, p.speed_rev_s), |(a, b)| {
                (a.min(p.speed_rev_s), b.max(p.speed_rev_s))
            });
        let (at_lo, at_hi) = (m.outside(lo), m.outside(hi));
        if !(at_lo.speed || at_hi.speed || at_lo.pressure) {
            continue;
        }
        let speed_text = if speeds.is_some() || p.speed_range_rev_s.is_some() {
            format!("speeds {:.0} .. {:.0} rpm", lo * 60.0, hi * 60.0)
        } else {
            describe_point(p.speed_rev_s, None)
        };
        let point = match m.pressure_pa() {
            Some(pa) => format!("{speed_text} at {}", bar(pa)),
            None => format!("{speed_text} with no mean pressure given"),
        };
        out.push(Warning {
            subject,
            message: format!(
                "the operating point ({point}) lies outside its source map ({}): the values at the map's edge are held there",
                m.describe_range()
            ),
        });
    }
    out
}

/// How close (a fraction of the natural frequency) a pump harmonic's band
/// may come to a valve's natural frequency before it is flagged: 10 %,
/// common practice (the default `--margin` of `response`).
pub const VALVE_RESONANCE_MARGIN: f64 = 0.10;

/// The linearised poppet of a relief valve or of a check valve that floats
/// on its spring, if the element is one.
fn poppet_of(kind: &ElementKind) -> Option<&crate::elements::Poppet> {
    match kind {
        ElementKind::ReliefValve(v) => Some(&v.poppet),
        ElementKind::CheckValve(crate::elements::CheckValve {
            state: crate::elements::CheckState::Opening { poppet, .. },
            ..
        }) => Some(poppet),
        _ => None,
    }
}

/// Warnings about the components with dynamics: a pump harmonic whose band
/// over the pump's speed range (its `speed_range`, else its speed) crosses
/// or comes within [`VALVE_RESONANCE_MARGIN`] of the natural frequency of a
/// valve poppet with a resonance peak (damping ratio below 1/√2), or
/// overlaps the band where the linearised valve delivers power (negative
/// resistance, [`crate::elements::Poppet::active_band_hz`]) — margins of the
/// linear model, not predictions of a valve's stability; a hose whose wall
/// data against pressure do not reach the circuit's mean pressure (end
/// values held); and a bottomed in-line damper.
pub fn component_warnings(circuit: &Circuit) -> Vec<Warning> {
    use crate::analysis::response::{Coverage, crossings, harmonic_bands};
    let mut out = Vec::new();
    for e in &circuit.elements {
        let subject = format!("{} `{}`", e.kind.name(), e.name);
        if let ElementKind::Hose(h) = &e.kind
            && let Some(p) = &h.pressure
            && p.data.at(p.mean_pressure_pa).held
        {
            let pts = p.data.points();
            out.push(Warning {
                subject,
                message: format!(
                    "the mean pressure {:.1} bar lies outside its wall data ({:.1} .. {:.1} bar): the wave speed and loss factor of the nearer end are held, not extrapolated",
                    p.mean_pressure_pa / 1e5,
                    pts[0].pressure_pa / 1e5,
                    pts[pts.len() - 1].pressure_pa / 1e5
                ),
            });
            continue;
        }
        if let ElementKind::InlineDamper(d) = &e.kind
            && d.vessel.is_bottomed()
        {
            out.push(Warning {
                subject,
                message: format!(
                    "the mean pressure {:.2} bar abs is below its precharge {:.2} bar abs: the in-line damper is bottomed, its gas is out of the circuit and only the oil in its flow path and its ports remain; it damps almost nothing here",
                    d.vessel.operating_pa / 1e5,
                    d.vessel.precharge_pa / 1e5
                ),
            });
            continue;
        }
        let Some(poppet) = poppet_of(&e.kind) else {
            continue;
        };
        let fn_hz = poppet.natural_frequency_hz();
        let active = poppet.active_band_hz();
        for pump in &circuit.pumps {
            let range = pump
                .speed_range_rev_s
                .unwrap_or((pump.speed_rev_s, pump.speed_rev_s));
            let bands = harmonic_bands(pump.pumping_elements, range, circuit.harmonics);
            let mut found: Vec<String> = crossings(fn_hz, &bands, VALVE_RESONANCE_MARGIN)
                .into_iter()
                .map(|c| match c.coverage {
                    Coverage::Crossed { speed_rev_s } => format!(
                        "harmonic {} crosses it at {:.0} rpm",
                        c.order,
                        speed_rev_s * 60.0
                    ),
                    Coverage::Near { gap, speed_rev_s } => format!(
                        "harmonic {} passes within {:.1} % of it (at {:.0} rpm)",
                        c.order,
                        gap * 100.0,
                        speed_rev_s * 60.0
                    ),
                })
                .collect();
            // an overdamped poppet (ζ ≥ 1/√2) has no resonance peak (a
            // second-order system's magnitude peak needs ζ < 1/√2)
            if !found.is_empty() && poppet.damping_ratio() < std::f64::consts::FRAC_1_SQRT_2 {
                found.dedup();
                out.push(Warning {
                    subject: subject.clone(),
                    message: format!(
                        "its poppet's natural frequency {fn_hz:.1} Hz (damping ratio {:.3}, linearised about its operating point) meets the harmonics of pump `{}` over {:.0}..{:.0} rpm: {}. Near it the valve can amplify ripple or chatter; this is a margin of the linear model only: confirm with the valve maker's data or a test",
                        poppet.damping_ratio(),
                        pump.name,
                        range.0 * 60.0,
                        range.1 * 60.0,
                        found.join("; ")
                    ),
                });
            }
            if let Some((lo, hi)) = active {
                let top = hi.unwrap_or(f64::INFINITY);
                let hit: Vec<String> = bands
                    .iter()
                    .filter(|b| b.high_hz >= lo && b.low_hz <= top)
                    .map(|b| b.order.to_string())
                    .collect();
                if !hit.is_empty() {
                    let upper = hi.map_or("upwards".to_string(), |h| format!("to {h:.1} Hz"));
                    out.push(Warning {
                        subject: subject.clone(),
                        message: format!(
                            "the linearised valve has negative resistance (it delivers ripple power) from {lo:.1} Hz {upper}, which harmonic(s) {} of pump `{}` reach: more damping (damping ≥ K_q·m/A = {:.3} N·s/m removes it) or a test is needed; a margin of the linear model only",
                            hit.join(", "),
                            pump.name,
                            poppet.flow_gain_m2_s * poppet.mass_kg / poppet.area_m2
                        ),
                    });
                }
            }
        }
    }
    out
}

/// Warnings about mean flow: every tube or hose whose mean flow is turbulent
/// (Re above [`TRANSITION_REYNOLDS`]), saying whether the linearised
/// turbulent correction is applied; lines with the turbulent model whose mean
/// flow is unknown; pumps whose mean flow has no way to tank.
pub fn mean_flow_warnings(circuit: &Circuit) -> Vec<Warning> {
    let mut out = Vec::new();
    let mut any_turbulent_model = false;
    for e in &circuit.elements {
        let Some(line) = e.kind.line() else { continue };
        let p = &line.properties;
        let subject = format!("{} `{}`", e.kind.name(), e.name);
        let turbulent_model = p.model == LineModel::Turbulent;
        any_turbulent_model |= turbulent_model;
        match (p.mean_flow.flow_m3_s(), p.reynolds_number()) {
            (Some(q), Some(re)) if re > TRANSITION_REYNOLDS => {
                let flow = format!("mean flow {:.2} L/min gives Re = {re:.0}", q.abs() * 6e4);
                let message = if turbulent_model {
                    let range = if re > BLASIUS_MAX_REYNOLDS {
                        " (beyond the Blasius range, Re ≤ 1e5: an estimate)"
                    } else {
                        ""
                    };
                    format!(
                        "{flow} (turbulent above {TRANSITION_REYNOLDS:.0}): the linearised turbulent friction correction ΔR' = {:.4e} Pa·s/m⁴ is added{range}",
                        p.turbulent_resistance_per_m()
                    )
                } else {
                    format!(
                        "{flow} (turbulent above {TRANSITION_REYNOLDS:.0}): the laminar model underestimates its damping; set `line_model: turbulent` (or `model: turbulent` on this line) to add the linearised turbulent correction"
                    )
                };
                out.push(Warning { subject, message });
            }
            (None, _) if turbulent_model => out.push(Warning {
                subject,
                message: "its mean flow is unknown (no pump displacement, or no path to tank), so no turbulent correction is applied: give the line a `mean_flow`".into(),
            }),
            _ => {}
        }
    }
    if any_turbulent_model {
        for pump in crate::meanflow::mean_flows(circuit).trapped_pumps {
            out.push(Warning {
                subject: format!("pump `{pump}`"),
                message: "its mean flow has no way to a tank, load valve or anechoic end, so the mean flows of its lines are unknown".into(),
            });
        }
    }
    out
}

/// A warning when a solution at `freq_hz` with condition number
/// `condition` ([`crate::network::Solution::condition`]) lies so close to an undamped
/// resonance that round-off may have cost more than 8 significant digits.
pub fn conditioning_warning(freq_hz: f64, condition: f64) -> Option<Warning> {
    (condition > ILL_CONDITIONED).then(|| Warning {
        subject: format!("{freq_hz:.3} Hz"),
        message: format!(
            "the network is nearly singular here (condition number {condition:.1e}): an undamped or lightly damped resonance lies at or very near this frequency; about {:.0} significant digits are lost to round-off",
            condition.log10()
        ),
    })
}

/// A pulsation damper whose mean operating pressure is below its precharge:
/// it is bottomed, its gas out of the circuit
/// ([`crate::elements::PulsationDamper::is_bottomed`]).
pub fn bottomed_damper_warning(e: &crate::elements::Element) -> Option<Warning> {
    let ElementKind::Damper(d) = &e.kind else {
        return None;
    };
    d.is_bottomed().then(|| Warning {
        subject: format!("{} `{}`", e.kind.name(), e.name),
        message: format!(
            "the mean pressure {:.2} bar abs is below its precharge {:.2} bar abs: the damper is bottomed (the separator rests on the oil port), its gas is out of the circuit and only its neck remains, a short closed branch; it damps almost nothing here",
            d.operating_pa / 1e5,
            d.precharge_pa / 1e5
        ),
    })
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

//! Practical rules a sized silencer should keep, beside the parameter
//! bounds: what `ripline tune` flags in a design (or, with hard rules,
//! refuses).
//!
//! * **Precharge band** of a gas-charged damper: p0 between 0.6 and 0.9 of
//!   the lowest operating pressure it meets (absolute pressures; over an
//!   envelope, the lowest of its points). Common practice, not from a
//!   standard: below about 0.6 the gas is squeezed into a small part of the
//!   vessel and the separator works hard; above about 0.9 the separator can
//!   reach the oil port at the lowest pressure (and above 1 the damper is
//!   bottomed: its gas leaves the circuit, Boyle's law V = V0·p0/p).
//! * **Vessel size**: the gas volume V0 of a damper or the cavity volume of
//!   a Helmholtz resonator at most a given volume (what fits and is sold).
//! * **Length** of a side branch or an expansion chamber at most a given
//!   length (what fits on the machine).
//! * **Neck velocity**: the mean flow's velocity v = Q/A through the
//!   narrowest passage that carries it (an in-line damper's ports, an
//!   expansion chamber's port pipes or shell) at the highest speed of the
//!   range, at most a given velocity. Teed-off silencers carry no mean flow
//!   in their necks. The default, 6 m/s, is the upper end of the usual
//!   velocity range of pressure lines (common practice, recalled from
//!   trade handbooks, not a standard).

use crate::elements::ElementKind;
use serde::Serialize;

/// Which rule.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RuleKind {
    /// Precharge as a fraction of the lowest operating pressure.
    PrechargeFraction,
    /// Vessel (gas or cavity) volume.
    VesselSize,
    /// Length of a side branch or chamber.
    Length,
    /// Mean-flow velocity through the neck or ports.
    NeckVelocity,
}

impl RuleKind {
    /// How reports name it.
    pub fn describe(self) -> &'static str {
        match self {
            RuleKind::PrechargeFraction => "precharge / lowest operating pressure (abs)",
            RuleKind::VesselSize => "vessel volume",
            RuleKind::Length => "length",
            RuleKind::NeckVelocity => "mean-flow velocity in the neck or ports",
        }
    }

    /// The SI unit of its values (`1` for a ratio).
    pub fn unit(self) -> &'static str {
        match self {
            RuleKind::PrechargeFraction => "1",
            RuleKind::VesselSize => "m3",
            RuleKind::Length => "m",
            RuleKind::NeckVelocity => "m/s",
        }
    }
}

/// The rules a design is checked against.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rules {
    /// Precharge over the lowest operating pressure (both absolute): the
    /// allowed band (low, high).
    pub precharge_fraction: (f64, f64),
    /// Largest gas or cavity volume, m³.
    pub max_volume_m3: Option<f64>,
    /// Largest side-branch or chamber length, m.
    pub max_length_m: Option<f64>,
    /// Largest mean-flow velocity in the neck or ports, m/s.
    pub max_neck_velocity_m_s: f64,
    /// Whether a design that breaks a rule counts as invalid in the search
    /// (otherwise it is only flagged).
    pub hard: bool,
}

impl Default for Rules {
    /// The 0.6–0.9 precharge band and 6 m/s in the neck (common practice,
    /// see the module documentation), no size limits, flagged only.
    fn default() -> Self {
        Rules {
            precharge_fraction: (0.6, 0.9),
            max_volume_m3: None,
            max_length_m: None,
            max_neck_velocity_m_s: 6.0,
            hard: false,
        }
    }
}

/// One rule applied to one design.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct RuleCheck {
    /// The rule.
    pub rule: RuleKind,
    /// The design's value (SI, see [`RuleKind::unit`]).
    pub value: f64,
    /// The lowest allowed value (`None`: no lower limit).
    pub low: Option<f64>,
    /// The highest allowed value.
    pub high: f64,
    /// Whether the design keeps it.
    pub pass: bool,
}

/// What the rules need to know besides the element.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RuleContext {
    /// The lowest operating pressure (absolute, Pa) the element's gas meets
    /// (dampers only).
    pub lowest_operating_pa: Option<f64>,
    /// The largest mean flow through the element over the speed range,
    /// m³/s (0 for a teed-off element).
    pub mean_flow_m3_s: f64,
}

impl Rules {
    /// Every rule that applies to `kind`, checked.
    pub fn check(&self, kind: &ElementKind, context: &RuleContext) -> Vec<RuleCheck> {
        let mut out = Vec::new();
        let mut upper = |rule: RuleKind, value: f64, high: f64| {
            out.push(RuleCheck {
                rule,
                value,
                low: None,
                high,
                pass: value <= high,
            });
        };
        let area = |radius_m: f64| std::f64::consts::PI * radius_m * radius_m;
        let velocity = |radius_m: f64| context.mean_flow_m3_s.abs() / area(radius_m);
        match kind {
            ElementKind::SideBranch(s) => {
                if let Some(l) = self.max_length_m {
                    upper(RuleKind::Length, s.tube.line.length_m, l);
                }
            }
            ElementKind::ExpansionChamber(c) => {
                if let Some(l) = self.max_length_m {
                    upper(RuleKind::Length, c.tube.line.length_m, l);
                }
                let narrowest = c
                    .ports
                    .map_or(c.tube.line.properties.radius_m, |p| p.pipe.radius_m);
                upper(
                    RuleKind::NeckVelocity,
                    velocity(narrowest),
                    self.max_neck_velocity_m_s,
                );
            }
            ElementKind::Helmholtz(h) => {
                if let Some(v) = self.max_volume_m3 {
                    upper(RuleKind::VesselSize, h.volume_m3, v);
                }
            }
            ElementKind::Damper(d) => {
                if let Some(v) = self.max_volume_m3 {
                    upper(RuleKind::VesselSize, d.gas_volume_m3, v);
                }
            }
            ElementKind::InlineDamper(d) => {
                if let Some(v) = self.max_volume_m3 {
                    upper(RuleKind::VesselSize, d.vessel.gas_volume_m3, v);
                }
                upper(
                    RuleKind::NeckVelocity,
                    velocity(d.vessel.neck.radius_m),
                    self.max_neck_velocity_m_s,
                );
            }
            _ => {}
        }
        let precharge = match kind {
            ElementKind::Damper(d) => Some(d.precharge_pa),
            ElementKind::InlineDamper(d) => Some(d.vessel.precharge_pa),
            _ => None,
        };
        if let (Some(p0), Some(lowest)) = (precharge, context.lowest_operating_pa) {
            let ratio = p0 / lowest;
            let (lo, hi) = self.precharge_fraction;
            out.push(RuleCheck {
                rule: RuleKind::PrechargeFraction,
                value: ratio,
                low: Some(lo),
                high: hi,
                pass: (lo..=hi).contains(&ratio),
            });
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_precharge_band_is_against_the_lowest_operating_pressure() {
        let c = crate::io::parse_circuit(
            include_str!("../../networks/drill_rig_feed_damper.yaml"),
            "damper.yaml",
        )
        .unwrap();
        let kind = &c.elements[c.element_id("damper").unwrap()].kind;
        let rules = Rules {
            max_volume_m3: Some(0.1e-3),
            ..Rules::default()
        };
        // 121.01325 / 201.01325 bar abs = 0.602: inside 0.6..0.9
        let ctx = RuleContext {
            lowest_operating_pa: Some(201.013_25e5),
            mean_flow_m3_s: 0.0,
        };
        let checks = rules.check(kind, &ctx);
        let p = checks
            .iter()
            .find(|c| c.rule == RuleKind::PrechargeFraction)
            .unwrap();
        assert!((p.value - 121.013_25 / 201.013_25).abs() < 1e-12);
        assert!(p.pass);
        // 0.17 L of gas is over a 0.1 L limit
        let v = checks
            .iter()
            .find(|c| c.rule == RuleKind::VesselSize)
            .unwrap();
        assert!(!v.pass);
        // at a lowest pressure of 130 bar abs the same precharge is 0.93
        let low = rules.check(
            kind,
            &RuleContext {
                lowest_operating_pa: Some(130e5),
                ..ctx
            },
        );
        let p = low
            .iter()
            .find(|c| c.rule == RuleKind::PrechargeFraction)
            .unwrap();
        assert!(!p.pass, "{}", p.value);
    }
}

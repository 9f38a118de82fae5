//! The "smallest silencer meeting the limits" objective of `ripline tune`:
//! minimise the silencer's size (volume or length) subject to every limit
//! of the circuit file's `limits` section at every state evaluated (the
//! circuit as written, its temperatures or its envelope points).
//!
//! A design is checked as `assess` checks a circuit: at each state the
//! pumps on the shaft are swept over the tune's speeds
//! ([`super::sweep::sweep`]) and each limited quantity's true worst speed
//! is refined between them ([`super::envelope::limited_worsts`]); its
//! margin is the smallest 20·log10(limit/value) over every limit and
//! state. The search minimises size/size_scale for a design with margin ≥ 0
//! and 1 + shortfall in dB otherwise, so any design meeting the limits
//! beats any that does not, and among those that miss, the nearest wins
//! (which is reported, with the tap, limit and point that fail, when no
//! design in the bounds meets them). With one parameter the golden-section
//! stage closes in on the edge of the region that meets the limits.

use super::envelope::{limited_worsts, pick_shaft};
use super::sweep::{SweepSettings, sweep};
use crate::circuit::Circuit;
use crate::elements::ElementKind;
use crate::envelope::TapLimits;
use crate::network::Plan;

/// What "size" means for the smallest-silencer objective.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SizeMeasure {
    /// The volume: a side branch's or chamber's bore area × length, a
    /// resonator's cavity, a damper's gas volume V0.
    Volume,
    /// The length of a side branch or an expansion chamber.
    Length,
}

impl SizeMeasure {
    /// How reports name it.
    pub fn name(self) -> &'static str {
        match self {
            SizeMeasure::Volume => "volume",
            SizeMeasure::Length => "length",
        }
    }

    /// The SI unit of a size.
    pub fn unit(self) -> &'static str {
        match self {
            SizeMeasure::Volume => "m3",
            SizeMeasure::Length => "m",
        }
    }

    /// The size of an element (`None`: the kind has no such size).
    pub fn of(self, kind: &ElementKind) -> Option<f64> {
        let tube_volume = |t: &crate::elements::Tube| t.line.properties.area_m2() * t.line.length_m;
        Some(match (self, kind) {
            (SizeMeasure::Volume, ElementKind::SideBranch(s)) => tube_volume(&s.tube),
            (SizeMeasure::Volume, ElementKind::ExpansionChamber(c)) => tube_volume(&c.tube),
            (SizeMeasure::Volume, ElementKind::Helmholtz(h)) => h.volume_m3,
            (SizeMeasure::Volume, ElementKind::Damper(d)) => d.gas_volume_m3,
            (SizeMeasure::Volume, ElementKind::InlineDamper(d)) => d.vessel.gas_volume_m3,
            (SizeMeasure::Length, ElementKind::SideBranch(s)) => s.tube.line.length_m,
            (SizeMeasure::Length, ElementKind::ExpansionChamber(c)) => c.tube.line.length_m,
            _ => return None,
        })
    }
}

/// The limits a design must meet.
#[derive(Debug, Clone, PartialEq)]
pub struct LimitGoal {
    /// The file's limits.
    pub limits: Vec<TapLimits>,
    /// The shaft swept (a pump's or shaft's name; `None`: the first pump's).
    pub shaft: Option<String>,
    /// What is minimised.
    pub size: SizeMeasure,
}

/// The tightest limit of a design: where it is closest to (or furthest
/// beyond) a limit.
#[derive(Debug, Clone, PartialEq)]
pub struct Tightest {
    /// The measurement point.
    pub tap: String,
    /// The limit as written in the file.
    pub limit: String,
    /// The limit's value, Pa (as the limit bounds it).
    pub limit_pa: f64,
    /// The state (index among those evaluated).
    pub state: usize,
    /// The shaft speed there, rev/s.
    pub speed_rev_s: f64,
    /// The limited quantity there, Pa.
    pub value_pa: f64,
    /// 20·log10(limit/value), dB (negative: the limit is exceeded).
    pub margin_db: f64,
}

/// The tightest limit of the circuits `states` over `speeds_rev_s`
/// (increasing; a single speed is swept as three within ±1e-6 of it);
/// `None` when no limited point has ripple.
///
/// # Errors
/// A message when a state cannot be compiled or swept.
pub fn tightest_limit(
    states: &[&Circuit],
    goal: &LimitGoal,
    speeds_rev_s: &[f64],
) -> Result<Option<Tightest>, String> {
    let speeds: Vec<f64> = if speeds_rev_s.len() >= 3 {
        speeds_rev_s.to_vec()
    } else {
        let n = speeds_rev_s[0];
        vec![n * (1.0 - 1e-6), n, n * (1.0 + 1e-6)]
    };
    let mut tightest: Option<Tightest> = None;
    for (si, circuit) in states.iter().enumerate() {
        let plan = Plan::compile(circuit).map_err(|e| e.to_string())?;
        let shaft = pick_shaft(circuit, goal.shaft.as_deref())
            .ok_or_else(|| "the circuit has no pump on the shaft".to_string())?;
        let swept = sweep(
            &plan,
            &shaft,
            &SweepSettings {
                speeds_rev_s: speeds.clone(),
                harmonics: circuit.harmonics,
                min_rise_db: 3.0,
            },
            &mut |_| {},
        )
        .map_err(|e| e.to_string())?;
        for tl in &goal.limits {
            let Some(tp) = swept.points.iter().position(|p| *p == tl.tap) else {
                continue; // cut off at this state: no ripple
            };
            for limit in &tl.limits {
                for (w, _) in limited_worsts(&plan, &shaft, &swept, tp, limit.kind)
                    .map_err(|e| e.to_string())?
                {
                    if w.value_pa <= 0.0 {
                        continue;
                    }
                    let margin_db = 20.0 * (limit.value_pa / w.value_pa).log10();
                    if tightest.as_ref().is_none_or(|t| margin_db < t.margin_db) {
                        tightest = Some(Tightest {
                            tap: tl.tap.clone(),
                            limit: format!("{}: {}", limit.kind.key(), limit.written),
                            limit_pa: limit.value_pa,
                            state: si,
                            speed_rev_s: w.speed_rev_s,
                            value_pa: w.value_pa,
                            margin_db,
                        });
                    }
                }
            }
        }
    }
    Ok(tightest)
}

/// The search cost of a design of size `size` (scaled by `scale`) whose
/// tightest limit is `tightest`: size/scale when the limits are met (in
/// (0, 1] for sizes within the bounds), 1 + the shortfall in dB otherwise.
pub fn cost(size: f64, scale: f64, tightest: Option<&Tightest>) -> f64 {
    match tightest {
        Some(t) if t.margin_db < 0.0 => 1.0 + (-t.margin_db).max(1e-12),
        _ => size / scale,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn meeting_the_limits_always_beats_missing_them() {
        let t = |m: f64| Tightest {
            tap: "a".into(),
            limit: "1 bar".into(),
            limit_pa: 1e5,
            state: 0,
            speed_rev_s: 25.0,
            value_pa: 1e5 / 10f64.powf(m / 20.0),
            margin_db: m,
        };
        let scale = 2.0;
        // the largest design that meets them against the nearest miss
        assert!(cost(2.0, scale, Some(&t(0.0))) < cost(0.1, scale, Some(&t(-1e-9))));
        // smaller is better among those that meet them, nearer among misses
        assert!(cost(0.5, scale, Some(&t(3.0))) < cost(0.6, scale, Some(&t(30.0))));
        assert!(cost(0.1, scale, Some(&t(-1.0))) < cost(0.1, scale, Some(&t(-2.0))));
        assert_eq!(cost(0.5, scale, None), 0.25);
    }
}

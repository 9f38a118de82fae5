//! A command run at several points of an operating envelope: each point's
//! result, and the worst values over all of them ranked, so the report can
//! conclude (the worst few) instead of repeating every point's report.
//!
//! Each command's result says what its worst values are
//! ([`WorstValues`]): `solve` each measurement point's overall rms,
//! `sweep` each one's worst overall rms over the speed range, `response`
//! the ripple of each resonance crossing, `profile` each line's largest
//! amplitude, `silencer` the overall rms at its measurement point with the
//! silencer (and the overall insertion loss).

use super::Subject;
use super::profile::ProfileResult;
use super::response::ResponseResult;
use super::silencer::SilencerResult;
use super::solve::SolveResult;
use super::sweep::SweepReport;
use crate::analysis::response::Coverage;
use crate::envelope::OperatingPoint;
use serde::Serialize;

/// One worst value of a result at one envelope point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Worst {
    /// What it is the value of (a measurement point, a line, a resonance).
    pub subject: String,
    /// The shaft speed it holds at, rev/s (`None` when the result mixes
    /// shafts).
    pub speed_rev_s: Option<f64>,
    /// The value, Pa (an rms or a peak amplitude, as [`WorstValues::MEASURE`] says).
    pub value_pa: f64,
}

/// A result whose worst values can be ranked over an envelope.
pub trait WorstValues {
    /// What the values are, for the report (e.g. "overall rms").
    const MEASURE: &'static str;
    /// The circuit file analysed.
    fn subject(&self) -> &Subject;
    /// The worst values of this result.
    fn worst_values(&self) -> Vec<Worst>;
}

impl WorstValues for SolveResult {
    const MEASURE: &'static str = "overall rms ripple at each measurement point";
    fn subject(&self) -> &Subject {
        &self.subject
    }
    fn worst_values(&self) -> Vec<Worst> {
        let speed = (!self.several_sources()).then(|| self.sources[0].speed_rev_s);
        self.totals
            .iter()
            .map(|t| Worst {
                subject: format!("`{}`", t.point),
                speed_rev_s: speed,
                value_pa: t.rms_pa,
            })
            .collect()
    }
}

impl WorstValues for SweepReport {
    const MEASURE: &'static str =
        "worst overall rms ripple over the speed range at each measurement point";
    fn subject(&self) -> &Subject {
        &self.subject
    }
    fn worst_values(&self) -> Vec<Worst> {
        self.worst
            .iter()
            .map(|w| Worst {
                subject: format!("`{}`", w.point),
                speed_rev_s: Some(w.speed_rev_s),
                value_pa: w.rms_pa,
            })
            .collect()
    }
}

impl WorstValues for ResponseResult {
    const MEASURE: &'static str =
        "peak ripple of each harmonic crossing a resonance (its peak level × the source flow)";
    fn subject(&self) -> &Subject {
        &self.subject
    }
    fn worst_values(&self) -> Vec<Worst> {
        self.resonances
            .iter()
            .flat_map(|r| {
                r.harmonics.iter().filter_map(move |v| {
                    let Coverage::Crossed { speed_rev_s } = v.coverage else {
                        return None;
                    };
                    let value_pa = v.ripple_pa.filter(|p| *p > 0.0)?;
                    Some(Worst {
                        subject: format!(
                            "resonance {:.1} Hz at `{}`, harmonic {}",
                            r.resonance.freq_hz, r.resonance.point, v.order
                        ),
                        speed_rev_s: Some(speed_rev_s),
                        value_pa,
                    })
                })
            })
            .collect()
    }
}

impl WorstValues for ProfileResult {
    const MEASURE: &'static str = "largest ripple amplitude (peak) along each line";
    fn subject(&self) -> &Subject {
        &self.subject
    }
    fn worst_values(&self) -> Vec<Worst> {
        self.lines
            .iter()
            .filter(|l| l.reached && l.largest.1 > 0.0)
            .map(|l| Worst {
                subject: format!("`{}` at {:.3} m", l.name, l.largest.0),
                speed_rev_s: Some(self.speed_rev_s),
                value_pa: l.largest.1,
            })
            .collect()
    }
}

impl WorstValues for SilencerResult {
    const MEASURE: &'static str = "overall rms ripple at the measurement point with the silencer";
    fn subject(&self) -> &Subject {
        &self.subject
    }
    fn worst_values(&self) -> Vec<Worst> {
        // overall insertion loss 20·log10(P_without/P_with), rms values
        let il = (self.rms_with_pa > 0.0 && self.rms_without_pa > 0.0)
            .then(|| 20.0 * (self.rms_without_pa / self.rms_with_pa).log10());
        vec![Worst {
            subject: match il {
                Some(il) => format!("`{}` (insertion loss {il:.1} dB)", self.tap),
                None => format!("`{}`", self.tap),
            },
            speed_rev_s: Some(self.pump.speed_rev_s),
            value_pa: self.rms_with_pa,
        }]
    }
}

/// A worst value at an envelope point, in the ranking.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Ranked {
    /// The envelope point.
    pub point: OperatingPoint,
    /// Its label.
    pub label: String,
    /// The value there.
    #[serde(flatten)]
    pub worst: Worst,
}

/// The result of one envelope point.
#[derive(Debug, Serialize)]
pub struct PointResult<'a, T> {
    /// The point.
    pub point: &'a OperatingPoint,
    /// Its label.
    pub label: String,
    /// The command's result there.
    pub result: &'a T,
}

/// A command's results over the envelope points it ran at.
#[derive(Debug, Serialize)]
pub struct OverEnvelope<'a, T> {
    /// The circuit file.
    pub subject: &'a Subject,
    /// What the ranked values are.
    pub measure: &'static str,
    /// Every worst value of every point, highest first.
    pub ranked: Vec<Ranked>,
    /// One result per point, in the envelope's order.
    pub envelope_points: Vec<PointResult<'a, T>>,
}

/// The results of `results` (at least one) gathered and their worst
/// values ranked, highest first (the envelope's order among equals).
pub fn over_envelope<T: WorstValues>(results: &[(OperatingPoint, T)]) -> OverEnvelope<'_, T> {
    let mut ranked: Vec<Ranked> = results
        .iter()
        .flat_map(|(p, r)| {
            r.worst_values().into_iter().map(|worst| Ranked {
                point: p.clone(),
                label: p.label(),
                worst,
            })
        })
        .collect();
    ranked.sort_by(|a, b| b.worst.value_pa.total_cmp(&a.worst.value_pa));
    OverEnvelope {
        subject: results[0].1.subject(),
        measure: T::MEASURE,
        ranked,
        envelope_points: results
            .iter()
            .map(|(p, r)| PointResult {
                point: p,
                label: p.label(),
                result: r,
            })
            .collect(),
    }
}

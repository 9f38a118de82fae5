//! Verdicts over an operating envelope: the worst ripple at every point of
//! the envelope against the user's limits, and the findings ranked by
//! severity (what `ripline assess` reports).
//!
//! At every envelope point (a mean pressure, an oil temperature, a load
//! case: the circuit resolved there, see [`crate::envelope`]) the pumps on
//! one shaft are swept over the speed range ([`super::sweep`]): the
//! harmonics at every measurement point on a grid of speeds, the resonance
//! crossings, and per point the true worst speed of the overall rms,
//! refined between the grid speeds to 0.01 dB ([`super::worst`]). A
//! peak-to-peak or per-harmonic limit gets its own true worst speed
//! ([`super::sweep::worst_at_point`]). The **verdict** of a limit is the
//! worst over every point and speed: where (point, speed, harmonic), its
//! value, the margin to the limit (20·log10(limit/value) in dB: positive
//! passes) and PASS or FAIL.
//!
//! **Findings** are what a designer looks at, ranked by level (rms, dB re
//! 1 Pa): per measurement point and envelope point its worst speed; every
//! excited resonance of the circuit (a resonance of the response to the
//! shaft's pumps that a harmonic crosses in the speed range), at the level
//! of its strongest crossing; and every resonance crossing. A report shows
//! the first few and drops what lies far below the point's overall worst
//! level ([`Assessment::ranked`]); the full list goes to CSV.

use super::sweep::{
    SweepError, SweepResult, SweepSettings, shaft_resonances, sweep, worst_at_point,
};
use super::worst::{Measure, WorstSpeed};
use crate::circuit::Circuit;
use crate::elements::ElementKind;
use crate::envelope::{Limit, LimitKind, OperatingPoint, TapLimits};
use crate::network::{NetworkError, Plan};
use crate::source::{Shaft, shafts};
use serde::Serialize;

/// Resonances of the response and crossings within this fraction of each
/// other's frequency are one (the merge tolerance of `response`).
const SAME_RESONANCE: f64 = 0.02;

/// How an envelope is assessed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AssessSettings {
    /// Speeds of the grid across the range (evenly spaced, ends included,
    /// at least 3); the worst speeds are refined between them.
    pub speed_points: usize,
    /// Smallest rise (dB) of a resonance crossing (as for `sweep`).
    pub min_rise_db: f64,
}

impl Default for AssessSettings {
    /// 201 speeds and a 3 dB rise, as `sweep`'s defaults.
    fn default() -> Self {
        AssessSettings {
            speed_points: 201,
            min_rise_db: 3.0,
        }
    }
}

/// Where a quantity is worst over the envelope.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorstPoint {
    /// The envelope point.
    pub point: OperatingPoint,
    /// Shaft speed in rev/s.
    pub speed_rev_s: f64,
    /// The harmonic (order of the shaft fundamental): the limited one for a
    /// per-harmonic limit, else the one with the largest amplitude there.
    pub order: u32,
    /// That harmonic's frequency in Hz.
    pub frequency_hz: f64,
    /// The quantity there, in Pa (rms, peak-to-peak or a harmonic's peak
    /// amplitude, as limited).
    pub value_pa: f64,
}

/// A limit and how the envelope meets it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verdict {
    /// The measurement point.
    pub tap: String,
    /// The limit.
    pub limit: Limit,
    /// The worst point of the envelope; `None` when no ripple reaches the
    /// tap anywhere (a load case cut it off, or no harmonic has flow).
    pub worst: Option<WorstPoint>,
    /// 20·log10(limit/worst) in dB (positive: below the limit); `None`
    /// without ripple.
    pub margin_db: Option<f64>,
    /// limit − worst, in Pa.
    pub margin_pa: f64,
    /// Whether the worst stays within the limit.
    pub pass: bool,
    /// The worst at each envelope point (in the assessment's order; `None`
    /// where no ripple reaches the tap): where another point comes close to
    /// the worst, uncertain inputs may make it the worst.
    #[serde(skip)]
    pub at_points: Vec<Option<WorstPoint>>,
    /// Where the limit is exceeded (`None` when it is met).
    pub over_limit: Option<OverLimit>,
}

/// Where a limit is exceeded over the envelope: what a speed band to keep
/// out of would have to cover.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OverLimit {
    /// Envelope points where the limited quantity exceeds the limit at some
    /// speed.
    pub points: usize,
    /// Speed intervals (rev/s; increasing, disjoint) holding every speed at
    /// which it exceeds the limit at one envelope point or more: each run of
    /// grid speeds over the limit widened to the grid speeds either side (the
    /// limit is crossed between them), and a peak over the limit between
    /// two grid speeds under it (the point's refined worst, or a refined
    /// resonance crossing whose one harmonic alone exceeds it) by those two.
    /// Outside them the limit holds at every envelope point, to the grid's
    /// resolution.
    pub speeds_rev_s: Vec<(f64, f64)>,
    /// Pulsation dampers bottomed (their precharge above the mean
    /// pressure, their gas out of the circuit) at every envelope point
    /// where the limit is exceeded: a cause, and what a precharge below the
    /// lowest operating pressure would change.
    pub bottomed_dampers: Vec<String>,
}

impl OverLimit {
    /// The speeds of `range_rev_s` outside every interval over the limit:
    /// where the limit holds at every envelope point (increasing).
    pub fn clear_speeds(&self, range_rev_s: (f64, f64)) -> Vec<(f64, f64)> {
        let (lo, hi) = range_rev_s;
        let mut out = Vec::new();
        let mut from = lo;
        for &(a, b) in &self.speeds_rev_s {
            if a > from {
                out.push((from, a.min(hi)));
            }
            from = from.max(b);
        }
        if from < hi {
            out.push((from, hi));
        }
        out
    }
}

/// The limited quantity of `kind` at point `tp` of a sweep at each grid
/// speed: the overall rms, the peak-to-peak of the waveform of the orders,
/// or the largest harmonic's peak amplitude.
fn limited_on_grid(swept: &SweepResult, tp: usize, kind: LimitKind) -> Vec<f64> {
    let ns = swept.speeds_rev_s.len();
    let no = swept.orders.len();
    match kind {
        LimitKind::Rms => (0..ns).map(|si| swept.rms_pa(si, tp)).collect(),
        LimitKind::PeakToPeak => {
            let period = super::waveform::Period::new(&swept.orders);
            (0..ns)
                .map(|si| {
                    let phasors: Vec<_> = (0..no).map(|oi| swept.phasor(si, tp, oi)).collect();
                    let e = period.extremes(&phasors);
                    e.max.1 - e.min.1
                })
                .collect()
        }
        LimitKind::Harmonic => (0..ns)
            .map(|si| {
                (0..no)
                    .map(|oi| swept.amplitude_pa(si, tp, oi))
                    .fold(0.0, f64::max)
            })
            .collect(),
    }
}

/// Where `limit` at measurement point `tap` is exceeded over the envelope's
/// sweeps, given its refined worst at each envelope point (`at_points`).
fn over_limit(
    points: &[(OperatingPoint, Circuit)],
    sweeps: &[PointSweep],
    tap: &str,
    limit: &Limit,
    at_points: &[Option<WorstPoint>],
) -> OverLimit {
    let mut intervals: Vec<(f64, f64)> = Vec::new();
    let mut exceeded: Vec<&Circuit> = Vec::new();
    for ((ps, worst), (_, circuit)) in sweeps.iter().zip(at_points).zip(points) {
        let Some(tp) = ps.sweep.points.iter().position(|p| p == tap) else {
            continue;
        };
        let speeds = &ps.sweep.speeds_rev_s;
        let last = speeds.len() - 1;
        let values = limited_on_grid(&ps.sweep, tp, limit.kind);
        let over = |v: f64| v > limit.value_pa;
        let before = intervals.len();
        let mut si = 0;
        while si <= last {
            if !over(values[si]) {
                si += 1;
                continue;
            }
            let start = si;
            while si < last && over(values[si + 1]) {
                si += 1;
            }
            intervals.push((speeds[start.saturating_sub(1)], speeds[(si + 1).min(last)]));
            si += 1;
        }
        // peaks between grid speeds: the point's refined worst, and each
        // refined resonance crossing whose one harmonic alone is over the
        // limit (the rms is at least |P_k|/√2; the peak-to-peak at least
        // |P_k|, each harmonic's amplitude being at most the waveform's
        // span by its Fourier integral)
        let crossing_bound = |amplitude: f64| match limit.kind {
            LimitKind::Rms => amplitude / std::f64::consts::SQRT_2,
            LimitKind::PeakToPeak | LimitKind::Harmonic => amplitude,
        };
        let peaks = worst
            .iter()
            .filter(|w| over(w.value_pa))
            .map(|w| w.speed_rev_s)
            .chain(
                ps.sweep
                    .crossings
                    .iter()
                    .filter(|c| c.point == tp && over(crossing_bound(c.amplitude_pa)))
                    .map(|c| c.speed_rev_s),
            );
        for n in peaks {
            if !intervals[before..].iter().any(|&(a, b)| a <= n && n <= b) {
                let j = speeds.partition_point(|&s| s <= n).clamp(1, last);
                intervals.push((speeds[j - 1], speeds[j]));
            }
        }
        if intervals.len() > before {
            exceeded.push(circuit);
        }
    }
    let bottomed = |c: &Circuit, name: &str| {
        c.elements
            .iter()
            .any(|e| e.name == name && matches!(&e.kind, ElementKind::Damper(d) if d.is_bottomed()))
    };
    let bottomed_dampers = exceeded
        .first()
        .map(|c| {
            c.elements
                .iter()
                .filter(|e| exceeded.iter().all(|c| bottomed(c, &e.name)))
                .map(|e| e.name.clone())
                .collect()
        })
        .unwrap_or_default();
    intervals.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut merged: Vec<(f64, f64)> = Vec::new();
    for (a, b) in intervals {
        match merged.last_mut() {
            Some(m) if a <= m.1 => m.1 = m.1.max(b),
            _ => merged.push((a, b)),
        }
    }
    OverLimit {
        points: exceeded.len(),
        speeds_rev_s: merged,
        bottomed_dampers,
    }
}

/// What a finding is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FindingKind {
    /// The worst speed of a measurement point at an envelope point (its
    /// overall rms).
    WorstPoint,
    /// A resonance of the circuit that a harmonic crosses (its strongest
    /// crossing).
    Resonance,
    /// One harmonic crossing one resonance at one measurement point.
    Crossing,
}

impl FindingKind {
    /// How reports name it.
    pub fn name(self) -> &'static str {
        match self {
            FindingKind::WorstPoint => "worst point",
            FindingKind::Resonance => "resonance",
            FindingKind::Crossing => "crossing",
        }
    }
}

/// One finding.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Finding {
    /// What it is.
    pub kind: FindingKind,
    /// The measurement point.
    pub tap: String,
    /// The envelope point.
    pub point: OperatingPoint,
    /// Shaft speed in rev/s.
    pub speed_rev_s: f64,
    /// The harmonic (for a worst point: the largest one there).
    pub order: u32,
    /// Frequency in Hz (of the harmonic; for a resonance, the resonance's).
    pub frequency_hz: f64,
    /// The rms value in Pa (overall for a worst point, of the harmonic
    /// otherwise).
    pub rms_pa: f64,
    /// Its level, 20·log10(rms/1 Pa).
    pub level_db: f64,
    /// How far below the measurement point's overall worst level over the
    /// envelope it lies, in dB (0 for the worst itself).
    pub below_overall_db: f64,
    /// For a crossing or resonance: the rise above the harmonic's level away
    /// from the resonance, in dB.
    pub rise_db: Option<f64>,
    /// The circuit resonance (Hz) it is at, when it is at one.
    pub resonance_hz: Option<f64>,
}

/// A warning and the envelope points where it holds: one warning that
/// differs between points only in its numbers is one, with the numbers of
/// the first point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EnvelopeWarning {
    /// The warning (see [`crate::diagnostics::Warning`]) at the first point.
    pub text: String,
    /// The labels of the points where it holds, in the envelope's order.
    pub points: Vec<String>,
}

/// One envelope point's sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct PointSweep {
    /// The envelope point.
    pub point: OperatingPoint,
    /// The sweep of the shaft at that point (its measurement points are the
    /// circuit's there: a load case may have cut some off).
    pub sweep: SweepResult,
    /// The circuit's resonances there in Hz (response to the shaft's
    /// pumps).
    pub resonances_hz: Vec<f64>,
}

/// The assessment of an envelope.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Assessment {
    /// The swept shaft's name.
    pub shaft: String,
    /// The speed range in rev/s.
    pub speed_range_rev_s: (f64, f64),
    /// The envelope points, in order.
    pub points: Vec<OperatingPoint>,
    /// The measurement points (of the circuit as written).
    pub taps: Vec<String>,
    /// Per measurement point, the worst overall rms over the envelope
    /// (`None` when no ripple reaches it).
    pub worst: Vec<Option<WorstPoint>>,
    /// One verdict per limit.
    pub verdicts: Vec<Verdict>,
    /// Every finding, highest level first.
    pub findings: Vec<Finding>,
    /// Warnings, each with the envelope points where it holds.
    pub warnings: Vec<EnvelopeWarning>,
    /// The sweeps behind it, per envelope point (for tables and plots).
    #[serde(skip)]
    pub sweeps: Vec<PointSweep>,
}

impl Assessment {
    /// Whether every limit is met.
    pub fn passed(&self) -> bool {
        self.verdicts.iter().all(|v| v.pass)
    }

    /// The first `top` findings that lie at most `floor_db` below their
    /// measurement point's overall worst level.
    pub fn ranked(&self, top: usize, floor_db: f64) -> Vec<&Finding> {
        self.findings
            .iter()
            .filter(|f| f.below_overall_db <= floor_db)
            .take(top)
            .collect()
    }
}

/// Why an assessment failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum AssessError {
    /// No speed range is known.
    #[error("no speed range: give the envelope a `speed` range, or the pump a `speed_range`")]
    NoSpeedRange,
    /// The settings are not usable.
    #[error("{0}")]
    Settings(String),
    /// A circuit does not form a network at a point.
    #[error("at envelope point `{point}`: {source}")]
    Network {
        /// The point's label.
        point: String,
        /// The failure.
        #[source]
        source: NetworkError,
    },
    /// A sweep failed at a point.
    #[error("at envelope point `{point}`")]
    Sweep {
        /// The point's label.
        point: String,
        /// The failure.
        #[source]
        source: SweepError,
    },
}

/// The shaft called `name` (a shaft, or a pump on it), or the first pump's.
pub fn pick_shaft(circuit: &Circuit, name: Option<&str>) -> Option<Shaft> {
    let all = shafts(&circuit.pumps);
    match name {
        None => all.into_iter().next(),
        Some(n) => {
            let pump = circuit.pumps.iter().position(|p| p.name == n);
            all.into_iter()
                .find(|s| s.name == n || pump.is_some_and(|i| s.pumps.contains(&i)))
        }
    }
}

/// Assesses the circuits of an envelope's points (each resolved at its
/// point, in the envelope's order) over a speed range of one shaft, against
/// `limits`. `speed_range` overrides the shaft's own range. `progress` is
/// called with the number of points done.
///
/// # Errors
/// [`AssessError`] when no speed range is known, the settings are unusable,
/// or a point's circuit cannot be compiled or swept (an undamped resonance).
///
/// # Panics
/// If `points` is empty or the circuits have no pumps.
pub fn assess(
    points: &[(OperatingPoint, Circuit)],
    shaft: Option<&str>,
    speed_range: Option<(f64, f64)>,
    limits: &[TapLimits],
    settings: &AssessSettings,
    progress: &mut dyn FnMut(usize),
) -> Result<Assessment, AssessError> {
    let first = &points[0].1;
    let base_shaft = pick_shaft(first, shaft).ok_or_else(|| {
        AssessError::Settings(format!(
            "no shaft or pump is called `{}`",
            shaft.unwrap_or("")
        ))
    })?;
    let (lo, hi) = speed_range
        .or_else(|| base_shaft.speed_range_rev_s(&first.pumps))
        .ok_or(AssessError::NoSpeedRange)?;
    if settings.speed_points < 3 || !(lo > 0.0 && hi > lo) {
        return Err(AssessError::Settings(
            "the speed grid needs at least three speeds over a range from a lower to a higher speed"
                .into(),
        ));
    }
    let n = settings.speed_points;
    let speeds: Vec<f64> = (0..n)
        .map(|i| lo + (hi - lo) * i as f64 / (n - 1) as f64)
        .collect();
    let taps: Vec<String> = super::ripple::report_points(first)
        .into_iter()
        .map(|t| t.name)
        .collect();

    let mut sweeps = Vec::with_capacity(points.len());
    let mut warnings: Vec<EnvelopeWarning> = Vec::new();
    // Per limit: the worst at each envelope point.
    let mut limit_worst: Vec<Vec<Vec<Option<WorstPoint>>>> = limits
        .iter()
        .map(|t| vec![Vec::with_capacity(points.len()); t.limits.len()])
        .collect();
    for (pi, (point, circuit)) in points.iter().enumerate() {
        let label = point.label();
        let shaft = pick_shaft(circuit, shaft).unwrap_or_else(|| base_shaft.clone());
        let plan = Plan::compile(circuit).map_err(|source| AssessError::Network {
            point: label.clone(),
            source,
        })?;
        let at_point = |source| AssessError::Sweep {
            point: label.clone(),
            source,
        };
        let swept = sweep(
            &plan,
            &shaft,
            &SweepSettings {
                speeds_rev_s: speeds.clone(),
                harmonics: circuit.harmonics,
                min_rise_db: settings.min_rise_db,
            },
            &mut |_| {},
        )
        .map_err(at_point)?;
        let top_order = swept.orders.last().copied().unwrap_or(1);
        let band = (
            0.5 * shaft.fundamental_hz(lo),
            1.1 * f64::from(top_order) * shaft.fundamental_hz(hi),
        );
        let resonances_hz: Vec<f64> =
            shaft_resonances(&plan, &shaft, band.0, band.1, settings.min_rise_db)
                .map(|r| r.into_iter().map(|r| r.freq_hz).collect())
                .unwrap_or_default();
        for w in crate::diagnostics::circuit_warnings(circuit, band.1)
            .into_iter()
            .chain(crate::diagnostics::source_map_warnings(
                circuit,
                Some((lo, hi)),
            ))
            .chain(swept.warnings.iter().cloned())
        {
            add_warning(&mut warnings, w.to_string(), &label);
        }
        for (li, tap_limits) in limits.iter().enumerate() {
            let tp = swept.points.iter().position(|p| *p == tap_limits.tap);
            for (ki, limit) in tap_limits.limits.iter().enumerate() {
                // None: cut off at this point, no ripple
                let here = match tp {
                    Some(tp) => first_highest(
                        limited_worsts(&plan, &shaft, &swept, tp, limit.kind).map_err(at_point)?,
                        |(w, _)| w.value_pa,
                    )
                    .filter(|(w, _)| w.value_pa > 0.0)
                    .map(|(w, o)| worst_point(point, &swept, &w, o)),
                    None => None,
                };
                limit_worst[li][ki].push(here);
            }
        }
        sweeps.push(PointSweep {
            point: point.clone(),
            sweep: swept,
            resonances_hz,
        });
        progress(pi + 1);
    }

    let worst: Vec<Option<WorstPoint>> = taps
        .iter()
        .map(|tap| {
            sweeps
                .iter()
                .enumerate()
                .filter_map(|(pi, ps)| {
                    let tp = ps.sweep.points.iter().position(|p| p == tap)?;
                    Some((pi, ps.sweep.worst(tp)))
                })
                .max_by(|a, b| a.1.value_pa.total_cmp(&b.1.value_pa))
                .filter(|(_, w)| w.value_pa > 0.0)
                .map(|(pi, w)| worst_point(&sweeps[pi].point, &sweeps[pi].sweep, w, None))
        })
        .collect();
    let verdicts = limits
        .iter()
        .zip(limit_worst)
        .flat_map(|(tl, slots)| {
            tl.limits.iter().zip(slots).map(|(limit, at_points)| {
                let worst = first_highest(at_points.iter().flatten(), |w| w.value_pa).cloned();
                let value = worst.as_ref().map_or(0.0, |w| w.value_pa);
                Verdict {
                    tap: tl.tap.clone(),
                    limit: limit.clone(),
                    margin_db: (value > 0.0).then(|| 20.0 * (limit.value_pa / value).log10()),
                    margin_pa: limit.value_pa - value,
                    pass: value <= limit.value_pa,
                    over_limit: (value > limit.value_pa)
                        .then(|| over_limit(points, &sweeps, &tl.tap, limit, &at_points)),
                    worst,
                    at_points,
                }
            })
        })
        .collect::<Vec<_>>();
    let findings = findings(&sweeps, &taps, &worst);
    Ok(Assessment {
        shaft: base_shaft.name.clone(),
        speed_range_rev_s: (lo, hi),
        points: points.iter().map(|(p, _)| p.clone()).collect(),
        taps,
        worst,
        verdicts,
        findings,
        warnings,
        sweeps,
    })
}

/// The first of `items` with the highest `value` (`max_by` keeps the
/// last of equals; the verdicts name the first point and harmonic).
fn first_highest<T>(items: impl IntoIterator<Item = T>, value: impl Fn(&T) -> f64) -> Option<T> {
    items.into_iter().fold(None, |best, x| match best {
        Some(b) if value(&x) <= value(&b) => Some(b),
        _ => Some(x),
    })
}

/// Where `w` of sweep `s` at envelope point `point` lies: its speed, its
/// order (`order_i`, else the largest there) and value.
fn worst_point(
    point: &OperatingPoint,
    s: &SweepResult,
    w: &WorstSpeed,
    order_i: Option<usize>,
) -> WorstPoint {
    let oi = order_i.unwrap_or_else(|| w.dominant_order());
    let order = s.orders.get(oi).copied().unwrap_or(1);
    WorstPoint {
        point: point.clone(),
        speed_rev_s: w.speed_rev_s,
        order,
        frequency_hz: f64::from(order) * s.shaft.fundamental_hz(w.speed_rev_s),
        value_pa: w.value_pa,
    }
}

/// The true worst speeds of what a limit of `kind` bounds at point
/// `tp` of a sweep: the overall rms, the peak-to-peak, or each harmonic
/// (with its order index). `plan` and `shaft` must be the sweep's.
///
/// # Errors
/// [`SweepError`] when a refinement solve fails.
pub fn limited_worsts(
    plan: &Plan<'_>,
    shaft: &Shaft,
    swept: &SweepResult,
    tp: usize,
    kind: LimitKind,
) -> Result<Vec<(WorstSpeed, Option<usize>)>, SweepError> {
    Ok(match kind {
        LimitKind::Rms => vec![(swept.worst(tp).clone(), None)],
        LimitKind::PeakToPeak => vec![(
            worst_at_point(plan, shaft, swept, tp, Measure::PeakToPeak)?,
            None,
        )],
        LimitKind::Harmonic => (0..swept.orders.len())
            .map(|o| {
                worst_at_point(plan, shaft, swept, tp, Measure::Order(o)).map(|w| (w, Some(o)))
            })
            .collect::<Result<_, _>>()?,
    })
}

/// A limited quantity at a measurement point: what a verdict's uncertainty
/// band follows.
#[derive(Debug, Clone, PartialEq)]
pub struct LimitedQuantity {
    /// The measurement point.
    pub tap: String,
    /// What is limited.
    pub kind: LimitKind,
    /// For a per-harmonic limit, the harmonic (order of the shaft
    /// fundamental) whose worst decided the verdict.
    pub order: Option<u32>,
}

/// The true worst over the speeds `speeds_rev_s` of each of `quantities`
/// for `circuit` swept on shaft `shaft` (as [`assess`] finds it at one
/// envelope point: the grid, then every crossing refined), in Pa; 0 for a
/// measurement point the circuit does not have or a harmonic it does not
/// excite.
///
/// # Errors
/// A message when the network cannot be compiled or swept.
pub fn limited_worst_values(
    circuit: &Circuit,
    shaft: Option<&str>,
    speeds_rev_s: &[f64],
    quantities: &[LimitedQuantity],
) -> Result<Vec<f64>, String> {
    let shaft = pick_shaft(circuit, shaft).ok_or("the swept shaft is missing")?;
    let plan = Plan::compile(circuit).map_err(|e| e.to_string())?;
    let swept = sweep(
        &plan,
        &shaft,
        &SweepSettings {
            speeds_rev_s: speeds_rev_s.to_vec(),
            harmonics: circuit.harmonics,
            min_rise_db: f64::INFINITY,
        },
        &mut |_| {},
    )
    .map_err(|e| e.to_string())?;
    quantities
        .iter()
        .map(|q| {
            let Some(tp) = swept.points.iter().position(|p| *p == q.tap) else {
                return Ok(0.0);
            };
            let measure = match q.kind {
                LimitKind::Rms => return Ok(swept.worst(tp).value_pa),
                LimitKind::PeakToPeak => Measure::PeakToPeak,
                LimitKind::Harmonic => {
                    let order = q.order.unwrap_or(1);
                    let Some(oi) = swept.orders.iter().position(|&o| o == order) else {
                        return Ok(0.0);
                    };
                    Measure::Order(oi)
                }
            };
            worst_at_point(&plan, &shaft, &swept, tp, measure)
                .map(|w| w.value_pa)
                .map_err(|e| e.to_string())
        })
        .collect()
}

/// Adds warning `text` at the point `label` to `warnings`: to the warning
/// that differs from it only in its numbers, if there is one.
pub fn add_warning(warnings: &mut Vec<EnvelopeWarning>, text: String, label: &str) {
    let key = without_numbers(&text);
    match warnings
        .iter_mut()
        .find(|x| without_numbers(&x.text) == key)
    {
        Some(x) if !x.points.iter().any(|p| p == label) => x.points.push(label.to_string()),
        Some(_) => {}
        None => warnings.push(EnvelopeWarning {
            text,
            points: vec![label.to_string()],
        }),
    }
}

/// A text with every digit replaced, to compare warnings whose numbers
/// differ.
pub fn without_numbers(text: &str) -> String {
    text.chars()
        .map(|c| if c.is_ascii_digit() { '#' } else { c })
        .collect()
}

fn level_db(rms_pa: f64) -> f64 {
    20.0 * rms_pa.log10()
}

/// Every finding, highest level first (see the module documentation). One
/// event is one finding: the strongest crossing of a resonance is that
/// resonance's finding, and a resonance that sets a measurement point's
/// worst speed is told in that worst point's finding.
fn findings(sweeps: &[PointSweep], taps: &[String], worst: &[Option<WorstPoint>]) -> Vec<Finding> {
    let overall = |tap: &str| {
        taps.iter()
            .position(|t| t == tap)
            .and_then(|i| worst[i].as_ref())
            .map_or(f64::NEG_INFINITY, |w| level_db(w.value_pa))
    };
    let mut out = Vec::new();
    for ps in sweeps {
        let s = &ps.sweep;
        let finding = |kind, tap: &str, speed: f64, order: u32, freq: f64, rms: f64| Finding {
            kind,
            tap: tap.to_string(),
            point: ps.point.clone(),
            speed_rev_s: speed,
            order,
            frequency_hz: freq,
            rms_pa: rms,
            level_db: level_db(rms),
            below_overall_db: overall(tap) - level_db(rms),
            rise_db: None,
            resonance_hz: None,
        };
        let resonance_of = |f_hz: f64| {
            ps.resonances_hz
                .iter()
                .copied()
                .find(|&fr| (f_hz - fr).abs() <= SAME_RESONANCE * fr)
        };
        // crossings, each tagged with its resonance; the strongest crossing
        // of each resonance becomes that resonance's finding
        let mut crossings: Vec<Finding> = s
            .crossings
            .iter()
            .filter(|c| c.amplitude_pa > 0.0)
            .map(|c| Finding {
                rise_db: Some(c.rise_db),
                resonance_hz: resonance_of(c.freq_hz),
                ..finding(
                    FindingKind::Crossing,
                    &s.points[c.point],
                    c.speed_rev_s,
                    c.order,
                    c.freq_hz,
                    c.amplitude_pa / std::f64::consts::SQRT_2,
                )
            })
            .collect();
        for &fr in &ps.resonances_hz {
            let strongest = crossings
                .iter()
                .enumerate()
                .filter(|(_, c)| c.kind == FindingKind::Crossing && c.resonance_hz == Some(fr))
                .max_by(|a, b| a.1.rms_pa.total_cmp(&b.1.rms_pa))
                .map(|(i, _)| i);
            if let Some(i) = strongest {
                crossings[i].kind = FindingKind::Resonance;
            }
        }
        for (tp, tap) in s.points.iter().enumerate() {
            let w = s.worst(tp);
            if w.value_pa <= 0.0 {
                continue;
            }
            let order = s.orders.get(w.dominant_order()).copied().unwrap_or(1);
            let freq = f64::from(order) * s.shaft.fundamental_hz(w.speed_rev_s);
            let mut f = finding(
                FindingKind::WorstPoint,
                tap,
                w.speed_rev_s,
                order,
                freq,
                w.value_pa,
            );
            // the crossing it sits on (a crossing of the same harmonic at
            // this point peaking within 1 % of its speed): told here, not
            // twice; a resonance's own finding moves to its next crossing
            if let Some(i) = crossings.iter().position(|c| {
                c.tap == *tap
                    && c.order == order
                    && (c.speed_rev_s - w.speed_rev_s).abs() <= 0.01 * w.speed_rev_s
            }) {
                let c = crossings.remove(i);
                f.resonance_hz = c.resonance_hz;
                f.rise_db = c.rise_db;
            }
            out.push(f);
        }
        out.extend(crossings);
    }
    out.sort_by(|a, b| b.level_db.total_cmp(&a.level_db));
    out
}

#[cfg(test)]
mod tests {
    use super::super::sweep::Crossing;
    use super::*;

    // A resonance crossing between two grid speeds whose one harmonic alone
    // exceeds an rms limit (the rms is at least |P_k|/√2) is taken into the
    // speeds over the limit, bracketed by its grid neighbours, although no
    // grid speed and no refined worst is over the limit; one whose |P_k|/√2
    // lies just under the limit is not. (The crane demo, an invented
    // scenario, swept at five speeds; the crossing is placed by hand.)
    #[test]
    fn a_crossing_over_the_limit_between_grid_speeds_is_taken_in() {
        let text = include_str!("../../networks/crane_pressure_line.yaml");
        let circuit = crate::io::parse_circuit(text, "crane.yaml").unwrap();
        let plan = Plan::compile(&circuit).unwrap();
        let shaft = shafts(&circuit.pumps).remove(0);
        let settings = SweepSettings {
            speeds_rev_s: (0..5).map(|i| 20.0 + 2.0 * f64::from(i)).collect(),
            harmonics: circuit.harmonics,
            min_rise_db: f64::INFINITY,
        };
        let swept = sweep(&plan, &shaft, &settings, &mut |_| {}).unwrap();
        let tap = swept.points[0].clone();
        let top = (0..5).map(|si| swept.rms_pa(si, 0)).fold(0.0, f64::max);
        let limit = Limit {
            kind: LimitKind::Rms,
            value_pa: 2.0 * top,
            db_ref_pa: None,
            written: String::new(),
        };
        let point = OperatingPoint::default();
        let points = vec![(point.clone(), circuit.clone())];
        let with_crossing = |amplitude_pa: f64| {
            let mut s = swept.clone();
            s.crossings = vec![Crossing {
                speed_rev_s: 25.0,
                order: 1,
                freq_hz: 25.0 * shaft.fundamental_hz(1.0),
                point: 0,
                amplitude_pa,
                rise_db: 20.0,
                share_db: 0.0,
            }];
            let sweeps = vec![PointSweep {
                point: point.clone(),
                sweep: s,
                resonances_hz: Vec::new(),
            }];
            over_limit(&points, &sweeps, &tap, &limit, &[None])
        };
        let over = with_crossing(1.01 * std::f64::consts::SQRT_2 * limit.value_pa);
        assert_eq!(over.speeds_rev_s, vec![(24.0, 26.0)]);
        assert_eq!(over.points, 1);
        let under = with_crossing(0.99 * std::f64::consts::SQRT_2 * limit.value_pa);
        assert!(under.speeds_rev_s.is_empty() && under.points == 0);
    }
}

//! `sweep`: the ripple of one shaft's pumps over a speed range at every
//! point, the worst speed per point, every resonance crossing, and the
//! circuit's resonances as the shaft's pumps excite them.

use super::solve::OrderBasis;
use super::{Error, Input, Notice, Origin, Subject, level_db, notices};
use crate::Circuit;
use crate::analysis::ripple::report_points;
use crate::analysis::sweep::{SweepResult, SweepSettings, shaft_resonances, sweep as run_sweep};
use crate::network::Plan;
use crate::source::Shaft;
use serde::Serialize;

/// Default number of speed steps when no step is given.
pub const DEFAULT_STEPS: f64 = 200.0;
/// Most speeds a sweep may hold.
pub const MAX_SPEEDS: usize = 20_001;
/// Most amplitudes (speeds × points × orders) a sweep may hold: bounds its
/// time (about one solve per speed and order) and memory (the grid, the
/// map and the crossings grow with it).
pub const MAX_CELLS: usize = 2_000_000;
/// Nearly singular frequencies reported one by one (the rest are counted).
const SHOWN_WARNINGS: usize = 10;

/// What to sweep, resolved against the circuit.
#[derive(Debug, Clone)]
pub struct SweepRequest {
    /// The shaft swept.
    pub shaft: Shaft,
    /// The speed range (rev/s) and where it came from (the command line or
    /// the file's envelope); `None`: the shaft's `speed_range`.
    pub speed_range: Option<((f64, f64), Origin)>,
    /// The speed step (rev/s); `None`: the range / [`DEFAULT_STEPS`].
    pub step_rev_s: Option<f64>,
    /// Harmonics per pump, overriding the circuit's.
    pub harmonics: Option<u32>,
    /// Smallest rise of a crossing, dB, and where it came from.
    pub min_rise_db: (f64, Origin),
    /// Reference pressure for levels, Pa (rms), and where it came from.
    pub db_ref_pa: (f64, Origin),
    /// The point shown on the map (default: the one with the highest level).
    pub map_point: Option<String>,
    /// The crossings the report shows, and where it came from.
    pub ranking: (super::Ranking, Origin),
}

/// A pump that keeps its own speed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OtherPump {
    /// Its name.
    pub name: String,
    /// Its speed, rev/s.
    pub speed_rev_s: f64,
}

/// The worst speed of a point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorstResult {
    /// The point.
    pub point: String,
    /// Speed, rev/s (refined between the grid speeds).
    pub speed_rev_s: f64,
    /// The overall rms ripple there, Pa.
    pub rms_pa: f64,
    /// Its level in dB re the reference.
    pub level_db: Option<f64>,
}

/// A resonance crossing.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CrossingResult {
    /// Speed of the peak, rev/s (refined between the grid speeds).
    pub speed_rev_s: f64,
    /// Order of the shaft fundamental (one pump: the harmonic number).
    pub order: u32,
    /// Its frequency there, Hz.
    pub freq_hz: f64,
    /// The point.
    pub point: String,
    /// Peak amplitude of the harmonic, Pa.
    pub amplitude_pa: f64,
    /// Rise above its level away from the resonance, dB.
    pub rise_db: f64,
    /// Its level against the point's overall level, dB (≤ 0).
    pub share_db: f64,
}

/// The result of `sweep`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepReport {
    /// The circuit file.
    pub subject: Subject,
    /// Inputs: shaft, speed range, step, harmonics, min rise, dB reference.
    pub inputs: Vec<Input>,
    /// The shaft swept.
    pub shaft: String,
    /// Its pumps.
    pub shaft_pumps: Vec<String>,
    /// g: pumping elements per revolution of its fundamental n·g.
    pub fundamental_elements: u32,
    /// What the orders count.
    pub order_basis: OrderBasis,
    /// Pumps on other shafts (a constant part of the overall levels).
    pub other_pumps: Vec<OtherPump>,
    /// Harmonics of each pump.
    pub harmonics: u32,
    /// The speed grid, rev/s.
    pub speeds_rev_s: Vec<f64>,
    /// The orders solved at every speed.
    pub orders: Vec<u32>,
    /// The measurement points.
    pub points: Vec<String>,
    /// The reference of the levels, Pa.
    pub db_ref_pa: f64,
    /// The circuit's resonance frequencies as the shaft's pumps excite them, Hz.
    pub resonances_hz: Vec<f64>,
    /// The top of the map's frequency axis, Hz.
    pub top_hz: f64,
    /// Per point, the worst speed.
    pub worst: Vec<WorstResult>,
    /// Every resonance crossing, by speed, then order, then point.
    pub crossings: Vec<CrossingResult>,
    /// The crossings the report shows (indices into `crossings`): the
    /// highest first, at most `top`, none more than `floor` below its
    /// point's worst overall level.
    pub shown_crossings: Vec<usize>,
    /// Which crossings are shown (`top`, `floor_db`).
    pub ranking: super::Ranking,
    /// The resonances those crossings excite (of `resonances_hz`), the ones
    /// the map draws.
    pub excited_resonances_hz: Vec<f64>,
    /// Per point, the overall rms ripple at each grid speed, Pa.
    pub overall_rms_pa: Vec<Vec<f64>>,
    /// The index of the point shown on the map.
    pub map_point: usize,
    /// Model-validity and conditioning warnings.
    pub warnings: Vec<Notice>,
    /// The full grid of phasors (speeds × points × orders), for the CSV
    /// and the map; not in the JSON document (the CSV holds it).
    #[serde(skip)]
    pub grid: SweepResult,
    /// Uncertainty bands (`sweep --bands`), set from outside.
    pub bands: Option<super::bands::SweepBands>,
}

/// Sweeps `circuit` as `sweep` does; `progress(done, total)` follows the
/// speeds.
///
/// # Errors
/// [`Error::Request`] for a range, step, size or point that cannot be
/// used; [`Error::Failed`] if a solve fails (a lossless circuit exactly at
/// a resonance); [`Error::NotFinite`] for a value that is not finite.
pub fn sweep(
    mut circuit: Circuit,
    file: &str,
    request: &SweepRequest,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<SweepReport, Error> {
    let shaft = &request.shaft;
    let mut inputs = vec![Input::text("shaft", &shaft.name, Origin::Request)];
    inputs.push(match request.harmonics {
        Some(n) => {
            circuit.harmonics = n;
            Input::number("harmonics", n.into(), "1", Origin::Request)
        }
        None => Input::number("harmonics", circuit.harmonics.into(), "1", Origin::File),
    });
    let ((low, high), range_origin) = match request.speed_range {
        Some(r) => r,
        None => (
            shaft.speed_range_rev_s(&circuit.pumps).ok_or_else(|| {
                Error::Request(format!(
                    "shaft `{}` has no speed range: give --speed-range LOW..HIGH or add `speed_range` to its pump",
                    shaft.name
                ))
            })?,
            Origin::File,
        ),
    };
    inputs.push(Input::range(
        "speed_range",
        (low, high),
        "rev/s",
        range_origin,
    ));
    let (step, step_origin) = match request.step_rev_s {
        Some(s) => (s, Origin::Request),
        None => ((high - low) / DEFAULT_STEPS, Origin::Derived),
    };
    inputs.push(Input::number("speed_step", step, "rev/s", step_origin));
    let (min_rise, rise_origin) = request.min_rise_db;
    inputs.push(Input::number("min_rise", min_rise, "dB", rise_origin));
    let (p_ref, ref_origin) = request.db_ref_pa;
    inputs.push(Input::number("db_ref", p_ref, "Pa", ref_origin));
    let (ranking, ranking_origin) = request.ranking;
    inputs.extend(ranking.inputs(ranking_origin));
    let count = ((high - low) / step * (1.0 + 1e-12)).floor() as usize + 1;
    if !(3..=MAX_SPEEDS).contains(&count) {
        return Err(Error::Request(format!(
            "--speed-step {:.3} rpm gives {count} speeds over {:.1} .. {:.1} rpm: between 3 and {MAX_SPEEDS} are allowed",
            step * 60.0,
            low * 60.0,
            high * 60.0
        )));
    }
    let mut speeds: Vec<f64> = (0..count).map(|i| low + i as f64 * step).collect();
    if high - speeds[count - 1] > 1e-9 * high {
        speeds.push(high);
    }
    let orders = shaft.orders(&circuit.pumps, circuit.harmonics);
    let points = report_points(&circuit);
    let cells = speeds.len() * orders.len() * points.len();
    if cells > MAX_CELLS {
        return Err(Error::Request(format!(
            "{} speeds × {} points × {} harmonics is {cells} amplitudes, more than {MAX_CELLS}: use a larger --speed-step or fewer --harmonics",
            speeds.len(),
            points.len(),
            orders.len()
        )));
    }
    let map_point = match &request.map_point {
        Some(name) => Some(points.iter().position(|p| &p.name == name).ok_or_else(|| {
            Error::Request(format!(
                "--tap {name}: the circuit has no measurement point of that name"
            ))
        })?),
        None => None,
    };
    let top_hz = orders
        .last()
        .map_or(0.0, |&j| f64::from(j) * shaft.fundamental_hz(high));
    let mut warnings = notices(&crate::diagnostics::circuit_warnings(&circuit, top_hz));
    for w in crate::diagnostics::source_map_warnings(&circuit, Some((low, high))) {
        let n = Notice::from(&w);
        if !warnings
            .iter()
            .any(|o| o.subject == n.subject && o.message.contains("outside its source map"))
        {
            warnings.push(n);
        }
    }
    let plan = Plan::compile(&circuit).map_err(|e| Error::Request(format!("{file}: {e}")))?;
    let settings = SweepSettings {
        speeds_rev_s: speeds,
        harmonics: circuit.harmonics,
        min_rise_db: min_rise,
    };
    let total = settings.speeds_rev_s.len();
    let grid = run_sweep(&plan, shaft, &settings, &mut |done| progress(done, total))
        .map_err(|e| Error::failed(format!("sweeping {file}"), e))?;
    // the band of the map: from a quarter of the lowest harmonic at the
    // lowest speed (as `response` does) to a little above the highest
    let low_hz = orders
        .first()
        .map_or(1.0, |&j| f64::from(j) * shaft.fundamental_hz(low));
    let resonances_hz: Vec<f64> =
        shaft_resonances(&plan, shaft, 0.25 * low_hz, 1.05 * top_hz, min_rise)
            .map_err(|e| Error::failed(format!("finding the resonances of {file}"), e))?
            .iter()
            .map(|r| r.freq_hz)
            .collect();
    ensure_finite(&grid)?;
    warnings.extend(notices(
        &grid.warnings[..grid.warnings.len().min(SHOWN_WARNINGS)],
    ));
    if grid.warnings.len() > SHOWN_WARNINGS {
        warnings.push(Notice {
            subject: "sweep".into(),
            message: format!(
                "{} more nearly singular frequencies in the sweep",
                grid.warnings.len() - SHOWN_WARNINGS
            ),
        });
    }
    let worst: Vec<WorstResult> = grid
        .points
        .iter()
        .enumerate()
        .map(|(pi, point)| {
            let w = grid.worst(pi);
            WorstResult {
                point: point.clone(),
                speed_rev_s: w.speed_rev_s,
                rms_pa: w.value_pa,
                level_db: level_db(w.value_pa, p_ref),
            }
        })
        .collect();
    // the point whose worst overall level is the highest
    let map_point = map_point.unwrap_or_else(|| {
        worst
            .iter()
            .enumerate()
            .fold((0, f64::NEG_INFINITY), |best, (i, w)| {
                if w.rms_pa > best.1 {
                    (i, w.rms_pa)
                } else {
                    best
                }
            })
            .0
    });
    // levels in dB re 1 Pa: a crossing's harmonic rms |P|/√2 against its
    // point's worst overall rms
    let db = |p: f64| 20.0 * p.max(f64::MIN_POSITIVE).log10();
    let shown_crossings = request.ranking.0.shown(grid.crossings.iter().map(|c| {
        (
            db(c.amplitude_pa / std::f64::consts::SQRT_2),
            db(worst[c.point].rms_pa),
        )
    }));
    let excited_resonances_hz = excited(
        &resonances_hz,
        shown_crossings.iter().map(|&i| grid.crossings[i].freq_hz),
    );
    Ok(SweepReport {
        subject: Subject {
            file: file.to_string(),
            title: circuit.title.clone(),
        },
        inputs,
        shaft: shaft.name.clone(),
        shaft_pumps: shaft
            .pumps
            .iter()
            .map(|&i| circuit.pumps[i].name.clone())
            .collect(),
        fundamental_elements: shaft.fundamental_elements,
        order_basis: OrderBasis::of(&circuit, shaft),
        other_pumps: circuit
            .pumps
            .iter()
            .enumerate()
            .filter(|(i, _)| !shaft.pumps.contains(i))
            .map(|(_, p)| OtherPump {
                name: p.name.clone(),
                speed_rev_s: p.speed_rev_s,
            })
            .collect(),
        harmonics: circuit.harmonics,
        speeds_rev_s: grid.speeds_rev_s.clone(),
        orders: grid.orders.clone(),
        points: grid.points.clone(),
        db_ref_pa: p_ref,
        resonances_hz,
        top_hz,
        worst,
        crossings: grid
            .crossings
            .iter()
            .map(|c| CrossingResult {
                speed_rev_s: c.speed_rev_s,
                order: c.order,
                freq_hz: c.freq_hz,
                point: grid.points[c.point].clone(),
                amplitude_pa: c.amplitude_pa,
                rise_db: c.rise_db,
                share_db: c.share_db,
            })
            .collect(),
        shown_crossings,
        ranking: request.ranking.0,
        excited_resonances_hz,
        overall_rms_pa: (0..grid.points.len())
            .map(|pi| {
                (0..grid.speeds_rev_s.len())
                    .map(|si| grid.rms_pa(si, pi))
                    .collect()
            })
            .collect(),
        map_point,
        warnings,
        grid,
        bands: None,
    })
}

/// The resonances of `resonances_hz` that the crossings at `crossing_hz`
/// excite: each crossing's nearest resonance within 5 % of it (a crossing
/// peaks at a resonance of the response, shifted a little by the
/// neighbouring ones), in ascending order, each once.
fn excited(resonances_hz: &[f64], crossing_hz: impl Iterator<Item = f64>) -> Vec<f64> {
    let mut out: Vec<f64> = crossing_hz
        .filter_map(|f| {
            resonances_hz
                .iter()
                .copied()
                .filter(|r| (r - f).abs() <= 0.05 * r)
                .min_by(|a, b| (a - f).abs().total_cmp(&(b - f).abs()))
        })
        .collect();
    out.sort_by(f64::total_cmp);
    out.dedup();
    out
}

/// Refuses a result that is not a finite number.
fn ensure_finite(result: &SweepResult) -> Result<(), Error> {
    for si in 0..result.speeds_rev_s.len() {
        for (pi, point) in result.points.iter().enumerate() {
            for oi in 0..result.orders.len() {
                if !result.amplitude_pa(si, pi, oi).is_finite() {
                    return Err(Error::NotFinite(format!(
                        "the ripple at `{point}`, harmonic {} at {:.2} rpm, is not a finite number",
                        result.orders[oi],
                        result.speeds_rev_s[si] * 60.0
                    )));
                }
            }
        }
    }
    Ok(())
}

//! `response`: the pressure per unit source flow of a pump at every point
//! over a band, the circuit's resonances, the bands the pump's harmonics
//! sweep over the speed range, which cross which resonance, and the
//! impedance the pump sees.

use super::setup::{FrequencySweep, Grid, SpeedRange, excited_bands, grid, speed_range};
use super::{Error, Input, Notice, Origin, Phasor, Subject, notices};
use crate::analysis::response::{
    Coverage, HarmonicBand, PeakSettings, Resonance, crossings, find_resonances,
    frequency_response, log_grid,
};
use crate::network::{Plan, SolveError};
use crate::source::shafts;
use crate::{C64, Circuit};
use serde::Serialize;

/// What to compute, resolved against the circuit.
#[derive(Debug, Clone)]
pub struct ResponseRequest {
    /// The pump, speeds and frequencies.
    pub sweep: FrequencySweep,
    /// How close (a fraction of f0) a band edge counts as near, and where
    /// the value came from.
    pub margin: (f64, Origin),
    /// Which crossings and near misses the report shows, and where it
    /// came from.
    pub ranking: (super::Ranking, Origin),
}

/// The pump that drives a response.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PumpRef {
    /// Its name.
    pub name: String,
    /// The node it feeds.
    pub node: String,
    /// Its shaft.
    pub shaft: String,
    /// Pumping elements z.
    pub pumping_elements: u32,
    /// Its speed, rev/s.
    pub speed_rev_s: f64,
}

impl PumpRef {
    /// The pump `pump_index` of `circuit`.
    pub fn of(circuit: &Circuit, pump_index: usize) -> Self {
        let p = &circuit.pumps[pump_index];
        PumpRef {
            name: p.name.clone(),
            node: circuit.nodes[p.node].name.clone(),
            shaft: shafts(&circuit.pumps)
                .into_iter()
                .find(|s| s.pumps.contains(&pump_index))
                .map_or_else(|| p.name.clone(), |s| s.name),
            pumping_elements: p.pumping_elements,
            speed_rev_s: p.speed_rev_s,
        }
    }
}

/// How a harmonic meets a resonance, with the ripple a crossing causes.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verdict {
    /// Harmonic order.
    pub order: u32,
    /// Crossed or near, with the speed.
    pub coverage: Coverage,
    /// For a crossing: the peak ripple it causes, peak level × the
    /// harmonic's source flow at that speed, Pa (`None` when the peak is
    /// unbounded, a lossless model).
    pub ripple_pa: Option<f64>,
}

/// A resonance and the harmonics that meet it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResonanceVerdict {
    /// The resonance.
    pub resonance: Resonance,
    /// The harmonics that cross or near it (empty: clear).
    pub harmonics: Vec<Verdict>,
}

impl ResonanceVerdict {
    /// Whether a harmonic band contains the resonance.
    pub fn crossed(&self) -> bool {
        self.harmonics
            .iter()
            .any(|v| matches!(v.coverage, Coverage::Crossed { .. }))
    }
}

/// A verdict of one harmonic on one resonance.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct VerdictRef {
    /// The index in `resonances`.
    pub resonance: usize,
    /// The index in that resonance's `harmonics`.
    pub harmonic: usize,
}

/// The crossings and near misses of `resonances` a report shows (see
/// [`ResponseResult::shown_crossings`] and [`ResponseResult::shown_near`]).
fn shown(
    resonances: &[ResonanceVerdict],
    ranking: super::Ranking,
) -> (Vec<VerdictRef>, Vec<VerdictRef>) {
    let all: Vec<(VerdictRef, &Verdict)> = resonances
        .iter()
        .enumerate()
        .flat_map(|(ri, r)| {
            r.harmonics.iter().enumerate().map(move |(hi, v)| {
                (
                    VerdictRef {
                        resonance: ri,
                        harmonic: hi,
                    },
                    v,
                )
            })
        })
        .collect();
    // the level of a crossing's ripple, dB re 1 Pa; an unbounded one (a
    // lossless model) above every other
    let crossed: Vec<(VerdictRef, f64)> = all
        .iter()
        .filter(|(_, v)| matches!(v.coverage, Coverage::Crossed { .. }))
        .map(|(at, v)| {
            let level = v
                .ripple_pa
                .map_or(f64::MAX, |p| 20.0 * p.max(f64::MIN_POSITIVE).log10());
            (*at, level)
        })
        .collect();
    let highest = crossed
        .iter()
        .map(|c| c.1)
        .fold(f64::NEG_INFINITY, f64::max);
    let crossings = ranking
        .shown(crossed.iter().map(|c| (c.1, highest)))
        .into_iter()
        .map(|i| crossed[i].0)
        .collect();
    let near: Vec<(VerdictRef, f64)> = all
        .iter()
        .filter_map(|(at, v)| match v.coverage {
            Coverage::Near { gap, .. } => Some((*at, gap)),
            Coverage::Crossed { .. } => None,
        })
        .collect();
    let near = super::Ranking {
        top: ranking.top,
        floor_db: f64::INFINITY,
    }
    .shown(near.iter().map(|n| (-n.1, 0.0)))
    .into_iter()
    .map(|i| near[i].0)
    .collect();
    (crossings, near)
}

/// The impedance the pump sees at one of its harmonics.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LoadAtHarmonic {
    /// Harmonic order.
    pub order: u32,
    /// Frequency at the pump's speed, Hz.
    pub freq_hz: f64,
    /// The impedance, Pa·s/m³; `None` at an undamped pole (a lossless
    /// model).
    pub impedance_pa_s_m3: Option<Phasor>,
}

/// One point's response curve.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PointCurve {
    /// The point's name.
    pub name: String,
    /// P/Qs at each grid frequency, Pa per m³/s (peak/peak).
    pub values_pa_per_m3_s: Vec<Phasor>,
}

/// The result of `response`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResponseResult {
    /// The circuit file.
    pub subject: Subject,
    /// Inputs: harmonics, margin.
    pub inputs: Vec<Input>,
    /// The pump.
    pub pump: PumpRef,
    /// The operating speed range.
    pub speed_range: SpeedRange,
    /// The frequency grid.
    pub grid: Grid,
    /// The margin of "near", a fraction of f0.
    pub margin: f64,
    /// Resonances with their verdicts, by frequency.
    pub resonances: Vec<ResonanceVerdict>,
    /// The crossings the report shows, highest ripple first (an unbounded
    /// one first of all): at most `top`, none more than `floor` below the
    /// highest.
    pub shown_crossings: Vec<VerdictRef>,
    /// The near misses the report shows, closest first, at most `top`.
    pub shown_near: Vec<VerdictRef>,
    /// Which are shown (`top`, `floor_db`).
    pub ranking: super::Ranking,
    /// The bands of the harmonics the pump's source flow has.
    pub bands: Vec<HarmonicBand>,
    /// Harmonics the pump's table lacks (left out).
    pub silent_orders: Vec<u32>,
    /// The impedance the pump sees at its harmonics at its speed.
    pub load: Vec<LoadAtHarmonic>,
    /// Grid frequencies, Hz.
    pub freqs_hz: Vec<f64>,
    /// The response at each point.
    pub points: Vec<PointCurve>,
    /// The impedance the pump sees at each grid frequency, Pa·s/m³.
    pub load_impedance_pa_s_m3: Vec<Phasor>,
    /// Model-validity warnings up to the top of the band.
    pub warnings: Vec<Notice>,
    /// Uncertainty bands of the resonances (`response --bands`), set
    /// from outside.
    pub uncertainty_bands: Option<super::bands::ResponseBands>,
}

/// Applies the request's overrides to `circuit`: harmonics, and the speed
/// of the pump's shaft (mean flows split again).
pub(crate) fn override_circuit(
    circuit: &mut Circuit,
    pump_index: usize,
    harmonics: Option<u32>,
    speed_rev_s: Option<f64>,
) {
    if let Some(n) = harmonics {
        circuit.harmonics = n;
    }
    if let Some(rev_s) = speed_rev_s
        && let Some(shaft) = shafts(&circuit.pumps)
            .into_iter()
            .find(|s| s.pumps.contains(&pump_index))
    {
        shaft.set_speed(&mut circuit.pumps, rev_s);
        crate::meanflow::resolve_line_mean_flows(circuit);
    }
}

/// The circuit with the request's overrides applied: harmonics, and the
/// speed of the pump's shaft (mean flows split again).
pub(crate) fn adjusted(
    mut circuit: Circuit,
    pump_index: usize,
    harmonics: Option<u32>,
    speed_rev_s: Option<f64>,
) -> (Circuit, Vec<Input>) {
    let mut inputs = vec![Input::text(
        "pump",
        &circuit.pumps[pump_index].name,
        Origin::Request,
    )];
    inputs.push(match harmonics {
        Some(n) => Input::number("harmonics", n.into(), "1", Origin::Request),
        None => Input::number("harmonics", circuit.harmonics.into(), "1", Origin::File),
    });
    override_circuit(&mut circuit, pump_index, harmonics, speed_rev_s);
    inputs.push(Input::number(
        "speed",
        circuit.pumps[pump_index].speed_rev_s,
        "rev/s",
        if speed_rev_s.is_some() {
            Origin::Request
        } else {
            Origin::File
        },
    ));
    (circuit, inputs)
}

/// Computes the response as `response` does; `progress(done, total)`
/// follows the frequency grid.
///
/// # Errors
/// [`Error::Request`] if the circuit cannot be compiled; [`Error::Failed`]
/// if a solve fails or a value is not finite.
pub fn response(
    circuit: Circuit,
    file: &str,
    request: &ResponseRequest,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<ResponseResult, Error> {
    let pump_index = request.sweep.pump_index;
    let (circuit, mut inputs) = adjusted(
        circuit,
        pump_index,
        request.sweep.harmonics,
        request.sweep.speed_rev_s,
    );
    inputs.push(Input::number(
        "margin",
        request.margin.0,
        "1",
        request.margin.1,
    ));
    let (ranking, ranking_origin) = request.ranking;
    inputs.extend(ranking.inputs(ranking_origin));
    let speeds = speed_range(
        &circuit,
        pump_index,
        request.sweep.speed_range,
        request.sweep.envelope_speed_range,
    );
    let grid = grid(
        &circuit,
        pump_index,
        &speeds,
        request.sweep.band,
        request.sweep.points,
    );
    let warnings = notices(&crate::diagnostics::circuit_warnings(
        &circuit,
        grid.high_hz,
    ));
    let plan = Plan::compile(&circuit).map_err(|e| Error::Request(format!("{file}: {e}")))?;
    let freqs = log_grid(grid.low_hz, grid.high_hz, grid.points);
    let measured = crate::analysis::ripple::report_points(&circuit).len();
    crate::limits::check_response_values(measured, freqs.len())
        .map_err(|e| Error::Request(format!("{file}: {e}")))?;
    let total = freqs.len();
    let response = frequency_response(&plan, pump_index, &freqs, &mut |i| progress(i, total))
        .map_err(|e| Error::failed(format!("solving {file}"), e))?;
    let resonances = find_resonances(&plan, pump_index, &response, PeakSettings::default())
        .map_err(|e| Error::failed(format!("refining the resonances of {file}"), e))?;
    // Only harmonics the pump's source flow has can excite a resonance.
    let (bands, silent_orders) = excited_bands(&circuit, pump_index, &speeds);
    let pump = &circuit.pumps[pump_index];
    let margin = request.margin.0;
    let resonances: Vec<ResonanceVerdict> = resonances
        .into_iter()
        .map(|r| {
            let harmonics = crossings(r.freq_hz, &bands, margin)
                .into_iter()
                .map(|c| {
                    let ripple_pa = match c.coverage {
                        Coverage::Crossed { speed_rev_s } if !r.unbounded => {
                            Some(r.level * pump.flow_ripple_at(c.order, speed_rev_s).norm())
                        }
                        _ => None,
                    };
                    Verdict {
                        order: c.order,
                        coverage: c.coverage,
                        ripple_pa,
                    }
                })
                .collect();
            ResonanceVerdict {
                resonance: r,
                harmonics,
            }
        })
        .collect();
    let (shown_crossings, shown_near) = shown(&resonances, ranking);
    let load = load_at_harmonics(&plan, pump_index)?;
    Ok(ResponseResult {
        subject: Subject {
            file: file.to_string(),
            title: circuit.title.clone(),
        },
        inputs,
        pump: PumpRef::of(&circuit, pump_index),
        speed_range: speeds,
        grid,
        margin,
        shown_crossings,
        shown_near,
        ranking,
        resonances,
        bands,
        silent_orders,
        load,
        freqs_hz: response.freqs_hz,
        points: response
            .points
            .iter()
            .map(|p| PointCurve {
                name: p.name.clone(),
                values_pa_per_m3_s: p.values.iter().map(|v| Phasor::from(*v)).collect(),
            })
            .collect(),
        load_impedance_pa_s_m3: response
            .load_impedance
            .iter()
            .map(|z| Phasor::from(*z))
            .collect(),
        warnings,
        uncertainty_bands: None,
    })
}

/// The impedance the pump sees at each harmonic at its nominal speed:
/// Z_load = P/(Qs − Ys·P) with a unit source flow (see
/// [`crate::analysis::response`]); `None` at an undamped pole.
fn load_at_harmonics(plan: &Plan<'_>, pump_index: usize) -> Result<Vec<LoadAtHarmonic>, Error> {
    let circuit = plan.circuit();
    let pump = &circuit.pumps[pump_index];
    let one = C64::new(1.0, 0.0);
    let mut ws = plan.workspace();
    let mut rows = Vec::new();
    for k in 1..=circuit.harmonics {
        let f = f64::from(k) * pump.pumping_frequency_hz();
        let z = match plan.solve(f, &[(pump.node, one)], &mut ws) {
            Ok(s) => {
                let p = s.node_pressures[pump.node];
                let ys = pump.source_admittance(2.0 * std::f64::consts::PI * f);
                Some(p / (one - ys * p)).filter(|z| z.is_finite())
            }
            Err(SolveError::Singular { .. }) => None,
            Err(e) => return Err(Error::failed(format!("the impedance at harmonic {k}"), e)),
        };
        rows.push(LoadAtHarmonic {
            order: k,
            freq_hz: f,
            impedance_pa_s_m3: z.map(Phasor::from),
        });
    }
    Ok(rows)
}

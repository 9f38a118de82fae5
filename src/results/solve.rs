//! `solve`: the pressure ripple at every measurement point, harmonic by
//! harmonic, per shaft ("source"), with overall levels, peak-to-peak values
//! and, on request, the time waveform over two shaft revolutions.

use super::{Error, Input, Notice, Origin, Phasor, Subject, level_db, notices};
use crate::Circuit;
use crate::analysis::ripple::{RippleReport, TapRipple, shaft_ripple};
use crate::analysis::waveform;
use crate::network::Plan;
use crate::source::{Shaft, shafts};
use num_complex::Complex64 as C64;
use rayon::prelude::*;
use serde::Serialize;

/// What to solve, resolved against the circuit.
#[derive(Debug, Clone)]
pub struct SolveRequest {
    /// Harmonics per pump, overriding the circuit's.
    pub harmonics: Option<u32>,
    /// A shaft and the speed (rev/s) to run it at instead of the file's.
    pub speed: Option<(Shaft, f64)>,
    /// Reference pressure for levels, Pa (rms), and where it came from.
    pub db_ref_pa: (f64, Origin),
    /// Whether to rebuild each point's time waveform.
    pub waveform: bool,
}

/// A pump as solved.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PumpInfo {
    /// Its name.
    pub name: String,
    /// The node it feeds.
    pub node: String,
    /// Its shaft (its own name when it has a shaft of its own).
    pub shaft: String,
    /// Shaft speed, rev/s.
    pub speed_rev_s: f64,
    /// Where the speed came from.
    pub speed_origin: Origin,
    /// Number of pumping elements z.
    pub pumping_elements: u32,
    /// Pumping frequency n·z, Hz.
    pub pumping_frequency_hz: f64,
}

/// What the orders of a source's table count.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum OrderBasis {
    /// Harmonics of the pumping frequency n·z (one pump, or pumps of equal z).
    PumpingFrequency,
    /// Orders of the shaft fundamental n·g, g = gcd of the pumps' z.
    ShaftFundamental,
}

impl OrderBasis {
    /// The basis of `shaft`'s orders: harmonics of the pumping frequency
    /// when all its pumps have the same z, else orders of n·g.
    pub fn of(circuit: &Circuit, shaft: &Shaft) -> Self {
        if shaft
            .pumps
            .iter()
            .all(|&i| circuit.pumps[i].pumping_elements == shaft.fundamental_elements)
        {
            OrderBasis::PumpingFrequency
        } else {
            OrderBasis::ShaftFundamental
        }
    }

    /// The column header of an order: "harmonic" or "order".
    pub fn header(self) -> &'static str {
        match self {
            OrderBasis::PumpingFrequency => "harmonic",
            OrderBasis::ShaftFundamental => "order",
        }
    }

    /// "harmonic of the pumping frequency" or "order of the shaft fundamental".
    pub fn describe(self) -> &'static str {
        match self {
            OrderBasis::PumpingFrequency => "harmonic of the pumping frequency",
            OrderBasis::ShaftFundamental => "order of the shaft fundamental",
        }
    }
}

/// One harmonic at one point.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct HarmonicRipple {
    /// Order (harmonic number, or order of the shaft fundamental).
    pub order: u32,
    /// Frequency, Hz.
    pub freq_hz: f64,
    /// Pressure ripple, Pa (peak), phase against the shaft-angle reference.
    pub pressure_pa: Phasor,
}

/// The pressure against shaft angle over two shaft revolutions.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Waveform {
    /// Shaft angle of each sample, degrees (0..720).
    pub shaft_angle_deg: Vec<f64>,
    /// Time of each sample from the shaft reference, s.
    pub time_s: Vec<f64>,
    /// Pressure ripple at each sample, Pa.
    pub pressure_pa: Vec<f64>,
    /// The highest point of the waveform (first occurrence): (shaft angle
    /// in degrees, pressure in Pa).
    pub max: (f64, f64),
    /// The lowest point (first occurrence): (shaft angle, pressure).
    pub min: (f64, f64),
}

/// One source's ripple at one point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PointRipple {
    /// The point's name.
    pub point: String,
    /// One entry per order.
    pub harmonics: Vec<HarmonicRipple>,
    /// Overall rms √(Σ|P_k|²/2), Pa.
    pub rms_pa: f64,
    /// Its level in dB re the reference; `None` without ripple.
    pub level_db: Option<f64>,
    /// Peak-to-peak of the waveform rebuilt from the harmonics, Pa.
    pub peak_to_peak_pa: f64,
    /// The waveform, when requested.
    pub waveform: Option<Waveform>,
}

/// The ripple of one shaft's pumps, solved together.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SourceRipple {
    /// The shaft's name (a pump's name for a pump on a shaft of its own).
    pub name: String,
    /// The pumps on it.
    pub pumps: Vec<String>,
    /// Shaft speed, rev/s.
    pub speed_rev_s: f64,
    /// The fundamental the orders count: n·g, Hz.
    pub fundamental_hz: f64,
    /// g: the pumping elements per revolution the fundamental counts.
    pub fundamental_elements: u32,
    /// What the orders are.
    pub order_basis: OrderBasis,
    /// Orders without source flow (a flow table shorter than the
    /// harmonics asked), left out of `points`.
    pub silent_orders: Vec<u32>,
    /// One entry per measurement point.
    pub points: Vec<PointRipple>,
}

/// All sources together at one point (sources on different shafts add in
/// power).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PointTotal {
    /// The point's name.
    pub point: String,
    /// Overall rms over all sources, Pa.
    pub rms_pa: f64,
    /// Its level in dB re the reference; `None` without ripple.
    pub level_db: Option<f64>,
}

/// The result of `solve`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SolveResult {
    /// The circuit file.
    pub subject: Subject,
    /// Inputs: harmonics, dB reference (each shaft's speed is in `pumps`).
    pub inputs: Vec<Input>,
    /// Harmonics solved per pump.
    pub harmonics: u32,
    /// Reference pressure of the levels, Pa (rms).
    pub db_ref_pa: f64,
    /// The pumps.
    pub pumps: Vec<PumpInfo>,
    /// One entry per shaft.
    pub sources: Vec<SourceRipple>,
    /// Per point, all sources together.
    pub totals: Vec<PointTotal>,
    /// Model-validity and conditioning warnings.
    pub warnings: Vec<Notice>,
    /// Uncertainty bands, when asked for (`results::bands`).
    pub bands: Option<super::bands::RippleBands>,
}

impl SolveResult {
    /// Whether several shafts were solved one at a time.
    pub fn several_sources(&self) -> bool {
        self.sources.len() > 1
    }
}

/// Samples per period of the highest order in a waveform.
const WAVEFORM_SAMPLES_PER_PERIOD: usize = 24;
/// Fewest samples over the two revolutions (one per degree).
const WAVEFORM_MIN_SAMPLES: usize = 720;
/// Most samples over the two revolutions.
const WAVEFORM_MAX_SAMPLES: usize = 200_000;

/// Solves `circuit` as `solve` does.
///
/// # Errors
/// [`Error::Request`] if the circuit cannot be compiled into a network;
/// [`Error::Failed`] if it is singular at a harmonic;
/// [`Error::NotFinite`] for a result that is not a finite number.
pub fn solve(
    mut circuit: Circuit,
    file: &str,
    request: &SolveRequest,
) -> Result<SolveResult, Error> {
    let mut inputs = Vec::new();
    match request.harmonics {
        Some(n) => {
            circuit.harmonics = n;
            inputs.push(Input::number("harmonics", n.into(), "1", Origin::Request));
        }
        None => inputs.push(Input::number(
            "harmonics",
            circuit.harmonics.into(),
            "1",
            Origin::File,
        )),
    }
    let (p_ref, ref_origin) = request.db_ref_pa;
    inputs.push(Input::number("db_ref", p_ref, "Pa", ref_origin));
    if let Some((shaft, rev_s)) = &request.speed {
        shaft.set_speed(&mut circuit.pumps, *rev_s);
        // mean flows scale with speed (turbulent friction)
        crate::meanflow::resolve_line_mean_flows(&mut circuit);
    }
    let set_by_request = |i: usize| {
        request
            .speed
            .as_ref()
            .is_some_and(|(s, _)| s.pumps.contains(&i))
    };
    let all = shafts(&circuit.pumps);
    let top_hz = circuit
        .pumps
        .iter()
        .map(|p| p.pumping_frequency_hz() * f64::from(circuit.harmonics))
        .fold(0.0, f64::max);
    let mut warnings = notices(&crate::diagnostics::circuit_warnings(&circuit, top_hz));
    let plan = Plan::compile(&circuit).map_err(|e| Error::Request(format!("{file}: {e}")))?;
    let reports = all
        .iter()
        .map(|s| shaft_ripple(&plan, s, circuit.harmonics, s.speed_rev_s(&circuit.pumps)))
        .collect::<Result<Vec<_>, _>>()
        .map_err(|e| Error::failed(format!("solving {file}"), e))?;
    for report in &reports {
        ensure_finite(report)?;
        warnings.extend(notices(&report.warnings));
    }
    let pumps = circuit
        .pumps
        .iter()
        .enumerate()
        .map(|(i, p)| PumpInfo {
            name: p.name.clone(),
            node: circuit.nodes[p.node].name.clone(),
            shaft: all
                .iter()
                .find(|s| s.pumps.contains(&i))
                .map_or_else(|| p.name.clone(), |s| s.name.clone()),
            speed_rev_s: p.speed_rev_s,
            speed_origin: if set_by_request(i) {
                Origin::Request
            } else {
                Origin::File
            },
            pumping_elements: p.pumping_elements,
            pumping_frequency_hz: p.pumping_frequency_hz(),
        })
        .collect();
    let sources: Vec<SourceRipple> = all
        .iter()
        .zip(&reports)
        .map(|(shaft, report)| source(&circuit, shaft, report, p_ref, request.waveform))
        .collect();
    let totals = (0..sources.first().map_or(0, |s| s.points.len()))
        .map(|i| {
            let rms = sources
                .iter()
                .map(|s| s.points[i].rms_pa.powi(2))
                .sum::<f64>()
                .sqrt();
            PointTotal {
                point: sources[0].points[i].point.clone(),
                rms_pa: rms,
                level_db: level_db(rms, p_ref),
            }
        })
        .collect();
    Ok(SolveResult {
        subject: Subject {
            file: file.to_string(),
            title: circuit.title.clone(),
        },
        inputs,
        harmonics: circuit.harmonics,
        db_ref_pa: p_ref,
        pumps,
        sources,
        totals,
        warnings,
        bands: None,
    })
}

fn source(
    circuit: &Circuit,
    shaft: &Shaft,
    report: &RippleReport,
    p_ref: f64,
    with_waveform: bool,
) -> SourceRipple {
    let period = report.period();
    SourceRipple {
        name: report.pump.clone(),
        pumps: shaft
            .pumps
            .iter()
            .map(|&i| circuit.pumps[i].name.clone())
            .collect(),
        speed_rev_s: report.speed_rev_s,
        fundamental_hz: report.pumping_frequency_hz,
        fundamental_elements: shaft.fundamental_elements,
        order_basis: OrderBasis::of(circuit, shaft),
        silent_orders: report.silent_orders.clone(),
        // each point's peak-to-peak (a waveform search, its sample factors
        // shared) on its own, in parallel; rayon's indexed collect keeps
        // the order
        points: report
            .taps
            .par_iter()
            .map(|tap| PointRipple {
                point: tap.name.clone(),
                harmonics: tap
                    .harmonics
                    .iter()
                    .map(|h| HarmonicRipple {
                        order: h.order,
                        freq_hz: h.freq_hz,
                        pressure_pa: h.pressure.into(),
                    })
                    .collect(),
                rms_pa: tap.rms_pa(),
                level_db: level_db(tap.rms_pa(), p_ref),
                peak_to_peak_pa: tap.peak_to_peak_pa_with(&period),
                waveform: with_waveform
                    .then(|| tap_waveform(tap, shaft.fundamental_elements, report.speed_rev_s)),
            })
            .collect(),
    }
}

/// The waveform of one point over two shaft revolutions: p(θ) =
/// Σ_j Re{P_j e^{j·j·g·θ}} for the orders j of the shaft fundamental n·g
/// (harmonic k of a pump is Re{Q_k e^{jkzθ}}, θ the shaft angle).
fn tap_waveform(tap: &TapRipple, g: u32, speed_rev_s: f64) -> Waveform {
    let h: Vec<(u32, C64)> = tap
        .harmonics
        .iter()
        .map(|h| (h.order, h.pressure))
        .collect();
    let top = h.iter().map(|x| x.0).max().unwrap_or(1) as usize;
    let n = (2 * g as usize * top * WAVEFORM_SAMPLES_PER_PERIOD)
        .clamp(WAVEFORM_MIN_SAMPLES, WAVEFORM_MAX_SAMPLES);
    let g = f64::from(g);
    let angle = |i: usize| 4.0 * std::f64::consts::PI * i as f64 / n as f64;
    let shaft_angle_deg: Vec<f64> = (0..=n).map(|i| angle(i).to_degrees()).collect();
    let time_s = (0..=n)
        .map(|i| angle(i) / (std::f64::consts::TAU * speed_rev_s))
        .collect();
    let pressure_pa = (0..=n)
        .map(|i| waveform::evaluate(&h, g * angle(i)))
        .collect();
    // extremes over one period of the fundamental, as a shaft angle
    let e = waveform::extremes(&h);
    let first = |theta: f64| (theta.rem_euclid(std::f64::consts::TAU) / g).to_degrees();
    Waveform {
        shaft_angle_deg,
        time_s,
        pressure_pa,
        max: (first(e.max.0), e.max.1),
        min: (first(e.min.0), e.min.1),
    }
}

/// Refuses a result that is not a finite number.
fn ensure_finite(report: &RippleReport) -> Result<(), Error> {
    for tap in &report.taps {
        for h in &tap.harmonics {
            if !(h.pressure.re.is_finite() && h.pressure.im.is_finite()) {
                return Err(Error::NotFinite(format!(
                    "the ripple at `{}`, harmonic {} ({:.3} Hz), is not a finite number",
                    tap.name, h.order, h.freq_hz
                )));
            }
        }
    }
    Ok(())
}

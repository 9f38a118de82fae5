//! Uncertainty bands of `solve`: the ripple at every point and harmonic,
//! and each point's overall rms and peak-to-peak, over the uncertain inputs
//! of the circuit (`uncertainty`), by Monte Carlo or to first order.

use super::Error;
use super::response::{ResponseRequest, ResponseResult, override_circuit};
use super::solve::{SolveRequest, SolveResult};
use super::sweep::{SweepReport, SweepRequest};
use crate::Circuit;
use crate::envelope::OperatingPoint;
use crate::io::CircuitTemplate;
use crate::uncertainty::bands::{
    BandError, BandRequest, BandsInfo, Method, OutputBand, Propagated, propagate, response_outputs,
    ripple_outputs, sweep_outputs,
};
use crate::uncertainty::monte_carlo::{MAX_STORED, f32_digits};
use serde::Serialize;

/// The bands of one harmonic's amplitude (Pa, peak).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct HarmonicBand {
    /// Its order.
    pub order: u32,
    /// The band of |P|.
    pub amplitude_pa: OutputBand,
}

/// The bands at one point of one source.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PointBands {
    /// The point.
    pub point: String,
    /// Per harmonic.
    pub harmonics: Vec<HarmonicBand>,
    /// The overall rms, Pa.
    pub rms_pa: OutputBand,
    /// The peak-to-peak, Pa.
    pub peak_to_peak_pa: OutputBand,
}

/// The bands of one source (shaft), in the order of `SolveResult::sources`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SourceBands {
    /// The source's name.
    pub name: String,
    /// Per point.
    pub points: Vec<PointBands>,
}

/// The bands of a `solve`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RippleBands {
    /// How they were made.
    pub info: BandsInfo,
    /// Per source.
    pub sources: Vec<SourceBands>,
}

/// The bands of `nominal` (solved from `template`'s circuit at `point`
/// with `request`). `progress(done, planned)` counts Monte Carlo draws.
///
/// # Errors
/// [`Error::Request`] when the circuit has nothing uncertain or a drawn
/// value makes it invalid; [`Error::Failed`] when a drawn circuit cannot be
/// solved or the bands do not fit in memory.
pub fn ripple_bands(
    template: &CircuitTemplate,
    point: &OperatingPoint,
    request: &SolveRequest,
    bands: &BandRequest,
    nominal: &SolveResult,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<RippleBands, Error> {
    let prepare = |c: &mut Circuit| {
        if let Some(n) = request.harmonics {
            c.harmonics = n;
        }
        if let Some((shaft, rev_s)) = &request.speed {
            shaft.set_speed(&mut c.pumps, *rev_s);
            crate::meanflow::resolve_line_mean_flows(c);
        }
    };
    let p = propagate(
        template,
        point,
        &prepare,
        &ripple_outputs,
        None,
        bands,
        progress,
    )
    .map_err(|e| band_error(e, "the ripple"))?;
    // the layout of `ripple_outputs`: every amplitude (source, point,
    // order), then each point's rms and peak-to-peak
    let amplitudes: usize = nominal
        .sources
        .iter()
        .flat_map(|s| &s.points)
        .map(|pt| pt.harmonics.len())
        .sum();
    let points = nominal
        .sources
        .iter()
        .map(|s| s.points.len())
        .sum::<usize>();
    if p.outputs.len() != amplitudes + 2 * points {
        return Err(Error::Request(format!(
            "the drawn circuits give {} outputs where the nominal one gives {}",
            p.outputs.len(),
            amplitudes + 2 * points
        )));
    }
    let mut amplitude = p.outputs[..amplitudes].iter();
    let mut totals = p.outputs[amplitudes..].chunks_exact(2);
    let sources = nominal
        .sources
        .iter()
        .map(|s| SourceBands {
            name: s.name.clone(),
            points: s
                .points
                .iter()
                .zip(totals.by_ref())
                .map(|(pt, total)| PointBands {
                    point: pt.point.clone(),
                    harmonics: pt
                        .harmonics
                        .iter()
                        .zip(amplitude.by_ref())
                        .map(|(h, b)| HarmonicBand {
                            order: h.order,
                            amplitude_pa: *b,
                        })
                        .collect(),
                    rms_pa: total[0],
                    peak_to_peak_pa: total[1],
                })
                .collect(),
        })
        .collect();
    Ok(RippleBands {
        info: p.info,
        sources,
    })
}

/// The band of a curve: the ends of each value's coverage interval (the
/// Monte Carlo one, else the first-order one; NaN, `null` in JSON, where a
/// band is unknown).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CurveBand {
    /// The curve: a measurement point, or the impedance seen by the pump.
    pub name: String,
    /// The low ends, one per grid value.
    pub low: Vec<f64>,
    /// The high ends.
    pub high: Vec<f64>,
}

/// The band of one harmonic's amplitude over a sweep's speeds.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OrderCurveBand {
    /// The harmonic (order).
    pub order: u32,
    /// The low ends of its peak amplitude's band per grid speed, Pa.
    pub low_pa: Vec<f64>,
    /// The high ends, Pa.
    pub high_pa: Vec<f64>,
}

/// The ends of each band's interval (NaN where it is unknown).
fn ends<'a>(bands: impl Iterator<Item = &'a OutputBand>) -> (Vec<f64>, Vec<f64>) {
    bands
        .map(|b| b.interval().unwrap_or((f64::NAN, f64::NAN)))
        .unzip()
}

/// A propagation's error as an analysis error about `what`.
fn band_error(e: BandError, what: &str) -> Error {
    if e.is_input() {
        Error::Request(e.to_string())
    } else {
        Error::failed(format!("uncertainty bands of {what}"), e)
    }
}

/// The bands of one resonance of `response`: in every drawn circuit, the
/// resonance paired with the nominal one
/// ([`crate::uncertainty::bands::matching_resonances`]; the draws without
/// one are counted in each band's `missing`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ResonanceBand {
    /// The nominal resonance frequency, Hz.
    pub nominal_hz: f64,
    /// The band of its frequency, Hz.
    pub freq_hz: OutputBand,
    /// The band of its peak level |P/Qs|, Pa·s/m³.
    pub level_pa_per_m3_s: OutputBand,
}

/// The bands of a `response`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ResponseBands {
    /// How they were made.
    pub info: BandsInfo,
    /// Per nominal resonance, in the order of `ResponseResult::resonances`.
    pub resonances: Vec<ResonanceBand>,
    /// The bands of |P/Qs| (Pa·s/m³) per measurement point on the grid, in
    /// the order of `ResponseResult::points`, then that of the impedance
    /// the pump sees (Pa·s/m³); empty when they would not fit in memory
    /// ([`crate::uncertainty::monte_carlo::MAX_STORED`]).
    pub curves: Vec<CurveBand>,
}

/// The bands of the resonances of `nominal` (a `response` of `template`'s
/// circuit at `point` with `request`), on its frequency grid.
/// `progress(done, planned)` counts Monte Carlo draws.
///
/// # Errors
/// As [`ripple_bands`].
pub fn response_bands(
    template: &CircuitTemplate,
    point: &OperatingPoint,
    request: &ResponseRequest,
    bands: &BandRequest,
    nominal: &ResponseResult,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<ResponseBands, Error> {
    let s = &request.sweep;
    let prepare = |c: &mut Circuit| override_circuit(c, s.pump_index, s.harmonics, s.speed_rev_s);
    let f0: Vec<f64> = nominal
        .resonances
        .iter()
        .map(|r| r.resonance.freq_hz)
        .collect();
    // the curves too when their draws fit in memory; the resonances decide
    // when the draws stop (the curves when the band holds no resonance)
    let np = nominal.points.len();
    let nf = nominal.freqs_hz.len();
    let curve_outputs = (np + 1) * nf;
    let planned = match bands.method {
        Method::Linear => 0,
        Method::MonteCarlo => bands
            .monte_carlo
            .draws
            .unwrap_or(2 * bands.monte_carlo.batch()),
    };
    let with_curves = (curve_outputs + 2 * f0.len()).saturating_mul(planned) <= MAX_STORED;
    if f0.is_empty() && !with_curves {
        return Err(Error::Request(format!(
            "{}: no resonance in the band, and the bands of the curves would not fit in memory \
             ({} values per draw): give fewer --points or a narrower --band",
            nominal.subject.file, curve_outputs
        )));
    }
    let evaluate = |c: Circuit| {
        let out = response_outputs(c, s.pump_index, &nominal.freqs_hz, &f0)?;
        if out.len() != curve_outputs + 2 * f0.len() {
            return Err(format!(
                "a drawn circuit gives {} response values where the nominal one gives {}",
                out.len(),
                curve_outputs + 2 * f0.len()
            ));
        }
        Ok(if with_curves {
            out
        } else {
            out[curve_outputs..].to_vec()
        })
    };
    let first = if with_curves { curve_outputs } else { 0 };
    let judged = if f0.is_empty() {
        0..curve_outputs
    } else {
        first..first + 2 * f0.len()
    };
    let p: Propagated = propagate(
        template,
        point,
        &prepare,
        &evaluate,
        Some(judged),
        bands,
        progress,
    )
    .map_err(|e| {
        let what = if f0.is_empty() {
            "the response curves"
        } else {
            "the resonances"
        };
        band_error(e, what)
    })?;
    let resonances = f0
        .iter()
        .zip(p.outputs[first..].chunks_exact(2))
        .map(|(&nominal_hz, b)| ResonanceBand {
            nominal_hz,
            freq_hz: b[0],
            level_pa_per_m3_s: b[1],
        })
        .collect();
    let names = nominal
        .points
        .iter()
        .map(|p| p.name.clone())
        .chain(std::iter::once(
            crate::render::response::load_impedance_point(&nominal.pump.name),
        ));
    let curves = if with_curves {
        names
            .zip(p.outputs[..curve_outputs].chunks_exact(nf.max(1)))
            .map(|(name, b)| {
                let (low, high) = ends(b.iter());
                CurveBand { name, low, high }
            })
            .collect()
    } else {
        Vec::new()
    };
    Ok(ResponseBands {
        info: p.info,
        resonances,
        curves,
    })
}

/// The bands of one point of `sweep`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepPointBands {
    /// The point.
    pub point: String,
    /// The overall rms at each grid speed, Pa.
    pub rms_pa: Vec<OutputBand>,
    /// Each harmonic's peak amplitude at each grid speed, in the order of
    /// `SweepReport::orders`.
    pub amplitudes: Vec<OrderCurveBand>,
    /// The true worst speed, rev/s.
    pub worst_speed_rev_s: OutputBand,
    /// Where the worst speed lies over the Monte Carlo draws
    /// ([`worst_speed_places`]), increasing; empty for first-order bands.
    pub worst_speed_places: Vec<SpeedPlace>,
    /// The overall rms there, Pa.
    pub worst_rms_pa: OutputBand,
}

/// A place where a point's worst speed lies in some of the Monte Carlo
/// draws: a run of the draws' worst speeds with no gap wider than
/// [`WORST_SPEED_GAP`] (`uncertainty::stats::places`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SpeedPlace {
    /// The lowest worst speed there, rev/s.
    pub low_rev_s: f64,
    /// The highest, rev/s.
    pub high_rev_s: f64,
    /// Draws whose worst speed lies there.
    pub draws: usize,
    /// Their share of the draws that have one (0..1).
    pub share: f64,
    /// Whether it is the place of the nominal worst speed (the nearest to
    /// it).
    pub nominal: bool,
}

/// Draws' worst speeds more than this fraction apart (with none between)
/// lie in different places. A worst speed that follows a resonance
/// crossing moves continuously with the inputs, so its draws lie close
/// together (1,000 draws over a band a few percent wide); when the worst
/// passes from one crossing to another it jumps, usually by more than a
/// resonance's width (several percent of the speed). Our choice, between
/// the two.
pub const WORST_SPEED_GAP: f64 = 0.02;

/// Where the draws put a point's worst speed: the places of `samples` (the
/// draws' worst speeds, rev/s) with their shares, the one nearest the
/// nominal worst speed `nominal_rev_s` marked.
pub fn worst_speed_places(samples: &[f32], nominal_rev_s: f64) -> Vec<SpeedPlace> {
    let places = crate::uncertainty::stats::places(samples, WORST_SPEED_GAP);
    let total: usize = places.iter().map(|p| p.count).sum();
    let distance = |p: &crate::uncertainty::stats::Place| {
        (p.low / nominal_rev_s).ln().max(0.0) + (nominal_rev_s / p.high).ln().max(0.0)
    };
    let nearest =
        (0..places.len()).min_by(|&a, &b| distance(&places[a]).total_cmp(&distance(&places[b])));
    places
        .iter()
        .enumerate()
        .map(|(i, p)| SpeedPlace {
            low_rev_s: f32_digits(p.low),
            high_rev_s: f32_digits(p.high),
            draws: p.count,
            share: p.count as f64 / total as f64,
            nominal: Some(i) == nearest,
        })
        .collect()
}

/// The bands of a `sweep`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepBands {
    /// How they were made.
    pub info: BandsInfo,
    /// Per point, in the order of `SweepReport::points`.
    pub points: Vec<SweepPointBands>,
}

/// The bands of `nominal` (a `sweep` of `template`'s circuit at `point`
/// with `request`) on its speed grid. `progress(done, planned)` counts
/// Monte Carlo draws.
///
/// # Errors
/// As [`ripple_bands`].
pub fn sweep_bands(
    template: &CircuitTemplate,
    point: &OperatingPoint,
    request: &SweepRequest,
    bands: &BandRequest,
    nominal: &SweepReport,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<SweepBands, Error> {
    let prepare = |c: &mut Circuit| {
        if let Some(n) = request.harmonics {
            c.harmonics = n;
        }
    };
    let speeds = &nominal.speeds_rev_s;
    let evaluate = |c: Circuit| sweep_outputs(c, &request.shaft, speeds, nominal.harmonics);
    // the layout of `sweep_outputs`: the rms per point and speed, then per
    // point the worst speed and its rms (which decide when the draws
    // stop), then every amplitude (speed, point, order)
    let np = nominal.points.len();
    let ns = speeds.len();
    let no = nominal.orders.len();
    let judged = np * ns..np * (ns + 2);
    let p = propagate(
        template,
        point,
        &prepare,
        &evaluate,
        Some(judged),
        bands,
        progress,
    )
    .map_err(|e| band_error(e, "the sweep"))?;
    let expected = np * (ns + 2) + ns * np * no;
    if p.outputs.len() != expected {
        return Err(Error::Request(format!(
            "the drawn circuits give {} outputs where the nominal one gives {expected}",
            p.outputs.len(),
        )));
    }
    let (levels, rest) = p.outputs.split_at(np * ns);
    let (worst, amplitudes) = rest.split_at(2 * np);
    let points = nominal
        .points
        .iter()
        .enumerate()
        .zip(levels.chunks_exact(ns))
        .zip(worst.chunks_exact(2))
        .map(|(((pi, name), rms), w)| SweepPointBands {
            point: name.clone(),
            rms_pa: rms.to_vec(),
            amplitudes: nominal
                .orders
                .iter()
                .enumerate()
                .map(|(oi, &order)| {
                    let (low_pa, high_pa) =
                        ends((0..ns).map(|si| &amplitudes[(si * np + pi) * no + oi]));
                    OrderCurveBand {
                        order,
                        low_pa,
                        high_pa,
                    }
                })
                .collect(),
            worst_speed_rev_s: w[0],
            worst_speed_places: p
                .judged_samples
                .get(2 * pi)
                .map_or_else(Vec::new, |s| worst_speed_places(s, w[0].nominal)),
            worst_rms_pa: w[1],
        })
        .collect();
    Ok(SweepBands {
        info: p.info,
        points,
    })
}

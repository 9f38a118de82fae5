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
    BandError, BandRequest, BandsInfo, OutputBand, Propagated, propagate, response_outputs,
    ripple_outputs, sweep_outputs,
};
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
    let p = propagate(template, point, &prepare, &ripple_outputs, bands, progress)
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

/// A propagation's error as an analysis error about `what`.
fn band_error(e: BandError, what: &str) -> Error {
    match e {
        BandError::NothingUncertain | BandError::Input(_) => Error::Request(e.to_string()),
        other => Error::failed(format!("uncertainty bands of {what}"), other),
    }
}

/// The bands of one resonance of `response`: in every drawn circuit, the
/// resonance nearest the nominal one (within a factor 1.5).
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
    if f0.is_empty() {
        return Err(Error::Request(format!(
            "{}: no resonance in the band to give uncertainty bands of",
            nominal.subject.file
        )));
    }
    // only the resonances' outputs: the last two per nominal resonance
    let evaluate = |c: Circuit| {
        let out = response_outputs(c, s.pump_index, &nominal.freqs_hz, &f0)?;
        Ok(out[out.len() - 2 * f0.len()..].to_vec())
    };
    let p: Propagated = propagate(template, point, &prepare, &evaluate, bands, progress)
        .map_err(|e| band_error(e, "the resonances"))?;
    let resonances = f0
        .iter()
        .zip(p.outputs.chunks_exact(2))
        .map(|(&nominal_hz, b)| ResonanceBand {
            nominal_hz,
            freq_hz: b[0],
            level_pa_per_m3_s: b[1],
        })
        .collect();
    Ok(ResponseBands {
        info: p.info,
        resonances,
    })
}

/// The bands of one point of `sweep`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SweepPointBands {
    /// The point.
    pub point: String,
    /// The overall rms at each grid speed, Pa.
    pub rms_pa: Vec<OutputBand>,
    /// The true worst speed, rev/s.
    pub worst_speed_rev_s: OutputBand,
    /// The overall rms there, Pa.
    pub worst_rms_pa: OutputBand,
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
    let p = propagate(template, point, &prepare, &evaluate, bands, progress)
        .map_err(|e| band_error(e, "the sweep"))?;
    // the layout of `sweep_outputs`: the rms per point and speed, then per
    // point the worst speed and its rms
    let np = nominal.points.len();
    let ns = speeds.len();
    if p.outputs.len() != np * (ns + 2) {
        return Err(Error::Request(format!(
            "the drawn circuits give {} outputs where the nominal one gives {}",
            p.outputs.len(),
            np * (ns + 2)
        )));
    }
    let (levels, worst) = p.outputs.split_at(np * ns);
    let points = nominal
        .points
        .iter()
        .zip(levels.chunks_exact(ns))
        .zip(worst.chunks_exact(2))
        .map(|((name, rms), w)| SweepPointBands {
            point: name.clone(),
            rms_pa: rms.to_vec(),
            worst_speed_rev_s: w[0],
            worst_rms_pa: w[1],
        })
        .collect();
    Ok(SweepBands {
        info: p.info,
        points,
    })
}

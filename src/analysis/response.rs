//! The circuit's frequency response, its resonances, and which pump
//! harmonics cross them (what `ripline response` reports).
//!
//! * **Response.** With a unit source flow (1 m³/s) injected at the pump's
//!   node and every pump's source impedance in the network, the pressure at
//!   each measurement point is the transfer function H(f) = P/Qs in
//!   Pa per m³/s. The impedance the pump sees is the load impedance at its
//!   node without its own source impedance: Z_load = P/(Qs − Ys·P), since the
//!   flow delivered into the circuit is Qs − P/Zs (methods.md §5).
//! * **Resonances** are peaks of |H| at any point, found on a logarithmic
//!   frequency grid, kept when their prominence (the drop to the higher of
//!   the two valleys that separate them from higher ground) is at least a
//!   threshold, refined between the grid neighbours (methods.md §7.2 refines
//!   near peaks by golden-section; here a safeguarded parabolic search on
//!   1/|H|², which lands on a Lorentzian peak in a step or two, to a
//!   relative 1e-9 in frequency, for the peaks that can lead a resonance;
//!   the others only to rank them, see [`find_resonances`]), and given a
//!   quality factor
//!   Q = f0/(f2 − f1) from the half-power points |H(f1,2)| = |H(f0)|/√2
//!   (Illinois root search, to a relative 1e-10). Peaks of several points
//!   within a relative tolerance of each other are one resonance, reported
//!   at the point where it is highest.
//! * **Harmonic bands.** Over a speed range n_lo..n_hi, harmonic k of the
//!   pumping frequency sweeps k·z·n_lo .. k·z·n_hi (z pumping elements). A
//!   resonance inside a band is crossed at speed n = f0/(k z); one within a
//!   margin of a band's edge is near (common practice keeps excitation some
//!   10–20 % away from a resonance).

use super::ripple::{report_points, solved_pressure};
use crate::circuit::TapLocation;
use crate::elements::NodeId;
use crate::network::{Plan, SolveError, Workspace};
use num_complex::Complex64 as C64;

/// The response of one measurement point: pressure per unit source flow at
/// each grid frequency.
#[derive(Debug, Clone, PartialEq)]
pub struct PointResponse {
    /// The point's name.
    pub name: String,
    /// Where it reads.
    pub location: TapLocation,
    /// H(f) = P/Qs in Pa per m³/s, one per grid frequency.
    pub values: Vec<C64>,
}

/// The frequency response of a circuit to one pump's source flow.
#[derive(Debug, Clone, PartialEq)]
pub struct FrequencyResponse {
    /// The pump's name.
    pub pump: String,
    /// Grid frequencies in Hz (increasing).
    pub freqs_hz: Vec<f64>,
    /// One entry per measurement point.
    pub points: Vec<PointResponse>,
    /// The impedance the pump sees at its node, in Pa·s/m³, per frequency.
    pub load_impedance: Vec<C64>,
}

/// `n` frequencies spaced evenly in log(f) from `lo_hz` to `hi_hz`.
pub fn log_grid(lo_hz: f64, hi_hz: f64, n: usize) -> Vec<f64> {
    let n = n.max(2);
    let ratio = (hi_hz / lo_hz).ln();
    (0..n)
        .map(|i| lo_hz * (ratio * i as f64 / (n - 1) as f64).exp())
        .collect()
}

/// A grid size with steps of 0.2 % in frequency (at least 200 points, at
/// most 50 000): fine enough to resolve resonances of Q up to several
/// hundred, which the refinement then pins down.
pub fn default_points(lo_hz: f64, hi_hz: f64) -> usize {
    let n = ((hi_hz / lo_hz).ln() / 1.002f64.ln()).ceil() as usize + 1;
    n.clamp(200, 50_000)
}

/// A unit flow (1 m³/s) into the network at pump `pump_index`'s node.
fn unit_injection(plan: &Plan<'_>, pump_index: usize) -> [(NodeId, C64); 1] {
    [(plan.circuit().pumps[pump_index].node, C64::new(1.0, 0.0))]
}

/// Solves the circuit in place with a unit source flow at the pump's node
/// (see [`Plan::solve_in_place`]); a grid frequency that lands exactly on
/// an undamped resonance (a lossless circuit) is moved by one part in 10⁹,
/// where the response is large but finite. Returns the frequency solved.
fn solve_unit_nudged(
    plan: &Plan<'_>,
    pump_index: usize,
    freq_hz: f64,
    ws: &mut Workspace,
) -> Result<f64, SolveError> {
    let unit = unit_injection(plan, pump_index);
    match plan.solve_in_place(freq_hz, &unit, ws) {
        Err(SolveError::Singular { .. }) => {
            let nudged = freq_hz * (1.0 + 1e-9);
            plan.solve_in_place(nudged, &unit, ws).map(|_| nudged)
        }
        other => other.map(|_| freq_hz),
    }
}

/// Why a response could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum ResponseError {
    /// The network could not be solved.
    #[error(transparent)]
    Solve(#[from] SolveError),
    /// A result is not a finite number.
    #[error(
        "{what} is not a finite number at {freq_hz:.6} Hz (an undamped resonance of a lossless model?)"
    )]
    NotFinite {
        /// What was computed.
        what: String,
        /// The frequency.
        freq_hz: f64,
    },
}

/// The response at every measurement point (the circuit's taps, or every
/// node when it has none) and the impedance the pump sees, at each of
/// `freqs_hz`. `progress` is called with the number of frequencies done.
///
/// # Errors
/// [`ResponseError`] when the network cannot be solved at a frequency or a
/// value is not finite.
///
/// # Panics
/// If `pump_index` is out of range.
pub fn frequency_response(
    plan: &Plan<'_>,
    pump_index: usize,
    freqs_hz: &[f64],
    progress: &mut dyn FnMut(usize),
) -> Result<FrequencyResponse, ResponseError> {
    let circuit = plan.circuit();
    let pump = &circuit.pumps[pump_index];
    let taps = report_points(circuit);
    let mut points: Vec<PointResponse> = taps
        .iter()
        .map(|t| PointResponse {
            name: t.name.clone(),
            location: t.location,
            values: Vec::with_capacity(freqs_hz.len()),
        })
        .collect();
    // each frequency on its own (in parallel), collected in order
    let columns = crate::parallel::ordered_map(
        freqs_hz,
        crate::parallel::pays(plan.unknowns(), freqs_hz.len()),
        || plan.workspace(),
        |ws, &f| {
            let solved_hz = solve_unit_nudged(plan, pump_index, f, ws)?;
            let mut values = Vec::with_capacity(taps.len() + 1);
            for tap in &taps {
                let h = solved_pressure(plan, ws, solved_hz, tap.location);
                if !h.is_finite() {
                    return Err(ResponseError::NotFinite {
                        what: format!("the response at `{}`", tap.name),
                        freq_hz: f,
                    });
                }
                values.push(h);
            }
            let p = plan.node_pressure(ws, pump.node);
            let ys = pump
                .source_impedance
                .admittance(2.0 * std::f64::consts::PI * f);
            let z = p / (C64::new(1.0, 0.0) - ys * p);
            if !z.is_finite() {
                return Err(ResponseError::NotFinite {
                    what: format!("the impedance pump `{}` sees", pump.name),
                    freq_hz: f,
                });
            }
            values.push(z);
            Ok(values)
        },
        progress,
    )?;
    let mut load_impedance = Vec::with_capacity(freqs_hz.len());
    for column in columns {
        for (point, &h) in points.iter_mut().zip(&column) {
            point.values.push(h);
        }
        load_impedance.push(column[taps.len()]);
    }
    Ok(FrequencyResponse {
        pump: pump.name.clone(),
        freqs_hz: freqs_hz.to_vec(),
        points,
        load_impedance,
    })
}

/// How peaks are picked and merged.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PeakSettings {
    /// Smallest prominence of a peak, in dB (20·log10 of the peak over the
    /// higher of its two valleys).
    pub min_prominence_db: f64,
    /// Peaks of different points closer than this fraction of their
    /// frequency are one resonance.
    pub merge_tolerance: f64,
    /// Refine every peak to [`PEAK_TOLERANCE`], not only those that can
    /// decide what is reported (the same resonances, with several times
    /// the solves; for checking the screening).
    pub refine_every_peak: bool,
}

impl Default for PeakSettings {
    /// 3 dB prominence (a peak that rises at least to the half-power level
    /// above its surroundings) and a 2 % merge tolerance.
    fn default() -> Self {
        PeakSettings {
            min_prominence_db: 3.0,
            merge_tolerance: 0.02,
            refine_every_peak: false,
        }
    }
}

/// A resonance of the circuit.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Resonance {
    /// Peak frequency f0 in Hz.
    pub freq_hz: f64,
    /// The point where the peak is highest.
    pub point: String,
    /// |H(f0)| at that point, in Pa per m³/s.
    #[serde(rename = "level_pa_per_m3_s")]
    pub level: f64,
    /// Quality factor f0/(f2 − f1) from the half-power points; where the
    /// response does not fall to half power on one side before the next
    /// rise, the other side's half-bandwidth is doubled; `None` when
    /// neither side falls that far.
    pub quality: Option<f64>,
    /// True when the peak is an undamped pole (a lossless model): the level
    /// is then the largest finite value found, not the peak.
    pub unbounded: bool,
    /// Every point that shows the peak.
    pub seen_at: Vec<String>,
}

/// Relative tolerance of a refined peak frequency: the search stops when
/// the bracket around the best point is narrower than this fraction of the
/// frequency.
pub const PEAK_TOLERANCE: f64 = 1e-9;

/// Relative tolerance of a half-power frequency (the bracket's width at the
/// end, its midpoint returned): Q = f0/(f2 − f1) is then good to about
/// 2e-10·Q relative.
pub const HALF_POWER_TOLERANCE: f64 = 1e-10;

/// Level tolerance (dB) of the first search of every grid peak, which
/// only ranks the peaks of one resonance: it stops once a parabola through
/// its best samples predicts less gain than this.
pub const SCREEN_TOLERANCE_DB: f64 = 0.1;

/// How far (dB) below the highest first-search level of its resonance a
/// peak may lie and still be refined to [`PEAK_TOLERANCE`] (five times the
/// first search's tolerance): a peak further below cannot lead it.
pub const LEADER_SCREEN_DB: f64 = 0.5;

/// A grid peak of one point: (point, grid index, left valley, right
/// valley), indices into the points and the grid.
type GridPeak = (usize, usize, usize, usize);

/// One peak before merging: refined to [`PEAK_TOLERANCE`], or searched to
/// [`SCREEN_TOLERANCE_DB`] only.
struct Peak {
    /// Its grid peak: an index into the candidates.
    candidate: usize,
    freq_hz: f64,
    level: f64,
    unbounded: bool,
    /// The samples either side of the best one: the peak lies between.
    bracket: (f64, f64),
}

/// Finds the resonances in a computed response (see the module docs).
///
/// Each point's grid peaks are searched (a safeguarded parabolic search on
/// 1/|H|², `worst::refine`) and merged, highest first. Only the peaks that
/// can decide what is reported are refined to [`PEAK_TOLERANCE`] (most
/// take no solve before that): each peak is first searched to
/// [`SCREEN_TOLERANCE_DB`] in level, which ranks the peaks of a resonance;
/// then, until none is left, every peak within [`LEADER_SCREEN_DB`] of its
/// resonance's leader, and every peak whose bracket straddles the merge
/// tolerance of a resonance, continues to [`PEAK_TOLERANCE`]. The result
/// is that of refining every peak, to the tolerances (the shipped circuits
/// and generated ones at 300 to 10,000 grid points give the same
/// resonances, points and quality factors; DEVELOPERS.md, "Benchmarks"), at
/// about a fifth of the solves. Then the half-power points of the peak that
/// leads each resonance (the only one whose quality is reported) by the
/// Illinois method to [`HALF_POWER_TOLERANCE`].
///
/// # Errors
/// [`SolveError`] from the refining solves (other than a singular matrix at
/// an undamped pole, which marks the peak as unbounded).
pub fn find_resonances(
    plan: &Plan<'_>,
    pump_index: usize,
    response: &FrequencyResponse,
    settings: PeakSettings,
) -> Result<Vec<Resonance>, SolveError> {
    let f = &response.freqs_hz;
    let n = f.len();
    // Each point's magnitudes and grid peaks prominent enough to refine:
    // (point, grid index, left and right valley); the points in parallel.
    let per_point: Vec<(Vec<f64>, Vec<GridPeak>)> = {
        use rayon::prelude::*;
        let point = |pi: usize| {
            let mag: Vec<f64> = response.points[pi]
                .values
                .iter()
                .map(|v| v.norm())
                .collect();
            let valleys = valleys(&mag);
            let mut found = Vec::new();
            for i in 1..n.saturating_sub(1) {
                if !(mag[i] > mag[i - 1] && mag[i] >= mag[i + 1]) {
                    continue;
                }
                let [(left_valley, left_min), (right_valley, right_min)] = valleys[i];
                let base = left_min.max(right_min);
                if base > 0.0 && 20.0 * (mag[i] / base).log10() < settings.min_prominence_db {
                    continue;
                }
                found.push((pi, i, left_valley, right_valley));
            }
            (mag, found)
        };
        (0..response.points.len())
            .into_par_iter()
            .map(point)
            .collect()
    };
    let mut mags: Vec<Vec<f64>> = Vec::with_capacity(per_point.len());
    let mut candidates: Vec<GridPeak> = Vec::new();
    for (mag, found) in per_point {
        mags.push(mag);
        candidates.extend(found);
    }
    // |H| at a point, or +∞ at an undamped pole.
    let unit = unit_injection(plan, pump_index);
    let eval = |point: TapLocation, freq: f64, ws: &mut Workspace| -> Result<f64, SolveError> {
        match plan.solve_in_place(freq, &unit, ws) {
            Ok(_) => Ok(solved_pressure(plan, ws, freq, point).norm()),
            Err(SolveError::Singular { .. }) => Ok(f64::INFINITY),
            Err(e) => Err(e),
        }
    };
    // A peak's search from its samples (the grid's three at first), to
    // `settings`; each is independent (its own solves), so they run in
    // parallel and are collected in order: the same peaks on any number of
    // threads.
    let search = |work: Vec<(usize, Vec<(f64, f64)>)>, settings: super::worst::WorstSettings| {
        crate::parallel::ordered_map_quiet(
            &work,
            crate::parallel::pays(plan.unknowns(), 8 * work.len()),
            || plan.workspace(),
            |ws, (c, samples)| {
                let (pi, i, _, _) = candidates[*c];
                let location = response.points[pi].location;
                let mag = &mags[pi];
                let mut samples = samples.clone();
                let (f0, top) =
                    super::worst::refine(|x| eval(location, x, ws), &mut samples, &settings)
                        .map_err(|(_, e)| e)?;
                let (mut freq_hz, level, unbounded) = if top.is_finite() && top >= mag[i] {
                    (f0, top, false)
                } else if top.is_finite() {
                    (f[i], mag[i], false)
                } else {
                    (f0, mag[i], true)
                };
                // the best sample's index, and the samples either side
                let ib = samples.partition_point(|p| p.0 < f0).min(samples.len() - 1);
                let bracket = (
                    samples[ib.saturating_sub(1)].0,
                    samples[(ib + 1).min(samples.len() - 1)].0,
                );
                let interior = ib > 0 && ib + 1 < samples.len() && samples[ib].0 == f0;
                if settings.tolerance_db > 0.0 && !unbounded && freq_hz == f0 && interior {
                    // a screening search places its peak at the vertex
                    // through its best samples, nearer the refined peak
                    // than the best sample is (the merge compares them)
                    let three = [samples[ib - 1], samples[ib], samples[ib + 1]];
                    if let Some((x, _)) = super::worst::lorentzian_peak(three) {
                        freq_hz = x;
                    }
                }
                let peak = Peak {
                    candidate: *c,
                    freq_hz,
                    level,
                    unbounded,
                    bracket,
                };
                Ok((peak, samples))
            },
        )
    };
    let refined = |tolerance_db: f64| super::worst::WorstSettings {
        tolerance_db,
        min_bracket: 0.0,
        speed_tolerance: PEAK_TOLERANCE,
        max_steps: 100,
    };
    // First every peak to SCREEN_TOLERANCE_DB: a peak sampled well by the
    // grid takes no solve (the parabola through its samples predicts less
    // gain), a sharp one a few.
    let grid_samples = candidates
        .iter()
        .enumerate()
        .map(|(c, &(pi, i, _, _))| {
            let mag = &mags[pi];
            (
                c,
                vec![
                    (f[i - 1], mag[i - 1]),
                    (f[i], mag[i]),
                    (f[i + 1], mag[i + 1]),
                ],
            )
        })
        .collect();
    let first = if settings.refine_every_peak {
        0.0
    } else {
        SCREEN_TOLERANCE_DB
    };
    let mut screened = search(grid_samples, refined(first))?;
    // Then to PEAK_TOLERANCE, continuing from its samples, each peak that
    // may lead its resonance: within LEADER_SCREEN_DB of the highest of
    // the peaks merged with it, or unbounded. Refined peaks move a little
    // and may merge otherwise, so until the merge's leaders and the peaks
    // near them are all refined (once, as a rule).
    let screen = 10f64.powf(-LEADER_SCREEN_DB / 20.0);
    let mut done = vec![settings.refine_every_peak; screened.len()];
    let groups = loop {
        let peaks: Vec<&Peak> = screened.iter().map(|(p, _)| p).collect();
        let groups = peak_groups(&peaks, settings.merge_tolerance);
        let heads: Vec<f64> = groups.iter().map(|g| peaks[g[0]].freq_hz).collect();
        let tolerance = settings.merge_tolerance;
        let mut work = Vec::new();
        for group in &groups {
            let head = peaks[group[0]];
            for &k in group {
                let p = peaks[k];
                let near = head.unbounded || p.unbounded || p.level >= screen * head.level;
                // a peak whose bracket straddles the merge's reach of a
                // resonance could belong to another one
                let (lo, hi) = p.bracket;
                let straddles = heads
                    .iter()
                    .any(|&h| merges(h, lo, tolerance) != merges(h, hi, tolerance));
                if (near || straddles) && !done[k] {
                    work.push(k);
                }
            }
        }
        if work.is_empty() {
            break groups;
        }
        work.sort_unstable();
        let work: Vec<(usize, Vec<(f64, f64)>)> = work
            .into_iter()
            .map(|k| {
                done[k] = true;
                (k, std::mem::take(&mut screened[k].1))
            })
            .collect();
        for (peak, samples) in search(work, refined(0.0))? {
            let c = peak.candidate;
            screened[c] = (peak, samples);
        }
    };
    let peaks: Vec<Peak> = screened.into_iter().map(|(p, _)| p).collect();
    // Merge: the highest peaks first, so each resonance is reported where it
    // is highest; each resonance with the peak that leads it.
    let merged: Vec<(Resonance, usize)> = groups
        .iter()
        .map(|group| {
            let head = &peaks[group[0]];
            let mut seen_at: Vec<String> = Vec::new();
            for &k in group {
                let name = &response.points[candidates[peaks[k].candidate].0].name;
                if !seen_at.contains(name) {
                    seen_at.push(name.clone());
                }
            }
            let resonance = Resonance {
                freq_hz: head.freq_hz,
                point: seen_at[0].clone(),
                level: head.level,
                quality: None,
                unbounded: head.unbounded,
                seen_at,
            };
            (resonance, group[0])
        })
        .collect();
    // The quality of each resonance from the half-power points of the peak
    // that leads it (about 18 solves each; a peak merged into a higher one
    // needs none).
    let leaders: Vec<usize> = merged.iter().map(|(_, k)| *k).collect();
    let qualities = crate::parallel::ordered_map_quiet(
        &leaders,
        crate::parallel::pays(plan.unknowns(), 18 * leaders.len()),
        || plan.workspace(),
        |ws, &k| {
            let p = &peaks[k];
            if p.unbounded {
                return Ok(None);
            }
            let (pi, i, left_valley, right_valley) = candidates[p.candidate];
            let location = response.points[pi].location;
            let mut eval = |x: f64, ws: &mut Workspace| eval(location, x, ws);
            let target = p.level / std::f64::consts::SQRT_2;
            let peak = (p.freq_hz, p.level);
            let mag = &mags[pi];
            let lower = half_power(&mut eval, ws, f, mag, i, left_valley, peak, target)?;
            let upper = half_power(&mut eval, ws, f, mag, i, right_valley, peak, target)?;
            let f0 = p.freq_hz;
            Ok(match (lower, upper) {
                (Some(a), Some(b)) => Some(f0 / (b - a)),
                (Some(a), None) => Some(f0 / (2.0 * (f0 - a))),
                (None, Some(b)) => Some(f0 / (2.0 * (b - f0))),
                (None, None) => None,
            }
            .filter(|q| q.is_finite() && *q > 0.0))
        },
    )?;
    let mut resonances: Vec<Resonance> = merged
        .into_iter()
        .zip(qualities)
        .map(|((r, _), quality)| Resonance { quality, ..r })
        .collect();
    resonances.sort_by(|a, b| a.freq_hz.total_cmp(&b.freq_hz));
    Ok(resonances)
}

/// Whether a peak at `x_hz` merges into the resonance whose leading peak
/// is at `head_hz`: within `tolerance` of it, as a fraction of `head_hz`.
pub(crate) fn merges(head_hz: f64, x_hz: f64, tolerance: f64) -> bool {
    (head_hz - x_hz).abs() <= tolerance * head_hz
}

/// The peaks grouped as the merge groups them: highest first (unbounded
/// ones before all), each joining the first group whose first peak lies
/// within `merge_tolerance` of it. Indices into `peaks`.
fn peak_groups(peaks: &[&Peak], merge_tolerance: f64) -> Vec<Vec<usize>> {
    let mut order: Vec<usize> = (0..peaks.len()).collect();
    order.sort_by(|&a, &b| {
        let (a, b) = (peaks[a], peaks[b]);
        (b.unbounded, b.level)
            .partial_cmp(&(a.unbounded, a.level))
            .unwrap_or(std::cmp::Ordering::Equal)
    });
    let mut groups: Vec<Vec<usize>> = Vec::new();
    for k in order {
        let x = peaks[k].freq_hz;
        match groups
            .iter()
            .position(|g| merges(peaks[g[0]].freq_hz, x, merge_tolerance))
        {
            Some(g) => groups[g].push(k),
            None => groups.push(vec![k]),
        }
    }
    groups
}

/// [`valley`] to the left and to the right of every sample at once, in
/// O(n) instead of a walk per peak: a stack of the samples not yet passed
/// by a higher one, each with the lowest sample between it and the one
/// below it on the stack (ties to the later, the first a walk from the
/// right meets), and the same from the other end.
pub(crate) fn valleys(mag: &[f64]) -> Vec<[(usize, f64); 2]> {
    let n = mag.len();
    let mut out: Vec<[(usize, f64); 2]> = (0..n).map(|i| [(i, mag[i]); 2]).collect();
    for side in [0, 1] {
        let at = |k: usize| if side == 0 { k } else { n - 1 - k };
        // the lower of two (index, value), ties to the one nearer `i`
        // (later in this pass's order)
        let lower = |a: (usize, usize, f64), b: (usize, usize, f64)| {
            if b.2 < a.2 || (b.2 == a.2 && b.0 > a.0) {
                b
            } else {
                a
            }
        };
        // (pass order, index, value) of a stacked sample, and of the lowest
        // sample since the one below it
        type Sample = (usize, usize, f64);
        let mut stack: Vec<(Sample, Option<Sample>)> = Vec::new();
        for k in 0..n {
            let i = at(k);
            let mut low: Option<(usize, usize, f64)> = None;
            while let Some(&(top, gap)) = stack.last() {
                if top.2 > mag[i] {
                    break;
                }
                stack.pop();
                let merged = gap.map_or(top, |g| lower(g, top));
                low = Some(low.map_or(merged, |l| lower(merged, l)));
            }
            if let Some((_, j, v)) = low.filter(|l| l.2 < mag[i]) {
                out[i][side] = (j, v);
            }
            stack.push(((k, i, mag[i]), low));
        }
    }
    out
}

/// Walks from peak `i` in direction `dir` (±1) until a higher sample or the
/// end of the grid; returns the index and value of the lowest sample on
/// the way (the valley): the plain rule that [`valleys`] is tested against.
#[cfg(test)]
fn valley(mag: &[f64], i: usize, dir: isize) -> (usize, f64) {
    let (mut best_i, mut best) = (i, mag[i]);
    let mut k = i as isize + dir;
    while k >= 0 && (k as usize) < mag.len() && mag[k as usize] <= mag[i] {
        if mag[k as usize] < best {
            (best_i, best) = (k as usize, mag[k as usize]);
        }
        k += dir;
    }
    (best_i, best)
}

/// The frequency between the peak (f0, |H(f0)|) and its valley where |H|
/// falls to `target`, bracketed by the last grid sample above it and the
/// first below; `None` when the valley stays above it.
#[allow(clippy::too_many_arguments)]
fn half_power(
    eval: &mut impl FnMut(f64, &mut Workspace) -> Result<f64, SolveError>,
    ws: &mut Workspace,
    f: &[f64],
    mag: &[f64],
    peak: usize,
    valley: usize,
    (f0, level): (f64, f64),
    target: f64,
) -> Result<Option<f64>, SolveError> {
    let (step, steps): (isize, usize) = if valley < peak {
        (-1, peak - valley)
    } else {
        (1, valley - peak)
    };
    let mut inside = (f0, level); // |H| above target
    for s in 1..=steps {
        let k = (peak as isize + step * s as isize) as usize;
        if mag[k] < target {
            // The grid neighbour of the peak may lie on the far side of f0.
            if (f[k] - f0) * step as f64 <= 0.0 {
                return Ok(None);
            }
            let found = crossing(|x| eval(x, ws), inside, (f[k], mag[k]), target)?;
            return Ok(Some(found));
        }
        if (f[k] - f0) * step as f64 > 0.0 {
            inside = (f[k], mag[k]);
        }
    }
    Ok(None)
}

/// Where |H| falls to `target` between `inside` (x, |H| ≥ target) and
/// `outside` (|H| < target): the root of g = 1/|H|² − 1/target² (nearly a
/// parabola in f near a resonance, Lorentzian) by the Illinois variant of
/// regula falsi (Dowell & Jarratt 1971, BIT 11), which keeps the root
/// bracketed and converges superlinearly, with a bisection step whenever
/// two steps have not halved the bracket. Stops when the bracket is
/// narrower than [`HALF_POWER_TOLERANCE`] of the frequency; returns its
/// midpoint.
fn crossing(
    mut eval: impl FnMut(f64) -> Result<f64, SolveError>,
    inside: (f64, f64),
    outside: (f64, f64),
    target: f64,
) -> Result<f64, SolveError> {
    let g = |v: f64| 1.0 / (v * v) - 1.0 / (target * target);
    let ((mut a, mut ga), (mut b, mut gb)) = ((inside.0, g(inside.1)), (outside.0, g(outside.1)));
    // which end the last step replaced: -1 inside, +1 outside
    let mut last = 0;
    let mut widths = [f64::INFINITY; 2];
    for _ in 0..200 {
        let width = (b - a).abs();
        if width <= HALF_POWER_TOLERANCE * a.abs().max(b.abs()) {
            break;
        }
        let (lo, hi) = (a.min(b), a.max(b));
        let mut x = (a * gb - b * ga) / (gb - ga);
        if width > 0.5 * widths[0] || !(x > lo && x < hi) {
            x = 0.5 * (a + b);
        }
        widths = [widths[1], width];
        let gx = g(eval(x)?);
        if gx <= 0.0 {
            (a, ga) = (x, gx);
            if last == -1 {
                gb *= 0.5;
            }
            last = -1;
        } else {
            (b, gb) = (x, gx);
            if last == 1 {
                ga *= 0.5;
            }
            last = 1;
        }
    }
    Ok(0.5 * (a + b))
}

/// The frequency band a pump harmonic sweeps over the operating speed range.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct HarmonicBand {
    /// Harmonic order k.
    pub order: u32,
    /// k·z: the harmonic's frequency per unit shaft speed, in Hz per rev/s.
    pub hz_per_rev_s: f64,
    /// k·z·n_lo in Hz.
    pub low_hz: f64,
    /// k·z·n_hi in Hz.
    pub high_hz: f64,
}

/// Bands of harmonics 1..=`harmonics` for `pumping_elements` z over the speed
/// range (rev/s).
pub fn harmonic_bands(
    pumping_elements: u32,
    speed_range_rev_s: (f64, f64),
    harmonics: u32,
) -> Vec<HarmonicBand> {
    let z = f64::from(pumping_elements);
    (1..=harmonics)
        .map(|k| {
            let kz = f64::from(k) * z;
            HarmonicBand {
                order: k,
                hz_per_rev_s: kz,
                low_hz: kz * speed_range_rev_s.0,
                high_hz: kz * speed_range_rev_s.1,
            }
        })
        .collect()
}

/// How a harmonic band meets a resonance.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Coverage {
    /// The band contains the resonance: the harmonic crosses it at this
    /// shaft speed.
    Crossed {
        /// Speed at which k·z·n = f0, in rev/s.
        speed_rev_s: f64,
    },
    /// The band ends within the margin of the resonance.
    Near {
        /// Gap between the nearer band edge and f0, as a fraction of f0.
        gap: f64,
        /// The speed at that band edge, in rev/s.
        speed_rev_s: f64,
    },
}

/// A harmonic that crosses or nears a resonance.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Crossing {
    /// Harmonic order.
    pub order: u32,
    /// How.
    pub coverage: Coverage,
}

/// The harmonics whose bands contain `freq_hz` (to a relative 1e-6, so that
/// a single speed exactly on a resonance counts), or come within `margin`
/// (a fraction of `freq_hz`) of it.
pub fn crossings(freq_hz: f64, bands: &[HarmonicBand], margin: f64) -> Vec<Crossing> {
    const EDGE: f64 = 1e-6;
    bands
        .iter()
        .filter_map(|b| {
            if b.low_hz * (1.0 - EDGE) <= freq_hz && freq_hz <= b.high_hz * (1.0 + EDGE) {
                let speed_rev_s = (freq_hz / b.hz_per_rev_s)
                    .clamp(b.low_hz / b.hz_per_rev_s, b.high_hz / b.hz_per_rev_s);
                return Some(Crossing {
                    order: b.order,
                    coverage: Coverage::Crossed { speed_rev_s },
                });
            }
            let (edge, gap) = if freq_hz < b.low_hz {
                (b.low_hz, (b.low_hz - freq_hz) / freq_hz)
            } else {
                (b.high_hz, (freq_hz - b.high_hz) / freq_hz)
            };
            (gap <= margin).then_some(Crossing {
                order: b.order,
                coverage: Coverage::Near {
                    gap,
                    speed_rev_s: edge / b.hz_per_rev_s,
                },
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bands_scale_with_order_and_speed() {
        // 9 pistons, 800..2400 rpm: f_p = 120..360 Hz.
        let bands = harmonic_bands(9, (800.0 / 60.0, 2400.0 / 60.0), 3);
        assert_eq!(bands.len(), 3);
        assert!((bands[0].low_hz - 120.0).abs() < 1e-9 && (bands[0].high_hz - 360.0).abs() < 1e-9);
        assert!((bands[2].low_hz - 360.0).abs() < 1e-9 && (bands[2].high_hz - 1080.0).abs() < 1e-9);
    }

    #[test]
    fn a_resonance_inside_a_band_is_crossed_at_the_right_speed() {
        let bands = harmonic_bands(9, (800.0 / 60.0, 2400.0 / 60.0), 3);
        // 300 Hz: harmonic 1 at 2000 rpm, harmonic 2 at 1000 rpm; harmonic 3
        // starts at 360 Hz, 20 % away: near with a 25 % margin only.
        let c = crossings(300.0, &bands, 0.1);
        assert_eq!(c.len(), 2);
        match c[0].coverage {
            Coverage::Crossed { speed_rev_s } => {
                assert!((speed_rev_s * 60.0 - 2000.0).abs() < 1e-9)
            }
            _ => panic!("{c:?}"),
        }
        match c[1].coverage {
            Coverage::Crossed { speed_rev_s } => {
                assert!((speed_rev_s * 60.0 - 1000.0).abs() < 1e-9)
            }
            _ => panic!("{c:?}"),
        }
        let c = crossings(300.0, &bands, 0.25);
        assert!(matches!(c[2].coverage, Coverage::Near { gap, .. } if (gap - 0.2).abs() < 1e-12));
    }

    /// Reference: the exhaustive search, every grid peak of every point
    /// refined to PEAK_TOLERANCE (what `find_resonances` did before it
    /// screened the peaks). The screened search must report the same
    /// resonances, at the same points, seen at the same points, to the
    /// tolerances, on generated circuits (a tree and one with loops) at a
    /// coarse grid (1 % steps, peaks sampled by one or two points) and a
    /// fine one.
    #[test]
    fn screening_reports_what_refining_every_peak_reports() {
        for (elements, loops) in [(30, 0), (30, 1)] {
            let text = crate::generated::branched_circuit(elements, loops);
            let circuit = crate::io::parse_circuit(&text, "generated.yaml").unwrap();
            let plan = Plan::compile(&circuit).unwrap();
            for points in [400, 3000] {
                let freqs = log_grid(10.0, 5000.0, points);
                let response = frequency_response(&plan, 0, &freqs, &mut |_| {}).unwrap();
                let screened =
                    find_resonances(&plan, 0, &response, PeakSettings::default()).unwrap();
                let every = PeakSettings {
                    refine_every_peak: true,
                    ..PeakSettings::default()
                };
                let reference = find_resonances(&plan, 0, &response, every).unwrap();
                let case = format!("branched {elements} {loops}, {points} points");
                assert!(reference.len() > 20, "{case}: {}", reference.len());
                assert_eq!(screened.len(), reference.len(), "{case}");
                for (a, b) in screened.iter().zip(&reference) {
                    assert_eq!(a.point, b.point, "{case}: {} Hz", b.freq_hz);
                    let mut seen = (a.seen_at.clone(), b.seen_at.clone());
                    seen.0.sort();
                    seen.1.sort();
                    assert_eq!(seen.0, seen.1, "{case}: {} Hz", b.freq_hz);
                    assert!(
                        (a.freq_hz / b.freq_hz - 1.0).abs() < 1e-8,
                        "{case}: {} against {} Hz",
                        a.freq_hz,
                        b.freq_hz
                    );
                    assert!(
                        (a.level / b.level - 1.0).abs() < 1e-8,
                        "{case}: {} Hz",
                        b.freq_hz
                    );
                    match (a.quality, b.quality) {
                        (Some(qa), Some(qb)) => assert!((qa / qb - 1.0).abs() < 1e-6, "{case}"),
                        (qa, qb) => assert_eq!(qa, qb, "{case}"),
                    }
                }
            }
        }
    }

    /// Reference: the definition, a walk from each sample to the first
    /// higher one (`valley`), on random sequences with many ties.
    #[test]
    fn valleys_match_the_walk() {
        let mut state = 0x9e37_79b9_7f4a_7c15u64;
        for len in [1, 2, 3, 10, 200] {
            for _ in 0..200 {
                let mag: Vec<f64> = (0..len)
                    .map(|_| {
                        // xorshift64 (Marsaglia 2003): few distinct values
                        state ^= state << 13;
                        state ^= state >> 7;
                        state ^= state << 17;
                        (state % 7) as f64
                    })
                    .collect();
                let all = valleys(&mag);
                for (i, [left, right]) in all.into_iter().enumerate() {
                    assert_eq!(left, valley(&mag, i, -1), "{mag:?} at {i}, left");
                    assert_eq!(right, valley(&mag, i, 1), "{mag:?} at {i}, right");
                }
            }
        }
    }

    #[test]
    fn log_grid_ends_and_ratio() {
        let g = log_grid(10.0, 1000.0, 3);
        assert!(
            (g[0] - 10.0).abs() < 1e-12
                && (g[1] - 100.0).abs() < 1e-9
                && (g[2] - 1000.0).abs() < 1e-9
        );
    }
}

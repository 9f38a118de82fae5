//! Uncertainty bands of the analyses: the outputs of `solve`, `response`
//! and `sweep` computed for every draw of the uncertain inputs.
//!
//! [`propagate`] evaluates any list of output quantities by Monte Carlo
//! (with the first-order bands and JCGM 101 §8's agreement check alongside,
//! which cost 2n + 1 more evaluations) or by the first-order method alone.
//! The output lists of the three analyses are built by [`ripple_outputs`],
//! [`response_outputs`] and [`sweep_outputs`]; each analysis's layout of
//! them is documented where it is read back (the renderers).

use super::linear::{self, LinearBand};
use super::monte_carlo::{self, Band, LimitError, draw_rng};
use super::{InputSummary, Inputs};
use crate::Circuit;
use crate::analysis::response::{
    FrequencyResponse, PeakSettings, find_resonances, frequency_response,
};
use crate::analysis::ripple::shaft_ripple;
use crate::analysis::sweep::{SweepSettings, sweep};
use crate::envelope::OperatingPoint;
use crate::io::{CircuitTemplate, InputError};
use crate::network::Plan;
use crate::source::{Shaft, shafts};
use serde::Serialize;

/// How bands are computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Method {
    /// Monte Carlo (JCGM 101), with the first-order bands beside it.
    MonteCarlo,
    /// The first-order bands only (JCGM 100).
    Linear,
}

/// What bands to compute.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BandRequest {
    /// The method.
    pub method: Method,
    /// The Monte Carlo settings (its coverage is also the linearised
    /// bands').
    pub monte_carlo: monte_carlo::Options,
}

/// The bands of one output quantity.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct OutputBand {
    /// Its value with every input nominal.
    pub nominal: f64,
    /// The Monte Carlo band.
    pub monte_carlo: Option<Band>,
    /// The first-order band.
    pub linear: Option<LinearBand>,
    /// Whether the first-order interval agrees with the Monte Carlo one
    /// (JCGM 101 §8), when both are computed.
    pub linear_agrees: Option<bool>,
}

impl OutputBand {
    /// The band shown: the Monte Carlo interval, else the first-order one.
    pub fn interval(&self) -> Option<(f64, f64)> {
        match (&self.monte_carlo, &self.linear) {
            (Some(b), _) if b.low.is_finite() && b.high.is_finite() => Some((b.low, b.high)),
            (None, Some(l)) if l.low.is_finite() && l.high.is_finite() => Some((l.low, l.high)),
            _ => None,
        }
    }
}

/// How bands were made.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BandsInfo {
    /// The uncertain inputs.
    pub inputs: Vec<InputSummary>,
    /// The method.
    pub method: Method,
    /// Coverage probability of the intervals.
    pub coverage: f64,
    /// Seed of the draws.
    pub seed: u64,
    /// Monte Carlo draws made (0 for the first-order method).
    pub draws: usize,
    /// Draws made again because the circuit refused a drawn value (each
    /// draw then comes from the inputs' distribution truncated to the
    /// values the circuit accepts; at most [`MAX_REDRAWN_SHARE`] of all).
    pub redrawn: usize,
    /// Whether the adaptive procedure found every judged band stable
    /// (`None`: first-order, or a fixed number of draws).
    pub stable: Option<bool>,
    /// Outputs whose stability decides the number of draws (the command's
    /// conclusions: see `monte_carlo`, "Which outputs decide").
    pub judged: usize,
    /// Outputs whose first-order band is good (nonlinearity index ≤ 0.1).
    pub linear_good: usize,
    /// Outputs in all.
    pub outputs: usize,
    /// Outputs whose first-order interval disagrees with the Monte Carlo
    /// one (JCGM 101 §8).
    pub linear_disagrees: usize,
}

/// Bands of a list of outputs and how they were made.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Propagated {
    /// How they were made.
    pub info: BandsInfo,
    /// One per output.
    pub outputs: Vec<OutputBand>,
    /// The Monte Carlo draws of each judged output, in the judged order
    /// (`monte_carlo::Bands::judged_samples`; empty for first-order bands).
    pub judged_samples: Vec<Vec<f32>>,
}

/// Why bands could not be computed.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum BandError {
    /// The circuit has nothing uncertain.
    #[error(
        "no value of the circuit has a tolerance and no pump source file states uncertainties: write e.g. `bulk_modulus: 1.55 GPa ± 5 %` (README, \"Tolerances and uncertainty bands\")"
    )]
    NothingUncertain,
    /// A drawn circuit is not valid, or an input file cannot be read.
    #[error(transparent)]
    Input(#[from] InputError),
    /// The outputs do not fit in memory.
    #[error(transparent)]
    Limit(#[from] LimitError),
    /// An analysis failed for drawn values.
    #[error("{0}")]
    Analysis(String),
    /// Too many draws set a value the circuit refuses: the tolerances
    /// reach too far beyond the values it accepts.
    #[error(
        "{:.2} % of {draws} Monte Carlo draws set a value the circuit refuses (more than {:.0} %), so the bands would not follow the tolerances as written: give a smaller tolerance to the value named here; the first refusal: {first}",
        100.0 * share,
        100.0 * MAX_REDRAWN_SHARE
    )]
    Refused {
        /// The share of draws refused.
        share: f64,
        /// Draws made in all.
        draws: usize,
        /// The first refusal (of the lowest draw).
        first: InputError,
    },
}

impl BandError {
    /// Whether the error lies in the input (nothing uncertain, a circuit the
    /// file's values make invalid, tolerances reaching too far): a request
    /// error (exit 2), not a failed analysis.
    pub fn is_input(&self) -> bool {
        matches!(
            self,
            BandError::NothingUncertain | BandError::Input(_) | BandError::Refused { .. }
        )
    }
}

/// Most draws of a row made again when the circuit refuses a drawn value
/// ([`BandsInfo::redrawn`]) before the bands are refused.
pub const MAX_REDRAWS: usize = 100;

/// Largest share of all draws that may be made again because the circuit
/// refused a drawn value (a normal `u` reaches any value, so a value that
/// must stay positive is refused now and then; beyond this share the
/// truncation changes the bands noticeably, and the tolerance is refused).
pub const MAX_REDRAWN_SHARE: f64 = 0.01;

/// An analysis's outputs for one circuit.
pub type Evaluate<'a> = dyn Fn(Circuit) -> Result<Vec<f64>, String> + Sync + 'a;

/// Bands of `evaluate`'s outputs over the uncertain inputs of the circuit
/// at `point`; `prepare` applies what the command changes in every circuit
/// (a speed, a harmonic count); the outputs in `judged` (all when `None`)
/// decide when the adaptive Monte Carlo stops. `progress(done, planned)`
/// counts draws. The evaluations run in parallel.
///
/// # Errors
/// [`BandError`].
pub fn propagate(
    template: &CircuitTemplate,
    point: &OperatingPoint,
    prepare: &(dyn Fn(&mut Circuit) + Sync),
    evaluate: &Evaluate<'_>,
    judged: Option<std::ops::Range<usize>>,
    request: &BandRequest,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<Propagated, BandError> {
    let at_points = |mut circuits: Vec<Circuit>| {
        let mut c = circuits.pop().expect("one point");
        prepare(&mut c);
        evaluate(c)
    };
    propagate_at_points(
        template,
        std::slice::from_ref(point),
        &at_points,
        judged,
        request,
        progress,
    )
}

/// An analysis's outputs for the circuits at several envelope points (in
/// the order given), all with the same values of the uncertain inputs.
pub type EvaluatePoints<'a> = dyn Fn(Vec<Circuit>) -> Result<Vec<f64>, String> + Sync + 'a;

/// As [`propagate`], for outputs of the circuit at several envelope points
/// `points`: each draw (and each first-order evaluation) sets the same
/// values of the uncertain inputs at every point, as one machine with one
/// set of true values runs through its envelope.
///
/// # Errors
/// [`BandError`].
pub fn propagate_at_points(
    template: &CircuitTemplate,
    points: &[OperatingPoint],
    evaluate: &EvaluatePoints<'_>,
    judged: Option<std::ops::Range<usize>>,
    request: &BandRequest,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<Propagated, BandError> {
    let inputs = Inputs::of(template)?;
    if inputs.is_empty() {
        return Err(BandError::NothingUncertain);
    }
    let nominal_values = inputs.nominal();
    let circuits = |values: &[f64], why: &str| -> Result<Vec<Circuit>, InputError> {
        points
            .iter()
            .map(|point| inputs.circuit(template, point, values, why))
            .collect()
    };
    let solve = |circuits: Vec<Circuit>, why: &str| -> Result<Vec<f64>, BandError> {
        evaluate(circuits).map_err(|e| BandError::Analysis(format!("{e} ({why})")))
    };
    let run = |values: &[f64], why: &str| -> Result<Vec<f64>, BandError> {
        solve(circuits(values, why)?, why)
    };
    let f0 = run(&nominal_values, "the nominal values")?;
    // first order: each input at +u, then at −u
    let shifted: Vec<(usize, f64)> = (0..inputs.inputs.len())
        .map(|i| (i, 1.0))
        .chain((0..inputs.inputs.len()).map(|i| (i, -1.0)))
        .collect();
    let mut moved = crate::parallel::ordered_map(
        &shifted,
        true,
        || (),
        |_, &(i, sign)| {
            let input = &inputs.inputs[i];
            let mut v = nominal_values.clone();
            v[i] += sign * input.standard_uncertainty();
            let why = format!(
                "`{}` at its value {} u",
                input.name,
                if sign > 0.0 { "+" } else { "−" }
            );
            run(&v, &why)
        },
        &mut |_| {},
    )?;
    let minus = moved.split_off(inputs.inputs.len());
    let plus = moved;
    let coverage = request.monte_carlo.coverage;
    let lin = linear::bands(&f0, &plus, &minus, coverage);
    let (mc, draws, stable, redrawn, judged_samples) = match request.method {
        Method::Linear => (None, 0, None, 0, Vec::new()),
        Method::MonteCarlo => {
            let seed = request.monte_carlo.seed;
            // values the circuit refuses (a length or volume drawn below
            // zero, say) are drawn again: each draw comes from the inputs'
            // joint distribution truncated to the values the circuit
            // accepts; the first refusal (lowest draw) is kept for messages
            let redrawn = std::sync::atomic::AtomicUsize::new(0);
            let first_refusal: std::sync::Mutex<Option<(usize, InputError)>> =
                std::sync::Mutex::new(None);
            let eval = |i: usize| -> Result<Vec<f64>, BandError> {
                let mut rng = draw_rng(seed, i);
                let why = format!("Monte Carlo draw {} of seed {seed}", i + 1);
                let mut attempts = 0;
                loop {
                    let values = inputs.draw(&mut rng);
                    match circuits(&values, &why) {
                        Ok(c) => {
                            redrawn.fetch_add(attempts, std::sync::atomic::Ordering::Relaxed);
                            return solve(c, &why);
                        }
                        Err(e) if attempts < MAX_REDRAWS => {
                            attempts += 1;
                            let mut first = first_refusal.lock().unwrap_or_else(|p| p.into_inner());
                            if first.as_ref().is_none_or(|(at, _)| i < *at) {
                                *first = Some((i, e));
                            }
                        }
                        Err(e) => {
                            return Err(BandError::Refused {
                                share: 1.0,
                                draws: MAX_REDRAWS + 1,
                                first: e,
                            });
                        }
                    }
                }
            };
            let bands = monte_carlo::propagate(
                &f0,
                &eval,
                &request.monte_carlo,
                judged.clone(),
                BandError::Limit,
                progress,
            )?;
            let redrawn = redrawn.into_inner();
            let share = redrawn as f64 / (redrawn + bands.draws) as f64;
            if share > MAX_REDRAWN_SHARE {
                let (_, first) = first_refusal
                    .into_inner()
                    .unwrap_or_else(|p| p.into_inner())
                    .expect("a refusal was counted");
                return Err(BandError::Refused {
                    share,
                    draws: redrawn + bands.draws,
                    first,
                });
            }
            (
                Some(bands.bands),
                bands.draws,
                bands.stable,
                redrawn,
                bands.judged_samples,
            )
        }
    };
    let digits = request.monte_carlo.digits;
    let outputs: Vec<OutputBand> = (0..f0.len())
        .map(|o| {
            let m = mc.as_ref().map(|b| b[o]);
            OutputBand {
                nominal: f0[o],
                monte_carlo: m,
                linear: Some(lin[o]),
                linear_agrees: m.map(|m| linear::agrees_with_monte_carlo(&lin[o], &m, digits)),
            }
        })
        .collect();
    Ok(Propagated {
        info: BandsInfo {
            inputs: inputs.summary(),
            method: request.method,
            coverage,
            seed: request.monte_carlo.seed,
            draws,
            redrawn,
            stable,
            judged: judged.map_or(f0.len(), |r| r.end.min(f0.len()) - r.start.min(f0.len())),
            linear_good: lin.iter().filter(|l| l.good).count(),
            outputs: outputs.len(),
            linear_disagrees: outputs
                .iter()
                .filter(|o| o.linear_agrees == Some(false))
                .count(),
        },
        outputs,
        judged_samples,
    })
}

/// The outputs of `solve`, per shaft (in `source::shafts` order), per
/// measurement point, per order: the amplitude |P_k| (Pa); then per shaft
/// and point the overall rms and the peak-to-peak (Pa).
///
/// # Errors
/// A message when the network cannot be solved.
pub fn ripple_outputs(circuit: Circuit) -> Result<Vec<f64>, String> {
    let plan = Plan::compile(&circuit).map_err(|e| e.to_string())?;
    let mut out = Vec::new();
    let mut totals = Vec::new();
    for s in shafts(&circuit.pumps) {
        let r = shaft_ripple(&plan, &s, circuit.harmonics, s.speed_rev_s(&circuit.pumps))
            .map_err(|e| e.to_string())?;
        let period = r.period();
        for tap in &r.taps {
            out.extend(tap.harmonics.iter().map(|h| h.pressure.norm()));
            totals.push(tap.rms_pa());
            totals.push(tap.peak_to_peak_pa_with(&period));
        }
    }
    out.extend(totals);
    Ok(out)
}

/// The outputs of `response` for pump `pump` on `freqs_hz`: |P/Qs| at every
/// measurement point and frequency (point-major), then the magnitude of the
/// impedance the pump sees at every frequency (Pa·s/m³), then for each of
/// the nominal resonances `nominal_hz` the frequency and level of the
/// resonance of this circuit that stands for it ([`matching_resonances`];
/// NaN when none does: it merged with a neighbour or fell below the
/// prominence threshold in this draw).
///
/// # Errors
/// A message when the network cannot be solved.
pub fn response_outputs(
    circuit: Circuit,
    pump: usize,
    freqs_hz: &[f64],
    nominal_hz: &[f64],
) -> Result<Vec<f64>, String> {
    let plan = Plan::compile(&circuit).map_err(|e| e.to_string())?;
    let r: FrequencyResponse =
        frequency_response(&plan, pump, freqs_hz, &mut |_| {}).map_err(|e| e.to_string())?;
    let mut out: Vec<f64> = r
        .points
        .iter()
        .flat_map(|p| p.values.iter().map(|v| v.norm()))
        .chain(r.load_impedance.iter().map(|z| z.norm()))
        .collect();
    if !nominal_hz.is_empty() {
        let found =
            find_resonances(&plan, pump, &r, PeakSettings::default()).map_err(|e| e.to_string())?;
        let freqs: Vec<f64> = found.iter().map(|r| r.freq_hz).collect();
        for matched in matching_resonances(&freqs, nominal_hz) {
            match matched.map(|k| &found[k]) {
                Some(res) => {
                    out.push(res.freq_hz);
                    out.push(if res.unbounded { f64::NAN } else { res.level });
                }
                None => out.extend([f64::NAN, f64::NAN]),
            }
        }
    }
    Ok(out)
}

/// Which of the resonances `found_hz` of a drawn circuit stands for each
/// nominal resonance `nominal_hz` (an index into `found_hz`, or `None`):
/// the one-to-one pairing that keeps both in frequency order and costs
/// least, a pair costing its distance |ln(f/f0)| (under ln 1.5; farther
/// ones never pair) and a nominal resonance left without one costing
/// ln 1.5, by dynamic programming over the two sorted lists (the alignment
/// of two sequences with gaps; a byte per pair of resonances). A drawn
/// circuit's resonances move together (a bulk modulus scales every line
/// resonance by the same factor), so two close resonances shifted by more
/// than half their spacing keep their own, where the nearest nominal one
/// would swap them; when two merge in a draw, or one falls below the
/// prominence threshold, the one left without is missing from that draw
/// (left out of its band and counted) instead of taking its neighbour's
/// frequency and level. A resonance that vanishes while another appears
/// next to it, within the factor 1.5, is paired with the newcomer: the
/// frequencies alone do not tell them apart.
pub fn matching_resonances(found_hz: &[f64], nominal_hz: &[f64]) -> Vec<Option<usize>> {
    let gap = 1.5f64.ln();
    let by_frequency = |f: &[f64]| {
        let mut order: Vec<usize> = (0..f.len()).collect();
        order.sort_by(|&a, &b| f[a].total_cmp(&f[b]));
        order
    };
    let (nominal, found) = (by_frequency(nominal_hz), by_frequency(found_hz));
    let (m, k) = (nominal.len(), found.len());
    let pair = |i: usize, j: usize| {
        let d = (found_hz[found[j]] / nominal_hz[nominal[i]]).ln().abs();
        (d < gap).then_some(d)
    };
    // the cost of aligning the first i nominal and first j found
    // resonances, row by row, and the step each cell took: a pair, a found
    // resonance skipped, or a nominal one left without (ties in that order)
    const PAIR: u8 = 0;
    const SKIP: u8 = 1;
    const GAP: u8 = 2;
    let mut step = vec![GAP; m * (k + 1)];
    let mut prev = vec![0.0; k + 1];
    let mut cur = vec![0.0; k + 1];
    for i in 1..=m {
        cur[0] = prev[0] + gap;
        for j in 1..=k {
            let (mut c, mut s) = (prev[j] + gap, GAP);
            if cur[j - 1] <= c {
                (c, s) = (cur[j - 1], SKIP);
            }
            if let Some(d) = pair(i - 1, j - 1).filter(|d| prev[j - 1] + d <= c) {
                (c, s) = (prev[j - 1] + d, PAIR);
            }
            cur[j] = c;
            step[(i - 1) * (k + 1) + j] = s;
        }
        std::mem::swap(&mut prev, &mut cur);
    }
    // back from the end
    let mut matched = vec![None; m];
    let (mut i, mut j) = (m, k);
    while i > 0 {
        match step[(i - 1) * (k + 1) + j] {
            PAIR => {
                matched[nominal[i - 1]] = Some(found[j - 1]);
                (i, j) = (i - 1, j - 1);
            }
            SKIP => j -= 1,
            _ => i -= 1,
        }
    }
    matched
}

/// The outputs of `sweep` of `shaft` over `speeds_rev_s`: the overall rms
/// at every point and speed (point-major, Pa), then per point the true
/// worst speed (rev/s) and the rms there (Pa), then the peak amplitude of
/// every harmonic (speed, point, order: the order of the CSV grid, Pa).
///
/// # Errors
/// A message when the network cannot be solved at a speed.
pub fn sweep_outputs(
    circuit: Circuit,
    shaft: &Shaft,
    speeds_rev_s: &[f64],
    harmonics: u32,
) -> Result<Vec<f64>, String> {
    let plan = Plan::compile(&circuit).map_err(|e| e.to_string())?;
    let settings = SweepSettings {
        speeds_rev_s: speeds_rev_s.to_vec(),
        harmonics,
        min_rise_db: f64::INFINITY,
    };
    let r = sweep(&plan, shaft, &settings, &mut |_| {}).map_err(|e| e.to_string())?;
    let (np, ns, no) = (r.points.len(), speeds_rev_s.len(), r.orders.len());
    let mut out = Vec::with_capacity(np * (ns + 2) + ns * np * no);
    for pi in 0..np {
        out.extend((0..ns).map(|si| r.rms_pa(si, pi)));
    }
    for pi in 0..np {
        let w = r.worst(pi);
        out.push(w.speed_rev_s);
        out.push(w.value_pa);
    }
    for si in 0..ns {
        for pi in 0..np {
            out.extend((0..no).map(|oi| r.amplitude_pa(si, pi, oi)));
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::matching_resonances;

    // A found resonance stands for one nominal resonance at most, in
    // frequency order: a draw where two nominal resonances (434 and 445 Hz)
    // merged into one at 440 Hz gives it to 445 Hz (ln distance 0.0113
    // against 0.0137); a draw where 1396 Hz fell below the prominence
    // threshold leaves it without, although 1068 Hz lies within a factor
    // 1.5 of it; everything shifted by 2 % (434 Hz to 442.7 Hz, nearer
    // 445 Hz) or by 5 % keeps its own.
    #[test]
    fn each_nominal_resonance_takes_the_nearest_of_its_own() {
        let nominal = [434.0, 445.0, 1068.0, 1396.0];
        assert_eq!(
            matching_resonances(&[440.0, 1070.0], &nominal),
            vec![None, Some(0), Some(1), None]
        );
        for shift in [1.02, 0.95, 1.05] {
            let shifted: Vec<f64> = nominal.iter().map(|f| shift * f).collect();
            assert_eq!(
                matching_resonances(&shifted, &nominal),
                vec![Some(0), Some(1), Some(2), Some(3)]
            );
        }
        // in any order in, in the nominal order out
        assert_eq!(
            matching_resonances(&[1070.0, 440.0], &[1396.0, 445.0, 1068.0, 434.0]),
            vec![None, Some(1), Some(0), None]
        );
        // two found near one nominal and nothing near the others: the
        // nearer; one beyond a factor 1.5 of every nominal one: none
        assert_eq!(
            matching_resonances(&[1390.0, 1400.0, 3000.0], &[434.0, 445.0, 1396.0]),
            vec![None, None, Some(1)]
        );
        assert_eq!(
            matching_resonances(&[500.0], &[]),
            Vec::<Option<usize>>::new()
        );
    }
}

//! `assess`: the circuit over its operating envelope, each limit's verdict
//! and the findings ranked by severity ([`crate::analysis::envelope`]).

use super::{Error, Input, Origin, Subject};
use crate::Circuit;
use crate::analysis::envelope::{
    AssessError, AssessSettings, Assessment, LimitedQuantity, Verdict, assess as run_assess,
    limited_worst_values,
};
use crate::elements::PRESSURE_VESSEL_CAUTION;
use crate::envelope::LimitKind;
use crate::envelope::{Envelope, OperatingPoint, TapLimits};
use crate::io::CircuitTemplate;
use crate::uncertainty::bands::{BandRequest, BandsInfo, OutputBand, propagate_at_points};
use serde::Serialize;

/// What to assess, resolved.
#[derive(Debug, Clone)]
pub struct AssessRequest {
    /// The speed range (rev/s) and where it came from; `None`: the swept
    /// shaft's `speed_range`.
    pub speed_range: Option<((f64, f64), Origin)>,
    /// The shaft swept (a shaft or pump name) and where it came from;
    /// `None`: the first pump's.
    pub shaft: Option<(String, Origin)>,
    /// Speeds of the grid and where the number came from.
    pub speed_points: (usize, Origin),
    /// Smallest rise of a crossing, dB, and where it came from.
    pub min_rise_db: (f64, Origin),
    /// How many findings the report shows.
    pub top: usize,
    /// Findings more than this many dB below their point's overall worst
    /// are left out of the report.
    pub floor_db: f64,
}

/// The result of `assess`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AssessReport {
    /// The circuit file.
    pub subject: Subject,
    /// Inputs: speed range, shaft, speed points, min rise, top, floor.
    pub inputs: Vec<Input>,
    /// The envelope as the file gives it (`None`: the file's own point).
    pub envelope: Option<Envelope>,
    /// The limits as the file gives them.
    pub limits: Vec<TapLimits>,
    /// The file's own mean pressure (gauge, Pa) and oil temperature (K),
    /// for the envelope columns of what the envelope does not vary.
    pub file_pressure_pa: Option<f64>,
    /// See `file_pressure_pa`.
    pub file_temperature_k: Option<f64>,
    /// Harmonics without source flow, left out.
    pub silent_orders: Vec<u32>,
    /// How many findings the report shows.
    pub top: usize,
    /// The report's floor below each point's overall worst, dB.
    pub floor_db: f64,
    /// The verdicts, worst points, findings and warnings (each warning
    /// with the envelope points where it holds).
    pub assessment: Assessment,
    /// Safety cautions (a gas-charged damper is a pressure vessel).
    pub cautions: Vec<String>,
    /// The verdicts with uncertainty (`--bands`), one per verdict.
    pub verdict_bands: Option<VerdictBands>,
}

/// A verdict that takes the uncertainty of the prediction into account.
///
/// With the band [low, high] of the worst value at the limit's worst point
/// (the coverage interval of the quantity's true worst over the speed
/// range there, over the uncertain inputs):
/// * **PASS** when the whole band lies within the limit (high ≤ limit);
///   the margin is that of the band's high end;
/// * **FAIL** when the nominal worst exceeds the limit, whether or not the
///   band reaches below it: the conservative reading (a predicted
///   exceedance is not softened by the chance that the true values are
///   kinder); [`VerdictBand::wholly_above`] says when even the low end is
///   over;
/// * **UNCERTAIN** otherwise: the nominal worst is within the limit but the
///   band reaches over it (or the band is unknown), so the prediction
///   cannot promise the limit is met.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    /// The whole band within the limit.
    Pass,
    /// The limit inside the band above the nominal worst.
    Uncertain,
    /// The nominal worst over the limit.
    Fail,
}

impl Status {
    /// How reports print it.
    pub fn word(self) -> &'static str {
        match self {
            Status::Pass => "PASS",
            Status::Uncertain => "UNCERTAIN",
            Status::Fail => "FAIL",
        }
    }

    /// The status of a nominal worst `nominal_pa` with band `band` against
    /// the limit `limit_pa` (see [`Status`]).
    pub fn of(nominal_pa: f64, band: Option<(f64, f64)>, limit_pa: f64) -> Status {
        if nominal_pa > limit_pa {
            Status::Fail
        } else {
            match band {
                Some((_, high)) if high <= limit_pa => Status::Pass,
                _ => Status::Uncertain,
            }
        }
    }
}

/// One verdict with the band of its worst value.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VerdictBand {
    /// The measurement point.
    pub tap: String,
    /// PASS, UNCERTAIN or FAIL (see [`Status`]).
    pub status: Status,
    /// The band of the worst value over the envelope points drawn, Pa;
    /// `None` when no ripple reaches the point (PASS).
    pub worst_pa: Option<OutputBand>,
    /// 20·log10(limit/high) in dB: the margin of the band's high end
    /// (positive: the whole band within the limit); `None` without a band.
    pub margin_db: Option<f64>,
    /// Whether even the band's low end exceeds the limit.
    pub wholly_above: bool,
    /// Envelope points whose worst was drawn (the nominal worst and its
    /// rivals, [`verdict_bands`]); 0 without ripple.
    pub points_drawn: usize,
    /// Rival points beyond [`MAX_DRAWN_POINTS`], not drawn.
    pub points_left_out: usize,
}

/// The verdicts with uncertainty of an assessment.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VerdictBands {
    /// How the bands were made.
    pub info: BandsInfo,
    /// One per verdict, in the order of the verdicts.
    pub verdicts: Vec<VerdictBand>,
}

/// What an assessment concludes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    /// Every limit met (with bands: every band within its limit).
    Pass,
    /// No limit exceeded, but at least one band reaches over its limit.
    Uncertain,
    /// At least one limit exceeded.
    Fail,
}

impl AssessReport {
    /// Whether every limit is met (by the nominal worst values).
    pub fn passed(&self) -> bool {
        self.assessment.passed()
    }

    /// What the assessment concludes: FAIL when a nominal worst exceeds its
    /// limit, else UNCERTAIN when a verdict with bands is, else PASS.
    pub fn outcome(&self) -> Outcome {
        if !self.passed() {
            return Outcome::Fail;
        }
        match &self.verdict_bands {
            Some(b) if b.verdicts.iter().any(|v| v.status == Status::Fail) => Outcome::Fail,
            Some(b) if b.verdicts.iter().any(|v| v.status == Status::Uncertain) => {
                Outcome::Uncertain
            }
            _ => Outcome::Pass,
        }
    }

    /// The status of verdict `i`: with bands its [`Status`], else PASS or
    /// FAIL by the nominal worst.
    pub fn status(&self, i: usize) -> Status {
        match self.verdict_bands.as_ref().and_then(|b| b.verdicts.get(i)) {
            Some(b) => b.status,
            None if self.assessment.verdicts[i].pass => Status::Pass,
            None => Status::Fail,
        }
    }
}

/// At most this many envelope points are drawn for one verdict: its
/// nominal worst and the rivals whose first-order bands reach highest.
pub const MAX_DRAWN_POINTS: usize = 4;

/// Envelope points whose nominal worst lies more than this many dB below a
/// verdict's nominal worst are not its rivals: their first-order band would
/// have to span more than a factor of ten. Saves their first-order sweeps.
pub const RIVAL_SCREEN_DB: f64 = 20.0;

/// The first-order bands that pick a verdict's rival envelope points are
/// widened this many times about their nominal values: they are a
/// linearisation, and the worst over the speeds is not linear in the inputs
/// where a resonance crossing moves (the reason JCGM 101 §8 checks them).
const RIVAL_WIDENING: f64 = 2.0;

/// Limited quantities at several envelope points, evaluated together in
/// each draw: the points (indices into the assessment's points) and, per
/// point, its quantities.
#[derive(Default)]
struct Evaluations {
    points: Vec<usize>,
    quantities: Vec<Vec<LimitedQuantity>>,
}

impl Evaluations {
    /// The output index of `q` at envelope point `pi`, added if new.
    fn add(&mut self, pi: usize, q: LimitedQuantity) -> (usize, usize) {
        let at = match self.points.iter().position(|&p| p == pi) {
            Some(i) => i,
            None => {
                self.points.push(pi);
                self.quantities.push(Vec::new());
                self.points.len() - 1
            }
        };
        let qi = match self.quantities[at].iter().position(|x| *x == q) {
            Some(i) => i,
            None => {
                self.quantities[at].push(q);
                self.quantities[at].len() - 1
            }
        };
        (at, qi)
    }

    /// The output slots of verdict `v`'s quantity at each of `points` (its
    /// worst there), added if new.
    fn add_verdict(&mut self, v: &Verdict, points: &[usize]) -> Vec<(usize, usize)> {
        points
            .iter()
            .map(|&pi| {
                let w = v.at_points[pi].as_ref().expect("a point with a worst");
                self.add(pi, quantity(v, w))
            })
            .collect()
    }

    /// The flat index of (point slot, quantity) in the outputs.
    fn flat(&self, (at, qi): (usize, usize)) -> usize {
        self.quantities[..at].iter().map(Vec::len).sum::<usize>() + qi
    }

    /// Every quantity at every point for the circuits at the points.
    fn values(
        &self,
        circuits: &[Circuit],
        shaft: Option<&str>,
        speeds: &[f64],
    ) -> Result<Vec<f64>, String> {
        // the points in parallel (serially inside a parallel draw)
        let pairs: Vec<(&Circuit, &Vec<LimitedQuantity>)> =
            circuits.iter().zip(&self.quantities).collect();
        let per_point = crate::parallel::ordered_map(
            &pairs,
            pairs.len() > 1,
            || (),
            |_, (circuit, q)| limited_worst_values(circuit, shaft, speeds, q),
            &mut |_| {},
        )?;
        Ok(per_point.concat())
    }
}

/// What a verdict's worst value is at envelope point `w`.
fn quantity(v: &Verdict, w: &crate::analysis::envelope::WorstPoint) -> LimitedQuantity {
    LimitedQuantity {
        tap: v.tap.clone(),
        kind: v.limit.kind,
        order: (v.limit.kind == LimitKind::Harmonic).then_some(w.order),
    }
}

/// The verdicts of `report` (assessed from `template`'s circuit file with
/// `request`) with the uncertainty of their worst values: for each limit,
/// the band of the quantity's true worst over the speed range and over the
/// envelope points that can be worst (the whole speed grid is swept in
/// every draw, since the worst speed moves with the inputs, e.g. a
/// resonance with an uncertain wave speed). Every draw sets the same input
/// values at every point, so a draw's worst is the largest of its values at
/// those points. The points drawn for a limit are its nominal worst and its
/// **rivals**: the points whose first-order band (widened
/// [`RIVAL_WIDENING`] times) reaches the worst point's, highest first, at
/// most [`MAX_DRAWN_POINTS`] in all (the others are counted in
/// [`VerdictBand::points_left_out`]). With first-order bands only, a
/// verdict's band runs from the highest low end to the highest high end of
/// its points' bands. `progress(done, planned)` counts draws.
///
/// # Errors
/// [`Error::Request`] when nothing is uncertain or a drawn value makes the
/// circuit invalid; [`Error::Failed`] when a drawn circuit cannot be swept.
pub fn verdict_bands(
    template: &CircuitTemplate,
    report: &AssessReport,
    request: &AssessRequest,
    bands: &BandRequest,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<VerdictBands, Error> {
    use crate::uncertainty::bands::{BandError, Method, Propagated};
    let a = &report.assessment;
    let speeds: Vec<f64> = a
        .sweeps
        .first()
        .map(|s| s.sweep.speeds_rev_s.clone())
        .unwrap_or_default();
    let shaft = request.shaft.as_ref().map(|s| s.0.as_str());
    // per verdict with a worst: its envelope points with ripple, highest first
    let candidates: Vec<Vec<usize>> = a
        .verdicts
        .iter()
        .map(|v| {
            let mut c: Vec<usize> = (0..v.at_points.len())
                .filter(|&pi| v.at_points[pi].is_some())
                .collect();
            let value = |pi: usize| v.at_points[pi].as_ref().map_or(0.0, |w| w.value_pa);
            c.sort_by(|&x, &y| value(y).total_cmp(&value(x)));
            let floor = c
                .first()
                .map_or(0.0, |&w| value(w) * 10f64.powf(-RIVAL_SCREEN_DB / 20.0));
            c.retain(|&pi| value(pi) >= floor);
            c
        })
        .collect();
    if candidates.iter().all(Vec::is_empty) {
        return Err(Error::Request(format!(
            "{}: no limit has a worst value to give an uncertainty band of (no `limits`, or no ripple reaches them)",
            report.subject.file
        )));
    }
    let failed = |e: BandError| {
        if e.is_input() {
            Error::Request(e.to_string())
        } else {
            Error::failed("uncertainty bands of the verdicts".to_string(), e)
        }
    };
    let run = |evals: &Evaluations,
               outputs: &(dyn Fn(&[f64]) -> Vec<f64> + Sync),
               bands: &BandRequest,
               progress: &mut dyn FnMut(usize, usize)|
     -> Result<Propagated, Error> {
        let points: Vec<OperatingPoint> = evals
            .points
            .iter()
            .map(|&pi| a.points[pi].clone())
            .collect();
        let evaluate = |circuits: Vec<Circuit>| -> Result<Vec<f64>, String> {
            Ok(outputs(&evals.values(&circuits, shaft, &speeds)?))
        };
        propagate_at_points(template, &points, &evaluate, None, bands, progress).map_err(failed)
    };

    // First order at every candidate point, when it picks rivals or is
    // what was asked for.
    // (Monte Carlo needs them only to pick rivals)
    let needed: Vec<bool> = candidates
        .iter()
        .map(|c| bands.method == Method::Linear || c.len() > 1)
        .collect();
    let screen = needed.contains(&true);
    let mut first_order: Vec<Vec<(usize, crate::uncertainty::linear::LinearBand)>> =
        vec![Vec::new(); a.verdicts.len()];
    let mut first_info = None;
    if screen {
        let mut evals = Evaluations::default();
        let slots: Vec<Vec<(usize, (usize, usize))>> = a
            .verdicts
            .iter()
            .zip(&candidates)
            .zip(&needed)
            .map(|((v, c), &needed)| {
                let c: &[usize] = if needed { c } else { &[] };
                c.iter().copied().zip(evals.add_verdict(v, c)).collect()
            })
            .collect();
        let linear = BandRequest {
            method: Method::Linear,
            ..*bands
        };
        let p = run(&evals, &|x| x.to_vec(), &linear, &mut |_, _| {})?;
        for (fo, slots) in first_order.iter_mut().zip(&slots) {
            for &(pi, slot) in slots {
                if let Some(l) = p.outputs[evals.flat(slot)].linear {
                    fo.push((pi, l));
                }
            }
        }
        first_info = Some(p.info);
    }
    // per verdict: the points drawn and how many rivals were left out
    let widened = |l: &crate::uncertainty::linear::LinearBand| {
        (
            l.nominal - RIVAL_WIDENING * (l.nominal - l.low),
            l.nominal + RIVAL_WIDENING * (l.high - l.nominal),
        )
    };
    let drawn: Vec<(Vec<usize>, usize)> = candidates
        .iter()
        .zip(&first_order)
        .map(|(c, fo)| {
            let Some(&worst) = c.first() else {
                return (Vec::new(), 0);
            };
            let band_of = |pi: usize| fo.iter().find(|(p, _)| *p == pi).map(|(_, l)| l);
            let floor = band_of(worst).map_or(f64::INFINITY, |l| widened(l).0);
            let mut rivals: Vec<(usize, f64)> = c[1..]
                .iter()
                .filter_map(|&pi| {
                    let l = band_of(pi)?;
                    // an unknown band (NaN ends) may reach anything
                    let high = if l.high.is_finite() {
                        widened(l).1
                    } else {
                        f64::INFINITY
                    };
                    let reaches = high >= floor || high.is_nan() || floor.is_nan();
                    reaches.then_some((pi, high))
                })
                .collect();
            rivals.sort_by(|x, y| y.1.total_cmp(&x.1));
            let left_out = rivals.len().saturating_sub(MAX_DRAWN_POINTS - 1);
            let mut points = vec![worst];
            points.extend(rivals.iter().take(MAX_DRAWN_POINTS - 1).map(|r| r.0));
            (points, left_out)
        })
        .collect();

    let (info, worst_bands): (BandsInfo, Vec<Option<OutputBand>>) = match bands.method {
        Method::Linear => {
            // the highest low end and the highest high end of the points'
            let per_verdict: Vec<Option<OutputBand>> = drawn
                .iter()
                .zip(&first_order)
                .zip(&a.verdicts)
                .map(|(((points, _), fo), v)| {
                    let ls: Vec<_> = fo
                        .iter()
                        .filter(|(pi, _)| points.contains(pi))
                        .map(|(_, l)| *l)
                        .collect();
                    let first = *ls.first()?;
                    let nominal = v.worst.as_ref().map_or(first.nominal, |w| w.value_pa);
                    let combined = ls.iter().skip(1).fold(first, |m, l| {
                        crate::uncertainty::linear::LinearBand {
                            nominal,
                            u: m.u.max(l.u),
                            low: m.low.max(l.low),
                            high: m.high.max(l.high),
                            nonlinearity: m.nonlinearity.max(l.nonlinearity),
                            good: m.good && l.good,
                            missing: m.missing || l.missing,
                        }
                    });
                    Some(OutputBand {
                        nominal,
                        monte_carlo: None,
                        linear: Some(combined),
                        linear_agrees: None,
                    })
                })
                .collect();
            // counted over the verdicts' bands, not the points screened
            let mut info = first_info.expect("first order was computed");
            let shown: Vec<&OutputBand> = per_verdict.iter().flatten().collect();
            info.outputs = shown.len();
            info.judged = shown.len();
            info.linear_good = shown
                .iter()
                .filter(|b| b.linear.is_some_and(|l| l.good))
                .count();
            info.linear_disagrees = 0;
            (info, per_verdict)
        }
        Method::MonteCarlo => {
            let mut evals = Evaluations::default();
            // per verdict with a worst: the output slots of its points
            let slots: Vec<Vec<(usize, usize)>> = a
                .verdicts
                .iter()
                .zip(&drawn)
                .map(|(v, (points, _))| evals.add_verdict(v, points))
                .collect();
            let flat: Vec<Vec<usize>> = slots
                .iter()
                .map(|s| s.iter().map(|&slot| evals.flat(slot)).collect())
                .collect();
            let with_worst: Vec<usize> = (0..flat.len()).filter(|&v| !flat[v].is_empty()).collect();
            // a draw's worst of a verdict: the largest of its points' values
            let outputs = |x: &[f64]| -> Vec<f64> {
                with_worst
                    .iter()
                    .map(|&v| worst_of_points(flat[v].iter().map(|&i| x[i])))
                    .collect()
            };
            let p = run(&evals, &outputs, bands, progress)?;
            let mut per_verdict = vec![None; a.verdicts.len()];
            for (&v, band) in with_worst.iter().zip(p.outputs) {
                per_verdict[v] = Some(band);
            }
            (p.info, per_verdict)
        }
    };
    let verdicts = a
        .verdicts
        .iter()
        .zip(worst_bands)
        .zip(&drawn)
        .map(|((v, band), (points, left_out))| {
            let interval = band.and_then(|b| b.interval());
            let nominal = v.worst.as_ref().map_or(0.0, |w| w.value_pa);
            VerdictBand {
                tap: v.tap.clone(),
                status: match band {
                    None => Status::of(nominal, Some((nominal, nominal)), v.limit.value_pa),
                    Some(_) => Status::of(nominal, interval, v.limit.value_pa),
                },
                worst_pa: band,
                margin_db: interval
                    .filter(|(_, hi)| *hi > 0.0)
                    .map(|(_, hi)| 20.0 * (v.limit.value_pa / hi).log10()),
                wholly_above: interval.is_some_and(|(lo, _)| lo > v.limit.value_pa),
                points_drawn: points.len(),
                points_left_out: *left_out,
            }
        })
        .collect();
    Ok(VerdictBands { info, verdicts })
}

/// A draw's worst of a verdict over the envelope points drawn: the largest
/// of its values there, or NaN (a missing draw) when any point has no value:
/// the worst of the others could understate it.
fn worst_of_points(values: impl Iterator<Item = f64>) -> f64 {
    values.fold(f64::NEG_INFINITY, |m, v| {
        if v.is_nan() || m.is_nan() {
            f64::NAN
        } else {
            m.max(v)
        }
    })
}

/// The file an assessment reads: the circuit as written, its envelope and
/// limits, and its own operating point.
#[derive(Debug, Clone, Copy)]
pub struct AssessFile<'a> {
    /// The circuit file's subject (name and title).
    pub file: &'a str,
    /// The circuit as written.
    pub circuit: &'a Circuit,
    /// Its envelope.
    pub envelope: Option<&'a Envelope>,
    /// Its limits.
    pub limits: &'a [TapLimits],
    /// Its own mean pressure (gauge, Pa).
    pub pressure_pa: Option<f64>,
    /// Its own oil temperature (K).
    pub temperature_k: Option<f64>,
}

impl<'a> AssessFile<'a> {
    /// The parts of a read circuit file that an assessment uses.
    pub fn of(file: &'a crate::io::CircuitFile) -> Self {
        AssessFile {
            file: &file.file,
            circuit: &file.circuit,
            envelope: file.envelope.as_ref(),
            limits: &file.limits,
            pressure_pa: file.pressure_pa,
            temperature_k: file.temperature_k,
        }
    }
}

/// Assesses the circuits of the envelope's points (each resolved at its
/// point, in the envelope's order); `progress(done, total)` follows the
/// points.
///
/// # Errors
/// [`Error::Request`] when no speed range is known or the request is
/// unusable; [`Error::Failed`] when a point's circuit cannot be solved.
pub fn assess(
    file: AssessFile<'_>,
    points: &[(OperatingPoint, Circuit)],
    request: &AssessRequest,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<AssessReport, Error> {
    let mut inputs = Vec::new();
    if let Some((range, origin)) = request.speed_range {
        inputs.push(Input::range("speed_range", range, "rev/s", origin));
    }
    if let Some((shaft, origin)) = &request.shaft {
        inputs.push(Input::text("shaft", shaft, *origin));
    }
    let (n, n_origin) = request.speed_points;
    inputs.push(Input::number("speed_points", n as f64, "1", n_origin));
    let (rise, rise_origin) = request.min_rise_db;
    inputs.push(Input::number("min_rise", rise, "dB", rise_origin));
    inputs.push(Input::number(
        "top",
        request.top as f64,
        "1",
        Origin::Request,
    ));
    inputs.push(Input::number(
        "floor",
        request.floor_db,
        "dB",
        Origin::Request,
    ));
    let total = points.len();
    let assessment = run_assess(
        points,
        request.shaft.as_ref().map(|s| s.0.as_str()),
        request.speed_range.map(|r| r.0),
        file.limits,
        &AssessSettings {
            speed_points: n,
            min_rise_db: rise,
        },
        &mut |done| progress(done, total),
    )
    .map_err(|e| match e {
        AssessError::NoSpeedRange | AssessError::Settings(_) => {
            Error::Request(format!("{}: {e}", file.file))
        }
        e => Error::failed(format!("assessing {}", file.file), e),
    })?;
    if let Some(w) = &assessment
        .worst
        .iter()
        .flatten()
        .find(|w| !w.value_pa.is_finite())
    {
        return Err(Error::NotFinite(format!(
            "the worst ripple at `{}` is not a finite number",
            w.point.label()
        )));
    }
    let circuit = file.circuit;
    let silent_orders = assessment
        .sweeps
        .first()
        .map(|s| {
            s.sweep
                .shaft
                .silent_orders(&circuit.pumps, circuit.harmonics)
        })
        .unwrap_or_default();
    let cautions = if points
        .iter()
        .any(|(_, c)| c.elements.iter().any(|e| e.kind.is_pressure_vessel()))
    {
        vec![PRESSURE_VESSEL_CAUTION.to_string()]
    } else {
        Vec::new()
    };
    Ok(AssessReport {
        subject: Subject {
            file: file.file.to_string(),
            title: circuit.title.clone(),
        },
        inputs,
        envelope: file.envelope.cloned(),
        limits: file.limits.to_vec(),
        file_pressure_pa: file.pressure_pa,
        file_temperature_k: file.temperature_k,
        silent_orders,
        top: request.top,
        floor_db: request.floor_db,
        assessment,
        cautions,
        verdict_bands: None,
    })
}

#[cfg(test)]
mod tests {
    use super::worst_of_points;

    // A draw whose value is missing at one envelope point is missing as a
    // whole (the largest of the others could understate its worst); with
    // every value known it is their largest.
    #[test]
    fn a_draw_missing_at_one_point_is_missing() {
        let worst = |v: &[f64]| worst_of_points(v.iter().copied());
        assert_eq!(worst(&[1.0, 3.0, 2.0]), 3.0);
        assert!(worst(&[1.0, f64::NAN, 3.0]).is_nan());
        assert!(worst(&[f64::NAN, 1.0]).is_nan());
        assert!(worst(&[4.0, 1.0, f64::NAN]).is_nan());
    }
}

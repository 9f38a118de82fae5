//! `tune`: sizes a silencer by searching 1 to 3 of its parameters for the
//! least ripple at a point over the operating speeds (and fluid
//! temperatures), with the ripple without the silencer for scale, the
//! steepness of the optimum and the values to write in the circuit file.

use super::describe;
use super::response::{PumpRef, adjusted};
use super::setup::{SpeedRange, speed_range};
use super::{Error, Input, Notice, Origin, Subject, level_db, notices};
use crate::Circuit;
use crate::analysis::ripple::report_points;
use crate::analysis::silencer::{Chain, WithoutReference, circuit_without};
use crate::analysis::tune::{
    Bound, Objective, Parameter, RippleEvaluator, RippleSummary, SearchSettings, TuneProblem,
    speed_conditions,
};
use crate::analysis::tune_limits::{LimitGoal, Tightest};
use crate::analysis::tune_rules::{RuleCheck, Rules};
use crate::circuit::TapLocation;
use crate::elements::{Element, PRESSURE_VESSEL_CAUTION, STANDARD_ATMOSPHERE_PA};
use crate::envelope::OperatingPoint;
use crate::units::Dimension;
use serde::Serialize;

/// What to size, resolved against the circuit.
#[derive(Debug, Clone)]
pub struct TuneRequest {
    /// The silencer element.
    pub element: usize,
    /// The parameters varied and their bounds (SI; gas pressures absolute).
    pub bounds: Vec<Bound>,
    /// The point whose ripple is minimised: its name and location.
    pub tap: (String, TapLocation),
    /// The pump.
    pub pump_index: usize,
    /// Its shaft's speed (rev/s) instead of the file's.
    pub speed_rev_s: Option<f64>,
    /// The operating speed range (rev/s) instead of the file's.
    pub speed_range: Option<(f64, f64)>,
    /// The `speed` range of the file's `envelope` (rev/s), if it was read.
    pub envelope_speed_range: Option<(f64, f64)>,
    /// Number of speeds across the range, and where it came from.
    pub speed_points: (usize, Origin),
    /// Harmonics per pump, overriding the circuit's.
    pub harmonics: Option<u32>,
    /// How the ripple over the speeds becomes one number.
    pub objective: Objective,
    /// Samples of the global search stage (default per dimension).
    pub samples: Option<usize>,
    /// Reference pressure for levels, Pa (rms), and where it came from.
    pub db_ref_pa: (f64, Origin),
    /// The circuit with the oil at each temperature (K) of a range
    /// (empty: the circuit's own fluid only).
    pub fluid_states: Vec<(f64, Circuit)>,
    /// The circuit at each envelope point (empty: the circuit as written,
    /// or `fluid_states`); the two are not given together.
    pub envelope: Vec<(OperatingPoint, Circuit)>,
    /// The practical rules (flagged, or hard).
    pub rules: Rules,
    /// The smallest-silencer objective: the limits to meet and the size to
    /// minimise (`None`: minimise `objective`).
    pub goal: Option<LimitGoal>,
    /// Remarks about the inputs to pass on as warnings.
    pub notes: Vec<Notice>,
}

/// Two parameters the objective cannot separate near the optimum (or one it
/// hardly depends on): hold one of them.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DegeneracyResult {
    /// The first parameter.
    pub first: &'static str,
    /// The second; `None`: the ripple hardly depends on `first`.
    pub second: Option<&'static str>,
    /// cos of the angle between their sensitivity columns (±1: the
    /// objective sees only their combination).
    pub correlation: f64,
    /// a in first·second^a, the combination the ripple follows.
    pub exponent: f64,
}

/// One design the search evaluated (for `--designs-csv` and the plot; not
/// in the JSON).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DesignRow {
    /// The parameters' values (SI), in the order of `parameters`.
    pub values: Vec<f64>,
    /// Its objective in Pa; `None`: not valid.
    pub objective_pa: Option<f64>,
    /// Whether it keeps every practical rule.
    pub keeps_rules: bool,
    /// `global` or `local`.
    pub stage: &'static str,
    /// Smallest-silencer objective: its size (SI).
    pub size: Option<f64>,
    /// Smallest-silencer objective: its margin to the tightest limit, dB.
    pub margin_db: Option<f64>,
}

/// A design's tightest limit (smallest-silencer objective).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TightestResult {
    /// The measurement point.
    pub tap: String,
    /// The limit as written in the file.
    pub limit: String,
    /// The limit's value, Pa.
    pub limit_pa: f64,
    /// Where: the envelope point's label or the temperature (`None`: the
    /// circuit as written).
    pub point: Option<String>,
    /// Shaft speed, rev/s.
    pub speed_rev_s: f64,
    /// The limited quantity there, Pa.
    pub value_pa: f64,
    /// 20·log10(limit/value), dB (negative: exceeded).
    pub margin_db: f64,
}

/// The smallest-silencer objective's outcome.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SmallestResult {
    /// What is minimised: `volume` or `length`.
    pub size: &'static str,
    /// Its SI unit.
    pub unit: &'static str,
    /// The tuned design's size.
    pub tuned_size: f64,
    /// The file's design's size.
    pub in_file_size: Option<f64>,
    /// Whether the tuned design meets every limit (when not, no design in
    /// the bounds was found that does, and the tuned one is the nearest).
    pub met: bool,
    /// The tuned design's tightest limit.
    pub tightest: Option<TightestResult>,
    /// The file's design's tightest limit.
    pub tightest_in_file: Option<TightestResult>,
}

/// The practical rules and the tuned design against them.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RulesResult {
    /// Whether a design breaking a rule was refused in the search (hard)
    /// or only flagged.
    pub hard: bool,
    /// The allowed band of precharge over the lowest operating pressure.
    pub precharge_fraction: (f64, f64),
    /// The lowest operating pressure of the damper's gas over the states,
    /// Pa absolute (dampers only).
    pub lowest_operating_pa: Option<f64>,
    /// The largest mean flow through the element at the top speed, m³/s.
    pub mean_flow_m3_s: f64,
    /// The tuned design against each rule that applies to it.
    pub tuned: Vec<RuleCheck>,
    /// The file's design against them.
    pub as_in_file: Vec<RuleCheck>,
}

/// A varied parameter: its value in the file, its best value and bounds.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ParameterResult {
    /// Its name (as in `--vary`).
    pub name: &'static str,
    /// Its SI unit (`m`, `m3`, `Pa` absolute for gas pressures).
    pub unit: &'static str,
    /// Its value in the circuit file, if the element has it.
    pub in_file: Option<f64>,
    /// The best value found.
    pub best: f64,
    /// The lower bound.
    pub low: f64,
    /// The upper bound.
    pub high: f64,
    /// Whether the best value sits at a bound (widen it?).
    pub at_bound: bool,
    /// How to write the best value in the circuit file.
    pub file_value: String,
}

/// The ripple of one design over the conditions.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Ripple {
    /// The objective, Pa (rms).
    pub objective_pa: f64,
    /// Its level in dB re the reference; `None` without ripple.
    pub level_db: Option<f64>,
    /// The overall rms ripple at each condition (speeds, repeated per
    /// temperature), Pa.
    pub per_condition_pa: Vec<f64>,
}

impl Ripple {
    fn of(s: &RippleSummary, p_ref: f64) -> Self {
        Ripple {
            objective_pa: s.objective_pa,
            level_db: level_db(s.objective_pa, p_ref),
            per_condition_pa: s.per_condition_pa.clone(),
        }
    }
}

/// Most ripple evaluations (search evaluations × speeds × temperatures) a
/// tune may make: about seven times the default three-parameter search over
/// 41 speeds and 3 temperatures.
pub const MAX_TUNE_WORK: usize = 2_000_000;

/// Where the tuned design is worst (objective `worst`; the speed refined
/// between the grid speeds).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct WorstCondition {
    /// Speed, rev/s.
    pub speed_rev_s: f64,
    /// Fluid temperature, K (with a temperature range only).
    pub temperature_k: Option<f64>,
    /// The envelope point's label (with `--envelope` only).
    pub point: Option<String>,
    /// The overall rms ripple there, Pa.
    pub rms_pa: f64,
    /// Its level in dB re the reference.
    pub level_db: Option<f64>,
}

/// How much the ripple rises with one parameter 10 % off its best value.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SteepnessResult {
    /// The parameter.
    pub name: &'static str,
    /// At 0.9 × best, dB (`None`: that design is not valid).
    pub minus_10_percent_db: Option<f64>,
    /// At 1.1 × best, dB.
    pub plus_10_percent_db: Option<f64>,
}

/// The search that was run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Search {
    /// Samples of the global stage.
    pub global_points: usize,
    /// Ripple evaluations made.
    pub evaluations: usize,
    /// Network solves per evaluation.
    pub solves_per_evaluation: usize,
}

/// The result of `tune`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TuneResult {
    /// The circuit file.
    pub subject: Subject,
    /// Inputs: pump, harmonics, speed, tap, objective, speed points, dB
    /// reference.
    pub inputs: Vec<Input>,
    /// The element sized.
    pub element: String,
    /// Its kind.
    pub kind: &'static str,
    /// Where it sits.
    pub place: String,
    /// The point whose ripple is minimised.
    pub tap: String,
    /// The objective, in words.
    pub objective: &'static str,
    /// Whether the worst speed is refined between the grid speeds (the
    /// `worst` objective over more than one speed).
    pub refined_worst: bool,
    /// The pump.
    pub pump: PumpRef,
    /// Harmonics of the pump in the ripple.
    pub harmonics: u32,
    /// The operating speed range.
    pub speed_range: SpeedRange,
    /// The speeds evaluated, rev/s (log-spaced, ends included).
    pub speeds_rev_s: Vec<f64>,
    /// The fluid temperatures evaluated, K (empty: the file's fluid).
    pub temperatures_k: Vec<f64>,
    /// The envelope points evaluated, by label (empty: the circuit as
    /// written or the temperatures).
    pub points: Vec<String>,
    /// The search.
    pub search: Search,
    /// The varied parameters.
    pub parameters: Vec<ParameterResult>,
    /// The reference of the levels, Pa.
    pub db_ref_pa: f64,
    /// The ripple with the silencer taken out (`None` when the circuit
    /// without it cannot be formed).
    pub without: Option<Ripple>,
    /// The ripple with the silencer as in the file.
    pub as_in_file: Ripple,
    /// The ripple with the tuned silencer.
    pub tuned: Ripple,
    /// Where the tuned design is worst (with more than one condition).
    pub worst: Option<WorstCondition>,
    /// The steepness of the optimum.
    pub steepness: Vec<SteepnessResult>,
    /// Parameters the objective cannot separate near the optimum.
    pub degeneracies: Vec<DegeneracyResult>,
    /// The practical rules.
    pub rules: RulesResult,
    /// The smallest-silencer objective's outcome (`None` for `worst` or
    /// `rms`).
    pub smallest: Option<SmallestResult>,
    /// Every design evaluated, in order (in `--designs-csv`, not in JSON).
    #[serde(skip)]
    pub designs: Vec<DesignRow>,
    /// The tuned element in words.
    pub tuned_description: Vec<String>,
    /// Safety cautions (a gas-charged damper is a pressure vessel).
    pub cautions: Vec<String>,
    /// Model-validity warnings and remarks about the inputs.
    pub warnings: Vec<Notice>,
}

impl TuneResult {
    /// 20·log10 of the file's design over the tuned one, dB.
    pub fn improvement_db(&self) -> Option<f64> {
        ratio_db(self.as_in_file.objective_pa, self.tuned.objective_pa)
    }

    /// 20·log10 of no silencer over the tuned one, dB.
    pub fn attenuation_db(&self) -> Option<f64> {
        ratio_db(self.without.as_ref()?.objective_pa, self.tuned.objective_pa)
    }

    /// The (speed, temperature, envelope point) of each condition, in the
    /// order of `per_condition_pa`.
    pub fn conditions(&self) -> Vec<(f64, Option<f64>, Option<&str>)> {
        if !self.points.is_empty() {
            self.points
                .iter()
                .flat_map(|p| {
                    self.speeds_rev_s
                        .iter()
                        .map(move |&s| (s, None, Some(p.as_str())))
                })
                .collect()
        } else if self.temperatures_k.is_empty() {
            self.speeds_rev_s.iter().map(|&s| (s, None, None)).collect()
        } else {
            self.temperatures_k
                .iter()
                .flat_map(|&t| self.speeds_rev_s.iter().map(move |&s| (s, Some(t), None)))
                .collect()
        }
    }
}

fn ratio_db(a: f64, b: f64) -> Option<f64> {
    (a > 0.0 && b > 0.0).then(|| 20.0 * (a / b).log10())
}

/// A parameter value as written in a circuit file: lengths in mm, volumes
/// in L, gas pressures in bar gauge.
pub fn file_value(parameter: Parameter, value: f64) -> String {
    match parameter.dimension() {
        Dimension::Length => format!("{:.1} mm", value * 1e3),
        Dimension::Volume => format!("{:.3} L", value * 1e3),
        Dimension::Damping => format!("{value:.3} N·s/m"),
        _ => format!("{:.2} bar gauge", (value - STANDARD_ATMOSPHERE_PA) / 1e5),
    }
}

/// Sizes the silencer as `tune` does; `progress(done, total)` follows the
/// ripple evaluations.
///
/// # Errors
/// [`Error::Request`] for parameters or bounds that do not fit the
/// element; [`Error::Failed`] if the search cannot evaluate a design.
pub fn tune(
    circuit: Circuit,
    file: &str,
    request: &TuneRequest,
    progress: &mut dyn FnMut(usize, usize),
) -> Result<TuneResult, Error> {
    let pump_index = request.pump_index;
    let (circuit, mut inputs) =
        adjusted(circuit, pump_index, request.harmonics, request.speed_rev_s);
    let circuit = &circuit;
    let states: Vec<Circuit> = request
        .fluid_states
        .iter()
        .map(|(_, c)| c)
        .chain(request.envelope.iter().map(|(_, c)| c))
        .map(|c| {
            adjusted(
                c.clone(),
                pump_index,
                request.harmonics,
                request.speed_rev_s,
            )
            .0
        })
        .collect();
    let temperatures_k: Vec<f64> = request.fluid_states.iter().map(|(t, _)| *t).collect();
    let points: Vec<String> = request.envelope.iter().map(|(p, _)| p.label()).collect();
    let state_count = temperatures_k.len().max(points.len()).max(1);
    let (p_ref, ref_origin) = request.db_ref_pa;
    inputs.push(Input::text("tap", &request.tap.0, Origin::Request));
    inputs.push(Input::number(
        "speed_points",
        request.speed_points.0 as f64,
        "1",
        request.speed_points.1,
    ));
    inputs.push(Input::number("db_ref", p_ref, "Pa", ref_origin));
    let speeds = speed_range(
        circuit,
        pump_index,
        request.speed_range,
        request.envelope_speed_range,
    );
    let conditions = speed_conditions(
        speeds.rev_s(),
        if speeds.is_single() {
            1
        } else {
            request.speed_points.0
        },
    );
    let objective = request.objective;
    let tap = request.tap.1;
    let evaluator = RippleEvaluator::new(circuit, pump_index, tap, &conditions, objective);
    let problem = TuneProblem {
        circuit,
        element: request.element,
        bounds: request.bounds.clone(),
        evaluator: evaluator.clone(),
        fluid_states: states,
    };
    problem
        .validate()
        .map_err(|e| Error::Request(e.to_string()))?;
    let mut settings = SearchSettings::for_dims(problem.bounds.len());
    if let Some(n) = request.samples {
        settings.global_points = n;
    }
    let top = circuit.pumps[pump_index].pumping_elements as f64
        * speeds.high_rev_s
        * f64::from(circuit.harmonics);
    let mut warnings = request.notes.clone();
    warnings.extend(notices(&crate::diagnostics::circuit_warnings(circuit, top)));
    let budget = settings.budget();
    let work = budget * conditions.len() * state_count;
    if work > MAX_TUNE_WORK {
        return Err(Error::Request(format!(
            "{budget} evaluations × {} speeds × {state_count} temperatures or envelope points is {work} ripple evaluations, more than {MAX_TUNE_WORK}: use fewer --samples, --speed-points, --temperature-points or envelope points",
            conditions.len(),
        )));
    }
    let found = match &request.goal {
        None => problem.solve_with_rules(settings, &request.rules, &mut |n| progress(n, budget)),
        Some(goal) => {
            problem.solve_smallest(settings, &request.rules, goal, &mut |n| progress(n, budget))
        }
    }
    .map_err(|e| match e {
        crate::analysis::tune::TuneError::NoSize { .. }
        | crate::analysis::tune::TuneError::NoLimits => Error::Request(e.to_string()),
        e => Error::failed(
            format!(
                "tuning `{}` in {file}",
                circuit.elements[request.element].name
            ),
            e,
        ),
    })?;

    // The ripple with the silencer taken out, for scale (over the same
    // fluid states as the search).
    let without_in = |state: &Circuit| -> Option<RippleSummary> {
        let chain = Chain::new(state, &[request.element]).ok()?;
        let pipe = chain
            .reference_pipes(state)
            .ok()
            .map(|(up, _)| &state.elements[up].kind);
        let c = circuit_without(state, &chain, WithoutReference::Pipe, pipe).ok()?;
        let t = report_points(&c)
            .into_iter()
            .find(|p| p.name == request.tap.0)?
            .location;
        RippleEvaluator::new(&c, pump_index, t, &conditions, objective)
            .evaluate(&c)
            .ok()
    };
    let without = if problem.fluid_states.is_empty() {
        without_in(circuit)
    } else {
        problem
            .fluid_states
            .iter()
            .map(without_in)
            .collect::<Option<Vec<_>>>()
            .map(|all| RippleSummary::combine(objective, all))
    };

    let e = &circuit.elements[request.element];
    let tuned = Element {
        name: e.name.clone(),
        kind: found.element.clone(),
        connection: e.connection,
    };
    let parameters = problem
        .bounds
        .iter()
        .zip(&found.best)
        .map(|(b, &v)| ParameterResult {
            name: b.parameter.name(),
            unit: match b.parameter.dimension() {
                Dimension::Length => "m",
                Dimension::Volume => "m3",
                Dimension::Damping => "N·s/m",
                _ => "Pa",
            },
            in_file: b.parameter.value(&e.kind),
            best: v,
            low: b.low,
            high: b.high,
            at_bound: (v / b.low - 1.0).abs() < 1e-3 || (b.high / v - 1.0).abs() < 1e-3,
            file_value: file_value(b.parameter, v),
        })
        .collect();
    let speeds_rev_s: Vec<f64> = conditions.iter().map(|c| c.speed_rev_s).collect();
    // the worst speed refined between the grid speeds (objective `worst`)
    let worst = found
        .after
        .worst
        .filter(|_| !speeds.is_single() || state_count > 1)
        .map(|(state, speed)| WorstCondition {
            speed_rev_s: speed,
            temperature_k: temperatures_k.get(state).copied(),
            point: points.get(state).cloned(),
            rms_pa: found.after.objective_pa,
            level_db: level_db(found.after.objective_pa, p_ref),
        });
    let cautions = if e.kind.is_pressure_vessel() {
        vec![PRESSURE_VESSEL_CAUTION.to_string()]
    } else {
        Vec::new()
    };
    inputs.push(Input::text(
        "objective",
        match (&request.goal, objective) {
            (Some(_), _) => "smallest",
            (None, Objective::Worst) => "worst",
            (None, Objective::Rms) => "rms",
        },
        Origin::Request,
    ));
    let smallest = request.goal.as_ref().map(|g| {
        let state_label = |i: usize| {
            points.get(i).cloned().or_else(|| {
                temperatures_k
                    .get(i)
                    .map(|t| format!("{:.1} °C", t - crate::oil::ZERO_CELSIUS_K))
            })
        };
        let tightest = |t: &Tightest| TightestResult {
            tap: t.tap.clone(),
            limit: t.limit.clone(),
            limit_pa: t.limit_pa,
            point: state_label(t.state),
            speed_rev_s: t.speed_rev_s,
            value_pa: t.value_pa,
            margin_db: t.margin_db,
        };
        SmallestResult {
            size: g.size.name(),
            unit: g.size.unit(),
            tuned_size: g.size.of(&found.element).unwrap_or(0.0),
            in_file_size: g.size.of(&e.kind),
            met: found.tightest.as_ref().is_none_or(|t| t.margin_db >= 0.0),
            tightest: found.tightest.as_ref().map(tightest),
            tightest_in_file: found.tightest_before.as_ref().map(tightest),
        }
    });
    Ok(TuneResult {
        subject: Subject {
            file: file.to_string(),
            title: circuit.title.clone(),
        },
        inputs,
        element: e.name.clone(),
        kind: e.kind.name(),
        place: describe::place(circuit, e),
        tap: request.tap.0.clone(),
        objective: match &request.goal {
            Some(g) => match g.size {
                crate::analysis::tune_limits::SizeMeasure::Volume => {
                    "smallest volume meeting every limit of the file"
                }
                crate::analysis::tune_limits::SizeMeasure::Length => {
                    "smallest length meeting every limit of the file"
                }
            },
            None => objective.describe(),
        },
        refined_worst: objective == Objective::Worst && conditions.len() > 1,
        pump: PumpRef::of(circuit, pump_index),
        harmonics: circuit.harmonics,
        speed_range: speeds,
        speeds_rev_s,
        temperatures_k,
        points,
        search: Search {
            global_points: settings.global_points,
            evaluations: found.evaluations,
            solves_per_evaluation: evaluator.solves_per_evaluation(),
        },
        parameters,
        db_ref_pa: p_ref,
        without: without.as_ref().map(|w| Ripple::of(w, p_ref)),
        as_in_file: Ripple::of(&found.before, p_ref),
        tuned: Ripple::of(&found.after, p_ref),
        worst,
        steepness: found
            .steepness
            .iter()
            .map(|s| SteepnessResult {
                name: s.parameter.name(),
                minus_10_percent_db: s.minus_10_percent_db,
                plus_10_percent_db: s.plus_10_percent_db,
            })
            .collect(),
        degeneracies: found
            .degeneracies
            .iter()
            .map(|d| DegeneracyResult {
                first: d.first.name(),
                second: d.second.map(Parameter::name),
                correlation: d.correlation,
                exponent: d.exponent,
            })
            .collect(),
        rules: RulesResult {
            hard: request.rules.hard,
            precharge_fraction: request.rules.precharge_fraction,
            lowest_operating_pa: found.rule_context.lowest_operating_pa,
            mean_flow_m3_s: found.rule_context.mean_flow_m3_s,
            tuned: found.rule_checks.clone(),
            as_in_file: request.rules.check(&e.kind, &found.rule_context),
        },
        designs: found
            .designs
            .iter()
            .map(|d| DesignRow {
                values: d.values.clone(),
                objective_pa: d.objective_pa,
                keeps_rules: d.keeps_rules,
                stage: d.stage,
                size: d.size,
                margin_db: d.margin_db,
            })
            .collect(),
        smallest,
        tuned_description: describe::silencer(&tuned, None),
        cautions,
        warnings,
    })
}

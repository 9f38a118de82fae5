//! `ripline tune FILE --element NAME --vary PARAM=LOW..HIGH ...`: size a
//! silencer by searching 1 to 3 of its parameters for the least ripple at a
//! point over the operating speed range.

use super::common::{self, UsageError};
use super::ranges::{self, Progress};
use anyhow::Context;
use clap::{Args, ValueEnum};
use ripline::analysis::silencer::{Chain, WithoutReference, circuit_without};
use ripline::analysis::tune::{
    Bound, Objective, Parameter, RippleEvaluator, RippleSummary, SearchSettings, TuneProblem,
    speed_conditions,
};
use ripline::elements::{Element, ElementKind, PRESSURE_VESSEL_CAUTION};
use ripline::io::gas_pressure::parse_gas_pressure;
use ripline::units::{Dimension, PressureDisplay};
use std::io::Write;
use std::path::PathBuf;

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum ObjectiveArg {
    /// The largest overall rms ripple over the speeds.
    Worst,
    /// The rms over the speeds of the overall rms ripple.
    Rms,
}

#[derive(Debug, Args)]
pub struct TuneArgs {
    /// Circuit file (YAML) holding the silencer to size.
    file: PathBuf,
    /// The silencer element to size.
    #[arg(long, value_name = "NAME")]
    element: String,
    /// A parameter and its bounds, e.g. `length=0.2m..1.5m`,
    /// `gas_volume=0.1L..2L`, `precharge=20 bar gauge..80 bar gauge`;
    /// give 1 to 3 (bare numbers are SI).
    #[arg(long, value_name = "PARAM=LOW..HIGH", required = true)]
    vary: Vec<String>,
    /// The measurement point whose ripple is minimised (needed when the
    /// circuit has more than one).
    #[arg(long, value_name = "NAME")]
    tap: Option<String>,
    /// How the ripple over the speeds becomes one number.
    #[arg(long, value_enum, default_value = "worst")]
    objective: ObjectiveArg,
    /// Operating speed range LOW..HIGH, in rpm unless a unit is given.
    #[arg(long, value_name = "LOW..HIGH")]
    speed_range: Option<String>,
    /// Number of speeds across the range (log-spaced, ends included).
    #[arg(long, value_name = "N", default_value_t = 41)]
    speeds: usize,
    /// Samples of the global search stage (default 120, 600 or 1500 for
    /// 1, 2 or 3 parameters).
    #[arg(long, value_name = "N")]
    samples: Option<usize>,
    /// The pump (default: the first).
    #[arg(long, value_name = "NAME")]
    pump: Option<String>,
    /// A fluid temperature range LOW..HIGH (e.g. `30degC..80degC`; a bare
    /// number is kelvin): the ripple is evaluated with the oil at each of
    /// `--temperature-steps` temperatures across it, so the design is robust
    /// to the wave-speed drift between a cold and a hot circuit. Needs a
    /// fluid given by a `grade` (or `viscosity_points`) and `temperature`.
    #[arg(long, value_name = "LOW..HIGH")]
    temperatures: Option<String>,
    /// Number of temperatures across `--temperatures` (ends included).
    #[arg(long, value_name = "N", default_value_t = 3)]
    temperature_steps: usize,
}

/// Most ripple evaluations (search evaluations × speeds × temperatures) a
/// tune may make: about seven times the default three-parameter search over
/// 41 speeds and 3 temperatures.
pub const MAX_TUNE_WORK: usize = 2_000_000;

fn parse_vary(text: &str) -> anyhow::Result<Bound> {
    let Some((name, range)) = text.split_once('=') else {
        return Err(UsageError(format!(
            "--vary {text}: write PARAM=LOW..HIGH, e.g. length=0.2m..1.5m"
        ))
        .into());
    };
    let parameter = Parameter::from_name(name.trim()).ok_or_else(|| {
        UsageError(format!(
            "--vary {text}: unknown parameter `{}`; use one of: {}",
            name.trim(),
            Parameter::ALL.map(|p| p.name()).join(", ")
        ))
    })?;
    let (low, high) = match parameter.dimension() {
        Dimension::Pressure => {
            let Some((lo, hi)) = range.split_once("..") else {
                return Err(
                    UsageError(format!("--vary {text}: write the range as LOW..HIGH")).into(),
                );
            };
            let p = |s: &str| {
                parse_gas_pressure(s).map_err(|e| UsageError(format!("--vary {text}: {e}")))
            };
            (p(lo)?, p(hi)?)
        }
        Dimension::Volume => ranges::parse_range("--vary", range, Dimension::Volume, "m3")?,
        Dimension::Damping => ranges::parse_range("--vary", range, Dimension::Damping, "N.s/m")?,
        dim => ranges::parse_range("--vary", range, dim, "m")?,
    };
    if !(low > 0.0 && high > low) {
        return Err(UsageError(format!(
            "--vary {text}: the bounds must be positive and increasing"
        ))
        .into());
    }
    Ok(Bound {
        parameter,
        low,
        high,
    })
}

fn show(parameter: Parameter, value: f64) -> String {
    match parameter.dimension() {
        Dimension::Length if value < 0.1 => format!("{:.2} mm", value * 1e3),
        Dimension::Length => format!("{:.4} m", value),
        Dimension::Volume => format!("{:.4} L", value * 1e3),
        Dimension::Damping => format!("{value:.4} N·s/m"),
        _ => format!("{:.3} bar abs", value / 1e5),
    }
}

fn level(pa: f64) -> String {
    if pa > 0.0 {
        format!(
            "{} rms ({:.1} dB re 1 Pa)",
            PressureDisplay(pa),
            20.0 * pa.log10()
        )
    } else {
        "no ripple".into()
    }
}

pub fn run(args: TuneArgs) -> anyhow::Result<()> {
    let bounds = args
        .vary
        .iter()
        .map(|v| parse_vary(v))
        .collect::<anyhow::Result<Vec<_>>>()?;
    if !(1..=1000).contains(&args.speeds) {
        return Err(UsageError(format!(
            "--speeds must be between 1 and 1000, found {}",
            args.speeds
        ))
        .into());
    }
    let loaded = common::load_circuit(Some(&args.file))?;
    let circuit = &loaded.circuit;
    let (temperatures_k, fluid_states) = fluid_states(&args)?;
    let element = ranges::element(circuit, &args.element)?;
    let (tap_name, tap) = ranges::point(circuit, args.tap.as_deref())?;
    let pump_index = ranges::pump_index(circuit, args.pump.as_deref())?;
    let speeds = ranges::speed_range(args.speed_range.as_deref(), circuit, pump_index)?;
    let conditions = speed_conditions(
        speeds.rev_s,
        if speeds.is_single() { 1 } else { args.speeds },
    );
    let objective = match args.objective {
        ObjectiveArg::Worst => Objective::Worst,
        ObjectiveArg::Rms => Objective::Rms,
    };
    let evaluator = RippleEvaluator::new(circuit, pump_index, tap, &conditions, objective);
    let problem = TuneProblem {
        circuit,
        element,
        bounds,
        evaluator: evaluator.clone(),
        fluid_states,
    };
    problem.validate().map_err(|e| UsageError(e.to_string()))?;
    let mut settings = SearchSettings::for_dims(problem.bounds.len());
    if let Some(n) = args.samples {
        if !(3..=100_000).contains(&n) {
            return Err(
                UsageError(format!("--samples must be between 3 and 100000, found {n}")).into(),
            );
        }
        settings.global_points = n;
    }
    let top = circuit.pumps[pump_index].pumping_elements as f64
        * speeds.rev_s.1
        * f64::from(circuit.harmonics);
    for w in ripline::diagnostics::circuit_warnings(circuit, top) {
        eprintln!("warning: {w}");
    }
    let work = settings.budget() * conditions.len() * temperatures_k.len().max(1);
    if work > MAX_TUNE_WORK {
        return Err(UsageError(format!(
            "{} evaluations × {} speeds × {} temperatures is {work} ripple evaluations, more than {MAX_TUNE_WORK}: use fewer --samples, --speeds or --temperature-steps",
            settings.budget(),
            conditions.len(),
            temperatures_k.len().max(1)
        ))
        .into());
    }
    let progress = Progress::new(settings.budget(), "searching");
    let result = problem
        .solve(settings, &mut |n| progress.set(n))
        .with_context(|| format!("tuning `{}` in {}", args.element, loaded.source))?;
    progress.finish();

    // The ripple with the silencer taken out, for scale (over the same
    // fluid states as the search).
    let without_in =
        |state: &ripline::Circuit| -> Option<RippleSummary> {
            let chain = Chain::new(state, &[element]).ok()?;
            let pipe = chain.reference_pipes(state).ok().and_then(|(up, _)| {
                match &state.elements[up].kind {
                    ElementKind::Tube(t) => Some(*t),
                    _ => None,
                }
            });
            let c = circuit_without(state, &chain, WithoutReference::Pipe, pipe.as_ref()).ok()?;
            let (_, t) = ranges::point(&c, Some(&tap_name)).ok()?;
            RippleEvaluator::new(&c, pump_index, t, &conditions, objective)
                .evaluate(&c)
                .ok()
        };
    let without: Option<RippleSummary> = if problem.fluid_states.is_empty() {
        without_in(circuit)
    } else {
        problem
            .fluid_states
            .iter()
            .map(without_in)
            .collect::<Option<Vec<_>>>()
            .map(|all| RippleSummary::combine(objective, all))
    };

    let e = &circuit.elements[element];
    let tuned = Element {
        name: e.name.clone(),
        kind: result.element.clone(),
        connection: e.connection,
    };
    let mut out = std::io::stdout().lock();
    writeln!(out, "ripline tune: {}", loaded.source)?;
    if let Some(title) = &circuit.title {
        writeln!(out, "circuit: {title}")?;
    }
    writeln!(
        out,
        "element `{}` ({}, {}); point `{tap_name}`",
        e.name,
        e.kind.name(),
        super::silencer::place(circuit, e)
    )?;
    writeln!(
        out,
        "objective: {}, harmonics 1–{} of pump `{}`",
        objective.describe(),
        circuit.harmonics,
        circuit.pumps[pump_index].name
    )?;
    writeln!(
        out,
        "speeds: {} (log-spaced, ends included{}); speed range {}",
        conditions.len(),
        if objective == Objective::Worst && conditions.len() > 1 {
            ", every resonance crossing between them refined to 0.01 dB"
        } else {
            ""
        },
        speeds.source
    )?;
    if !temperatures_k.is_empty() {
        writeln!(
            out,
            "fluid temperatures: {} °C (each at every speed; density, bulk modulus and viscosity from the oil model)",
            temperatures_k
                .iter()
                .map(|t| format!("{:.1}", t - 273.15))
                .collect::<Vec<_>>()
                .join(", ")
        )?;
    }
    writeln!(
        out,
        "search: {} in log scale over the bounds, then {}; {} ripple evaluations of {} network solves each on the speed grid",
        if problem.bounds.len() == 1 {
            format!("an even grid of {} values", settings.global_points)
        } else {
            format!("{} Halton samples", settings.global_points)
        },
        if problem.bounds.len() == 1 {
            "golden-section refinement of the best grid minima"
        } else {
            "Nelder–Mead refinement of the best separated samples"
        },
        result.evaluations,
        evaluator.solves_per_evaluation()
    )?;
    writeln!(out)?;
    writeln!(
        out,
        "  {:<12}  {:>16}  {:>16}  {:>36}",
        "parameter", "in the file", "best", "bounds"
    )?;
    for (b, v) in problem.bounds.iter().zip(&result.best) {
        let file = b
            .parameter
            .value(&e.kind)
            .map_or("—".into(), |x| show(b.parameter, x));
        let at_edge = if (v / b.low - 1.0).abs() < 1e-3 || (b.high / v - 1.0).abs() < 1e-3 {
            "  (at a bound: widen it?)"
        } else {
            ""
        };
        writeln!(
            out,
            "  {:<12}  {:>16}  {:>16}  {:>36}{at_edge}",
            b.parameter.name(),
            file,
            show(b.parameter, *v),
            format!(
                "{} .. {}",
                show(b.parameter, b.low),
                show(b.parameter, b.high)
            )
        )?;
    }
    writeln!(out)?;
    writeln!(out, "ripple at `{tap_name}` ({}):", objective.describe())?;
    if let Some(w) = &without {
        writeln!(out, "  without the silencer:   {}", level(w.objective_pa))?;
    }
    writeln!(
        out,
        "  as in the file:         {}",
        level(result.before.objective_pa)
    )?;
    writeln!(
        out,
        "  tuned:                  {}",
        level(result.after.objective_pa)
    )?;
    if result.after.objective_pa > 0.0 && result.before.objective_pa > 0.0 {
        writeln!(
            out,
            "  improvement over the file's design: {:.2} dB",
            20.0 * (result.before.objective_pa / result.after.objective_pa).log10()
        )?;
    }
    if let Some(w) = &without
        && result.after.objective_pa > 0.0
    {
        writeln!(
            out,
            "  attenuation against no silencer: {:.2} dB",
            20.0 * (w.objective_pa / result.after.objective_pa).log10()
        )?;
    }
    if let Some((state, speed)) = result.after.worst
        && (!speeds.is_single() || !temperatures_k.is_empty())
    {
        let speed = speed * 60.0;
        match temperatures_k.get(state) {
            Some(t) => writeln!(
                out,
                "  tuned, worst condition: {speed:.0} rpm at {:.1} °C with {}",
                t - 273.15,
                level(result.after.objective_pa)
            )?,
            None => writeln!(
                out,
                "  tuned, worst speed: {speed:.0} rpm with {}",
                level(result.after.objective_pa)
            )?,
        }
    }
    writeln!(out)?;
    writeln!(
        out,
        "steepness (ripple rise when one parameter is off its best value, others kept):"
    )?;
    for s in &result.steepness {
        let db = |v: Option<f64>| v.map_or("not valid".into(), |d| format!("{d:+.2} dB"));
        writeln!(
            out,
            "  {:<12}  −10 %: {:>10}   +10 %: {:>10}",
            s.parameter.name(),
            db(s.minus_10_percent_db),
            db(s.plus_10_percent_db)
        )?;
    }
    writeln!(out)?;
    writeln!(out, "tuned element:")?;
    for line in super::silencer::describe(&tuned, None) {
        writeln!(out, "  {line}")?;
    }
    writeln!(
        out,
        "in the circuit file, set: {}",
        problem
            .bounds
            .iter()
            .zip(&result.best)
            .map(|(b, v)| format!("{}: {}", b.parameter.name(), file_value(b.parameter, *v)))
            .collect::<Vec<_>>()
            .join(", ")
    )?;
    if e.kind.is_pressure_vessel() {
        writeln!(out)?;
        writeln!(out, "{PRESSURE_VESSEL_CAUTION}")?;
    }
    out.flush()?;
    Ok(())
}

/// The circuit at each temperature of `--temperatures` (none without it).
fn fluid_states(args: &TuneArgs) -> anyhow::Result<(Vec<f64>, Vec<ripline::Circuit>)> {
    let Some(range) = &args.temperatures else {
        return Ok((Vec::new(), Vec::new()));
    };
    if !(1..=20).contains(&args.temperature_steps) {
        return Err(UsageError(format!(
            "--temperature-steps must be between 1 and 20, found {}",
            args.temperature_steps
        ))
        .into());
    }
    let (lo, hi) = ranges::parse_range("--temperatures", range, Dimension::Temperature, "K")?;
    let n = args.temperature_steps;
    let temperatures: Vec<f64> = if n == 1 {
        vec![lo]
    } else {
        (0..n)
            .map(|i| lo + (hi - lo) * i as f64 / (n - 1) as f64)
            .collect()
    };
    let file = args.file.display().to_string();
    let text = ripline::io::read_text(&args.file)?;
    let states = temperatures
        .iter()
        .map(|&t| ripline::io::parse_circuit_at_temperature(&text, &file, t))
        .collect::<Result<Vec<_>, _>>()
        .with_context(|| format!("evaluating {file} at the temperatures of --temperatures"))?;
    let fixed = ripline::io::circuit_file::fixed_fluid_keys(&text, &file)?;
    if !fixed.is_empty() {
        eprintln!(
            "warning: {file}: fluid {} given explicitly, so {} not follow --temperatures",
            fixed.join(", "),
            if fixed.len() == 1 {
                "it does"
            } else {
                "they do"
            }
        );
    }
    Ok((temperatures, states))
}

/// A value as it would be written in a circuit file.
fn file_value(parameter: Parameter, value: f64) -> String {
    match parameter.dimension() {
        Dimension::Length => format!("{:.1} mm", value * 1e3),
        Dimension::Volume => format!("{:.3} L", value * 1e3),
        Dimension::Damping => format!("{value:.3} N·s/m"),
        _ => format!("{:.2} bar abs", value / 1e5),
    }
}

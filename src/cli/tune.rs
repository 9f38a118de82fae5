//! `ripline tune FILE --element NAME --vary PARAM=LOW..HIGH ...`: size a
//! silencer by searching 1 to 3 of its parameters for the least ripple at a
//! point over the operating speed range.

use super::common::{self, Outputs, UsageError};
use super::ranges::{self, Progress};
use anyhow::Context;
use clap::{Args, ValueEnum};
use ripline::analysis::tune::{Bound, Objective, Parameter};
use ripline::analysis::tune_limits::{LimitGoal, SizeMeasure};
use ripline::analysis::tune_rules::Rules;
use ripline::io::gas_pressure::parse_gas_pressure;
use ripline::plot;
use ripline::render::tune as render;
use ripline::results::tune::{TuneRequest, tune};
use ripline::results::{Notice, Origin};
use ripline::units::Dimension;
use std::path::{Path, PathBuf};

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum ObjectiveArg {
    /// The largest overall rms ripple over the speeds.
    Worst,
    /// The rms over the speeds of the overall rms ripple.
    Rms,
    /// The smallest silencer (see --size) meeting every limit of the file's
    /// `limits` section.
    Smallest,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum SizeArg {
    /// Bore area × length, cavity or gas volume.
    Volume,
    /// Length of a side branch or chamber.
    Length,
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
    /// What `--objective smallest` minimises.
    #[arg(long, value_enum, default_value = "volume")]
    size: SizeArg,
    /// The pump (or a shaft: its first pump); default: the first pump.
    #[arg(long, value_name = "NAME")]
    pump: Option<String>,
    /// The pump's shaft speed, in rpm unless a unit is given (overrides the file).
    #[arg(long, value_name = "RPM")]
    speed: Option<String>,
    /// Operating speed range LOW..HIGH, in rpm unless a unit is given.
    #[arg(long, value_name = "LOW..HIGH")]
    speed_range: Option<String>,
    /// Number of speeds across the range (log-spaced, ends included; default 41).
    #[arg(long, value_name = "N", alias = "speeds")]
    speed_points: Option<usize>,
    /// Number of harmonics of the pumping frequency (overrides the file).
    #[arg(long, value_name = "N")]
    harmonics: Option<u32>,
    /// Samples of the global search stage (default 120, 600 or 1500 for
    /// 1, 2 or 3 parameters).
    #[arg(long, value_name = "N")]
    samples: Option<usize>,
    /// A fluid temperature range LOW..HIGH (e.g. `30degC..80degC`; a bare
    /// number is kelvin): the ripple is evaluated with the oil at each of
    /// `--temperature-points` temperatures across it, so the design is robust
    /// to the wave-speed drift between a cold and a hot circuit. Needs a
    /// fluid given by a `grade` (or `viscosity_points`) and `temperature`.
    #[arg(long, value_name = "LOW..HIGH")]
    temperatures: Option<String>,
    /// Number of temperatures across `--temperatures` (ends included).
    #[arg(
        long,
        value_name = "N",
        default_value_t = 3,
        alias = "temperature-steps"
    )]
    temperature_points: usize,
    /// Evaluate the ripple at every point of the file's `envelope` (mean
    /// pressures, oil temperatures, load cases), each at every speed.
    #[arg(long, conflicts_with = "temperatures")]
    envelope: bool,
    /// Allowed band of a damper's precharge as a fraction of the lowest
    /// operating pressure it meets (absolute pressures; common practice
    /// 0.6..0.9).
    #[arg(long, value_name = "LOW..HIGH", default_value = "0.6..0.9")]
    precharge_band: String,
    /// Largest gas volume of a damper or cavity of a resonator, e.g. `1L`.
    #[arg(long, value_name = "VOLUME")]
    max_volume: Option<String>,
    /// Largest length of a side branch or expansion chamber, e.g. `1.2m`.
    #[arg(long, value_name = "LENGTH")]
    max_length: Option<String>,
    /// Largest mean-flow velocity in an in-line silencer's neck or ports at
    /// the top speed, in m/s (default 6).
    #[arg(long, value_name = "M/S")]
    max_neck_velocity: Option<String>,
    /// Make the practical rules hard: designs breaking one are not
    /// considered (default: flagged only).
    #[arg(long)]
    hard_rules: bool,
    /// Reference pressure for levels in dB (rms), e.g. "1 bar" (default 1 Pa).
    #[arg(long, value_name = "PRESSURE")]
    db_ref: Option<String>,
    /// Write the overall ripple per speed without, with the file's and
    /// with the tuned silencer as CSV
    /// (speed_rpm,temperature_k,without_pa,as_in_file_pa,tuned_pa).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Plot the overall ripple against speed for the three designs (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write every evaluated design with its objective as CSV
    /// (evaluation,stage,objective_pa,objective_db,keeps_rules, then the
    /// parameters in SI).
    #[arg(long, value_name = "FILE")]
    designs_csv: Option<PathBuf>,
    /// Plot the objective over the parameters (one: a curve; two or three:
    /// a map of the first two) with the optimum and the rules' bounds
    /// (.svg or .png).
    #[arg(long, value_name = "FILE")]
    designs_plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
}

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

pub fn run(args: TuneArgs) -> anyhow::Result<()> {
    let (csv, plot) = common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let json = common::json_path(args.json.as_deref())?;
    let designs_csv = ranges::csv_output("--designs-csv", args.designs_csv.as_deref())?;
    let designs_plot = args
        .designs_plot
        .as_deref()
        .map(|p| common::check_output("--designs-plot", p, &["svg", "png"]))
        .transpose()?;
    let db_ref = common::db_ref_option(args.db_ref.as_deref())?;
    let rules = rules(&args)?;
    let bounds = args
        .vary
        .iter()
        .map(|v| parse_vary(v))
        .collect::<anyhow::Result<Vec<_>>>()?;
    let speed_points = match args.speed_points {
        Some(n) if !(1..=1000).contains(&n) => {
            return Err(UsageError(format!(
                "--speed-points must be between 1 and 1000, found {n}"
            ))
            .into());
        }
        Some(n) => (n, Origin::Request),
        None => (41, Origin::Default),
    };
    if let Some(n) = args.samples
        && !(3..=100_000).contains(&n)
    {
        return Err(
            UsageError(format!("--samples must be between 3 and 100000, found {n}")).into(),
        );
    }
    let loaded = common::load_circuit(Some(&args.file))?;
    let smallest = args.objective == ObjectiveArg::Smallest;
    // The file with its envelope and limits: the envelope's `speed` is the
    // operating speed range unless --speed-range is given.
    let file = ripline::io::load_circuit_file(&args.file)?;
    let envelope_speeds = file.envelope.as_ref().and_then(|e| e.speed_range_rev_s);
    let envelope = if args.envelope {
        if file.envelope.is_none() {
            return Err(UsageError(format!(
                "--envelope: {} has no `envelope` section",
                args.file.display()
            ))
            .into());
        }
        file.circuits(&file.points())?
    } else {
        Vec::new()
    };
    let mut outputs = Outputs::plan(&[
        ("--csv", csv.as_deref()),
        ("--plot", plot.as_deref()),
        ("--designs-csv", designs_csv.as_deref()),
        ("--designs-plot", designs_plot.as_deref()),
        ("--json", json.as_deref()),
    ])?;
    let circuit = &loaded.circuit;
    let (fluid_states, notes) = fluid_states(&args)?;
    let pump_index = ranges::pump_index(circuit, args.pump.as_deref())?;
    let goal = if smallest {
        if file.limits.is_empty() {
            return Err(UsageError(format!(
                "--objective smallest: {} has no `limits` section to meet",
                args.file.display()
            ))
            .into());
        }
        Some(LimitGoal {
            limits: file.limits.clone(),
            shaft: Some(circuit.pumps[pump_index].name.clone()),
            size: match args.size {
                SizeArg::Volume => SizeMeasure::Volume,
                SizeArg::Length => SizeMeasure::Length,
            },
        })
    } else {
        None
    };
    let request = TuneRequest {
        element: ranges::element(circuit, &args.element)?,
        bounds,
        tap: ranges::point(circuit, args.tap.as_deref())?,
        pump_index,
        speed_rev_s: args
            .speed
            .as_deref()
            .map(|s| common::speed_option("--speed", s))
            .transpose()?,
        speed_range: args
            .speed_range
            .as_deref()
            .map(ranges::speed_range_option)
            .transpose()?,
        envelope_speed_range: envelope_speeds,
        speed_points,
        harmonics: common::harmonics_option(args.harmonics)?,
        objective: match args.objective {
            ObjectiveArg::Worst | ObjectiveArg::Smallest => Objective::Worst,
            ObjectiveArg::Rms => Objective::Rms,
        },
        samples: args.samples,
        db_ref_pa: db_ref,
        fluid_states,
        envelope,
        rules,
        goal,
        notes,
    };
    let progress = Progress::new(0, "searching");
    let result = tune(
        loaded.circuit,
        &loaded.source,
        &request,
        &mut |done, total| progress.set_of(done, total),
    )?;
    progress.finish();
    common::print_warnings(&result.warnings);

    outputs.csv_to(csv.as_deref(), |buf| render::csv(&result, buf))?;
    outputs.plot_to(plot.as_deref(), |tmp| {
        plot::line_chart(tmp, &render::chart(&result))
    })?;
    outputs.csv_to(designs_csv.as_deref(), |buf| {
        render::designs_csv(&result, buf)
    })?;
    outputs.plot_to(designs_plot.as_deref(), |tmp| {
        match render::designs_chart(&result) {
            render::DesignsChart::Line(c) => plot::line_chart(tmp, &c),
            render::DesignsChart::Map(m) => plot::heat_map(tmp, &m),
        }
    })?;
    outputs.finish(json.as_deref(), "tune", &result, render::text)?;
    match &result.smallest {
        Some(s) if !s.met => Err(common::LimitsExceeded(
            "no design within the bounds meets every limit (the nearest is reported)".into(),
        )
        .into()),
        _ => Ok(()),
    }
}

/// The practical rules from the options.
fn rules(args: &TuneArgs) -> anyhow::Result<Rules> {
    let band = &args.precharge_band;
    let fraction = |t: &str| -> anyhow::Result<f64> {
        match t.trim().parse::<f64>() {
            Ok(v) if v > 0.0 && v <= 1.0 => Ok(v),
            _ => Err(UsageError(format!(
                "--precharge-band {band}: write two fractions of the lowest operating pressure, 0 < LOW < HIGH ≤ 1, e.g. 0.6..0.9"
            ))
            .into()),
        }
    };
    let Some((lo, hi)) = band.split_once("..") else {
        return Err(UsageError(format!(
            "--precharge-band {band}: write LOW..HIGH, e.g. 0.6..0.9"
        ))
        .into());
    };
    let (lo, hi) = (fraction(lo)?, fraction(hi)?);
    if lo >= hi {
        return Err(UsageError(format!("--precharge-band {band}: LOW must be below HIGH")).into());
    }
    let quantity = |option: &str, text: &Option<String>, dim: Dimension, unit: &str| {
        text.as_deref()
            .map(|t| common::cli_quantity(option, t, dim, unit))
            .transpose()
    };
    let velocity = match &args.max_neck_velocity {
        None => 6.0,
        Some(t) => {
            let number = t.trim().strip_suffix("m/s").unwrap_or(t.trim()).trim();
            match number.parse::<f64>() {
                Ok(v) if v.is_finite() && v > 0.0 => v,
                _ => {
                    return Err(UsageError(format!(
                        "--max-neck-velocity {t}: write a positive velocity in m/s, e.g. 6"
                    ))
                    .into());
                }
            }
        }
    };
    let positive = |option: &str, v: Option<f64>| match v {
        Some(x) if !(x.is_finite() && x > 0.0) => {
            Err(UsageError(format!("{option} must be positive")))
        }
        _ => Ok(v),
    };
    Ok(Rules {
        precharge_fraction: (lo, hi),
        max_volume_m3: positive(
            "--max-volume",
            quantity("--max-volume", &args.max_volume, Dimension::Volume, "m3")?,
        )?,
        max_length_m: positive(
            "--max-length",
            quantity("--max-length", &args.max_length, Dimension::Length, "m")?,
        )?,
        max_neck_velocity_m_s: velocity,
        hard: args.hard_rules,
    })
}

/// The circuit at each temperature (K) of a range.
type FluidStates = Vec<(f64, ripline::Circuit)>;

/// The circuit at each temperature of `--temperatures` (none without it),
/// and a remark when explicit fluid values stay fixed.
fn fluid_states(args: &TuneArgs) -> anyhow::Result<(FluidStates, Vec<Notice>)> {
    let Some(range) = &args.temperatures else {
        return Ok((Vec::new(), Vec::new()));
    };
    if !(1..=20).contains(&args.temperature_points) {
        return Err(UsageError(format!(
            "--temperature-points must be between 1 and 20, found {}",
            args.temperature_points
        ))
        .into());
    }
    let (lo, hi) = ranges::parse_range("--temperatures", range, Dimension::Temperature, "K")?;
    let n = args.temperature_points;
    let temperatures: Vec<f64> = if n == 1 {
        vec![lo]
    } else {
        (0..n)
            .map(|i| lo + (hi - lo) * i as f64 / (n - 1) as f64)
            .collect()
    };
    let file = args.file.display().to_string();
    let text = ripline::io::read_text(Path::new(&args.file))?;
    let states = temperatures
        .iter()
        .map(|&t| ripline::io::parse_circuit_at_temperature(&text, &file, t).map(|c| (t, c)))
        .collect::<Result<Vec<_>, _>>()
        .with_context(|| format!("evaluating {file} at the temperatures of --temperatures"))?;
    let fixed = ripline::io::circuit_file::fixed_fluid_keys(&text, &file)?;
    let notes = if fixed.is_empty() {
        Vec::new()
    } else {
        vec![Notice {
            subject: file,
            message: format!(
                "fluid {} given explicitly, so {} not follow --temperatures",
                fixed.join(", "),
                if fixed.len() == 1 {
                    "it does"
                } else {
                    "they do"
                }
            ),
        }]
    };
    Ok((states, notes))
}

//! `ripline tune FILE --element NAME --vary PARAM=LOW..HIGH ...`: size a
//! silencer by searching 1 to 3 of its parameters for the least ripple at a
//! point over the operating speed range.

use super::common::{self, Outputs, UsageError};
use super::ranges::{self, Progress};
use anyhow::Context;
use clap::{Args, ValueEnum};
use ripline::analysis::tune::{Bound, Objective, Parameter};
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
    let db_ref = common::db_ref_option(args.db_ref.as_deref())?;
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
    let mut outputs = Outputs::plan(&[
        ("--csv", csv.as_deref()),
        ("--plot", plot.as_deref()),
        ("--json", json.as_deref()),
    ])?;
    let circuit = &loaded.circuit;
    let (fluid_states, notes) = fluid_states(&args)?;
    let request = TuneRequest {
        element: ranges::element(circuit, &args.element)?,
        bounds,
        tap: ranges::point(circuit, args.tap.as_deref())?,
        pump_index: ranges::pump_index(circuit, args.pump.as_deref())?,
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
        speed_points,
        harmonics: common::harmonics_option(args.harmonics)?,
        objective: match args.objective {
            ObjectiveArg::Worst => Objective::Worst,
            ObjectiveArg::Rms => Objective::Rms,
        },
        samples: args.samples,
        db_ref_pa: db_ref,
        fluid_states,
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
    outputs.finish(json.as_deref(), "tune", &result, render::text)
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

//! `ripline assess FILE`: the circuit over its operating envelope, each
//! limit's verdict and the findings ranked by severity. Exit code 3 when a
//! limit is exceeded.

use super::common::{self, LimitsExceeded, Outputs, UsageError};
use super::ranges::{self, Progress};
use clap::Args;
use ripline::plot;
use ripline::render::assess as render;
use ripline::results::Origin;
use ripline::results::assess::{AssessFile, AssessRequest, assess};
use std::path::PathBuf;

/// Most speeds of the grid.
const MAX_SPEEDS: usize = 10_001;

#[derive(Debug, Args)]
pub struct AssessArgs {
    /// Circuit file (YAML) with an `envelope` and `limits` (either optional).
    file: PathBuf,
    /// How many findings the report shows (the CSV has them all).
    #[arg(long, value_name = "N", default_value_t = 10)]
    top: usize,
    /// Leave out of the report findings this far below their measurement
    /// point's overall worst level, e.g. `20dB`.
    #[arg(long, value_name = "DB", default_value = "20dB")]
    floor: String,
    /// Speeds of the grid across the range (evenly spaced, ends included;
    /// default 201); the worst speeds are refined between them.
    #[arg(long, value_name = "N")]
    speeds: Option<usize>,
    /// Speed range LOW..HIGH, in rpm unless a unit is given; default: the
    /// envelope's `speed`, else the pump's `speed_range`.
    #[arg(long, value_name = "LOW..HIGH", alias = "speed")]
    speed_range: Option<String>,
    /// The shaft swept (a pump's name or a `shaft` name); default: the
    /// envelope's `shaft`, else the first pump's.
    #[arg(long, value_name = "NAME", alias = "shaft")]
    pump: Option<String>,
    /// Smallest rise, in dB, of a resonance crossing (default 3).
    #[arg(long, value_name = "DB", allow_negative_numbers = true)]
    min_rise: Option<f64>,
    /// Write every finding, ranked, as CSV.
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write the swept grid of every envelope point as CSV.
    #[arg(long, value_name = "FILE")]
    grid_csv: Option<PathBuf>,
    /// Plot each measurement point's ripple over the envelope against its
    /// limit (.svg or .png; FILE-<point> for each point when there are
    /// several).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md; the grid is in
    /// --grid-csv).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
}

pub fn run(args: AssessArgs) -> anyhow::Result<()> {
    let floor_db = common::parse_db("--floor", &args.floor)?;
    let speed_points = match args.speeds {
        Some(n) if !(3..=MAX_SPEEDS).contains(&n) => {
            return Err(UsageError(format!(
                "--speeds must be between 3 and {MAX_SPEEDS}, found {n}"
            ))
            .into());
        }
        Some(n) => (n, Origin::Request),
        None => (201, Origin::Default),
    };
    let min_rise = match args.min_rise {
        Some(v) if !(v.is_finite() && v >= 0.0) => {
            return Err(UsageError(format!(
                "--min-rise must be a number of dB, zero or more, found {v}"
            ))
            .into());
        }
        Some(v) => (v, Origin::Request),
        None => (3.0, Origin::Default),
    };
    let csv = ranges::csv_output("--csv", args.csv.as_deref())?;
    let grid = ranges::csv_output("--grid-csv", args.grid_csv.as_deref())?;
    let (_, plot_base) = common::csv_and_plot_paths(None, args.plot.as_deref())?;
    let json = common::json_path(args.json.as_deref())?;
    let file = ripline::io::load_circuit_file(&args.file)?;
    let taps: Vec<String> = ripline::analysis::ripple::report_points(&file.circuit)
        .into_iter()
        .map(|t| t.name)
        .collect();
    let plots: Vec<PathBuf> = plot_base
        .iter()
        .flat_map(|base| {
            taps.iter()
                .map(|t| render::plot_path(base, t, taps.len() > 1))
        })
        .collect();
    let mut targets = vec![
        ("--csv", csv.as_deref()),
        ("--grid-csv", grid.as_deref()),
        ("--json", json.as_deref()),
    ];
    targets.extend(plots.iter().map(|p| ("--plot", Some(p.as_path()))));
    let mut outputs = Outputs::plan(&targets)?;
    let envelope = file.envelope.as_ref();
    let speed_range = match &args.speed_range {
        Some(text) => Some((ranges::speed_range_option(text)?, Origin::Request)),
        None => envelope
            .and_then(|e| e.speed_range_rev_s)
            .map(|r| (r, Origin::File)),
    };
    let shaft = match &args.pump {
        Some(name) => Some((name.clone(), Origin::Request)),
        None => envelope
            .and_then(|e| e.shaft.clone())
            .map(|s| (s, Origin::File)),
    };
    if let Some((name, _)) = &shaft {
        common::pick_shaft(&file.circuit, Some(name))?;
    }
    // Every point's circuit first: a point that makes the circuit invalid
    // stops the command before any work.
    let points = file.circuits(&file.points())?;
    let request = AssessRequest {
        speed_range,
        shaft,
        speed_points,
        min_rise_db: min_rise,
        top: args.top,
        floor_db,
    };
    let bar = Progress::new(points.len(), "assessing the envelope");
    let result = assess(
        AssessFile::of(&file),
        &points,
        &request,
        &mut |done, total| bar.set_of(done, total),
    )?;
    bar.finish();
    super::envelope::print_grouped_warnings(
        &result.assessment.warnings,
        result.assessment.points.len(),
    );

    outputs.csv_to(csv.as_deref(), |buf| render::findings_csv(&result, buf))?;
    outputs.csv_to(grid.as_deref(), |buf| render::grid_csv(&result, buf))?;
    for (ti, path) in plots.iter().enumerate() {
        outputs.plot(path, |tmp| {
            plot::stacked_line_charts(tmp, &render::charts(&result, ti))
        })?;
    }
    outputs.finish(json.as_deref(), "assess", &result, render::text)?;
    if !result.passed() {
        let verdicts = &result.assessment.verdicts;
        let failed = verdicts.iter().filter(|v| !v.pass).count();
        return Err(LimitsExceeded(format!(
            "{failed} of {} limits exceeded (see the verdicts above)",
            verdicts.len()
        ))
        .into());
    }
    Ok(())
}

//! `ripline fit BENCH_FILE`: the pump's source flow ripple and source
//! impedance from bench records, with uncertainties and warnings.

use super::common::{self, Outputs, UsageError};
use super::ranges::StageBars;
use clap::Args;
use ripline::estimate::{FitOptions, Observer};
use ripline::io::source_file::{SourceFile, write_source_map};
use ripline::plot;
use ripline::render::fit as render;
use ripline::results::Origin;
use ripline::results::fit::fit;
use ripline::results::fit_check::self_check as run_self_check;
use std::path::{Path, PathBuf};

#[derive(Debug, Args)]
pub struct FitArgs {
    /// Bench file (YAML).
    file: PathBuf,
    /// Number of harmonics estimated (overrides the file; default 10).
    #[arg(long, value_name = "N")]
    harmonics: Option<u32>,
    /// Monte Carlo draws for the uncertainties (0: none).
    #[arg(long, value_name = "N", default_value_t = 200)]
    draws: usize,
    /// Seed of the Monte Carlo generator.
    #[arg(long, value_name = "N", default_value_t = 1)]
    seed: u64,
    /// Write the estimates as CSV (SI units, peak amplitudes).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write a pump source file that circuits read through `pump.source_file`.
    #[arg(long, value_name = "FILE")]
    source_out: Option<PathBuf>,
    /// With --source-out: add this fit's condition (speed, the bench fluid's
    /// mean pressure, oil and temperature) to the source file if it exists,
    /// making or extending a source map, and refuse a condition it already
    /// holds.
    #[arg(long, requires = "source_out")]
    add_condition: bool,
    /// Plot amplitude and phase of Qs and Zs against frequency (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
    /// Include ill-conditioned, extrapolated and unstable harmonics in the
    /// overall levels.
    #[arg(long)]
    include_flagged: bool,
    /// Instead of fitting the records: fit N sets of synthetic data made
    /// from the bench file's `synthesis` section at its noise (seeds from
    /// --seed on) and report per harmonic the bias, the spread over the
    /// reported uncertainty and the coverage (--csv and --json write that).
    #[arg(long, value_name = "N", conflicts_with_all = ["source_out", "plot", "add_condition"])]
    self_check: Option<usize>,
}

/// Most Monte Carlo draws: the relative standard error of a standard
/// deviation estimated from M normal draws is about 1/√(2(M−1)), 0.5 % at
/// this M, far below what the uncertainties are needed to; each draw costs
/// about a millisecond.
pub const MAX_DRAWS: usize = 20_000;

/// Most seeds × Monte Carlo draws a self-check may run (each draw is a
/// fit's worth of work: about a millisecond).
pub const MAX_SELF_CHECK_WORK: usize = 1_000_000;

pub fn run(args: FitArgs) -> anyhow::Result<()> {
    if args.draws > MAX_DRAWS {
        return Err(UsageError(format!(
            "--draws must be at most {MAX_DRAWS} (the uncertainties are then known to 0.5 %), found {}",
            args.draws
        ))
        .into());
    }
    let (csv, plot) = common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let source_path = args
        .source_out
        .as_deref()
        .map(|p| common::check_output("--source-out", p, &["yaml", "yml"]))
        .transpose()?;
    let json = common::json_path(args.json.as_deref())?;
    let mut bench = ripline::io::bench_file::load_bench(&args.file)?;
    let harmonics_origin = match args.harmonics {
        Some(n) if !(1..=50).contains(&n) => {
            return Err(
                UsageError(format!("--harmonics must be between 1 and 50, found {n}")).into(),
            );
        }
        Some(n) => {
            bench.harmonics = n;
            Origin::Request
        }
        None => Origin::File,
    };
    let options = FitOptions {
        draws: args.draws,
        seed: args.seed,
        include_flagged: args.include_flagged,
        stated_uncertainties: false,
    };
    let file = args.file.display().to_string();
    if let Some(seeds) = args.self_check {
        return self_check(&bench, &file, seeds, options, harmonics_origin, csv, json);
    }
    let records: Vec<&Path> = bench.conditions.iter().map(|c| c.data.path()).collect();
    let mut outputs = Outputs(common::plan_outputs(
        &records,
        &[
            ("--csv", csv.as_deref()),
            ("--source-out", source_path.as_deref()),
            ("--plot", plot.as_deref()),
            ("--json", json.as_deref()),
        ],
        false,
    )?);
    let mut progress = StageBars::default();
    let data = ripline::io::records::load_conditions(&bench, &mut progress)?;
    let result = fit(
        &bench,
        &data,
        &file,
        &options,
        harmonics_origin,
        &mut progress,
    );
    progress.finish();
    let result = result?;
    common::print_warnings(&result.warnings);

    outputs.csv_to(csv.as_deref(), |buf| render::csv(&result, buf))?;
    if let Some(path) = &source_path {
        let mut condition = result.pump_source();
        condition.test = ripline::io::bench_file::test_conditions(&args.file)?;
        let comment = format!(
            "estimated by ripline fit from {file} ({} method); uncertainties are standard uncertainties of the amplitudes{}",
            result.method,
            result
                .equivalent
                .as_ref()
                .map(|e| format!("\n{}", render::equivalent_text(e)))
                .unwrap_or_default()
        );
        let source = if args.add_condition && path.exists() {
            condition.test.origin = Some(format!("ripline fit {file}"));
            ripline::io::source_file::add_condition(path, condition)?
        } else {
            SourceFile::single(condition)
        };
        let comment = if source.conditions.len() > 1 {
            format!(
                "a source map of {} conditions, the last added by ripline fit from {file}",
                source.conditions.len()
            )
        } else {
            comment
        };
        if source.conditions.len() > 1
            && let Err(e) = source.map()
        {
            eprintln!(
                "note: {}: {} (circuits read the map once it is complete)",
                path.display(),
                e.message
            );
        }
        let mut bytes = Vec::new();
        write_source_map(&source, &mut bytes, &comment)?;
        outputs.bytes(path, &bytes)?;
    }
    outputs.plot_to(plot.as_deref(), |tmp| {
        plot::stacked_line_charts(tmp, &render::charts(&result))
    })?;
    outputs.finish(json.as_deref(), "fit", &result, render::text)
}

/// `fit --self-check N`: the bench's synthetic data over N seeds.
fn self_check(
    bench: &ripline::estimate::bench::Bench,
    file: &str,
    seeds: usize,
    options: FitOptions,
    harmonics_origin: Origin,
    csv: Option<PathBuf>,
    json: Option<PathBuf>,
) -> anyhow::Result<()> {
    use ripline::estimate::selfcheck::MAX_SEEDS;
    if !(1..=MAX_SEEDS).contains(&seeds) {
        return Err(UsageError(format!(
            "--self-check must be between 1 and {MAX_SEEDS} seeds, found {seeds}"
        ))
        .into());
    }
    let work = seeds * options.draws.max(1);
    if work > MAX_SELF_CHECK_WORK {
        return Err(UsageError(format!(
            "--self-check {seeds} with --draws {} is {work} fits' worth of Monte Carlo draws; at most {MAX_SELF_CHECK_WORK} (lower one of them)",
            options.draws
        ))
        .into());
    }
    let mut outputs = Outputs(common::plan_outputs(
        &[Path::new(file)],
        &[("--csv", csv.as_deref()), ("--json", json.as_deref())],
        false,
    )?);
    let mut progress = StageBars::default();
    let result = run_self_check(bench, file, seeds, options, harmonics_origin, &mut progress);
    progress.finish();
    let result = result?;
    outputs.csv_to(csv.as_deref(), |buf| {
        ripline::render::fit_check::csv(&result, buf)
    })?;
    outputs.finish(
        json.as_deref(),
        "fit --self-check",
        &result,
        ripline::render::fit_check::text,
    )
}

//! `ripline fit BENCH_FILE`: the pump's source flow ripple and source
//! impedance from bench records, with uncertainties and warnings.

use super::common::{self, Outputs, UsageError};
use clap::Args;
use indicatif::{ProgressBar, ProgressStyle};
use ripline::estimate::{FitOptions, Observer};
use ripline::io::source_file::write_source_file;
use ripline::plot;
use ripline::render::fit as render;
use ripline::results::Origin;
use ripline::results::fit::fit;
use std::io::IsTerminal;
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
    /// Plot amplitude and phase of Qs and Zs against frequency (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
}

/// Most Monte Carlo draws: the relative standard error of a standard
/// deviation estimated from M normal draws is about 1/√(2(M−1)), 0.5 % at
/// this M, far below what the uncertainties are needed to; each draw costs
/// about a millisecond.
pub const MAX_DRAWS: usize = 20_000;

/// A progress bar on standard error when it is a terminal; silent otherwise.
struct Progress(Option<ProgressBar>);

impl Observer for Progress {
    fn stage(&mut self, label: &str, total: u64) {
        if let Some(old) = self.0.take() {
            old.finish_and_clear();
        }
        if std::io::stderr().is_terminal() {
            let bar = ProgressBar::new(total);
            if let Ok(style) = ProgressStyle::with_template("{msg} [{bar:30}] {pos}/{len}") {
                bar.set_style(style.progress_chars("=> "));
            }
            bar.set_message(label.to_string());
            self.0 = Some(bar);
        }
    }
    fn advance(&mut self, steps: u64) {
        if let Some(b) = &self.0 {
            b.inc(steps);
        }
    }
    fn finish(&mut self) {
        if let Some(b) = self.0.take() {
            b.finish_and_clear();
        }
    }
}

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
    let mut progress = Progress(None);
    let mut data = Vec::with_capacity(bench.conditions.len());
    for cond in &bench.conditions {
        data.push(ripline::io::records::load_condition(
            &bench,
            cond,
            &mut progress,
        )?);
    }
    let options = FitOptions {
        draws: args.draws,
        seed: args.seed,
    };
    let file = args.file.display().to_string();
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
        let mut bytes = Vec::new();
        write_source_file(
            &result.pump_source(),
            &mut bytes,
            &format!(
                "estimated by ripline fit from {file} ({} method); uncertainties are standard uncertainties of the amplitudes",
                result.method
            ),
        )?;
        outputs.bytes(path, &bytes)?;
    }
    outputs.plot_to(plot.as_deref(), |tmp| {
        plot::stacked_line_charts(tmp, &render::charts(&result))
    })?;
    outputs.finish(json.as_deref(), "fit", &result, render::text)
}

//! `ripline response FILE`: frequency response, resonances, and which pump
//! harmonics cross them over the operating speed range.

use super::common::{self, Outputs};
use super::ranges::{self, Progress};
use clap::Args;
use ripline::plot;
use ripline::render::response as render;
use ripline::results::Origin;
use ripline::results::response::{ResponseRequest, response};
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct ResponseArgs {
    #[command(flatten)]
    sweep: ranges::SweepArgs,
    /// Circuit file (YAML); the built-in demo circuit when omitted.
    file: Option<PathBuf>,
    /// How close to a harmonic band a resonance counts as "near" (default 10%).
    #[arg(long, value_name = "PERCENT")]
    margin: Option<String>,
    /// Write the response as CSV (point,frequency_hz,amplitude_pa_per_m3s,phase_deg).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Plot the response with the harmonic bands and resonances (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
}

pub fn run(args: ResponseArgs) -> anyhow::Result<()> {
    let (csv, plot) = common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let json = common::json_path(args.json.as_deref())?;
    let margin = match &args.margin {
        Some(text) => (ranges::parse_fraction("--margin", text)?, Origin::Request),
        None => (0.1, Origin::Default),
    };
    let loaded = common::load_circuit(args.file.as_deref())?;
    let mut outputs = Outputs::plan(&[
        ("--csv", csv.as_deref()),
        ("--plot", plot.as_deref()),
        ("--json", json.as_deref()),
    ])?;
    let sweep = args.sweep.resolve(&loaded.circuit)?;
    let request = ResponseRequest { sweep, margin };
    let progress = Progress::new(0, "frequency response");
    let result = response(
        loaded.circuit,
        &loaded.source,
        &request,
        &mut |done, total| progress.set_of(done, total),
    )?;
    progress.finish();
    common::print_warnings(&result.warnings);

    outputs.csv_to(csv.as_deref(), |buf| render::csv(&result, buf))?;
    outputs.plot_to(plot.as_deref(), |tmp| {
        plot::stacked_line_charts(tmp, &render::charts(&result))
    })?;
    outputs.finish(json.as_deref(), "response", &result, render::text)
}

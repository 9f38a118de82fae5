//! `ripline check FILE`: validate a circuit and report what it holds.

use super::common::{self, Outputs};
use clap::Args;
use ripline::plot;
use ripline::render::check as render;
use ripline::results::check::{CheckRequest, check};
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Circuit file (YAML); the built-in demo circuit when omitted.
    file: Option<PathBuf>,
    /// Number of harmonics of each pump's source flow ripple listed (overrides the file).
    #[arg(long, value_name = "N")]
    harmonics: Option<u32>,
    /// Shaft speed, in rpm unless a unit is given (overrides the file).
    #[arg(long, value_name = "RPM")]
    speed: Option<String>,
    /// The pump (or shaft) whose speed `--speed` sets; default: the first pump's.
    #[arg(long, value_name = "NAME", requires = "speed", alias = "shaft")]
    pump: Option<String>,
    /// Write each pump's source flow ripple as CSV
    /// (pump,harmonic,frequency_hz,flow_amplitude_m3s,flow_phase_deg).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write a bar chart of each pump's source flow ripple (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
}

pub fn run(args: CheckArgs) -> anyhow::Result<()> {
    let (csv, plot) = common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let json = common::json_path(args.json.as_deref())?;
    let harmonics = common::harmonics_option(args.harmonics)?;
    let loaded = common::load_circuit(args.file.as_deref())?;
    let mut outputs = Outputs::plan(&[
        ("--csv", csv.as_deref()),
        ("--plot", plot.as_deref()),
        ("--json", json.as_deref()),
    ])?;
    let speed = match &args.speed {
        Some(text) => Some((
            common::pick_shaft(&loaded.circuit, args.pump.as_deref())?,
            common::speed_option("--speed", text)?,
        )),
        None => None,
    };
    let request = CheckRequest { harmonics, speed };
    let result = check(loaded.circuit, &loaded.source, &request)?;
    common::print_warnings(&result.warnings);

    outputs.csv_to(csv.as_deref(), |buf| render::csv(&result, buf))?;
    outputs.plot_to(plot.as_deref(), |tmp| {
        plot::grouped_bar_chart(tmp, &render::chart(&result))
    })?;
    outputs.finish(json.as_deref(), "check", &result, render::text)
}

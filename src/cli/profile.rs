//! `ripline profile [FILE]`: the ripple amplitude along every tube and hose
//! for one pump harmonic (the standing-wave pattern).

use super::common::{self, Outputs, UsageError};
use super::ranges;
use clap::Args;
use ripline::plot;
use ripline::render::profile as render;
use ripline::results::profile::{ProfileRequest, profile};
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct ProfileArgs {
    /// Circuit file (YAML); the built-in demo circuit when omitted.
    file: Option<PathBuf>,
    /// Harmonic of the pump's pumping frequency to show (1 = the pumping frequency).
    #[arg(long, value_name = "K", default_value_t = 1)]
    harmonic: u32,
    /// The pump whose harmonic is shown (or a shaft: its first pump); the
    /// other pumps on its shaft add what they have at that frequency.
    /// Default: the first pump.
    #[arg(long, value_name = "NAME")]
    pump: Option<String>,
    /// Shaft speed, in rpm unless a unit is given (overrides the file).
    #[arg(long, value_name = "RPM")]
    speed: Option<String>,
    /// Write the profile as CSV (element,position_m,frequency_hz,amplitude_pa,phase_deg).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write a chart of the amplitude along the lines (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
}

pub fn run(args: ProfileArgs) -> anyhow::Result<()> {
    let (csv, plot) = common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let json = common::json_path(args.json.as_deref())?;
    if !(1..=200).contains(&args.harmonic) {
        return Err(UsageError(format!(
            "--harmonic must be between 1 and 200, found {}",
            args.harmonic
        ))
        .into());
    }
    let speed_rev_s = args
        .speed
        .as_deref()
        .map(|s| common::speed_option("--speed", s))
        .transpose()?;
    let loaded = common::load_circuit(args.file.as_deref())?;
    let mut outputs = Outputs::plan(&[
        ("--csv", csv.as_deref()),
        ("--plot", plot.as_deref()),
        ("--json", json.as_deref()),
    ])?;
    let request = ProfileRequest {
        pump_index: ranges::pump_index(&loaded.circuit, args.pump.as_deref())?,
        harmonic: args.harmonic,
        speed_rev_s,
    };
    let result = profile(loaded.circuit, &loaded.source, &request)?;
    common::print_warnings(&result.warnings);

    outputs.csv_to(csv.as_deref(), |buf| render::csv(&result, buf))?;
    outputs.plot_to(plot.as_deref(), |tmp| {
        plot::line_chart(tmp, &render::chart(&result))
    })?;
    outputs.finish(json.as_deref(), "profile", &result, render::text)
}

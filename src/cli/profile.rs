//! `ripline profile [FILE]`: the ripple amplitude along every tube and hose
//! for one pump harmonic (the standing-wave pattern).

use super::common::{self, Outputs, UsageError};
use super::envelope::{self, PointArgs};
use super::ranges;
use clap::Args;
use ripline::plot;
use ripline::render::profile as render;
use ripline::results::profile::{ProfileRequest, profile};
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct ProfileArgs {
    /// Circuit file (YAML); the built-in demo circuit when omitted. With
    /// an `envelope`, every point of it (or those the options select).
    file: Option<PathBuf>,
    #[command(flatten)]
    at: PointArgs,
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
    let mut at = args.at.load(args.file.as_deref(), false)?;
    let plots = envelope::point_paths(plot.as_deref(), &at);
    let mut targets = vec![("--csv", csv.as_deref()), ("--json", json.as_deref())];
    targets.extend(plots.iter().map(|p| ("--plot", Some(p.as_path()))));
    let mut outputs = Outputs::plan(&targets)?;
    let results = at.run(|circuit, source| {
        let request = ProfileRequest {
            pump_index: ranges::pump_index(&circuit, args.pump.as_deref())?,
            harmonic: args.harmonic,
            speed_rev_s,
        };
        Ok(profile(circuit, source, &request)?)
    })?;
    envelope::print_warnings(&results, |r| &r.warnings);

    // the envelope columns follow `element,position_m`
    envelope::csv_over(
        &mut outputs,
        csv.as_deref(),
        &at.own,
        &results,
        2,
        |r| Some(r.speed_rev_s),
        |r, buf| render::csv(r, buf),
    )?;
    envelope::plot_over(&mut outputs, &plots, &results, |r, tmp| {
        plot::line_chart(tmp, &render::chart(r))
    })?;
    envelope::finish_over(
        outputs,
        json.as_deref(),
        "profile",
        &args.at,
        &results,
        render::text,
    )
}

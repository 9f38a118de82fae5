//! `ripline response FILE`: frequency response, resonances, and which pump
//! harmonics cross them over the operating speed range.

use super::bands::{self, BandArgs};
use super::common::{self, Outputs};
use super::envelope::{self, PointArgs};
use super::ranges::{self, Progress};
use clap::Args;
use ripline::plot;
use ripline::render::response as render;
use ripline::results::Origin;
use ripline::results::bands::response_bands;
use ripline::results::response::{ResponseRequest, response};
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct ResponseArgs {
    #[command(flatten)]
    sweep: ranges::SweepArgs,
    /// Circuit file (YAML); the built-in demo circuit when omitted. With
    /// an `envelope`, every point of it (or those the options select).
    file: Option<PathBuf>,
    #[command(flatten)]
    at: PointArgs,
    /// How close to a harmonic band a resonance counts as "near" (default 10%).
    #[arg(long, value_name = "PERCENT")]
    margin: Option<String>,
    /// Leave out of the report crossings whose ripple is this far below the
    /// highest crossing's (default 20dB; every verdict is in the JSON).
    #[arg(long, value_name = "DB")]
    floor: Option<String>,
    /// Write the response as CSV (point,frequency_hz,amplitude_pa_per_m3s,phase_deg).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Plot the response with the harmonic bands and resonances (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
    #[command(flatten)]
    bands: BandArgs,
}

pub fn run(args: ResponseArgs) -> anyhow::Result<()> {
    let (csv, plot) = common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let json = common::json_path(args.json.as_deref())?;
    let margin = match &args.margin {
        Some(text) => (ranges::parse_fraction("--margin", text)?, Origin::Request),
        None => (0.1, Origin::Default),
    };
    let ranking = common::ranking_options(args.at.top, args.floor.as_deref())?;
    let band_request = args.bands.request()?;
    let mut at = args.at.load(args.file.as_deref(), false)?;
    let template = band_request
        .is_some()
        .then(|| common::load_template(args.file.as_deref()))
        .transpose()?;
    let plots = envelope::point_paths(plot.as_deref(), &at);
    let mut targets = vec![("--csv", csv.as_deref()), ("--json", json.as_deref())];
    targets.extend(plots.iter().map(|p| ("--plot", Some(p.as_path()))));
    let mut outputs = Outputs::plan(&targets)?;
    let progress = Progress::new(0, "frequency response");
    let mut requests = Vec::new();
    let envelope_speeds = at.speed_range_rev_s;
    let mut results = at.run(|circuit, source| {
        let sweep = args.sweep.resolve(&circuit, envelope_speeds)?;
        let request = ResponseRequest {
            sweep,
            margin,
            ranking,
        };
        let result = response(circuit, source, &request, &mut |done, total| {
            progress.set_of(done, total)
        })?;
        requests.push(request);
        Ok(result)
    })?;
    progress.finish();
    bands::over_points(
        &mut results,
        &requests,
        band_request.as_ref(),
        template.as_ref(),
        response_bands,
        |r, b| r.uncertainty_bands = Some(b),
    )?;
    envelope::print_warnings(&results, |r| &r.warnings);

    // the envelope columns follow `point`
    envelope::csv_over(
        &mut outputs,
        csv.as_deref(),
        &at.own,
        &results,
        1,
        |r| Some(r.pump.speed_rev_s),
        |r, buf| render::csv(r, buf),
    )?;
    envelope::plot_over(&mut outputs, &plots, &results, |r, tmp| {
        plot::stacked_line_charts(tmp, &render::charts(r))
    })?;
    envelope::finish_over(
        outputs,
        json.as_deref(),
        "response",
        &args.at,
        &results,
        render::text,
    )
}

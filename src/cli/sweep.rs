//! `ripline sweep [FILE] --speed-range LOW..HIGH --speed-step STEP`: the
//! ripple of a shaft's pumps over a speed range, and every resonance
//! crossing.

use super::bands::{self, BandArgs};
use super::common::{self, Outputs, UsageError};
use super::envelope::{self, PointArgs};
use super::ranges::{self, Progress};
use clap::Args;
use ripline::plot;
use ripline::render::sweep as render;
use ripline::results::Origin;
use ripline::results::bands::sweep_bands;
use ripline::results::sweep::{SweepRequest, sweep};
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct SweepArgs {
    /// Circuit file (YAML); the built-in demo circuit when omitted. With
    /// an `envelope`, every point of it (or those the options select).
    file: Option<PathBuf>,
    #[command(flatten)]
    at: PointArgs,
    /// Speed range LOW..HIGH, in rpm unless a unit is given (e.g.
    /// "600..3000"); default: the envelope's `speed`, else the shaft's
    /// `speed_range`.
    #[arg(long, value_name = "LOW..HIGH", alias = "speed")]
    speed_range: Option<String>,
    /// Speed step, in rpm unless a unit is given; default: the range / 200.
    #[arg(long, value_name = "STEP", alias = "step")]
    speed_step: Option<String>,
    /// The shaft to sweep (a pump's name, or a `shaft` name); default: the
    /// envelope's `shaft`, else the first pump's. Pumps on other shafts keep their own speed.
    #[arg(long, value_name = "NAME", alias = "shaft")]
    pump: Option<String>,
    /// Number of harmonics of each pump's pumping frequency (overrides the file).
    #[arg(long, value_name = "N")]
    harmonics: Option<u32>,
    /// Smallest rise, in dB above the level away from the resonance, for a
    /// peak to count as a resonance crossing (default 3).
    #[arg(long, value_name = "DB", allow_negative_numbers = true)]
    min_rise: Option<f64>,
    /// Reference pressure for levels in dB (rms), e.g. "1 bar" (default 1 Pa).
    #[arg(long, value_name = "PRESSURE")]
    db_ref: Option<String>,
    /// The measurement point shown on the map; default: the one with the
    /// highest level.
    #[arg(long, value_name = "NAME", alias = "point")]
    tap: Option<String>,
    /// Leave out of the report crossings this far below their measurement
    /// point's worst overall level (default 20dB; all are in the JSON).
    #[arg(long, value_name = "DB")]
    floor: Option<String>,
    /// Write the full grid as CSV (speed_rpm,point,harmonic,frequency_hz,amplitude_pa).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write the speed–frequency map to FILE and the overall level against
    /// speed to FILE-levels (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md; the full grid is in the CSV).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
    #[command(flatten)]
    bands: BandArgs,
}

pub fn run(args: SweepArgs) -> anyhow::Result<()> {
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
    let db_ref = common::db_ref_option(args.db_ref.as_deref())?;
    let ranking = common::ranking_options(args.at.top, args.floor.as_deref())?;
    let (csv, plot) = common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let json = common::json_path(args.json.as_deref())?;
    let harmonics = common::harmonics_option(args.harmonics)?;
    let band_request = args.bands.request()?;
    let mut at = args.at.load(args.file.as_deref(), false)?;
    let template = band_request
        .is_some()
        .then(|| common::load_template(args.file.as_deref()))
        .transpose()?;
    let maps = envelope::point_paths(plot.as_deref(), &at);
    let levels: Vec<PathBuf> = maps.iter().map(|p| render::levels_path(p)).collect();
    let mut targets = vec![("--csv", csv.as_deref()), ("--json", json.as_deref())];
    targets.extend(maps.iter().map(|p| ("--plot", Some(p.as_path()))));
    targets.extend(
        levels
            .iter()
            .map(|p| ("--plot (its levels chart)", Some(p.as_path()))),
    );
    let mut outputs = Outputs::plan(&targets)?;
    let speed_range = match args.speed_range.as_deref() {
        Some(text) => Some((ranges::speed_range_option(text)?, Origin::Request)),
        None => at.speed_range_rev_s.map(|r| (r, Origin::File)),
    };
    let step_rev_s = args
        .speed_step
        .as_deref()
        .map(|s| common::speed_option("--speed-step", s))
        .transpose()?;
    let shaft = args.pump.clone().or_else(|| at.shaft.clone());
    let bar = Progress::new(0, "sweeping speeds");
    let mut requests = Vec::new();
    let mut results = at.run(|circuit, source| {
        let request = SweepRequest {
            shaft: common::pick_shaft(&circuit, shaft.as_deref())?,
            speed_range,
            step_rev_s,
            harmonics,
            min_rise_db: min_rise,
            db_ref_pa: db_ref,
            map_point: args.tap.clone(),
            ranking,
        };
        let result = sweep(circuit, source, &request, &mut |done, total| {
            bar.set_of(done, total)
        })?;
        requests.push(request);
        Ok(result)
    })?;
    bar.finish();
    bands::over_points(
        &mut results,
        &requests,
        band_request.as_ref(),
        template.as_ref(),
        sweep_bands,
        |r, b| r.bands = Some(b),
    )?;
    envelope::print_warnings(&results, |r| &r.warnings);

    // the envelope columns follow `point,harmonic`; the grid's own speed
    // column moves into them
    envelope::csv_over(
        &mut outputs,
        csv.as_deref(),
        &at.own,
        &results,
        2,
        |_| None,
        |r, buf| render::csv(r, buf),
    )?;
    for (((p, r), path), levels) in results.iter().zip(&maps).zip(&levels) {
        if !render::map_has_ripple(r) {
            let at_point = if *p == Default::default() {
                String::new()
            } else {
                format!(" at envelope point `{}`", p.label())
            };
            return Err(UsageError(format!(
                "--plot: the swept pumps make no ripple at `{}` at any speed{at_point} (are their harmonics in the table?), so there is nothing to draw",
                r.points[r.map_point]
            ))
            .into());
        }
        outputs.plot(path, |tmp| plot::heat_map(tmp, &render::map(r)))?;
        outputs.plot(levels, |tmp| plot::line_chart(tmp, &render::level_chart(r)))?;
    }
    envelope::finish_over(
        outputs,
        json.as_deref(),
        "sweep",
        &args.at,
        &results,
        render::text,
    )
}

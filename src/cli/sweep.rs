//! `ripline sweep [FILE] --speed-range LOW..HIGH --speed-step STEP`: the
//! ripple of a shaft's pumps over a speed range, and every resonance
//! crossing.

use super::common::{self, Outputs, UsageError};
use super::ranges::{self, Progress};
use clap::Args;
use ripline::plot;
use ripline::render::sweep as render;
use ripline::results::Origin;
use ripline::results::sweep::{SweepRequest, sweep};
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct SweepArgs {
    /// Circuit file (YAML); the built-in demo circuit when omitted.
    file: Option<PathBuf>,
    /// Speed range LOW..HIGH, in rpm unless a unit is given (e.g.
    /// "600..3000"); default: the shaft's `speed_range`.
    #[arg(long, value_name = "LOW..HIGH", alias = "speed")]
    speed_range: Option<String>,
    /// Speed step, in rpm unless a unit is given; default: the range / 200.
    #[arg(long, value_name = "STEP", alias = "step")]
    speed_step: Option<String>,
    /// The shaft to sweep (a pump's name, or a `shaft` name); default: the
    /// first pump's. Pumps on other shafts keep their own speed.
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
    let (csv, plot) = common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let json = common::json_path(args.json.as_deref())?;
    let levels = plot.as_deref().map(render::levels_path);
    let harmonics = common::harmonics_option(args.harmonics)?;
    let loaded = common::load_circuit(args.file.as_deref())?;
    let mut outputs = Outputs::plan(&[
        ("--csv", csv.as_deref()),
        ("--plot", plot.as_deref()),
        ("--plot (its levels chart)", levels.as_deref()),
        ("--json", json.as_deref()),
    ])?;
    let request = SweepRequest {
        shaft: common::pick_shaft(&loaded.circuit, args.pump.as_deref())?,
        speed_range: args
            .speed_range
            .as_deref()
            .map(ranges::speed_range_option)
            .transpose()?,
        step_rev_s: args
            .speed_step
            .as_deref()
            .map(|s| common::speed_option("--speed-step", s))
            .transpose()?,
        harmonics,
        min_rise_db: min_rise,
        db_ref_pa: db_ref,
        map_point: args.tap.clone(),
    };
    let bar = Progress::new(0, "sweeping speeds");
    let result = sweep(
        loaded.circuit,
        &loaded.source,
        &request,
        &mut |done, total| bar.set_of(done, total),
    )?;
    bar.finish();
    common::print_warnings(&result.warnings);

    outputs.csv_to(csv.as_deref(), |buf| render::csv(&result, buf))?;
    if let (Some(path), Some(levels)) = (&plot, &levels) {
        if !render::map_has_ripple(&result) {
            return Err(UsageError(format!(
                "--plot: the swept pumps make no ripple at `{}` at any speed (are their harmonics in the table?), so there is nothing to draw",
                result.points[result.map_point]
            ))
            .into());
        }
        outputs.plot(path, |tmp| plot::heat_map(tmp, &render::map(&result)))?;
        outputs.plot(levels, |tmp| {
            plot::line_chart(tmp, &render::level_chart(&result))
        })?;
    }
    outputs.finish(json.as_deref(), "sweep", &result, render::text)
}

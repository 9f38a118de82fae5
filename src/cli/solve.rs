//! `ripline solve [FILE]`: the pressure ripple at every measurement point.

use super::common::{self, Outputs, check_output};
use clap::Args;
use ripline::plot;
use ripline::render::solve as render;
use ripline::results::solve::{SolveRequest, solve};
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct SolveArgs {
    /// Circuit file (YAML); the built-in demo circuit when omitted.
    file: Option<PathBuf>,
    /// Number of harmonics of each pump's pumping frequency (overrides the file).
    #[arg(long, value_name = "N")]
    harmonics: Option<u32>,
    /// Shaft speed, in rpm unless a unit is given (overrides the file; a
    /// harmonic table is scaled in proportion to speed).
    #[arg(long, value_name = "RPM")]
    speed: Option<String>,
    /// The pump (or shaft) whose speed `--speed` sets; default: the first pump's.
    #[arg(long, value_name = "NAME", requires = "speed", alias = "shaft")]
    pump: Option<String>,
    /// Reference pressure for levels in dB (rms), e.g. "1 bar" (default 1 Pa).
    #[arg(long, value_name = "PRESSURE")]
    db_ref: Option<String>,
    /// Write the harmonic table as CSV (point,harmonic,frequency_hz,amplitude_pa,phase_deg;
    /// with pumps on several shafts, a leading `source` column).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write a bar chart of the harmonic amplitudes (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
    /// Write each point's time waveform over two shaft revolutions: a table
    /// (.csv: point,shaft_angle_deg,time_s,pressure_pa) or a chart with the
    /// peak-to-peak marked (.svg or .png); may be given twice.
    #[arg(long, value_name = "FILE")]
    waveform: Vec<PathBuf>,
}

pub fn run(args: SolveArgs) -> anyhow::Result<()> {
    let (db_ref_pa, db_ref_origin) = common::db_ref_option(args.db_ref.as_deref())?;
    let (csv, plot) = common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let json = common::json_path(args.json.as_deref())?;
    let waveforms = args
        .waveform
        .iter()
        .map(|p| check_output("--waveform", p, &["csv", "svg", "png"]))
        .collect::<anyhow::Result<Vec<_>>>()?;
    let harmonics = common::harmonics_option(args.harmonics)?;
    let loaded = common::load_circuit(args.file.as_deref())?;
    let mut targets = vec![
        ("--csv", csv.as_deref()),
        ("--plot", plot.as_deref()),
        ("--json", json.as_deref()),
    ];
    targets.extend(waveforms.iter().map(|p| ("--waveform", Some(p.as_path()))));
    let mut outputs = Outputs::plan(&targets)?;
    let speed = match &args.speed {
        Some(text) => {
            let rev_s = common::speed_option("--speed", text)?;
            Some((
                common::pick_shaft(&loaded.circuit, args.pump.as_deref())?,
                rev_s,
            ))
        }
        None => None,
    };
    let request = SolveRequest {
        harmonics,
        speed,
        db_ref_pa: (db_ref_pa, db_ref_origin),
        waveform: !waveforms.is_empty(),
    };
    let result = solve(loaded.circuit, &loaded.source, &request)?;
    common::print_warnings(&result.warnings);

    // Every output is prepared before anything is shown or renamed into place.
    outputs.csv_to(csv.as_deref(), |buf| render::csv(&result, buf))?;
    outputs.plot_to(plot.as_deref(), |tmp| {
        plot::grouped_bar_chart(tmp, &render::chart(&result))
    })?;
    for path in &waveforms {
        if path
            .extension()
            .is_some_and(|e| e.eq_ignore_ascii_case("csv"))
        {
            outputs.csv(path, |buf| render::waveform_csv(&result, buf))?;
        } else {
            let charts = render::waveform_charts(&result);
            outputs.plot(path, |tmp| plot::stacked_line_charts(tmp, &charts))?;
        }
    }
    outputs.finish(json.as_deref(), "solve", &result, render::text)
}

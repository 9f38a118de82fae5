//! `ripline solve [FILE]`: the pressure ripple at every measurement point.

use super::bands::{self, BandArgs};
use super::common::{self, Outputs, check_output};
use super::envelope::{self, PointArgs};
use clap::Args;
use ripline::plot;
use ripline::render::solve as render;
use ripline::results::bands::ripple_bands;
use ripline::results::solve::{SolveRequest, SolveResult, solve};
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct SolveArgs {
    /// Circuit file (YAML); the built-in demo circuit when omitted. With
    /// an `envelope`, every point of it (or those the options select).
    file: Option<PathBuf>,
    #[command(flatten)]
    at: PointArgs,
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
    #[command(flatten)]
    bands: BandArgs,
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
    let band_request = args.bands.request()?;
    let mut at = args.at.load(args.file.as_deref(), false)?;
    let template = band_request
        .is_some()
        .then(|| common::load_template(args.file.as_deref()))
        .transpose()?;
    let plots = envelope::point_paths(plot.as_deref(), &at);
    // a waveform table holds every point; a chart is drawn per point
    let (waveform_tables, waveform_charts): (Vec<PathBuf>, Vec<PathBuf>) = waveforms
        .iter()
        .cloned()
        .partition(|p| p.extension().is_some_and(|e| e.eq_ignore_ascii_case("csv")));
    let waveform_charts: Vec<Vec<PathBuf>> = waveform_charts
        .iter()
        .map(|p| envelope::point_paths(Some(p), &at))
        .collect();
    let mut targets = vec![("--csv", csv.as_deref()), ("--json", json.as_deref())];
    targets.extend(plots.iter().map(|p| ("--plot", Some(p.as_path()))));
    targets.extend(
        waveform_tables
            .iter()
            .chain(waveform_charts.iter().flatten())
            .map(|p| ("--waveform", Some(p.as_path()))),
    );
    let mut outputs = Outputs::plan(&targets)?;
    let mut requests = Vec::new();
    let mut results = at.run(|circuit, source| {
        let speed = match &args.speed {
            Some(text) => {
                let rev_s = common::speed_option("--speed", text)?;
                Some((common::pick_shaft(&circuit, args.pump.as_deref())?, rev_s))
            }
            None => None,
        };
        let request = SolveRequest {
            harmonics,
            speed,
            db_ref_pa: (db_ref_pa, db_ref_origin),
            waveform: !waveforms.is_empty(),
        };
        let result = solve(circuit, source, &request)?;
        requests.push(request);
        Ok(result)
    })?;
    bands::over_points(
        &mut results,
        &requests,
        band_request.as_ref(),
        template.as_ref(),
        ripple_bands,
        |r, b| r.bands = Some(b),
    )?;
    envelope::print_warnings(&results, |r| &r.warnings);

    // Every output is prepared before anything is shown or renamed into place.
    // The envelope columns follow `point,harmonic` (and a leading `source`).
    let leading = |r: &SolveResult| if r.several_sources() { 3 } else { 2 };
    let speed = |r: &SolveResult| (!r.several_sources()).then(|| r.sources[0].speed_rev_s);
    envelope::csv_over(
        &mut outputs,
        csv.as_deref(),
        &at.own,
        &results,
        leading(&results[0].1),
        speed,
        |r, buf| render::csv(r, buf),
    )?;
    envelope::plot_over(&mut outputs, &plots, &results, |r, tmp| {
        plot::grouped_bar_chart(tmp, &render::chart(r))
    })?;
    for path in &waveform_tables {
        envelope::csv_over(
            &mut outputs,
            Some(path),
            &at.own,
            &results,
            leading(&results[0].1) - 1,
            speed,
            |r, buf| render::waveform_csv(r, buf),
        )?;
    }
    for paths in &waveform_charts {
        for ((_, r), path) in results.iter().zip(paths) {
            let charts = render::waveform_charts(r);
            outputs.plot(path, |tmp| plot::stacked_line_charts(tmp, &charts))?;
        }
    }
    envelope::finish_over(
        outputs,
        json.as_deref(),
        "solve",
        &args.at,
        &results,
        render::text,
    )
}

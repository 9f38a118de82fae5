//! `ripline silencer FILE --element NAME [--element NAME...]`: transmission
//! loss of a silencer (an element or a chain of elements) between anechoic
//! pipes, and its insertion loss at a point of the circuit, per pump
//! harmonic and versus frequency.

use super::common::{self, Outputs, UsageError};
use super::envelope::{self, PointArgs};
use super::ranges::{self, Progress};
use clap::{Args, ValueEnum};
use ripline::analysis::silencer::WithoutReference;
use ripline::plot;
use ripline::render::silencer as render;
use ripline::results::silencer::{SilencerRequest, SilencerResult, silencer};
use std::path::PathBuf;

/// What replaces a two-port silencer for the insertion loss.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
enum Without {
    /// A pipe of the same length with the upstream pipe's bore and wall.
    Pipe,
    /// A zero-length connection (the silencer's end nodes merged).
    ZeroLength,
}

#[derive(Debug, Args)]
pub struct SilencerArgs {
    #[command(flatten)]
    sweep: ranges::SweepArgs,
    /// Circuit file (YAML). With an `envelope`, every point of it (or
    /// those the options select).
    file: PathBuf,
    #[command(flatten)]
    at: PointArgs,
    /// The silencer element; repeat to analyse a chain, listed in order
    /// along the line (two-ports end to end, shunts at the node reached).
    #[arg(long, value_name = "NAME", required = true)]
    element: Vec<String>,
    /// The measurement point for the insertion loss (a tap, or a node when
    /// the circuit has no taps); needed when there is more than one.
    #[arg(long, value_name = "NAME")]
    tap: Option<String>,
    /// What replaces a two-port silencer in the circuit "without" it (shunts
    /// are simply removed).
    #[arg(long, value_enum, default_value = "pipe")]
    without: Without,
    /// The tube or hose whose characteristic impedance is the reference on
    /// both sides for the transmission loss (default: the lines met at each
    /// end).
    #[arg(long, value_name = "LINE")]
    reference: Option<String>,
    /// Write TL and IL versus frequency as CSV
    /// (frequency_hz,transmission_loss_db,insertion_loss_db).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write TL and IL per pump harmonic as CSV.
    #[arg(long, value_name = "FILE")]
    harmonic_csv: Option<PathBuf>,
    /// Plot TL and IL versus frequency with the harmonic bands (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
}

pub fn run(args: SilencerArgs) -> anyhow::Result<()> {
    let (csv, plot) = common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let harmonic_csv = ranges::csv_output("--harmonic-csv", args.harmonic_csv.as_deref())?;
    let json = common::json_path(args.json.as_deref())?;
    let mut at = args.at.load(Some(&args.file), false)?;
    let plots = envelope::point_paths(plot.as_deref(), &at);
    let mut targets = vec![
        ("--csv", csv.as_deref()),
        ("--harmonic-csv", harmonic_csv.as_deref()),
        ("--json", json.as_deref()),
    ];
    targets.extend(plots.iter().map(|p| ("--plot", Some(p.as_path()))));
    let mut outputs = Outputs::plan(&targets)?;
    let progress = Progress::new(0, "transmission and insertion loss");
    let envelope_speeds = at.speed_range_rev_s;
    let results = at.run(|circuit, source| {
        let request = request(&args, &circuit, envelope_speeds)?;
        Ok(silencer(circuit, source, &request, &mut |done, total| {
            progress.set_of(done, total)
        })?)
    })?;
    progress.finish();
    envelope::print_warnings(&results, |r| &r.warnings);

    // the envelope columns follow `frequency_hz` and `harmonic`
    let speed = |r: &SilencerResult| Some(r.pump.speed_rev_s);
    envelope::csv_over(
        &mut outputs,
        csv.as_deref(),
        &at.own,
        &results,
        1,
        speed,
        |r, buf| render::csv(r, buf),
    )?;
    envelope::csv_over(
        &mut outputs,
        harmonic_csv.as_deref(),
        &at.own,
        &results,
        1,
        speed,
        |r, buf| render::harmonic_csv(r, buf),
    )?;
    envelope::plot_over(&mut outputs, &plots, &results, |r, tmp| {
        plot::stacked_line_charts(tmp, &render::charts(r))
    })?;
    envelope::finish_over(
        outputs,
        json.as_deref(),
        "silencer",
        &args.at,
        &results,
        render::text,
    )
}

/// The request at one envelope point: the elements and the measurement
/// point looked up in its circuit.
fn request(
    args: &SilencerArgs,
    circuit: &ripline::Circuit,
    envelope_speeds: Option<(f64, f64)>,
) -> anyhow::Result<SilencerRequest> {
    let elements = args
        .element
        .iter()
        .map(|n| ranges::element(circuit, n))
        .collect::<anyhow::Result<Vec<_>>>()?;
    let reference_tube = match &args.reference {
        Some(name) => {
            let i = ranges::element(circuit, name)?;
            if circuit.elements[i].kind.line().is_none() {
                return Err(UsageError(format!(
                    "--reference {name}: `{name}` is not a tube or a hose"
                ))
                .into());
            }
            Some(i)
        }
        None => None,
    };
    Ok(SilencerRequest {
        elements,
        reference_tube,
        without: match args.without {
            Without::Pipe => WithoutReference::Pipe,
            Without::ZeroLength => WithoutReference::ZeroLength,
        },
        tap: ranges::point(circuit, args.tap.as_deref())?,
        sweep: args.sweep.resolve(circuit, envelope_speeds)?,
    })
}

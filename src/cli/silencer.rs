//! `ripline silencer FILE --element NAME [--element NAME...]`: transmission
//! loss of a silencer (an element or a chain of elements) between anechoic
//! pipes, and its insertion loss at a point of the circuit, per pump
//! harmonic and versus frequency.

use super::common::{self, Outputs, UsageError};
use super::ranges::{self, Progress};
use clap::{Args, ValueEnum};
use ripline::analysis::silencer::WithoutReference;
use ripline::elements::ElementKind;
use ripline::plot;
use ripline::render::silencer as render;
use ripline::results::silencer::{SilencerRequest, silencer};
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
    /// Circuit file (YAML).
    file: PathBuf,
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
    /// The tube whose characteristic impedance is the reference on both sides
    /// for the transmission loss (default: the pipes met at each end).
    #[arg(long, value_name = "TUBE")]
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
    let loaded = common::load_circuit(Some(&args.file))?;
    let mut outputs = Outputs::plan(&[
        ("--csv", csv.as_deref()),
        ("--harmonic-csv", harmonic_csv.as_deref()),
        ("--plot", plot.as_deref()),
        ("--json", json.as_deref()),
    ])?;
    let circuit = &loaded.circuit;
    let elements = args
        .element
        .iter()
        .map(|n| ranges::element(circuit, n))
        .collect::<anyhow::Result<Vec<_>>>()?;
    let reference_tube = match &args.reference {
        Some(name) => {
            let i = ranges::element(circuit, name)?;
            if !matches!(circuit.elements[i].kind, ElementKind::Tube(_)) {
                return Err(
                    UsageError(format!("--reference {name}: `{name}` is not a tube")).into(),
                );
            }
            Some(i)
        }
        None => None,
    };
    let sweep = args.sweep.resolve(circuit)?;
    let request = SilencerRequest {
        elements,
        reference_tube,
        without: match args.without {
            Without::Pipe => WithoutReference::Pipe,
            Without::ZeroLength => WithoutReference::ZeroLength,
        },
        tap: ranges::point(circuit, args.tap.as_deref())?,
        sweep,
    };
    let progress = Progress::new(0, "transmission and insertion loss");
    let result = silencer(
        loaded.circuit,
        &loaded.source,
        &request,
        &mut |done, total| progress.set_of(done, total),
    )?;
    progress.finish();
    common::print_warnings(&result.warnings);

    outputs.csv_to(csv.as_deref(), |buf| render::csv(&result, buf))?;
    outputs.csv_to(harmonic_csv.as_deref(), |buf| {
        render::harmonic_csv(&result, buf)
    })?;
    outputs.plot_to(plot.as_deref(), |tmp| {
        plot::stacked_line_charts(tmp, &render::charts(&result))
    })?;
    outputs.finish(json.as_deref(), "silencer", &result, render::text)
}

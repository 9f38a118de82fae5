//! `ripline compare CIRCUIT MEASUREMENTS`: the ripple measured at the taps
//! beside the circuit's prediction; and the progress of reading records,
//! shared with `calibrate`.

use super::common::{self, Outputs};
use super::ranges::Progress;
use clap::Args;
use ripline::estimate::Observer;
use ripline::io::measurement_file::load_measurements;
use ripline::io::{CircuitFile, load_circuit_file};
use ripline::plot;
use ripline::render::compare as render;
use ripline::results::compare::compare;
use std::path::{Path, PathBuf};

#[derive(Debug, Args)]
pub struct CompareArgs {
    /// Circuit file (YAML).
    circuit: PathBuf,
    /// Measurement file (YAML): runs, their records or spectra and the taps
    /// they measured.
    measurements: PathBuf,
    /// Write the comparison as CSV (run,point,harmonic,frequency_hz,
    /// measured_pa,measured_u_pa,measured_phase_deg,predicted_pa,
    /// predicted_phase_deg,difference_db,difference_deg,normalised).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Plot measured and predicted amplitudes per tap (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
}

/// Stages of work (extracting each record, calibrating) as progress bars on
/// standard error when it is a terminal.
#[derive(Default)]
pub struct Stages(Option<Progress>, usize);

impl Observer for Stages {
    fn stage(&mut self, label: &str, total: u64) {
        if let Some(old) = self.0.take() {
            old.finish();
        }
        self.1 = 0;
        self.0 = Some(Progress::new(total as usize, label));
    }
    fn advance(&mut self, steps: u64) {
        self.1 += steps as usize;
        if let Some(p) = &self.0 {
            p.set_of(self.1, self.1.max(1));
        }
    }
    fn finish(&mut self) {
        if let Some(p) = self.0.take() {
            p.finish();
        }
    }
}

/// Loads the circuit file and the measurement file checked against it.
pub fn load(
    circuit: &Path,
    measurements: &Path,
) -> anyhow::Result<(CircuitFile, ripline::io::measurement_file::Measurements)> {
    let circuit = load_circuit_file(circuit)?;
    let m = load_measurements(measurements, &circuit)?;
    Ok((circuit, m))
}

pub fn run(args: CompareArgs) -> anyhow::Result<()> {
    let (csv, plot) = common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let json = common::json_path(args.json.as_deref())?;
    let (circuit, m) = load(&args.circuit, &args.measurements)?;
    let data = ripline::io::measurement_file::data_paths(&m);
    let targets: Vec<(&str, Option<&Path>)> = vec![
        ("--csv", csv.as_deref()),
        ("--plot", plot.as_deref()),
        ("--json", json.as_deref()),
    ];
    // the records are read later: no output may be one of them
    let inputs: Vec<&Path> = data.iter().map(PathBuf::as_path).collect();
    let mut outputs = Outputs(common::plan_outputs(&inputs, &targets, false)?);
    let mut stages = Stages::default();
    let result = compare(&circuit, &m, &mut stages);
    stages.finish();
    let result = result?;
    outputs.csv_to(csv.as_deref(), |buf| render::csv(&result, buf))?;
    outputs.plot_to(plot.as_deref(), |tmp| {
        plot::stacked_line_charts(tmp, &render::chart(&result))
    })?;
    outputs.finish(json.as_deref(), "compare", &result, render::text)
}

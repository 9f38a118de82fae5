//! `ripline calibrate CIRCUIT MEASUREMENTS --vary TARGET=LOW..HIGH`: values
//! of the circuit adjusted to the measured ripple, and the calibrated
//! circuit file.

use super::common::{self, Outputs, UsageError, check_output};
use super::compare::{Stages, load};
use clap::Args;
use ripline::calibrate::fit::{MAX_PARAMETERS, Parameter};
use ripline::calibrate::lm::Options;
use ripline::estimate::Observer;
use ripline::io::CircuitTemplate;
use ripline::io::quantity::in_unit;
use ripline::plot;
use ripline::render::calibrate as render;
use ripline::results::calibrate::{CalibrateRequest, calibrate};
use std::path::{Path, PathBuf};

/// Most model evaluations allowed.
pub const MAX_EVALUATIONS: usize = 10_000;

#[derive(Debug, Args)]
pub struct CalibrateArgs {
    /// Circuit file (YAML).
    circuit: PathBuf,
    /// Measurement file (YAML).
    measurements: PathBuf,
    /// A value to calibrate and its bounds: TARGET=LOW..HIGH, TARGET being
    /// ELEMENT.KEY, fluid.KEY, PUMP.KEY (e.g. `pump.source_impedance.volume`)
    /// or TAP.distance; bounds with units (bare numbers are SI). 1 to 6.
    #[arg(long, value_name = "TARGET=LOW..HIGH", required = true)]
    vary: Vec<String>,
    /// Most model evaluations (each solves every run).
    #[arg(long, value_name = "N", default_value_t = 400)]
    max_evaluations: usize,
    /// Write the calibrated circuit file (.yaml or .yml): the circuit file's
    /// text with the calibrated values replaced and marked.
    #[arg(long, value_name = "FILE")]
    circuit_out: Option<PathBuf>,
    /// Write the estimates as CSV (parameter,unit,start,value,
    /// standard_uncertainty,low,high,log_scale,at_bound,identifiable and a
    /// rho:NAME column per parameter).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Plot measured amplitudes with the prediction before and after (.svg
    /// or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Write the result as JSON (schema in docs/json.md).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
}

/// `TARGET=LOW..HIGH` → the parameter, bounds in the unit the file writes
/// the value in, and the bounds as written (for messages).
fn parameter<'t>(
    template: &CircuitTemplate,
    text: &'t str,
) -> anyhow::Result<(Parameter, [&'t str; 2])> {
    let bad = |m: String| UsageError(format!("--vary {text}: {m}"));
    let (spec, range) = text.rsplit_once('=').ok_or_else(|| {
        bad("write TARGET=LOW..HIGH, e.g. `fluid.bulk_modulus=1.2GPa..2GPa`".into())
    })?;
    let target = template.target(spec).map_err(bad)?;
    let (lo, hi) = range
        .split_once("..")
        .ok_or_else(|| bad(format!("`{range}` is not a range LOW..HIGH")))?;
    let unit = target.written.unit.clone();
    let low = in_unit(lo, &unit).map_err(bad)?;
    let high = in_unit(hi, &unit).map_err(bad)?;
    Ok((Parameter { target, low, high }, [lo.trim(), hi.trim()]))
}

pub fn run(args: CalibrateArgs) -> anyhow::Result<()> {
    let (csv, plot) = common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let json = common::json_path(args.json.as_deref())?;
    let circuit_out = args
        .circuit_out
        .as_deref()
        .map(|p| check_output("--circuit-out", p, &["yaml", "yml"]))
        .transpose()?;
    if !(1..=MAX_EVALUATIONS).contains(&args.max_evaluations) {
        return Err(UsageError(format!(
            "--max-evaluations must be between 1 and {MAX_EVALUATIONS}, found {}",
            args.max_evaluations
        ))
        .into());
    }
    if args.vary.len() > MAX_PARAMETERS {
        return Err(UsageError(format!(
            "--vary: at most {MAX_PARAMETERS} values are calibrated at once, found {}",
            args.vary.len()
        ))
        .into());
    }
    let (circuit, m) = load(&args.circuit, &args.measurements)?;
    let template = CircuitTemplate::new(&circuit.text, &circuit.file)?;
    let (parameters, written): (Vec<Parameter>, Vec<[&str; 2]>) = args
        .vary
        .iter()
        .map(|v| parameter(&template, v))
        .collect::<anyhow::Result<Vec<_>>>()?
        .into_iter()
        .unzip();
    ripline::calibrate::fit::check_parameters(&parameters)
        .map_err(|e| UsageError(format!("--vary {e}")))?;
    if let Some(r) = ripline::calibrate::fit::refused_bound(&template, &parameters) {
        let which = if r.upper { "upper" } else { "lower" };
        return Err(UsageError(format!(
            "--vary {}: the circuit refuses `{}` at its {which} bound `{}`: {}",
            args.vary[r.index],
            parameters[r.index].target.name,
            written[r.index][usize::from(r.upper)],
            r.error
        ))
        .into());
    }
    let data = ripline::io::measurement_file::data_paths(&m);
    let inputs: Vec<&Path> = data.iter().map(PathBuf::as_path).collect();
    let targets: Vec<(&str, Option<&Path>)> = vec![
        ("--csv", csv.as_deref()),
        ("--plot", plot.as_deref()),
        ("--json", json.as_deref()),
        ("--circuit-out", circuit_out.as_deref()),
    ];
    let mut outputs = Outputs(common::plan_outputs(&inputs, &targets, false)?);
    let request = CalibrateRequest {
        parameters,
        options: Options {
            max_evaluations: args.max_evaluations,
            ..Options::default()
        },
    };
    let mut stages = Stages::default();
    let result = calibrate(&circuit, &m, &request, &mut stages);
    stages.finish();
    let result = result?;
    outputs.csv_to(csv.as_deref(), |buf| render::csv(&result, buf))?;
    outputs.plot_to(plot.as_deref(), |tmp| {
        plot::stacked_line_charts(tmp, &render::chart(&result))
    })?;
    if let Some(path) = &circuit_out {
        outputs.bytes(path, result.calibrated_text.as_bytes())?;
    }
    let out = circuit_out.clone();
    outputs.finish(json.as_deref(), "calibrate", &result, move |r, w| {
        render::text(r, w)?;
        if let Some(p) = &out {
            use std::io::Write;
            writeln!(w, "\ncalibrated circuit file written to {}", p.display())?;
        }
        Ok(())
    })
}

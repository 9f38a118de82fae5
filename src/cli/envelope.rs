//! The operating envelope in the analysis commands: the points a command
//! runs at (every point of the file's `envelope`, or those the options
//! select), and its outputs over several points: one report per point, CSV
//! tables merged with the envelope columns, one picture per point, and one
//! JSON document holding every point's result.

use super::common::{self, Outputs, UsageError};
use ripline::analysis::envelope::{EnvelopeWarning, add_warning};
use ripline::envelope::{OperatingPoint, PointFilter};
use ripline::io::csv_envelope::{FileOperatingPoint, PointTable, merge_with_envelope};
use ripline::results::Notice;
use ripline::results::over_envelope::{WorstValues, over_envelope};
use ripline::units::Dimension;
use ripline::{Circuit, demo};
use serde::Serialize;
use std::path::{Path, PathBuf};

/// The options that pick envelope points.
#[derive(Debug, Clone, Default, clap::Args)]
pub struct PointArgs {
    /// Run at one envelope point, named by its label as `assess` prints it
    /// (e.g. "120 bar, 50 °C, lifting"); default: every point of the
    /// file's `envelope`.
    #[arg(long = "at", value_name = "POINT")]
    at: Option<String>,
    /// Only the envelope points at this mean (gauge) pressure, e.g. "120 bar".
    #[arg(long, value_name = "PRESSURE")]
    pressure: Option<String>,
    /// Only the envelope points at this oil temperature, e.g. "50 degC".
    #[arg(long, value_name = "TEMPERATURE")]
    temperature: Option<String>,
    /// Only the envelope points of this load case.
    #[arg(long = "case", value_name = "NAME")]
    case: Option<String>,
    /// How many findings the report shows (default 10): the worst values
    /// over several envelope points, and the ranked findings of `sweep`
    /// and `response`; every one is in the CSV or JSON output.
    #[arg(long, value_name = "N")]
    pub top: Option<usize>,
}

/// The circuit at each point a command runs at.
pub struct AtPoints {
    /// The file's name (or the built-in demo's).
    pub source: String,
    /// The file's own mean pressure and oil temperature.
    pub own: FileOperatingPoint,
    /// The envelope's speed range (rev/s), if it gives one.
    pub speed_range_rev_s: Option<(f64, f64)>,
    /// The shaft the envelope's speed range applies to, if it names one.
    pub shaft: Option<String>,
    /// Each point and the circuit there, in the envelope's order; one
    /// point, the file's own, without an envelope.
    pub points: Vec<(OperatingPoint, Circuit)>,
}

impl AtPoints {
    /// Whether the command runs at several points.
    pub fn several(&self) -> bool {
        self.points.len() > 1
    }

    /// Runs `analyse` on the circuit at every point, in order; an error at
    /// a point of an envelope names the point.
    ///
    /// # Errors
    /// The first point's error.
    pub fn run<T>(
        &mut self,
        mut analyse: impl FnMut(Circuit, &str) -> anyhow::Result<T>,
    ) -> anyhow::Result<Vec<(OperatingPoint, T)>> {
        std::mem::take(&mut self.points)
            .into_iter()
            .map(|(point, circuit)| {
                let result = analyse(circuit, &self.source);
                match result {
                    Err(e) if point != OperatingPoint::default() => {
                        Err(e.context(format!("at envelope point `{}`", point.label())))
                    }
                    r => r.map(|r| (point, r)),
                }
            })
            .collect()
    }
}

impl PointArgs {
    fn filter(&self) -> anyhow::Result<PointFilter> {
        let quantity = |option: &str, text: &Option<String>, dim, unit| {
            text.as_deref()
                .map(|t| common::cli_quantity(option, t, dim, unit))
                .transpose()
        };
        Ok(PointFilter {
            label: self.at.clone(),
            pressure_pa: quantity("--pressure", &self.pressure, Dimension::Pressure, "Pa")?,
            temperature_k: quantity(
                "--temperature",
                &self.temperature,
                Dimension::Temperature,
                "K",
            )?,
            case: self.case.clone(),
        })
    }

    /// Loads FILE (or the built-in demo) and resolves the circuit at every
    /// selected point, all before any work. With `single`, the command runs
    /// at one point only, and a selection of several is refused.
    ///
    /// # Errors
    /// An input error of the file or at a point (naming it); a usage error
    /// for a selection that matches no point, or several with `single`.
    pub fn load(&self, file: Option<&Path>, single: bool) -> anyhow::Result<AtPoints> {
        let (loaded, source) = match file {
            Some(path) => (
                ripline::io::load_circuit_file(path)?,
                path.display().to_string(),
            ),
            None => (
                ripline::io::parse_circuit_file(demo::DEMO_CIRCUIT, demo::DEMO_NAME)?,
                demo::DEMO_NAME.to_string(),
            ),
        };
        let filter = self.filter()?;
        if loaded.envelope.is_none() && filter != PointFilter::default() {
            return Err(UsageError(format!(
                "{source}: the file has no `envelope` section, so there is no envelope point to choose (--at, --pressure, --temperature, --case)"
            ))
            .into());
        }
        let chosen = loaded
            .select(&filter)
            .map_err(|e| UsageError(format!("{source}: {e}")))?;
        if single && chosen.len() > 1 {
            let labels: Vec<String> = chosen.iter().map(|p| format!("`{}`", p.label())).collect();
            return Err(UsageError(format!(
                "{source}: this command runs at one envelope point; choose one with --at (or --pressure, --temperature, --case): {}",
                labels.join(", ")
            ))
            .into());
        }
        let envelope = loaded.envelope.as_ref();
        Ok(AtPoints {
            points: loaded.circuits(&chosen)?,
            speed_range_rev_s: envelope.and_then(|e| e.speed_range_rev_s),
            shaft: envelope.and_then(|e| e.shaft.clone()),
            own: FileOperatingPoint {
                pressure_pa: loaded.pressure_pa,
                temperature_k: loaded.temperature_k,
            },
            source,
        })
    }
}

/// The file of a picture at `point`: `base` itself at one point, else
/// base-<point label>.
pub fn point_path(base: &Path, point: &OperatingPoint, several: bool) -> PathBuf {
    if !several {
        return base.to_path_buf();
    }
    let slug: String = point
        .label()
        .chars()
        .filter(|c| *c != '°')
        .map(|c| {
            if c.is_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect::<String>()
        .split('-')
        .filter(|s| !s.is_empty())
        .collect::<Vec<_>>()
        .join("-");
    ripline::render::companion_path(base, &slug)
}

/// The pictures of `base` at every point.
pub fn point_paths(base: Option<&Path>, at: &AtPoints) -> Vec<PathBuf> {
    base.map_or_else(Vec::new, |b| {
        at.points
            .iter()
            .map(|(p, _)| point_path(b, p, at.several()))
            .collect()
    })
}

/// Stages the picture of each point's result, drawn by `draw`, at `paths`
/// (one per point, from [`point_paths`]; none without `--plot`).
///
/// # Errors
/// Drawing or staging a picture.
pub fn plot_over<T>(
    outputs: &mut Outputs,
    paths: &[PathBuf],
    results: &[(OperatingPoint, T)],
    draw: impl Fn(&T, &Path) -> Result<(), ripline::plot::PlotError>,
) -> anyhow::Result<()> {
    for ((_, r), path) in results.iter().zip(paths) {
        outputs.plot(path, |tmp| draw(r, tmp))?;
    }
    Ok(())
}

/// Prints each warning of the results once, with the points where it
/// holds when there are several (a warning that differs between points
/// only in its numbers is one, with the first point's numbers).
pub fn print_warnings<T>(results: &[(OperatingPoint, T)], warnings: impl Fn(&T) -> &[Notice]) {
    if let [(_, r)] = results {
        common::print_warnings(warnings(r));
        return;
    }
    let mut grouped = Vec::new();
    for (p, r) in results {
        let label = p.label();
        for w in warnings(r) {
            add_warning(&mut grouped, w.to_string(), &label);
        }
    }
    print_grouped_warnings(&grouped, results.len());
}

/// Prints warnings grouped over `all` envelope points.
pub fn print_grouped_warnings(warnings: &[EnvelopeWarning], all: usize) {
    for w in warnings {
        let n = w.points.len();
        if all == 1 {
            eprintln!("warning: {}", w.text);
        } else {
            let at = if n == all {
                "at every envelope point".to_string()
            } else {
                format!("at {n} of {all} envelope points ({})", w.points.join("; "))
            };
            let numbers = if n > 1 {
                " (numbers at the first of them)"
            } else {
                ""
            };
            eprintln!("warning: {at}: {}{numbers}", w.text);
        }
    }
}

/// Stages one CSV table over every point when `path` is given: each
/// point's table as `write` gives it, merged with the envelope columns
/// after its first `leading` columns (the point's `speed` fills
/// `speed_rpm` for a table without its own). At one point of a file
/// without an envelope, the table as it is.
///
/// # Errors
/// Formatting or staging the table.
pub fn csv_over<T>(
    outputs: &mut Outputs,
    path: Option<&Path>,
    own: &FileOperatingPoint,
    results: &[(OperatingPoint, T)],
    leading: usize,
    speed: impl Fn(&T) -> Option<f64>,
    write: impl Fn(&T, &mut dyn std::io::Write) -> Result<(), csv::Error>,
) -> anyhow::Result<()> {
    let Some(path) = path else {
        return Ok(());
    };
    if results.len() == 1 && results[0].0 == OperatingPoint::default() {
        // straight into the staged file: a long table is not copied again
        return outputs.csv(path, |file| write(&results[0].1, file));
    }
    let tables = results
        .iter()
        .map(|(_, r)| {
            let mut bytes = Vec::new();
            write(r, &mut bytes).map(|()| bytes)
        })
        .collect::<Result<Vec<_>, _>>()?;
    let parts: Vec<PointTable<'_>> = results
        .iter()
        .zip(&tables)
        .map(|((p, r), csv)| PointTable {
            point: p,
            speed_rev_s: speed(r),
            csv,
        })
        .collect();
    let mut bytes = Vec::new();
    merge_with_envelope(&parts, leading, own, &mut bytes)?;
    outputs.bytes(path, &bytes)
}

/// Stages the JSON document when `json` is given, moves every staged file
/// into place and prints the report. For a file without an envelope, the
/// command's own result and report; at one envelope point, the same headed
/// by the point; at several,
/// [`ripline::results::over_envelope::OverEnvelope`]: the worst values ranked
/// (the first `--top` in the report) and each point's result in the JSON.
///
/// # Errors
/// Staging, committing or printing.
pub fn finish_over<T: Serialize + WorstValues>(
    mut outputs: Outputs,
    json: Option<&Path>,
    command: &str,
    args: &PointArgs,
    results: &[(OperatingPoint, T)],
    text: impl Fn(&T, &mut common::Stdout) -> std::io::Result<()>,
) -> anyhow::Result<()> {
    let over = over_envelope(results);
    if results.len() == 1 && results[0].0 == OperatingPoint::default() {
        return outputs.finish(json, command, &results[0].1, text);
    }
    if let Some(path) = json {
        outputs.json(path, command, &over)?;
    }
    outputs.commit()?;
    common::print(|out| {
        use std::io::Write;
        if let [(p, r)] = results {
            writeln!(out, "envelope point: {}", p.label())?;
            return text(r, out);
        }
        ripline::render::over_envelope::text(&over, command, args.top.unwrap_or(10), out)
    })
}

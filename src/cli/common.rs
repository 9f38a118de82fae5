//! Helpers shared by the commands: loading circuits, exit codes, output files.

use super::{EXIT_COMPUTE, EXIT_INPUT, EXIT_LIMITS, EXIT_UNCERTAIN};
use anyhow::Context;
use ripline::io::InputError;
use ripline::io::output::{OutputError, StagedOutputs};
use ripline::results::{self, Notice, Origin};
use ripline::source::{Shaft, shafts};
use ripline::units::{Dimension, parse_quantity};
use ripline::{Circuit, demo};
use std::path::{Path, PathBuf};

/// A circuit and the name to report it by.
pub struct LoadedCircuit {
    pub circuit: Circuit,
    pub source: String,
}

/// Loads FILE, or the built-in demo when none is given.
pub fn load_circuit(file: Option<&Path>) -> anyhow::Result<LoadedCircuit> {
    match file {
        Some(path) => {
            let circuit = ripline::io::load_circuit(path)?;
            // Harmonics of pump source files that a bench fit flagged.
            if let Ok(text) = ripline::io::read_text(path) {
                for w in ripline::io::source_file_notes(&text, &path.display().to_string()) {
                    eprintln!("warning: {w}");
                }
            }
            Ok(LoadedCircuit {
                circuit,
                source: path.display().to_string(),
            })
        }
        None => Ok(LoadedCircuit {
            circuit: ripline::io::parse_circuit(demo::DEMO_CIRCUIT, demo::DEMO_NAME)?,
            source: demo::DEMO_NAME.to_string(),
        }),
    }
}

/// The circuit FILE (or the built-in demo) kept as a template, for values
/// set from outside it (uncertainty bands).
pub fn load_template(file: Option<&Path>) -> anyhow::Result<ripline::io::CircuitTemplate> {
    Ok(match file {
        Some(path) => {
            let text = ripline::io::read_text(path)?;
            ripline::io::CircuitTemplate::new(&text, &path.display().to_string())?
        }
        None => ripline::io::CircuitTemplate::new(demo::DEMO_CIRCUIT, demo::DEMO_NAME)?,
    })
}

/// A user error in a command-line value (exit code 2).
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct UsageError(pub String);

/// Parses a command-line quantity; a bare number is read in `bare_unit`.
pub fn cli_quantity(
    option: &str,
    text: &str,
    dim: Dimension,
    bare_unit: &str,
) -> anyhow::Result<f64> {
    let with_unit = if text.trim().parse::<f64>().is_ok() {
        format!("{text} {bare_unit}")
    } else {
        text.to_string()
    };
    let v = parse_quantity(&with_unit, dim).map_err(|e| UsageError(format!("{option}: {e}")))?;
    Ok(v)
}

/// Limits of `assess` exceeded (exit code 3): not a failure of the
/// command, whose outputs are complete.
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct LimitsExceeded(pub String);

/// No limit exceeded, but a verdict with uncertainty bands is UNCERTAIN
/// (exit code 4); the outputs are complete.
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct LimitsUncertain(pub String);

/// Exit code for an error: 2 for input and usage errors, 3 for exceeded
/// limits, 1 otherwise.
pub fn exit_code(err: &anyhow::Error) -> u8 {
    if err.chain().any(|c| c.is::<LimitsExceeded>()) {
        return EXIT_LIMITS;
    }
    if err.chain().any(|c| c.is::<LimitsUncertain>()) {
        return EXIT_UNCERTAIN;
    }
    let input = err.chain().any(|c| {
        c.is::<InputError>()
            || c.is::<UsageError>()
            || c.is::<OutputError>()
            || matches!(
                c.downcast_ref::<results::Error>(),
                Some(results::Error::Request(_))
            )
    });
    if input { EXIT_INPUT } else { EXIT_COMPUTE }
}

/// Whether the error is a closed stdout pipe (e.g. `ripline solve | head`).
pub fn is_broken_pipe(err: &anyhow::Error) -> bool {
    err.chain().any(|c| {
        c.downcast_ref::<std::io::Error>()
            .is_some_and(|e| e.kind() == std::io::ErrorKind::BrokenPipe)
    })
}

/// Checks an output path before any work: its folder exists and, for plots,
/// the extension is one we can write.
pub fn check_output(option: &str, path: &Path, extensions: &[&str]) -> anyhow::Result<PathBuf> {
    let ext = path
        .extension()
        .map(|e| e.to_string_lossy().to_lowercase())
        .unwrap_or_default();
    if !extensions.contains(&ext.as_str()) {
        return Err(UsageError(format!(
            "{option} {}: the file name must end in {}",
            path.display(),
            extensions
                .iter()
                .map(|e| format!(".{e}"))
                .collect::<Vec<_>>()
                .join(" or ")
        ))
        .into());
    }
    if let Some(dir) = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty() && !d.is_dir())
    {
        return Err(UsageError(format!(
            "{option} {}: the folder {} does not exist",
            path.display(),
            dir.display()
        ))
        .into());
    }
    Ok(path.to_path_buf())
}

/// Checks the usual `--csv FILE` (`.csv`) and `--plot FILE` (`.svg`/`.png`)
/// outputs before any work.
pub fn csv_and_plot_paths(
    csv: Option<&Path>,
    plot: Option<&Path>,
) -> anyhow::Result<(Option<PathBuf>, Option<PathBuf>)> {
    let csv = csv
        .map(|p| check_output("--csv", p, &["csv"]))
        .transpose()?;
    let plot = plot
        .map(|p| check_output("--plot", p, &["svg", "png"]))
        .transpose()?;
    Ok((csv, plot))
}

/// Stages a CSV table produced by `write`, streamed to the staged file (a
/// large sweep table is never held whole in memory).
pub fn stage_csv(
    outputs: &mut StagedOutputs,
    path: &Path,
    write: impl FnOnce(&mut std::io::BufWriter<std::fs::File>) -> Result<(), csv::Error>,
) -> anyhow::Result<()> {
    outputs
        .stage_with(path, |tmp| {
            let mut file = std::io::BufWriter::new(std::fs::File::create(tmp)?);
            write(&mut file).map_err(std::io::Error::other)?;
            std::io::Write::flush(&mut file)
        })
        .with_context(|| format!("writing {}", path.display()))
}

/// Parses a shaft speed option (rpm when bare) and checks it is within
/// 0 .. 60000 rpm.
pub fn speed_option(option: &str, text: &str) -> anyhow::Result<f64> {
    let rev_s = cli_quantity(option, text, Dimension::ShaftSpeed, "rpm")?;
    if !(rev_s > 0.0 && rev_s <= 1000.0) {
        return Err(UsageError(format!(
            "{option} must be between 0 and 60000 rpm, found {:.1} rpm",
            rev_s * 60.0
        ))
        .into());
    }
    Ok(rev_s)
}

/// The shaft named `name` (a shaft name, or the name of a pump on it), or
/// the first pump's shaft when no name is given.
pub fn pick_shaft(circuit: &Circuit, name: Option<&str>) -> anyhow::Result<Shaft> {
    let all = shafts(&circuit.pumps);
    let Some(name) = name else {
        return Ok(all[0].clone());
    };
    all.iter()
        .find(|s| s.name == name)
        .or_else(|| {
            let pump = circuit.pumps.iter().position(|p| p.name == name)?;
            all.iter().find(|s| s.pumps.contains(&pump))
        })
        .cloned()
        .ok_or_else(|| {
            let names: Vec<String> = all.iter().map(|s| format!("`{}`", s.name)).collect();
            UsageError(format!(
                "--pump {name}: no shaft or pump has that name; the circuit's shafts are {}",
                names.join(", ")
            ))
            .into()
        })
}

/// Smallest and largest reference pressure for levels in dB, Pa: from the
/// 1 µPa of underwater acoustics to 10 kbar, beyond any hydraulic pressure.
pub const DB_REF_RANGE_PA: (f64, f64) = (1e-6, 1e9);

/// Parses `--db-ref` (Pa when bare) and checks it is within
/// [`DB_REF_RANGE_PA`], so every level printed is a finite number.
pub fn db_reference(text: &str) -> anyhow::Result<f64> {
    let p_ref = cli_quantity("--db-ref", text, Dimension::Pressure, "Pa")?;
    let (lo, hi) = DB_REF_RANGE_PA;
    if !(lo..=hi).contains(&p_ref) {
        return Err(UsageError(format!(
            "--db-ref {text}: the reference pressure must be between 1 µPa and 1 GPa (10 kbar), e.g. \"1 Pa\" or \"1 bar\""
        ))
        .into());
    }
    Ok(p_ref)
}

/// `--db-ref PRESSURE` (a bare number in Pa), default 1 Pa.
pub fn db_ref_option(text: Option<&str>) -> anyhow::Result<(f64, Origin)> {
    let Some(text) = text else {
        return Ok((1.0, Origin::Default));
    };
    Ok((db_reference(text)?, Origin::Request))
}

/// `--harmonics N`, checked to be 1..=200.
pub fn harmonics_option(n: Option<u32>) -> anyhow::Result<Option<u32>> {
    match n {
        Some(n) if !(1..=200).contains(&n) => {
            Err(UsageError(format!("--harmonics must be between 1 and 200, found {n}")).into())
        }
        _ => Ok(n),
    }
}

/// Checks an optional `--json FILE` path before any work.
pub fn json_path(path: Option<&Path>) -> anyhow::Result<Option<PathBuf>> {
    path.map(|p| check_output("--json", p, &["json"]))
        .transpose()
}

/// The output files of one command as one all-or-nothing group (see
/// [`plan_outputs`]), staged until every result is ready.
pub struct Outputs(pub StagedOutputs);

impl Outputs {
    /// Plans the group: `outputs` are (option, path) pairs, none of which
    /// may be a file the command reads. Call after loading the inputs and
    /// before the work.
    pub fn plan(outputs: &[(&str, Option<&Path>)]) -> anyhow::Result<Self> {
        Ok(Outputs(plan_outputs(&[], outputs, false)?))
    }

    /// Stages a CSV table produced by `write`.
    pub fn csv(
        &mut self,
        path: &Path,
        write: impl FnOnce(&mut std::io::BufWriter<std::fs::File>) -> Result<(), csv::Error>,
    ) -> anyhow::Result<()> {
        stage_csv(&mut self.0, path, write)
    }

    /// Stages a file of `bytes`.
    pub fn bytes(&mut self, path: &Path, bytes: &[u8]) -> anyhow::Result<()> {
        self.0
            .stage_bytes(path, bytes)
            .with_context(|| format!("writing {}", path.display()))
    }

    /// Stages the JSON document of a result.
    pub fn json<T: serde::Serialize>(
        &mut self,
        path: &Path,
        command: &str,
        result: &T,
    ) -> anyhow::Result<()> {
        let mut bytes = Vec::new();
        ripline::render::json::write(command, result, &mut bytes)
            .context("formatting the JSON document")?;
        self.bytes(path, &bytes)
    }

    /// Stages a picture drawn by `draw` at the path it is given.
    pub fn plot(
        &mut self,
        path: &Path,
        draw: impl FnOnce(&Path) -> Result<(), ripline::plot::PlotError>,
    ) -> anyhow::Result<()> {
        self.0
            .stage_with(path, draw)
            .with_context(|| format!("drawing {}", path.display()))
    }

    /// Stages a CSV table when `path` is given.
    pub fn csv_to(
        &mut self,
        path: Option<&Path>,
        write: impl FnOnce(&mut std::io::BufWriter<std::fs::File>) -> Result<(), csv::Error>,
    ) -> anyhow::Result<()> {
        path.map_or(Ok(()), |p| self.csv(p, write))
    }

    /// Stages a picture when `path` is given.
    pub fn plot_to(
        &mut self,
        path: Option<&Path>,
        draw: impl FnOnce(&Path) -> Result<(), ripline::plot::PlotError>,
    ) -> anyhow::Result<()> {
        path.map_or(Ok(()), |p| self.plot(p, draw))
    }

    /// Stages the JSON document of `result` when `json` is given, moves
    /// every staged file into place and prints the text report.
    pub fn finish<T: serde::Serialize>(
        mut self,
        json: Option<&Path>,
        command: &str,
        result: &T,
        text: impl FnOnce(&T, &mut Stdout) -> std::io::Result<()>,
    ) -> anyhow::Result<()> {
        if let Some(path) = json {
            self.json(path, command, result)?;
        }
        self.commit()?;
        print(|out| text(result, out))
    }

    /// Moves every staged file into place (see [`commit`]).
    pub fn commit(self) -> anyhow::Result<()> {
        commit(self.0)
    }
}

/// Prints warnings on standard error.
pub fn print_warnings(warnings: &[Notice]) {
    for w in warnings {
        eprintln!("warning: {w}");
    }
}

/// Standard output as the reports write it: buffered in blocks (standard
/// output alone flushes every line, one system call per line of a report
/// that may run to hundreds of thousands).
pub type Stdout = std::io::BufWriter<std::io::StdoutLock<'static>>;

/// Prints a report on standard output.
pub fn print(write: impl FnOnce(&mut Stdout) -> std::io::Result<()>) -> anyhow::Result<()> {
    use std::io::Write;
    let mut out = std::io::BufWriter::with_capacity(1 << 16, std::io::stdout().lock());
    write(&mut out)?;
    out.flush()?;
    Ok(())
}

/// The output files of a command as one all-or-nothing group, checked before
/// any work: each target is a file name in a folder that exists and takes a
/// new file, no two outputs are the same file, and no output is any file the
/// command reads (`inputs`, and every file read so far: circuit, source
/// files, bench file). With `create_folders`, missing folders of the targets
/// are made (and removed again if nothing is committed). Every command calls
/// this once, after loading its inputs and before its work; [`commit`] moves
/// the files into place.
pub fn plan_outputs(
    inputs: &[&Path],
    outputs: &[(&str, Option<&Path>)],
    create_folders: bool,
) -> anyhow::Result<StagedOutputs> {
    let mut read = ripline::io::files_read();
    read.extend(inputs.iter().map(|p| p.to_path_buf()));
    let targets: Vec<(&str, &Path, bool)> = outputs
        .iter()
        .filter_map(|&(option, path)| Some((option, path?, create_folders)))
        .collect();
    Ok(StagedOutputs::plan(&targets, &read)?)
}

/// Removes the staged output files of this process when it is interrupted
/// (Ctrl-C, SIGTERM, SIGHUP) and exits with code 130. A commit in progress
/// finishes first, so a group is either wholly in place or not at all.
pub fn remove_outputs_on_signal() {
    // Without a handler (one already set) the temporary files may stay; that
    // is not a reason to refuse to run.
    let _ = ctrlc::set_handler(|| {
        ripline::io::output::remove_staged_files();
        std::process::exit(130);
    });
}

/// Moves the staged output files into place. Commands call it once every
/// result is computed and before the report is printed, so that a closed
/// standard output (`ripline … | head`) cannot lose files whose contents are
/// complete; a command that fails earlier drops its staged files unwritten.
pub fn commit(outputs: StagedOutputs) -> anyhow::Result<()> {
    outputs
        .commit()
        .context("moving the output files into place")
}

/// A level option written `20dB`, `20 dB` or `20`.
pub fn parse_db(option: &str, text: &str) -> anyhow::Result<f64> {
    let t = text.trim();
    let number = t.strip_suffix("dB").unwrap_or(t).trim();
    match number.parse::<f64>() {
        Ok(v) if v.is_finite() && (0.0..=400.0).contains(&v) => Ok(v),
        _ => Err(UsageError(format!(
            "{option} {text}: write a level difference in dB between 0 and 400, e.g. 20dB"
        ))
        .into()),
    }
}

/// `--top N` and `--floor DB` (default 10 and 20 dB): which findings a
/// report shows, and whether either was given.
pub fn ranking_options(
    top: Option<usize>,
    floor: Option<&str>,
) -> anyhow::Result<(ripline::results::Ranking, Origin)> {
    let origin = if top.is_some() || floor.is_some() {
        Origin::Request
    } else {
        Origin::Default
    };
    Ok((
        ripline::results::Ranking {
            top: top.unwrap_or(10),
            floor_db: floor.map_or(Ok(20.0), |f| parse_db("--floor", f))?,
        },
        origin,
    ))
}

//! Helpers shared by the commands: loading circuits, exit codes, output files.

use super::{EXIT_COMPUTE, EXIT_INPUT};
use anyhow::Context;
use ripline::io::InputError;
use ripline::io::output::StagedOutputs;
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

/// The first lines of a command's report: `ripline <command>: <source>` and
/// the circuit's title, if any.
pub fn write_heading(
    out: &mut impl std::io::Write,
    command: &str,
    source: &str,
    circuit: &Circuit,
) -> std::io::Result<()> {
    writeln!(out, "ripline {command}: {source}")?;
    if let Some(title) = &circuit.title {
        writeln!(out, "circuit: {title}")?;
    }
    Ok(())
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

/// Exit code for an error: 2 for input and usage errors, 1 otherwise.
pub fn exit_code(err: &anyhow::Error) -> u8 {
    let input = err
        .chain()
        .any(|c| c.is::<InputError>() || c.is::<UsageError>());
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

/// Stages a CSV table produced by `write`.
pub fn stage_csv(
    outputs: &mut StagedOutputs,
    path: &Path,
    write: impl FnOnce(&mut Vec<u8>) -> Result<(), csv::Error>,
) -> anyhow::Result<()> {
    let mut bytes = Vec::new();
    write(&mut bytes).context("formatting the CSV table")?;
    outputs
        .stage_bytes(path, &bytes)
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
                "--shaft {name}: no shaft or pump has that name; the circuit's shafts are {}",
                names.join(", ")
            ))
            .into()
        })
}

/// The options `solve` and `sweep` share, checked before any work: the dB
/// reference, the output paths, and the circuit with its harmonic count.
pub struct Prepared {
    pub p_ref: f64,
    pub csv: Option<PathBuf>,
    pub plot: Option<PathBuf>,
    pub loaded: LoadedCircuit,
}

/// Checks `--db-ref`, `--csv`, `--plot`, loads FILE (or the demo) and
/// applies `--harmonics`.
pub fn prepare(
    db_ref: &str,
    csv: Option<&Path>,
    plot: Option<&Path>,
    file: Option<&Path>,
    harmonics: Option<u32>,
) -> anyhow::Result<Prepared> {
    let p_ref = cli_quantity("--db-ref", db_ref, Dimension::Pressure, "Pa")?;
    if p_ref <= 0.0 {
        return Err(UsageError("--db-ref must be a positive pressure".into()).into());
    }
    let (csv, plot) = csv_and_plot_paths(csv, plot)?;
    let mut loaded = load_circuit(file)?;
    if let Some(n) = harmonics {
        if !(1..=200).contains(&n) {
            return Err(
                UsageError(format!("--harmonics must be between 1 and 200, found {n}")).into(),
            );
        }
        loaded.circuit.harmonics = n;
    }
    Ok(Prepared {
        p_ref,
        csv,
        plot,
        loaded,
    })
}

/// A level in dB re `p_ref` of an rms pressure, or "no ripple".
pub fn level_text(rms: f64, p_ref: f64) -> String {
    if rms > 0.0 {
        format!("{:.1} dB", 20.0 * (rms / p_ref).log10())
    } else {
        "no ripple".to_string()
    }
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

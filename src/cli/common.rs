//! Helpers shared by the commands: loading circuits, exit codes, output files.

use super::{EXIT_COMPUTE, EXIT_INPUT};
use anyhow::Context;
use ripline::io::InputError;
use ripline::io::output::{OutputError, StagedOutputs};
use ripline::source::{Shaft, shafts};
use ripline::units::{Dimension, PressureDisplay, parse_quantity};
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
        Some(path) => Ok(LoadedCircuit {
            circuit: ripline::io::load_circuit(path)?,
            source: path.display().to_string(),
        }),
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
        .any(|c| c.is::<InputError>() || c.is::<UsageError>() || c.is::<OutputError>());
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
    let p_ref = db_reference(db_ref)?;
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

/// The reference pressure as printed beside levels: 4 significant digits,
/// in Pa below 10 Pa (`20e-6 Pa` rather than `0.000 Pa`).
pub fn reference_text(p_ref: f64) -> String {
    if p_ref >= 10.0 {
        return PressureDisplay(p_ref).to_string();
    }
    let rounded: f64 = format!("{p_ref:.3e}").parse().unwrap_or(p_ref);
    if rounded >= 1e-3 {
        format!("{rounded} Pa")
    } else {
        format!("{rounded:e} Pa")
    }
}

/// 20·log10(rms/p_ref), taken as a difference of logarithms so that it is
/// finite for every positive finite pressure (the ratio itself can
/// underflow or overflow).
pub fn db_re(rms: f64, p_ref: f64) -> f64 {
    20.0 * (rms.log10() - p_ref.log10())
}

/// A level in dB re `p_ref` of an rms pressure, or "no ripple".
pub fn level_text(rms: f64, p_ref: f64) -> String {
    if rms > 0.0 {
        format!("{:.1} dB", db_re(rms, p_ref))
    } else {
        "no ripple".to_string()
    }
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

/// [`plan_outputs`] for the usual `--csv` and `--plot` of a circuit command.
pub fn plan_csv_and_plot(csv: Option<&Path>, plot: Option<&Path>) -> anyhow::Result<StagedOutputs> {
    plan_outputs(&[], &[("--csv", csv), ("--plot", plot)], false)
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

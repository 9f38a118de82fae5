//! `ripline synth BENCH_FILE`: synthetic records of a bench from its known
//! source (the bench file's `synthesis` section), with seeded noise.

use super::common::{self, UsageError};
use anyhow::Context;
use clap::Args;
use ripline::estimate::bench::{DataFile, Synthesis};
use ripline::estimate::rng::Rng;
use ripline::estimate::synth::{self, SyntheticData};
use ripline::io::InputError;
use ripline::io::locate::KeyPath;
use ripline::io::records::{write_spectra, write_time_record};
use ripline::units::Dimension;
use std::io::Write;
use std::path::{Path, PathBuf};

#[derive(Debug, Args)]
pub struct SynthArgs {
    /// Bench file (YAML) with a `synthesis` section.
    file: PathBuf,
    /// Noise as a fraction of each channel's rms ripple, e.g. 0.01 or "1 %"
    /// (overrides the file).
    #[arg(long, value_name = "FRACTION")]
    noise: Option<String>,
    /// Seed of the noise generator (overrides the file).
    #[arg(long, value_name = "N")]
    seed: Option<u64>,
    /// Relative error of the stated speed, e.g. "0.3 %" (overrides the file).
    #[arg(long, value_name = "FRACTION")]
    speed_error: Option<String>,
    /// Write the records under this folder instead of next to the bench
    /// file (keeping their relative paths).
    #[arg(long, value_name = "DIR")]
    out_dir: Option<PathBuf>,
}

fn fraction(option: &str, text: &str, lo: f64, hi: f64) -> anyhow::Result<f64> {
    let v = common::cli_quantity(option, text, Dimension::Ratio, "")?;
    if !(lo..=hi).contains(&v) {
        return Err(
            UsageError(format!("{option} must be between {lo} and {hi}, found {v}")).into(),
        );
    }
    Ok(v)
}

pub fn run(args: SynthArgs) -> anyhow::Result<()> {
    if let Some(dir) = args.out_dir.as_deref().filter(|d| !d.is_dir()) {
        return Err(UsageError(format!(
            "--out-dir {}: {}",
            dir.display(),
            if dir.exists() {
                "is not a folder"
            } else {
                "the folder does not exist"
            }
        ))
        .into());
    }
    let bench = ripline::io::bench_file::load_bench(&args.file)?;
    let mut syn: Synthesis = bench.synthesis.clone().ok_or_else(|| {
        UsageError(format!(
            "{}: the bench file has no `synthesis` section (the known source to synthesise from)",
            args.file.display()
        ))
    })?;
    if let Some(n) = &args.noise {
        syn.noise = fraction("--noise", n, 0.0, 1.0)?;
    }
    if let Some(s) = &args.speed_error {
        syn.speed_error = fraction("--speed-error", s, -0.1, 0.1)?;
    }
    if let Some(s) = args.seed {
        syn.seed = s;
    }
    let base = args.file.parent().unwrap_or(Path::new(""));
    let targets = bench
        .conditions
        .iter()
        .enumerate()
        .map(|(i, c)| record_target(&args.file, base, args.out_dir.as_deref(), i, &c.data))
        .collect::<anyhow::Result<Vec<_>>>()?;
    let named: Vec<(&str, Option<&Path>)> = targets
        .iter()
        .map(|t| ("records", Some(t.as_path())))
        .collect();
    let mut outputs = common::plan_outputs(&[&args.file], &named, true)?;
    let mut rng = Rng::new(syn.seed);
    let mut written = Vec::new();
    let comment = format!(
        "synthetic record written by ripline synth from {}\nnoise {} of the rms ripple, seed {}, speed error {}",
        args.file.display(),
        syn.noise,
        syn.seed,
        syn.speed_error
    );
    for (cond, target) in bench.conditions.iter().zip(&targets) {
        let data = synth::condition_data(&bench, &syn, cond, &mut rng)
            .map_err(|e| UsageError(format!("{}: {e}", args.file.display())))?;
        let mut bytes = Vec::new();
        match (&cond.data, data) {
            (
                DataFile::TimeSeries {
                    unit_pa,
                    time_column,
                    tacho_column,
                    columns,
                    ..
                },
                SyntheticData::TimeSeries {
                    sample_rate_hz,
                    channels,
                    tacho,
                },
            ) => {
                write_time_record(
                    &mut bytes,
                    &comment,
                    time_column.as_deref(),
                    columns,
                    &channels,
                    sample_rate_hz,
                    *unit_pa,
                    syn.noise == 0.0,
                    tacho_column.as_deref().zip(tacho.as_deref()),
                )?;
            }
            (
                DataFile::Spectra {
                    unit_pa, columns, ..
                },
                SyntheticData::Spectra(phasors),
            ) => write_spectra(&mut bytes, &comment, columns, &phasors, *unit_pa)?,
            _ => unreachable!("synth::condition_data follows the condition's data file"),
        }
        outputs
            .stage_bytes(target, &bytes)
            .with_context(|| format!("writing {}", target.display()))?;
        written.push(format!("condition `{}`: {}", cond.name, target.display()));
    }
    common::commit(outputs)?;
    let mut out = std::io::stdout().lock();
    for w in written {
        writeln!(out, "wrote {w}")?;
    }
    out.flush()?;
    Ok(())
}

/// Where a condition's record is written: its path in the bench file, taken
/// relative to the bench file's folder and placed under `--out-dir` (or that
/// folder). The path must stay inside: an absolute path or one that climbs
/// out with `..` is refused at its key in the bench file.
fn record_target(
    bench_file: &Path,
    base: &Path,
    out_dir: Option<&Path>,
    index: usize,
    data: &DataFile,
) -> anyhow::Result<PathBuf> {
    use std::path::Component;
    let relative = data.path().strip_prefix(base).unwrap_or(data.path());
    let inside = relative
        .components()
        .all(|c| matches!(c, Component::Normal(_) | Component::CurDir));
    if inside && relative.file_name().is_some() {
        return Ok(out_dir.unwrap_or(base).join(relative));
    }
    let key = match data {
        DataFile::TimeSeries { .. } => "records",
        DataFile::Spectra { .. } => "spectra",
    };
    let file = bench_file.display().to_string();
    let text = ripline::io::read_text(bench_file)?;
    let path = KeyPath::root().key("conditions").index(index).key(key);
    Err(InputError::located(
        &file,
        &text,
        &path,
        format!(
            "`{}`: synth writes records only inside {} (a relative path without `..`)",
            relative.display(),
            match out_dir {
                Some(d) => format!("the --out-dir folder {}", d.display()),
                None => "the bench file's folder".to_string(),
            }
        ),
    )
    .into())
}

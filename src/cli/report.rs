//! `ripline report [FILE] --out FILE.html`: one self-contained HTML report
//! of a circuit. Exit code 3 (the report written) when a limit is exceeded,
//! as `assess`.

use super::common::{self, LimitsExceeded, Outputs, check_output};
use super::ranges::{self, Progress};
use anyhow::Context;
use clap::Args;
use ripline::results::Origin;
use ripline::results::report::{ReportRequest, report};
use ripline::{demo, io};
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct ReportArgs {
    /// Circuit file (YAML); the built-in demo circuit when omitted.
    file: Option<PathBuf>,
    /// The HTML file to write (.html); nothing is written if any part fails.
    #[arg(long, value_name = "FILE", required = true)]
    out: PathBuf,
    /// Number of harmonics of each pump's pumping frequency (overrides the file).
    #[arg(long, value_name = "N")]
    harmonics: Option<u32>,
    /// Reference pressure for levels in dB (rms), e.g. "1 bar" (default 1 Pa).
    #[arg(long, value_name = "PRESSURE")]
    db_ref: Option<String>,
    /// How close to a harmonic band a resonance counts as "near" (default 10%).
    #[arg(long, value_name = "PERCENT")]
    margin: Option<String>,
    #[command(flatten)]
    bands: super::bands::BandArgs,
}

pub fn run(args: ReportArgs) -> anyhow::Result<()> {
    let out = check_output("--out", &args.out, &["html", "htm"])?;
    let db_ref_pa = common::db_ref_option(args.db_ref.as_deref())?;
    let harmonics = common::harmonics_option(args.harmonics)?;
    let margin = match &args.margin {
        Some(text) => (ranges::parse_fraction("--margin", text)?, Origin::Request),
        None => (0.1, Origin::Default),
    };
    let file = match &args.file {
        Some(path) => io::load_circuit_file(path)?,
        None => io::parse_circuit_file(demo::DEMO_CIRCUIT, demo::DEMO_NAME)?,
    };
    let mut outputs = Outputs::plan(&[("--out", Some(out.as_path()))])?;
    let request = ReportRequest {
        harmonics,
        db_ref_pa,
        margin,
        bands: args.bands.request()?,
    };
    let progress = Progress::new(0, "report");
    let result = report(&file, &request, &mut |done, total| {
        progress.set_of(done, total);
    })?;
    progress.finish();
    common::print_warnings(&result.warnings);
    let html = ripline::render::report::html(&result, &file.circuit)
        .context("drawing the report's charts")?;
    outputs.bytes(&out, html.as_bytes())?;
    outputs.commit()?;
    common::print(|o| {
        use std::io::Write;
        writeln!(
            o,
            "ripline report: {} → {} ({} warning{}, {} bytes; input SHA-256 {})",
            result.subject.file,
            out.display(),
            result.warnings.len(),
            if result.warnings.len() == 1 { "" } else { "s" },
            html.len(),
            result.input_sha256
        )
    })?;
    // as `assess`: the report is complete, the exit code says a limit
    // failed (3) or, with --bands, a verdict is uncertain (4)
    if let Some(a) = result
        .assessment
        .as_ref()
        .filter(|a| a.outcome() == ripline::results::assess::Outcome::Uncertain)
    {
        let n = a.assessment.verdicts.len();
        return Err(common::LimitsUncertain(format!(
            "{} of {n} verdicts UNCERTAIN (see the report's conclusion)",
            (0..n)
                .filter(|&i| a.status(i) == ripline::results::assess::Status::Uncertain)
                .count()
        ))
        .into());
    }
    if let Some(a) = result
        .assessment
        .as_ref()
        .filter(|a| a.outcome() == ripline::results::assess::Outcome::Fail)
    {
        let n = a.assessment.verdicts.len();
        return Err(LimitsExceeded(format!(
            "{} of {n} limits exceeded (see the report's conclusion)",
            (0..n)
                .filter(|&i| a.status(i) == ripline::results::assess::Status::Fail)
                .count()
        ))
        .into());
    }
    Ok(())
}

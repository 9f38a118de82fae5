//! `ripline fit BENCH_FILE`: the pump's source flow ripple and source
//! impedance from bench records, with uncertainties and warnings.

use super::common::{self, UsageError};
use anyhow::Context;
use clap::Args;
use indicatif::{ProgressBar, ProgressStyle};
use ripline::estimate::bench::{Bench, SpeedOfSound};
use ripline::estimate::fit::{Estimate, FitReport, HarmonicResult};
use ripline::estimate::{FitOptions, Observer, fit};
use ripline::io::source_file::{PumpSource, SourceHarmonic, write_source_file};
use ripline::plot;
use ripline::units::PressureDisplay;
use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};

#[derive(Debug, Args)]
pub struct FitArgs {
    /// Bench file (YAML).
    file: PathBuf,
    /// Number of harmonics estimated (overrides the file; default 10).
    #[arg(long, value_name = "N")]
    harmonics: Option<u32>,
    /// Monte Carlo draws for the uncertainties (0: none).
    #[arg(long, value_name = "N", default_value_t = 200)]
    draws: usize,
    /// Seed of the Monte Carlo generator.
    #[arg(long, value_name = "N", default_value_t = 1)]
    seed: u64,
    /// Write the estimates as CSV (SI units, peak amplitudes).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write a pump source file that circuits read through `pump.source_file`.
    #[arg(long, value_name = "FILE")]
    source_out: Option<PathBuf>,
    /// Plot amplitude and phase of Qs and Zs against frequency (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
}

/// Most Monte Carlo draws: the relative standard error of a standard
/// deviation estimated from M normal draws is about 1/√(2(M−1)), 0.5 % at
/// this M, far below what the uncertainties are needed to; each draw costs
/// about a millisecond.
pub const MAX_DRAWS: usize = 20_000;

/// Header of the `--csv` table.
pub const FIT_HEADER: &str = "harmonic,frequency_hz,flow_amplitude_m3s,flow_phase_deg,impedance_amplitude_pa_s_m3,impedance_phase_deg,flow_uncertainty_m3s,impedance_uncertainty_pa_s_m3";

/// A progress bar on standard error when it is a terminal; silent otherwise.
struct Progress(Option<ProgressBar>);

impl Observer for Progress {
    fn stage(&mut self, label: &str, total: u64) {
        if let Some(old) = self.0.take() {
            old.finish_and_clear();
        }
        if std::io::stderr().is_terminal() {
            let bar = ProgressBar::new(total);
            if let Ok(style) = ProgressStyle::with_template("{msg} [{bar:30}] {pos}/{len}") {
                bar.set_style(style.progress_chars("=> "));
            }
            bar.set_message(label.to_string());
            self.0 = Some(bar);
        }
    }
    fn advance(&mut self, steps: u64) {
        if let Some(b) = &self.0 {
            b.inc(steps);
        }
    }
    fn finish(&mut self) {
        if let Some(b) = self.0.take() {
            b.finish_and_clear();
        }
    }
}

pub fn run(args: FitArgs) -> anyhow::Result<()> {
    let out = |o: &Option<PathBuf>, name: &str, ext: &[&str]| {
        o.as_deref()
            .map(|p| common::check_output(name, p, ext))
            .transpose()
    };
    if args.draws > MAX_DRAWS {
        return Err(UsageError(format!(
            "--draws must be at most {MAX_DRAWS} (the uncertainties are then known to 0.5 %), found {}",
            args.draws
        ))
        .into());
    }
    let csv_path = out(&args.csv, "--csv", &["csv"])?;
    let source_path = out(&args.source_out, "--source-out", &["yaml", "yml"])?;
    let plot_path = out(&args.plot, "--plot", &["svg", "png"])?;
    let mut bench = ripline::io::bench_file::load_bench(&args.file)?;
    if let Some(n) = args.harmonics {
        if !(1..=50).contains(&n) {
            return Err(
                UsageError(format!("--harmonics must be between 1 and 50, found {n}")).into(),
            );
        }
        bench.harmonics = n;
    }
    let records: Vec<&Path> = bench.conditions.iter().map(|c| c.data.path()).collect();
    let mut outputs = common::plan_outputs(
        &records,
        &[
            ("--csv", csv_path.as_deref()),
            ("--source-out", source_path.as_deref()),
            ("--plot", plot_path.as_deref()),
        ],
        false,
    )?;
    let mut progress = Progress(None);
    let mut data = Vec::with_capacity(bench.conditions.len());
    for cond in &bench.conditions {
        data.push(ripline::io::records::load_condition(
            &bench,
            cond,
            &mut progress,
        )?);
    }
    let options = FitOptions {
        draws: args.draws,
        seed: args.seed,
    };
    let report = fit(&bench, &data, &options, &mut progress)
        .map_err(|e| UsageError(format!("{}: {e}", args.file.display())))?;
    progress.finish();
    if report.harmonics.is_empty() {
        for w in &report.warnings {
            eprintln!("warning: {w}");
        }
        anyhow::bail!("{}: no harmonic could be estimated", args.file.display());
    }
    ensure_finite(&report)?;

    if let Some(path) = &csv_path {
        let mut bytes = Vec::new();
        write_csv(&report, &mut bytes)?;
        outputs
            .stage_bytes(path, &bytes)
            .with_context(|| format!("writing {}", path.display()))?;
    }
    if let Some(path) = &source_path {
        let mut bytes = Vec::new();
        write_source_file(
            &source_of(&report),
            &mut bytes,
            &format!(
                "estimated by ripline fit from {} ({} method); uncertainties are standard uncertainties of the amplitudes",
                args.file.display(),
                report.method.name()
            ),
        )?;
        outputs
            .stage_bytes(path, &bytes)
            .with_context(|| format!("writing {}", path.display()))?;
    }
    if let Some(path) = &plot_path {
        let charts = charts(&report, bench.title.as_deref());
        outputs
            .stage_with(path, |tmp| plot::stacked_line_charts(tmp, &charts))
            .with_context(|| format!("drawing {}", path.display()))?;
    }
    for w in &report.warnings {
        eprintln!("warning: {w}");
    }
    common::commit(outputs)?;
    print_report(&args.file, &bench, &report)?;
    Ok(())
}

fn ensure_finite(report: &FitReport) -> anyhow::Result<()> {
    for h in &report.harmonics {
        for (what, e) in [
            ("flow ripple", &h.flow),
            ("source impedance", &h.impedance),
            ("anechoic ripple", &h.anechoic),
            ("blocked ripple", &h.blocked),
        ] {
            let u_ok = e
                .uncertainty
                .is_none_or(|u| u.amplitude.is_finite() && u.phase_rad.is_finite());
            if !(e.value.is_finite() && u_ok) {
                anyhow::bail!(
                    "the {what} of harmonic {} ({:.2} Hz) is not a finite number",
                    h.order,
                    h.freq_hz
                );
            }
        }
    }
    Ok(())
}

fn u_text(u: Option<f64>) -> String {
    u.map_or_else(String::new, |u| format!("{u:e}"))
}

fn write_csv(report: &FitReport, out: &mut Vec<u8>) -> anyhow::Result<()> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(FIT_HEADER.split(','))?;
    for h in &report.harmonics {
        w.write_record([
            h.order.to_string(),
            format!("{}", h.freq_hz),
            format!("{:e}", h.flow.value.norm()),
            format!("{}", h.flow.value.arg().to_degrees()),
            format!("{:e}", h.impedance.value.norm()),
            format!("{}", h.impedance.value.arg().to_degrees()),
            u_text(h.flow.uncertainty.map(|u| u.amplitude)),
            u_text(h.impedance.uncertainty.map(|u| u.amplitude)),
        ])?;
    }
    w.flush()?;
    Ok(())
}

fn source_of(report: &FitReport) -> PumpSource {
    PumpSource {
        name: report.pump.clone(),
        speed_rev_s: report.speed_rev_s,
        pumping_elements: report.pumping_elements,
        harmonics: report
            .harmonics
            .iter()
            .map(|h| SourceHarmonic {
                order: h.order,
                flow: h.flow.value,
                impedance: h.impedance.value,
                flow_uncertainty: h.flow.uncertainty.map(|u| u.amplitude),
                impedance_uncertainty: h.impedance.uncertainty.map(|u| u.amplitude),
            })
            .collect(),
    }
}

fn pm(e: &Estimate, scale: f64, prec: usize) -> (String, String) {
    let a = e.value.norm() / scale;
    let amp = match e.uncertainty {
        Some(u) => format!("{a:.prec$e} ± {:.1e}", u.amplitude / scale),
        None => format!("{a:.prec$e}"),
    };
    let ph = match e.uncertainty {
        Some(u) => format!(
            "{:.1} ± {:.1}",
            e.value.arg().to_degrees(),
            u.phase_rad.to_degrees()
        ),
        None => format!("{:.1}", e.value.arg().to_degrees()),
    };
    (amp, ph)
}

fn bar_pm(e: &Estimate) -> String {
    match e.uncertainty {
        Some(u) => format!(
            "{} ± {}",
            PressureDisplay(e.value.norm()),
            PressureDisplay(u.amplitude)
        ),
        None => PressureDisplay(e.value.norm()).to_string(),
    }
}

fn print_report(file: &Path, bench: &Bench, report: &FitReport) -> anyhow::Result<()> {
    let mut out = std::io::stdout().lock();
    writeln!(out, "ripline fit: {}", file.display())?;
    if let Some(t) = &bench.title {
        writeln!(out, "bench: {t}")?;
    }
    writeln!(
        out,
        "pump `{}`: {:.1} rpm measured ({:.1} rpm stated) × {} pumping elements = pumping frequency {:.2} Hz",
        report.pump,
        report.speed_rev_s * 60.0,
        bench.pump.speed_rev_s * 60.0,
        report.pumping_elements,
        report.pumping_frequency_hz()
    )?;
    writeln!(
        out,
        "method: {}, {} conditions, {} transducers",
        report.method.name(),
        bench.conditions.len(),
        bench.transducers.len()
    )?;
    let c = &report.speed_of_sound;
    let source = match c.source {
        SpeedOfSound::InSitu => "estimated in situ",
        SpeedOfSound::Fixed(_) => "as stated",
        SpeedOfSound::FromFluid => "from the fluid and the wall",
    };
    match c.estimate.uncertainty {
        Some(u) => writeln!(
            out,
            "speed of sound: {:.2} ± {:.2} m/s ({source})",
            c.estimate.value, u
        )?,
        None => writeln!(
            out,
            "speed of sound: {:.2} m/s ({source})",
            c.estimate.value
        )?,
    }
    for ci in &report.conditions {
        let snr = ci.snr_db.iter().flatten().copied().reduce(f64::min);
        write!(
            out,
            "condition `{}`: pumping frequency {:.3} Hz",
            ci.name, ci.pumping_frequency_hz
        )?;
        if let Some(f) = ci.secondary_fundamental_hz {
            write!(out, ", secondary source {f:.3} Hz")?;
        }
        match snr {
            Some(s) if s < 200.0 => writeln!(out, ", lowest harmonic SNR {s:.1} dB")?,
            Some(_) => writeln!(out, ", lowest harmonic SNR above 200 dB")?,
            None => writeln!(out)?,
        }
    }
    writeln!(
        out,
        "amplitudes are peak values; ± standard uncertainties (k = 1, {} Monte Carlo draws); phases in degrees against the shaft reference; * = flagged (see the warnings)",
        report.draws
    )?;
    writeln!(out)?;
    writeln!(
        out,
        "{:>3} {:>9}  {:>22} {:>13}  {:>22} {:>13}  {:>22}  {:>22}",
        "k", "freq Hz", "Qs m³/s", "phase", "Zs Pa·s/m³", "phase", "anechoic", "blocked"
    )?;
    for h in &report.harmonics {
        let (qa, qp) = pm(&h.flow, 1.0, 4);
        let (za, zp) = pm(&h.impedance, 1.0, 4);
        writeln!(
            out,
            "{:>3} {:>9.2}  {:>22} {:>13}  {:>22} {:>13}  {:>22}  {:>22}{}",
            h.order,
            h.freq_hz,
            qa,
            qp,
            za,
            zp,
            bar_pm(&h.anechoic),
            bar_pm(&h.blocked),
            if h.flags.is_empty() { "" } else { " *" }
        )?;
    }
    let rms = |s: &ripline::estimate::fit::Scalar| match s.uncertainty {
        Some(u) => format!("{} ± {}", PressureDisplay(s.value), PressureDisplay(u)),
        None => PressureDisplay(s.value).to_string(),
    };
    writeln!(out)?;
    writeln!(
        out,
        "overall rms: anechoic {}, blocked {} (reference line Zc at the estimated speed of sound)",
        rms(&report.anechoic_rms_pa),
        rms(&report.blocked_rms_pa)
    )?;
    out.flush()?;
    Ok(())
}

fn series(
    name: &str,
    hs: &[HarmonicResult],
    value: impl Fn(&HarmonicResult) -> (f64, Option<f64>),
) -> plot::XySeries {
    let pts: Vec<(f64, f64, Option<f64>)> = hs
        .iter()
        .map(|h| {
            let (v, u) = value(h);
            (h.freq_hz, v, u)
        })
        .collect();
    let bars = pts.iter().all(|p| p.2.is_some());
    plot::XySeries {
        name: name.into(),
        points: pts.iter().map(|p| (p.0, p.1)).collect(),
        error_bars: bars.then(|| {
            pts.iter()
                .map(|p| (p.1 - p.2.unwrap_or(0.0), p.1 + p.2.unwrap_or(0.0)))
                .collect()
        }),
        style: plot::SeriesStyle::LineAndPoints,
        color: None,
    }
}

fn charts(report: &FitReport, title: Option<&str>) -> Vec<plot::LineChart> {
    let hs = &report.harmonics;
    let name = title.unwrap_or(&report.pump);
    let amp = |e: &Estimate, s: f64| (e.value.norm() / s, e.uncertainty.map(|u| u.amplitude / s));
    let ph = |e: &Estimate| {
        (
            e.value.arg().to_degrees(),
            e.uncertainty.map(|u| u.phase_rad.to_degrees()),
        )
    };
    // amplitudes cannot be negative: their error bars are cut at zero
    let chart = |t: String, y: &str, s: plot::XySeries, log_y: bool| plot::LineChart {
        title: t,
        x_label: "frequency (Hz)".into(),
        y_label: y.into(),
        series: vec![s],
        log_y,
        y_floor: (!log_y && !y.starts_with("phase")).then_some(0.0),
        ..Default::default()
    };
    // phases of separate harmonics are points, not a curve
    let points = |s: plot::XySeries| plot::XySeries {
        style: plot::SeriesStyle::Points,
        ..s
    };
    vec![
        chart(
            format!(
                "Source flow ripple — {name} ({:.0} rpm, f_p = {:.1} Hz); error bars ± standard uncertainty",
                report.speed_rev_s * 60.0,
                report.pumping_frequency_hz()
            ),
            "|Qs|, peak (L/min)",
            series("flow ripple", hs, |h| amp(&h.flow, 1.0 / 60_000.0)),
            false,
        ),
        chart(
            String::new(),
            "phase of Qs (deg)",
            points(series("flow ripple phase", hs, |h| ph(&h.flow))),
            false,
        ),
        chart(
            "Source impedance".into(),
            "|Zs| (Pa·s/m³)",
            series("source impedance", hs, |h| amp(&h.impedance, 1.0)),
            true,
        ),
        chart(
            String::new(),
            "phase of Zs (deg)",
            points(series("impedance phase", hs, |h| ph(&h.impedance))),
            false,
        ),
    ]
}

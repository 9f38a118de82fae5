//! `ripline solve [FILE]`: the pressure ripple at every measurement point.

use super::common::{self, UsageError};
use anyhow::Context;
use clap::Args;
use ripline::analysis::ripple::{RippleReport, harmonic_ripple};
use ripline::io::csv_out::write_ripple_csv;
use ripline::io::output::StagedOutputs;
use ripline::network::Plan;
use ripline::plot;
use ripline::units::{Dimension, PressureDisplay};
use std::io::Write;
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct SolveArgs {
    /// Circuit file (YAML); the built-in demo circuit when omitted.
    file: Option<PathBuf>,
    /// Number of harmonics of the pumping frequency (overrides the file).
    #[arg(long, value_name = "N")]
    harmonics: Option<u32>,
    /// Pump shaft speed, in rpm unless a unit is given (overrides the file;
    /// a harmonic table is scaled in proportion to speed).
    #[arg(long, value_name = "RPM")]
    speed: Option<String>,
    /// Reference pressure for levels in dB (rms), e.g. "1 Pa" or "1 bar".
    #[arg(long, value_name = "PRESSURE", default_value = "1 Pa")]
    db_ref: String,
    /// Write the harmonic table as CSV (point,harmonic,frequency_hz,amplitude_pa,phase_deg).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write a bar chart of the harmonic amplitudes (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
}

pub fn run(args: SolveArgs) -> anyhow::Result<()> {
    let p_ref = common::cli_quantity("--db-ref", &args.db_ref, Dimension::Pressure, "Pa")?;
    if p_ref <= 0.0 {
        return Err(UsageError("--db-ref must be a positive pressure".into()).into());
    }
    let (csv_path, plot_path) =
        common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    let mut loaded = common::load_circuit(args.file.as_deref())?;
    let circuit = &mut loaded.circuit;
    if let Some(n) = args.harmonics {
        if !(1..=200).contains(&n) {
            return Err(
                UsageError(format!("--harmonics must be between 1 and 200, found {n}")).into(),
            );
        }
        circuit.harmonics = n;
    }
    if let Some(speed) = &args.speed {
        let rev_s = common::cli_quantity("--speed", speed, Dimension::ShaftSpeed, "rpm")?;
        if !(rev_s > 0.0 && rev_s <= 1000.0) {
            return Err(UsageError(format!(
                "--speed must be between 0 and 60000 rpm, found {:.1} rpm",
                rev_s * 60.0
            ))
            .into());
        }
        for pump in &mut loaded.circuit.pumps {
            pump.speed_rev_s = rev_s;
        }
        // mean flows scale with speed (turbulent friction)
        ripline::meanflow::resolve_line_mean_flows(&mut loaded.circuit);
    }
    let circuit = &loaded.circuit;
    let top_hz = circuit.pumps[0].pumping_frequency_hz() * f64::from(circuit.harmonics);
    for w in ripline::diagnostics::circuit_warnings(circuit, top_hz) {
        eprintln!("warning: {w}");
    }
    let plan = Plan::compile(circuit).map_err(|e| UsageError(format!("{}: {e}", loaded.source)))?;
    let report = harmonic_ripple(&plan, 0, circuit.harmonics)
        .with_context(|| format!("solving {}", loaded.source))?;
    ensure_finite(&report)?;
    for w in &report.warnings {
        eprintln!("warning: {w}");
    }

    // Every output is prepared before anything is shown or renamed into place.
    let mut outputs = StagedOutputs::new();
    if let Some(path) = &csv_path {
        common::stage_csv(&mut outputs, path, |buf| write_ripple_csv(&report, buf))?;
    }
    if let Some(path) = &plot_path {
        let chart = bar_chart(&report, circuit.title.as_deref());
        outputs
            .stage_with(path, |tmp| plot::grouped_bar_chart(tmp, &chart))
            .with_context(|| format!("drawing {}", path.display()))?;
    }
    print_report(&loaded.source, circuit, &report, p_ref)?;
    outputs
        .commit()
        .context("moving the output files into place")?;
    Ok(())
}

/// Refuses to print a result that is not a finite number.
fn ensure_finite(report: &RippleReport) -> anyhow::Result<()> {
    for tap in &report.taps {
        for h in &tap.harmonics {
            if !(h.pressure.re.is_finite() && h.pressure.im.is_finite()) {
                anyhow::bail!(
                    "the ripple at `{}`, harmonic {} ({:.3} Hz), is not a finite number",
                    tap.name,
                    h.order,
                    h.freq_hz
                );
            }
        }
    }
    Ok(())
}

fn print_report(
    source: &str,
    circuit: &ripline::Circuit,
    report: &RippleReport,
    p_ref: f64,
) -> anyhow::Result<()> {
    let pump = &circuit.pumps[0];
    let mut out = std::io::stdout().lock();
    common::write_heading(&mut out, "solve", source, circuit)?;
    writeln!(
        out,
        "pump `{}` at node `{}`: {:.0} rpm × {} pumping elements = pumping frequency {:.2} Hz",
        report.pump,
        circuit.nodes[pump.node].name,
        report.speed_rev_s * 60.0,
        pump.pumping_elements,
        report.pumping_frequency_hz
    )?;
    writeln!(
        out,
        "amplitudes are peak values; overall levels are rms (dB re {})",
        PressureDisplay(p_ref)
    )?;
    for tap in &report.taps {
        writeln!(out)?;
        writeln!(out, "point `{}`", tap.name)?;
        writeln!(
            out,
            "  {:>8}  {:>12}  {:>14}  {:>9}",
            "harmonic", "frequency Hz", "amplitude", "phase deg"
        )?;
        for h in &tap.harmonics {
            writeln!(
                out,
                "  {:>8}  {:>12.2}  {:>14}  {:>9.1}",
                h.order,
                h.freq_hz,
                PressureDisplay(h.pressure.norm()).to_string(),
                h.pressure.arg().to_degrees()
            )?;
        }
        let rms = tap.rms_pa();
        let level = if rms > 0.0 {
            format!("{:.1} dB", tap.level_db(p_ref))
        } else {
            "no ripple".to_string()
        };
        writeln!(
            out,
            "  overall: {} rms, {level}, {} peak-to-peak",
            PressureDisplay(rms),
            PressureDisplay(tap.peak_to_peak_pa())
        )?;
    }
    out.flush()?;
    Ok(())
}

fn bar_chart(report: &RippleReport, title: Option<&str>) -> plot::BarChart {
    let orders: Vec<u32> = report
        .taps
        .first()
        .map(|t| t.harmonics.iter().map(|h| h.order).collect())
        .unwrap_or_default();
    plot::BarChart {
        title: format!(
            "Pressure ripple per harmonic — {} ({:.0} rpm, f_p = {:.1} Hz)",
            title.unwrap_or(&report.pump),
            report.speed_rev_s * 60.0,
            report.pumping_frequency_hz
        ),
        x_label: "harmonic of the pumping frequency".into(),
        y_label: "pressure ripple amplitude, peak (bar)".into(),
        categories: orders.iter().map(|k| k.to_string()).collect(),
        series: report
            .taps
            .iter()
            .map(|t| plot::Series {
                name: t.name.clone(),
                values: t
                    .harmonics
                    .iter()
                    .map(|h| h.pressure.norm() / 1e5)
                    .collect(),
            })
            .collect(),
        log_y: false,
        ..Default::default()
    }
}

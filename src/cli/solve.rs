//! `ripline solve [FILE]`: the pressure ripple at every measurement point.

use super::common::{self, UsageError};
use anyhow::Context;
use clap::Args;
use ripline::analysis::ripple::{RippleReport, shaft_ripple};
use ripline::io::csv_out::write_sources_ripple_csv;
use ripline::network::Plan;
use ripline::plot;
use ripline::source::{Shaft, shafts};
use ripline::units::PressureDisplay;
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
    /// The shaft `--speed` sets (a `shaft` name, or a pump's name); default:
    /// the first pump's.
    #[arg(long, value_name = "NAME", requires = "speed")]
    shaft: Option<String>,
    /// Reference pressure for levels in dB (rms), e.g. "1 Pa" or "1 bar".
    #[arg(long, value_name = "PRESSURE", default_value = "1 Pa")]
    db_ref: String,
    /// Write the harmonic table as CSV (point,harmonic,frequency_hz,amplitude_pa,phase_deg;
    /// with pumps on several shafts, a leading `source` column).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write a bar chart of the harmonic amplitudes (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
}

pub fn run(args: SolveArgs) -> anyhow::Result<()> {
    let common::Prepared {
        p_ref,
        csv: csv_path,
        plot: plot_path,
        mut loaded,
    } = common::prepare(
        &args.db_ref,
        args.csv.as_deref(),
        args.plot.as_deref(),
        args.file.as_deref(),
        args.harmonics,
    )?;
    if let Some(speed) = &args.speed {
        let rev_s = common::speed_option("--speed", speed)?;
        common::pick_shaft(&loaded.circuit, args.shaft.as_deref())?
            .set_speed(&mut loaded.circuit.pumps, rev_s);
        // mean flows scale with speed (turbulent friction)
        ripline::meanflow::resolve_line_mean_flows(&mut loaded.circuit);
    }
    let mut outputs = common::plan_csv_and_plot(csv_path.as_deref(), plot_path.as_deref())?;
    let circuit = &loaded.circuit;
    let shafts = shafts(&circuit.pumps);
    let top_hz = circuit
        .pumps
        .iter()
        .map(|p| p.pumping_frequency_hz() * f64::from(circuit.harmonics))
        .fold(0.0, f64::max);
    for w in ripline::diagnostics::circuit_warnings(circuit, top_hz) {
        eprintln!("warning: {w}");
    }
    let plan = Plan::compile(circuit).map_err(|e| UsageError(format!("{}: {e}", loaded.source)))?;
    let reports = shafts
        .iter()
        .map(|s| shaft_ripple(&plan, s, circuit.harmonics, s.speed_rev_s(&circuit.pumps)))
        .collect::<Result<Vec<_>, _>>()
        .with_context(|| format!("solving {}", loaded.source))?;
    for report in &reports {
        ensure_finite(report)?;
        for w in &report.warnings {
            eprintln!("warning: {w}");
        }
    }

    // Every output is prepared before anything is shown or renamed into place.
    if let Some(path) = &csv_path {
        common::stage_csv(&mut outputs, path, |buf| {
            write_sources_ripple_csv(&reports, buf)
        })?;
    }
    if let Some(path) = &plot_path {
        let chart = bar_chart(&reports, circuit.title.as_deref());
        outputs
            .stage_with(path, |tmp| plot::grouped_bar_chart(tmp, &chart))
            .with_context(|| format!("drawing {}", path.display()))?;
    }
    common::commit(outputs)?;
    print_report(&loaded.source, circuit, &shafts, &reports, p_ref)?;
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
    shafts: &[Shaft],
    reports: &[RippleReport],
    p_ref: f64,
) -> anyhow::Result<()> {
    let mut out = std::io::stdout().lock();
    common::write_heading(&mut out, "solve", source, circuit)?;
    for pump in &circuit.pumps {
        writeln!(
            out,
            "pump `{}` at node `{}`: {:.0} rpm × {} pumping elements = pumping frequency {:.2} Hz",
            pump.name,
            circuit.nodes[pump.node].name,
            pump.speed_rev_s * 60.0,
            pump.pumping_elements,
            pump.pumping_frequency_hz()
        )?;
    }
    let several = reports.len() > 1;
    for (shaft, report) in shafts.iter().zip(reports) {
        if shaft.pumps.len() > 1 {
            writeln!(
                out,
                "shaft `{}`: its pumps are solved together; harmonics are orders of the shaft fundamental {:.2} Hz",
                shaft.name, report.pumping_frequency_hz
            )?;
        }
    }
    if several {
        writeln!(
            out,
            "pumps on different shafts are solved one shaft at a time and add up in power in the overall level"
        )?;
    }
    writeln!(
        out,
        "amplitudes are peak values; overall levels are rms (dB re {})",
        common::reference_text(p_ref)
    )?;
    for (i, tap) in reports[0].taps.iter().enumerate() {
        writeln!(out)?;
        writeln!(out, "point `{}`", tap.name)?;
        for report in reports {
            let tap = &report.taps[i];
            if several {
                writeln!(out, "  source `{}`", report.pump)?;
            }
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
            writeln!(
                out,
                "  {}: {} rms, {}, {} peak-to-peak",
                if several { "source overall" } else { "overall" },
                PressureDisplay(rms),
                common::level_text(rms, p_ref),
                PressureDisplay(tap.peak_to_peak_pa())
            )?;
        }
        if several {
            let rms = reports
                .iter()
                .map(|r| r.taps[i].rms_pa().powi(2))
                .sum::<f64>()
                .sqrt();
            writeln!(
                out,
                "  overall, all sources: {} rms, {}",
                PressureDisplay(rms),
                common::level_text(rms, p_ref)
            )?;
        }
    }
    out.flush()?;
    Ok(())
}

fn bar_chart(reports: &[RippleReport], title: Option<&str>) -> plot::BarChart {
    let several = reports.len() > 1;
    let categories: Vec<String> = reports
        .iter()
        .flat_map(|r| {
            r.taps.first().into_iter().flat_map(move |t| {
                t.harmonics.iter().map(move |h| {
                    if several {
                        format!("{} {}", r.pump, h.order)
                    } else {
                        h.order.to_string()
                    }
                })
            })
        })
        .collect();
    let first = &reports[0];
    let title = if several {
        format!(
            "Pressure ripple per harmonic — {}",
            title.unwrap_or(&first.pump)
        )
    } else {
        format!(
            "Pressure ripple per harmonic — {} ({:.0} rpm, f_p = {:.1} Hz)",
            title.unwrap_or(&first.pump),
            first.speed_rev_s * 60.0,
            first.pumping_frequency_hz
        )
    };
    plot::BarChart {
        title,
        x_label: if several {
            "source and harmonic".into()
        } else {
            "harmonic of the pumping frequency".into()
        },
        y_label: "pressure ripple amplitude, peak (bar)".into(),
        categories,
        series: (0..first.taps.len())
            .map(|i| plot::Series {
                name: first.taps[i].name.clone(),
                values: reports
                    .iter()
                    .flat_map(|r| r.taps[i].harmonics.iter().map(|h| h.pressure.norm() / 1e5))
                    .collect(),
            })
            .collect(),
        // a log axis keeps the higher harmonics (tens of dB down) visible
        log_y: true,
        ..Default::default()
    }
}

//! `ripline response FILE`: frequency response, resonances, and which pump
//! harmonics cross them over the operating speed range.

use super::common::{self, UsageError};
use super::ranges::{self, Progress};
use anyhow::Context;
use clap::Args;
use ripline::analysis::response::{
    Coverage, FrequencyResponse, HarmonicBand, PeakSettings, Resonance, crossings, find_resonances,
    frequency_response, log_grid,
};
use ripline::io::csv_response::{load_impedance_point, write_response_csv};
use ripline::network::Plan;
use ripline::plot;
use ripline::units::PressureDisplay;
use std::io::Write;
use std::path::PathBuf;

/// Pa per m³/s in one bar per L/min.
const BAR_PER_LPM: f64 = 1e5 * 60_000.0;

#[derive(Debug, Args)]
pub struct ResponseArgs {
    #[command(flatten)]
    sweep: ranges::SweepArgs,
    /// Circuit file (YAML); the built-in demo circuit when omitted.
    file: Option<PathBuf>,
    /// How close to a harmonic band a resonance counts as "near".
    #[arg(long, value_name = "PERCENT", default_value = "10%")]
    margin: String,
    /// Write the response as CSV (point,frequency_hz,amplitude_pa_per_m3s,phase_deg).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Plot the response with the harmonic bands and resonances (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
}

pub fn run(args: ResponseArgs) -> anyhow::Result<()> {
    let csv_path = ranges::csv_output("--csv", args.csv.as_deref())?;
    let plot_path = ranges::plot_output(args.plot.as_deref())?;
    let margin = ranges::parse_fraction("--margin", &args.margin)?;
    let loaded = common::load_circuit(args.file.as_deref())?;
    let mut outputs = common::plan_csv_and_plot(csv_path.as_deref(), plot_path.as_deref())?;
    let circuit = &loaded.circuit;
    let ranges::Sweep {
        pump_index,
        speeds,
        band,
        points,
    } = ranges::sweep(circuit, &args.sweep)?;
    let pump = &circuit.pumps[pump_index];
    let z = f64::from(pump.pumping_elements);
    let plan = Plan::compile(circuit).map_err(|e| UsageError(format!("{}: {e}", loaded.source)))?;
    let freqs = log_grid(band.0, band.1, points);
    let progress = Progress::new(freqs.len(), "frequency response");
    let response = frequency_response(&plan, pump_index, &freqs, &mut |i| progress.set(i))
        .with_context(|| format!("solving {}", loaded.source))?;
    progress.finish();
    let resonances = find_resonances(&plan, pump_index, &response, PeakSettings::default())
        .with_context(|| format!("refining the resonances of {}", loaded.source))?;
    // Only harmonics the pump's source flow has can excite a resonance.
    let (bands, silent) = ranges::excited_bands(pump, &speeds, circuit.harmonics);

    if let Some(path) = &csv_path {
        common::stage_csv(&mut outputs, path, |buf| write_response_csv(&response, buf))?;
    }
    if let Some(path) = &plot_path {
        let charts = charts(
            &response,
            &resonances,
            &bands,
            margin,
            circuit.title.as_deref(),
        );
        outputs
            .stage_with(path, |tmp| plot::stacked_line_charts(tmp, &charts))
            .with_context(|| format!("drawing {}", path.display()))?;
    }
    let load = load_at_harmonics(&plan, pump_index)?;
    common::commit(outputs)?;
    let mut out = std::io::stdout().lock();
    writeln!(out, "ripline response: {}", loaded.source)?;
    if let Some(title) = &circuit.title {
        writeln!(out, "circuit: {title}")?;
    }
    writeln!(
        out,
        "pump `{}` at node `{}`, {} pumping elements",
        pump.name, circuit.nodes[pump.node].name, pump.pumping_elements,
    )?;
    writeln!(
        out,
        "speed range: {}; pumping frequency {}",
        speeds.source,
        if speeds.is_single() {
            format!("{:.2} Hz", z * speeds.rev_s.0)
        } else {
            format!("{:.2}–{:.2} Hz", z * speeds.rev_s.0, z * speeds.rev_s.1)
        }
    )?;
    writeln!(
        out,
        "band {:.2}–{:.2} Hz, {} log-spaced frequencies; response = pressure per unit source flow (peak/peak)",
        band.0, band.1, points
    )?;
    writeln!(out)?;
    print_resonances(&mut out, &resonances)?;
    writeln!(out)?;
    print_bands(&mut out, &bands, &silent, &speeds)?;
    writeln!(out)?;
    print_verdicts(&mut out, pump, &resonances, &bands, margin)?;
    writeln!(out)?;
    print_load(&mut out, pump, &load, &response)?;
    out.flush()?;
    Ok(())
}

fn level_text(r: &Resonance) -> String {
    let base = format!(
        "{:.4e} Pa·s/m³ = {:.3} bar per L/min",
        r.level,
        r.level / BAR_PER_LPM
    );
    if r.unbounded {
        format!("≥ {base} (undamped: lossless model)")
    } else {
        base
    }
}

fn print_resonances(out: &mut impl Write, resonances: &[Resonance]) -> std::io::Result<()> {
    if resonances.is_empty() {
        return writeln!(
            out,
            "resonances: none in the band (no peak with 3 dB prominence)"
        );
    }
    writeln!(
        out,
        "resonances (peaks with at least 3 dB prominence, refined by golden-section search; Q from the half-power points):"
    )?;
    writeln!(
        out,
        "  {:>2}  {:>12}  {:>8}  {:<52}  highest at (also seen at)",
        "#", "frequency Hz", "Q", "peak level"
    )?;
    for (i, r) in resonances.iter().enumerate() {
        let q = match r.quality {
            Some(q) => format!("{q:.1}"),
            None => "—".into(),
        };
        let also: Vec<&str> = r
            .seen_at
            .iter()
            .filter(|n| **n != r.point)
            .map(String::as_str)
            .collect();
        let place = if also.is_empty() {
            format!("`{}`", r.point)
        } else {
            format!("`{}` ({})", r.point, also.join(", "))
        };
        writeln!(
            out,
            "  {:>2}  {:>12.2}  {:>8}  {:<52}  {place}",
            i + 1,
            r.freq_hz,
            q,
            level_text(r)
        )?;
    }
    Ok(())
}

fn print_bands(
    out: &mut impl Write,
    bands: &[HarmonicBand],
    silent: &[HarmonicBand],
    speeds: &ranges::SpeedRange,
) -> std::io::Result<()> {
    writeln!(out, "harmonic bands over {}:", speeds.describe())?;
    if !silent.is_empty() {
        writeln!(
            out,
            "  (left out, no source flow in the pump's table: harmonic {})",
            silent
                .iter()
                .map(|b| b.order.to_string())
                .collect::<Vec<_>>()
                .join(", ")
        )?;
    }
    for b in bands {
        if speeds.is_single() {
            writeln!(out, "  harmonic {:>2}: {:>9.2} Hz", b.order, b.low_hz)?;
        } else {
            writeln!(
                out,
                "  harmonic {:>2}: {:>9.2} – {:>9.2} Hz",
                b.order, b.low_hz, b.high_hz
            )?;
        }
    }
    Ok(())
}

fn print_verdicts(
    out: &mut impl Write,
    pump: &ripline::source::Pump,
    resonances: &[Resonance],
    bands: &[HarmonicBand],
    margin: f64,
) -> std::io::Result<()> {
    writeln!(
        out,
        "verdict (a harmonic band containing a resonance crosses it; one ending within {:.0} % of it is near; ≈ the peak ripple at the crossing, peak level × source flow):",
        margin * 100.0
    )?;
    if resonances.is_empty() {
        return writeln!(out, "  nothing to cross");
    }
    let mut crossed = 0;
    for (i, r) in resonances.iter().enumerate() {
        let list = crossings(r.freq_hz, bands, margin);
        let text = if list.is_empty() {
            "clear".to_string()
        } else {
            list.iter()
                .map(|c| match c.coverage {
                    Coverage::Crossed { speed_rev_s } => {
                        let mut at_speed = pump.clone();
                        at_speed.speed_rev_s = speed_rev_s;
                        let q = at_speed.flow_ripple(c.order).norm();
                        let estimate = if r.unbounded {
                            "unbounded: lossless model".to_string()
                        } else {
                            format!("≈ {} at `{}`", PressureDisplay(r.level * q), r.point)
                        };
                        format!(
                            "CROSSED by harmonic {} at {:.0} rpm ({estimate})",
                            c.order,
                            speed_rev_s * 60.0
                        )
                    }
                    Coverage::Near { gap, speed_rev_s } => format!(
                        "near harmonic {} ({:.1} % away at {:.0} rpm)",
                        c.order,
                        gap * 100.0,
                        speed_rev_s * 60.0
                    ),
                })
                .collect::<Vec<_>>()
                .join("; ")
        };
        if list
            .iter()
            .any(|c| matches!(c.coverage, Coverage::Crossed { .. }))
        {
            crossed += 1;
        }
        writeln!(out, "  {:>2}  {:>10.2} Hz  {text}", i + 1, r.freq_hz)?;
    }
    writeln!(
        out,
        "  {crossed} of {} resonances crossed by a harmonic band",
        resonances.len()
    )
}

/// The impedance the pump sees at each harmonic at its nominal speed:
/// (order, frequency, impedance), `None` at an undamped pole.
fn load_at_harmonics(
    plan: &Plan<'_>,
    pump_index: usize,
) -> anyhow::Result<Vec<(u32, f64, Option<ripline::C64>)>> {
    let circuit = plan.circuit();
    let pump = &circuit.pumps[pump_index];
    let one = ripline::C64::new(1.0, 0.0);
    let mut ws = plan.workspace();
    let mut rows = Vec::new();
    for k in 1..=circuit.harmonics {
        let f = f64::from(k) * pump.pumping_frequency_hz();
        let z = match plan.solve(f, &[(pump.node, one)], &mut ws) {
            Ok(s) => {
                let p = s.node_pressures[pump.node];
                let ys = pump
                    .source_impedance
                    .admittance(2.0 * std::f64::consts::PI * f);
                Some(p / (one - ys * p)).filter(|z| z.is_finite())
            }
            Err(ripline::network::SolveError::Singular { .. }) => None,
            Err(e) => return Err(e).with_context(|| format!("the impedance at harmonic {k}")),
        };
        rows.push((k, f, z));
    }
    Ok(rows)
}

fn print_load(
    out: &mut impl Write,
    pump: &ripline::source::Pump,
    rows: &[(u32, f64, Option<ripline::C64>)],
    response: &FrequencyResponse,
) -> std::io::Result<()> {
    writeln!(
        out,
        "impedance pump `{}` sees at its harmonics ({:.0} rpm); the full curve is in the CSV as `{}`:",
        pump.name,
        pump.speed_rev_s * 60.0,
        load_impedance_point(&response.pump)
    )?;
    writeln!(
        out,
        "  {:>8}  {:>12}  {:>14}  {:>9}",
        "harmonic", "frequency Hz", "|Z| Pa·s/m³", "phase deg"
    )?;
    for &(k, f, z) in rows {
        match z {
            Some(z) => writeln!(
                out,
                "  {:>8}  {:>12.2}  {:>14.4e}  {:>9.1}",
                k,
                f,
                z.norm(),
                z.arg().to_degrees()
            )?,
            None => writeln!(
                out,
                "  {:>8}  {:>12.2}  unbounded (an undamped resonance of a lossless model)",
                k, f
            )?,
        }
    }
    Ok(())
}

fn charts(
    response: &FrequencyResponse,
    resonances: &[Resonance],
    bands: &[HarmonicBand],
    margin: f64,
    title: Option<&str>,
) -> Vec<plot::LineChart> {
    let (x_bands, mut x_markers) = ranges::band_marks(bands);
    // Label the resonances that a harmonic crosses or nears; mark all.
    x_markers.extend(
        resonances
            .iter()
            .filter(|r| !crossings(r.freq_hz, bands, margin).is_empty())
            .map(|r| plot::Marker {
                value: r.freq_hz,
                label: format!("{:.0} Hz", r.freq_hz),
            }),
    );
    // A point held at zero ripple (a tank) has nothing to draw on a log axis.
    let series = response
        .points
        .iter()
        .filter(|p| p.values.iter().any(|v| v.norm() > 0.0))
        .map(|p| plot::XySeries {
            name: p.name.clone(),
            points: response
                .freqs_hz
                .iter()
                .zip(&p.values)
                .map(|(f, v)| (*f, (v.norm() / BAR_PER_LPM).max(1e-300)))
                .collect(),
            ..Default::default()
        })
        .collect();
    let point_markers = resonances
        .iter()
        .map(|r| plot::PointMarker {
            x: r.freq_hz,
            y: r.level / BAR_PER_LPM,
            label: String::new(),
        })
        .collect();
    let top = plot::LineChart {
        title: format!(
            "Response per unit source flow — {}",
            title.unwrap_or(&response.pump)
        ),
        x_label: "frequency (Hz)".into(),
        y_label: "pressure per source flow (bar per L/min)".into(),
        series,
        log_x: true,
        log_y: true,
        x_markers,
        point_markers,
        x_bands: x_bands.clone(),
        ..Default::default()
    };
    let load = plot::LineChart {
        title: format!(
            "Impedance seen by pump {}; shaded: harmonic bands over the speed range",
            response.pump
        ),
        x_label: "frequency (Hz)".into(),
        y_label: "|Z| (Pa·s/m³)".into(),
        series: vec![plot::XySeries {
            name: "load impedance".into(),
            points: response
                .freqs_hz
                .iter()
                .zip(&response.load_impedance)
                .map(|(f, z)| (*f, z.norm().max(1e-300)))
                .collect(),
            ..Default::default()
        }],
        log_x: true,
        log_y: true,
        x_bands,
        ..Default::default()
    };
    vec![top, load]
}

//! `ripline profile [FILE]`: the ripple amplitude along every tube and hose
//! for one pump harmonic (the standing-wave pattern).

use super::common::{self, UsageError};
use anyhow::Context;
use clap::Args;
use ripline::analysis::profile::{RippleProfile, ripple_profile};
use ripline::circuit::TapLocation;
use ripline::io::csv_out::write_profile_csv;
use ripline::network::Plan;
use ripline::plot;
use ripline::units::PressureDisplay;
use std::io::Write;
use std::path::PathBuf;

#[derive(Debug, Args)]
pub struct ProfileArgs {
    /// Circuit file (YAML); the built-in demo circuit when omitted.
    file: Option<PathBuf>,
    /// Harmonic of the pumping frequency to show (1 = the pumping frequency).
    #[arg(long, value_name = "K", default_value_t = 1)]
    harmonic: u32,
    /// Write the profile as CSV (element,position_m,frequency_hz,amplitude_pa,phase_deg).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write a chart of the amplitude along the lines (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
}

pub fn run(args: ProfileArgs) -> anyhow::Result<()> {
    let (csv_path, plot_path) =
        common::csv_and_plot_paths(args.csv.as_deref(), args.plot.as_deref())?;
    if !(1..=200).contains(&args.harmonic) {
        return Err(UsageError(format!(
            "--harmonic must be between 1 and 200, found {}",
            args.harmonic
        ))
        .into());
    }
    let loaded = common::load_circuit(args.file.as_deref())?;
    let mut outputs = common::plan_csv_and_plot(csv_path.as_deref(), plot_path.as_deref())?;
    let circuit = &loaded.circuit;
    let pump = &circuit.pumps[0];
    if pump.flow_ripple(args.harmonic).norm() == 0.0 {
        return Err(UsageError(format!(
            "{}: pump `{}` has no harmonic {} in its flow ripple table (its highest is {})",
            loaded.source,
            pump.name,
            args.harmonic,
            pump.max_order()
        ))
        .into());
    }
    let freq = f64::from(args.harmonic) * pump.pumping_frequency_hz();
    for w in ripline::diagnostics::circuit_warnings(circuit, freq) {
        eprintln!("warning: {w}");
    }
    let plan = Plan::compile(circuit).map_err(|e| UsageError(format!("{}: {e}", loaded.source)))?;
    if circuit.elements.iter().all(|e| e.kind.line().is_none()) {
        return Err(UsageError(format!(
            "{}: the circuit has no tube or hose to show a profile along",
            loaded.source
        ))
        .into());
    }
    let profile = ripple_profile(&plan, 0, args.harmonic)
        .with_context(|| format!("solving {}", loaded.source))?;
    ensure_finite(&profile)?;

    if let Some(path) = &csv_path {
        common::stage_csv(&mut outputs, path, |buf| write_profile_csv(&profile, buf))?;
    }
    if let Some(path) = &plot_path {
        let chart = chart(circuit, &profile);
        outputs
            .stage_with(path, |tmp| plot::line_chart(tmp, &chart))
            .with_context(|| format!("drawing {}", path.display()))?;
    }
    common::commit(outputs)?;
    print_profile(&loaded.source, circuit, &profile)?;
    Ok(())
}

/// Refuses to print a result that is not a finite number.
fn ensure_finite(profile: &RippleProfile) -> anyhow::Result<()> {
    for line in &profile.lines {
        if let Some(p) = line.points.iter().find(|p| !p.pressure.is_finite()) {
            anyhow::bail!(
                "the ripple along `{}` at {:.4} m ({:.3} Hz) is not a finite number",
                line.name,
                p.position_m,
                profile.freq_hz
            );
        }
    }
    Ok(())
}

fn print_profile(
    source: &str,
    circuit: &ripline::Circuit,
    profile: &RippleProfile,
) -> anyhow::Result<()> {
    let pump = &circuit.pumps[0];
    let mut out = std::io::stdout().lock();
    common::write_heading(&mut out, "profile", source, circuit)?;
    writeln!(
        out,
        "pump `{}` at node `{}`: harmonic {} at {:.2} Hz ({:.0} rpm × {} pumping elements)",
        profile.pump,
        circuit.nodes[pump.node].name,
        profile.harmonic,
        profile.freq_hz,
        pump.speed_rev_s * 60.0,
        pump.pumping_elements
    )?;
    writeln!(
        out,
        "amplitudes are peak values; positions are measured from each line's `from` end"
    )?;
    let width = profile
        .lines
        .iter()
        .map(|l| l.name.chars().count())
        .max()
        .unwrap_or(4)
        .max(4);
    writeln!(
        out,
        "  {:<width$}  {:<4}  {:>8}  {:>14} {:>9}  {:>14} {:>9}",
        "line", "kind", "length m", "largest", "at m", "smallest", "at m"
    )?;
    for line in &profile.lines {
        let (hi, lo) = (line.max(), line.min());
        writeln!(
            out,
            "  {:<width$}  {:<4}  {:>8.3}  {:>14} {:>9.3}  {:>14} {:>9.3}",
            line.name,
            line.kind,
            line.length_m,
            PressureDisplay(hi.pressure.norm()).to_string(),
            hi.position_m,
            PressureDisplay(lo.pressure.norm()).to_string(),
            lo.position_m
        )?;
    }
    writeln!(out, "nodes (distance from the pump along the lines):")?;
    for (id, node) in circuit.nodes.iter().enumerate() {
        let distance =
            profile.node_distances_m[id].map_or_else(|| "—".to_string(), |d| format!("{d:.3} m"));
        writeln!(
            out,
            "  {}: {}, {}",
            node.name,
            distance,
            PressureDisplay(profile.node_pressures[id].norm())
        )?;
    }
    out.flush()?;
    Ok(())
}

/// One curve per line on a shared axis of distance from the pump along the
/// circuit; nodes as labelled vertical lines, taps as labelled dots.
fn chart(circuit: &ripline::Circuit, profile: &RippleProfile) -> plot::LineChart {
    let series: Vec<plot::XySeries> = profile
        .lines
        .iter()
        .map(|l| plot::XySeries {
            name: format!("{} ({})", l.name, l.kind),
            points: l
                .points
                .iter()
                .map(|p| (l.path_position(p.position_m), p.pressure.norm() / 1e5))
                .collect(),
            ..Default::default()
        })
        .collect();
    // Nodes at the same distance share one marker.
    let mut markers: Vec<plot::Marker> = Vec::new();
    for (id, node) in circuit.nodes.iter().enumerate() {
        let Some(d) = profile.node_distances_m[id] else {
            continue;
        };
        match markers
            .iter_mut()
            .find(|m| (m.value - d).abs() <= 1e-9 * (1.0 + d))
        {
            Some(m) => m.label = format!("{} / {}", m.label, node.name),
            None => markers.push(plot::Marker {
                value: d,
                label: node.name.clone(),
            }),
        }
    }
    let point_markers = circuit
        .taps
        .iter()
        .zip(&profile.tap_pressures)
        .filter_map(|(tap, p)| {
            let x = match tap.location {
                TapLocation::Node(id) => profile.node_distances_m[id]?,
                TapLocation::AlongTube {
                    element,
                    distance_m,
                } => profile
                    .lines
                    .iter()
                    .find(|l| l.element == element)?
                    .path_position(distance_m),
            };
            Some(plot::PointMarker {
                x,
                y: p.norm() / 1e5,
                label: tap.name.clone(),
            })
        })
        .collect();
    let top = series
        .iter()
        .flat_map(|s| s.points.iter().map(|p| p.1))
        .fold(0.0, f64::max);
    plot::LineChart {
        title: format!(
            "Ripple along the lines: harmonic {} ({:.1} Hz)",
            profile.harmonic, profile.freq_hz
        ),
        x_label: "distance from the pump along the lines (m)".into(),
        y_label: "pressure ripple amplitude, peak (bar)".into(),
        series,
        y_range: Some((0.0, if top > 0.0 { top * 1.1 } else { 1.0 })),
        x_markers: markers,
        point_markers,
        ..Default::default()
    }
}

//! Renderers of [`ProfileResult`]: the terminal report, the CSV of the
//! samples and the chart of the amplitude along the circuit.

use super::heading;
use super::table::{Align, DIGITS, Quantity, Table, sig};
use crate::plot;
use crate::results::profile::ProfileResult;
use std::io::Write;

/// Header of the profile table (`profile --csv`); `position_m` is the
/// distance from the line's `from` end.
pub const PROFILE_HEADER: [&str; 5] = [
    "element",
    "position_m",
    "frequency_hz",
    "amplitude_pa",
    "phase_deg",
];

/// Writes the terminal report.
///
/// # Errors
/// The writer's error.
pub fn text(r: &ProfileResult, out: &mut impl Write) -> std::io::Result<()> {
    heading(out, "profile", &r.subject)?;
    writeln!(
        out,
        "pump `{}` at node `{}`: harmonic {} at {:.2} Hz ({:.0} rpm × {} pumping elements)",
        r.pump,
        r.pump_node,
        r.harmonic,
        r.freq_hz,
        r.speed_rev_s * 60.0,
        r.pumping_elements
    )?;
    if r.shaft_pumps.len() > 1 {
        writeln!(
            out,
            "shaft `{}`: its pumps ({}) inject what they have at this frequency, with one angle reference",
            r.shaft,
            quoted(&r.shaft_pumps)
        )?;
    }
    writeln!(
        out,
        "amplitudes are peak values; positions are measured from each line's `from` end"
    )?;
    let (reached, apart): (Vec<_>, Vec<_>) = r.lines.iter().partition(|l| l.reached);
    let amp = |v: Vec<f64>| Quantity::Pressure.unit_for_all(v);
    let hi = amp(reached.iter().map(|l| l.largest.1).collect());
    let lo = amp(reached.iter().map(|l| l.smallest.1).collect());
    let len = Quantity::Length.unit_for_all(
        reached
            .iter()
            .flat_map(|l| [l.length_m, l.largest.0, l.smallest.0]),
    );
    let mut t = Table::new(&[("line", Align::Left), ("kind", Align::Left)])
        .column(format!("length {}", len.symbol), Align::Right)
        .column(format!("largest {}", hi.symbol), Align::Right)
        .column(format!("at {}", len.symbol), Align::Right)
        .column(format!("smallest {}", lo.symbol), Align::Right)
        .column(format!("at {}", len.symbol), Align::Right);
    for l in &reached {
        t.row(vec![
            l.name.clone(),
            l.kind.to_string(),
            sig(len.of(l.length_m), DIGITS),
            sig(hi.of(l.largest.1), DIGITS),
            sig(len.of(l.largest.0), DIGITS),
            sig(lo.of(l.smallest.1), DIGITS),
            sig(len.of(l.smallest.0), DIGITS),
        ]);
    }
    t.write(out, "  ")?;
    if !apart.is_empty() {
        let names: Vec<String> = apart.iter().map(|l| l.name.clone()).collect();
        writeln!(
            out,
            "no ripple from shaft `{}` at this frequency (no path from a pump that has it): {}",
            r.shaft,
            quoted(&names)
        )?;
    }
    writeln!(out, "nodes (distance from the pump along the lines):")?;
    let dist = Quantity::Length.unit_for_all(r.nodes.iter().filter_map(|n| n.distance_m));
    let p = Quantity::Pressure.unit_for_all(r.nodes.iter().map(|n| n.pressure_pa.amplitude));
    let mut t = Table::new(&[("node", Align::Left)])
        .column(format!("distance {}", dist.symbol), Align::Right)
        .column(format!("amplitude {}", p.symbol), Align::Right);
    for n in &r.nodes {
        t.row(vec![
            n.name.clone(),
            n.distance_m
                .map_or_else(|| "—".into(), |d| sig(dist.of(d), DIGITS)),
            sig(p.of(n.pressure_pa.amplitude), DIGITS),
        ]);
    }
    t.write(out, "  ")
}

fn quoted(names: &[String]) -> String {
    names
        .iter()
        .map(|n| format!("`{n}`"))
        .collect::<Vec<_>>()
        .join(", ")
}

/// Writes one row per line and sample (SI, peak amplitude, phase against
/// the shaft reference).
///
/// # Errors
/// The CSV writer's error.
pub fn csv(r: &ProfileResult, out: impl Write) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(PROFILE_HEADER)?;
    for line in &r.lines {
        for s in &line.samples {
            w.write_record([
                line.name.clone(),
                format!("{}", s.position_m),
                format!("{}", r.freq_hz),
                format!("{}", s.pressure_pa.amplitude),
                format!("{}", s.pressure_pa.phase_deg),
            ])?;
        }
    }
    w.flush()?;
    Ok(())
}

/// One curve per line the shaft's pumps reach, on a shared axis of distance
/// from the pump along the circuit; nodes as labelled vertical lines, taps
/// as labelled dots.
pub fn chart(r: &ProfileResult) -> plot::LineChart {
    let shown: Vec<_> = r.lines.iter().filter(|l| l.reached).collect();
    let unit = Quantity::Pressure.unit_for_all(shown.iter().map(|l| l.largest.1));
    let series: Vec<plot::XySeries> = shown
        .iter()
        .map(|l| plot::XySeries {
            name: format!("{} ({})", l.name, l.kind),
            points: l
                .samples
                .iter()
                .map(|s| (s.path_position_m, unit.of(s.pressure_pa.amplitude)))
                .collect(),
            ..Default::default()
        })
        .collect();
    // Nodes at the same distance share one marker.
    let mut markers: Vec<plot::Marker> = Vec::new();
    for node in &r.nodes {
        let Some(d) = node.distance_m else {
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
    let point_markers = r
        .taps
        .iter()
        .filter_map(|t| {
            Some(plot::PointMarker {
                x: t.path_position_m?,
                y: unit.of(t.pressure_pa.amplitude),
                label: t.name.clone(),
            })
        })
        .collect();
    let top = series
        .iter()
        .flat_map(|s| s.points.iter().map(|p| p.1))
        .fold(0.0, f64::max);
    plot::LineChart {
        title: format!(
            "Ripple along the lines: {} harmonic {} ({:.1} Hz)",
            r.pump, r.harmonic, r.freq_hz
        ),
        x_label: "distance from the pump along the lines (m)".into(),
        y_label: format!("pressure ripple amplitude, peak ({})", unit.symbol),
        series,
        y_range: Some((0.0, if top > 0.0 { top * 1.1 } else { 1.0 })),
        x_markers: markers,
        point_markers,
        ..Default::default()
    }
}

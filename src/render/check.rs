//! Renderers of [`CheckResult`]: the terminal report, the CSV of each
//! pump's source flow ripple and its bar chart.

use super::table::{DIGITS, Quantity, sig};
use super::{harmonic_table, heading};
use crate::plot;
use crate::results::check::CheckResult;
use std::io::Write;

/// Header of the source flow ripple table (`check --csv`): SI, peak
/// amplitudes, phases against each pump's shaft-angle reference.
pub const SOURCE_HEADER: [&str; 5] = [
    "pump",
    "harmonic",
    "frequency_hz",
    "flow_amplitude_m3s",
    "flow_phase_deg",
];

/// Writes the terminal report.
///
/// # Errors
/// The writer's error.
pub fn text(r: &CheckResult, out: &mut impl Write) -> std::io::Result<()> {
    heading(out, "check", &r.subject)?;
    let f = &r.fluid;
    writeln!(
        out,
        "fluid: density {:.1} kg/m³, bulk modulus {:.3} GPa, viscosity {:.2} cSt (dynamic {:.4} Pa·s), speed of sound {:.1} m/s",
        f.density_kg_m3,
        f.bulk_modulus_pa / 1e9,
        f.kinematic_viscosity_m2_s * 1e6,
        f.dynamic_viscosity_pa_s,
        f.speed_of_sound_m_s
    )?;
    for p in &r.pumps {
        write!(
            out,
            "pump `{}` at node `{}`: {:.0} rpm, {} pumping elements, pumping frequency {:.2} Hz",
            p.name,
            p.node,
            p.speed_rev_s * 60.0,
            p.pumping_elements,
            p.pumping_frequency_hz,
        )?;
        if let Some(q) = p.mean_flow_m3_s {
            write!(out, ", mean flow {:.2} L/min", q * 60e3)?;
        }
        writeln!(out)?;
        if let Some(shaft) = &p.shaft {
            writeln!(
                out,
                "  on shaft `{shaft}` (same speed and angle reference as the other pumps on it)"
            )?;
        }
        write!(out, "  flow ripple from {}", p.flow_ripple_from)?;
        if let Some(d) = p.non_uniformity {
            write!(out, "; flow non-uniformity δ = {}", sig(d, DIGITS))?;
        }
        writeln!(out)?;
        writeln!(out, "  source impedance: {}", p.source_impedance)?;
        writeln!(
            out,
            "  source flow ripple at {:.0} rpm (peak; phase against the shaft-angle reference):",
            p.speed_rev_s * 60.0
        )?;
        let unit = Quantity::Flow.unit_for_all(p.harmonics.iter().map(|h| h.flow_m3_s.amplitude));
        let t = harmonic_table(
            "harmonic",
            unit,
            p.harmonics
                .iter()
                .map(|h| (h.order, h.freq_hz, h.flow_m3_s)),
        );
        t.write(out, "    ")?;
    }
    writeln!(out, "nodes ({}):", r.nodes.len())?;
    for n in &r.nodes {
        let mut notes = Vec::new();
        if n.tank {
            notes.push("tank (zero ripple)".to_string());
        }
        if n.implicit_closed_end {
            notes.push("line end with no termination: treated as a closed end".to_string());
        }
        notes.push(format!("{} element(s)", n.elements));
        writeln!(out, "  {}: {}", n.name, notes.join(", "))?;
    }
    writeln!(out, "elements ({}):", r.elements.len())?;
    for e in &r.elements {
        writeln!(
            out,
            "  {} ({}, {}): {}",
            e.name, e.kind, e.place, e.description
        )?;
    }
    writeln!(out, "taps ({}):", r.taps.len())?;
    for t in &r.taps {
        writeln!(out, "  {}: {}", t.name, t.place)?;
    }
    if r.taps.is_empty() {
        writeln!(out, "  (none: reports cover every node)")?;
    }
    writeln!(
        out,
        "solve: {} harmonics (up to {:.1} Hz), {} unknowns per frequency",
        r.harmonics, r.top_hz, r.unknowns
    )?;
    for c in &r.cautions {
        writeln!(out, "{c}")?;
    }
    writeln!(out, "OK")
}

/// Writes each pump's source flow ripple, one row per pump and harmonic.
///
/// # Errors
/// The CSV writer's error.
pub fn csv(r: &CheckResult, out: impl Write) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(SOURCE_HEADER)?;
    for p in &r.pumps {
        for h in &p.harmonics {
            w.write_record([
                p.name.clone(),
                h.order.to_string(),
                format!("{}", h.freq_hz),
                format!("{}", h.flow_m3_s.amplitude),
                format!("{}", h.flow_m3_s.phase_deg),
            ])?;
        }
    }
    w.flush()?;
    Ok(())
}

/// A bar chart of each pump's source flow ripple amplitude per harmonic.
pub fn chart(r: &CheckResult) -> plot::BarChart {
    let unit = Quantity::Flow.unit_for_all(
        r.pumps
            .iter()
            .flat_map(|p| p.harmonics.iter().map(|h| h.flow_m3_s.amplitude)),
    );
    plot::BarChart {
        title: format!(
            "Source flow ripple per harmonic — {}",
            r.subject.title.as_deref().unwrap_or(&r.subject.file)
        ),
        x_label: "harmonic of each pump's pumping frequency".into(),
        y_label: format!("source flow ripple amplitude, peak ({})", unit.symbol),
        categories: (1..=r.harmonics).map(|k| k.to_string()).collect(),
        series: r
            .pumps
            .iter()
            .map(|p| plot::Series {
                name: format!("{} ({:.0} rpm)", p.name, p.speed_rev_s * 60.0),
                values: p
                    .harmonics
                    .iter()
                    .map(|h| unit.of(h.flow_m3_s.amplitude))
                    .collect(),
                bands: None,
            })
            .collect(),
        // a log axis keeps the higher harmonics (tens of dB down) visible
        log_y: true,
        ..Default::default()
    }
}

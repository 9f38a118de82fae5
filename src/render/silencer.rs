//! Renderers of [`SilencerResult`]: the terminal report, the loss CSVs
//! (versus frequency, per harmonic) and the TL/IL charts.

use super::heading;
use super::response::band_marks;
use super::table::{Align, DIGITS, Quantity, Table, sig};
use crate::plot;
use crate::results::silencer::{RANGE_SPEEDS, SilencerResult};
use std::io::Write;

/// Header of the loss-versus-frequency table (`silencer --csv`).
pub const LOSS_HEADER: [&str; 3] = ["frequency_hz", "transmission_loss_db", "insertion_loss_db"];

/// Header of the per-harmonic loss table (`silencer --harmonic-csv`).
pub const HARMONIC_LOSS_HEADER: [&str; 6] = [
    "harmonic",
    "frequency_hz",
    "transmission_loss_db",
    "insertion_loss_db",
    "amplitude_without_pa",
    "amplitude_with_pa",
];

/// Writes the terminal report.
///
/// # Errors
/// The writer's error.
pub fn text(r: &SilencerResult, out: &mut impl Write) -> std::io::Result<()> {
    heading(out, "silencer", &r.subject)?;
    for e in &r.elements {
        writeln!(out, "silencer `{}` ({}, {}):", e.name, e.kind, e.place)?;
        for line in &e.description {
            writeln!(out, "  {line}")?;
        }
    }
    let t = &r.reference;
    writeln!(
        out,
        "transmission loss: between anechoic pipes of Z0 = {:.4e} (upstream `{}`) and {:.4e} Pa·s/m³ (downstream `{}`)",
        t.upstream_z0_pa_s_m3, t.upstream, t.downstream_z0_pa_s_m3, t.downstream
    )?;
    writeln!(
        out,
        "insertion loss at point `{}`: IL = 20·log10|P without / P with|, the silencer {}",
        r.tap, r.without
    )?;
    writeln!(out)?;
    writeln!(
        out,
        "per harmonic at {:.0} rpm (pumping frequency {:.2} Hz); ripple amplitudes are peak values:",
        r.pump.speed_rev_s * 60.0,
        r.pump.speed_rev_s * f64::from(r.pump.pumping_elements)
    )?;
    let wo = Quantity::Pressure.unit_for_all(
        r.harmonics
            .iter()
            .map(|h| h.without_pa)
            .chain([r.rms_without_pa]),
    );
    let wi = Quantity::Pressure
        .unit_for_all(r.harmonics.iter().map(|h| h.with_pa).chain([r.rms_with_pa]));
    let mut table = Table::new(&[
        ("harmonic", Align::Right),
        ("frequency Hz", Align::Right),
        ("TL dB", Align::Right),
        ("IL dB", Align::Right),
    ])
    .column(format!("without {}", wo.symbol), Align::Right)
    .column(format!("with {}", wi.symbol), Align::Right);
    for h in &r.harmonics {
        table.row(vec![
            h.order.to_string(),
            format!("{:.2}", h.freq_hz),
            format!("{:.2}", h.transmission_loss_db),
            format!("{:.2}", h.insertion_loss_db),
            sig(wo.of(h.without_pa), DIGITS),
            sig(wi.of(h.with_pa), DIGITS),
        ]);
    }
    table.write(out, "  ")?;
    super::silent_orders_note(out, "  ", &r.silent_orders)?;
    if r.rms_with_pa > 0.0 {
        writeln!(
            out,
            "  overall: {} rms without, {} rms with: {:.2} dB less",
            wo.show(r.rms_without_pa),
            wi.show(r.rms_with_pa),
            20.0 * (r.rms_without_pa / r.rms_with_pa).log10()
        )?;
    }
    writeln!(out)?;
    if r.over_speeds.is_empty() {
        writeln!(out, "speed range: {}", r.speed_range.describe_origin())?;
    } else {
        writeln!(
            out,
            "insertion loss of each harmonic over the speed range {}, {RANGE_SPEEDS} speeds:",
            r.speed_range.describe_origin()
        )?;
        let mut table = Table::new(&[
            ("harmonic", Align::Right),
            ("smallest dB", Align::Right),
            ("at rpm", Align::Right),
            ("largest dB", Align::Right),
            ("at rpm", Align::Right),
        ]);
        for s in &r.over_speeds {
            table.row(vec![
                s.order.to_string(),
                format!("{:.2}", s.smallest.0),
                format!("{:.0}", s.smallest.1 * 60.0),
                format!("{:.2}", s.largest.0),
                format!("{:.0}", s.largest.1 * 60.0),
            ]);
        }
        table.write(out, "  ")?;
    }
    if let Some(w) = &r.worst_over_speeds {
        let unit = Quantity::Pressure.unit_for_all([w.without_pa, w.with_pa]);
        let change = 20.0 * (w.without_pa / w.with_pa).log10();
        writeln!(
            out,
            "worst overall ripple at point `{}` over the speed range (each found between the speeds to 0.01 dB): {} rms at {:.0} rpm without, {} rms at {:.0} rpm with: {}",
            r.tap,
            unit.show(w.without_pa),
            w.without_speed_rev_s * 60.0,
            unit.show(w.with_pa),
            w.with_speed_rev_s * 60.0,
            if change >= 0.0 {
                format!("{change:.2} dB lower")
            } else {
                format!(
                    "{:.2} dB higher: the silencer makes the worst ripple worse",
                    -change
                )
            }
        )?;
    }
    let (f_tl, tl) = r.largest_tl();
    let (f_il, il) = r.smallest_il();
    writeln!(
        out,
        "band {:.2}–{:.2} Hz: largest TL {tl:.2} dB at {f_tl:.2} Hz; smallest IL {il:.2} dB at {f_il:.2} Hz (negative: the silencer amplifies there)",
        r.grid.low_hz, r.grid.high_hz
    )?;
    for c in &r.cautions {
        writeln!(out)?;
        writeln!(out, "{c}")?;
    }
    Ok(())
}

/// Writes TL and IL per grid frequency.
///
/// # Errors
/// The CSV writer's error.
pub fn csv(r: &SilencerResult, out: impl Write) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(LOSS_HEADER)?;
    for ((f, tl), il) in r
        .freqs_hz
        .iter()
        .zip(&r.transmission_loss_db)
        .zip(&r.insertion_loss_db)
    {
        w.write_record([format!("{f}"), format!("{tl}"), format!("{il}")])?;
    }
    w.flush()?;
    Ok(())
}

/// Writes TL, IL and the ripple without and with per harmonic at the
/// pump's speed (SI, peak amplitudes).
///
/// # Errors
/// The CSV writer's error.
pub fn harmonic_csv(r: &SilencerResult, out: impl Write) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(HARMONIC_LOSS_HEADER)?;
    for h in &r.harmonics {
        w.write_record([
            h.order.to_string(),
            format!("{}", h.freq_hz),
            format!("{}", h.transmission_loss_db),
            format!("{}", h.insertion_loss_db),
            format!("{}", h.without_pa),
            format!("{}", h.with_pa),
        ])?;
    }
    w.flush()?;
    Ok(())
}

/// TL and IL versus frequency with the harmonic bands shaded.
pub fn charts(r: &SilencerResult) -> Vec<plot::LineChart> {
    let (x_bands, x_markers) = band_marks(&r.bands);
    let names = r
        .elements
        .iter()
        .map(|e| e.name.as_str())
        .collect::<Vec<_>>()
        .join(" + ");
    let curve = |name: &str, v: &[f64]| plot::XySeries {
        name: name.into(),
        points: r.freqs_hz.iter().copied().zip(v.iter().copied()).collect(),
        ..Default::default()
    };
    vec![
        plot::LineChart {
            title: format!("Transmission loss of {names} (anechoic ends)"),
            x_label: "frequency (Hz)".into(),
            y_label: "TL (dB)".into(),
            series: vec![curve("transmission loss", &r.transmission_loss_db)],
            log_x: true,
            x_markers: x_markers.clone(),
            x_bands: x_bands.clone(),
            ..Default::default()
        },
        plot::LineChart {
            title: format!(
                "Insertion loss at {} (shaded: harmonic bands over the speed range)",
                r.tap
            ),
            x_label: "frequency (Hz); shaded: bands of the pump harmonics over the speed range"
                .into(),
            y_label: "IL (dB)".into(),
            series: vec![curve("insertion loss", &r.insertion_loss_db)],
            log_x: true,
            x_markers,
            x_bands,
            ..Default::default()
        },
    ]
}

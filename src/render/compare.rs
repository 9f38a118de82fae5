//! Renderers of [`CompareResult`]: the terminal report, the CSV table and
//! the chart of measured against predicted amplitudes (shared with
//! `calibrate`, which draws the prediction before and after).

use super::heading;
use super::table::{Align, DIGITS, Quantity, Table, phase, sig};
use crate::calibrate::compare::{AGREEMENT_QUANTILE, Comparison, Row, TapAgreement};
use crate::io::measurement_file::Phases;
use crate::plot;
use crate::results::compare::{CompareResult, MeasurementsInfo};
use std::io::Write;

/// Header of `compare --csv` (SI, peak amplitudes; empty cells where a
/// value does not exist: no uncertainty stated, phases not compared).
pub const HEADER: [&str; 12] = [
    "run",
    "point",
    "harmonic",
    "frequency_hz",
    "measured_pa",
    "measured_u_pa",
    "measured_phase_deg",
    "predicted_pa",
    "predicted_phase_deg",
    "difference_db",
    "difference_deg",
    "normalised",
];

/// The lines about the measurement file.
pub fn measurements_heading(out: &mut impl Write, m: &MeasurementsInfo) -> std::io::Result<()> {
    writeln!(
        out,
        "measurements: {} ({} run{}){}",
        m.file,
        m.runs,
        if m.runs == 1 { "" } else { "s" },
        m.title.as_ref().map_or(String::new(), |t| format!(": {t}"))
    )
}

/// How the phases were compared, in words.
pub fn phases_text(p: Phases) -> &'static str {
    match p {
        Phases::Shaft => {
            "phases against the shaft-angle reference (each record starts at the shaft reference)"
        }
        Phases::Ignore => "amplitudes only (the records have no shaft reference)",
    }
}

/// Writes the terminal report.
///
/// # Errors
/// The writer's error.
pub fn text(r: &CompareResult, out: &mut impl Write) -> std::io::Result<()> {
    heading(out, "compare", &r.subject)?;
    measurements_heading(out, &r.measurements)?;
    writeln!(
        out,
        "{}; amplitudes are peak values; difference = predicted − measured (dB: 20·log10 of their ratio); |P−M|/u about 1 is agreement within the measurement's noise",
        phases_text(r.comparison.phases)
    )?;
    comparison_text(&r.comparison, out)?;
    if r.comparison
        .taps
        .iter()
        .any(|a| a.within_noise == Some(false))
    {
        writeln!(
            out,
            "its predictions are not to be trusted as they stand: `ripline calibrate` adjusts chosen values of the circuit to these measurements and says which of them the data can identify"
        )?;
    }
    Ok(())
}

/// The per-run tables and the agreement per tap.
///
/// # Errors
/// The writer's error.
pub fn comparison_text(c: &Comparison, out: &mut impl Write) -> std::io::Result<()> {
    for run in &c.runs {
        writeln!(out)?;
        writeln!(
            out,
            "run `{}` at {:.1} rpm ({:.1} rpm in the data), point: {}",
            run.run,
            run.stated_speed_rev_s * 60.0,
            run.speed_rev_s * 60.0,
            run.point
        )?;
        let unit = Quantity::Pressure.unit_for_all(
            run.rows
                .iter()
                .flat_map(|r| [r.measured_pa, r.predicted_pa]),
        );
        let mut taps: Vec<&str> = Vec::new();
        for r in &run.rows {
            if !taps.contains(&r.tap.as_str()) {
                taps.push(&r.tap);
            }
        }
        for tap in taps {
            writeln!(out, "  tap `{tap}`")?;
            let mut t = Table::new(&[("harmonic", Align::Right), ("frequency Hz", Align::Right)])
                .column(format!("measured {}", unit.symbol), Align::Right)
                .column(format!("predicted {}", unit.symbol), Align::Right)
                .column("diff dB", Align::Right);
            if c.phases == Phases::Shaft {
                t = t
                    .column("measured deg", Align::Right)
                    .column("predicted deg", Align::Right)
                    .column("diff deg", Align::Right);
            }
            t = t.column("|P−M|/u", Align::Right);
            for r in run.rows.iter().filter(|r| r.tap == tap) {
                let mut cells = vec![
                    r.order.to_string(),
                    format!("{:.2}", r.freq_hz),
                    measured_cell(r, unit),
                    sig(unit.of(r.predicted_pa), DIGITS),
                    r.difference_db.map_or("–".into(), |d| format!("{d:+.2}")),
                ];
                if c.phases == Phases::Shaft {
                    cells.push(phase(r.measured_phase_deg));
                    cells.push(phase(r.predicted_phase_deg));
                    cells.push(r.difference_deg.map_or("–".into(), |d| format!("{d:+.1}")));
                }
                cells.push(r.normalised.map_or("–".into(), |z| format!("{z:.2}")));
                t.row(cells);
            }
            t.write(out, "    ")?;
        }
    }
    writeln!(out)?;
    writeln!(out, "agreement per tap, over every run and harmonic:")?;
    let mut t = Table::new(&[
        ("tap", Align::Left),
        ("rows", Align::Right),
        ("rms diff dB", Align::Right),
        ("worst dB", Align::Right),
        ("rms |P−M|/u", Align::Right),
    ]);
    for a in &c.taps {
        t.row(vec![
            a.tap.clone(),
            a.rows.to_string(),
            a.rms_difference_db
                .map_or("–".into(), |d| format!("{d:.2}")),
            a.worst_difference_db
                .map_or("–".into(), |d| format!("{d:+.2}")),
            a.rms_normalised.map_or("–".into(), |z| format!("{z:.2}")),
        ]);
    }
    t.write(out, "  ")?;
    if let Some(line) = agreement_conclusion(c) {
        writeln!(out, "{line}")?;
    }
    Ok(())
}

/// The comparison's conclusion: whether the model agrees with the
/// measurements within their noise at every tap, and if not, the taps
/// where it does not, the largest misfit first. `None` when a tap's
/// measurements carry no uncertainty.
pub fn agreement_conclusion(c: &Comparison) -> Option<String> {
    let judged: Option<Vec<(&TapAgreement, bool)>> = c
        .taps
        .iter()
        .map(|a| a.within_noise.map(|w| (a, w)))
        .collect();
    let judged = judged.filter(|j| !j.is_empty())?;
    let mut missed: Vec<&TapAgreement> =
        judged.iter().filter(|(_, w)| !w).map(|(a, _)| *a).collect();
    let q = format!("{:.0}th percentile", 100.0 * AGREEMENT_QUANTILE);
    if missed.is_empty() {
        return Some(format!(
            "conclusion: the model agrees with the measurements within their noise at every tap (each tap's χ² below the {q} of χ² with its degrees of freedom)"
        ));
    }
    missed.sort_by(|a, b| {
        b.rms_normalised
            .unwrap_or(0.0)
            .total_cmp(&a.rms_normalised.unwrap_or(0.0))
    });
    let names: Vec<String> = missed.iter().map(|a| format!("`{}`", a.tap)).collect();
    let misfits: Vec<String> = missed
        .iter()
        .map(|a| a.rms_normalised.map_or("–".into(), |z| format!("{z:.2}")))
        .collect();
    let agreeing = judged.len() - missed.len();
    Some(format!(
        "conclusion: the model misses the measurements beyond their noise at {} of {} taps: {} (rms |P−M|/u {}, where about 1 is agreement; χ² above the {q} of χ² with the tap's degrees of freedom){}",
        missed.len(),
        judged.len(),
        names.join(", "),
        misfits.join(", "),
        if agreeing > 0 {
            format!("; within the noise at the other {agreeing}")
        } else {
            String::new()
        }
    ))
}

fn measured_cell(r: &Row, unit: super::table::Unit) -> String {
    match r.measured_u_pa {
        Some(u) => super::table::pm(unit.of(r.measured_pa), Some(unit.of(u))),
        None => sig(unit.of(r.measured_pa), DIGITS),
    }
}

/// Writes the table: one row per run, tap and harmonic.
///
/// # Errors
/// The CSV writer's error.
pub fn csv(r: &CompareResult, out: impl Write) -> Result<(), csv::Error> {
    comparison_csv(&r.comparison, out)
}

/// The comparison as the `compare --csv` table.
///
/// # Errors
/// The CSV writer's error.
pub fn comparison_csv(c: &Comparison, out: impl Write) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(HEADER)?;
    let opt = |v: Option<f64>| v.map_or(String::new(), |v| format!("{v}"));
    for run in &c.runs {
        for r in &run.rows {
            w.write_record([
                run.run.clone(),
                r.tap.clone(),
                r.order.to_string(),
                format!("{}", r.freq_hz),
                format!("{}", r.measured_pa),
                opt(r.measured_u_pa),
                format!("{}", r.measured_phase_deg),
                format!("{}", r.predicted_pa),
                format!("{}", r.predicted_phase_deg),
                opt(r.difference_db),
                opt(r.difference_deg),
                opt(r.normalised),
            ])?;
        }
    }
    w.flush()?;
    Ok(())
}

/// One prediction drawn on the chart.
pub struct Prediction<'a> {
    /// The comparison holding it.
    pub comparison: &'a Comparison,
    /// Its name in the legend (`predicted`, `calibrated`…).
    pub label: &'a str,
    /// Drawn dashed (else solid).
    pub dashed: bool,
}

/// One panel per tap: measured amplitudes (dots, with error bars of ±2
/// standard uncertainties where known) and predicted ones (lines), against
/// frequency, each run in its own colour, on logarithmic axes.
pub fn charts(title: &str, predictions: &[Prediction<'_>]) -> Vec<plot::LineChart> {
    let Some(first) = predictions.first() else {
        return Vec::new();
    };
    let c = first.comparison;
    let mut taps: Vec<&str> = Vec::new();
    for r in c.runs.iter().flat_map(|r| &r.rows) {
        if !taps.contains(&r.tap.as_str()) {
            taps.push(&r.tap);
        }
    }
    let all: Vec<f64> = c
        .runs
        .iter()
        .flat_map(|r| &r.rows)
        .flat_map(|r| [r.measured_pa, r.predicted_pa])
        .collect();
    let unit = Quantity::Pressure.unit_for_all(all.iter().copied());
    taps.iter()
        .enumerate()
        .map(|(ti, tap)| {
            let mut series = Vec::new();
            for (ri, run) in c.runs.iter().enumerate() {
                let color = Some(plot::series_color(ri));
                let rows: Vec<&Row> = run.rows.iter().filter(|r| r.tap == *tap).collect();
                let positive = |v: f64| v > 0.0;
                series.push(plot::XySeries {
                    name: format!("{} measured", run.run),
                    points: rows
                        .iter()
                        .filter(|r| positive(r.measured_pa))
                        .map(|r| (r.freq_hz, unit.of(r.measured_pa)))
                        .collect(),
                    error_bars: rows.iter().all(|r| r.measured_u_pa.is_some()).then(|| {
                        rows.iter()
                            .filter(|r| positive(r.measured_pa))
                            .map(|r| {
                                let u = 2.0 * r.measured_u_pa.unwrap_or(0.0);
                                (unit.of(r.measured_pa - u), unit.of(r.measured_pa + u))
                            })
                            .collect()
                    }),
                    band: None,
                    style: plot::SeriesStyle::Points,
                    color,
                });
                for p in predictions {
                    let Some(prun) = p.comparison.runs.get(ri) else {
                        continue;
                    };
                    series.push(plot::XySeries {
                        name: format!("{} {}", run.run, p.label),
                        points: prun
                            .rows
                            .iter()
                            .filter(|r| r.tap == *tap && positive(r.predicted_pa))
                            .map(|r| (r.freq_hz, unit.of(r.predicted_pa)))
                            .collect(),
                        style: if p.dashed {
                            plot::SeriesStyle::Dashed
                        } else {
                            plot::SeriesStyle::Line
                        },
                        color,
                        ..Default::default()
                    });
                }
            }
            plot::LineChart {
                title: if ti == 0 {
                    format!("{title} — tap `{tap}`")
                } else {
                    format!("tap `{tap}`")
                },
                x_label: "frequency (Hz)".into(),
                y_label: format!("ripple amplitude, peak ({})", unit.symbol),
                series,
                log_x: true,
                log_y: true,
                ..Default::default()
            }
        })
        .collect()
}

/// The chart of `compare --plot`.
pub fn chart(r: &CompareResult) -> Vec<plot::LineChart> {
    charts(
        &format!(
            "Measured and predicted ripple — {}",
            r.subject.title.as_deref().unwrap_or(&r.subject.file)
        ),
        &[Prediction {
            comparison: &r.comparison,
            label: "predicted",
            dashed: false,
        }],
    )
}

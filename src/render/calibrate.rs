//! Renderers of [`CalibrateResult`]: the terminal report, the CSV table of
//! the estimates and the chart of measured against predicted amplitudes
//! before and after.

use super::compare::{Prediction, charts, comparison_text, measurements_heading, phases_text};
use super::heading;
use super::table::{Align, Table, pm};
use crate::calibrate::fit::Estimate;
use crate::plot;
use crate::results::calibrate::CalibrateResult;
use std::io::Write;

/// The first columns of `calibrate --csv`, one row per parameter (numbers
/// in the unit the circuit file writes the value in, `unit`); then one
/// column `rho:NAME` per parameter, the correlation with it (empty where a
/// parameter is not identifiable).
pub const HEADER: [&str; 10] = [
    "parameter",
    "unit",
    "start",
    "value",
    "standard_uncertainty",
    "low",
    "high",
    "log_scale",
    "at_bound",
    "identifiable",
];

fn value_text(e: &Estimate) -> String {
    let v = pm(e.value, e.uncertainty);
    if e.unit.is_empty() {
        v
    } else {
        format!("{v} {}", e.unit)
    }
}

/// Writes the terminal report.
///
/// # Errors
/// The writer's error.
pub fn text(r: &CalibrateResult, out: &mut impl Write) -> std::io::Result<()> {
    heading(out, "calibrate", &r.subject)?;
    measurements_heading(out, &r.measurements)?;
    let c = &r.calibration;
    writeln!(out, "{}", phases_text(r.after.phases))?;
    writeln!(
        out,
        "{}: {} ({} iterations, {} model evaluations)",
        if c.stop.converged() {
            "converged"
        } else {
            "NOT CONVERGED"
        },
        c.stop.describe(),
        c.iterations,
        c.evaluations
    )?;
    writeln!(
        out,
        "χ² (sum of squared weighted residuals): {} with the file's values, {} calibrated, for {} degrees of freedom ({})",
        super::table::sig(c.chi2_start, 4),
        super::table::sig(c.chi2, 4),
        c.dof,
        match (c.absolute_weights, c.weights_dof) {
            (true, None) => "weights from the measurements' uncertainties".to_string(),
            (true, Some(nu)) => format!(
                "weights from the uncertainties estimated from the records, {nu:.0} degrees of freedom each: the noise alone gives χ² near {}",
                super::table::sig(c.chi2_expected, 4)
            ),
            (false, _) => "equal weights: no uncertainties stated".to_string(),
        }
    )?;
    writeln!(out)?;
    writeln!(out, "calibrated values (± standard uncertainty):")?;
    let mut t = Table::new(&[
        ("value", Align::Left),
        ("in the file", Align::Right),
        ("calibrated", Align::Right),
        ("bounds", Align::Right),
    ]);
    for e in &c.estimates {
        let unit = if e.unit.is_empty() {
            String::new()
        } else {
            format!(" {}", e.unit)
        };
        let mut flags = Vec::new();
        if e.log_scale {
            flags.push("fitted in log scale");
        }
        if e.at_bound {
            flags.push("AT A BOUND");
        }
        if e.uncertainty.is_none() {
            flags.push("NOT IDENTIFIABLE");
        }
        t.row(vec![
            e.name.clone(),
            format!("{}{unit}", crate::units::format_sig(e.start, 6)),
            value_text(e),
            format!(
                "{} .. {}{unit}",
                crate::units::format_sig(e.low, 6),
                crate::units::format_sig(e.high, 6)
            ),
            flags.join(", "),
        ]);
    }
    t.write(out, "  ")?;
    if c.estimates.len() > 1 {
        writeln!(out, "correlation matrix:")?;
        let mut t = Table::new(&[("", Align::Left)]);
        for i in 0..c.estimates.len() {
            t = t.column(format!("{}", i + 1), Align::Right);
        }
        for (i, (e, row)) in c.estimates.iter().zip(&c.correlation).enumerate() {
            let mut cells = vec![format!("{} {}", i + 1, e.name)];
            cells.extend(
                row.iter()
                    .map(|v| v.map_or("–".into(), |v| format!("{v:+.3}"))),
            );
            t.row(cells);
        }
        t.write(out, "  ")?;
    }
    let s = &c.identifiability.relative_singular_values;
    writeln!(
        out,
        "singular values of the scaled Jacobian over the largest: {}",
        s.iter()
            .map(|v| format!("{v:.2e}"))
            .collect::<Vec<_>>()
            .join(", ")
    )?;
    writeln!(out)?;
    writeln!(
        out,
        "residual per tap (rms of the weighted residuals; about 1 is agreement within the noise):"
    )?;
    let mut t = Table::new(&[
        ("run", Align::Left),
        ("tap", Align::Left),
        ("before", Align::Right),
        ("after", Align::Right),
    ]);
    for tr in &c.taps {
        t.row(vec![
            tr.run.clone(),
            tr.tap.clone(),
            super::table::sig(tr.before, 3),
            super::table::sig(tr.after, 3),
        ]);
    }
    t.write(out, "  ")?;
    for n in &r.notices {
        writeln!(out, "note: {n}")?;
    }
    writeln!(out)?;
    writeln!(
        out,
        "measured against predicted with the calibrated values:"
    )?;
    comparison_text(&r.after, out)
}

/// Writes the estimates: one row per parameter.
///
/// # Errors
/// The CSV writer's error.
pub fn csv(r: &CalibrateResult, out: impl Write) -> Result<(), csv::Error> {
    let c = &r.calibration;
    let mut w = csv::Writer::from_writer(out);
    let mut header: Vec<String> = HEADER.iter().map(|h| (*h).to_string()).collect();
    header.extend(c.estimates.iter().map(|e| format!("rho:{}", e.name)));
    w.write_record(&header)?;
    let opt = |v: Option<f64>| v.map_or(String::new(), |v| format!("{v}"));
    for (e, row) in c.estimates.iter().zip(&c.correlation) {
        let mut cells = vec![
            e.name.clone(),
            e.unit.clone(),
            format!("{}", e.start),
            format!("{}", e.value),
            opt(e.uncertainty),
            format!("{}", e.low),
            format!("{}", e.high),
            e.log_scale.to_string(),
            e.at_bound.to_string(),
            e.uncertainty.is_some().to_string(),
        ];
        cells.extend(row.iter().map(|v| opt(*v)));
        w.write_record(&cells)?;
    }
    w.flush()?;
    Ok(())
}

/// The chart of `calibrate --plot`: measured amplitudes, the prediction
/// with the file's values (dashed) and with the calibrated ones (solid).
pub fn chart(r: &CalibrateResult) -> Vec<plot::LineChart> {
    charts(
        &format!(
            "Calibration — {}",
            r.subject.title.as_deref().unwrap_or(&r.subject.file)
        ),
        &[
            Prediction {
                comparison: &r.before,
                label: "as in the file",
                dashed: true,
            },
            Prediction {
                comparison: &r.after,
                label: "calibrated",
                dashed: false,
            },
        ],
    )
}

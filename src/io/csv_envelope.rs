//! CSV tables of an envelope assessment, written to any `impl Write`.
//!
//! Every row carries the envelope columns `speed_rpm,pressure_pa,
//! temperature_c,case` after its fixed leading columns: the shaft speed,
//! the mean pressure (gauge, Pa), the oil temperature (°C) and the load
//! case of the row. Where the envelope does not vary a quantity the file's
//! own value is written, or nothing when the file states none.

use crate::analysis::envelope::{Assessment, Finding};
use crate::envelope::OperatingPoint;
use std::io::Write;

/// The envelope columns, in order.
pub const ENVELOPE_COLUMNS: [&str; 4] = ["speed_rpm", "pressure_pa", "temperature_c", "case"];

/// Header of the findings table (`ripline assess --csv`).
pub const FINDINGS_HEADER: [&str; 14] = [
    "rank",
    "kind",
    "point",
    "harmonic",
    "speed_rpm",
    "pressure_pa",
    "temperature_c",
    "case",
    "frequency_hz",
    "rms_pa",
    "level_db",
    "below_overall_db",
    "rise_db",
    "resonance_hz",
];

/// Header of the grid table (`ripline assess --grid-csv`).
pub const GRID_HEADER: [&str; 8] = [
    "point",
    "harmonic",
    "speed_rpm",
    "pressure_pa",
    "temperature_c",
    "case",
    "frequency_hz",
    "amplitude_pa",
];

/// The file's own mean pressure (gauge, Pa) and oil temperature (K), for
/// the envelope columns of a quantity the envelope does not vary.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct FileOperatingPoint {
    /// Mean pressure, gauge, Pa.
    pub pressure_pa: Option<f64>,
    /// Oil temperature, K.
    pub temperature_k: Option<f64>,
}

/// The envelope columns of a row at `speed_rev_s` and `point`.
pub fn envelope_columns(
    speed_rev_s: f64,
    point: &OperatingPoint,
    own: &FileOperatingPoint,
) -> [String; 4] {
    let number = |v: Option<f64>| v.map_or(String::new(), |v| format!("{v}"));
    [
        format!("{}", speed_rev_s * 60.0),
        number(point.pressure_pa.or(own.pressure_pa)),
        number(
            point
                .temperature_k
                .or(own.temperature_k)
                .map(|t| t - crate::oil::ZERO_CELSIUS_K),
        ),
        point.case.clone().unwrap_or_default(),
    ]
}

/// Writes every finding, ranked (1 = highest level).
///
/// # Errors
/// The CSV writer's error.
pub fn write_findings_csv<W: Write>(
    findings: &[Finding],
    own: &FileOperatingPoint,
    out: W,
) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(FINDINGS_HEADER)?;
    for (i, f) in findings.iter().enumerate() {
        let mut row = vec![
            (i + 1).to_string(),
            f.kind.name().replace(' ', "_"),
            f.tap.clone(),
            f.order.to_string(),
        ];
        row.extend(envelope_columns(f.speed_rev_s, &f.point, own));
        row.extend([
            format!("{}", f.frequency_hz),
            format!("{}", f.rms_pa),
            format!("{}", f.level_db),
            format!("{}", f.below_overall_db),
            f.rise_db.map_or(String::new(), |r| format!("{r}")),
            f.resonance_hz.map_or(String::new(), |r| format!("{r}")),
        ]);
        w.write_record(row)?;
    }
    w.flush()?;
    Ok(())
}

/// Writes the swept grid of every envelope point: one row per measurement
/// point, harmonic, speed and envelope point (peak amplitude in Pa).
///
/// # Errors
/// The CSV writer's error.
pub fn write_grid_csv<W: Write>(
    assessment: &Assessment,
    own: &FileOperatingPoint,
    out: W,
) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(GRID_HEADER)?;
    for ps in &assessment.sweeps {
        let s = &ps.sweep;
        for (pi, tap) in s.points.iter().enumerate() {
            for (oi, order) in s.orders.iter().enumerate() {
                for (si, &speed) in s.speeds_rev_s.iter().enumerate() {
                    let mut row = vec![tap.clone(), order.to_string()];
                    row.extend(envelope_columns(speed, &ps.point, own));
                    row.extend([
                        format!("{}", s.frequency_hz(si, oi)),
                        format!("{}", s.amplitude_pa(si, pi, oi)),
                    ]);
                    w.write_record(row)?;
                }
            }
        }
    }
    w.flush()?;
    Ok(())
}

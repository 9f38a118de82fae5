//! CSV tables of results, written to any `impl Write`.

use crate::analysis::ripple::RippleReport;
use std::io::Write;

/// Header of the harmonic ripple table written by `ripline solve --csv`.
pub const RIPPLE_HEADER: [&str; 5] = [
    "point",
    "harmonic",
    "frequency_hz",
    "amplitude_pa",
    "phase_deg",
];

/// Writes one row per measurement point and harmonic.
///
/// # Errors
/// The CSV writer's error.
pub fn write_ripple_csv<W: Write>(report: &RippleReport, out: W) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(RIPPLE_HEADER)?;
    for tap in &report.taps {
        for h in &tap.harmonics {
            w.write_record([
                tap.name.clone(),
                h.order.to_string(),
                format!("{}", h.freq_hz),
                format!("{}", h.pressure.norm()),
                format!("{}", h.pressure.arg().to_degrees()),
            ])?;
        }
    }
    w.flush()?;
    Ok(())
}

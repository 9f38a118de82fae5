//! CSV tables of results, written to any `impl Write`.

use crate::analysis::profile::RippleProfile;
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

/// Header of the profile table written by `ripline profile --csv`.
pub const PROFILE_HEADER: [&str; 5] = [
    "element",
    "position_m",
    "frequency_hz",
    "amplitude_pa",
    "phase_deg",
];

/// Writes one row per line and sample; `position_m` is the distance from the
/// line's `from` end.
///
/// # Errors
/// The CSV writer's error.
pub fn write_profile_csv<W: Write>(profile: &RippleProfile, out: W) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(PROFILE_HEADER)?;
    for line in &profile.lines {
        for p in &line.points {
            w.write_record([
                line.name.clone(),
                format!("{}", p.position_m),
                format!("{}", profile.freq_hz),
                format!("{}", p.pressure.norm()),
                format!("{}", p.pressure.arg().to_degrees()),
            ])?;
        }
    }
    w.flush()?;
    Ok(())
}

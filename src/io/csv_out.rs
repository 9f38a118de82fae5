//! CSV tables of results, written to any `impl Write`.

use crate::analysis::sweep::SweepResult;
use std::io::Write;

/// Header of the speed-sweep grid written by `ripline sweep --csv`.
pub const SWEEP_HEADER: [&str; 5] = [
    "speed_rpm",
    "point",
    "harmonic",
    "frequency_hz",
    "amplitude_pa",
];

/// Writes one row per speed, measurement point and order of the swept
/// shaft (peak amplitude in Pa).
///
/// # Errors
/// The CSV writer's error.
pub fn write_sweep_csv<W: Write>(result: &SweepResult, out: W) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(SWEEP_HEADER)?;
    for (si, speed) in result.speeds_rev_s.iter().enumerate() {
        for (pi, point) in result.points.iter().enumerate() {
            for (oi, order) in result.orders.iter().enumerate() {
                w.write_record([
                    format!("{}", twelve_digits(speed * 60.0)),
                    point.clone(),
                    order.to_string(),
                    format!("{}", twelve_digits(result.frequency_hz(si, oi))),
                    format!("{}", result.amplitude_pa(si, pi, oi)),
                ])?;
            }
        }
    }
    w.flush()?;
    Ok(())
}

/// `x` rounded to 12 significant digits, so that grid speeds converted
/// between rev/s and rpm print as typed (820, not 820.0000000000001).
fn twelve_digits(x: f64) -> f64 {
    format!("{x:.11e}").parse().unwrap_or(x)
}

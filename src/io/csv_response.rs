//! CSV tables of `ripline response` and `ripline silencer`, written to any
//! `impl Write`. Values are SI; amplitudes are peak values.

use crate::analysis::response::FrequencyResponse;
use std::io::Write;

/// Header of the frequency-response table (`ripline response --csv`).
pub const RESPONSE_HEADER: [&str; 4] =
    ["point", "frequency_hz", "amplitude_pa_per_m3s", "phase_deg"];

/// The name under which the impedance the pump sees appears in the
/// response table (its unit, Pa·s/m³, is also Pa per m³/s).
pub fn load_impedance_point(pump: &str) -> String {
    format!("impedance seen by pump {pump}")
}

/// Writes one row per point and frequency, then the impedance the pump
/// sees as one more "point".
///
/// # Errors
/// The CSV writer's error.
pub fn write_response_csv<W: Write>(
    response: &FrequencyResponse,
    out: W,
) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(RESPONSE_HEADER)?;
    let mut rows = |name: &str, values: &[num_complex::Complex64]| -> Result<(), csv::Error> {
        for (f, v) in response.freqs_hz.iter().zip(values) {
            w.write_record([
                name.to_string(),
                format!("{f}"),
                format!("{}", v.norm()),
                format!("{}", v.arg().to_degrees()),
            ])?;
        }
        Ok(())
    };
    for p in &response.points {
        rows(&p.name, &p.values)?;
    }
    rows(
        &load_impedance_point(&response.pump),
        &response.load_impedance,
    )?;
    w.flush()?;
    Ok(())
}

/// Header of the loss-versus-frequency table (`ripline silencer --csv`).
pub const LOSS_HEADER: [&str; 3] = ["frequency_hz", "transmission_loss_db", "insertion_loss_db"];

/// Writes transmission and insertion loss per frequency.
///
/// # Errors
/// The CSV writer's error.
pub fn write_loss_csv<W: Write>(
    freqs_hz: &[f64],
    transmission_loss_db: &[f64],
    insertion_loss_db: &[f64],
    out: W,
) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(LOSS_HEADER)?;
    for ((f, tl), il) in freqs_hz
        .iter()
        .zip(transmission_loss_db)
        .zip(insertion_loss_db)
    {
        w.write_record([format!("{f}"), format!("{tl}"), format!("{il}")])?;
    }
    w.flush()?;
    Ok(())
}

/// Header of the per-harmonic loss table (`ripline silencer --harmonic-csv`).
pub const HARMONIC_LOSS_HEADER: [&str; 6] = [
    "harmonic",
    "frequency_hz",
    "transmission_loss_db",
    "insertion_loss_db",
    "amplitude_without_pa",
    "amplitude_with_pa",
];

/// One row of the per-harmonic loss table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HarmonicLoss {
    /// Harmonic order.
    pub order: u32,
    /// Frequency in Hz.
    pub freq_hz: f64,
    /// Transmission loss in dB.
    pub transmission_loss_db: f64,
    /// Insertion loss in dB.
    pub insertion_loss_db: f64,
    /// Ripple amplitude (peak) without the silencer, in Pa.
    pub without_pa: f64,
    /// Ripple amplitude (peak) with it, in Pa.
    pub with_pa: f64,
}

/// Writes the per-harmonic loss table.
///
/// # Errors
/// The CSV writer's error.
pub fn write_harmonic_loss_csv<W: Write>(rows: &[HarmonicLoss], out: W) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(HARMONIC_LOSS_HEADER)?;
    for r in rows {
        w.write_record([
            r.order.to_string(),
            format!("{}", r.freq_hz),
            format!("{}", r.transmission_loss_db),
            format!("{}", r.insertion_loss_db),
            format!("{}", r.without_pa),
            format!("{}", r.with_pa),
        ])?;
    }
    w.flush()?;
    Ok(())
}

//! Renderers: results ([`crate::results`]) as terminal text, CSV, JSON and
//! charts.
//!
//! One module per analysis holds its renderers: `text` (the report on the
//! terminal, with one unit per table column and the digits the numbers
//! support, see [`table`]), `csv` (the documented long-format tables: SI,
//! peak amplitudes, their headers pinned by tests) and `chart` (the chart
//! descriptions drawn by [`crate::plot`]). [`json`] writes any result. No
//! renderer computes physics: everything it shows is in the result.

pub mod assess;
pub mod bands;
pub mod calibrate;
pub mod check;
pub mod compare;
pub mod decimal;
pub mod fit;
pub mod fit_check;
pub mod json;
pub mod long_csv;
pub mod over_envelope;
pub mod plan_bench;
pub mod profile;
pub mod report;
pub mod response;
pub mod silencer;
pub mod solve;
pub mod sweep;
pub mod table;
pub mod tune;

use crate::results::{Phasor, Subject};
use crate::units::format_sig;
use std::io::Write;
use table::{Align, Table, Unit};

/// The first lines of a report: `ripline <command>: <file>` and the
/// circuit's title, if any.
///
/// # Errors
/// The writer's error.
pub fn heading(out: &mut impl Write, command: &str, subject: &Subject) -> std::io::Result<()> {
    writeln!(out, "ripline {command}: {}", subject.file)?;
    if let Some(title) = &subject.title {
        writeln!(out, "circuit: {title}")?;
    }
    Ok(())
}

/// A companion file of an output: `plot.svg` → `plot-<tag>.svg`.
pub fn companion_path(path: &std::path::Path, tag: &str) -> std::path::PathBuf {
    let stem = path
        .file_stem()
        .map_or_else(|| "output".into(), |s| s.to_string_lossy().into_owned());
    let ext = path
        .extension()
        .map(|e| format!(".{}", e.to_string_lossy()))
        .unwrap_or_default();
    path.with_file_name(format!("{stem}-{tag}{ext}"))
}

/// The line that says which harmonics are left out for want of source
/// flow, if any: the wording `response`, `solve`, `silencer` and `assess`
/// share.
///
/// # Errors
/// The writer's error.
pub fn silent_orders_note(
    out: &mut impl Write,
    indent: &str,
    orders: &[u32],
) -> std::io::Result<()> {
    if orders.is_empty() {
        return Ok(());
    }
    let list: Vec<String> = orders.iter().map(u32::to_string).collect();
    writeln!(
        out,
        "{indent}(left out, no source flow in the pump's table: harmonic {})",
        list.join(", ")
    )
}

/// "161.2 dB", or "no ripple" for a level of nothing.
pub fn level_text(level_db: Option<f64>) -> String {
    level_db.map_or_else(|| "no ripple".into(), |l| format!("{l:.1} dB"))
}

/// A reference pressure as printed beside levels: at most 4 significant
/// digits and no trailing zeros, in the unit that reads best ("1 Pa",
/// "1 bar", "2e-5 Pa").
pub fn reference_text(p_ref_pa: f64) -> String {
    let unit = table::Quantity::Pressure.unit_for(p_ref_pa);
    format!("{} {}", format_sig(unit.of(p_ref_pa), 4), unit.symbol)
}

/// A table of harmonics: order (headed `order_header`), frequency in Hz,
/// amplitude in `unit` (one unit for the column) and phase in degrees.
pub fn harmonic_table(
    order_header: &str,
    unit: Unit,
    rows: impl Iterator<Item = (u32, f64, Phasor)>,
) -> Table {
    let mut t = Table::new(&[(order_header, Align::Right), ("frequency Hz", Align::Right)])
        .column(format!("amplitude {}", unit.symbol), Align::Right)
        .column("phase deg", Align::Right);
    for (order, freq_hz, value) in rows {
        t.row(vec![
            order.to_string(),
            format!("{freq_hz:.2}"),
            table::sig(unit.of(value.amplitude), table::DIGITS),
            table::phase(value.phase_deg),
        ]);
    }
    t
}

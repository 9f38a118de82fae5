//! Renderers: results ([`crate::results`]) as terminal text, CSV, JSON and
//! charts.
//!
//! One module per analysis holds its renderers: `text` (the report on the
//! terminal, with one unit per table column and the digits the numbers
//! support, see [`table`]), `csv` (the documented long-format tables: SI,
//! peak amplitudes, their headers pinned by tests) and `chart` (the chart
//! descriptions drawn by [`crate::plot`]). [`json`] writes any result. No
//! renderer computes physics: everything it shows is in the result.

pub mod check;
pub mod fit;
pub mod json;
pub mod profile;
pub mod report;
pub mod response;
pub mod silencer;
pub mod solve;
pub mod sweep;
pub mod table;
pub mod tune;

use crate::results::Subject;
use crate::units::format_sig;
use std::io::Write;

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

//! The terminal report of a command run at several envelope points
//! ([`OverEnvelope`]): the worst values over the envelope, ranked, the
//! first few shown; each point's full result is in the CSV and JSON
//! outputs, and one point's report is a `--at` away.

use super::heading;
use super::table::{Align, DIGITS, Quantity, Table, sig};
use crate::results::over_envelope::OverEnvelope;
use std::io::Write;

/// Writes the ranked report of `command` over the envelope: the first
/// `top` values.
///
/// # Errors
/// The writer's error.
pub fn text<T>(
    r: &OverEnvelope<'_, T>,
    command: &str,
    top: usize,
    out: &mut impl Write,
) -> std::io::Result<()> {
    heading(out, command, r.subject)?;
    let points = r.envelope_points.len();
    writeln!(out, "over {points} envelope points")?;
    let shown = &r.ranked[..top.min(r.ranked.len())];
    if shown.is_empty() {
        writeln!(out, "no {} at any of them", r.measure)?;
    } else {
        writeln!(
            out,
            "{}, highest first ({} of {}; every value and each point's full result in --csv and --json):",
            capitalised(r.measure),
            shown.len(),
            r.ranked.len()
        )?;
        let unit = Quantity::Pressure.unit_for_all(shown.iter().map(|x| x.worst.value_pa));
        let mut t = Table::new(&[
            ("rank", Align::Right),
            ("envelope point", Align::Left),
            ("where", Align::Left),
            ("speed rpm", Align::Right),
        ])
        .column(unit.symbol, Align::Right);
        for (i, x) in shown.iter().enumerate() {
            t.row(vec![
                (i + 1).to_string(),
                x.label.clone(),
                x.worst.subject.clone(),
                x.worst
                    .speed_rev_s
                    .map_or_else(|| "-".into(), |s| format!("{:.1}", s * 60.0)),
                sig(unit.of(x.worst.value_pa), DIGITS),
            ]);
        }
        t.write(out, "  ")?;
    }
    if let Some(first) = r.ranked.first() {
        writeln!(
            out,
            "one point's full report: ripline {command} … --at \"{}\"",
            first.label
        )?;
    }
    Ok(())
}

/// `text` with its first letter in upper case.
fn capitalised(text: &str) -> String {
    let mut c = text.chars();
    c.next().map_or_else(String::new, |f| {
        f.to_uppercase().chain(c).collect::<String>()
    })
}

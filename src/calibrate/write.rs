//! The calibrated circuit file: the user's text with only the calibrated
//! values replaced, each marked by a comment, and a note at the top.
//!
//! Each value is found by its key path (`io::locate`) and replaced on its
//! line, in block style (`key: value`) or inside a flow mapping
//! (`{key: value, …}`), keeping its quotes. The new value carries the
//! estimate's standard uncertainty in the file's tolerance syntax
//! (`1.43 GPa, u = 0.02 GPa`), so that uncertainty bands computed from the
//! calibrated file include it. The text written is read back and every
//! replaced value checked before it is returned.

use super::fit::{Calibration, Parameter};
use crate::io::CircuitTemplate;
use crate::io::locate::{PathSegment, locate};
use crate::units::format_sig;

/// A number rounded where a standard uncertainty `u` given to two
/// significant digits ends (JCGM 100:2008 §7.2.6), and never to fewer than
/// `min_digits` significant digits.
pub fn rounded(value: f64, u: Option<f64>, min_digits: usize) -> (String, Option<String>) {
    let digits_of = |v: f64| -> i32 {
        if v == 0.0 {
            0
        } else {
            v.abs().log10().floor() as i32
        }
    };
    match u.filter(|u| *u > 0.0 && u.is_finite()) {
        None => (format_sig(value, min_digits.max(6)), None),
        Some(u) => {
            let last = digits_of(u) - 1; // decimal place of u's second digit
            let sig = (digits_of(value) - last + 1).max(min_digits as i32) as usize;
            let uu = format_sig(u, 2);
            (format_sig(value, sig), Some(uu))
        }
    }
}

/// The calibrated circuit text.
///
/// # Errors
/// A message when a value cannot be found on its line (a value spread
/// over several lines, say) or the text written does not read back with the
/// calibrated values.
pub fn calibrated_text(
    template: &CircuitTemplate,
    parameters: &[Parameter],
    calibration: &Calibration,
    measurements: &str,
) -> Result<String, String> {
    let text = template.text();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let mut replaced = Vec::new();
    for (p, e) in parameters.iter().zip(&calibration.estimates) {
        let (line, col) = locate(text, &p.target.path)
            .ok_or_else(|| format!("`{}`: its line was not found", p.target.name))?;
        let Some(PathSegment::Key(key)) = p.target.path.0.last() else {
            return Err(format!("`{}` is not a key", p.target.name));
        };
        let (number, u) = rounded(e.value, e.uncertainty, 6);
        let unit = &p.target.written.unit;
        let mut value = if unit.is_empty() {
            number.clone()
        } else {
            format!("{number} {unit}")
        };
        if let Some(u) = &u {
            value.push_str(&format!(
                ", u = {u}{}",
                if unit.is_empty() {
                    String::new()
                } else {
                    format!(" {unit}")
                }
            ));
        }
        let old = &mut lines[line - 1];
        let new_line = replace_value(old, col - 1, key, &value).ok_or_else(|| {
            format!(
                "`{}`: the value on line {line} could not be replaced",
                p.target.name
            )
        })?;
        let start = p.target.written.number;
        let note = format!(
            "calibrated (was {}{}){}",
            format_sig(start, 6),
            if unit.is_empty() {
                String::new()
            } else {
                format!(" {unit}")
            },
            if e.uncertainty.is_none() {
                ", not identifiable from the data"
            } else {
                ""
            }
        );
        *old = match new_line.find(" #") {
            Some(_) => format!("{new_line}; {note}"),
            None => format!("{new_line}  # {note}"),
        };
        replaced.push((p, number.parse::<f64>().unwrap_or(e.value)));
    }
    let names: Vec<&str> = parameters.iter().map(|p| p.target.name.as_str()).collect();
    let mut out = format!(
        "# Calibrated by `ripline calibrate` against {measurements}: {} replaced (marked\n# `calibrated`, each with its standard uncertainty); everything else is as written.\n# Their correlations are in the calibration report, not in this file.\n",
        names.join(", ")
    );
    out.push_str(&lines.join("\n"));
    if text.ends_with('\n') {
        out.push('\n');
    }
    // Read it back: every replaced value must hold its new number.
    let back = CircuitTemplate::new(&out, template.file()).map_err(|e| e.to_string())?;
    for (p, want) in replaced {
        let got = back.target(&p.target.name)?;
        if (got.written.number - want).abs() > 1e-12 * want.abs().max(1e-300) {
            return Err(format!(
                "`{}` reads back as {} instead of {want}",
                p.target.name, got.written.number
            ));
        }
    }
    crate::io::parse_circuit(&out, template.file()).map_err(|e| e.to_string())?;
    Ok(out)
}

/// `line` with the value of `key` (whose entry starts at byte `from`)
/// replaced by `value`; `None` when it is not there.
fn replace_value(line: &str, from: usize, key: &str, value: &str) -> Option<String> {
    let from = from.min(line.len());
    let pattern = format!("{key}:");
    let mut search = from;
    let at = loop {
        let i = line[search..].find(&pattern)? + search;
        let before = line[..i].chars().last();
        if before.is_none_or(|c| c == ' ' || c == '{' || c == ',' || c == '-') {
            break i;
        }
        search = i + pattern.len();
    };
    let in_flow = line[..at].contains('{');
    let mut start = at + pattern.len();
    while line[start..].starts_with(' ') {
        start += 1;
    }
    let rest = &line[start..];
    let (end, quote) = match rest.chars().next() {
        Some(q @ ('"' | '\'')) => (start + 1 + rest[1..].find(q)? + 1, Some(q)),
        _ => {
            let mut end = line.len();
            // the comment keeps its place (the spaces before it stay)
            if let Some(i) = rest.find(" #") {
                end = end.min(start + rest[..i].trim_end().len());
            }
            // a tolerance `, u = …` is part of the value in block style
            // only; in flow style it must be quoted
            if in_flow && let Some(i) = rest.find([',', '}']) {
                end = end.min(start + i);
            }
            (end, None)
        }
    };
    let new = match quote {
        Some(q) => format!("{q}{value}{q}"),
        None if in_flow && value.contains(',') => format!("\"{value}\""),
        None => value.to_string(),
    };
    Some(format!(
        "{}{}{}",
        &line[..start],
        new,
        line[end..].trim_end_matches(' ')
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn values_are_replaced_in_block_and_flow_style() {
        assert_eq!(
            replace_value(
                "  bulk_modulus: 1.6 GPa   # oil",
                2,
                "bulk_modulus",
                "1.5 GPa"
            )
            .unwrap(),
            "  bulk_modulus: 1.5 GPa   # oil"
        );
        assert_eq!(
            replace_value(
                "  - {name: h, kind: hose, wave_speed: 1000 m/s, loss_factor: 0.1}",
                2,
                "wave_speed",
                "950 m/s, u = 3 m/s"
            )
            .unwrap(),
            "  - {name: h, kind: hose, wave_speed: \"950 m/s, u = 3 m/s\", loss_factor: 0.1}"
        );
        assert_eq!(
            replace_value("    volume: '0.2 L'", 4, "volume", "0.25 L").unwrap(),
            "    volume: '0.25 L'"
        );
        // a key that merely ends like another is not taken
        assert_eq!(
            replace_value("    gas_volume: 1 L", 4, "volume", "2 L"),
            None
        );
    }

    // GUM §7.2.6: the uncertainty to at most two significant digits and
    // the value rounded to the same place.
    #[test]
    fn estimates_are_rounded_where_their_uncertainty_ends() {
        assert_eq!(
            rounded(1.434_567_8, Some(0.012_34), 3),
            ("1.435".into(), Some("0.012".into()))
        );
        assert_eq!(
            rounded(1234.5678, Some(56.0), 3),
            ("1235".into(), Some("56".into()))
        );
        assert_eq!(rounded(0.1, None, 6).0, "0.1");
    }
}

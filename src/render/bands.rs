//! Renderers of uncertainty bands ([`RippleBands`]): the report section
//! shared by the commands that compute them.

use super::table::{Align, DIGITS, Quantity, Table, sig};
use crate::io::quantity::Spread;
use crate::results::bands::{ResponseBands, RippleBands, SweepBands};
use crate::uncertainty::bands::{BandsInfo, Method, OutputBand};
use std::io::Write;

/// How the bands were made: method, coverage, draws, inputs.
///
/// # Errors
/// The writer's error.
pub fn info_text(i: &BandsInfo, out: &mut impl Write) -> std::io::Result<()> {
    let pct = sig(i.coverage * 100.0, 3);
    match i.method {
        Method::MonteCarlo => writeln!(
            out,
            "uncertainty bands: {pct} % coverage intervals by Monte Carlo (JCGM 101), {} draws, seed {}{}",
            i.draws,
            i.seed,
            match i.stable {
                Some(true) if i.judged < i.outputs => format!(
                    ", stable (JCGM 101 §7.9, judged on the {} bands the report concludes on)",
                    i.judged
                ),
                Some(true) => ", stable (JCGM 101 §7.9)".to_string(),
                Some(false) => {
                    ", NOT stable at the cap of draws: the ends are uncertain".to_string()
                }
                None => String::new(),
            }
        )?,
        Method::Linear => writeln!(
            out,
            "uncertainty bands: {pct} % coverage intervals to first order (GUM law of propagation, normal coverage factor)"
        )?,
    }
    if i.redrawn > 0 {
        writeln!(
            out,
            "{} set a value the circuit refuses (e.g. a volume below zero) and {} drawn again: the draws follow the tolerances truncated to the values the circuit accepts",
            if i.redrawn == 1 {
                "1 draw".to_string()
            } else {
                format!("{} draws", i.redrawn)
            },
            if i.redrawn == 1 { "was" } else { "were" },
        )?;
    }
    writeln!(out, "uncertain inputs (taken as independent):")?;
    for input in &i.inputs {
        let unit = if input.unit.is_empty() {
            String::new()
        } else {
            format!(" {}", input.unit)
        };
        writeln!(
            out,
            "  {}: {}{unit} {} {}{unit}",
            input.name,
            sig(input.nominal, DIGITS),
            match input.spread {
                Spread::Limits => "±",
                Spread::Standard => "with u =",
            },
            sig(input.amount, DIGITS),
        )?;
    }
    let first_order = format!(
        "first-order bands good (nonlinearity index ≤ 0.1) for {} of {} outputs",
        i.linear_good, i.outputs
    );
    match i.method {
        Method::MonteCarlo => writeln!(
            out,
            "{first_order}; they disagree with Monte Carlo (JCGM 101 §8) for {}",
            i.linear_disagrees
        ),
        Method::Linear if i.linear_good < i.outputs => {
            writeln!(out, "{first_order}: use --bands monte-carlo for the others")
        }
        Method::Linear => writeln!(out, "{first_order}"),
    }
}

/// "low .. high" of a band in `unit`, or "unknown".
fn interval(b: &OutputBand, unit: super::table::Unit) -> String {
    match b.interval() {
        Some((lo, hi)) => format!(
            "{} .. {}",
            sig(unit.of(lo), DIGITS),
            sig(unit.of(hi), DIGITS)
        ),
        None => "unknown".into(),
    }
}

/// The bands of `solve`: per (source and) point, each harmonic's amplitude
/// and the overall rms and peak-to-peak.
///
/// # Errors
/// The writer's error.
pub fn ripple_text(b: &RippleBands, out: &mut impl Write) -> std::io::Result<()> {
    writeln!(out)?;
    info_text(&b.info, out)?;
    let several = b.sources.len() > 1;
    for s in &b.sources {
        for p in &s.points {
            writeln!(out)?;
            if several {
                writeln!(out, "point `{}`, source `{}`", p.point, s.name)?;
            } else {
                writeln!(out, "point `{}`", p.point)?;
            }
            let unit = Quantity::Pressure.unit_for_all(
                p.harmonics
                    .iter()
                    .map(|h| h.amplitude_pa.nominal)
                    .chain([p.peak_to_peak_pa.nominal]),
            );
            let mut t = Table::new(&[
                ("", Align::Left),
                (&format!("nominal {}", unit.symbol), Align::Right),
                (&format!("band {}", unit.symbol), Align::Right),
            ]);
            let mut row = |name: String, band: &OutputBand| {
                t.row(vec![
                    name,
                    sig(unit.of(band.nominal), DIGITS),
                    interval(band, unit),
                ]);
            };
            for h in &p.harmonics {
                row(format!("harmonic {}", h.order), &h.amplitude_pa);
            }
            row("overall rms".into(), &p.rms_pa);
            row("peak-to-peak".into(), &p.peak_to_peak_pa);
            t.write(out, "  ")?;
        }
    }
    Ok(())
}

/// The bands of `response`: each resonance's frequency and peak level.
///
/// # Errors
/// The writer's error.
pub fn response_text(b: &ResponseBands, out: &mut impl Write) -> std::io::Result<()> {
    writeln!(out)?;
    info_text(&b.info, out)?;
    if b.resonances.is_empty() {
        return writeln!(
            out,
            "no resonance in the band: the bands of the curves are in the CSV, the JSON and the plot"
        );
    }
    let mut t = Table::new(&[
        ("#", Align::Right),
        ("frequency Hz", Align::Right),
        ("band Hz", Align::Right),
        ("peak level Pa·s/m³", Align::Right),
        ("band Pa·s/m³", Align::Right),
    ]);
    let si = super::table::Unit {
        symbol: "",
        si: 1.0,
    };
    for (i, r) in b.resonances.iter().enumerate() {
        t.row(vec![
            format!("{}", i + 1),
            sig(r.nominal_hz, DIGITS),
            interval(&r.freq_hz, si),
            if r.level_pa_per_m3_s.nominal.is_finite() {
                sig(r.level_pa_per_m3_s.nominal, DIGITS)
            } else {
                "unbounded".into()
            },
            interval(&r.level_pa_per_m3_s, si),
        ]);
    }
    t.write(out, "  ")?;
    for (i, r) in b.resonances.iter().enumerate() {
        if let Some(m) = r.freq_hz.monte_carlo.filter(|m| m.missing > 0) {
            writeln!(
                out,
                "  resonance {} ({} Hz) is missing from {} of {} draws (merged with a neighbour, or below the prominence threshold there): its bands are over the draws that show it",
                i + 1,
                sig(r.nominal_hz, DIGITS),
                m.missing,
                b.info.draws
            )?;
        }
    }
    Ok(())
}

/// The bands of `sweep`: each point's worst speed and the rms there (the
/// rms at every speed is in the JSON).
///
/// # Errors
/// The writer's error.
pub fn sweep_text(b: &SweepBands, out: &mut impl Write) -> std::io::Result<()> {
    writeln!(out)?;
    info_text(&b.info, out)?;
    let unit = Quantity::Pressure.unit_for_all(b.points.iter().map(|p| p.worst_rms_pa.nominal));
    let rpm = super::table::Unit {
        symbol: "rpm",
        si: 1.0 / 60.0,
    };
    let mut t = Table::new(&[
        ("point", Align::Left),
        ("worst speed rpm", Align::Right),
        ("band rpm", Align::Right),
        (&format!("rms {}", unit.symbol), Align::Right),
        (&format!("band {}", unit.symbol), Align::Right),
    ]);
    for p in &b.points {
        t.row(vec![
            p.point.clone(),
            sig(rpm.of(p.worst_speed_rev_s.nominal), DIGITS),
            interval(&p.worst_speed_rev_s, rpm),
            sig(unit.of(p.worst_rms_pa.nominal), DIGITS),
            interval(&p.worst_rms_pa, unit),
        ]);
    }
    t.write(out, "  ")?;
    // a worst speed that jumps between crossings over the draws: where
    // it lies, so that one interval over both does not hide it
    let split: Vec<(&str, Vec<String>)> = b
        .points
        .iter()
        .map(|p| {
            let shown: Vec<String> = p
                .worst_speed_places
                .iter()
                .filter(|s| s.share >= MIN_PLACE_SHARE)
                .map(|s| {
                    let (low, high) = (
                        sig(rpm.of(s.low_rev_s), DIGITS),
                        sig(rpm.of(s.high_rev_s), DIGITS),
                    );
                    let speeds = if low == high {
                        low
                    } else {
                        format!("{low} .. {high}")
                    };
                    format!(
                        "{speeds} rpm in {:.1} %{}",
                        100.0 * s.share,
                        if s.nominal { " (the nominal's)" } else { "" }
                    )
                })
                .collect();
            (p.point.as_str(), shown)
        })
        .filter(|(_, shown)| shown.len() > 1)
        .collect();
    if !split.is_empty() {
        writeln!(
            out,
            "worst speed in more than one place over the draws (it passes from one resonance crossing to another; places holding under {:.0} % of the draws not shown):",
            100.0 * MIN_PLACE_SHARE
        )?;
    }
    for (point, shown) in split {
        writeln!(out, "  {point}: {}", shown.join(", "))?;
    }
    Ok(())
}

/// Places of a worst speed holding fewer draws than this share are left
/// out of the text (they are in the JSON).
const MIN_PLACE_SHARE: f64 = 0.01;

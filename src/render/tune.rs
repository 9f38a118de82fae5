//! Renderers of [`TuneResult`]: the terminal report, the CSV of the ripple
//! per condition for the three designs, and its chart.

use super::table::{Align, DIGITS, Quantity, Table, Unit, sig};
use super::{heading, reference_text};
use crate::plot;
use crate::results::tune::{ParameterResult, Ripple, TuneResult};
use std::io::Write;

/// Header of the ripple table (`tune --csv`): one row per condition, the
/// overall rms ripple (Pa) at the point without the silencer, with it as
/// in the file and tuned; `temperature_k` is empty without
/// `--temperatures`, `without_pa` when the circuit without the silencer
/// cannot be formed.
pub const TUNE_HEADER: [&str; 5] = [
    "speed_rpm",
    "temperature_k",
    "without_pa",
    "as_in_file_pa",
    "tuned_pa",
];

/// The display unit of a parameter row, from its largest value; gas
/// pressures in bar gauge, damping in N·s/m.
fn parameter_unit(p: &ParameterResult) -> (Unit, f64) {
    let largest = p.high.max(p.best).max(p.in_file.unwrap_or(0.0));
    match p.unit {
        "m" => (Quantity::Length.unit_for(largest), 0.0),
        "m3" => (Quantity::Volume.unit_for(largest), 0.0),
        "N·s/m" => (
            Unit {
                symbol: "N·s/m",
                si: 1.0,
            },
            0.0,
        ),
        _ => (
            Unit {
                symbol: "bar gauge",
                si: 1e5,
            },
            crate::elements::STANDARD_ATMOSPHERE_PA,
        ),
    }
}

/// Writes the terminal report.
///
/// # Errors
/// The writer's error.
pub fn text(r: &TuneResult, out: &mut impl Write) -> std::io::Result<()> {
    heading(out, "tune", &r.subject)?;
    writeln!(
        out,
        "element `{}` ({}, {}); point `{}`",
        r.element, r.kind, r.place, r.tap
    )?;
    writeln!(
        out,
        "objective: {}, harmonics 1–{} of pump `{}`",
        r.objective, r.harmonics, r.pump.name
    )?;
    writeln!(
        out,
        "speeds: {} (log-spaced, ends included{}); speed range {}",
        r.speeds_rev_s.len(),
        if r.refined_worst {
            ", every resonance crossing between them refined to 0.01 dB"
        } else {
            ""
        },
        r.speed_range.describe_origin()
    )?;
    if !r.temperatures_k.is_empty() {
        writeln!(
            out,
            "fluid temperatures: {} °C (each at every speed; density, bulk modulus and viscosity from the oil model)",
            r.temperatures_k
                .iter()
                .map(|t| format!("{:.1}", t - 273.15))
                .collect::<Vec<_>>()
                .join(", ")
        )?;
    }
    let one = r.parameters.len() == 1;
    writeln!(
        out,
        "search: {} in log scale over the bounds, then {}; {} ripple evaluations of {} network solves each on the speed grid",
        if one {
            format!("an even grid of {} values", r.search.global_points)
        } else {
            format!("{} Halton samples", r.search.global_points)
        },
        if one {
            "golden-section refinement of the best grid minima"
        } else {
            "Nelder–Mead refinement of the best separated samples"
        },
        r.search.evaluations,
        r.search.solves_per_evaluation
    )?;
    writeln!(out)?;
    let mut t = Table::new(&[
        ("parameter", Align::Left),
        ("unit", Align::Left),
        ("in the file", Align::Right),
        ("best", Align::Right),
        ("low", Align::Right),
        ("high", Align::Right),
    ]);
    for p in &r.parameters {
        let (unit, offset) = parameter_unit(p);
        let show = |v: f64| sig(unit.of(v - offset), DIGITS);
        let mut row = vec![
            p.name.to_string(),
            unit.symbol.to_string(),
            p.in_file.map_or_else(|| "—".into(), show),
            show(p.best),
            show(p.low),
            show(p.high),
        ];
        if p.at_bound {
            row.push("(at a bound: widen it?)".into());
        }
        t.row(row);
    }
    t.write(out, "  ")?;
    writeln!(out)?;
    writeln!(out, "ripple at `{}` ({}):", r.tap, r.objective)?;
    let designs: Vec<(&str, &Ripple)> = r
        .without
        .iter()
        .map(|w| ("without the silencer:  ", w))
        .chain([
            ("as in the file:        ", &r.as_in_file),
            ("tuned:                 ", &r.tuned),
        ])
        .collect();
    let unit = Quantity::Pressure.unit_for_all(designs.iter().map(|d| d.1.objective_pa));
    let level = |pa: f64, db: Option<f64>| match db {
        Some(db) => format!(
            "{} rms ({db:.1} dB re {})",
            unit.show(pa),
            reference_text(r.db_ref_pa)
        ),
        None => "no ripple".into(),
    };
    for (label, d) in &designs {
        writeln!(out, "  {label} {}", level(d.objective_pa, d.level_db))?;
    }
    if let Some(db) = r.improvement_db() {
        writeln!(out, "  improvement over the file's design: {db:.2} dB")?;
    }
    if let Some(db) = r.attenuation_db() {
        writeln!(out, "  attenuation against no silencer: {db:.2} dB")?;
    }
    if let Some(w) = &r.worst {
        let speed = w.speed_rev_s * 60.0;
        match w.temperature_k {
            Some(t) => writeln!(
                out,
                "  tuned, worst condition: {speed:.0} rpm at {:.1} °C with {}",
                t - 273.15,
                level(w.rms_pa, w.level_db)
            )?,
            None => writeln!(
                out,
                "  tuned, worst speed: {speed:.0} rpm with {}",
                level(w.rms_pa, w.level_db)
            )?,
        }
    }
    writeln!(out)?;
    writeln!(
        out,
        "steepness (ripple rise when one parameter is off its best value, others kept):"
    )?;
    for s in &r.steepness {
        let db = |v: Option<f64>| v.map_or("not valid".into(), |d| format!("{d:+.2} dB"));
        writeln!(
            out,
            "  {:<12}  −10 %: {:>10}   +10 %: {:>10}",
            s.name,
            db(s.minus_10_percent_db),
            db(s.plus_10_percent_db)
        )?;
    }
    writeln!(out)?;
    writeln!(out, "tuned element:")?;
    for line in &r.tuned_description {
        writeln!(out, "  {line}")?;
    }
    writeln!(
        out,
        "in the circuit file, set: {}",
        r.parameters
            .iter()
            .map(|p| format!("{}: {}", p.name, p.file_value))
            .collect::<Vec<_>>()
            .join(", ")
    )?;
    for c in &r.cautions {
        writeln!(out)?;
        writeln!(out, "{c}")?;
    }
    Ok(())
}

/// Writes the overall rms ripple per condition for the three designs.
///
/// # Errors
/// The CSV writer's error.
pub fn csv(r: &TuneResult, out: impl Write) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(TUNE_HEADER)?;
    for (i, (speed, temperature)) in r.conditions().into_iter().enumerate() {
        let at = |d: &Ripple| format!("{}", d.per_condition_pa[i]);
        w.write_record([
            format!("{}", speed * 60.0),
            temperature.map_or_else(String::new, |t| format!("{t}")),
            r.without.as_ref().map_or_else(String::new, at),
            at(&r.as_in_file),
            at(&r.tuned),
        ])?;
    }
    w.flush()?;
    Ok(())
}

/// The overall rms ripple level (dB re the reference) against speed for
/// the three designs (one curve per design and fluid temperature); a dB
/// axis shows the with-silencer curves that a linear one flattens.
pub fn chart(r: &TuneResult) -> plot::LineChart {
    let designs: Vec<(&str, &Ripple)> = r
        .without
        .iter()
        .map(|w| ("without the silencer", w))
        .chain([("as in the file", &r.as_in_file), ("tuned", &r.tuned)])
        .collect();
    let conditions = r.conditions();
    let temperatures: Vec<Option<f64>> = if r.temperatures_k.is_empty() {
        vec![None]
    } else {
        r.temperatures_k.iter().map(|t| Some(*t)).collect()
    };
    let mut series = Vec::new();
    for (name, d) in &designs {
        for t in &temperatures {
            series.push(plot::XySeries {
                name: match t {
                    Some(t) => format!("{name}, {:.0} °C", t - 273.15),
                    None => (*name).to_string(),
                },
                points: conditions
                    .iter()
                    .zip(&d.per_condition_pa)
                    .filter(|((_, ct), p)| ct == t && **p > 0.0)
                    .map(|((s, _), p)| (s * 60.0, 20.0 * (p / r.db_ref_pa).log10()))
                    .collect(),
                style: plot::SeriesStyle::LineAndPoints,
                ..Default::default()
            });
        }
    }
    plot::LineChart {
        title: format!(
            "Ripple at {} with `{}` sized — {}",
            r.tap,
            r.element,
            r.subject.title.as_deref().unwrap_or(&r.subject.file)
        ),
        x_label: "shaft speed (rpm)".into(),
        y_label: format!(
            "overall rms ripple level (dB re {})",
            reference_text(r.db_ref_pa)
        ),
        series,
        ..Default::default()
    }
}

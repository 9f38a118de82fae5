//! Renderers of [`TuneResult`]: the terminal report, the CSV of the ripple
//! per condition for the three designs, and its chart.

use super::table::{Align, DIGITS, Quantity, Table, Unit, sig};
use super::{heading, reference_text};
use crate::analysis::tune_rules::RuleKind;
use crate::plot;
use crate::results::tune::{ParameterResult, Ripple, TightestResult, TuneResult};
use std::io::Write;

/// Header of the ripple table (`tune --csv`): one row per condition, the
/// overall rms ripple (Pa) at the point without the silencer, with it as
/// in the file and tuned; `temperature_k` is empty without
/// `--temperatures`, `without_pa` when the circuit without the silencer
/// cannot be formed, `point` (the envelope point's label) without
/// `--envelope`.
pub const TUNE_HEADER: [&str; 6] = [
    "speed_rpm",
    "temperature_k",
    "without_pa",
    "as_in_file_pa",
    "tuned_pa",
    "point",
];

/// The header of the designs table (`tune --designs-csv`) before the
/// parameter columns: one row per evaluated design, in the order the
/// search made them; `objective_pa` is empty for a design that is not
/// valid or with `--objective smallest`, which fills `size` (SI: m³ or m)
/// and `margin_db` (to the tightest limit, negative when exceeded); then
/// one column per varied parameter, `<name>_<SI unit>`.
pub const DESIGNS_HEADER: [&str; 7] = [
    "evaluation",
    "stage",
    "objective_pa",
    "objective_db",
    "keeps_rules",
    "size",
    "margin_db",
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
            _ if w.point.is_some() => writeln!(
                out,
                "  tuned, worst condition: {speed:.0} rpm at envelope point `{}` with {}",
                w.point.as_deref().unwrap_or(""),
                level(w.rms_pa, w.level_db)
            )?,
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
    for d in &r.degeneracies {
        match d.second {
            Some(second) => writeln!(
                out,
                "  degenerate: the ripple follows only {} × {second}^{:.2} near the optimum (sensitivities correlated {:+.4}), so the search cannot separate them: hold one (vary only the other)",
                d.first, d.exponent, d.correlation
            )?,
            None => writeln!(
                out,
                "  degenerate: the ripple hardly depends on {} near the optimum, so its best value means little: hold it",
                d.first
            )?,
        }
    }
    smallest_text(r, out)?;
    writeln!(out)?;
    rules_text(r, out)?;
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
    for (i, (speed, temperature, point)) in r.conditions().into_iter().enumerate() {
        let at = |d: &Ripple| format!("{}", d.per_condition_pa[i]);
        w.write_record([
            format!("{}", speed * 60.0),
            temperature.map_or_else(String::new, |t| format!("{t}")),
            r.without.as_ref().map_or_else(String::new, at),
            at(&r.as_in_file),
            at(&r.tuned),
            point.unwrap_or("").to_string(),
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
    let n = r.speeds_rev_s.len().max(1);
    let states: Vec<String> = if !r.points.is_empty() {
        r.points.clone()
    } else {
        r.temperatures_k
            .iter()
            .map(|t| format!("{:.0} °C", t - 273.15))
            .collect()
    };
    let mut series = Vec::new();
    for (name, d) in &designs {
        for state in 0..states.len().max(1) {
            series.push(plot::XySeries {
                name: match states.get(state) {
                    Some(label) => format!("{name}, {label}"),
                    None => (*name).to_string(),
                },
                points: conditions
                    .iter()
                    .zip(&d.per_condition_pa)
                    .skip(state * n)
                    .take(n)
                    .filter(|(_, p)| **p > 0.0)
                    .map(|((s, _, _), p)| (s * 60.0, 20.0 * (p / r.db_ref_pa).log10()))
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

/// A rule's value in its display unit.
fn rule_value(rule: RuleKind, v: f64) -> String {
    match rule {
        RuleKind::PrechargeFraction => format!("{v:.3}"),
        RuleKind::VesselSize => Quantity::Volume.unit_for(v).show(v),
        RuleKind::Length => Quantity::Length.unit_for(v).show(v),
        RuleKind::NeckVelocity => format!("{} m/s", sig(v, DIGITS)),
    }
}

/// The practical rules: the tuned and the file's design against each.
fn rules_text(r: &TuneResult, out: &mut impl Write) -> std::io::Result<()> {
    let rules = &r.rules;
    if rules.tuned.is_empty() {
        return Ok(());
    }
    writeln!(
        out,
        "practical rules ({}; common practice, not a standard):",
        if rules.hard {
            "hard: designs breaking one were not considered"
        } else {
            "flagged only; --hard-rules makes them hard"
        }
    )?;
    if let Some(p) = rules.lowest_operating_pa {
        writeln!(
            out,
            "  lowest operating pressure of the gas: {}",
            crate::results::describe::gas_pressure(p)
        )?;
    }
    let mut t = Table::new(&[
        ("rule", Align::Left),
        ("allowed", Align::Left),
        ("as in the file", Align::Right),
        ("tuned", Align::Right),
        ("", Align::Left),
    ]);
    for c in &rules.tuned {
        let allowed = match c.low {
            Some(lo) => format!("{}..{}", rule_value(c.rule, lo), rule_value(c.rule, c.high)),
            None => format!("≤ {}", rule_value(c.rule, c.high)),
        };
        let file = rules
            .as_in_file
            .iter()
            .find(|f| f.rule == c.rule)
            .map_or_else(|| "—".into(), |f| rule_value(f.rule, f.value));
        t.row(vec![
            c.rule.describe().to_string(),
            allowed,
            file,
            rule_value(c.rule, c.value),
            if c.pass { "ok" } else { "BROKEN" }.to_string(),
        ]);
    }
    t.write(out, "  ")
}

/// Writes every evaluated design: its stage, objective (Pa and dB re the
/// reference), whether it keeps the rules and its parameter values (SI).
///
/// # Errors
/// The CSV writer's error.
pub fn designs_csv(r: &TuneResult, out: impl Write) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    let mut header: Vec<String> = DESIGNS_HEADER.iter().map(|h| h.to_string()).collect();
    header.extend(r.parameters.iter().map(|p| {
        format!(
            "{}_{}",
            p.name,
            p.unit.replace('·', ".").replace('/', "_per_")
        )
    }));
    w.write_record(&header)?;
    for (i, d) in r.designs.iter().enumerate() {
        let mut row = vec![
            format!("{}", i + 1),
            d.stage.to_string(),
            d.objective_pa.map_or_else(String::new, |v| format!("{v}")),
            d.objective_pa
                .filter(|v| *v > 0.0)
                .map_or_else(String::new, |v| {
                    format!("{}", 20.0 * (v / r.db_ref_pa).log10())
                }),
            d.keeps_rules.to_string(),
            d.size.map_or_else(String::new, |v| format!("{v}")),
            d.margin_db.map_or_else(String::new, |v| format!("{v}")),
        ];
        row.extend(d.values.iter().map(|v| format!("{v}")));
        w.write_record(&row)?;
    }
    w.flush()?;
    Ok(())
}

/// A parameter value in its display unit (bar gauge for a precharge).
fn shown(p: &ParameterResult, v: f64) -> f64 {
    let (unit, offset) = parameter_unit(p);
    unit.of(v - offset)
}

/// An axis label for a parameter.
fn axis_label(p: &ParameterResult) -> String {
    format!("{} ({})", p.name, parameter_unit(p).0.symbol)
}

/// Where a rule bounds a parameter axis (in display units), with its label.
fn rule_bounds(r: &TuneResult, p: &ParameterResult) -> Vec<(f64, String)> {
    let mut out = Vec::new();
    for c in &r.rules.tuned {
        let on_axis = matches!(
            (c.rule, p.name),
            (RuleKind::VesselSize, "gas_volume" | "volume") | (RuleKind::Length, "length")
        );
        if on_axis {
            out.push((shown(p, c.high), format!("{} limit", c.rule.describe())));
        }
        if c.rule == RuleKind::PrechargeFraction
            && p.name == "precharge"
            && let Some(lowest) = r.rules.lowest_operating_pa
        {
            for f in [c.low.unwrap_or(0.0), c.high] {
                out.push((shown(p, f * lowest), format!("precharge {f:.2} × lowest")));
            }
        }
    }
    out
}

/// The objective over the search: one parameter, the objective level (dB
/// re the reference) against it, every valid design a point, the optimum
/// marked and the rules' bounds as dashed lines; two or three, a map of
/// the best level found in each cell of the first two parameters (log
/// scale, 24 × 24 cells) with the optimum and the rules' bounds drawn.
pub fn designs_chart(r: &TuneResult) -> DesignsChart {
    let db = |v: f64| 20.0 * (v / r.db_ref_pa).log10();
    let title = format!(
        "Objective over the search: `{}` at {} — {}",
        r.element,
        r.tap,
        r.subject.title.as_deref().unwrap_or(&r.subject.file)
    );
    let z_label = format!("objective (dB re {})", reference_text(r.db_ref_pa));
    let valid: Vec<(&Vec<f64>, f64)> = r
        .designs
        .iter()
        .filter_map(|d| {
            d.objective_pa
                .filter(|v| *v > 0.0)
                .map(|v| (&d.values, db(v)))
        })
        .collect();
    let p0 = &r.parameters[0];
    let best: Vec<f64> = r.parameters.iter().map(|p| p.best).collect();
    if r.parameters.len() == 1 {
        let mut points: Vec<(f64, f64)> =
            valid.iter().map(|(v, z)| (shown(p0, v[0]), *z)).collect();
        points.sort_by(|a, b| a.0.total_cmp(&b.0));
        let keeps: Vec<(f64, f64)> = r
            .designs
            .iter()
            .filter(|d| !d.keeps_rules)
            .filter_map(|d| {
                d.objective_pa
                    .filter(|v| *v > 0.0)
                    .map(|v| (shown(p0, d.values[0]), db(v)))
            })
            .collect();
        let mut series = vec![plot::XySeries {
            name: "evaluated designs".into(),
            points,
            style: plot::SeriesStyle::LineAndPoints,
            ..Default::default()
        }];
        if !keeps.is_empty() {
            series.push(plot::XySeries {
                name: "breaking a practical rule".into(),
                points: keeps,
                style: plot::SeriesStyle::Points,
                ..Default::default()
            });
        }
        series.push(plot::XySeries {
            name: "optimum".into(),
            points: r
                .tuned
                .level_db
                .map(|z| vec![(shown(p0, best[0]), z)])
                .unwrap_or_default(),
            style: plot::SeriesStyle::Points,
            ..Default::default()
        });
        return DesignsChart::Line(plot::LineChart {
            title,
            x_label: axis_label(p0),
            y_label: z_label,
            series,
            log_x: shown(p0, p0.low) > 0.0,
            x_markers: rule_bounds(r, p0)
                .into_iter()
                .map(|(value, label)| plot::Marker { value, label })
                .collect(),
            ..Default::default()
        });
    }
    let p1 = &r.parameters[1];
    const CELLS: usize = 24;
    let u =
        |p: &ParameterResult, v: f64| ((v / p.low).ln() / (p.high / p.low).ln()).clamp(0.0, 1.0);
    let cell = |x: f64| ((x * CELLS as f64) as usize).min(CELLS - 1);
    let mut z = vec![vec![f64::NAN; CELLS]; CELLS];
    for (v, level) in &valid {
        let (i, j) = (cell(u(p0, v[0])), cell(u(p1, v[1])));
        if z[i][j].is_nan() || *level < z[i][j] {
            z[i][j] = *level;
        }
    }
    let centres = |p: &ParameterResult| -> Vec<f64> {
        (0..CELLS)
            .map(|k| {
                let x = (k as f64 + 0.5) / CELLS as f64;
                shown(p, p.low * (p.high / p.low).powf(x))
            })
            .collect()
    };
    let (x, y) = (centres(p0), centres(p1));
    let (bx, by) = (shown(p0, best[0]), shown(p1, best[1]));
    let dx = (x[1] - x[0]).abs();
    let dy = (y[1] - y[0]).abs();
    let mut lines = vec![
        plot::Polyline {
            label: "optimum".into(),
            points: vec![(bx - dx, by), (bx + dx, by)],
        },
        plot::Polyline {
            label: String::new(),
            points: vec![(bx, by - dy), (bx, by + dy)],
        },
    ];
    let (xl, xh) = (x[0], x[CELLS - 1]);
    let (yl, yh) = (y[0], y[CELLS - 1]);
    for (value, label) in rule_bounds(r, p0) {
        lines.push(plot::Polyline {
            label,
            points: vec![(value, yl), (value, yh)],
        });
    }
    for (value, label) in rule_bounds(r, p1) {
        lines.push(plot::Polyline {
            label,
            points: vec![(xl, value), (xh, value)],
        });
    }
    DesignsChart::Map(plot::HeatMap {
        title,
        x_label: axis_label(p0),
        y_label: axis_label(p1),
        z_label: if r.parameters.len() > 2 {
            format!("{z_label}, best over {}", r.parameters[2].name)
        } else {
            z_label
        },
        x,
        y,
        z,
        lines,
        ..Default::default()
    })
}

/// The chart of the search: a line chart for one parameter, a map for two
/// or three.
#[derive(Debug, Clone)]
pub enum DesignsChart {
    /// One parameter.
    Line(plot::LineChart),
    /// Two or three parameters.
    Map(plot::HeatMap),
}

/// The smallest-silencer objective: sizes and the tightest limits.
fn smallest_text(r: &TuneResult, out: &mut impl Write) -> std::io::Result<()> {
    let Some(sm) = &r.smallest else {
        return Ok(());
    };
    let size = |v: f64| match sm.unit {
        "m3" => Quantity::Volume.unit_for(v).show(v),
        _ => Quantity::Length.unit_for(v).show(v),
    };
    let tight = |t: &TightestResult| {
        let unit = Quantity::Pressure.unit_for_all([t.value_pa, t.limit_pa]);
        format!(
            "`{}` {} (limit {}): {} at {:.0} rpm{}, margin {:+.2} dB",
            t.tap,
            t.limit,
            unit.show(t.limit_pa),
            unit.show(t.value_pa),
            t.speed_rev_s * 60.0,
            t.point
                .as_ref()
                .map_or_else(String::new, |p| format!(", point `{p}`")),
            t.margin_db
        )
    };
    writeln!(out)?;
    writeln!(out, "smallest {} meeting every limit:", sm.size)?;
    let rows = [
        ("as in the file", sm.in_file_size, &sm.tightest_in_file),
        ("tuned", Some(sm.tuned_size), &sm.tightest),
    ];
    for (label, v, t) in rows {
        writeln!(
            out,
            "  {label:<15} {} {}; tightest limit {}",
            sm.size,
            v.map_or_else(|| "—".into(), size),
            t.as_ref()
                .map_or_else(|| "none reached (no ripple)".into(), tight)
        )?;
    }
    if !sm.met
        && let Some(t) = &sm.tightest
    {
        writeln!(
            out,
            "  NO DESIGN within the bounds meets the limits: the nearest misses `{}` {} by {:.2} dB{} at {:.0} rpm",
            t.tap,
            t.limit,
            -t.margin_db,
            t.point
                .as_ref()
                .map_or_else(String::new, |p| format!(" at point `{p}`")),
            t.speed_rev_s * 60.0
        )?;
    }
    Ok(())
}
